"""Exact hourly solution of the lumped thermal node of :mod:`planner.thermal.battery`.

    C dT/dt = UA (T_eq - T) + P_thermostats

Over each hour the drive and heat inputs are constant, so the model is solved
exactly: with e = exp(-dt/tau), tau = C/UA and T_eq = T_drive + Q/UA,

    T(end)  = T_eq + (T(start) - T_eq) e
    T(mean) = T_eq + (T(start) - T_eq) (tau/dt) (1 - e)

(the solution of a linear first-order ODE with constant input). Thermostats choose
the constant power, within their capacity, that brings the end-of-hour temperature
to the setpoint. The year starts from its periodic state: the last hours of the year
(25 time constants) are run first as a warm-up. Reported temperatures are hour means.

Everything is vectorised across lanes (sites): arrays are shaped (8760, n) and the
only Python loop runs over the 8,760 hours (:func:`simulate_lumped`).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from planner.thermal import _kernels as _tk

#: Warm-up length in time constants for the periodic start (e^-25 ~ 1e-11).
WARM_UP_TAUS = 25.0


# --------------------------------------------------------------------------- core solver

@dataclasses.dataclass
class LumpedResult:
    """Output of :func:`simulate_lumped`; arrays shaped like ``temp_eq_c``.

    ``temp_mean_c``: hour-mean temperature; ``temp_end_c``: temperature at hour end;
    ``heater_w``, ``heat_w``, ``cool_w``: constant thermal power over each hour of the
    battery heater, the HVAC heating and the HVAC cooling (W, = Wh per hour).
    """

    temp_mean_c: np.ndarray
    temp_end_c: np.ndarray
    heater_w: np.ndarray
    heat_w: np.ndarray
    cool_w: np.ndarray


def _per_lane(value, n, default=np.nan) -> np.ndarray:
    if value is None:
        return np.full(n, default)
    arr = np.asarray(value, dtype=float)
    return np.broadcast_to(arr, (n,)).astype(float) if arr.ndim <= 1 else arr


def simulate_lumped(temp_eq_c: np.ndarray, tau_h, *, ua_w_k=1.0, initial_c=None,
                    heater_setpoint_c=None, heater_max_w=None, heat_setpoint_c=None,
                    heat_max_w=None, cool_setpoint_c=None, cool_max_w=None,
                    dt_h: float = 1.0) -> LumpedResult:
    """Exact hourly solution of ``C dT/dt = UA (T_eq - T) + P_thermostats``.

    Parameters
    ----------
    temp_eq_c : (hours,) or (hours, n) array
        Free equilibrium temperature per hour, T_drive + Q/UA, degC (constant over
        each hour).
    tau_h : float or (n,) array
        Time constant C/UA, hours.
    ua_w_k : float or (n,) array
        Conductance, W/K (converts thermostat powers to temperature shifts).
    initial_c : float or (n,) array, optional
        Temperature at the start of hour 0. Default: the periodic state (the series
        repeats): exact in closed form for lanes without thermostats; for lanes with
        thermostats, from a warm-up over the last 25 time constants of the series
        (error below e^-25, about 1e-11, of the initial mismatch).
    heater_setpoint_c, heat_setpoint_c : float or (n,) array, optional
        Thermostat setpoints of the battery heater and of HVAC heating (NaN = none).
    heater_max_w, heat_max_w, cool_max_w : float or (n,) array
        Thermal capacity of each source, W.
    cool_setpoint_c : float or (n,) array, optional
        HVAC cooling setpoint (NaN = none).
    dt_h : float
        Step, hours.

    Returns
    -------
    LumpedResult

    Notes
    -----
    Exact solution of the linear first-order ODE with constant input over a step
    (any heat-transfer text, e.g. Incropera & DeWitt, Fundamentals of Heat and Mass
    Transfer, lumped capacitance, eq. 5.6): T_end = T_eq + (T_0 - T_eq) e^(-dt/tau);
    the hour mean is the integral of that exponential over the step.
    """
    temp_eq = np.asarray(temp_eq_c, dtype=float)
    squeeze = temp_eq.ndim == 1
    if squeeze:
        temp_eq = temp_eq[:, None]
    hours, n = temp_eq.shape
    tau = _per_lane(tau_h, n)
    if np.any(~(tau > 0)):
        raise ValueError("tau_h must be positive")
    ua = _per_lane(ua_w_k, n)
    initial = None if initial_c is None else _per_lane(initial_c, n)
    thermostats = []
    active = np.zeros(n, dtype=bool)
    for name, sp, cap, sign in (("heat", heat_setpoint_c, heat_max_w, 1.0),
                                ("heater", heater_setpoint_c, heater_max_w, 1.0),
                                ("cool", cool_setpoint_c, cool_max_w, -1.0)):
        sp_arr = _per_lane(sp, n)
        has = ~np.isnan(sp_arr)
        if not has.any():
            continue
        cap_arr = np.where(has, _per_lane(cap, n, default=np.inf), 0.0)
        has &= cap_arr > 0
        active |= has
        thermostats.append((name, np.nan_to_num(sp_arr, nan=0.0), cap_arr, sign))

    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = {name: np.zeros((hours, n)) for name in ("heat", "heater", "cool")}
    # Lanes without a working thermostat are linear: exact periodic closed form.
    if not active.any():
        out_mean, out_end = _linear_lanes(temp_eq, tau, initial, dt_h)
    elif not active.all():
        lanes = np.nonzero(~active)[0]
        x0 = None if initial is None else initial[lanes]
        out_mean[:, lanes], out_end[:, lanes] = _linear_lanes(
            np.ascontiguousarray(temp_eq[:, lanes]), tau[lanes], x0, dt_h)
    lanes = np.nonzero(active)[0]
    if len(lanes) == n:
        temp_eq = np.ascontiguousarray(temp_eq)
        out_mean, out_end, powers = _thermostat_lanes(temp_eq, tau, ua, thermostats, initial,
                                                      dt_h)
        out_p.update(powers)
    elif len(lanes):
        x0 = None if initial is None else initial[lanes]
        subset = [(name, sp[lanes], cap[lanes], sign) for name, sp, cap, sign in thermostats]
        mean, end_, powers = _thermostat_lanes(np.ascontiguousarray(temp_eq[:, lanes]),
                                               tau[lanes], ua[lanes], subset, x0, dt_h)
        out_mean[:, lanes], out_end[:, lanes] = mean, end_
        for name, power in powers.items():
            out_p[name][:, lanes] = power
    result = LumpedResult(out_mean, out_end, out_p["heater"], out_p["heat"], out_p["cool"])
    if squeeze:
        result = LumpedResult(*(a[:, 0] for a in dataclasses.astuple(result)))
    return result


def _linear_lanes(temp_eq, tau_h, initial, dt_h):
    """Exact response of lanes without thermostats (per-lane time constants).

    End-of-hour states follow x[k] = e x[k-1] + (1 - e) T_eq[k] (a first-order
    recursion). The periodic start follows from superposition: a first pass from
    x = 0 ends at y, and x0 = y / (1 - e^hours) repeats exactly after a year.
    Row-by-row passes (two per year) were measured faster here than
    ``scipy.signal.lfilter`` along the hour axis, which strides across memory.
    """
    hours, n = temp_eq.shape
    decay = np.exp(-dt_h / tau_h)
    one_minus = 1.0 - decay
    mean_weight = tau_h / dt_h * one_minus
    if _tk.LINEAR is not None:
        # the same operations compiled (same numbers): no per-hour array overhead
        if initial is None:
            x = np.zeros(n)
            _tk.LINEAR(temp_eq, decay, one_minus, mean_weight, x, _NO_OUT, _NO_OUT, False)
            initial = x / (1.0 - decay ** hours)
        x = np.array(initial, dtype=float)
        out_mean = np.empty((hours, n))
        out_end = np.empty((hours, n))
        _tk.LINEAR(temp_eq, decay, one_minus, mean_weight, x, out_mean, out_end, True)
        return out_mean, out_end
    if initial is None:
        x = np.zeros(n)
        for k in range(hours):
            x *= decay
            x += one_minus * temp_eq[k]
        initial = x / (1.0 - decay ** hours)
    x = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    offset = np.empty(n)
    for k in range(hours):   # vectorised across lanes; the hour loop is inherent
        row = temp_eq[k]
        np.subtract(x, row, out=offset)
        np.multiply(offset, mean_weight, out=out_mean[k])
        out_mean[k] += row
        np.multiply(offset, decay, out=x)
        x += row
        out_end[k] = x
    return out_mean, out_end


def _thermostat_lanes(temp_eq, tau, ua, thermostats, initial, dt_h):
    """Hour-by-hour exact steps for lanes with thermostats (vectorised across lanes)."""
    hours, n = temp_eq.shape
    decay = np.exp(-dt_h / tau)
    one_minus = 1.0 - decay
    mean_weight = tau / dt_h * one_minus
    # Pre-computed so each step is a few in-place array operations: the power that
    # brings the end-of-hour state to setpoint s is sign*ua*((s - x0 e)/(1 - e) - T_eq).
    prepared = [(name, sp / one_minus, decay / one_minus, cap, ua * sign, sign / ua)
                for name, sp, cap, sign in thermostats]
    eq = np.empty(n)
    work = np.empty(n)

    def step(x0, eq_row, powers):
        np.copyto(eq, eq_row)
        for (_name, a, b, cap, ua_sign, sign_per_ua), power in zip(prepared, powers):
            np.multiply(x0, b, out=work)
            np.subtract(a, work, out=work)
            np.subtract(work, eq, out=work)
            np.multiply(work, ua_sign, out=work)
            np.maximum(work, 0.0, out=power)
            np.minimum(power, cap, out=power)
            np.multiply(power, sign_per_ua, out=work)
            np.add(eq, work, out=eq)
        np.subtract(x0, eq, out=work)                 # offset from the equilibrium
        mean = eq + work * mean_weight
        return eq + work * decay, mean

    if _tk.THERMOSTAT is not None:
        return _thermostat_compiled(temp_eq, decay, mean_weight, prepared, initial, tau, dt_h)
    scratch = [np.empty(n) for _ in prepared]
    if initial is None:
        warm = int(min(hours, np.ceil(WARM_UP_TAUS * tau.max() / dt_h)))
        state = temp_eq[hours - warm].copy()
        for k in range(hours - warm, hours):
            state = step(state, temp_eq[k], scratch)[0]
    else:
        state = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = [np.empty((hours, n)) for _ in prepared]
    for k in range(hours):   # vectorised across lanes; the hour loop is inherent
        state, out_mean[k] = step(state, temp_eq[k], [store[k] for store in out_p])
        out_end[k] = state
    return out_mean, out_end, {p[0]: store for p, store in zip(prepared, out_p)}


def _thermostat_compiled(temp_eq, decay, mean_weight, prepared, initial, tau, dt_h):
    """:func:`_thermostat_lanes` with its hour loop compiled (the same operations)."""
    hours, n = temp_eq.shape
    # (thermostats, lanes) arrays of the prepared terms a, b, cap, ua_sign, sign_per_ua
    a, b, cap, ua_sign, sign_per_ua = (
        np.stack([np.broadcast_to(np.asarray(p[i], dtype=float), (n,)) for p in prepared])
        for i in range(1, 6))
    temp_eq = np.ascontiguousarray(temp_eq)
    if initial is None:
        warm = int(min(hours, np.ceil(WARM_UP_TAUS * tau.max() / dt_h)))
        state = temp_eq[hours - warm].copy()
        _tk.THERMOSTAT(temp_eq, hours - warm, hours, decay, mean_weight, a, b, cap, ua_sign,
                       sign_per_ua, state, _NO_OUT, _NO_OUT, _NO_OUT3, False)
    else:
        state = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = np.empty((len(prepared), hours, n))
    _tk.THERMOSTAT(temp_eq, 0, hours, decay, mean_weight, a, b, cap, ua_sign, sign_per_ua,
                   state, out_mean, out_end, out_p, True)
    return out_mean, out_end, {p[0]: out_p[t] for t, p in enumerate(prepared)}


_NO_OUT = np.zeros((0, 0))
_NO_OUT3 = np.zeros((0, 0, 0))


__all__ = ["simulate_lumped", "LumpedResult"]
