"""Climate archetypes: hourly typical years generated from monthly normals.

Each archetype is a small TOML file in ``planner/data/climates/``: latitude,
longitude, altitude, UTC offset, and per month the mean daily maximum and minimum
air temperature and a clearness fraction (monthly GHI / Ineichen clear-sky GHI).
The numbers are approximate normals of a *kind* of place, recalled from memory.

Generation (deterministic, fixed seed per archetype):

1. daily base maximum and minimum by a mean-preserving smooth interpolation of the
   monthly values (no steps at month boundaries);
2. day-to-day weather: a first-order autoregressive anomaly of the daily mean
   temperature (lag-1 correlation 0.7, common practice for daily temperature
   anomalies, from memory) and a daily clearness factor; sunnier days get a wider
   daily range; anomalies are centred per month so they do not shift the normals;
3. hours from the daily extremes with the sine-exponential model of Parton & Logan
   (1981), evaluated at mid-hour in solar time;
4. the base extremes are corrected iteratively until the hourly series' monthly means
   of daily maximum and minimum reproduce the normals (the hourly sampling misses the
   exact peak, so uncorrected means fall short by a few tenths of a kelvin);
5. irradiance: Ineichen clear sky with Linke turbidity (pvlib, offline) times the
   daily clearness, split into DNI and DHI with the Erbs model.
"""

from __future__ import annotations

import functools
import tomllib
from importlib import resources

import numpy as np

from planner.climate import HOURS_PER_YEAR, TypicalYear
from planner.errors import InputError

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

_DAYS_IN_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_OF_DAY = np.repeat(np.arange(12), _DAYS_IN_MONTH)
_REQUIRED = ("name", "description", "source", "latitude_deg", "longitude_deg", "altitude_m",
             "utc_offset_h", "wind_speed_m_s", "day_to_day_sd_k", "seed", "tmax_c", "tmin_c",
             "clearness_frac")


def _files() -> dict:
    folder = resources.files("planner") / "data" / "climates"
    return {f.name[:-5]: f for f in folder.iterdir() if f.name.endswith(".toml")}


@functools.lru_cache(maxsize=1)
def _definitions() -> dict:
    out = {}
    for name, handle in sorted(_files().items()):
        out[name] = read_definition(handle.read_text(encoding="utf-8"), f"climates/{name}.toml")
    return out


