"""Hourly typical years from monthly normals, for one place or many at once.

Input per place: 12 monthly means of the daily maximum and minimum air temperature and
12 monthly clearness fractions (GHI over Ineichen clear-sky GHI), plus the place's
clear sky and sun. Arrays of many places are shaped ``(12, n)`` and ``(8760, n)``; the
only Python loop runs over the 425 days of the weather draw (vectorised across places),
so a fleet's years cost about what one year costs per place in numpy.

Generation (deterministic: each place has its own seed):

1. daily base maximum and minimum by a mean-preserving smooth interpolation of the
   monthly values (no steps at month boundaries; exact monthly means);
2. day-to-day weather: a first-order autoregressive anomaly of the daily mean
   temperature (lag-1 correlation 0.7, common practice for daily temperature anomalies,
   from memory) and a daily clearness factor; sunnier days get a wider daily range;
   anomalies are centred per month so they do not shift the normals;
3. hours from the daily extremes with the sine-exponential model of Parton & Logan
   (1981), evaluated at mid-hour in solar time;
4. the base extremes are corrected iteratively until the hourly series' monthly means
   of daily maximum and minimum reproduce the normals (the hourly sampling misses the
   exact peak, so uncorrected means fall short by a few tenths of a kelvin);
5. irradiance: clear-sky GHI times the daily clearness (rescaled so each month's ratio
   matches the input), split into DNI and DHI with the Erbs et al. (1982) model.

Monthly irradiation or a cloudiness class become monthly clearness with
:func:`clearness_from_irradiation` and :func:`clearness_of_cloudiness`.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from planner import HOURS_PER_YEAR

#: Parton & Logan (1981), Agricultural Meteorology 23, 205-216, Table 1, air
#: temperature at 150 cm: a = lag of the maximum after solar noon (h), b = night-time
#: decay coefficient, c = lag of the minimum after sunrise (h). From memory.
PARTON_LOGAN_A_H = 1.86
PARTON_LOGAN_B = 2.20
PARTON_LOGAN_C_H = -0.17
#: Day length used for the diurnal shape is kept within these bounds, so the model
#: still has a day and a night in polar day/night (irradiance uses the true sun).
DAY_LENGTH_BOUNDS_H = (4.0, 20.0)
#: Lag-1 autocorrelation of daily mean temperature anomalies (from memory, typical
#: mid-latitude value 0.6-0.8).
ANOMALY_LAG1 = 0.7
#: Coefficient of variation of the daily clearness around its monthly value (from memory).
CLEARNESS_CV = 0.25
#: Days drawn before 1 January so the autoregressive anomaly starts in its steady state.
_SPIN_UP_DAYS = 60

_DAYS_IN_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_OF_DAY = np.repeat(np.arange(12), _DAYS_IN_MONTH)
_MONTH_STARTS = np.r_[0, np.cumsum(_DAYS_IN_MONTH)[:-1]]

#: Cloudiness classes: the okta band (eighths of sky covered, WMO cloud-amount scale) a
#: class stands for, and its monthly clearness by Kasten & Czeplak (1980), Solar Energy
#: 24, 177-189: G/G_clear = 1 - 0.75 (N/8)^3.4, averaged over the whole oktas of the
#: band. The relation is for an observation's cloud amount; for a month described by
#: one class it is an estimate (monthly irradiation, where known, is better).
CLOUDINESS_OKTAS = {
    "clear": (0,),
    "few": (1, 2),
    "scattered": (3, 4),
    "broken": (5, 6, 7),
    "overcast": (8,),
}


def kasten_czeplak_clearness(cloud_oktas):
    """Global irradiance over its clear-sky value for a cloud amount (oktas).

    Kasten, F. & Czeplak, G. (1980). Solar and terrestrial radiation dependent on the
    amount and type of cloud. Solar Energy 24, 177-189: G/G_clear = 1 - 0.75 (N/8)^3.4.

    Examples
    --------
    >>> round(float(kasten_czeplak_clearness(8)), 3), round(float(kasten_czeplak_clearness(4)), 3)
    (0.25, 0.929)
    """
    n = np.asarray(cloud_oktas, dtype=float)
    return 1.0 - 0.75 * (n / 8.0) ** 3.4


def clearness_of_cloudiness(cloudiness: str) -> float:
    """Monthly clearness of a cloudiness class (:data:`CLOUDINESS_OKTAS`)."""
    return float(np.mean(kasten_czeplak_clearness(np.array(CLOUDINESS_OKTAS[cloudiness]))))


def clearness_from_irradiation(ghi_kwh_m2_day, clear_ghi_w_m2):
    """Monthly clearness (GHI / clear-sky GHI) from monthly mean daily irradiation.

    Parameters
    ----------
    ghi_kwh_m2_day : (12, n) array
        Monthly mean daily global horizontal irradiation, kWh/m2 per day.
    clear_ghi_w_m2 : (8760, n) array
        Hourly clear-sky GHI at each place (hour means, W/m2 = Wh/m2 per hour).

    Returns
    -------
    clearness : (12, n) array
        Ratio of the given irradiation to the month's clear-sky irradiation; 1 where
        the month has no clear-sky irradiation (polar night).
    """
    given = np.asarray(ghi_kwh_m2_day, dtype=float) * 1000.0
    clear_daily = monthly_mean_of_days(
        np.asarray(clear_ghi_w_m2, float).reshape(365, 24, -1).sum(axis=1))
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(clear_daily > 0.0, given / clear_daily, 1.0)


# --------------------------------------------------------------------------- building blocks

def _periodic_weights():
    """Periodic linear interpolation from mid-month nodes to the 365 day centres."""
    mid = np.cumsum(_DAYS_IN_MONTH) - _DAYS_IN_MONTH / 2.0
    nodes_x = np.r_[mid[-1] - 365.0, mid, mid[0] + 365.0]
    nodes_i = np.r_[11, np.arange(12), 0]
    days = np.arange(365) + 0.5
    j = np.searchsorted(nodes_x, days, side="right") - 1
    w = (days - nodes_x[j]) / (nodes_x[j + 1] - nodes_x[j])
    return nodes_i[j], nodes_i[j + 1], w


_LOW, _HIGH, _W_HIGH = _periodic_weights()


def _interpolate_nodes(nodes: np.ndarray) -> np.ndarray:
    """365 daily values from 12 mid-month nodes (periodic, piecewise linear); (12,) or (12, n)."""
    w = _W_HIGH.reshape((-1,) + (1,) * (nodes.ndim - 1))
    return nodes[_LOW] * (1.0 - w) + nodes[_HIGH] * w


def _monthly_mean_matrix_inverse() -> np.ndarray:
    """Inverse of the map from mid-month nodes to monthly means of the interpolated days."""
    forward = np.array([monthly_mean_of_days(_interpolate_nodes(np.eye(12)[:, k]))
                        for k in range(12)]).T
    return np.linalg.inv(forward)


def monthly_mean_of_days(daily: np.ndarray) -> np.ndarray:
    """Monthly means of 365 daily values (or of the columns of a (365, n) array)."""
    daily = np.asarray(daily, float)
    sums = np.add.reduceat(daily, _MONTH_STARTS, axis=0)
    return sums / (_DAYS_IN_MONTH if daily.ndim == 1 else _DAYS_IN_MONTH[:, None])


_NODES_FROM_MEANS = _monthly_mean_matrix_inverse()


def mean_preserving_daily(monthly: np.ndarray) -> np.ndarray:
    """365 smooth daily values whose monthly means equal ``monthly``.

    Periodic linear interpolation between mid-month nodes; the nodes are solved so that
    the monthly means of the interpolated days are exact (a 12 x 12 linear system, the
    same for every place). ``monthly`` may be (12,) or (12, n).
    """
    monthly = np.asarray(monthly, dtype=float)
    columns = monthly.reshape(12, -1)
    nodes = np.zeros_like(columns)
    # Term by term (not a matrix product) so each place's result is independent of how
    # many places share the call.
    for k in range(12):
        nodes += _NODES_FROM_MEANS[:, k, None] * columns[k][None, :]
    daily = _interpolate_nodes(nodes)
    return daily[:, 0] if monthly.ndim == 1 else daily


def day_length_h(latitude_deg, day_of_year: np.ndarray) -> np.ndarray:
    """Astronomical day length, hours; (days,) for one latitude, (days, n) for n.

    Declination after Cooper (1969), Solar Energy 12(3), 333-346:
    delta = 23.45 deg * sin(360 (284 + n) / 365); sunset hour angle
    omega_s = arccos(-tan(phi) tan(delta)); day length = 2 omega_s / 15 deg/h.
    """
    doy = np.asarray(day_of_year, dtype=float)
    lat = np.asarray(latitude_deg, dtype=float)
    decl = np.radians(23.45) * np.sin(2 * np.pi * (284 + doy) / 365.0)
    if lat.ndim:
        decl = decl[:, None]
    x = -np.tan(np.radians(lat)) * np.tan(decl)
    return 2.0 * np.degrees(np.arccos(np.clip(x, -1.0, 1.0))) / 15.0


def parton_logan_hourly(tmax_c: np.ndarray, tmin_c: np.ndarray, day_length_h: np.ndarray,
                        solar_time_shift_h: np.ndarray, *, a_h: float = PARTON_LOGAN_A_H,
                        b: float = PARTON_LOGAN_B, c_h: float = PARTON_LOGAN_C_H) -> np.ndarray:
    """Hourly air temperature from daily extremes, Parton & Logan (1981).

    Parton, W.J. & Logan, J.A. (1981). A model for diurnal variation in soil and air
    temperature. Agricultural Meteorology 23, 205-216, eqs. 1-2 with the night curve
    normalised to reach the next minimum at sunrise:

    day   (sunrise + c <= t <= sunset):
        T = Tmin + (Tmax - Tmin) sin(pi m / (Y + 2a)),   m = t - sunrise - c
    night (sunset < t < next sunrise + c):
        T = (Tmin' - Tsn e^-b + (Tsn - Tmin') e^(-b n / Z)) / (1 - e^-b)

    with Y the day length, n the hours since sunset, Z the night length, Tsn the
    sunset temperature and Tmin' the next day's minimum. The year is periodic
    (day 365 is followed by day 1).

    Parameters
    ----------
    tmax_c, tmin_c, day_length_h : (365,) or (365, n) arrays
        Daily maximum and minimum air temperature (degC) and day length (h).
    solar_time_shift_h : (365,) or (365, n) array
        Solar time minus clock (local standard) time, hours, per day.

    Returns
    -------
    (8760,) or (8760, n) array of degC at mid-hour (hour h covers h..h+1 local time).
    """
    tmax_c, tmin_c = np.asarray(tmax_c, float), np.asarray(tmin_c, float)
    two_d = tmax_c.ndim == 2
    y = np.clip(np.asarray(day_length_h, float), *DAY_LENGTH_BOUNDS_H)
    shift = np.asarray(solar_time_shift_h, float)
    if two_d:
        y = np.broadcast_to(y, tmax_c.shape)
        shift = np.broadcast_to(shift, tmax_c.shape)
    sunrise = 12.0 - y / 2.0
    sunset = 12.0 + y / 2.0
    t_sunset = tmin_c + (tmax_c - tmin_c) * np.sin(np.pi * (y - c_h) / (y + 2 * a_h))
    day = np.repeat(np.arange(365), 24)
    clock = np.tile(np.arange(24) + 0.5, 365)
    t = (clock[:, None] if two_d else clock) + shift[day]
    rise, set_, ylen = sunrise[day], sunset[day], y[day]
    daytime = (t >= rise + c_h) & (t <= set_)
    m = t - rise - c_h
    temp_day = tmin_c[day] + (tmax_c[day] - tmin_c[day]) * np.sin(np.pi * m / (ylen + 2 * a_h))
    # Evening: night of this day toward the next day's minimum.
    nxt = (day + 1) % 365
    prv = (day - 1) % 365
    evening = t > set_
    morning = ~daytime & ~evening
    n = np.where(evening, t - set_, t + 24.0 - sunset[prv])
    z = np.where(evening, sunrise[nxt] + 24.0 + c_h - set_, rise + 24.0 + c_h - sunset[prv])
    t_sn = np.where(evening, t_sunset[day], t_sunset[prv])
    t_min_next = np.where(evening, tmin_c[nxt], tmin_c[day])
    eb = np.exp(-b)
    temp_night = (t_min_next - t_sn * eb + (t_sn - t_min_next) * np.exp(-b * n / z)) / (1 - eb)
    return np.where(daytime, temp_day, np.where(evening | morning, temp_night, temp_day))


def daily_extremes(hourly_c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Daily maximum and minimum of an 8,760-hour series (calendar days); (365,) or (365, n)."""
    hourly_c = np.asarray(hourly_c)
    days = hourly_c.reshape((365, 24) + hourly_c.shape[1:])
    return days.max(axis=1), days.min(axis=1)


