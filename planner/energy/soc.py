"""Hourly state of charge of battery packs, vectorised across lanes.

A *lane* is one site x one candidate pack. The recursion loops over the hours of the
typical year in Python and updates every lane of a chunk at once with numpy; lanes are
streamed in chunks (:func:`iter_soc_chunks`) so that no ``8760 x all-lanes`` float64
array is ever held: 100,000 lanes would be 7 GB per array.

With numba installed the hour loop runs compiled (:mod:`planner.energy._soc_kernels`:
lane blocks on every core, four lanes stepped together); otherwise the numpy loop below
runs, vectorised across lanes. Both give the same numbers (tested).

Hourly arrays (charge, load, battery temperature, self-discharge, heater, available
capacity) may be given once per *site* with ``lane_site_index`` mapping each lane to its
site column, which is how a fleet of sites x designs stays small in memory.

One hour, per lane (energies in Wh, the hour is 1 h so W and Wh per hour coincide):

1. self-discharge: ``E -= E * s[h]`` (the chemistry's self-discharge fraction per hour);
2. the source serves the load first (DC-coupled bus, common practice); the battery
   sees the net ``P_c - P_l``;
3. surplus: the battery accepts ``a = min(surplus, c_max * C, (E_max - E) / eta_c)``,
   stores ``eta_c * a``; ``a = 0`` when charging is blocked (lithium below its minimum
   charge temperature with the heater off); the rest is curtailed;
4. deficit: the battery delivers ``o = min(deficit, (E - E_floor) * eta_d)``, losing
   ``o / eta_d`` of stored energy; what it cannot deliver is *unserved* load.

``E_max = usable_fraction * C``: the charge controller holds the chosen charge voltage,
which caps the top of charge (the chemistry's usable-fraction curve). ``E_floor =
C * (1 - f_avail[h] * (1 - min_soc_frac))``: the controller's low-voltage disconnect at
the maximum depth of discharge, measured on the capacity available at the battery's
temperature (``f_avail`` = 1 unless a cold derating is given).

Energy conservation holds per lane by construction: ``energy_in = energy_out + losses +
delta_stored`` where losses are self-discharge, ``(1 - eta_c) a`` and
``(1/eta_d - 1) o``.

Lead-acid charge-voltage temperature compensation (:func:`compensated_charge_voltage_v_per_cell`)
exists to bring the pack to the *same* top of charge at every temperature, so it does not
change ``E_max`` here; the compensated voltage is a reported value for the aging stage
(float voltage drives corrosion and gassing).
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from typing import Iterator

import numpy as np

from planner.errors import InputError

from planner.energy import _soc_kernels as _kernels

HOURS_PER_YEAR = 8760

#: Default lanes per chunk: 8,192 lanes x 8,760 h x float32 is 287 MB per streamed series.
DEFAULT_CHUNK_LANES = 8192


@dataclass(frozen=True)
class SocResult:
    """Per-lane summary of one simulated period (a typical year unless stated).

    All arrays have shape ``(n_lanes,)`` unless stated. Energies are totals over the
    simulated hours (Wh); for an 8,760-hour typical year these are per-year figures.

    Attributes
    ----------
    equivalent_full_cycles_per_year : energy delivered by the battery / capacity_wh,
        scaled to 8,760 h.
    mean_soc_frac, min_soc_frac, final_soc_frac : state of charge (fraction of rated
        capacity) at the end of each hour: mean, minimum, last. Mean and minimum are
        taken from the float32 series (single precision, about 1e-7).
    max_c_rate : highest hourly-mean charge or discharge C-rate (1/h = power / capacity_wh).
        Load bursts are not in it; the caller combines the burst peak separately.
    unserved_wh : load energy the pack could not supply (Wh).
    unserved_hours : hours with any unserved load.
    longest_low_soc_days : longest run of consecutive days on which the SOC never rose
        to the low-SOC threshold (days).
    energy_in_wh : energy accepted at the battery terminals while charging (Wh).
    energy_out_wh : energy delivered at the battery terminals while discharging (Wh).
    losses_wh : charge-efficiency, discharge-efficiency and self-discharge losses (Wh).
    self_discharge_wh : the self-discharge part of ``losses_wh`` (Wh).
    delta_stored_wh : stored energy at the end minus at the start (Wh).
    curtailed_wh : surplus charging energy the battery did not accept (Wh).
    charge_blocked_hours : hours with surplus power while charging was blocked by cold.
    unserved_wh_by_month : unserved load per calendar month, shape ``(n_lanes, 12)`` (Wh);
        for a run that is not 8,760 hours long, everything is put in column 0.
    series_lanes : lane indices whose hourly series are kept, shape ``(k,)``.
    soc_frac_series : hourly SOC at the end of each hour, shape ``(n_hours, k)``, float32.
    current_c_rate_series : hourly mean battery current as C-rate, shape ``(n_hours, k)``,
        float32, positive while discharging and negative while charging.
    n_hours : number of simulated hours.
    """

    equivalent_full_cycles_per_year: np.ndarray
    mean_soc_frac: np.ndarray
    min_soc_frac: np.ndarray
    final_soc_frac: np.ndarray
    max_c_rate: np.ndarray
    unserved_wh: np.ndarray
    unserved_hours: np.ndarray
    longest_low_soc_days: np.ndarray
    energy_in_wh: np.ndarray
    energy_out_wh: np.ndarray
    losses_wh: np.ndarray
    self_discharge_wh: np.ndarray
    delta_stored_wh: np.ndarray
    curtailed_wh: np.ndarray
    charge_blocked_hours: np.ndarray
    unserved_wh_by_month: np.ndarray
    series_lanes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.intp))
    soc_frac_series: np.ndarray | None = None
    current_c_rate_series: np.ndarray | None = None
    n_hours: int = HOURS_PER_YEAR


_SUMMARY_FIELDS = tuple(f.name for f in fields(SocResult)
                        if f.name not in ("series_lanes", "soc_frac_series",
                                          "current_c_rate_series", "n_hours"))


@dataclass(frozen=True)
class SocChunk:
    """One chunk of consecutive lanes ``start:stop`` streamed by :func:`iter_soc_chunks`.

    ``soc_frac`` and ``current_c_rate`` are ``(n_hours, stop - start)`` float32 arrays
    (``None`` when ``series=False``); ``summary`` holds the per-lane summaries of the
    chunk (its own series fields are empty).
    """

    start: int
    stop: int
    soc_frac: np.ndarray | None
    current_c_rate: np.ndarray | None
    summary: SocResult


class _Hourly:
    """An hourly input given as a scalar, ``(n_hours,)`` or ``(n_hours, n_columns)``,
    validated once; ``kind`` says which (see :func:`_hour_block` for reading it)."""

    def __init__(self, value, name: str, n_hours: int | None, n_columns: int,
                 dtype=float):
        try:
            arr = np.asarray(value, dtype=dtype)
        except (TypeError, ValueError):
            raise InputError(f"{name}: found a non-numeric value, expected numbers") from None
        if arr.ndim == 1 and n_hours is not None and arr.shape[0] != n_hours:
            raise InputError(f"{name}: found shape {arr.shape}, expected ({n_hours},) or "
                             f"({n_hours}, {n_columns})")
        if arr.ndim == 2 and ((n_hours is not None and arr.shape[0] != n_hours)
                              or arr.shape[1] != n_columns):
            raise InputError(f"{name}: found shape {arr.shape}, expected ({n_hours}, "
                             f"{n_columns})")
        if arr.ndim > 2:
            raise InputError(f"{name}: found {arr.ndim} dimensions, expected at most 2")
        if dtype is float and not np.all(np.isfinite(arr)):
            raise InputError(f"{name}: found non-finite values, expected finite numbers")
        self.kind = ("scalar", "hourly", "matrix")[arr.ndim]
        self.arr = arr
        self.name = name
        self.n_hours = arr.shape[0] if arr.ndim else None

    def is_constant(self, value) -> bool:
        return self.kind == "scalar" and float(self.arr) == value


def _lane_param(value, name: str, n: int, lo: float, hi: float,
                lo_open: bool = False) -> np.ndarray:
    """Per-lane parameter as a float (n,) array, validated to [lo, hi] (or (lo, hi])."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a number or ({n},) numbers") \
            from None
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise InputError(f"{name}: found shape {arr.shape}, expected a scalar or ({n},)")
    bad = np.isnan(arr) | (arr > hi) | ((arr <= lo) if lo_open else (arr < lo))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        rng = f"({lo:g}, {hi:g}]" if lo_open else f"[{lo:g}, {hi:g}]"
        raise InputError(f"{name}[{i}]: found {arr[i]!r}, expected a value in {rng}")
    return arr