def read_definition(text: str, where: str) -> dict:
    """Parse and check one archetype file (TOML text)."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"is not valid TOML ({err})", source=where) from None
    for key in _REQUIRED:
        if key not in data:
            raise InputError(f"key '{key}' is missing", source=where)
    for key in ("tmax_c", "tmin_c", "clearness_frac"):
        values = np.asarray(data[key], dtype=float)
        if values.shape != (12,):
            raise InputError(f"'{key}' has {values.size} values; expected 12 (Jan-Dec)",
                             source=where)
        data[key] = values
    if np.any(data["tmax_c"] <= data["tmin_c"]):
        raise InputError("'tmax_c' must exceed 'tmin_c' in every month", source=where)
    if np.any((data["clearness_frac"] <= 0) | (data["clearness_frac"] > 1)):
        raise InputError("'clearness_frac' must be in (0, 1]", source=where)
    return data


def names() -> list[str]:
    """Names of the bundled archetypes."""
    return list(_definitions())


def descriptions() -> dict[str, str]:
    """Archetype name -> one-line description."""
    return {n: f"generated archetype: {d['description']}" for n, d in _definitions().items()}


@functools.lru_cache(maxsize=32)
def load_archetype(name: str) -> TypicalYear:
    """The generated typical year of a bundled archetype (cached)."""
    d = _definitions()[name]
    return generate_year(
        name=name, source=f"generated from monthly normals ({d['source']}; from memory)",
        latitude_deg=float(d["latitude_deg"]), longitude_deg=float(d["longitude_deg"]),
        altitude_m=float(d["altitude_m"]), utc_offset_h=float(d["utc_offset_h"]),
        tmax_c=d["tmax_c"], tmin_c=d["tmin_c"], clearness_frac=d["clearness_frac"],
        wind_speed_m_s=float(d["wind_speed_m_s"]), day_to_day_sd_k=float(d["day_to_day_sd_k"]),
        seed=int(d["seed"]))


# --------------------------------------------------------------------------- building blocks

def mean_preserving_daily(monthly: np.ndarray, iterations: int = 30) -> np.ndarray:
    """365 smooth daily values whose monthly means equal ``monthly``.

    Periodic linear interpolation between mid-month points, corrected iteratively by
    the monthly residual (converges geometrically for smooth annual cycles).
    """
    monthly = np.asarray(monthly, dtype=float)
    mid = np.cumsum(_DAYS_IN_MONTH) - _DAYS_IN_MONTH / 2.0
    days = np.arange(365) + 0.5
    nodes = monthly.copy()
    for _ in range(iterations):
        daily = np.interp(days, mid, nodes, period=365)
        resid = monthly - monthly_mean_of_days(daily)
        nodes += resid
        if np.max(np.abs(resid)) < 1e-6:
            break
    return np.interp(days, mid, nodes, period=365)


def monthly_mean_of_days(daily: np.ndarray) -> np.ndarray:
    """Monthly means of 365 daily values (or of rows of a (365, n) array)."""
    sums = np.add.reduceat(np.asarray(daily, float), np.r_[0, np.cumsum(_DAYS_IN_MONTH)[:-1]],
                           axis=0)
    return sums / (_DAYS_IN_MONTH if np.ndim(daily) == 1 else _DAYS_IN_MONTH[:, None])


def day_length_h(latitude_deg: float, day_of_year: np.ndarray) -> np.ndarray:
    """Astronomical day length, hours.

    Declination after Cooper (1969), Solar Energy 12(3), 333-346:
    delta = 23.45 deg * sin(360 (284 + n) / 365); sunset hour angle
    omega_s = arccos(-tan(phi) tan(delta)); day length = 2 omega_s / 15 deg/h.
    """
    decl = np.radians(23.45) * np.sin(2 * np.pi * (284 + np.asarray(day_of_year)) / 365.0)
    x = -np.tan(np.radians(latitude_deg)) * np.tan(decl)
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
    tmax_c, tmin_c, day_length_h : (365,) arrays
        Daily maximum and minimum air temperature (degC) and day length (h).
    solar_time_shift_h : (365,) array
        Solar time minus clock (local standard) time, hours, per day.

    Returns
    -------
    (8760,) array of degC at mid-hour (hour h covers h..h+1 local standard time).
    """
    y = np.clip(day_length_h, *DAY_LENGTH_BOUNDS_H)
    sunrise = 12.0 - y / 2.0
    sunset = 12.0 + y / 2.0
    t_sunset = tmin_c + (tmax_c - tmin_c) * np.sin(np.pi * (y - c_h) / (y + 2 * a_h))
    day = np.repeat(np.arange(365), 24)
    t = np.tile(np.arange(24) + 0.5, 365) + solar_time_shift_h[day]
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
    """Daily maximum and minimum of an 8,760-hour series (calendar days)."""
    days = np.asarray(hourly_c).reshape(365, 24)
    return days.max(axis=1), days.min(axis=1)


def _equation_of_time_min(day_of_year: np.ndarray) -> np.ndarray:
    """Equation of time, minutes (Spencer 1971 series, via pvlib)."""
    import pvlib
    return np.asarray(pvlib.solarposition.equation_of_time_spencer71(day_of_year), float)


# --------------------------------------------------------------------------- generator

def _match_monthly_clearness(clear_day: np.ndarray, clear_energy_day: np.ndarray,
                             clearness: np.ndarray, iterations: int = 8) -> np.ndarray:
    """Rescale daily clearness so each month's GHI / clear-sky GHI equals the input.

    The daily factors are capped at 1 (no day brighter than clear sky), which lowers
    the monthly ratio of very clear climates; a few rescaling passes restore it.
    """
    out = clear_day.copy()
    for _ in range(iterations):
        energy = monthly_mean_of_days(out * clear_energy_day)
        reference = monthly_mean_of_days(clear_energy_day)
        with np.errstate(invalid="ignore", divide="ignore"):
            factor = np.where(reference > 0, clearness * reference / energy, 1.0)
        out = np.clip(out * np.repeat(np.nan_to_num(factor, nan=1.0), _DAYS_IN_MONTH), 0.05, 1.0)
    return out


