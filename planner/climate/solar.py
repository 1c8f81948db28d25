"""Sun position, clear-sky irradiance and the GHI decomposition for the reference year.

Used to complete climate files that lack irradiance components
(:func:`planner.climate.normalise.normalise`), by the archetype generator and by the
thermal model (sun on the enclosure). The ``*_many`` functions and :func:`sun_paths` do
the same for many places at once (sites with their own coordinates), arrays (8760, n).
"""

from __future__ import annotations

import dataclasses
import functools

import numpy as np
import pandas as pd

from planner import HOURS_PER_YEAR
from planner.climate.typical_year import hour_starts


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


# --------------------------------------------------------------------------- many places

#: Difference between terrestrial time and UT1 used for the sun's position, seconds
#: (pvlib's ``spa_python`` default, so both paths give the same sun).
DELTA_T_S = 67.0
#: Air temperature assumed in the refraction correction, degC (pvlib default).
REFRACTION_TEMP_C = 12.0
#: Refraction at sunrise and sunset, degrees (NREL SPA default).
ATMOS_REFRACT_DEG = 0.5667


@dataclasses.dataclass(frozen=True)
class SunPath:
    """The sun at the middle of each hour of the reference year at one or many places.

    Arrays are (8760,) for one place or (8760, n) for n places, degrees: apparent
    (refracted) and true zenith, azimuth clockwise from north.
    """

    apparent_zenith_deg: np.ndarray
    zenith_deg: np.ndarray
    azimuth_deg: np.ndarray

    def column(self, j: int) -> SunPath:
        """The sun of place ``j`` (1-D arrays, copied so the block can be freed)."""
        return SunPath(*(np.ascontiguousarray(a[:, j]) for a in
                         (self.apparent_zenith_deg, self.zenith_deg, self.azimuth_deg)))


@functools.lru_cache(maxsize=32)
def _ephemeris(utc_offset_h: float) -> dict:
    """The time-only part of NREL SPA at the mid-hours of the reference year (one UTC
    offset): sidereal time, right ascension, declination and horizontal parallax."""
    from pvlib import spa

    mid = hour_starts(utc_offset_h) + pd.Timedelta(minutes=30)
    unixtime = np.asarray(mid.as_unit("ns").asi8, dtype=float) / 1e9
    jd = spa.julian_day(unixtime)
    jde = spa.julian_ephemeris_day(jd, DELTA_T_S)
    jc = spa.julian_century(jd)
    jce = spa.julian_ephemeris_century(jde)
    jme = spa.julian_ephemeris_millennium(jce)
    radius = spa.heliocentric_radius_vector(jme)
    theta = spa.geocentric_longitude(spa.heliocentric_longitude(jme))
    beta = spa.geocentric_latitude(spa.heliocentric_latitude(jme))
    terms = [spa.mean_elongation(jce), spa.mean_anomaly_sun(jce), spa.mean_anomaly_moon(jce),
             spa.moon_argument_latitude(jce), spa.moon_ascending_longitude(jce)]
    nutation = np.empty((2, len(jce)))
    spa.longitude_obliquity_nutation(jce, *terms, nutation)
    epsilon = spa.true_ecliptic_obliquity(spa.mean_ecliptic_obliquity(jme), nutation[1])
    lamd = spa.apparent_sun_longitude(theta, nutation[0], spa.aberration_correction(radius))
    return {
        "sidereal": spa.apparent_sidereal_time(spa.mean_sidereal_time(jd, jc), nutation[0],
                                               epsilon),
        "alpha": spa.geocentric_sun_right_ascension(lamd, epsilon, beta),
        "delta": spa.geocentric_sun_declination(lamd, epsilon, beta),
        "parallax": spa.equatorial_horizontal_parallax(radius),
        "dni_extra": pvlib_extra_radiation(mid),
    }


def pvlib_extra_radiation(times: pd.DatetimeIndex) -> np.ndarray:
    """Extraterrestrial normal irradiance at ``times`` (Spencer 1971, via pvlib), W/m2."""
    import pvlib
    return np.asarray(pvlib.irradiance.get_extra_radiation(times), dtype=float)


