"""Capacity from battery logs: charge counted between rest points, state of charge read
from the rest voltage, fitted by weighted total least squares.

Between two moments the pack rests (current near zero long enough for its voltage to
settle), the charge counted by the current sensor ``ΔQ`` and the change of state of
charge read from the two rest voltages ``ΔSOC`` obey ``ΔQ = Q ΔSOC``, ``Q`` the pack's
capacity. Both sides are noisy (sensor gain and offset on ``ΔQ``; voltage reading and
the rest-voltage curve on ``ΔSOC``), so ordinary least squares of ``ΔQ`` on ``ΔSOC``
underestimates ``Q``. The fit here minimises the approximate weighted total least
squares objective of Plett 2011 (J. Power Sources 196(4), 2319-2331, "Recursive
approximate weighted total least squares estimation of battery cell total capacity")

    Σ_i (ΔQ_i - Q ΔSOC_i)² / (σ_ΔQ,i² + Q² σ_ΔSOC,i²)

over ``Q`` (a one-dimensional bounded search; Plett solves the same stationarity
condition as a polynomial), one estimate per window of :data:`WINDOW_DAYS`, with the
variance from the objective's curvature. The estimate becomes a capacity record with its
own uncertainty, fed to the same likelihood as a capacity test.

Where the chemistry does not allow it the log is not used, and the reason is said:
LFP and LTO rest on flat voltage plateaus (a few millivolts span most of the state of
charge), lead-acid on mains float never swings, and primary cells are never charged:
for them the charge drawn from the pack is counted instead (:func:`charge_drawn`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from planner.chemistry import get_chemistry
from planner.evidence.correction import capacity_at_25c

#: A pack rests when its current is at most this fraction of its rated capacity per
#: hour (C/100: the load of a telemetry site at night), for at least REST_HOURS.
REST_C_RATE = 0.01
#: Hours of rest before the voltage is read: lead-acid relaxes for hours after charge,
#: lithium-ion within about an hour (common practice, from memory).
REST_HOURS = {"vrla": 4.0, "nmc": 1.0}
WINDOW_DAYS = 90.0
MIN_PAIRS = 3
MIN_SOC_SWING = 0.05
#: Voltage reading error per cell at a rest point (meter and unfinished relaxation),
#: and the current sensor's gain error and offset (common practice, from memory).
VOLTAGE_SIGMA_V_PER_CELL = 0.005
CURRENT_GAIN_FRAC = 0.01
CURRENT_OFFSET_C_RATE = 0.001
#: Model error of a log-derived capacity (rest-voltage curve drift with age), added in
#: quadrature (from memory).
LOG_MODEL_SIGMA_FRAC = 0.03
#: Lead-acid rest voltage per cell = specific gravity + 0.84 V (Vinal 1955, *Storage
#: Batteries*, from memory), with the specific gravity from 1.12 empty to 1.30 full for
#: valve-regulated cells (from memory).
LEAD_ACID_OCV_V = (1.96, 2.14)


@dataclass(frozen=True)
class LogCapacity:
    """Capacity estimates from one site's log, one per usable window.

    ``age_years`` is each window's middle, ``capacity_frac`` the capacity at 25 °C as a
    fraction of rated, ``sigma_frac`` its standard error, ``pairs`` the rest-to-rest
    swings used; ``reason`` says why nothing was usable (empty when something was).
    """

    age_years: np.ndarray
    capacity_frac: np.ndarray
    sigma_frac: np.ndarray
    pairs: np.ndarray
    reason: str = ""

    @property
    def usable(self) -> bool:
        return self.capacity_frac.size > 0

    @classmethod
    def unusable(cls, reason: str) -> LogCapacity:
        z = np.zeros(0)
        return cls(z, z, z, np.zeros(0, dtype=np.int64), reason)


def log_unusable_reason(chemistry: str, charging: str) -> str:
    """Why a log of this chemistry and charging cannot give capacity, or ''."""
    if chemistry == "lfp":
        return ("LFP rests on a flat voltage plateau: the rest voltage cannot tell state of "
                "charge (charge counting alone has no reference)")
    if chemistry == "lto":
        return "LTO's rest-voltage curve is too flat in its middle to read state of charge"
    if chemistry == "vrla" and charging == "mains":
        return ("lead-acid on mains float: the pack hardly leaves full charge and its rest "
                "voltage never settles")
    if chemistry == "lisocl2":
        return ""  # primary cells: the charge drawn is counted instead
    return ""


def soc_from_rest_voltage(chemistry: str, voltage_v_per_cell):
    """State of charge from a settled rest voltage per cell (lead-acid linear rule,
    NMC the chemistry library's table); also the slope dOCV/dSOC there (V)."""
    v = np.asarray(voltage_v_per_cell, dtype=float)
    if chemistry == "vrla":
        lo, hi = LEAD_ACID_OCV_V
        return np.clip((v - lo) / (hi - lo), 0.0, 1.0), np.full_like(v, hi - lo)
    chem = get_chemistry(chemistry)
    soc_axis = np.linspace(0.0, 1.0, 201)
    ocv = np.maximum.accumulate(chem.open_circuit_voltage_v(soc_axis) + 1e-9 * np.arange(201))
    soc = np.interp(v, ocv, soc_axis)
    slope = np.gradient(ocv, soc_axis)
    return soc, np.interp(soc, soc_axis, slope)


def rest_ends(time_h: np.ndarray, current_a: np.ndarray, rated_ah: float, rest_hours: float) -> np.ndarray:
    """Indices of samples that end a rest of at least ``rest_hours`` (one per rest: the
    last sample before the current rises again)."""
    quiet = np.abs(current_a) <= REST_C_RATE * rated_ah
    if not quiet.any():
        return np.zeros(0, dtype=np.intp)
    edges = np.diff(np.concatenate(([0], quiet.astype(np.int8), [0])))
    starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1
    long_enough = time_h[stops] - time_h[starts] >= rest_hours
    return stops[long_enough]


def _counted_ah(time_h, current_a, charge_efficiency_frac) -> np.ndarray:
    """Cumulative stored charge (Ah) at every sample: trapezoids, charge current
    counted at the chemistry's charge efficiency."""
    stored = np.where(current_a > 0, charge_efficiency_frac * current_a, current_a)
    steps = 0.5 * (stored[1:] + stored[:-1]) * np.diff(time_h)
    return np.concatenate(([0.0], np.cumsum(steps)))


def tls_capacity(dq_ah, dsoc, sigma_q_ah, sigma_soc, *, bounds_ah) -> tuple[float, float]:
    """Capacity ``Q`` (Ah) minimising Plett's approximate weighted total least squares
    objective, and its standard error from the objective's curvature.

    Examples
    --------
    Noise-free swings of a 50 Ah pack give 50 Ah:

    >>> q, _ = tls_capacity([10.0, -20.0, 15.0], [0.2, -0.4, 0.3], [0.1] * 3, [0.01] * 3,
    ...                     bounds_ah=(1.0, 200.0))
    >>> round(q, 3)
    50.0
    """
    y, x = np.asarray(dq_ah, float), np.asarray(dsoc, float)
    sy2, sx2 = np.asarray(sigma_q_ah, float) ** 2, np.asarray(sigma_soc, float) ** 2

    def objective(q):
        return float(np.sum((y - q * x) ** 2 / (sy2 + q * q * sx2)))

    best = minimize_scalar(objective, bounds=bounds_ah, method="bounded",
                           options={"xatol": 1e-6 * bounds_ah[1]})
    q = float(best.x)
    info = float(np.sum(x * x / (sy2 + q * q * sx2)))
    return q, (1.0 / math.sqrt(info) if info > 0 else math.inf)


def capacity_from_log(chemistry: str, charging: str, time_h, voltage_v, current_a, temp_c, *,
                      series_cells: int, rated_ah: float, age_now_years: float,
                      lead_acid_rule: str = "iec60896-21") -> LogCapacity:
    """Capacity records from one site's log (times in hours relative to the study start,
    so negative; current positive on charge).

    Returns a :class:`LogCapacity` with one record per :data:`WINDOW_DAYS` window that
    holds at least :data:`MIN_PAIRS` rest-to-rest swings of :data:`MIN_SOC_SWING` or
    more, or the reason nothing was usable.
    """
    reason = log_unusable_reason(chemistry, charging)
    if reason or chemistry not in REST_HOURS:
        return LogCapacity.unusable(reason or f"no rest-voltage model for {chemistry}")
    t, v, i, temp = (np.asarray(a, dtype=float) for a in (time_h, voltage_v, current_a, temp_c))
    ends = rest_ends(t, i, rated_ah, REST_HOURS[chemistry])
    if ends.size < 2:
        return LogCapacity.unusable(f"fewer than two rests of {REST_HOURS[chemistry]:g} h or more "
                                    f"at under C/{1 / REST_C_RATE:g}")
    soc, slope = soc_from_rest_voltage(chemistry, v[ends] / series_cells)
    counted = _counted_ah(t, i, get_chemistry(chemistry).charge_efficiency_frac)
    a, b = ends[:-1], ends[1:]
    dq = counted[b] - counted[a]
    dsoc = soc[1:] - soc[:-1]
    moved = _counted_ah(t, np.abs(i), 1.0)  # cumulative charge through the sensor
    throughput = moved[b] - moved[a]
    sigma_q = CURRENT_GAIN_FRAC * throughput + CURRENT_OFFSET_C_RATE * rated_ah * (t[b] - t[a])
    sigma_soc = math.sqrt(2.0) * VOLTAGE_SIGMA_V_PER_CELL / np.maximum(0.5 * (slope[1:] + slope[:-1]), 1e-3)
    # swings chosen by the charge counted (nearly exact), not by the state of charge read
    # from the voltage: choosing on the noisy axis would keep the pairs whose reading
    # overstates the swing and bias the capacity low
    swing = np.abs(dq) >= MIN_SOC_SWING * rated_ah
    window = np.floor((t[b] - t[0]) / (24.0 * WINDOW_DAYS)).astype(np.int64)
    ages, caps, sigmas, counts = [], [], [], []
    for w in np.unique(window[swing]):  # a few windows per site
        sel = swing & (window == w)
        if sel.sum() < MIN_PAIRS:
            continue
        q, sd = tls_capacity(dq[sel], dsoc[sel], sigma_q[sel], sigma_soc[sel],
                             bounds_ah=(0.02 * rated_ah, 2.0 * rated_ah))
        span = (t[a[sel]].min(), t[b[sel]].max())
        inside = (t >= span[0]) & (t <= span[1])
        mean_temp = float(np.mean(temp[inside]))
        frac = float(capacity_at_25c(q / rated_ah, mean_temp, 20.0, chemistry, lead_acid_rule))
        ages.append(age_now_years + 0.5 * (span[0] + span[1]) / 8760.0)
        caps.append(frac)
        sigmas.append(math.hypot(sd / rated_ah, LOG_MODEL_SIGMA_FRAC))
        counts.append(int(sel.sum()))
    if not caps:
        return LogCapacity.unusable(f"no {WINDOW_DAYS:g}-day window holds {MIN_PAIRS} rest-to-rest "
                                    f"swings of {MIN_SOC_SWING:.0%} state of charge or more")
    return LogCapacity(np.array(ages), np.array(caps), np.array(sigmas), np.array(counts))


def charge_drawn(time_h, current_a, *, rated_ah: float) -> tuple[float, float, float]:
    """Charge drawn from a primary pack over a log: ``(first hour, last hour, Ah)``, the
    discharge current integrated by trapezoids (a primary pack is never charged)."""
    t, i = np.asarray(time_h, dtype=float), np.asarray(current_a, dtype=float)
    drawn = np.maximum(-i, 0.0)
    ah = float(np.sum(0.5 * (drawn[1:] + drawn[:-1]) * np.diff(t))) if t.size > 1 else 0.0
    return float(t[0]), float(t[-1]), ah