def generate_year(*, name: str, source: str, latitude_deg: float, longitude_deg: float,
                  altitude_m: float, utc_offset_h: float, tmax_c, tmin_c, clearness_frac,
                  wind_speed_m_s: float = 3.0, day_to_day_sd_k: float = 2.0,
                  seed: int = 0, correction_iterations: int = 6) -> TypicalYear:
    """Generate an hourly typical year from monthly normals (see module docstring).

    Parameters
    ----------
    tmax_c, tmin_c : 12 values
        Monthly means of daily maximum and minimum air temperature, degC.
    clearness_frac : 12 values
        Monthly GHI as a fraction of Ineichen clear-sky GHI.
    wind_speed_m_s : float
        Constant wind speed, m/s.
    day_to_day_sd_k : float
        Standard deviation of daily mean temperature anomalies, K.
    seed : int
        Seed of the day-to-day weather: the same inputs always give the same year.
    """
    from planner.climate.solar import clear_sky_ghi, split_ghi

    tmax_c = np.asarray(tmax_c, float)
    tmin_c = np.asarray(tmin_c, float)
    clearness = np.asarray(clearness_frac, float)
    rng = np.random.default_rng(seed)
    doy = np.arange(1, 366)

    # Day-to-day weather: AR(1) temperature anomaly and a daily clearness factor.
    eps = rng.standard_normal(365 + 60)
    anomaly = np.zeros_like(eps)
    for i in range(1, len(eps)):   # 425 scalar steps, once per archetype
        anomaly[i] = ANOMALY_LAG1 * anomaly[i - 1] + np.sqrt(1 - ANOMALY_LAG1 ** 2) * eps[i]
    anomaly = anomaly[60:] * day_to_day_sd_k
    cloud = rng.standard_normal(365)
    clear_month = mean_preserving_daily(clearness)
    clear_day = np.clip(clear_month * (1.0 + CLEARNESS_CV * cloud), 0.08, 1.0)
    # Sunny days have a wider daily range (common practice); +-30 % at most.
    range_factor = np.clip(1.0 + 0.6 * (clear_day / clear_month - 1.0), 0.7, 1.3)

    shift = ((longitude_deg - 15.0 * utc_offset_h) / 15.0
             + _equation_of_time_min(doy) / 60.0)
    length = day_length_h(latitude_deg, doy)

    def daily_targets(max_nodes, min_nodes):
        base_max = mean_preserving_daily(max_nodes)
        base_min = mean_preserving_daily(min_nodes)
        base_range = base_max - base_min
        half = 0.5 * base_range * (range_factor - 1.0)
        d_max = anomaly + half
        d_min = anomaly - half
        # Centre the anomalies per month so the normals are not shifted.
        d_max -= np.repeat(monthly_mean_of_days(d_max), _DAYS_IN_MONTH)
        d_min -= np.repeat(monthly_mean_of_days(d_min), _DAYS_IN_MONTH)
        day_max = base_max + d_max
        day_min = np.minimum(base_min + d_min, day_max - 0.5)
        return day_max, day_min

    max_nodes, min_nodes = tmax_c.copy(), tmin_c.copy()
    for _ in range(correction_iterations):
        day_max, day_min = daily_targets(max_nodes, min_nodes)
        hourly = parton_logan_hourly(day_max, day_min, length, shift)
        got_max, got_min = (monthly_mean_of_days(x) for x in daily_extremes(hourly))
        err_max, err_min = tmax_c - got_max, tmin_c - got_min
        if max(np.abs(err_max).max(), np.abs(err_min).max()) < 0.02:
            break
        max_nodes += err_max
        min_nodes += err_min

    sky = clear_sky_ghi(latitude_deg, longitude_deg, altitude_m, utc_offset_h)
    clear_ghi = sky["ghi"].to_numpy()
    clear_day = _match_monthly_clearness(clear_day, clear_ghi.reshape(365, 24).sum(axis=1),
                                         clearness)
    ghi = clear_ghi * np.repeat(clear_day, 24)
    dni, dhi = split_ghi(ghi, latitude_deg, longitude_deg, altitude_m, utc_offset_h)
    return TypicalYear(
        name=name, source=source, latitude_deg=latitude_deg, longitude_deg=longitude_deg,
        altitude_m=altitude_m, utc_offset_h=utc_offset_h, temp_air_c=hourly, ghi_w_m2=ghi,
        dni_w_m2=dni, dhi_w_m2=dhi,
        wind_speed_m_s=np.full(HOURS_PER_YEAR, float(wind_speed_m_s)))


__all__ = ["names", "descriptions", "load_archetype", "generate_year", "parton_logan_hourly",
           "mean_preserving_daily", "day_length_h", "daily_extremes", "monthly_mean_of_days"]