def compensated_charge_voltage_v_per_cell(charge_voltage_v_per_cell, temp_battery_c,
                                          compensation_v_per_c_per_cell, *,
                                          reference_temp_c: float = 25.0,
                                          clamp_temp_c: tuple[float, float] = (0.0, 50.0)):
    """Charge voltage a temperature-compensating controller applies (V per cell).

    ``V(T) = V_set + k * (clip(T, T_lo, T_hi) - T_ref)``, with ``k`` negative for
    lead-acid (about -3 to -5 mV/K per cell referenced to 25 degC, from memory; see
    IEEE 1361 / IEC 62509 for controller requirements). Controllers stop compensating
    outside a temperature band so the voltage cannot run away; the default band
    0-50 degC is from memory and can be changed.

    The compensation keeps the top of charge at the same SOC at every temperature, so the
    SOC recursion keeps ``usable_fraction`` at its set-point value; this voltage is a
    reported value for the aging stage.

    Parameters
    ----------
    charge_voltage_v_per_cell : float or array
        Set-point at ``reference_temp_c`` (V per cell).
    temp_battery_c : array
        Battery temperature (degC).
    compensation_v_per_c_per_cell : float
        Slope (V per K per cell); 0 for chemistries without compensation.
    reference_temp_c : float
        Temperature of the set-point (degC).
    clamp_temp_c : (float, float)
        Band outside which the controller holds the compensation constant (degC).

    Returns
    -------
    numpy.ndarray
        Compensated charge voltage (V per cell), shape of the broadcast inputs.
    """
    temp = np.clip(np.asarray(temp_battery_c, dtype=float), clamp_temp_c[0], clamp_temp_c[1])
    return (np.asarray(charge_voltage_v_per_cell, dtype=float)
            + compensation_v_per_c_per_cell * (temp - reference_temp_c))


