"""Weather-file readers: EPW, TMY3, TMY2 (through ``pvlib.iotools``) and plain CSV.

Every reader only *extracts* raw columns and timestamps into a :class:`RawSeries`;
all conversions (hour-ending to hour-start labels, time zone to local standard time,
tenths of a degree and degrees Fahrenheit to degC, 29 February, sub-hourly
averaging, multi-year condensation, gaps, plausibility ranges, missing irradiance
components) happen in one place, :func:`normalise`.

Traps of the pvlib 0.16 readers handled here (measured, see ``docs/climate.md``):
TMY3 rows mix source years, so the reader is called with ``coerce_year``; TMY3
labels the end of each hour; the TMY2 reader returns temperature and wind speed in
tenths; the EPW and TMY2 ``hour`` fields (1-24) mark the end of the hour.
"""

from __future__ import annotations

import dataclasses
import difflib
import functools
import re
import warnings
import zoneinfo
from pathlib import Path

import numpy as np
import pandas as pd

from planner.climate import (HOURS_PER_YEAR, REFERENCE_YEAR, ClimateWarning, TypicalYear,
                             hour_starts)
from planner.errors import InputError
from planner.fileio import check_input_file

#: Bundled real typical years (data file type and place) found in pvlib's data folder:
#: name -> (file, format). The credit for the files stays in the descriptions.
PVLIB_FILES = {
    "tmy3-sand-point-ak": ("703165TY.csv", "tmy3"),
    "tmy3-greensboro-nc": ("723170TYA.CSV", "tmy3"),
    "tmy2-miami-fl": ("12839.tm2", "tmy2"),
}
PVLIB_FILES_DESCRIPTIONS = {
    "tmy3-sand-point-ak": "real TMY3 year, subarctic maritime island station, Sand Point, "
                          "Alaska (55.3 N); NREL data, file shipped with pvlib",
    "tmy3-greensboro-nc": "real TMY3 year, humid subtropical inland airport, Greensboro, North "
                          "Carolina (36.1 N, 273 m); NREL data, file shipped with pvlib",
    "tmy2-miami-fl": "real TMY2 year, tropical coastal station, Miami, Florida (25.8 N); NREL "
                     "data, file shipped with pvlib",
}
#: Ids of earlier releases, accepted for one more release with a deprecation message.
DEPRECATED_IDS = {"pvlib-sand-point": "tmy3-sand-point-ak", "pvlib-greensboro": "tmy3-greensboro-nc",
                  "pvlib-miami": "tmy2-miami-fl"}

#: Plausible hourly air temperature, degC (beyond the recorded world extremes of about
#: -89 and +57 degC, common practice).
TEMP_RANGE_C = (-90.0, 60.0)
#: Hour-average irradiance above this is not physical at the surface (solar constant
#: ~1361 W/m2, Kopp & Lean 2011, Geophys. Res. Lett. 38, L01706).
IRRADIANCE_MAX_W_M2 = 1400.0
WIND_RANGE_M_S = (0.0, 75.0)
#: Gaps up to this many hours are interpolated (with a ClimateWarning); longer ones
#: are errors.
MAX_GAP_H = 6
#: Without an irradiance column, GHI = this fraction x Ineichen clear-sky GHI. Annual
#: ratios of measured to clear-sky GHI are about 0.6-0.8 at most inhabited places
#: (from memory); 0.7 is a middle value. Declare ``clearness_frac`` to change it.
DEFAULT_CLEARNESS_FRAC = 0.7
#: Without a wind column, a constant wind speed (m/s); only the report uses wind.
DEFAULT_WIND_M_S = 2.0

