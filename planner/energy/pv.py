"""PV array power delivered to the battery bus, hour by hour, with pvlib.

Chain (each step a published model, computed by pvlib 0.16):

1. sun position at mid-hour: :func:`pvlib.solarposition.get_solarposition`, NREL SPA
   (Reda & Andreas 2004, Solar Energy 76(5), 577-589);
2. plane-of-array irradiance: :func:`pvlib.irradiance.get_total_irradiance` with the
   Hay-Davies sky-diffuse model (Hay & Davies 1980, Proc. First Canadian Solar
   Radiation Data Workshop, 59-72) and extraterrestrial irradiance from
   :func:`pvlib.irradiance.get_extra_radiation` (Spencer 1971, Search 2(5), 172);
3. cell temperature: :func:`pvlib.temperature.sapm_cell` (King, Boyson & Kratochvil 2004,
   SAND2004-3535, eq. 11-12), coefficients from
   ``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS['sapm']``;
4. DC power: :func:`pvlib.pvsystem.pvwatts_dc`, PVWatts
   ``P = P_dc0 * E/1000 * (1 + gamma * (T_cell - 25))`` (Dobos 2014, PVWatts Version 5
   Manual, NREL/TP-6A20-62641, eq. 3);
5. system losses (soiling, wiring, mismatch...), snow months and the charge
   controller's efficiency as plain factors.

Hourly values of a typical year label the START of the hour in local standard time, so
the sun is placed at mid-hour (+30 min).
"""

from __future__ import annotations

import datetime as _dt

import numpy as np
import pandas as pd

from planner.errors import InputError

#: PVWatts v5 default total system loss, 14.08 % (soiling 2, shading 3, mismatch 2,
#: wiring 2, connections 0.5, LID 1.5, nameplate 1, availability 3 %), rounded.
#: Source: Dobos 2014, NREL/TP-6A20-62641, system-loss section (table number from
#: memory); the same figure is ``pvlib.pvsystem.pvwatts_losses()`` with its defaults.
DEFAULT_SYSTEM_LOSS_FRAC = 0.14

#: Charge-controller conversion efficiency (MPPT controllers are quoted at 0.94-0.98).
#: Source: from memory.
DEFAULT_CONTROLLER_EFFICIENCY_FRAC = 0.95

#: Ground reflectance of grass-like ground. Source: common practice (pvlib default 0.25;
#: 0.2 is the usual design value).
DEFAULT_ALBEDO = 0.2

#: SAPM mounting used for a pole- or frame-mounted module at a remote site.
#: Source: King et al. 2004, SAND2004-3535, Table 1 (via pvlib's parameter table).
DEFAULT_MOUNTING = "open_rack_glass_polymer"


def _year_arrays(year):
    """Unpack a typical-year object (duck-typed) into the arrays pv_dc_power_w needs."""
    return dict(times=year.times(), ghi_w_m2=year.ghi_w_m2, dni_w_m2=year.dni_w_m2,
                dhi_w_m2=year.dhi_w_m2, temp_air_c=year.temp_air_c,
                wind_speed_m_s=year.wind_speed_m_s, latitude_deg=year.latitude_deg,
                longitude_deg=year.longitude_deg, altitude_m=year.altitude_m,
                utc_offset_h=getattr(year, "utc_offset_h", None))