def sun_paths(latitude_deg, longitude_deg, altitude_m, utc_offset_h) -> SunPath:
    """The sun at mid-hour of the reference year at n places at once, (8760, n) arrays.

    NREL SPA (Reda & Andreas 2004, Solar Energy 76(5), 577-589) through pvlib's numpy
    implementation (``pvlib.spa``), as :func:`solar_geometry` computes it for one place:
    the time-only terms are computed once per UTC offset, the observer terms (hour
    angle, parallax, refraction at the pressure of the standard atmosphere at the
    altitude) for all places of that offset together.
    """
    import pvlib
    from pvlib import spa

    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    n = lat.size
    lon = np.broadcast_to(np.asarray(longitude_deg, float), (n,))
    alt = np.broadcast_to(np.asarray(altitude_m, float), (n,))
    off = np.broadcast_to(np.asarray(utc_offset_h, float), (n,))
    out = [np.empty((HOURS_PER_YEAR, n)) for _ in range(3)]
    for offset in np.unique(off):
        cols = np.flatnonzero(off == offset)
        eph = _ephemeris(float(offset))
        la, lo, el = lat[None, cols], lon[None, cols], alt[None, cols]
        delta, xi = eph["delta"][:, None], eph["parallax"][:, None]
        hour_angle = spa.local_hour_angle(eph["sidereal"][:, None], lo, eph["alpha"][:, None])
        u = spa.uterm(la)
        x, y = spa.xterm(u, la, el), spa.yterm(u, la, el)
        d_alpha = spa.parallax_sun_right_ascension(x, xi, hour_angle, delta)
        d_prime = spa.topocentric_sun_declination(delta, x, y, xi, d_alpha, hour_angle)
        h_prime = spa.topocentric_local_hour_angle(hour_angle, d_alpha)
        e0 = spa.topocentric_elevation_angle_without_atmosphere(la, d_prime, h_prime)
        pressure_mbar = pvlib.atmosphere.alt2pres(el) / 100.0
        refraction = spa.atmospheric_refraction_correction(pressure_mbar, REFRACTION_TEMP_C, e0,
                                                           ATMOS_REFRACT_DEG)
        out[0][:, cols] = spa.topocentric_zenith_angle(spa.topocentric_elevation_angle(e0, refraction))
        out[1][:, cols] = spa.topocentric_zenith_angle(e0)
        out[2][:, cols] = spa.topocentric_azimuth_angle(
            spa.topocentric_astronomers_azimuth(h_prime, d_prime, la))
    return SunPath(*out)


def extra_radiation_many(utc_offset_h) -> np.ndarray:
    """Extraterrestrial normal irradiance at the mid-hours of each place, (8760, n), W/m2."""
    off = np.atleast_1d(np.asarray(utc_offset_h, float))
    out = np.empty((HOURS_PER_YEAR, off.size))
    for offset in np.unique(off):
        out[:, off == offset] = _ephemeris(float(offset))["dni_extra"][:, None]
    return out


@functools.lru_cache(maxsize=4096)
def _linke_monthly(lat_index: int, lon_index: int) -> np.ndarray:
    import os

    import h5py
    import pvlib
    path = os.path.join(os.path.dirname(pvlib.clearsky.__file__), "data", "LinkeTurbidities.h5")
    with h5py.File(path, "r") as handle:
        return np.asarray(handle["LinkeTurbidity"][lat_index, lon_index], float) / 20.0