#: Option keys a plain CSV climate file accepts (documented in docs/climate.md).
CSV_OPTIONS = {
    "temperature_unit": "'C' or 'F' (required: never guessed)",
    "timestamp_marks": "'start' or 'end' of the interval each timestamp labels (required)",
    "utc_offset_h": "local standard time minus UTC, hours (required)",
    "latitude_deg": "degrees north (required)",
    "longitude_deg": "degrees east, west negative (required)",
    "altitude_m": "metres above sea level (default 0)",
    "time_zone": "zone of timestamps without an offset: 'local-standard' (default), 'UTC', "
                 "hours like 2 or -5, or a zone name like 'America/Denver'",
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
#: Options accepted by EPW/TMY3/TMY2 files (their headers carry the rest).
FILE_OPTIONS = ("name",)


@dataclasses.dataclass
class RawSeries:
    """What a reader found in a file, before any conversion.

    ``times`` are naive timestamps (or tz-aware when the file carried offsets);
    ``rows`` are the 1-based file line numbers of each record, for messages.
    """

    file: str
    name: str
    description: str
    times: pd.DatetimeIndex
    rows: np.ndarray
    marks: str                      # "start" or "end" of the interval
    temp: np.ndarray
    temp_unit: str                  # "C", "F" or "0.1C"
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    utc_offset_h: float
    time_zone: str | float = "local-standard"
    ghi: np.ndarray | None = None
    dni: np.ndarray | None = None
    dhi: np.ndarray | None = None
    wind: np.ndarray | None = None
    wind_scale: float = 1.0
    clearness_frac: float = DEFAULT_CLEARNESS_FRAC
    multi_year: str | int | None = None
    typical: bool = False           # a typical-year file: calendar years are meaningless


# --------------------------------------------------------------------------- bundled

def _pvlib_data_dir() -> Path:
    import pvlib
    return Path(pvlib.__file__).parent / "data"


@functools.lru_cache(maxsize=8)
def load_pvlib_bundled(name: str) -> TypicalYear:
    """One of the typical years shipped with pvlib, by bundled name (cached)."""
    filename, kind = PVLIB_FILES[name]
    path = _pvlib_data_dir() / filename
    raw = _read_tmy3(path) if kind == "tmy3" else _read_tmy2(path)
    raw.name = name
    raw.description = f"{PVLIB_FILES_DESCRIPTIONS[name]} ({filename}; measured-data " \
                      "typical year, trusted)"
    return normalise(raw)


# --------------------------------------------------------------------------- dispatch

def read_climate_file(path: Path, *, options: dict | None = None) -> TypicalYear:
    """Read an EPW, TMY3, TMY2 or plain CSV file into a :class:`TypicalYear`.

    The format is chosen by extension (``.epw``, ``.tm2``) and, for ``.csv``, by the
    TMY3 header (first line: station number and six metadata fields, second line
    starting ``Date (MM/DD/YYYY)``); any other CSV is a plain CSV needing ``options``.
    """
    path = Path(path)
    where = str(path)
    # By type and size before any reader opens it: a FIFO or device would never end.
    check_input_file(path, what="an EPW, TMY3, TMY2 or CSV climate file")
    options = dict(options or {})
    suffix = path.suffix.lower()
    kind = {".epw": "epw", ".tm2": "tmy2"}.get(suffix)
    if kind is None and suffix in (".csv", ".txt"):
        kind = "tmy3" if _looks_like_tmy3(path) else "csv"
    if kind is None:
        raise InputError(f"file extension '{path.suffix}' is not a climate format; expected "
                         ".epw, .csv (TMY3 or plain CSV) or .tm2", source=where)
    if kind == "csv":
        declared, n_lines = file_declarations(path)
        check_option_keys(declared, CSV_OPTIONS, where)
        check_option_keys(options, CSV_OPTIONS, where)
        raw = _read_plain_csv(path, {**declared, **options}, skip_lines=n_lines)
    else:
        check_option_keys(options, {k: CSV_OPTIONS[k] for k in FILE_OPTIONS}, where,
                          note=f" (a {kind.upper()} file carries its own location and units)")
        try:
            raw = {"epw": _read_epw, "tmy3": _read_tmy3, "tmy2": _read_tmy2}[kind](path)
        except InputError:
            raise
        except Exception as err:  # pvlib raises many kinds; the user needs one line
            raise InputError(f"could not be read as {kind.upper()} "
                             f"({type(err).__name__}: {_first_line(err)}); expected a "
                             f"well-formed {kind.upper()} file", source=where) from None
    if "name" in options:
        raw.name = str(options["name"])
    return normalise(raw)


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


def _first_line(err: BaseException) -> str:
    text = str(err).strip().splitlines()
    return text[0][:160] if text else ""


def _looks_like_tmy3(path: Path) -> bool:
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            first, second = fh.readline(), fh.readline()
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=str(path)) from None
    return len(first.split(",")) == 7 and second.startswith("Date (MM/DD/YYYY)")


