"""Weather-file readers: EPW, TMY3, TMY2 (through ``pvlib.iotools``) and the dispatch.

Every reader only *extracts* raw columns and timestamps into a
:class:`~planner.climate.normalise.RawSeries`; all conversions (hour-ending to hour-start
labels, time zone to local standard time, tenths of a degree and degrees Fahrenheit to
degC, 29 February, sub-hourly averaging, multi-year condensation, gaps, plausibility
ranges, missing irradiance components) happen in one place,
:func:`planner.climate.normalise.normalise`. Plain CSV files are read by
:mod:`planner.climate.csv_reader`.

Traps of the pvlib 0.16 readers handled here (measured, see ``docs/climate.md``):
TMY3 rows mix source years, so the reader is called with ``coerce_year``; TMY3
labels the end of each hour; the TMY2 reader returns temperature and wind speed in
tenths; the EPW and TMY2 ``hour`` fields (1-24) mark the end of the hour.
"""

from __future__ import annotations

import functools
from pathlib import Path

import numpy as np
import pandas as pd

from planner.climate.csv_reader import (
    CSV_OPTIONS,
    check_csv_declarations,
    check_option_keys,
    file_declarations,
    read_plain_csv,
)
from planner.climate.normalise import RawSeries, first_line, normalise
from planner.climate.typical_year import REFERENCE_YEAR, TypicalYear
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
#: Options accepted by EPW/TMY3/TMY2 files (their headers carry the rest).
FILE_OPTIONS = ("name",)


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

def canonical_id(name: str) -> str:
    """A bundled climate id as it is called now: an id of an earlier release gives its
    new name with a :class:`~planner.climate.ClimateWarning` (the same words wherever it
    is used: ``planner climate``, a sites table); any other name comes back unchanged."""
    if name not in DEPRECATED_IDS:
        return name
    import warnings

    from planner.climate.typical_year import ClimateWarning

    new = DEPRECATED_IDS[name]
    warnings.warn(f"climate '{name}' is now called '{new}'; the old name is accepted in this "
                  "release only, please use the new one", ClimateWarning, stacklevel=3)
    return new


def file_kind(path: Path) -> str:
    """``"epw"``, ``"tmy3"``, ``"tmy2"`` or ``"csv"`` by extension (and, for ``.csv``, by
    the TMY3 header: first line with seven fields, second starting ``Date (MM/DD/YYYY)``)."""
    suffix = path.suffix.lower()
    kind = {".epw": "epw", ".tm2": "tmy2"}.get(suffix)
    if kind is None and suffix in (".csv", ".txt"):
        kind = "tmy3" if _looks_like_tmy3(path) else "csv"
    if kind is None:
        raise InputError(f"file extension '{path.suffix}' is not a climate format; expected "
                         ".epw, .csv (TMY3 or plain CSV) or .tm2", source=str(path))
    return kind


def check_climate_options(path: Path, options: dict | None, where: str | None = None) -> str:
    """Check the options given for a climate file against what the file is, without
    reading its data: a plain CSV's declarations (its ``#`` lines merged with the options)
    are complete and in range; an EPW/TMY file takes only ``name``. Returns the kind."""
    path = Path(path)
    where = where or str(path)
    check_input_file(path, what="an EPW, TMY3, TMY2 or CSV climate file")
    kind = file_kind(path)
    options = dict(options or {})
    if kind == "csv":
        declared, _ = file_declarations(path)
        check_option_keys(declared, CSV_OPTIONS, str(path))
        check_option_keys(options, CSV_OPTIONS, where)
        check_csv_declarations({**declared, **options}, where)
    else:
        check_option_keys(options, {k: CSV_OPTIONS[k] for k in FILE_OPTIONS}, where,
                          note=f" (a {kind.upper()} file carries its own location and units)")
    return kind


def read_climate_file(path: Path, *, options: dict | None = None) -> TypicalYear:
    """Read an EPW, TMY3, TMY2 or plain CSV file into a :class:`TypicalYear`.

    The format is chosen by :func:`file_kind`; a plain CSV needs ``options`` (or its
    ``# key = value`` declarations).
    """
    path = Path(path)
    where = str(path)
    # By type and size before any reader opens it: a FIFO or device would never end.
    check_input_file(path, what="an EPW, TMY3, TMY2 or CSV climate file")
    options = dict(options or {})
    kind = file_kind(path)
    if kind == "csv":
        declared, n_lines = file_declarations(path)
        check_option_keys(declared, CSV_OPTIONS, where)
        check_option_keys(options, CSV_OPTIONS, where)
        raw = read_plain_csv(path, {**declared, **options}, skip_lines=n_lines)
    else:
        check_option_keys(options, {k: CSV_OPTIONS[k] for k in FILE_OPTIONS}, where,
                          note=f" (a {kind.upper()} file carries its own location and units)")
        try:
            raw = {"epw": _read_epw, "tmy3": _read_tmy3, "tmy2": _read_tmy2}[kind](path)
        except InputError:
            raise
        except Exception as err:  # pvlib raises many kinds; the user needs one line
            raise InputError(f"could not be read as {kind.upper()} "
                             f"({type(err).__name__}: {first_line(err)}); expected a "
                             f"well-formed {kind.upper()} file", source=where) from None
    if "name" in options:
        raw.name = str(options["name"])
    return normalise(raw)


def _looks_like_tmy3(path: Path) -> bool:
    try:
        with open(path, encoding="utf-8-sig", errors="replace") as fh:
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
        dew=data["temp_dew"].to_numpy(float) if "temp_dew" in data else None,
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
        wind_scale=0.1, typical=True,
        dew=data["DewPoint"].to_numpy(float)[keep] if "DewPoint" in data else None)


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
        wind=col("wind_speed", 999), typical=True,
        dew=col("temp_dew", 99.9) if "temp_dew" in data else None)