def equation_of_time_min(day_of_year: np.ndarray) -> np.ndarray:
    """Equation of time, minutes (Spencer 1971 series, via pvlib)."""
    import pvlib
    return np.asarray(pvlib.solarposition.equation_of_time_spencer71(day_of_year), float)


# --------------------------------------------------------------------------- generator

@dataclasses.dataclass(frozen=True)
class GeneratedYears:
    """Hourly series generated for n places, each shaped (8760, n)."""

    temp_air_c: np.ndarray
    ghi_w_m2: np.ndarray
    dni_w_m2: np.ndarray
    dhi_w_m2: np.ndarray


def _weather_draws(seeds, day_to_day_sd_k):
    """Daily temperature anomaly (AR(1)) and clearness noise per place, (365, n) each."""
    eps = np.empty((365 + _SPIN_UP_DAYS, len(seeds)))
    cloud = np.empty((365, len(seeds)))
    for j, seed in enumerate(seeds):
        rng = np.random.default_rng(int(seed))
        eps[:, j] = rng.standard_normal(365 + _SPIN_UP_DAYS)
        cloud[:, j] = rng.standard_normal(365)
    anomaly = np.zeros_like(eps)
    scale = np.sqrt(1 - ANOMALY_LAG1 ** 2)
    for i in range(1, len(eps)):   # 424 steps, each across all places
        anomaly[i] = ANOMALY_LAG1 * anomaly[i - 1] + scale * eps[i]
    return anomaly[_SPIN_UP_DAYS:] * np.asarray(day_to_day_sd_k, float)[None, :], cloud