# --------------------------------------------------------------------------- readers

def _read_tmy3(path: Path) -> RawSeries:
    import pvlib
    data, meta = pvlib.iotools.read_tmy3(str(path), coerce_year=REFERENCE_YEAR,
                                         map_variables=True)
    # pvlib labels TMY3 rows at the END of the hour (01:00 ... 24:00 -> next 00:00).
    times = data.index.tz_localize(None)
    return RawSeries(
        file=str(path), name=path.stem,
        description=f"TMY3 file {path.name}, station {str(meta['Name']).strip(chr(34))} "
                    f"{meta.get('State', '')}",
        times=pd.DatetimeIndex(times), rows=np.arange(len(data)) + 3, marks="end",
        temp=data["temp_air"].to_numpy(float), temp_unit="C",
        latitude_deg=float(meta["latitude"]), longitude_deg=float(meta["longitude"]),
        altitude_m=float(meta["altitude"]), utc_offset_h=float(meta["TZ"]),
        ghi=data["ghi"].to_numpy(float), dni=data["dni"].to_numpy(float),
        dhi=data["dhi"].to_numpy(float), wind=data["wind_speed"].to_numpy(float),
        typical=True)


def _end_labels_from_fields(month, day, hour) -> pd.DatetimeIndex:
    """Naive end-of-hour timestamps in the reference year from month/day/hour (1-24)."""
    month = np.asarray(month, dtype=int)
    day = np.asarray(day, dtype=int)
    hour = np.asarray(hour, dtype=int)
    dates = pd.to_datetime({"year": np.full(len(month), REFERENCE_YEAR), "month": month,
                            "day": day})
    return pd.DatetimeIndex(dates + pd.to_timedelta(hour, unit="h"))


def _read_tmy2(path: Path) -> RawSeries:
    import pvlib
    data, meta = pvlib.iotools.read_tmy2(str(path))
    month, day, hour = (data[c].to_numpy() for c in ("month", "day", "hour"))
    leap = (month == 2) & (day == 29)
    keep = ~leap
    return RawSeries(
        file=str(path), name=path.stem,
        description=f"TMY2 file {path.name}, station {meta.get('City', '')} "
                    f"{meta.get('State', '')}",
        times=_end_labels_from_fields(month[keep], day[keep], hour[keep]),
        rows=(np.arange(len(data)) + 2)[keep], marks="end",
        # The TMY2 reader returns dry-bulb temperature and wind speed in tenths.
        temp=data["DryBulb"].to_numpy(float)[keep], temp_unit="0.1C",
        latitude_deg=float(meta["latitude"]), longitude_deg=float(meta["longitude"]),
        altitude_m=float(meta["altitude"]), utc_offset_h=float(meta["TZ"]),
        ghi=data["GHI"].to_numpy(float)[keep], dni=data["DNI"].to_numpy(float)[keep],
        dhi=data["DHI"].to_numpy(float)[keep], wind=data["Wspd"].to_numpy(float)[keep],
        wind_scale=0.1, typical=True)


def _read_epw(path: Path) -> RawSeries:
    import pvlib
    data, meta = pvlib.iotools.read_epw(str(path))
    month, day, hour = (data[c].to_numpy() for c in ("month", "day", "hour"))
    keep = ~((month == 2) & (day == 29))

    def col(name, missing):
        # EPW marks missing values with 99.9 (temperature), 9999 (irradiance), 999 (wind).
        values = data[name].to_numpy(float)[keep]
        return np.where(values >= missing, np.nan, values)

    return RawSeries(
        file=str(path), name=path.stem,
        description=f"EPW file {path.name}, {meta.get('city', '')} {meta.get('country', '')}",
        times=_end_labels_from_fields(month[keep], day[keep], hour[keep]),
        rows=(np.arange(len(data)) + 9)[keep], marks="end",
        temp=col("temp_air", 99.9), temp_unit="C",
        latitude_deg=float(meta["latitude"]), longitude_deg=float(meta["longitude"]),
        altitude_m=float(meta["altitude"]), utc_offset_h=float(meta["TZ"]),
        ghi=col("ghi", 9999), dni=col("dni", 9999), dhi=col("dhi", 9999),
        wind=col("wind_speed", 999), typical=True)


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


