"""Plain CSV climate files: declared options, the ``# key = value`` header, columns.

A plain CSV carries no metadata of its own, so its location, units and timestamp
convention are declared (``CSV_OPTIONS``, documented in ``docs/climate.md``), either as
``# key = value`` lines at the top of the file or as options given by the user. The
reader only *extracts* columns and timestamps into a
:class:`~planner.climate.normalise.RawSeries`; every conversion happens in
:func:`planner.climate.normalise.normalise`.
"""

from __future__ import annotations

import dataclasses
import difflib
import re
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from planner.climate.normalise import DEFAULT_CLEARNESS_FRAC, RawSeries, first_line
from planner.errors import InputError, one_line
from planner.fileio import read_input_bytes
from planner.inputs.numbers import NumberError, number_input, parse_number, shown
from planner.inputs.tables import read_table

#: Option keys a plain CSV climate file accepts (documented in docs/climate.md).
CSV_OPTIONS = {
    "temperature_unit": "'C' or 'F' (required: never guessed)",
    "timestamp_marks": "'start' or 'end' of the interval each timestamp labels (required)",
    "utc_offset_h": "local standard time minus UTC, hours (required)",
    "latitude_deg": "degrees north (required)",
    "longitude_deg": "degrees east, west negative (required)",
    "altitude_m": "metres above sea level (default 0)",
    "time_zone": "zone of timestamps without an offset: 'local-standard' (default), 'UTC', "
                 "hours like 2 or -5, or a tz-database zone with daylight saving like 'MST7MDT'",
    "time_column": "timestamp column (default 'time')",
    "time_format": "strftime format of the timestamps (default: ISO 8601)",
    "temperature_column": "air temperature column (default 'temp_air_c', the column "
                          "'planner climate --csv' writes)",
    "ghi_column": "global horizontal irradiance column, W/m2 (optional)",
    "dni_column": "direct normal irradiance column, W/m2 (optional, with ghi_column)",
    "dhi_column": "diffuse horizontal irradiance column, W/m2 (optional, with ghi_column)",
    "wind_column": "wind speed column, m/s (optional)",
    "clearness_frac": "GHI as a fraction of clear-sky GHI when there is no ghi_column "
                      "(default 0.7)",
    "multi_year": "'typical-month', 'mean', or a calendar year to use (required when the "
                  "file covers several years)",
    "delimiter": "field separator (default ',')",
    "name": "climate name shown in reports (default: file stem)",
}
#: The air-temperature column a plain CSV has unless declared otherwise: the one
#: ``planner climate --csv`` writes.
DEFAULT_TEMPERATURE_COLUMN = "temp_air_c"


def check_option_keys(options: dict, allowed: dict, where: str, note: str = "") -> None:
    """Unknown option keys raise :class:`InputError` naming the closest valid key."""
    for key in options:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), list(CSV_OPTIONS), n=1, cutoff=0.5)
            if close and close[0] in allowed:
                hint = f"; did you mean '{close[0]}'?"
            elif close:
                hint = f"; '{close[0]}' applies to plain CSV files only{note}"
            else:
                hint = f"; expected one of {', '.join(sorted(allowed))}"
            raise InputError(f"unknown climate option '{key}'{hint}", source=where)


#: A declaration line at the top of a plain CSV file: ``# key = value``.
_DECLARATION_RE = re.compile(r"^#\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*(.*?)\s*$")


def file_declarations(path: Path) -> tuple[dict, int]:
    """Declarations (``# key = value`` lines) at the top of a plain CSV file.

    Returns the options they declare (values as text: the declaration checks read the
    numbers) and the number of leading ``#`` lines to skip before the header. A byte-order
    mark before the first line is not part of it. ``planner climate --csv`` writes them,
    so its output reads back with no option; options given by the user take precedence.
    """
    declared, n_lines = {}, 0
    try:
        with open(path, encoding="utf-8-sig", errors="replace") as fh:
            for line in fh:
                if not line.startswith("#"):
                    break
                n_lines += 1
                match = _DECLARATION_RE.match(line.rstrip("\r\n"))
                if match:
                    declared[match.group(1)] = match.group(2)
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=str(path)) from None
    return declared, n_lines