def iter_soc_chunks(charge_power_w, load_power_w, capacity_wh, temp_battery_c, *,
                    usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                    self_discharge_frac_per_h=0.0, max_charge_c_rate=np.inf,
                    charge_temp_min_c=-np.inf, heater_on=None, min_soc_frac=0.0,
                    available_capacity_frac=None, initial_soc_frac=1.0,
                    low_soc_threshold_frac=0.5, lane_site_index=None,
                    chunk_lanes: int = DEFAULT_CHUNK_LANES,
                    series=True, engine: str = "auto") -> Iterator[SocChunk]:
    """Simulate the hourly SOC of all lanes, yielding one :class:`SocChunk` per chunk.

    Same parameters as :func:`simulate_soc` (which documents them), plus ``series``:
    True (default) streams the hourly series of every lane of each chunk; False streams
    summaries only; a sequence of lane indices streams the series of those lanes only
    (each chunk's ``soc_frac`` then has one column per selected lane inside the chunk,
    in increasing lane order, or is ``None`` when the chunk has none).

    ``engine``: "auto" uses the numba-compiled loop when numba is installed and the numpy
    loop otherwise; "numpy" forces the numpy loop (both give the same numbers).

    The aging stage consumes each chunk's ``soc_frac`` and ``current_c_rate`` and drops
    them, so peak memory is about two ``(n_hours, chunk_lanes)`` float32 arrays plus the
    per-lane summaries, whatever the number of lanes.
    """
    p = _prepare(charge_power_w, load_power_w, capacity_wh, temp_battery_c,
                 usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                 self_discharge_frac_per_h, max_charge_c_rate, charge_temp_min_c, heater_on,
                 min_soc_frac, available_capacity_frac, initial_soc_frac,
                 low_soc_threshold_frac, lane_site_index)
    if not isinstance(chunk_lanes, (int, np.integer)) or chunk_lanes < 1:
        raise InputError(f"chunk_lanes: found {chunk_lanes!r}, expected an integer >= 1")
    if engine not in ("auto", "numpy"):
        raise InputError(f"engine: found {engine!r}, expected 'auto' or 'numpy'")
    p["engine"] = engine
    wanted = None if isinstance(series, (bool, np.bool_)) else \
        np.unique(np.asarray(series, dtype=np.intp))
    n = p["cap"].shape[0]
    for start in range(0, n, chunk_lanes):
        stop = min(n, start + chunk_lanes)
        if wanted is None:
            keep = slice(None) if series else None
        else:
            local = wanted[(wanted >= start) & (wanted < stop)] - start
            keep = local if local.size else None
        yield _run_chunk(p, start, stop, keep)


def _prepare(charge_power_w, load_power_w, capacity_wh, temp_battery_c, usable_fraction,
             charge_efficiency_frac, discharge_efficiency_frac, self_discharge_frac_per_h,
             max_charge_c_rate, charge_temp_min_c, heater_on, min_soc_frac,
             available_capacity_frac, initial_soc_frac, low_soc_threshold_frac,
             lane_site_index) -> dict:
    """Validate every input once and return them as arrays (hourly ones wrapped)."""
    cap = np.asarray(capacity_wh, dtype=float)
    if cap.ndim != 1:
        raise InputError(f"capacity_wh: found shape {cap.shape}, expected (n_lanes,)")
    n = cap.shape[0]
    p = {
        "cap": _lane_param(cap, "capacity_wh", n, 0.0, 1e9, lo_open=True),
        "usable": _lane_param(usable_fraction, "usable_fraction", n, 0.0, 1.0, True),
        "eta_c": _lane_param(charge_efficiency_frac, "charge_efficiency_frac", n, 0.0, 1.0,
                             True),
        "eta_d": _lane_param(discharge_efficiency_frac, "discharge_efficiency_frac", n,
                             0.0, 1.0, True),
        "c_max": _lane_param(max_charge_c_rate, "max_charge_c_rate", n, 0.0, np.inf),
        "soc_min": _lane_param(min_soc_frac, "min_soc_frac", n, 0.0, 1.0),
        "soc0": _lane_param(initial_soc_frac, "initial_soc_frac", n, 0.0, 1.0),
        "low": _lane_param(low_soc_threshold_frac, "low_soc_threshold_frac", n, 0.0, 1.0),
    }
    t_min = np.asarray(charge_temp_min_c, dtype=float)
    t_min = np.full(n, float(t_min)) if t_min.ndim == 0 else t_min
    if t_min.shape != (n,) or np.any(np.isnan(t_min)):
        raise InputError(f"charge_temp_min_c: found shape {t_min.shape}, expected a scalar "
                         f"or ({n},) temperatures in degC (-inf for no limit)")
    p["t_min"] = t_min
    if np.any(p["soc_min"] >= p["usable"]):
        i = int(np.flatnonzero(p["soc_min"] >= p["usable"])[0])
        raise InputError(f"min_soc_frac[{i}]: found {p['soc_min'][i]!r}, expected below "
                         f"usable_fraction ({p['usable'][i]!r})")

    if lane_site_index is None:
        n_columns, site_idx = n, None
    else:
        site_idx = np.asarray(lane_site_index)
        if site_idx.shape != (n,) or not np.issubdtype(site_idx.dtype, np.integer) \
                or (n and site_idx.min() < 0):
            raise InputError(f"lane_site_index: found shape {site_idx.shape} of "
                             f"{site_idx.dtype}, expected ({n},) non-negative integers")
        n_columns = int(site_idx.max()) + 1 if n else 0
        hourly_2d = [np.ndim(a) == 2 for a in (charge_power_w, load_power_w, temp_battery_c)]
        if any(hourly_2d):
            n_columns = max(np.shape(a)[1] for a in (charge_power_w, load_power_w,
                                                     temp_battery_c) if np.ndim(a) == 2)
            if n and site_idx.max() >= n_columns:
                raise InputError(f"lane_site_index: found {int(site_idx.max())}, expected "
                                 f"indices below the {n_columns} site columns")
    p["site_idx"] = site_idx
    p["n_columns"] = n_columns

    charge = _Hourly(charge_power_w, "charge_power_w", None, n_columns)
    load = _Hourly(load_power_w, "load_power_w", charge.n_hours, n_columns)
    n_hours = charge.n_hours or load.n_hours or HOURS_PER_YEAR
    charge = _Hourly(charge_power_w, "charge_power_w", n_hours, n_columns)
    for h in (charge, load):
        if np.any(h.arr < 0):
            raise InputError(f"{h.name}: found a negative power, expected >= 0 W")
    sd = _Hourly(self_discharge_frac_per_h, "self_discharge_frac_per_h", n_hours, n_columns)
    if np.any(sd.arr < 0) or np.any(sd.arr >= 1):
        raise InputError("self_discharge_frac_per_h: found values outside [0, 1), expected "
                         "a fraction of stored energy lost per hour")
    p.update(n_hours=n_hours, charge=charge, load=load, sd=sd,
             temp=_Hourly(temp_battery_c, "temp_battery_c", n_hours, n_columns),
             heater=None if heater_on is None else
             _Hourly(heater_on, "heater_on", n_hours, n_columns, dtype=bool),
             avail=None)
    if available_capacity_frac is not None:
        avail = _Hourly(available_capacity_frac, "available_capacity_frac", n_hours,
                        n_columns)
        if np.any(avail.arr <= 0) or np.any(avail.arr > 1):
            raise InputError("available_capacity_frac: found values outside (0, 1], "
                             "expected the fraction of rated capacity available")
        p["avail"] = avail
    return p