def _match_monthly_clearness(clear_day: np.ndarray, clear_energy_day: np.ndarray,
                             clearness: np.ndarray, iterations: int = 8) -> np.ndarray:
    """Rescale daily clearness so each month's GHI / clear-sky GHI equals the input.

    The daily factors are capped at 1 (no day brighter than clear sky), which lowers
    the monthly ratio of very clear climates; a few rescaling passes restore it.
    """
    out = clear_day.copy()
    reference = monthly_mean_of_days(clear_energy_day)
    for _ in range(iterations):
        energy = monthly_mean_of_days(out * clear_energy_day)
        with np.errstate(invalid="ignore", divide="ignore"):
            factor = np.where(reference > 0, clearness * reference / energy, 1.0)
        out = np.clip(out * np.repeat(np.nan_to_num(factor, nan=1.0), _DAYS_IN_MONTH, axis=0),
                      0.05, 1.0)
    return out


def _temperatures(tmax_c, tmin_c, anomaly, range_factor, length, shift, iterations):
    """Hourly air temperature whose monthly means of daily extremes match the normals."""

    def daily_targets(max_nodes, min_nodes):
        base_max = mean_preserving_daily(max_nodes)
        base_min = mean_preserving_daily(min_nodes)
        half = 0.5 * (base_max - base_min) * (range_factor - 1.0)
        d_max = anomaly + half
        d_min = anomaly - half
        # Centre the anomalies per month so the normals are not shifted.
        d_max = d_max - np.repeat(monthly_mean_of_days(d_max), _DAYS_IN_MONTH, axis=0)
        d_min = d_min - np.repeat(monthly_mean_of_days(d_min), _DAYS_IN_MONTH, axis=0)
        day_max = base_max + d_max
        return day_max, np.minimum(base_min + d_min, day_max - 0.5)

    max_nodes, min_nodes = tmax_c.copy(), tmin_c.copy()
    hourly = None
    active = np.ones(tmax_c.shape[1], dtype=bool)
    for _ in range(iterations):
        day_max, day_min = daily_targets(max_nodes[:, active], min_nodes[:, active])
        fresh = parton_logan_hourly(day_max, day_min, length[:, active], shift[:, active])
        if hourly is None:
            hourly = fresh
        else:
            hourly[:, active] = fresh
        got_max, got_min = (monthly_mean_of_days(x) for x in daily_extremes(fresh))
        err_max, err_min = tmax_c[:, active] - got_max, tmin_c[:, active] - got_min
        # Each place stops on its own, so its year does not depend on the others.
        done = np.maximum(np.abs(err_max).max(axis=0), np.abs(err_min).max(axis=0)) < 0.02
        idx = np.flatnonzero(active)
        max_nodes[:, idx[~done]] += err_max[:, ~done]
        min_nodes[:, idx[~done]] += err_min[:, ~done]
        active[idx[done]] = False
        if not active.any():
            break
    return hourly


