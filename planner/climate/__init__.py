"""Site climate: one hourly typical year per site.

A :class:`TypicalYear` holds 8,760 hour averages of air temperature, irradiance and
wind for a fixed non-leap year, labelled at the *start* of each hour in local
standard time (index 0 = 1 January 00:00-01:00). Every reader in
:mod:`planner.climate.readers` and :mod:`planner.climate.csv_reader` (normalised by
:mod:`planner.climate.normalise`) and the archetype generator in
:mod:`planner.climate.archetypes` produce this one shape, so later stages never see
file formats, hour-ending labels, tenths of a degree or degrees Fahrenheit.

Use :func:`load_climate` with a bundled name (see :func:`list_bundled`) or a path to
an EPW, TMY3, TMY2 or CSV file.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import functools
import os
from pathlib import Path

import numpy as np
import pandas as pd

from planner import HOURS_PER_YEAR
from planner.errors import InputError
from planner.numbers import number_input

#: The fixed non-leap calendar year used to label a typical year's hours.
REFERENCE_YEAR = 2023


class ClimateWarning(UserWarning):
    """Something in a climate file was repaired (e.g. a short gap interpolated).

    Issued with :func:`warnings.warn`; the message is one line naming the file and
    what was repaired, so a planner can check it.
    """


@dataclasses.dataclass(frozen=True, eq=False)
class TypicalYear:
    """An hourly typical year at one place.

    Attributes
    ----------
    name : str
        Short name (bundled climate id or file stem).
    source : str
        Human description: file or station, and how far to trust it.
    latitude_deg, longitude_deg : float
        Degrees north and east (west negative).
    altitude_m : float
        Metres above sea level.
    utc_offset_h : float
        Local standard time minus UTC, hours (no daylight saving).
    temp_air_c : np.ndarray
        8,760 hourly mean air temperatures, degC.
    ghi_w_m2, dni_w_m2, dhi_w_m2 : np.ndarray
        8,760 hourly mean global horizontal, direct normal and diffuse horizontal
        irradiance, W/m2.
    wind_speed_m_s : np.ndarray
        8,760 hourly mean wind speeds, m/s.
    temp_dew_c : np.ndarray or None
        8,760 hourly dew points of the air, degC, when the weather file carries them
        (EPW, TMY3, TMY2); None otherwise (the bundled archetypes).
    sun : planner.climate.solar.SunPath, optional
        The sun at mid-hour at this place, when it was computed with the year (a site's
        own sky); otherwise consumers compute it from the location (cached).
    """

    name: str
    source: str
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    utc_offset_h: float
    temp_air_c: np.ndarray
    ghi_w_m2: np.ndarray
    dni_w_m2: np.ndarray
    dhi_w_m2: np.ndarray
    wind_speed_m_s: np.ndarray
    temp_dew_c: np.ndarray | None = None
    sun: object = None

    def __post_init__(self):
        for field in ("temp_air_c", "ghi_w_m2", "dni_w_m2", "dhi_w_m2", "wind_speed_m_s",
                      "temp_dew_c"):
            if field == "temp_dew_c" and self.temp_dew_c is None:
                continue
            values = np.asarray(getattr(self, field))
            if values.dtype != np.float64 or values.flags.writeable or values.base is not None:
                values = np.array(values, dtype=np.float64)
                # Read-only: bundled years are cached and shared across a fleet (and
                # copies made by with_warming share the unchanged arrays).
                values.setflags(write=False)
            if values.shape != (HOURS_PER_YEAR,):
                raise ValueError(f"TypicalYear.{field} must have shape (8760,), got {values.shape}")
            object.__setattr__(self, field, values)

    def times(self) -> pd.DatetimeIndex:
        """Hour starts in local standard time (fixed offset, non-leap year 2023)."""
        return hour_starts(self.utc_offset_h)

    def with_warming(self, warming_k: float) -> TypicalYear:
        """A copy with ``warming_k`` kelvin added to every hourly air temperature."""
        return self.with_air_offset(
            warming_k, f"air temperature {float(warming_k):+g} K (warming offset)")

    def with_air_offset(self, offset_k: float, note: str) -> TypicalYear:
        """A copy with ``offset_k`` kelvin added to every hourly air temperature (the
        irradiance arrays are shared, not copied); ``note`` is added to ``source``."""
        if offset_k == 0.0:
            return self
        # the dew point moves with the air temperature (relative humidity kept)
        dew = None if self.temp_dew_c is None else self.temp_dew_c + float(offset_k)
        return dataclasses.replace(self, temp_air_c=self.temp_air_c + float(offset_k),
                                   temp_dew_c=dew, source=f"{self.source}; {note}")


@functools.lru_cache(maxsize=64)
def hour_starts(utc_offset_h: float) -> pd.DatetimeIndex:
    """The 8,760 hour starts of the reference year at a fixed UTC offset."""
    tz = _dt.timezone(_dt.timedelta(hours=float(utc_offset_h)))
    return pd.date_range(f"{REFERENCE_YEAR}-01-01 00:00", periods=HOURS_PER_YEAR, freq="h", tz=tz)


def list_bundled() -> list[tuple[str, str]]:
    """Bundled climates as ``(name, one-line description)``, sorted by name."""
    from planner.climate import archetypes, readers

    items = list(readers.PVLIB_FILES_DESCRIPTIONS.items()) + list(archetypes.descriptions().items())
    return sorted(items)


def load_climate(source: str, *, base_dir: Path | None = None, options: dict | None = None,
                 warming_k: float = 0.0) -> TypicalYear:
    """Load a typical year from a bundled name or a weather file.

    Parameters
    ----------
    source : str
        A bundled name (:func:`list_bundled`) or a path to an ``.epw``, TMY3 ``.csv``,
        TMY2 ``.tm2`` or plain ``.csv`` file. Relative paths are resolved against
        ``base_dir`` (default: the current folder).
    base_dir : Path, optional
        Folder for relative paths (usually the study file's folder).
    options : dict, optional
        Declarations for plain CSV files (see ``docs/climate.md``); also accepted for
        EPW/TMY files only where they apply. Unknown keys raise :class:`InputError`.
    warming_k : float
        Kelvin added to every hourly air temperature (climate-change sensitivity).

    Returns
    -------
    TypicalYear
    """
    from planner.climate import archetypes, readers

    if not isinstance(source, str) or not source.strip():
        raise InputError(f"climate source is {source!r}; expected a bundled climate name "
                         "or a path to an EPW/TMY3/TMY2/CSV file", source="climate")
    warming = number_input(warming_k, name="warming_k", source="climate", minimum=-20.0,
                           maximum=20.0, unit="K")
    name = readers.canonical_id(source.strip())
    bundled = name in readers.PVLIB_FILES or name in archetypes.names()
    if bundled and options:
        raise InputError(f"options {sorted(options)} were given for the bundled climate "
                         f"'{name}'; expected options only with a CSV/EPW/TMY file",
                         source="climate")
    if name in readers.PVLIB_FILES:
        year = readers.load_pvlib_bundled(name)
    elif bundled:
        year = archetypes.load_archetype(name)
    else:
        path = Path(name)
        if not path.is_absolute():
            path = Path(base_dir or ".") / path
        if not path.suffix and not os.path.exists(path):
            import difflib
            known = [n for n, _ in list_bundled()]
            close = difflib.get_close_matches(name, known, n=1)
            hint = f"; did you mean '{close[0]}'?" if close else \
                "; run 'planner climate --list' for the bundled names"
            raise InputError(f"'{name}' is neither a bundled climate nor an existing file{hint}",
                             source="climate")
        year = _read_file_cached(path, options)
    return year.with_warming(warming)


def _read_file_cached(path: Path, options: dict | None) -> TypicalYear:
    """Read a weather file once per (path, content, options).

    A fleet often repeats one file; a changed file is read again (the key holds a
    digest of the bytes). Repair warnings (short gaps) are issued on the first read only.
    """
    import hashlib

    from planner.climate import readers
    from planner.fileio import read_input_bytes

    data = read_input_bytes(path, what="an EPW, TMY3, TMY2 or CSV climate file")
    digest = hashlib.blake2b(data, digest_size=16).hexdigest()
    key = (str(path.resolve()), digest,
           tuple(sorted((str(k), repr(v)) for k, v in (options or {}).items())))
    cached = _FILE_CACHE.get(key)
    if cached is None:
        cached = readers.read_climate_file(path, options=options)
        if len(_FILE_CACHE) >= 32:
            _FILE_CACHE.pop(next(iter(_FILE_CACHE)))
        _FILE_CACHE[key] = cached
    return cached


_FILE_CACHE: dict = {}


__all__ = ["TypicalYear", "ClimateWarning", "load_climate", "list_bundled", "hour_starts",
           "HOURS_PER_YEAR", "REFERENCE_YEAR"]
