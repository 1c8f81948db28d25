"""Plain CSV climate files: declared options, the ``# key = value`` header, columns.

A plain CSV carries no metadata of its own, so its location, units and timestamp
convention are declared (``CSV_OPTIONS``, documented in ``docs/climate.md``), either as
``# key = value`` lines at the top of the file or as options given by the user. The
reader only *extracts* columns and timestamps into a
:class:`~planner.climate.normalise.RawSeries`; every conversion happens in
:func:`planner.climate.normalise.normalise`.
"""

from __future__ import annotations

import difflib
import re
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from planner.climate.normalise import DEFAULT_CLEARNESS_FRAC, RawSeries, first_line
from planner.errors import InputError

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

    Returns the options they declare (numbers as int or float) and the number of leading
    ``#`` lines to skip before the header. ``planner climate --csv`` writes them, so its
    output reads back with no option; options given by the user take precedence.
    """
    declared, n_lines = {}, 0
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            for line in fh:
                if not line.startswith("#"):
                    break
                n_lines += 1
                match = _DECLARATION_RE.match(line.rstrip("\r\n"))
                if match:
                    declared[match.group(1)] = _declared_value(match.group(2))
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=str(path)) from None
    return declared, n_lines


def _declared_value(text: str):
    for convert in (int, float):
        try:
            return convert(text)
        except ValueError:
            continue
    return text


def _required(options: dict, key: str, where: str):
    if key not in options or options[key] is None or options[key] == "":
        raise InputError(f"option '{key}' is missing; expected {CSV_OPTIONS[key]}", source=where)
    return options[key]


def _number_option(options: dict, key: str, where: str, lo: float, hi: float, default=None):
    value = options.get(key, default) if default is not None else _required(options, key, where)
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = float("nan")
    if isinstance(value, bool) or not (lo <= number <= hi):
        raise InputError(f"option '{key}' is {value!r}; expected a number from {lo:g} to {hi:g}",
                         source=where)
    return number


def read_plain_csv(path: Path, options: dict, skip_lines: int = 0) -> RawSeries:
    """Read a plain CSV climate file with its declared ``options`` into a RawSeries."""
    where = str(path)
    unit = str(_required(options, "temperature_unit", where)).strip().upper().replace("°", "")
    unit = {"DEGC": "C", "DEGF": "F"}.get(unit, unit)
    if unit not in ("C", "F"):
        raise InputError(f"option 'temperature_unit' is {options['temperature_unit']!r}; "
                         "expected 'C' or 'F'", source=where)
    marks = str(_required(options, "timestamp_marks", where)).strip().lower()
    if marks not in ("start", "end"):
        raise InputError(f"option 'timestamp_marks' is {options['timestamp_marks']!r}; "
                         "expected 'start' or 'end'", source=where)
    utc_offset_h = _number_option(options, "utc_offset_h", where, -12.0, 14.0)
    latitude = _number_option(options, "latitude_deg", where, -90.0, 90.0)
    longitude = _number_option(options, "longitude_deg", where, -180.0, 180.0)
    altitude = _number_option(options, "altitude_m", where, -500.0, 9000.0, default=0.0)
    clearness = _number_option(options, "clearness_frac", where, 0.05, 1.0,
                               default=DEFAULT_CLEARNESS_FRAC)
    multi_year = options.get("multi_year")
    if multi_year is not None and not (multi_year in ("typical-month", "mean") or (
            isinstance(multi_year, int) and not isinstance(multi_year, bool))):
        raise InputError(f"option 'multi_year' is {multi_year!r}; expected 'typical-month', "
                         "'mean' or a calendar year such as 2019", source=where)
    delimiter = str(options.get("delimiter", ","))
    if len(delimiter) != 1:
        raise InputError(f"option 'delimiter' is {delimiter!r}; expected one character",
                         source=where)
    try:
        frame = pd.read_csv(path, sep=delimiter, dtype=str, keep_default_na=False,
                            skipinitialspace=True, skiprows=skip_lines)
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=where) from None
    except Exception as err:  # pandas raises several parser/decoding error types
        raise InputError(f"is not a readable CSV table ({type(err).__name__}: "
                         f"{first_line(err)}); expected a header row and one row per "
                         "timestamp", source=where) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    if len(frame) == 0:
        raise InputError("has a header but no data rows; expected one row per timestamp",
                         source=where)

    def column(key, default=None):
        name = options.get(key, default)
        if name is None:
            return None
        if name not in frame.columns:
            raise InputError(f"column '{name}' (option '{key}') not found; the header has "
                             f"{', '.join(repr(c) for c in frame.columns)}", source=where)
        return frame[name]

    rows = np.arange(len(frame)) + 2 + skip_lines  # the header follows the declarations
    times = _parse_times(column("time_column", "time"), options.get("time_format"), rows, where)
    temp = _parse_numbers(column("temperature_column", DEFAULT_TEMPERATURE_COLUMN), rows, where,
                          options.get("temperature_column", DEFAULT_TEMPERATURE_COLUMN))
    extra = {}
    for key, field in (("ghi_column", "ghi"), ("dni_column", "dni"), ("dhi_column", "dhi"),
                       ("wind_column", "wind")):
        col = column(key)
        extra[field] = None if col is None else _parse_numbers(col, rows, where, options[key])
    if (extra["dni"] is not None or extra["dhi"] is not None) and extra["ghi"] is None:
        raise InputError("option 'dni_column'/'dhi_column' given without 'ghi_column'; "
                         "expected ghi_column as well", source=where)
    time_zone = options.get("time_zone", "local-standard")
    return RawSeries(
        file=where, name=str(options.get("name", path.stem)),
        description=f"CSV file {path.name} (user data; trust as its provider)",
        times=times, rows=rows, marks=marks, temp=temp, temp_unit=unit,
        latitude_deg=latitude, longitude_deg=longitude, altitude_m=altitude,
        utc_offset_h=utc_offset_h, time_zone=time_zone, clearness_frac=clearness,
        multi_year=multi_year, **extra)


_OFFSET_RE = re.compile(r"(?:Z|[+-]\d\d:?\d\d)$")


def _parse_times(col: pd.Series, time_format, rows, where) -> pd.DatetimeIndex:
    text = col.astype(str).str.strip()
    empty = (text == "").to_numpy()
    if empty.any():
        row = rows[np.argmax(empty)]
        raise InputError(f"row {row}, column '{col.name}': empty timestamp; expected a date "
                         "and time", source=where)
    has_offset = text.str.contains(_OFFSET_RE).to_numpy()
    if has_offset.any() and not has_offset.all():
        row = rows[np.argmax(has_offset != has_offset[0])]
        raise InputError(f"row {row}, column '{col.name}': timestamps mix with and without a "
                         "UTC offset; expected all with or all without", source=where)
    fmt = time_format if time_format else "ISO8601"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            parsed = pd.to_datetime(text, format=fmt, errors="coerce", utc=bool(has_offset[0]))
    except (ValueError, TypeError) as err:
        raise InputError(f"column '{col.name}': timestamps cannot be parsed with format "
                         f"{fmt!r} ({first_line(err)})", source=where) from None
    bad = parsed.isna().to_numpy()
    if bad.any():
        row = rows[np.argmax(bad)]
        raise InputError(f"row {row}, column '{col.name}': '{text.iloc[np.argmax(bad)][:40]}' "
                         f"is not a timestamp; expected {fmt} (e.g. 2023-01-01 13:00)",
                         source=where)
    return pd.DatetimeIndex(parsed)


def _parse_numbers(col: pd.Series, rows, where, name) -> np.ndarray:
    text = col.astype(str).str.strip()
    values = pd.to_numeric(text.where(text != ""), errors="coerce").to_numpy(float)
    bad = np.isnan(values) & (text != "").to_numpy()
    bad |= np.isinf(values)
    if bad.any():
        i = int(np.argmax(bad))
        raise InputError(f"row {rows[i]}, column '{name}': '{text.iloc[i][:40]}' is not a "
                         "number; expected a number (leave the cell empty if missing)",
                         source=where)
    return values
