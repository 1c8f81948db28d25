"""Undisturbed ground temperature vs depth and day of year (Kusuda-Achenbach).

A buried battery vault sees the soil, not the air. The soil damps and delays the
annual swing of the surface temperature: the classic solution of the heat-conduction
equation for a semi-infinite solid with a sinusoidal surface temperature, as applied
to earth temperatures by

    Kusuda, T. & Achenbach, P.R. (1965). Earth temperature and thermal diffusivity
    at selected stations in the United States. ASHRAE Transactions 71(1), 61-75.

    T(z, t) = T_m - A_s exp(-z sqrt(pi / (alpha P)))
              * cos(2 pi / P * (t - t_0 - z / 2 * sqrt(P / (pi alpha))))

with T_m the annual mean surface temperature, A_s its annual amplitude, t_0 the day
of the surface minimum, alpha the soil thermal diffusivity and P the period (365 d).
The surface is driven by the climate's air temperature (annual mean and first
harmonic); snow cover and solar heating of bare soil, which usually make the
surface somewhat warmer than the air, can be added as ``surface_offset_k``.
"""

from __future__ import annotations

import numpy as np

#: Thermal diffusivity of moist mineral soil, m2/day (5e-7 m2/s; typical range
#: 0.03-0.08 m2/day for moist soils; from memory).
SOIL_DIFFUSIVITY_M2_DAY = 0.0432
PERIOD_DAYS = 365.0


def damping_depth_m(diffusivity_m2_day: float = SOIL_DIFFUSIVITY_M2_DAY,
                    period_days: float = PERIOD_DAYS) -> float:
    """Depth at which the annual amplitude falls by 1/e: d = sqrt(alpha P / pi), m."""
    return float(np.sqrt(diffusivity_m2_day * period_days / np.pi))


def amplitude_ratio(depth_m, diffusivity_m2_day=SOIL_DIFFUSIVITY_M2_DAY,
                    period_days=PERIOD_DAYS):
    """Amplitude at depth over surface amplitude: exp(-z sqrt(pi / (alpha P)))."""
    return np.exp(-np.asarray(depth_m, float) * np.sqrt(np.pi / (diffusivity_m2_day * period_days)))


def phase_lag_days(depth_m, diffusivity_m2_day=SOIL_DIFFUSIVITY_M2_DAY,
                   period_days=PERIOD_DAYS):
    """Delay of the annual wave at depth, days: z / 2 * sqrt(P / (pi alpha))."""
    return np.asarray(depth_m, float) / 2.0 * np.sqrt(period_days / (np.pi * diffusivity_m2_day))


def kusuda_achenbach_temp_c(depth_m, day_of_year, *, mean_surface_temp_c: float,
                            amplitude_k: float, day_of_minimum: float,
                            diffusivity_m2_day: float = SOIL_DIFFUSIVITY_M2_DAY,
                            period_days: float = PERIOD_DAYS):
    """Ground temperature at ``depth_m`` on ``day_of_year`` (Kusuda & Achenbach 1965).

    Parameters
    ----------
    depth_m : float or array
        Depth below the surface, m (0 = surface).
    day_of_year : float or array
        Time of year in days (fractional), on the same origin as ``day_of_minimum``
        (the thermal model uses days since 1 January 00:00).
    mean_surface_temp_c : float
        Annual mean surface temperature, degC.
    amplitude_k : float
        Amplitude of the annual surface temperature wave (half of max - min), K.
    day_of_minimum : float
        Time of year of the surface minimum, t_0, days.
    diffusivity_m2_day : float
        Soil thermal diffusivity, m2/day.

    Returns
    -------
    Temperature, degC (broadcast of the inputs).
    """
    z = np.asarray(depth_m, float)
    t = np.asarray(day_of_year, float)
    lag = phase_lag_days(z, diffusivity_m2_day, period_days)
    return (mean_surface_temp_c - amplitude_k * amplitude_ratio(z, diffusivity_m2_day, period_days)
            * np.cos(2.0 * np.pi / period_days * (t - day_of_minimum - lag)))


def annual_harmonic(temp_c: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Annual mean, amplitude and day of minimum of an hourly year (first harmonic).

    Least-squares fit of ``T = m - A cos(2 pi (t - t0) / P)`` to 8,760 hourly values
    (the first Fourier coefficient). Works on (8760,) or (8760, n) arrays.

    Returns
    -------
    mean_c, amplitude_k, day_of_minimum (days since 1 January 00:00, fractional;
    hour h is taken at its middle, (h + 0.5) / 24)
    """
    temp = np.asarray(temp_c, float)
    hours = temp.shape[0]
    t_days = (np.arange(hours) + 0.5) / 24.0
    w = 2.0 * np.pi * t_days / PERIOD_DAYS
    shape = (hours,) + (1,) * (temp.ndim - 1)
    cos_w, sin_w = np.cos(w).reshape(shape), np.sin(w).reshape(shape)
    mean = temp.mean(axis=0)
    a = 2.0 * np.mean(temp * cos_w, axis=0)
    b = 2.0 * np.mean(temp * sin_w, axis=0)
    amplitude = np.hypot(a, b)
    # T - m = a cos w + b sin w = A cos(w - phi); the minimum is half a period later.
    phi = np.arctan2(b, a)
    day_max = phi / (2.0 * np.pi) * PERIOD_DAYS
    day_min = np.mod(day_max + PERIOD_DAYS / 2.0, PERIOD_DAYS)
    return mean, amplitude, day_min
