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
    r"""Damping depth: the depth at which the annual swing falls to 1/e of the surface's.

    .. math::

        d = \sqrt{\frac{\alpha P}{\pi}} = \sqrt{\frac{2 \alpha}{\omega}},
        \qquad \omega = \frac{2 \pi}{P}

    with :math:`\alpha` the soil thermal diffusivity (``diffusivity_m2_day``, m²/day)
    and :math:`P` the period of the wave (``period_days``, days); :math:`d` in m.

    References
    ----------
    .. [1] D. Hillel (1982), *Introduction to Soil Physics*, Academic Press: damping
       depth (2 D_h / omega)^(1/2) (as restated in the Oklahoma State University
       soil-physics toolkit, glossary and model pages, read).
    .. [2] I. Lyttle, R package *groundTemp*, vignette "build_function": a thermal
       diffusivity of 1e-6 m²/s over a tropical year gives a reference depth of 3.17 m
       (read).

    Examples
    --------
    The worked value of [2] (1e-6 m²/s = 0.0864 m²/day; tropical year 365.2422 days):

    >>> round(damping_depth_m(1e-6 * 86400, 365.2422), 2)
    3.17
    """
    return float(np.sqrt(diffusivity_m2_day * period_days / np.pi))


def amplitude_ratio(depth_m, diffusivity_m2_day=SOIL_DIFFUSIVITY_M2_DAY,
                    period_days=PERIOD_DAYS):
    r"""Amplitude of the annual wave at depth over its amplitude at the surface.

    .. math::

        \frac{A(z)}{A_s} = \exp\left(-z \sqrt{\frac{\pi}{\alpha P}}\right) = e^{-z/d}

    with :math:`z` the depth (``depth_m``, m), :math:`\alpha` the soil thermal
    diffusivity (``diffusivity_m2_day``, m²/day), :math:`P` the period (``period_days``,
    days) and :math:`d` the damping depth (:func:`damping_depth_m`). Kusuda & Achenbach
    (1965); Hillel (1982).

    Examples
    --------
    At the damping depth the amplitude is 1/e of the surface's (Lyttle, *groundTemp*
    vignette: "about 40 %"):

    >>> alpha, year = 1e-6 * 86400, 365.2422
    >>> round(float(amplitude_ratio(damping_depth_m(alpha, year), alpha, year)), 3)
    0.368
    """
    return np.exp(-np.asarray(depth_m, float) * np.sqrt(np.pi / (diffusivity_m2_day * period_days)))


def phase_lag_days(depth_m, diffusivity_m2_day=SOIL_DIFFUSIVITY_M2_DAY,
                   period_days=PERIOD_DAYS):
    r"""Delay of the annual wave at depth behind the surface, days.

    .. math::

        \Delta t(z) = \frac{z}{2} \sqrt{\frac{P}{\pi \alpha}} = \frac{z}{d} \frac{P}{2 \pi}

    with :math:`z` the depth (``depth_m``, m), :math:`\alpha` the soil thermal
    diffusivity (``diffusivity_m2_day``, m²/day), :math:`P` the period (``period_days``,
    days) and :math:`d` the damping depth (:func:`damping_depth_m`). Kusuda & Achenbach
    (1965); Hillel (1982).

    Examples
    --------
    At the damping depth the wave lags by one radian, about one sixth of the year
    (Lyttle, *groundTemp* vignette):

    >>> alpha, year = 1e-6 * 86400, 365.2422
    >>> lag = float(phase_lag_days(damping_depth_m(alpha, year), alpha, year))
    >>> round(lag, 1), round(lag / year * 2 * np.pi, 6)
    (58.1, 1.0)
    """
    return np.asarray(depth_m, float) / 2.0 * np.sqrt(period_days / (np.pi * diffusivity_m2_day))


def kusuda_achenbach_temp_c(depth_m, day_of_year, *, mean_surface_temp_c: float,
                            amplitude_k: float, day_of_minimum: float,
                            diffusivity_m2_day: float = SOIL_DIFFUSIVITY_M2_DAY,
                            period_days: float = PERIOD_DAYS):
    r"""Undisturbed ground temperature at ``depth_m`` on ``day_of_year`` (Kusuda &
    Achenbach 1965).

    .. math::

        T(z, t) = T_m - A_s \exp\left(-z \sqrt{\frac{\pi}{\alpha P}}\right)
            \cos\left[\frac{2 \pi}{P}\left(t - t_0
            - \frac{z}{2} \sqrt{\frac{P}{\pi \alpha}}\right)\right]

    with :math:`T` the ground temperature (°C), :math:`z` the depth (``depth_m``, m),
    :math:`t` the time of year (``day_of_year``, days), :math:`T_m` the annual mean
    surface temperature (``mean_surface_temp_c``, °C), :math:`A_s` the amplitude of the
    annual surface wave (``amplitude_k``, K), :math:`t_0` the day of the surface minimum
    (``day_of_minimum``, days), :math:`\alpha` the soil thermal diffusivity
    (``diffusivity_m2_day``, m²/day) and :math:`P` the period (``period_days``, days).
    It solves the heat equation :math:`\partial T/\partial t = \alpha\,\partial^2 T/\partial z^2`
    in a semi-infinite solid whose surface follows :math:`T_m - A_s \cos(2\pi(t - t_0)/P)`.

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
    period_days : float
        Period of the surface wave, days (365 for the typical year).

    Returns
    -------
    numpy.ndarray
        Temperature, degC (broadcast of the inputs).

    References
    ----------
    .. [1] T. Kusuda and P. R. Achenbach (1965), "Earth temperature and thermal
       diffusivity at selected stations in the United States", ASHRAE Transactions
       71(1), 61-75 (the equation as it is usually restated; the paper itself was not
       read: from memory).
    .. [2] D. Hillel (1982), *Introduction to Soil Physics*, Academic Press: the same
       sinusoidal solution with damping depth d = (2 D_h / omega)^(1/2) and t_0 the day
       of the minimum (as restated in the Oklahoma State University soil-physics
       toolkit, model page, read).
    .. [3] I. Lyttle, R package *groundTemp*, vignette "build_function": with 1e-6 m²/s
       over a tropical year the reference (damping) depth is 3.17 m, where the amplitude
       is 1/e of the surface's and the phase lags by one radian (read).

    Examples
    --------
    At the damping depth of [3] the annual swing is 1/e of the surface swing and its
    minimum comes one radian (58.1 days) after the surface minimum:

    >>> alpha, year = 1e-6 * 86400, 365.2422
    >>> depth = damping_depth_m(alpha, year)
    >>> days = np.arange(0.0, year, 0.01)
    >>> temp = kusuda_achenbach_temp_c(depth, days, mean_surface_temp_c=8.0, amplitude_k=10.0,
    ...                                day_of_minimum=20.0, diffusivity_m2_day=alpha,
    ...                                period_days=year)
    >>> round(float(temp.max() - temp.min()) / 2 / 10.0, 3)
    0.368
    >>> round(float(days[np.argmin(temp)]) - 20.0, 1)
    58.1
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