def _check_range(value, key: str, lo: float, hi: float, unit: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{key}: found {value!r}, expected a number of {unit}") from None
    if not (np.isfinite(v) and lo <= v <= hi):
        raise InputError(f"{key}: found {value!r}, expected {lo:g} to {hi:g} {unit}")
    return v


def _localized(times, utc_offset_h) -> pd.DatetimeIndex:
    """Hour-start index in local standard time, as a tz-aware index."""
    try:
        idx = pd.DatetimeIndex(times)
    except (TypeError, ValueError):
        raise InputError("times: found values that are not timestamps, expected an hourly "
                         "DatetimeIndex") from None
    if idx.tz is not None:
        return idx
    if utc_offset_h is None:
        raise InputError("utc_offset_h: found none and a time index without a time zone, "
                         "expected the site's standard-time offset from UTC in hours")
    off = _check_range(utc_offset_h, "utc_offset_h", -12, 14, "h")
    return idx.tz_localize(_dt.timezone(_dt.timedelta(hours=off)))


def _hourly(arr, key: str, n: int) -> np.ndarray:
    try:
        a = np.asarray(arr, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{key}: found non-numeric values, expected numbers") from None
    if a.shape != (n,):
        raise InputError(f"{key}: found shape {a.shape}, expected ({n},) like the time index")
    return a


def pv_dc_power_w(times, ghi_w_m2=None, dni_w_m2=None, dhi_w_m2=None, temp_air_c=None,
                  wind_speed_m_s=None, *, latitude_deg=None, longitude_deg=None,
                  altitude_m: float = 0.0, utc_offset_h=None, array_wp: float,
                  tilt_deg: float, azimuth_deg: float, gamma_pdc_per_c: float = -0.004,
                  system_loss_frac: float = DEFAULT_SYSTEM_LOSS_FRAC,
                  snow_months=(), snow_loss_frac: float = 1.0,
                  controller_efficiency_frac: float = DEFAULT_CONTROLLER_EFFICIENCY_FRAC,
                  albedo: float = DEFAULT_ALBEDO,
                  mounting: str = DEFAULT_MOUNTING, solar_apparent_zenith_deg=None,
                  solar_azimuth_deg=None) -> np.ndarray:
    """Hourly PV power offered to the battery bus (W, hourly mean).

    ``P = pvwatts_dc(E_poa, T_cell, array_wp, gamma) * (1 - system_loss_frac)
    * (1 - snow_loss_frac if month in snow_months) * controller_efficiency_frac``,
    clipped at 0 (night).

    Parameters
    ----------
    times : pandas.DatetimeIndex, or a typical-year object
        Hour-start timestamps in local standard time (tz-aware, or naive with
        ``utc_offset_h``). An object with the attributes of
        :class:`planner.climate.TypicalYear` (``times()``, ``ghi_w_m2``, ``dni_w_m2``,
        ``dhi_w_m2``, ``temp_air_c``, ``wind_speed_m_s``, ``latitude_deg``,
        ``longitude_deg``, ``altitude_m``, ``utc_offset_h``) may be passed instead, and
        then the next five arrays and the location are taken from it.
    ghi_w_m2, dni_w_m2, dhi_w_m2 : array
        Global horizontal, direct normal and diffuse horizontal irradiance (W/m2).
    temp_air_c : array
        Air temperature (degC).
    wind_speed_m_s : array
        Wind speed at 10 m (m/s).
    latitude_deg, longitude_deg : float
        Site position (degrees north, east).
    altitude_m : float
        Site altitude (m).
    utc_offset_h : float, optional
        Standard-time offset from UTC (h) when ``times`` is naive.
    array_wp : float
        Array nameplate at STC (W). 0 gives no PV.
    tilt_deg : float
        Module tilt from horizontal, 0-90 degrees.
    azimuth_deg : float
        Direction the modules face, 0-360 degrees clockwise from north (180 = south).
    gamma_pdc_per_c : float
        Power temperature coefficient (1/K); -0.004 is typical of crystalline silicon
        (common practice; Dobos 2014 lists -0.47 %/K for its "standard" module, from
        memory).
    system_loss_frac : float
        Soiling, wiring, mismatch and similar losses (0-1); default PVWatts 14 %.
    snow_months : iterable of int
        Months (1-12) in which snow covers the array part of the time.
    snow_loss_frac : float
        Fraction of output lost in snow months (0-1); default 1.0 is the conservative
        design assumption that the array is buried (common practice for worst-month
        design at unattended sites).
    controller_efficiency_frac : float
        Charge-controller efficiency (0-1].
    albedo : float
        Ground reflectance (0-1).
    mounting : str
        Key of ``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS['sapm']``.
    solar_apparent_zenith_deg, solar_azimuth_deg : array, optional
        The sun at mid-hour, when already computed for this place (the same NREL SPA
        values); otherwise computed here.

    Returns
    -------
    numpy.ndarray
        PV power at the battery bus (W), one value per hour, >= 0.

    Raises
    ------
    planner.errors.InputError
        Tilt outside 0-90, azimuth outside 0-360, negative array power, other values out
        of range, arrays not matching the time index.
    """
    import pvlib  # heavy import kept out of module import time

    if hasattr(times, "ghi_w_m2"):
        unpacked = _year_arrays(times)
        times = unpacked.pop("times")
        ghi_w_m2, dni_w_m2, dhi_w_m2 = (unpacked.pop(k) for k in
                                        ("ghi_w_m2", "dni_w_m2", "dhi_w_m2"))
        temp_air_c, wind_speed_m_s = unpacked.pop("temp_air_c"), unpacked.pop("wind_speed_m_s")
        latitude_deg, longitude_deg = unpacked["latitude_deg"], unpacked["longitude_deg"]
        altitude_m = unpacked["altitude_m"]
        if utc_offset_h is None:
            utc_offset_h = unpacked["utc_offset_h"]

    array_wp = _check_range(array_wp, "array_wp", 0.0, 1e7, "W")
    tilt = _check_range(tilt_deg, "tilt_deg", 0.0, 90.0, "degrees")
    azimuth = _check_range(azimuth_deg, "azimuth_deg", 0.0, 360.0, "degrees")
    lat = _check_range(latitude_deg, "latitude_deg", -90.0, 90.0, "degrees")
    lon = _check_range(longitude_deg, "longitude_deg", -180.0, 180.0, "degrees")
    alt = _check_range(altitude_m, "altitude_m", -500.0, 9000.0, "m")
    losses = _checked_losses(gamma_pdc_per_c, system_loss_frac, snow_loss_frac,
                             controller_efficiency_frac, albedo, mounting)
    months = _checked_months(snow_months)

    idx = _localized(times, utc_offset_h)
    n = len(idx)
    ghi, dni, dhi = (_hourly(a, k, n) for a, k in ((ghi_w_m2, "ghi_w_m2"),
                                                   (dni_w_m2, "dni_w_m2"),
                                                   (dhi_w_m2, "dhi_w_m2")))
    temp_air = _hourly(temp_air_c, "temp_air_c", n)
    wind = _hourly(wind_speed_m_s, "wind_speed_m_s", n)
    if array_wp == 0.0:
        return np.zeros(n)

    # hour-start labels: the hour's mean sun is closest to its middle
    mid = idx + pd.Timedelta(minutes=30)
    if solar_apparent_zenith_deg is None or solar_azimuth_deg is None:
        sun = pvlib.solarposition.get_solarposition(mid, lat, lon, altitude=alt)
        solar_apparent_zenith_deg = sun["apparent_zenith"].to_numpy()
        solar_azimuth_deg = sun["azimuth"].to_numpy()
    dni_extra = pvlib.irradiance.get_extra_radiation(mid).to_numpy()
    poa_global = _poa_global(tilt, azimuth, _hourly(solar_apparent_zenith_deg, "solar zenith", n),
                             _hourly(solar_azimuth_deg, "solar azimuth", n), dni, ghi, dhi,
                             dni_extra, losses["albedo"])
    factor = np.full(n, losses["kept_frac"])
    if months:
        factor[np.isin(idx.month, months)] *= losses["snow_kept_frac"]
    return _bus_power(poa_global, temp_air, wind, array_wp, losses) * factor


def pv_dc_power_many_w(ghi_w_m2, dni_w_m2, dhi_w_m2, temp_air_c, wind_speed_m_s, *,
                       solar_apparent_zenith_deg, solar_azimuth_deg, dni_extra_w_m2,
                       month, array_wp, tilt_deg, azimuth_deg, snow_months=None,
                       gamma_pdc_per_c: float = -0.004,
                       system_loss_frac: float = DEFAULT_SYSTEM_LOSS_FRAC,
                       snow_loss_frac: float = 1.0,
                       controller_efficiency_frac: float = DEFAULT_CONTROLLER_EFFICIENCY_FRAC,
                       albedo: float = DEFAULT_ALBEDO,
                       mounting: str = DEFAULT_MOUNTING) -> np.ndarray:
    """Hourly PV power at the battery bus of n arrays at once, (hours, n), W.

    The chain of :func:`pv_dc_power_w` (Hay-Davies POA, SAPM cell temperature, PVWatts
    DC, losses) on arrays shaped (hours, n), one column per array with its own sky,
    weather, sun and orientation; the sun is given (e.g. from
    :func:`planner.climate.solar.sun_paths`).

    Parameters
    ----------
    ghi_w_m2, dni_w_m2, dhi_w_m2, temp_air_c, wind_speed_m_s : (hours, n) arrays
    solar_apparent_zenith_deg, solar_azimuth_deg : (hours, n) arrays
        The sun at mid-hour at each array.
    dni_extra_w_m2 : (hours,) or (hours, n) array
        Extraterrestrial normal irradiance at mid-hour (Hay-Davies anisotropy index).
    month : (hours,) ints 1-12
        Month of each hour (for snow months).
    array_wp, tilt_deg, azimuth_deg : (n,) arrays
    snow_months : sequence of n sequences of months, optional

    Returns
    -------
    (hours, n) array of W, >= 0.
    """
    import pvlib  # noqa: F401  (heavy import kept out of module import time)

    ghi = np.asarray(ghi_w_m2, float)
    hours, n = ghi.shape
    wp = np.broadcast_to(np.asarray(array_wp, float), (n,))
    tilt = np.broadcast_to(np.asarray(tilt_deg, float), (n,))
    azimuth = np.broadcast_to(np.asarray(azimuth_deg, float), (n,))
    for name, values, lo, hi in (("array_wp", wp, 0.0, 1e7), ("tilt_deg", tilt, 0.0, 90.0),
                                 ("azimuth_deg", azimuth, 0.0, 360.0)):
        for v in values:
            _check_range(v, name, lo, hi, "")
    losses = _checked_losses(gamma_pdc_per_c, system_loss_frac, snow_loss_frac,
                             controller_efficiency_frac, albedo, mounting)
    extra = np.asarray(dni_extra_w_m2, float)
    poa_global = _poa_global(tilt[None, :], azimuth[None, :], solar_apparent_zenith_deg,
                             solar_azimuth_deg, np.asarray(dni_w_m2, float), ghi,
                             np.asarray(dhi_w_m2, float), extra if extra.ndim == 2 else extra[:, None],
                             losses["albedo"])
    power = _bus_power(poa_global, np.asarray(temp_air_c, float), np.asarray(wind_speed_m_s, float),
                       wp[None, :], losses)
    power *= losses["kept_frac"]
    if snow_months is not None:
        month = np.asarray(month)
        for j, months in enumerate(snow_months):
            months = _checked_months(months)
            if months:
                power[np.isin(month, months), j] *= losses["snow_kept_frac"]
    return power


def _checked_losses(gamma_pdc_per_c, system_loss_frac, snow_loss_frac, controller_efficiency_frac,
                    albedo, mounting) -> dict:
    import pvlib

    gamma = _check_range(gamma_pdc_per_c, "gamma_pdc_per_c", -0.02, 0.0, "1/K")
    loss = _check_range(system_loss_frac, "system_loss_frac", 0.0, 0.99, "(fraction)")
    snow_loss = _check_range(snow_loss_frac, "snow_loss_frac", 0.0, 1.0, "(fraction)")
    eta = _check_range(controller_efficiency_frac, "controller_efficiency_frac", 0.01, 1.0,
                       "(fraction)")
    rho = _check_range(albedo, "albedo", 0.0, 1.0, "(fraction)")
    sapm = pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS["sapm"]
    if mounting not in sapm:
        raise InputError(f"mounting: found {mounting!r}, expected one of {sorted(sapm)}")
    return {"gamma": gamma, "kept_frac": (1.0 - loss) * eta, "snow_kept_frac": 1.0 - snow_loss,
            "albedo": rho, "sapm": sapm[mounting]}


def _checked_months(snow_months) -> list:
    months = sorted(set(snow_months))
    if any(not isinstance(m, (int, np.integer)) or not 1 <= m <= 12 for m in months):
        raise InputError(f"snow_months: found {list(snow_months)!r}, expected months 1-12")
    return months


def _poa_global(tilt, azimuth, apparent_zenith, sun_azimuth, dni, ghi, dhi, dni_extra, albedo):
    """Plane-of-array global irradiance, Hay-Davies sky (pvlib), >= 0, W/m2."""
    import pvlib

    poa = pvlib.irradiance.get_total_irradiance(
        tilt, azimuth, apparent_zenith, sun_azimuth, dni, ghi, dhi, dni_extra=dni_extra,
        albedo=albedo, model="haydavies")
    poa_global = np.nan_to_num(np.asarray(poa["poa_global"], dtype=float), nan=0.0)
    return np.maximum(poa_global, 0.0)


def _bus_power(poa_global, temp_air, wind, array_wp, losses):
    """PVWatts DC power at the SAPM cell temperature, >= 0, W (before the loss factors)."""
    import pvlib

    temp_cell = pvlib.temperature.sapm_cell(poa_global, temp_air, wind, **losses["sapm"])
    pdc = pvlib.pvsystem.pvwatts_dc(poa_global, temp_cell, pdc0=array_wp, gamma_pdc=losses["gamma"])
    return np.maximum(np.nan_to_num(np.asarray(pdc, dtype=float), nan=0.0), 0.0)