def _longest_low_days(soc_frac: np.ndarray, low_frac: np.ndarray) -> np.ndarray:
    """Longest run of consecutive days whose highest hourly SOC stayed below ``low_frac``.

    A *low day* is a day on which the pack never climbed back to the threshold (for
    lead-acid, the days it sits partially charged and sulphates). ``soc_frac`` is
    ``(n_hours, k)``; trailing hours of an incomplete day are ignored.
    """
    n_days = soc_frac.shape[0] // 24
    k = soc_frac.shape[1]
    day_max = soc_frac[:n_days * 24].reshape(n_days, 24, k).max(axis=1)
    low = day_max < low_frac
    run = np.zeros(k)
    best = np.zeros(k)
    for d in range(n_days):      # 365 steps, each vectorised over the lanes
        run += 1.0
        run *= low[d]
        np.maximum(best, run, out=best)
    return best


#: Lane-hours of each gathered block of hourly inputs in the numpy loop (512 KiB per
#: float64 array, so a block is still in the second-level cache when the hours read it;
#: larger blocks measured slower). At least one day per block.
_GATHER_LANE_HOURS = 2 ** 16
#: From this many lanes in a chunk the numpy loop gathers hour by hour instead.
_PER_HOUR_GATHER_LANES = 4096


def _hour_block(h, t0: int, t1: int, cols: np.ndarray) -> np.ndarray | None:
    """Hours ``t0:t1`` of an hourly input at site columns ``cols``, ``(t1 - t0, m)``."""
    if h is None:
        return None
    if h.kind == "scalar":
        return np.broadcast_to(h.arr, (t1 - t0, cols.size))
    if h.kind == "hourly":
        return np.broadcast_to(h.arr[t0:t1, None], (t1 - t0, cols.size))
    return h.arr[t0:t1, cols]


def _groups(col, eta_c, eta_d, t_min):
    """Lanes that read the same column with the same efficiencies and charge limit.

    Returns the groups' column, charge and discharge efficiency and minimum charge
    temperature, ``(m,)`` each, and each lane's group, ``(k,)``.
    """
    keys = np.stack([np.asarray(col, dtype=float), eta_c, eta_d, t_min], axis=1)
    keys_g, ginv = np.unique(keys, axis=0, return_inverse=True)
    return (keys_g[:, 0].astype(np.intp), keys_g[:, 1], keys_g[:, 2], keys_g[:, 3],
            ginv.reshape(-1))


def _group_offers(p, t0, t1, gcol, g_eta_c, g_eta_d, g_t_min):
    """Hours ``t0:t1`` of every group: surplus, deficit, cold block and offer to the store.

    The source serves the load first; the store is offered ``eta_c * surplus`` (zero
    while the battery is below its minimum charge temperature with the heater off) minus
    ``deficit / eta_d``. Returns ``(surplus_w, deficit_w, cold, offer_wh)``, each
    ``(t1 - t0, m)``; ``cold`` is ``None`` when no group has a charge-temperature limit.
    """
    net = _hour_block(p["charge"], t0, t1, gcol) - _hour_block(p["load"], t0, t1, gcol)
    sur = np.maximum(net, 0.0)
    dfc = sur - net
    cold = None
    charged = sur
    if np.any(np.isfinite(g_t_min)):
        ok = _hour_block(p["temp"], t0, t1, gcol) >= g_t_min
        if p["heater"] is not None:
            ok = ok | _hour_block(p["heater"], t0, t1, gcol)
        cold = (sur > 0.0) & ~ok
        charged = sur * ok
    return sur, dfc, cold, charged * g_eta_c - dfc / g_eta_d