def _required(options: dict, key: str, where: str):
    if key not in options or options[key] is None or options[key] == "":
        raise InputError(f"option '{key}' is missing; expected {CSV_OPTIONS[key]}", source=where)
    return options[key]


def _number_option(options: dict, key: str, where: str, lo: float, hi: float, default=None,
                   integer: bool = False):
    value = options.get(key, default) if default is not None else _required(options, key, where)
    return number_input(value, name=f"option '{key}'", source=where, minimum=lo, maximum=hi,
                        integer=integer)


@dataclasses.dataclass(frozen=True)
class CsvDeclarations:
    """What a plain CSV climate file declares, checked (units and ranges)."""

    temp_unit: str
    marks: str
    utc_offset_h: float
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    clearness_frac: float
    multi_year: str | int | None
    delimiter: str
    time_zone: str | float
    columns: dict


def check_csv_declarations(options: dict, where: str) -> CsvDeclarations:
    """Check a plain CSV's declarations (file lines and options merged) without reading
    its data: the required ones are there, numbers are numbers in range (the one number
    parser, :mod:`planner.inputs.numbers`), choices are among theirs."""
    check_option_keys(options, CSV_OPTIONS, where)
    unit = str(_required(options, "temperature_unit", where)).strip().upper().replace("°", "")
    unit = {"DEGC": "C", "DEGF": "F"}.get(unit, unit)
    if unit not in ("C", "F"):
        raise InputError(f"option 'temperature_unit' is {options['temperature_unit']!r}; "
                         "expected 'C' or 'F'", source=where)
    marks = str(_required(options, "timestamp_marks", where)).strip().lower()
    if marks not in ("start", "end"):
        raise InputError(f"option 'timestamp_marks' is {options['timestamp_marks']!r}; "
                         "expected 'start' or 'end'", source=where)
    multi_year = options.get("multi_year")
    if multi_year is not None and str(multi_year).strip() not in ("typical-month", "mean"):
        try:
            multi_year = parse_number(multi_year, minimum=1800, maximum=2200, integer=True)
        except NumberError:
            raise InputError(f"option 'multi_year' is {shown(multi_year)}; expected "
                             "'typical-month', 'mean' or a calendar year such as 2019",
                             source=where) from None
    elif multi_year is not None:
        multi_year = str(multi_year).strip()
    delimiter = str(options.get("delimiter", ","))
    if len(delimiter) != 1 or delimiter in "\"\r\n":
        raise InputError(f"option 'delimiter' is {delimiter!r}; expected one character",
                         source=where)
    zone = options.get("time_zone", "local-standard")
    try:
        zone = parse_number(zone, exponent=True)
    except NumberError:
        zone = str(zone).strip()
    else:
        if not -12 <= zone <= 14:
            raise InputError(f"option 'time_zone' is {shown(options['time_zone'])}; expected "
                             "hours from -12 to 14", source=where)
    return CsvDeclarations(
        temp_unit=unit, marks=marks,
        utc_offset_h=_number_option(options, "utc_offset_h", where, -12.0, 14.0),
        latitude_deg=_number_option(options, "latitude_deg", where, -90.0, 90.0),
        longitude_deg=_number_option(options, "longitude_deg", where, -180.0, 180.0),
        altitude_m=_number_option(options, "altitude_m", where, -500.0, 9000.0, default=0.0),
        clearness_frac=_number_option(options, "clearness_frac", where, 0.05, 1.0,
                                      default=DEFAULT_CLEARNESS_FRAC),
        multi_year=multi_year, delimiter=delimiter, time_zone=zone,
        columns={key: str(options[key]) for key in (
            "time_column", "temperature_column", "ghi_column", "dni_column", "dhi_column",
            "wind_column") if options.get(key) not in (None, "")})