def generate_years(*, latitude_deg, longitude_deg, utc_offset_h, tmax_c, tmin_c,
                   clearness_frac, clear_ghi_w_m2, zenith_deg, seeds,
                   day_to_day_sd_k=2.0, correction_iterations: int = 6) -> GeneratedYears:
    """Hourly air temperature and irradiance of n places from their monthly normals.

    Parameters
    ----------
    latitude_deg, longitude_deg, utc_offset_h : (n,) arrays
        Position and standard-time offset of each place (day length, solar time).
    tmax_c, tmin_c : (12, n) arrays
        Monthly means of daily maximum and minimum air temperature, degC.
    clearness_frac : (12, n) array
        Monthly GHI as a fraction of clear-sky GHI (0-1].
    clear_ghi_w_m2, zenith_deg : (8760, n) arrays
        Clear-sky GHI and true solar zenith at mid-hour at each place.
    seeds : (n,) ints
        Seed of each place's day-to-day weather: the same inputs give the same year.
    day_to_day_sd_k : float or (n,) array
        Standard deviation of daily mean temperature anomalies, K.

    Returns
    -------
    GeneratedYears
    """
    from planner.climate.solar import split_ghi_many

    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    n = lat.size
    lon = np.broadcast_to(np.asarray(longitude_deg, float), (n,))
    off = np.broadcast_to(np.asarray(utc_offset_h, float), (n,))
    tmax_c = np.asarray(tmax_c, float).reshape(12, n)
    tmin_c = np.asarray(tmin_c, float).reshape(12, n)
    clearness = np.asarray(clearness_frac, float).reshape(12, n)
    clear_ghi = np.asarray(clear_ghi_w_m2, float).reshape(HOURS_PER_YEAR, n)
    doy = np.arange(1, 366)

    anomaly, cloud = _weather_draws(np.atleast_1d(seeds),
                                    np.broadcast_to(np.asarray(day_to_day_sd_k, float), (n,)))
    clear_month = mean_preserving_daily(clearness)
    clear_day = np.clip(clear_month * (1.0 + CLEARNESS_CV * cloud), 0.08, 1.0)
    # Sunny days have a wider daily range (common practice); +-30 % at most.
    range_factor = np.clip(1.0 + 0.6 * (clear_day / clear_month - 1.0), 0.7, 1.3)
    shift = (lon - 15.0 * off)[None, :] / 15.0 + equation_of_time_min(doy)[:, None] / 60.0
    length = day_length_h(lat, doy)
    temp = _temperatures(tmax_c, tmin_c, anomaly, range_factor, length, shift,
                         correction_iterations)

    clear_day = _match_monthly_clearness(clear_day, clear_ghi.reshape(365, 24, n).sum(axis=1),
                                         clearness)
    ghi = clear_ghi * np.repeat(clear_day, 24, axis=0)
    dni, dhi = split_ghi_many(ghi, zenith_deg)
    return GeneratedYears(temp, ghi, dni, dhi)


__all__ = ["generate_years", "GeneratedYears", "parton_logan_hourly", "mean_preserving_daily",
           "day_length_h", "daily_extremes", "monthly_mean_of_days", "clearness_from_irradiation",
           "clearness_of_cloudiness", "kasten_czeplak_clearness", "CLOUDINESS_OKTAS"]