def _run_chunk(p: dict, start: int, stop: int, keep) -> SocChunk:
    """The hourly recursion for lanes ``start:stop`` (Python loop over hours only).

    Work is done in *stored* energy (Wh inside the pack). Each hour the source offers the
    store ``x = eta_c * surplus - deficit / eta_d`` (one of the two is zero), limited by
    the charge acceptance ``c_max * C * eta_c``; the store moves to
    ``clip(E + x, min(E, E_floor), E_max)``. A move cut short at the top is curtailed
    charge; a move cut short at the floor is unserved load.

    What depends only on the site column and the chemistry (net power, the cold block,
    the offer ``x`` before the acceptance limit, the surplus and deficit sums) is computed
    once per *group* of lanes sharing a column, efficiencies and charge-temperature limit,
    for a block of hours at a time with whole-array numpy; the block is then gathered to
    the lanes with one fancy index per input, so the hour loop reads rows of ready
    ``(hours, lanes)`` blocks and never gathers hour by hour. ``keep`` is ``None`` (no
    series returned), ``slice(None)`` or local lane indices. When numba is installed the
    compiled kernel of :mod:`planner.energy._soc_kernels` runs the same hours instead
    (``p["engine"] = "numpy"`` forces this loop).
    """
    kernel = _kernels.compiled_kernel() if p.get("engine") != "numpy" else None
    if kernel is not None:
        return _run_chunk_fused(p, start, stop, keep, kernel)
    k = stop - start
    n_hours = p["n_hours"]
    lane = slice(start, stop)
    cap, usable, soc_min = p["cap"][lane], p["usable"][lane], p["soc_min"][lane]
    eta_c, eta_d, t_min = p["eta_c"][lane], p["eta_d"][lane], p["t_min"][lane]
    col = np.arange(start, stop) if p["site_idx"] is None else p["site_idx"][lane]
    gcol, g_eta_c, g_eta_d, g_t_min, ginv = _groups(col, eta_c, eta_d, t_min)
    m = gcol.size
    sd, avail = p["sd"], p["avail"]
    with_sd = not sd.is_constant(0.0)
    c_limited = bool(np.any(np.isfinite(p["c_max"][lane])))

    e_max = usable * cap
    e_floor = soc_min * cap
    dod_wh = (1.0 - soc_min) * cap
    a_max = np.minimum(p["c_max"][lane] * cap, 1e300) * eta_c   # stored Wh per hour
    e = np.minimum(p["soc0"][lane], usable) * cap
    e_start = e.copy()
    # without self-discharge or a cold floor the store never sits below the fixed floor
    fixed_floor = avail is None and not with_sd and bool(np.all(e >= e_floor))
    month_end = (set(np.cumsum([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]) * 24)
                 if n_hours == HOURS_PER_YEAR else {n_hours})
    snap_dr, snap_dfc = [], []

    sum_sur_g, sum_dfc_g = np.zeros(m), np.zeros(m)
    blk_g = np.zeros(m, dtype=np.int64)
    y, d, lo, tmp = (np.empty(k) for _ in range(4))
    flag = np.empty(k, dtype=bool)
    sum_acc, sum_d, sum_sd = np.zeros(k), np.zeros(k), np.zeros(k)
    n_uns = np.zeros(k, dtype=np.int64)
    # the hourly series of the whole chunk: some summaries are taken from them in bulk
    soc_s = np.empty((n_hours, k), dtype=np.float32)
    flow_s = np.empty((n_hours, k), dtype=np.float32)

    if fixed_floor:
        lo[...] = e_floor
    block_h = int(max(24, min(n_hours, _GATHER_LANE_HOURS // max(k, 1))))
    # wide chunks gather hour by hour (measured faster from 4,096 lanes: the rows of a
    # gathered block no longer stay in cache); narrow ones a block of hours at a time
    per_hour = k >= _PER_HOUR_GATHER_LANES
    if per_hour:
        ucol, cinv = np.unique(col, return_inverse=True)
        x_buf, sd_buf, av_buf = np.empty(k), np.empty(k), np.empty(k)
    for t0 in range(0, n_hours, block_h):
        t1 = min(n_hours, t0 + block_h)
        # --- group level, whole block
        sur, dfc, cold, x_g = _group_offers(p, t0, t1, gcol, g_eta_c, g_eta_d, g_t_min)
        # running sums continued hour by hour (cumsum adds in order, like a loop would)
        cum_sur = np.cumsum(np.vstack([sum_sur_g, sur]), axis=0)[1:]
        cum_dfc = np.cumsum(np.vstack([sum_dfc_g, dfc]), axis=0)[1:]
        sum_sur_g, sum_dfc_g = cum_sur[-1].copy(), cum_dfc[-1].copy()
        if cold is not None:
            blk_g += cold.sum(axis=0)
        if per_hour:
            # wide chunks: gather each hour into buffers that stay in cache
            sd_c = _hour_block(sd, t0, t1, ucol) if with_sd else None
            av_c = _hour_block(avail, t0, t1, ucol) if avail is not None else None
        else:
            # narrow chunks: gathered to the lanes once per block of hours
            x_b = x_g[:, ginv]
            if c_limited:
                np.minimum(x_b, a_max, out=x_b)
            sd_b = _hour_block(sd, t0, t1, col) if with_sd else None
            av_b = _hour_block(avail, t0, t1, col) if avail is not None else None
        for t in range(t0, t1):
            r = t - t0
            if per_hour:
                x = np.take(x_g[r], ginv, out=x_buf)
                if c_limited:
                    np.minimum(x, a_max, out=x)
                sd_row = np.take(sd_c[r], cinv, out=sd_buf) if with_sd else None
                av_row = np.take(av_c[r], cinv, out=av_buf) if avail is not None else None
            else:
                x = x_b[r]
                sd_row = sd_b[r] if with_sd else None
                av_row = av_b[r] if avail is not None else None
            # --- lane level: self-discharge over the hour
            if with_sd:
                np.multiply(e, sd_row, out=tmp)
                e -= tmp
                sum_sd += tmp
            if not fixed_floor:
                if av_row is not None:
                    np.multiply(av_row, dod_wh, out=tmp)
                    np.subtract(cap, tmp, out=lo)  # floor = C - f_avail (1 - soc_min) C
                    np.minimum(lo, e, out=lo)
                else:
                    np.minimum(e_floor, e, out=lo)
            np.add(e, x, out=y)
            np.less(y, lo, out=flag)               # the floor cut the hour short
            n_uns += flag
            np.maximum(y, lo, out=y)
            np.minimum(y, e_max, out=y)
            np.subtract(y, e, out=d)
            sum_d += d
            np.maximum(d, 0.0, out=tmp)
            sum_acc += tmp
            e, y = y, e
            soc_s[t] = e
            flow_s[t] = d
            if t + 1 in month_end:
                snap_dr.append(sum_acc - sum_d)
                snap_dfc.append(cum_dfc[r].copy())

    stats = _series_summaries(soc_s, flow_s, cap, eta_c, eta_d, p["low"][lane])
    return _finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, e, e_start, sum_acc,
                         sum_acc - sum_d, sum_sd, n_uns, blk_g[ginv], sum_sur_g[ginv],
                         sum_dfc_g[ginv],
                         _monthly_unserved(snap_dr, snap_dfc, ginv, eta_d, n_uns), *stats,
                         soc_s, flow_s)


#: The hour loop run lane block by lane block: plain Python (for tests on tiny inputs).
_fused_hours = _kernels.block_hours
#: The same loop compiled with numba (parallel over lane blocks), or ``None``.
_FUSED = _kernels.BLOCK_KERNEL


def _dense(h, n_hours: int, n_columns: int, dtype, fill):
    """An hourly input as an ``(n_hours, n_columns)`` array or zero-stride view."""
    if h is None:
        return np.broadcast_to(np.array(fill, dtype=dtype), (n_hours, n_columns))
    arr = np.asarray(h.arr, dtype=dtype)
    if arr.ndim == 0:
        return np.broadcast_to(arr, (n_hours, n_columns))
    if arr.ndim == 1:
        return np.broadcast_to(arr[:, None], (n_hours, n_columns))
    return arr


#: Groups whose offers are precomputed for one kernel call (8,760 h x 256 x 8 bytes =
#: 18 MB per array); a chunk whose lanes form more groups is run in pieces of lanes.
_KERNEL_GROUPS = 256


def _run_chunk_fused(p: dict, start: int, stop: int, keep, kernel) -> SocChunk:
    """:func:`_run_chunk` with the hour loop inside ``kernel`` (compiled or plain Python).

    ``kernel`` is :func:`planner.energy._soc_kernels.block_hours` or its compiled form;
    it runs lane blocks in parallel and steps four lanes at a time. The groups' offers and
    surplus/deficit sums are computed here with numpy for the whole year (the numpy loop
    does the same a block of hours at a time), in pieces of at most about
    :data:`_KERNEL_GROUPS` groups.
    """
    k = stop - start
    n_hours, n_columns = p["n_hours"], p["n_columns"]
    lane = slice(start, stop)
    cap, usable, soc_min = p["cap"][lane], p["usable"][lane], p["soc_min"][lane]
    eta_c, eta_d, t_min = p["eta_c"][lane], p["eta_d"][lane], p["t_min"][lane]
    col = (np.arange(start, stop) if p["site_idx"] is None
           else p["site_idx"][lane]).astype(np.int64)
    e_start = np.minimum(p["soc0"][lane], usable) * cap
    month_end = np.zeros(n_hours, dtype=bool)
    if n_hours == HOURS_PER_YEAR:
        month_end[np.cumsum([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]) * 24 - 1] = True
    else:
        month_end[-1] = True
    month_rows = np.flatnonzero(month_end)
    snap_dr, snap_dfc = np.zeros((month_rows.size, k)), np.zeros((month_rows.size, k))
    sum_sur, sum_dfc, blk = np.zeros(k), np.zeros(k), np.zeros(k, dtype=np.int64)
    series_col = np.full(k, -1, dtype=np.int64)
    if keep is not None:
        picked = np.arange(k)[keep]
        series_col[picked] = np.arange(picked.size)
    n_series = int((series_col >= 0).sum())
    soc_s = np.empty((n_hours, n_series), dtype=np.float32)
    cr_s = np.empty((n_hours, n_series), dtype=np.float32)
    # touch the new pages in address order first: the kernel writes them a lane block at a
    # time, and first-touch page faults scattered over 300 MB cost seconds (measured)
    _kernels.prefault(soc_s)
    _kernels.prefault(cr_s)
    derated = p["avail"] is not None
    par = np.empty((k, _kernels.N_PAR))
    # without a cold derating the kernel's floor cap - avail * dod_wh must be e_floor
    par[:, _kernels.P_CAP] = cap if derated else soc_min * cap
    par[:, _kernels.P_INV_CAP] = 1.0 / cap
    par[:, _kernels.P_E_MAX] = usable * cap
    par[:, _kernels.P_DOD_WH] = (1.0 - soc_min) * cap if derated else 0.0
    par[:, _kernels.P_A_MAX] = np.minimum(p["c_max"][lane] * cap, 1e300) * eta_c
    par[:, _kernels.P_CHARGE_RATE_F] = -1.0 / (eta_c * cap)
    par[:, _kernels.P_DISCHARGE_RATE_F] = -eta_d / cap
    par[:, _kernels.P_LOW] = p["low"][lane]
    state = _kernels.initial_state(e_start)
    sd = _kernels.readonly(_dense(p["sd"], n_hours, n_columns, float, 0.0))
    avail = _kernels.readonly(_dense(p["avail"], n_hours, n_columns, float, 1.0))
    n_groups = _groups(col, eta_c, eta_d, t_min)[0].size
    piece = k if n_groups <= _KERNEL_GROUPS else max(4, k * _KERNEL_GROUPS // n_groups)
    for a in range(0, k, piece):
        b = min(k, a + piece)
        gcol, g_eta_c, g_eta_d, g_t_min, ginv = _groups(col[a:b], eta_c[a:b], eta_d[a:b],
                                                        t_min[a:b])
        sur, dfc, cold, offer = _group_offers(p, 0, n_hours, gcol, g_eta_c, g_eta_d,
                                              g_t_min)
        # running sums in hour order (cumsum adds in order, like the numpy loop)
        cum_dfc = np.cumsum(dfc, axis=0)
        sum_sur[a:b] = np.cumsum(sur, axis=0)[-1][ginv]
        sum_dfc[a:b] = cum_dfc[-1][ginv]
        snap_dfc[:, a:b] = cum_dfc[month_rows][:, ginv]
        if cold is not None:
            blk[a:b] = cold.sum(axis=0)[ginv]
        del sur, dfc, cold, cum_dfc
        kernel(_kernels.readonly(offer), sd, avail, ginv.astype(np.int64), col[a:b],
               par[a:b], state[a:b], series_col[a:b], soc_s, cr_s, month_end,
               snap_dr[:, a:b], _kernels.block_lanes(b - a, _threads()))
    st = {name: state[:, getattr(_kernels, "S_" + name)].copy()
          for name in ("E", "ACC", "D", "SD", "SOC", "MIN_SOC", "MAX_CR", "LONGEST", "UNS")}
    n_uns = st["UNS"].astype(np.int64)
    return _finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, st["E"], e_start,
                         st["ACC"], st["ACC"] - st["D"], st["SD"], n_uns, blk, sum_sur,
                         sum_dfc,
                         _monthly_unserved(list(snap_dr), list(snap_dfc), None, eta_d, n_uns),
                         st["SOC"] / n_hours, st["MIN_SOC"], st["MAX_CR"], st["LONGEST"],
                         soc_s, cr_s)


def _threads() -> int:
    """Threads the compiled kernel runs on (1 without numba)."""
    if _kernels._numba is None:
        return 1
    return int(_kernels._numba.get_num_threads())


def _monthly_unserved(snap_dr, snap_dfc, inv, eta_d, n_uns) -> np.ndarray:
    """Unserved Wh per month from month-end snapshots of the running sums, (k, 12)."""
    k = len(eta_d)
    out = np.zeros((k, 12))
    if not snap_dr:
        return out
    dr = np.stack(snap_dr, axis=1) * eta_d[:, None]          # delivered, cumulative (Wh)
    dfc = np.stack(snap_dfc, axis=1)
    dfc = dfc if inv is None else dfc[inv]
    cum = np.maximum(dfc - dr, 0.0)
    cum = np.maximum.accumulate(cum, axis=1)                 # rounding cannot un-serve
    monthly = np.diff(cum, axis=1, prepend=0.0)
    monthly[n_uns == 0] = 0.0
    # snap tiny rounding residue to zero so "no unserved load" reads as exactly 0
    monthly[monthly < 1e-9 * np.maximum(dfc[:, -1:], 1.0)] = 0.0
    out[:, :monthly.shape[1]] = monthly
    return out


def _series_summaries(soc_s, flow_s, cap, eta_c, eta_d, low_frac):
    """Convert the numpy loop's stored-energy series in place and summarise them.

    Stored energy (Wh) becomes SOC; the stored change ``d`` becomes the terminal C-rate,
    discharge positive: charging ``d > 0`` took ``d / eta_c`` at the terminals,
    discharging gave ``-d * eta_d``. Returns mean SOC, min SOC, max |C-rate| and the
    longest run of low days, per lane.
    """
    k = cap.shape[0]
    inv_c32 = (1.0 / cap).astype(np.float32)
    charge_f = (-1.0 / (eta_c * cap)).astype(np.float32)
    discharge_f = (-eta_d / cap).astype(np.float32)
    longest = np.zeros(k)
    block = 1024   # bounds the temporaries to (n_hours, block)
    for j in range(0, k, block):
        c = slice(j, j + block)
        soc_s[:, c] *= inv_c32[c]
        f = flow_s[:, c]
        f *= np.where(f > 0, charge_f[c], discharge_f[c])
        longest[c] = _longest_low_days(soc_s[:, c], low_frac[c].astype(np.float32))
    return (soc_s.mean(axis=0, dtype=np.float64), soc_s.min(axis=0).astype(np.float64),
            np.maximum(flow_s.max(axis=0), -flow_s.min(axis=0)).astype(np.float64), longest)


def _finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, e, e_start, sum_acc,
                  sum_dr, sum_sd, n_uns, blocked, sum_surplus_wh, sum_deficit_wh,
                  unserved_by_month, mean_soc, min_soc, max_c_rate, longest_days,
                  soc_series, c_rate_series) -> SocChunk:
    """Turn the chunk's accumulators into per-lane summaries and the kept series."""
    inv_c = 1.0 / cap
    energy_in = sum_acc / eta_c
    energy_out = sum_dr * eta_d
    losses = sum_sd + sum_acc * (1.0 / eta_c - 1.0) + sum_dr * (1.0 - eta_d)
    # unserved = deficit offered - energy delivered; exactly 0 when no hour fell short
    unserved = np.where(n_uns > 0, np.maximum(sum_deficit_wh - energy_out, 0.0), 0.0)
    curtailed = np.maximum(sum_surplus_wh - energy_in, 0.0)
    summary = SocResult(
        equivalent_full_cycles_per_year=energy_out * inv_c * (HOURS_PER_YEAR / n_hours),
        mean_soc_frac=mean_soc,
        min_soc_frac=min_soc,
        final_soc_frac=e * inv_c,
        max_c_rate=max_c_rate,
        unserved_wh=unserved,
        unserved_hours=n_uns,
        longest_low_soc_days=longest_days,
        energy_in_wh=energy_in,
        energy_out_wh=energy_out,
        losses_wh=losses,
        self_discharge_wh=sum_sd,
        delta_stored_wh=e - e_start,
        curtailed_wh=curtailed,
        charge_blocked_hours=blocked,
        unserved_wh_by_month=unserved_by_month,
        n_hours=n_hours,
    )
    if keep is None:
        return SocChunk(start, stop, None, None, summary)
    if isinstance(keep, slice) or soc_series.shape[1] == len(keep):
        return SocChunk(start, stop, soc_series, c_rate_series, summary)
    return SocChunk(start, stop, soc_series[:, keep], c_rate_series[:, keep], summary)


def simulate_soc(charge_power_w, load_power_w, capacity_wh, temp_battery_c, *,
                 usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                 self_discharge_frac_per_h=0.0, max_charge_c_rate=np.inf,
                 charge_temp_min_c=-np.inf, heater_on=None, min_soc_frac=0.0,
                 available_capacity_frac=None, initial_soc_frac=1.0,
                 low_soc_threshold_frac=0.5, lane_site_index=None, keep_series_for=None,
                 chunk_lanes: int = DEFAULT_CHUNK_LANES, engine: str = "auto") -> SocResult:
    """Hourly state of charge of ``n`` lanes over a typical year; per-lane summaries.

    Hourly inputs take any of: a scalar; shape ``(n_hours,)`` (same for every lane);
    shape ``(n_hours, n)`` (one column per lane); or, with ``lane_site_index``, shape
    ``(n_hours, n_sites)`` where lane ``j`` reads column ``lane_site_index[j]``.

    Parameters
    ----------
    charge_power_w : hourly
        Power offered by the charging source at the battery bus (W, hourly mean), e.g.
        :func:`planner.energy.pv.pv_dc_power_w` or a float charger's rating while mains
        is up.
    load_power_w : hourly
        Load on the bus (W, hourly mean), including any battery heater and shelter HVAC
        that the battery must supply.
    capacity_wh : (n,)
        Rated capacity of each lane's pack (Wh), already faded if simulating an older
        pack (the caller re-runs the year with ``soh * capacity``).
    temp_battery_c : hourly
        Battery temperature (degC); used for the charge-temperature block.
    usable_fraction : scalar or (n,)
        Top of charge at the chosen charge voltage, fraction of rated capacity.
    charge_efficiency_frac, discharge_efficiency_frac : scalar or (n,)
        Energy efficiencies of storing and delivering (0-1]; their product is the
        round-trip efficiency.
    self_discharge_frac_per_h : hourly
        Fraction of stored energy lost per hour (chemistry's value at the battery
        temperature).
    max_charge_c_rate : scalar or (n,)
        Charge acceptance limit (1/h): at most ``c * capacity_wh`` Wh per hour.
    charge_temp_min_c : scalar or (n,)
        Below this battery temperature no charge is accepted unless ``heater_on``
        (lithium-ion plating rule); ``-inf`` for no limit.
    heater_on : hourly bool, optional
        Hours when a battery heater keeps the cells warm enough to charge.
    min_soc_frac : scalar or (n,)
        Low-voltage disconnect, ``1 - max_dod_frac``.
    available_capacity_frac : hourly, optional
        Fraction of rated capacity available at the battery temperature (cold derating);
        raises the discharge floor to ``C * (1 - f * (1 - min_soc_frac))``.
    initial_soc_frac : scalar or (n,)
        SOC at hour 0, capped at ``usable_fraction`` (1.0 = full at the charge voltage).
    low_soc_threshold_frac : scalar or (n,)
        Threshold for ``longest_low_soc_days`` (default 0.5: lead-acid held below half
        charge sulphates, common practice).
    lane_site_index : (n,) int, optional
        Column of the hourly arrays each lane reads.
    keep_series_for : sequence of int, optional
        Lanes whose hourly SOC and C-rate series are returned.
    chunk_lanes : int
        Lanes simulated together; bounds the working memory.
    engine : {"auto", "numpy"}
        "auto" runs the hour loop compiled with numba when numba is installed.

    Returns
    -------
    SocResult
        Per-lane summaries, plus hourly series for ``keep_series_for``.

    Raises
    ------
    planner.errors.InputError
        Shapes that do not match, negative powers, fractions outside their range.
    """
    keep = np.unique(np.asarray([] if keep_series_for is None else keep_series_for,
                                dtype=np.intp))
    n = np.asarray(capacity_wh).shape[0] if np.ndim(capacity_wh) == 1 else 0
    if keep.size and (keep.min() < 0 or keep.max() >= n):
        raise InputError(f"keep_series_for: found lane {int(keep.max())}, expected lanes "
                         f"0 to {n - 1}")
    parts: list[SocResult] = []
    soc_cols, cr_cols = [], []
    for chunk in iter_soc_chunks(
            charge_power_w, load_power_w, capacity_wh, temp_battery_c,
            usable_fraction=usable_fraction, charge_efficiency_frac=charge_efficiency_frac,
            discharge_efficiency_frac=discharge_efficiency_frac,
            self_discharge_frac_per_h=self_discharge_frac_per_h,
            max_charge_c_rate=max_charge_c_rate, charge_temp_min_c=charge_temp_min_c,
            heater_on=heater_on, min_soc_frac=min_soc_frac,
            available_capacity_frac=available_capacity_frac,
            initial_soc_frac=initial_soc_frac, low_soc_threshold_frac=low_soc_threshold_frac,
            lane_site_index=lane_site_index, chunk_lanes=chunk_lanes,
            series=keep if keep.size else False, engine=engine):
        parts.append(chunk.summary)
        if chunk.soc_frac is not None:
            soc_cols.append(chunk.soc_frac)
            cr_cols.append(chunk.current_c_rate)
    merged = {name: np.concatenate([getattr(p, name) for p in parts]) if parts
              else np.zeros(0) for name in _SUMMARY_FIELDS}
    n_hours = parts[0].n_hours if parts else HOURS_PER_YEAR
    return SocResult(**merged, series_lanes=keep, n_hours=n_hours,
                     soc_frac_series=np.concatenate(soc_cols, axis=1) if keep.size else None,
                     current_c_rate_series=np.concatenate(cr_cols, axis=1) if keep.size
                     else None)