def read_plain_csv(path: Path, options: dict, skip_lines: int = 0) -> RawSeries:
    """Read a plain CSV climate file with its declared ``options`` into a RawSeries.

    Rows are numbered as a spreadsheet or an editor shows them (declaration lines and
    blank lines counted; :mod:`planner.inputs.tables`).
    """
    where = str(path)
    declared = check_csv_declarations(options, where)
    data = read_input_bytes(path, what="a CSV climate file")
    table = read_table(data, source=where, kind="csv", what="the climate file",
                       delimiter=declared.delimiter, skip_lines=skip_lines)
    if len(table) == 0:
        raise InputError("has a header but no data rows; expected one row per timestamp",
                         source=where)
    names = declared.columns

    def column(key, default=None):
        name = names.get(key, default)
        if name is None:
            return None
        if not table.has(name):
            raise InputError(f"column '{name}' (option '{key}') not found; the header has "
                             f"{', '.join(repr(c) for c in table.columns)}", source=where)
        return name

    rows = np.array([row.number for row in table.rows])
    time_name = column("time_column", "time")
    times = _parse_times(table, time_name, options.get("time_format"), rows, where)
    temp_name = column("temperature_column", DEFAULT_TEMPERATURE_COLUMN)
    temp = _parse_numbers(table, temp_name)
    extra = {}
    for key, field in (("ghi_column", "ghi"), ("dni_column", "dni"), ("dhi_column", "dhi"),
                       ("wind_column", "wind")):
        name = column(key)
        extra[field] = None if name is None else _parse_numbers(table, name)
    if (extra["dni"] is not None or extra["dhi"] is not None) and extra["ghi"] is None:
        raise InputError("option 'dni_column'/'dhi_column' given without 'ghi_column'; "
                         "expected ghi_column as well", source=where)
    return RawSeries(
        file=where, name=str(options.get("name", path.stem)),
        description=f"CSV file {path.name} (user data; trust as its provider)",
        times=times, rows=rows, marks=declared.marks, temp=temp, temp_unit=declared.temp_unit,
        latitude_deg=declared.latitude_deg, longitude_deg=declared.longitude_deg,
        altitude_m=declared.altitude_m, utc_offset_h=declared.utc_offset_h,
        time_zone=declared.time_zone, clearness_frac=declared.clearness_frac,
        multi_year=declared.multi_year, **extra)


_OFFSET_RE = re.compile(r"(?:Z|[+-]\d\d:?\d\d)$")


def _parse_times(table, name: str, time_format, rows, where) -> pd.DatetimeIndex:
    text = pd.Series(table.column(name), dtype=object)
    empty = (text == "").to_numpy()
    if empty.any():
        row = table.rows[int(np.argmax(empty))].where()
        raise InputError(f"{row}, column '{name}': empty timestamp; expected a date "
                         "and time", source=where)
    has_offset = text.str.contains(_OFFSET_RE).to_numpy()
    if has_offset.any() and not has_offset.all():
        row = table.rows[int(np.argmax(has_offset != has_offset[0]))].where()
        raise InputError(f"{row}, column '{name}': timestamps mix with and without a "
                         "UTC offset; expected all with or all without", source=where)
    fmt = time_format if time_format else "ISO8601"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            parsed = pd.to_datetime(text, format=fmt, errors="coerce", utc=bool(has_offset[0]))
    except (ValueError, TypeError, OverflowError) as err:
        raise InputError(f"column '{name}': timestamps cannot be parsed with format "
                         f"{fmt!r} ({first_line(err)})", source=where) from None
    bad = parsed.isna().to_numpy()
    if bad.any():
        i = int(np.argmax(bad))
        shown_text = one_line(str(text.iloc[i])[:40])
        raise InputError(f"{table.rows[i].where()}, column '{name}': '{shown_text}' "
                         f"is not a timestamp; expected {fmt} (e.g. 2023-01-01 13:00)",
                         source=where)
    return pd.DatetimeIndex(parsed)


def _parse_numbers(table, name: str) -> np.ndarray:
    return table.numbers(name, what="a number (leave the cell empty if missing)")