def _read_plain_csv(path: Path, options: dict, skip_lines: int = 0) -> RawSeries:
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
                         f"{_first_line(err)}); expected a header row and one row per "
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
                         f"{fmt!r} ({_first_line(err)})", source=where) from None
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


# --------------------------------------------------------------------------- normalise

_MONTH_START_DOY = np.cumsum([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30])


def _to_local_standard(raw: RawSeries) -> pd.DatetimeIndex:
    """Timestamps as naive local standard time."""
    times = raw.times
    offset = pd.Timedelta(hours=raw.utc_offset_h)
    if times.tz is not None:
        return (times.tz_convert("UTC").tz_localize(None) + offset)
    zone = raw.time_zone
    if zone in (None, "local-standard"):
        return times
    if isinstance(zone, (int, float)) and not isinstance(zone, bool):
        if not -12 <= zone <= 14:
            raise InputError(f"option 'time_zone' is {zone!r}; expected hours from -12 to 14",
                             source=raw.file)
        return times - pd.Timedelta(hours=float(zone)) + offset
    zone = str(zone)
    if zone.upper() == "UTC":
        return times + offset
    try:
        tz = zoneinfo.ZoneInfo(zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, TypeError):
        raise InputError(f"option 'time_zone' is {zone!r}; expected 'local-standard', 'UTC', "
                         "a number of hours or a zone name such as 'Europe/Vienna'",
                         source=raw.file) from None
    try:
        # Daylight-saving clocks repeat an hour in autumn: 'infer' uses the order of rows.
        aware = times.tz_localize(tz, ambiguous="infer", nonexistent="raise")
    except Exception as err:  # pytz/zoneinfo errors vary by pandas version
        raise InputError(f"timestamps cannot be placed in zone '{zone}' "
                         f"({_first_line(err)}); expected clock times that exist in that "
                         "zone, in file order", source=raw.file) from None
    return aware.tz_convert("UTC").tz_localize(None) + offset


def _check_range(values, rows, lo, hi, what, where):
    if values is None:
        return
    bad = ~np.isnan(values) & ((values < lo) | (values > hi))
    if bad.any():
        i = int(np.argmax(bad))
        raise InputError(f"row {rows[i]}: {what} {values[i]:g} is outside {lo:g}...{hi:g}; "
                         "expected a plausible value (check the unit)", source=where)


def _interval(starts_or_ends: np.ndarray, raw: RawSeries) -> np.timedelta64:
    """The data interval: the most common spacing of consecutive timestamps."""
    if len(starts_or_ends) < 2:
        return np.timedelta64(3600, "s")
    diffs = np.diff(np.sort(starts_or_ends)).astype("timedelta64[s]").astype(np.int64)
    diffs = diffs[diffs > 0]
    if len(diffs) == 0:
        return np.timedelta64(3600, "s")
    values, counts = np.unique(diffs, return_counts=True)
    step = int(values[np.argmax(counts)])
    if step > 3600:
        raise InputError(f"timestamps are {step / 3600:g} h apart; expected hourly or finer "
                         "data", source=raw.file)
    return np.timedelta64(step, "s")


