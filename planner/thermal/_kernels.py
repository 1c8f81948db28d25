"""Compiled hour loops of the lumped enclosure model (:mod:`planner.thermal.lumped`).

The same arithmetic as the numpy loops of :func:`planner.thermal.lumped._linear_lanes` and
:func:`planner.thermal.lumped._thermostat_lanes`, operation for operation (no fast-math, so
every sum and product rounds as numpy's does and the results are the same bits), one
value at a time instead of one hour row at a time: the numpy loops spend most of
their time in the overhead of a dozen small array operations per hour.

With numba missing, :data:`LINEAR` and :data:`THERMOSTAT` are ``None`` and the numpy
loops run.
"""

from __future__ import annotations

try:
    import numba as _numba
except ImportError:  # numba is optional: the numpy loops give the same numbers
    _numba = None


def linear_hours(temp_eq, decay, one_minus, mean_weight, x, out_mean, out_end, store):
    """Step ``x`` (n,) through every hour of ``temp_eq`` (hours, n) in place:
    ``x <- (x - T_eq) e + T_eq`` with the hour mean ``(x - T_eq) w + T_eq`` when ``store``;
    without ``store`` the first pass from zero: ``x <- x e + (1 - e) T_eq``."""
    hours, n = temp_eq.shape
    for k in range(hours):
        for i in range(n):
            row = temp_eq[k, i]
            if store:
                offset = x[i] - row
                out_mean[k, i] = offset * mean_weight[i] + row
                x[i] = offset * decay[i] + row
                out_end[k, i] = x[i]
            else:
                x[i] = x[i] * decay[i] + one_minus[i] * row


def thermostat_hours(temp_eq, k0, k1, decay, mean_weight, a, b, cap, ua_sign, sign_per_ua,
                     state, out_mean, out_end, out_p, store):
    """Hours ``k0:k1`` of lanes with thermostats; ``state`` (n,) is updated in place.

    Per thermostat ``t`` in order: the power that brings the end-of-hour state to the
    setpoint, ``ua_sign * ((a - x0 b) - eq)``, kept within ``[0, cap]``, shifts the
    equilibrium ``eq`` by ``power * sign_per_ua``. Outputs (hour mean, end state and the
    powers ``out_p[t]``) are written only when ``store``.
    """
    n = temp_eq.shape[1]
    n_t = a.shape[0]
    for k in range(k0, k1):
        for i in range(n):
            x0 = state[i]
            eq = temp_eq[k, i]
            for t in range(n_t):
                w = x0 * b[t, i]
                w = a[t, i] - w
                w = w - eq
                w = w * ua_sign[t, i]
                # numpy's maximum/minimum: the first argument wins ties and NaN
                p = w if (w >= 0.0 or w != w) else 0.0
                c = cap[t, i]
                p = p if (p <= c or p != p) else c
                if store:
                    out_p[t, k, i] = p
                eq = eq + p * sign_per_ua[t, i]
            w = x0 - eq
            if store:
                out_mean[k, i] = eq + w * mean_weight[i]
            x1 = eq + w * decay[i]
            state[i] = x1
            if store:
                out_end[k, i] = x1


LINEAR = THERMOSTAT = None
if _numba is not None:
    LINEAR = _numba.njit(cache=True, nogil=True)(linear_hours)
    THERMOSTAT = _numba.njit(cache=True, nogil=True)(thermostat_hours)
