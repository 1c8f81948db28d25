"""Sun position, clear-sky irradiance and the GHI decomposition for the reference year.

Used to complete climate files that lack irradiance components
(:func:`planner.climate.normalise.normalise`), by the archetype generator and by the
thermal model (sun on the enclosure).
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from planner.climate import hour_starts


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