def normalise(raw: RawSeries) -> TypicalYear:
    """Turn what a reader found into an hour-start, local-standard, degC typical year.

    Steps, in order: convert time zone to local standard time; move hour-ending labels
    to interval starts; reject duplicate timestamps; drop 29 February; convert units;
    check plausibility ranges; average sub-hourly records into hours; condense
    several years (``multi_year``); interpolate gaps of at most 6 h (with a
    :class:`ClimateWarning`), reject longer ones; fill missing irradiance components
    (clear-sky scaled GHI, Erbs decomposition).
    """
    where = raw.file
    times = _to_local_standard(raw).to_numpy().astype("datetime64[s]")
    rows = np.asarray(raw.rows)
    if raw.marks == "end":
        times = times - _interval(times, raw)
    order = np.argsort(times, kind="stable")
    sorted_times = times[order]
    dup = np.nonzero(sorted_times[1:] == sorted_times[:-1])[0]
    if len(dup):
        a, b = sorted((int(rows[order[dup[0]]]), int(rows[order[dup[0] + 1]])))
        raise InputError(f"rows {a} and {b} have the same timestamp "
                         f"{pd.Timestamp(sorted_times[dup[0]])}; expected each time once",
                         source=where)

    temp = np.asarray(raw.temp, float)
    temp = {"C": temp, "F": (temp - 32.0) * 5.0 / 9.0, "0.1C": temp * 0.1}[raw.temp_unit]
    _check_range(temp, rows, *TEMP_RANGE_C, "air temperature (degC)", where)
    series = {"temp": temp}
    for key in ("ghi", "dni", "dhi"):
        values = getattr(raw, key)
        if values is not None:
            values = np.asarray(values, float)
            _check_range(values, rows, 0.0, IRRADIANCE_MAX_W_M2, f"{key.upper()} (W/m2)", where)
            series[key] = values
    if raw.wind is not None:
        wind = np.asarray(raw.wind, float) * raw.wind_scale
        _check_range(wind, rows, *WIND_RANGE_M_S, "wind speed (m/s)", where)
        series["wind"] = wind

    stamp = pd.DatetimeIndex(times)
    month, day = stamp.month.to_numpy(), stamp.day.to_numpy()
    keep = ~((month == 2) & (day == 29))
    doy = _MONTH_START_DOY[month - 1] + day - 1
    slot = doy * 24 + stamp.hour.to_numpy()
    year = stamp.year.to_numpy()
    if raw.typical:
        year = np.zeros_like(year)   # typical-year files mix source years by design
    slot, year, rows_k = slot[keep], year[keep], rows[keep]
    series = {k: v[keep] for k, v in series.items()}

    years = np.unique(year)
    # One year of data may straddle New Year (e.g. July to June): that is not multi-year.
    # Several calendar years claim the same hour of the year -> multi-year data.
    distinct = np.unique(year.astype(np.int64) * HOURS_PER_YEAR + slot) % HOURS_PER_YEAR
    multi = len(years) > 1 and len(slot) > 0 and np.bincount(distinct).max() > 1
    if multi:
        policy = raw.multi_year
        if policy is None:
            raise InputError(f"covers several years ({years.min()}-{years.max()}); declare "
                             "option 'multi_year' as 'typical-month', 'mean' or one of the "
                             "calendar years", source=where)
        if not isinstance(policy, str):
            if policy not in years:
                raise InputError(f"option 'multi_year' is {policy}; the file covers "
                                 f"{years.min()}-{years.max()}", source=where)
            pick = year == policy
            slot, year, rows_k = slot[pick], year[pick], rows_k[pick]
            series = {k: v[pick] for k, v in series.items()}
            years = np.array([policy])
            multi = False
    else:
        year = np.zeros_like(year)
        years = np.array([0])

    # Hour means per (year, slot): averages sub-hourly records into hours.
    n_years = len(years)
    year_index = np.searchsorted(years, year)
    flat = year_index * HOURS_PER_YEAR + slot
    grids = {}
    for key, values in series.items():
        ok = ~np.isnan(values)
        sums = np.bincount(flat[ok], weights=values[ok], minlength=n_years * HOURS_PER_YEAR)
        counts = np.bincount(flat[ok], minlength=n_years * HOURS_PER_YEAR)
        with np.errstate(invalid="ignore", divide="ignore"):
            grids[key] = (sums / counts).reshape(n_years, HOURS_PER_YEAR)
    first_row = np.full(n_years * HOURS_PER_YEAR, -1)
    first_row[flat[::-1]] = rows_k[::-1]
    first_row = first_row.reshape(n_years, HOURS_PER_YEAR)

    if multi and raw.multi_year == "mean":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN hours become gaps
            grids = {k: np.nanmean(g, axis=0) for k, g in grids.items()}
        first_row = np.where(first_row >= 0, first_row, np.iinfo(np.int64).max).min(axis=0)
        first_row = np.where(first_row == np.iinfo(np.int64).max, -1, first_row)
    elif multi:
        choice = _typical_months(grids["temp"])
        grids = {k: np.take_along_axis(g, choice[None, :], axis=0)[0] for k, g in grids.items()}
        first_row = np.take_along_axis(first_row, choice[None, :], axis=0)[0]
    else:
        grids = {k: g[0] for k, g in grids.items()}
        first_row = first_row[0]

    filled = {}
    repaired = []
    for key, values in grids.items():
        filled[key], gaps = _fill_gaps(values, key, first_row, where)
        if key == "temp":
            repaired = gaps
    if repaired:
        text = ", ".join(repaired[:10]) + (f" and {len(repaired) - 10} more" if len(repaired) > 10 else "")
        warnings.warn(f"{where}: interpolated {len(repaired)} short gap(s) of at most "
                      f"{MAX_GAP_H} h in air temperature: {text}", ClimateWarning, stacklevel=3)

    ghi, dni, dhi = _complete_irradiance(raw, filled.get("ghi"), filled.get("dni"),
                                         filled.get("dhi"))
    wind = filled.get("wind")
    source_note = raw.description
    if "ghi" not in filled:
        source_note += (f"; no irradiance in file: GHI = {raw.clearness_frac:g} x Ineichen "
                        "clear sky (estimate)")
    if wind is None:
        wind = np.full(HOURS_PER_YEAR, DEFAULT_WIND_M_S)
    return TypicalYear(
        name=raw.name, source=source_note, latitude_deg=raw.latitude_deg,
        longitude_deg=raw.longitude_deg, altitude_m=raw.altitude_m,
        utc_offset_h=raw.utc_offset_h, temp_air_c=filled["temp"], ghi_w_m2=ghi, dni_w_m2=dni,
        dhi_w_m2=dhi, wind_speed_m_s=wind)


