"""The typical year: 8,760 hourly values of one place's weather, and its hour labels."""

from __future__ import annotations

import dataclasses
import datetime as _dt
import functools

import numpy as np
import pandas as pd

from planner import HOURS_PER_YEAR

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