def linke_turbidity_many(latitude_deg, longitude_deg, utc_offset_h) -> np.ndarray:
    """Linke turbidity at the mid-hours of the reference year for n places, (8760, n).

    pvlib's bundled monthly climatology (Remund et al. 2003, read offline from
    ``LinkeTurbidities.h5`` at its 5' grid cell), interpolated to days between
    mid-month values on the UTC day of year, as ``pvlib.clearsky.lookup_linke_turbidity``
    does for one place.
    """
    import pvlib

    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    n = lat.size
    lon = np.broadcast_to(np.asarray(longitude_deg, float), (n,))
    off = np.broadcast_to(np.asarray(utc_offset_h, float), (n,))
    to_index = pvlib.clearsky._degrees_to_index
    monthly = np.stack([_linke_monthly(int(to_index(a, "latitude")), int(to_index(b, "longitude")))
                        for a, b in zip(lat, lon)], axis=1)
    padded = np.concatenate([monthly[-1:], monthly, monthly[:1]])
    middles = pvlib.clearsky._calendar_month_middles(2015)
    out = np.empty((HOURS_PER_YEAR, n))
    for offset in np.unique(off):
        cols = np.flatnonzero(off == offset)
        mid = hour_starts(float(offset)) + pd.Timedelta(minutes=30)
        doy = (mid - pd.Timedelta(hours=float(offset))).tz_localize(None).day_of_year.to_numpy()
        j = np.searchsorted(middles, doy, side="right") - 1
        j = np.clip(j, 0, len(middles) - 2)
        w = ((doy - middles[j]) / (middles[j + 1] - middles[j]))[:, None]
        out[:, cols] = padded[j][:, cols] * (1.0 - w) + padded[j + 1][:, cols] * w
    return out


def clear_sky_many(sun: SunPath, latitude_deg, longitude_deg, altitude_m,
                   utc_offset_h) -> tuple[np.ndarray, np.ndarray]:
    """Ineichen clear-sky GHI and DNI at n places, (8760, n) each, W/m2.

    Ineichen & Perez (2002), Solar Energy 73(3), 151-157 (``pvlib.clearsky.ineichen``)
    with the Kasten & Young (1989) air mass at the standard-atmosphere pressure of the
    altitude and the bundled Linke turbidity, as :func:`clear_sky_ghi` for one place.
    """
    import pvlib

    alt = np.broadcast_to(np.asarray(altitude_m, float), (sun.zenith_deg.shape[1],))
    turbidity = linke_turbidity_many(latitude_deg, longitude_deg, utc_offset_h)
    with np.errstate(divide="ignore", invalid="ignore"):  # sun below horizon: NaN -> 0 below
        airmass = pvlib.atmosphere.get_relative_airmass(sun.apparent_zenith_deg)
        am_abs = pvlib.atmosphere.get_absolute_airmass(
            airmass, pvlib.atmosphere.alt2pres(alt)[None, :])
        sky = pvlib.clearsky.ineichen(sun.apparent_zenith_deg, am_abs, turbidity,
                                      altitude=alt[None, :],
                                      dni_extra=extra_radiation_many(utc_offset_h))
    return (np.nan_to_num(np.asarray(sky["ghi"], float)),
            np.nan_to_num(np.asarray(sky["dni"], float)))


def clear_sky_ghi_many(sun: SunPath, latitude_deg, longitude_deg, altitude_m,
                       utc_offset_h) -> np.ndarray:
    """Ineichen clear-sky GHI at n places, (8760, n), W/m2 (see :func:`clear_sky_many`)."""
    return clear_sky_many(sun, latitude_deg, longitude_deg, altitude_m, utc_offset_h)[0]


#: Day of year of each hour of the reference year (local standard time).
_DAY_OF_HOUR = np.repeat(np.arange(1, 366), 24)


def split_ghi_many(ghi_w_m2: np.ndarray, zenith_deg: np.ndarray):
    """DNI and DHI from GHI at n places, (8760, n) each: Erbs, Klein & Duffie (1982).

    Solar Energy 28(4), 293-302, eqs. 1-2 (``pvlib.irradiance.erbs``), as
    :func:`split_ghi` for one place.
    """
    import pvlib

    ghi = np.asarray(ghi_w_m2, float)
    doy = _DAY_OF_HOUR if ghi.ndim == 1 else _DAY_OF_HOUR[:, None]
    parts = pvlib.irradiance.erbs(ghi, zenith_deg, doy)
    return (np.nan_to_num(np.asarray(parts["dni"], float)),
            np.nan_to_num(np.asarray(parts["dhi"], float)))