def _typical_months(temp_grid: np.ndarray) -> np.ndarray:
    """Which year supplies each hour: per calendar month the most typical year.

    ``typical-month`` keeps, for each calendar month, the year whose monthly mean air
    temperature is closest to the all-year mean of that month (the temperature part of
    the Sandia typical-meteorological-month selection, Hall, Prairie, Anderson & Boes
    1978, SAND78-1601; simplified: one variable, mean only). Months with less than 90 %
    of their hours are not candidates (if none has, the best covered one is used and
    its gaps are handled like any other). Month boundaries are not blended.
    """
    month_of_slot = np.repeat(np.searchsorted(_MONTH_START_DOY, np.arange(365), "right") - 1, 24)
    choice = np.zeros(HOURS_PER_YEAR, dtype=int)
    for m in range(12):
        cols = month_of_slot == m
        block = temp_grid[:, cols]
        coverage = np.mean(~np.isnan(block), axis=1)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            means = np.nanmean(block, axis=1)
        candidates = coverage >= 0.9
        if not candidates.any():
            candidates = coverage == coverage.max()
        target = np.nanmean(means[candidates])
        dist = np.where(candidates, np.abs(means - target), np.inf)
        choice[cols] = int(np.argmin(dist))
    return choice


def _fill_gaps(values: np.ndarray, key: str, first_row: np.ndarray, where: str):
    """Interpolate runs of <= MAX_GAP_H missing hours (cyclically); longer runs are errors."""
    missing = np.isnan(values)
    if not missing.any():
        return values, []
    if missing.all():
        raise InputError(f"no usable {key} values; expected hourly data", source=where)
    # Rotate so the series starts on a present hour: runs never wrap after that.
    start = int(np.argmin(missing))
    rolled = np.roll(missing, -start)
    edges = np.diff(np.concatenate([[0], rolled.astype(int), [0]]))
    run_starts = np.nonzero(edges == 1)[0]
    run_ends = np.nonzero(edges == -1)[0]
    labels = []
    times = hour_starts(0.0)
    for s, e in zip(run_starts, run_ends):
        length = e - s
        a, b = (s + start) % HOURS_PER_YEAR, (e - 1 + start) % HOURS_PER_YEAR
        span = f"{times[a]:%m-%d %H:00}-{times[b]:%m-%d %H:00}"
        if length > MAX_GAP_H:
            before = first_row[(a - 1) % HOURS_PER_YEAR]
            after = first_row[(b + 1) % HOURS_PER_YEAR]
            rows_text = f" (between rows {before} and {after})" if before > 0 and after > 0 else ""
            raise InputError(f"{key} missing for {length} h, {span}{rows_text}; expected gaps "
                             f"of at most {MAX_GAP_H} h", source=where)
        labels.append(f"{span} ({length} h)")
    x = np.arange(HOURS_PER_YEAR)
    ok = ~missing
    # Periodic interpolation: the typical year wraps from 31 Dec to 1 Jan.
    filled = np.interp(x, x[ok], values[ok], period=HOURS_PER_YEAR)
    return filled, labels


@functools.lru_cache(maxsize=128)
def solar_geometry(latitude_deg: float, longitude_deg: float, altitude_m: float,
                   utc_offset_h: float) -> pd.DataFrame:
    """Sun position at the middle of each hour of the reference year (cached).

    Hour averages are best represented by the sun at mid-hour (common practice).
    """
    import pvlib
    times = hour_starts(utc_offset_h)
    mid = times + pd.Timedelta(minutes=30)
    position = pvlib.solarposition.get_solarposition(mid, latitude_deg, longitude_deg,
                                                     altitude=altitude_m)
    position.index = times
    return position


def clear_sky_ghi(latitude_deg, longitude_deg, altitude_m, utc_offset_h) -> pd.DataFrame:
    """Ineichen clear-sky irradiance with monthly Linke turbidity (pvlib, offline).

    Ineichen & Perez (2002), Solar Energy 73(3), 151-157; turbidity from pvlib's
    bundled climatology (Remund et al. 2003), read offline from ``LinkeTurbidities.h5``.
    """
    import pvlib
    times = hour_starts(utc_offset_h)
    position = solar_geometry(latitude_deg, longitude_deg, altitude_m, utc_offset_h)
    mid = times + pd.Timedelta(minutes=30)
    turbidity = pvlib.clearsky.lookup_linke_turbidity(mid, latitude_deg, longitude_deg)
    airmass = pvlib.atmosphere.get_relative_airmass(position["apparent_zenith"].to_numpy())
    pressure = pvlib.atmosphere.alt2pres(altitude_m)
    am_abs = pvlib.atmosphere.get_absolute_airmass(airmass, pressure)
    with np.errstate(divide="ignore", invalid="ignore"):  # sun below horizon: NaN -> 0 below
        sky = pvlib.clearsky.ineichen(position["apparent_zenith"].to_numpy(), am_abs,
                                      turbidity.to_numpy(), altitude=altitude_m,
                                      dni_extra=pvlib.irradiance.get_extra_radiation(mid).to_numpy())
    return pd.DataFrame({k: np.nan_to_num(np.asarray(v, float)) for k, v in sky.items()},
                        index=times)


def split_ghi(ghi_w_m2: np.ndarray, latitude_deg, longitude_deg, altitude_m, utc_offset_h):
    """DNI and DHI from GHI with the Erbs, Klein & Duffie (1982) decomposition.

    Solar Energy 28(4), 293-302, eqs. 1-2 (via ``pvlib.irradiance.erbs``).
    """
    import pvlib
    position = solar_geometry(latitude_deg, longitude_deg, altitude_m, utc_offset_h)
    doy = position.index.day_of_year.to_numpy()
    parts = pvlib.irradiance.erbs(np.asarray(ghi_w_m2, float), position["zenith"].to_numpy(), doy)
    dni = np.nan_to_num(np.asarray(parts["dni"], float))
    dhi = np.nan_to_num(np.asarray(parts["dhi"], float))
    return dni, dhi


def _complete_irradiance(raw: RawSeries, ghi, dni, dhi):
    loc = (raw.latitude_deg, raw.longitude_deg, raw.altitude_m, raw.utc_offset_h)
    if ghi is None:
        ghi = raw.clearness_frac * clear_sky_ghi(*loc)["ghi"].to_numpy()
        dni = dhi = None
    if dni is None or dhi is None:
        dni_e, dhi_e = split_ghi(ghi, *loc)
        dni = dni_e if dni is None else dni
        dhi = dhi_e if dhi is None else dhi
    return ghi, dni, dhi
