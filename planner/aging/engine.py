"""Aging engine: calendar + cycle fade of many lanes (site x design) over a horizon.

``age_lanes`` takes one typical year of hourly battery temperature, state of charge
and current per lane and returns the state of health month by month over the horizon,
with the calendar and cycle parts kept apart.

How it works (see docs/aging.md):

* Calendar fade: each law ``Q = k(T, SOC) t**z`` is superposed hour by hour by
  equivalent time (:mod:`planner.aging.superposition`). The hourly increment is a
  temperature part times a SOC part; the temperature part is evaluated once per
  *site* (lanes of one site share its temperature column, ``lane_site``), both parts
  through lookup tables at fine bins (0.01 K, 0.0001 SOC by default): exact to the bin
  and far cheaper than an ``exp`` per hour and lane.
* Cycle fade: the hourly SOC of each lane is rainflow-counted (ASTM E1049, vectorised,
  :mod:`planner.aging.rainflow`) as one period of a repeating year; each cycle adds to
  the cycle state by its depth, mean SOC, temperature (mean of the two reversal hours),
  C-rate and charge voltage (:func:`planner.aging.cycle.cycle_state_increment`).
* The year repeats: both states grow by the same amount each year, so month ``m`` of
  year ``y`` is ``S0 + y * dS_year + dS[m]`` (exact for the laws used).
* Calendar and cycle losses add; ``SOH = 1 - calendar loss - cycle loss`` (>= 0).

Lanes are processed in chunks so no temporary exceeds ``(8760, chunk_lanes)``; the
engine never builds an hours x sites x designs array.

Two engines compute the same thing (``engine=``): the numpy path (array passes over
each chunk), and one-pass kernels (:mod:`planner.aging.kernels`) compiled with numba
when it is installed, about five times less CPU (docs/aging.md, "Speed"). They count
the same cycles and put every hour in the same lookup bin; sums differ by rounding.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from types import MappingProxyType

import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging import kernels
from planner.aging.calendar import calendar_rate_parts
from planner.aging.cycle import cycle_exponent, cycle_state_increment
from planner.aging.rainflow import Cycles, extract_cycles_lanes
from planner.aging.superposition import loss_from_state, repeat_year, state_from_loss
from planner.chemistry import AgingParams, Chemistry, get_chemistry

_DAYS_PER_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
MONTH_START_H = np.concatenate([[0], np.cumsum(_DAYS_PER_MONTH)[:-1]]) * 24
"""Hour index at which each month of the typical year starts (leap day dropped)."""
MONTH_OF_HOUR = np.repeat(np.arange(12), _DAYS_PER_MONTH * 24)
_MONTH_START_YEAR_FRAC = MONTH_START_H / HOURS_PER_YEAR
# Hour -> month indicator: monthly sums as one matrix product (BLAS) instead of reduceat.
_MONTH_MATRIX = np.zeros((HOURS_PER_YEAR, 12))
_MONTH_MATRIX[np.arange(HOURS_PER_YEAR), MONTH_OF_HOUR] = 1.0


def row_years(rows):
    """Elapsed years at rows of a monthly table (row 0 = start, row 12 y + m = y years + m months).

    Months have their calendar lengths (31, 28, 31, ... days), as in the hourly year.
    """
    rows = np.asarray(rows)
    return rows // 12 + _MONTH_START_YEAR_FRAC[rows % 12]

_TEMP_TABLE_C = (-90.0, 110.0)
_SOC_TABLE = (0.0, 1.5)


@dataclass(frozen=True)
class AgingState:
    """Where a pack stands, to continue aging it later (existing pack, next year's re-run).

    Attributes
    ----------
    calendar_state, cycle_state : ndarray, shape (n_lanes,)
        Superposition states (loss = state ** exponent).
    calendar_exponent, cycle_exponent : float
        Exponents of the laws that produced the states.
    age_years : ndarray, shape (n_lanes,)
        Years aged so far.
    """

    calendar_state: np.ndarray
    cycle_state: np.ndarray
    calendar_exponent: float
    cycle_exponent: float
    age_years: np.ndarray

    @property
    def calendar_loss_frac(self) -> np.ndarray:
        return loss_from_state(self.calendar_state, self.calendar_exponent)

    @property
    def cycle_loss_frac(self) -> np.ndarray:
        return loss_from_state(self.cycle_state, self.cycle_exponent)

    @property
    def soh_frac(self) -> np.ndarray:
        return np.maximum(1.0 - self.calendar_loss_frac - self.cycle_loss_frac, 0.0)

    @classmethod
    def from_losses(cls, calendar_loss_frac, cycle_loss_frac, *, age_years=0.0,
                    calendar_exponent=1.0, cycle_exponent=1.0) -> AgingState:
        """A state holding given losses (e.g. a measured capacity split by the caller).

        The exponents only set the internal representation; :func:`age_lanes` converts a
        state to its own laws through the losses (equivalent time across laws).
        """
        cal = np.atleast_1d(np.asarray(calendar_loss_frac, dtype=float))
        cyc = np.broadcast_to(np.asarray(cycle_loss_frac, dtype=float), cal.shape).copy()
        age = np.broadcast_to(np.asarray(age_years, dtype=float), cal.shape).copy()
        return cls(state_from_loss(cal, calendar_exponent), state_from_loss(cyc, cycle_exponent),
                   float(calendar_exponent), float(cycle_exponent), age)


@dataclass(frozen=True)
class FadeResult:
    """Capacity fade of every lane over the horizon, month by month.

    Attributes
    ----------
    soh_monthly : ndarray, shape (12 * horizon_years + 1, n_lanes)
        State of health (remaining / rated capacity); row 0 is the start.
    calendar_loss_frac, cycle_loss_frac : ndarray, same shape
        The two parts of the loss (they add). For primary lithium: self-discharge and
        load charge drawn.
    efc_per_year : ndarray, shape (n_lanes,)
        Equivalent full cycles per year (discharged charge / rated capacity).
    state : AgingState
        State at the end of the horizon, to continue from.
    chemistry_id, aging_set : str
        Chemistry and aging parameter set used.
    """

    soh_monthly: np.ndarray
    calendar_loss_frac: np.ndarray
    cycle_loss_frac: np.ndarray
    efc_per_year: np.ndarray
    state: AgingState
    chemistry_id: str
    aging_set: str

    def end_of_life(self, threshold_frac: float):
        """Years until SOH reaches ``threshold_frac`` and the loss parts at that moment.

        More precise than :func:`years_to_soh` on the monthly table: within the month
        that brackets the threshold each superposition state grows linearly in time
        (the rates of that month), so the crossing is solved on the states (bisection)
        instead of interpolating SOH linearly. Lanes that never reach the threshold
        give ``np.inf`` and the losses at the horizon end.

        Returns
        -------
        years, calendar_loss_frac, cycle_loss_frac : ndarray, shape (n_lanes,)
        """
        soh = self.soh_monthly
        lanes = np.arange(soh.shape[1])
        below = soh <= threshold_frac
        reached = below.any(axis=0)
        first = np.where(reached, np.argmax(below, axis=0), soh.shape[0] - 1)
        prev = np.maximum(first - 1, 0)
        z_cal, z_cyc = self.state.calendar_exponent, self.state.cycle_exponent
        cal0 = state_from_loss(self.calendar_loss_frac[prev, lanes], z_cal)
        cal1 = state_from_loss(self.calendar_loss_frac[first, lanes], z_cal)
        cyc0 = state_from_loss(self.cycle_loss_frac[prev, lanes], z_cyc)
        cyc1 = state_from_loss(self.cycle_loss_frac[first, lanes], z_cyc)

        def soh_at(theta):
            return (1.0 - loss_from_state(cal0 + theta * (cal1 - cal0), z_cal)
                    - loss_from_state(cyc0 + theta * (cyc1 - cyc0), z_cyc))

        lo, hi = np.zeros(lanes.size), np.ones(lanes.size)
        for _ in range(60):  # SOH falls monotonically in theta: bisection to ~1e-18 of a month
            mid = 0.5 * (lo + hi)
            above = soh_at(mid) > threshold_frac
            lo, hi = np.where(above, mid, lo), np.where(above, hi, mid)
        theta = np.where(reached & (first > 0), hi, np.where(reached, 0.0, 1.0))
        t_prev, t_first = row_years(prev), row_years(first)
        years = np.where(reached, t_prev + theta * (t_first - t_prev), np.inf)
        cal = loss_from_state(cal0 + theta * (cal1 - cal0), z_cal)
        cyc = loss_from_state(cyc0 + theta * (cyc1 - cyc0), z_cyc)
        return years, cal, cyc

    def years_to_soh(self, threshold_frac: float) -> np.ndarray:
        """Years until SOH first reaches ``threshold_frac`` (np.inf if never), see end_of_life."""
        return self.end_of_life(threshold_frac)[0]


def years_to_soh(soh_monthly, threshold_frac: float) -> np.ndarray:
    """Years until the monthly SOH first reaches ``threshold_frac``, per lane.

    Linear interpolation between the two month ends that bracket the threshold (months
    of calendar length, see :func:`row_years`);
    0 if the start is already at or below it; ``np.inf`` if never within the horizon.

    Parameters
    ----------
    soh_monthly : ndarray, shape (n_months + 1, n_lanes) or (n_months + 1,)
    threshold_frac : float

    Returns
    -------
    ndarray, shape (n_lanes,) (a float for 1-D input)
    """
    soh = np.asarray(soh_monthly, dtype=float)
    one_d = soh.ndim == 1
    if one_d:
        soh = soh[:, None]
    below = soh <= threshold_frac
    reached = below.any(axis=0)
    first = np.argmax(below, axis=0)
    lanes = np.arange(soh.shape[1])
    prev = np.maximum(first - 1, 0)
    hi, lo = soh[prev, lanes], soh[first, lanes]
    span = hi - lo
    frac = np.where(span > 0, (hi - threshold_frac) / np.where(span > 0, span, 1.0), 0.0)
    t_prev = row_years(prev)
    years = np.where(first == 0, 0.0, t_prev + frac * (row_years(first) - t_prev))
    out = np.where(reached, years, np.inf)
    return float(out[0]) if one_d else out


def _params(chem: Chemistry, aging_set, overrides) -> AgingParams:
    params = chem.aging_set(aging_set)
    if not overrides:
        return params
    parts = {"calendar": dict(params.calendar), "cycle": dict(params.cycle)}
    for key, value in overrides.items():
        part, _, name = key.partition(".")
        if part not in parts or name not in parts[part]:
            raise ValueError(f"unknown aging parameter {key!r} for {chem.id}/{params.name}; "
                             f"expected one of {sorted(params.sources)}")
        parts[part][name] = float(value)
    return replace(params, calendar=MappingProxyType(parts["calendar"]),
                   cycle=MappingProxyType(parts["cycle"]))


def _tabulated(func, x, bounds, step):
    """``func(x)`` exactly (step None) or from a table at bins of ``step`` (nearest bin)."""
    if step is None:
        return func(x)
    lo, hi = bounds
    size = int(round((hi - lo) / step)) + 1
    table = func(lo + step * np.arange(size))
    # Nearest bin by truncation of x/step + 0.5 (all indices are >= 0 after clipping x).
    scaled = np.clip(x, lo, hi)
    scaled -= lo - 0.5 * step
    scaled *= 1.0 / step
    return table[scaled.astype(np.intp)]


def _lookup_table(func, bounds, step):
    """``func`` at the bin centres ``lo + step * i`` of a lookup table over ``bounds``."""
    lo, hi = bounds
    size = int(round((hi - lo) / step)) + 1
    return np.asarray(func(lo + step * np.arange(size)), dtype=float)


def _calendar_numpy(cal_monthly, ch, soc_by_lane, soc_part, soc_bin_frac, rate_row, temp_rate_site):
    """Monthly calendar state increments of the lanes ``ch`` (numpy path), in place."""
    rate = _tabulated(soc_part, soc_by_lane, _SOC_TABLE, soc_bin_frac)
    # sum_h soc_part * temp_part * [month]: the temperature part goes into a per-site
    # (8760, 12) weight matrix, so each site's lanes need one matrix product and no
    # elementwise pass over the hourly array.
    for row in np.unique(rate_row):
        lanes = np.flatnonzero(rate_row == row)
        weights = temp_rate_site[row][:, None] * _MONTH_MATRIX
        contiguous = lanes[-1] - lanes[0] + 1 == lanes.size
        block = rate[lanes[0]:lanes[-1] + 1] if contiguous else rate[lanes]
        cal_monthly[:, ch.start + lanes] = (block @ weights).T


ENGINES = ("auto", "numba", "numpy", "python")
"""Engines of :func:`age_lanes`: "auto" (numba when installed, else numpy), "numba",
"numpy" (vectorised array passes) and "python" (the numba kernels run uncompiled, for
tests: slow)."""


def _use_kernel(engine):
    if engine not in ENGINES:
        raise ValueError(f"engine must be one of {ENGINES}, got {engine!r}")
    if engine == "numba" and not kernels.AVAILABLE:
        raise ValueError("engine 'numba' needs the numba package (pip install '.[fast]')")
    return engine in ("numba", "python") or (engine == "auto" and kernels.AVAILABLE)


@dataclass(frozen=True)
class _Sweep:
    cal_monthly: np.ndarray
    efc: np.ndarray
    hours_on: np.ndarray
    charged: np.ndarray
    hours_charging: np.ndarray
    discharge_monthly: np.ndarray
    cycles: Cycles | None
    cycle_temp_c: np.ndarray | None
    cycle_month: np.ndarray | None


def _kernel_sweep(soc, current, ch, rate_row, temp_rate_site, soc_table, soc_bin_frac,
                  do_cycles, compiled, temp, lane_site):
    """The kernels of :mod:`planner.aging.kernels` on the lanes ``ch``."""
    fn = (lambda k: k) if compiled else kernels.python_function
    n_chunk = ch.stop - ch.start
    has_current = current is not None
    cur = current if has_current else np.zeros((1, 1))
    if soc_table is None:
        table, lo, hi, offset, inv = np.zeros(1), 0.0, 0.0, 0.0, 0.0
    else:
        lo, hi = _SOC_TABLE
        # The same arithmetic as _tabulated, so each hour falls in the same bin.
        table, offset, inv = soc_table, lo - 0.5 * soc_bin_frac, 1.0 / soc_bin_frac
    capacity = kernels.REVERSAL_CAPACITY if do_cycles else 0
    cal, dis = np.zeros((n_chunk, 12)), np.zeros((n_chunk, 12))
    efc, hours_on = np.zeros(n_chunk), np.zeros(n_chunk, np.int64)
    charged, hours_charging = np.zeros(n_chunk), np.zeros(n_chunk, np.int64)
    rev_v, rev_i = np.empty((n_chunk, capacity)), np.empty((n_chunk, capacity), np.int64)
    n_rev = np.zeros(n_chunk, np.int64)
    rate_hourly = np.ascontiguousarray(temp_rate_site.T)
    if soc.flags.f_contiguous and not soc.flags.c_contiguous:
        # Stored lane by lane: sweep each lane along its own contiguous year.
        cur_t = np.ascontiguousarray(cur.T)
        fn(kernels.lane_sweep)(
            soc.T, cur_t, ch.start, ch.stop, has_current, soc_table is not None, do_cycles,
            rate_row, temp_rate_site, table, lo, hi, offset, inv,
            np.append(MONTH_START_H, HOURS_PER_YEAR).astype(np.int64), cal, efc,
            hours_on, dis, rev_v, rev_i, n_rev, charged, hours_charging)
    else:
        # Stored hour by hour (as the SOC simulation writes it): sweep hour rows.
        n_groups = min(kernels.thread_count(), n_chunk) if compiled else 1
        soc_rows, cur_rows, shift, rows_of_lane = _block_in_parent(soc, cur, rate_row) or (
            np.ascontiguousarray(soc), np.ascontiguousarray(cur), 0, rate_row)
        fn(kernels.hour_sweep)(
            soc_rows, cur_rows, ch.start + shift, ch.stop + shift, n_groups,
            has_current, soc_table is not None, do_cycles, rows_of_lane, rate_hourly, table, lo, hi,
            offset, inv, MONTH_OF_HOUR, cal, efc, hours_on, dis, rev_v, rev_i, n_rev, charged,
            hours_charging)
    if do_cycles:
        # Room for n_rev + 1 cycles per lane (a periodic count emits at most that many).
        stored = np.where(n_rev <= capacity, n_rev + 1, 0)
        offsets = np.cumsum(stored) - stored
        total = int(stored.sum())
        flat = (np.empty(total), np.empty(total), np.empty(total), np.empty(total, np.int64),
                np.empty(total, np.int64))
        n_cycles = np.zeros(n_chunk, np.int64)
        fn(kernels.cycles_pass)(rev_v, rev_i, n_rev, True, offsets, *flat, n_cycles)
        del rev_v, rev_i
        kept = int(n_cycles.sum())
        packed = (np.empty(kept), np.empty(kept), np.empty(kept), np.empty(kept, np.int64),
                  np.empty(kept, np.int64), np.empty(kept), np.empty(kept, np.int64))
        fn(kernels.compact_cycles)(offsets, n_cycles, np.cumsum(n_cycles) - n_cycles, *flat,
                                   ch.start, lane_site, temp, MONTH_OF_HOUR, *packed)
        del flat
        parts = [(np.repeat(np.arange(n_chunk), n_cycles),) + packed]
        for r in np.flatnonzero(n_rev > capacity):
            # Rare: more reversals than the sweep stored; count this lane on its own column.
            one = fn(kernels.lane_cycles)(np.ascontiguousarray(soc[:, ch.start + r], dtype=float),
                                          True)
            site = lane_site[ch.start + r]
            parts.append((np.full(one[0].size, r),) + tuple(one)
                         + (0.5 * (temp[one[3], site] + temp[one[4], site]), MONTH_OF_HOUR[one[4]]))
        joined = [np.concatenate([p[k] for p in parts]) for k in range(8)]
        return _Sweep(cal, efc, hours_on, charged, hours_charging, dis, Cycles(*joined[:6]),
                      joined[6], joined[7])
    return _Sweep(cal, efc, hours_on, charged, hours_charging, dis, None, None, None)


def _column_offset(arr):
    """``(parent, k)`` when ``arr`` is the block of columns ``k:k + n`` of a C-contiguous
    2-D ``parent`` (so ``arr[h, j] is parent[h, k + j]``), else ``None``."""
    parent = arr.base
    if (not isinstance(parent, np.ndarray) or parent.ndim != 2 or arr.ndim != 2
            or not parent.flags.c_contiguous or parent.dtype != arr.dtype
            or parent.shape[0] != arr.shape[0] or arr.strides != parent.strides):
        return None
    skip = arr.ctypes.data - parent.ctypes.data
    k = skip // arr.itemsize
    if skip % arr.itemsize or k < 0 or k + arr.shape[1] > parent.shape[1]:
        return None
    return parent, k


def _block_in_parent(soc, cur, rate_row):
    """Inputs of the hour sweep, which reads contiguous hour rows, for ``soc`` (and
    ``cur``) a block of columns of a larger array (one chemistry's lanes of a SOC run):
    ``(parent soc, parent current, k, rate rows)`` with lane ``j`` read in place at column
    ``j + k``, or ``None`` when they are not such a block."""
    soc_block = None if soc.flags.c_contiguous else _column_offset(soc)
    if soc_block is None:
        return None
    parent, k = soc_block
    if cur.shape[1] == 1 and cur.flags.c_contiguous:
        cur_parent = cur                      # one current column shared by every lane
    else:
        cur_block = _column_offset(cur)
        if cur_block is None or cur_block[1] != k:
            return None
        cur_parent = cur_block[0]
    rows = np.zeros(k + rate_row.size, dtype=rate_row.dtype)
    rows[k:] = rate_row
    return parent, cur_parent, k, rows


def _as_lanes(name, values, n_hours, n_lanes=None, keep_float32=False):
    arr = np.asarray(values)
    # The kernels read float32 as is (widening each value exactly): no float64 copy.
    if not (keep_float32 and arr.dtype == np.float32):
        arr = np.asarray(arr, dtype=float)
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2 or arr.shape[0] != n_hours:
        raise ValueError(f"{name} must be shaped ({n_hours}, n_lanes), got {arr.shape}")
    if n_lanes is not None and arr.shape[1] not in (1, n_lanes):
        raise ValueError(f"{name} has {arr.shape[1]} lanes, expected {n_lanes}")
    return arr


def age_lanes(chemistry, temp_battery_c, soc_frac, current_c_rate, charge_voltage_v_per_cell,
              horizon_years, *, initial_state: AgingState | None = None, peak_c_rate=None,
              charge_c_rate=None, lane_site=None, aging_set: str | None = None, overrides=None,
              rate_bin_k: float | None = 0.01, soc_bin_frac: float | None = 0.0001,
              chunk_lanes: int = 1024, engine: str = "auto") -> FadeResult:
    """Calendar and cycle fade of each lane over ``horizon_years`` repetitions of a typical year.

    Parameters
    ----------
    chemistry : Chemistry or str
        Chemistry (or its id).
    temp_battery_c : array_like, shape (8760, n_lanes) or (8760, n_sites) with ``lane_site``
        Hourly battery temperature, °C.
    soc_frac : array_like, shape (8760, n_lanes)
        Hourly state of charge, fraction of rated capacity.
    current_c_rate : array_like, shape (8760, n_lanes), or None
        Hourly mean current as a C-rate, + discharge, - charge (None: no current).
    charge_voltage_v_per_cell : float or array_like, shape (n_lanes,)
        Charge voltage setting per cell, V (for the charge-voltage cycle-life rule).
    horizon_years : int
        Number of repetitions of the typical year (>= 1).
    initial_state : AgingState, optional
        Start from this state (an existing pack, or the previous year of a re-run).
    peak_c_rate : array_like, shape (n_lanes,), optional
        Burst C-rate; the cycle C-rate is ``max(mean discharge C-rate, peak_c_rate)``
        (conservative: bursts are charged to the whole cycle).
    charge_c_rate : array_like, shape (n_lanes,), optional
        Charge C-rate of the cycles for the lithium-plating term (default: the mean
        charge current over the hours that charge, from ``current_c_rate``).
    lane_site : array_like of int, shape (n_lanes,), optional
        Column of ``temp_battery_c`` for each lane (lanes of one site share a column).
    aging_set : str, optional
        Named aging parameter set of the chemistry (default: the chemistry's default).
    overrides : Mapping[str, float], optional
        Parameter overrides, e.g. ``{"calendar.halving_step_k": 10.0}``.
    rate_bin_k, soc_bin_frac : float or None
        Bin widths of the rate lookup tables (None: evaluate exactly per hour).
    chunk_lanes : int
        Lanes processed together (bounds the temporaries).
    engine : {"auto", "numba", "numpy", "python"}
        "auto": the compiled kernels of :mod:`planner.aging.kernels` when numba is
        installed, else the numpy path; both give the same cycles and the same bins
        (sums agree to rounding). "python" runs the kernels uncompiled (tests only).

    Returns
    -------
    FadeResult
    """
    chem = chemistry if isinstance(chemistry, Chemistry) else get_chemistry(chemistry)
    params = _params(chem, aging_set, overrides)
    horizon = int(horizon_years)
    if horizon < 1:
        raise ValueError(f"horizon_years must be >= 1, got {horizon_years}")
    use_kernel = _use_kernel(engine)
    soc = _as_lanes("soc_frac", soc_frac, HOURS_PER_YEAR, keep_float32=use_kernel)
    n_lanes = soc.shape[1]
    temp = _as_lanes("temp_battery_c", temp_battery_c, HOURS_PER_YEAR)
    if lane_site is None:
        if temp.shape[1] not in (1, n_lanes):
            raise ValueError("temp_battery_c needs one column per lane, one column, or lane_site")
        lane_site = np.zeros(n_lanes, np.intp) if temp.shape[1] == 1 else np.arange(n_lanes)
    lane_site = np.asarray(lane_site, dtype=np.intp)
    if lane_site.shape != (n_lanes,) or lane_site.min() < 0 or lane_site.max() >= temp.shape[1]:
        raise ValueError("lane_site must hold one valid temperature column per lane")
    current = None if current_c_rate is None else _as_lanes(
        "current_c_rate", current_c_rate, HOURS_PER_YEAR, n_lanes, keep_float32=use_kernel)
    if use_kernel and not (soc.flags.f_contiguous and not soc.flags.c_contiguous) and \
            _block_in_parent(soc, np.zeros((1, 1)) if current is None else current,
                             np.zeros(0, np.intp)) is None:
        # The hour sweep reads contiguous hour rows (a block of columns in place from its
        # parent, see _block_in_parent): copy anything else once here, not once per chunk.
        soc = np.ascontiguousarray(soc)
        current = None if current is None else np.ascontiguousarray(current)
    charge_v = np.broadcast_to(np.asarray(charge_voltage_v_per_cell, dtype=float), (n_lanes,))
    peak = None if peak_c_rate is None else np.broadcast_to(
        np.asarray(peak_c_rate, dtype=float), (n_lanes,))
    given_charge_rate = None if charge_c_rate is None else np.broadcast_to(
        np.asarray(charge_c_rate, dtype=float), (n_lanes,))

    temp_part, soc_part, cal_exp = calendar_rate_parts(params.calendar_model, params.calendar, chem)
    # Temperature part once per site that has lanes here (lanes of a site share it), as
    # rows: sites x hours; ``rate_row`` is each lane's row.
    used_sites, rate_row = np.unique(lane_site, return_inverse=True)
    temp_rate_site = np.ascontiguousarray(
        _tabulated(temp_part, temp[:, used_sites], _TEMP_TABLE_C, rate_bin_k).T)
    rate_row = rate_row.astype(np.intp)
    cal_monthly = np.empty((12, n_lanes))
    cyc_monthly = np.zeros((12, n_lanes))
    efc = np.zeros(n_lanes)
    if soc_part is None:
        cal_monthly[:] = (temp_rate_site @ _MONTH_MATRIX)[rate_row].T
    cyc_exp = cycle_exponent(params.cycle_model)
    compiled = engine != "python"
    soc_table = None
    if use_kernel and soc_part is not None and soc_bin_frac is not None:
        soc_table = _lookup_table(soc_part, _SOC_TABLE, soc_bin_frac)
    primary = params.cycle_model == "primary_load_charge"
    step = max(int(chunk_lanes), 1)
    for start in range(0, n_lanes, step):
        ch = slice(start, min(start + step, n_lanes))
        n_chunk = ch.stop - ch.start
        discharge_monthly = None
        if use_kernel:
            sweep = _kernel_sweep(soc, current, ch, rate_row, temp_rate_site, soc_table,
                                  soc_bin_frac, not primary, compiled, temp, lane_site)
            if soc_table is not None:
                cal_monthly[:, ch] = sweep.cal_monthly.T
            elif soc_part is not None:
                _calendar_numpy(cal_monthly, ch, np.ascontiguousarray(soc[:, ch].T), soc_part,
                                soc_bin_frac, rate_row[ch], temp_rate_site)
            efc[ch] = sweep.efc
            hours_on = sweep.hours_on
            charged, hours_charging = sweep.charged, sweep.hours_charging
            discharge_monthly = sweep.discharge_monthly
            cycles, cycle_temp, cycle_month = sweep.cycles, sweep.cycle_temp_c, sweep.cycle_month
        else:
            # Lanes x hours, contiguous in time: one copy serves the rate and the rainflow.
            soc_by_lane = np.ascontiguousarray(soc[:, ch].T)
            if soc_part is not None:
                _calendar_numpy(cal_monthly, ch, soc_by_lane, soc_part, soc_bin_frac,
                                rate_row[ch], temp_rate_site)
            hours_on = None
            if current is not None:
                cur = current[:, ch] if current.shape[1] > 1 else np.broadcast_to(
                    current, (HOURS_PER_YEAR, n_chunk))
                discharge = np.maximum(cur, 0.0)
                efc[ch] = discharge.sum(axis=0)
                hours_on = np.count_nonzero(discharge, axis=0)
                if not primary:
                    charge = np.maximum(-cur, 0.0)
                    charged = charge.sum(axis=0)
                    hours_charging = np.count_nonzero(charge, axis=0)
                    del charge
                if primary:
                    discharge_monthly = (_MONTH_MATRIX.T @ discharge).T
            cycles = None if primary else extract_cycles_lanes(soc_by_lane, periodic=True,
                                                               time_axis=1)
            del soc_by_lane
        if primary:
            # Primary cell: the load draws charge hour by hour; nothing is recharged.
            if current is not None:
                cyc_monthly[:, ch] = discharge_monthly.T
            continue
        if current is not None:
            c_rate = efc[ch] / np.maximum(hours_on, 1)
            charge_rate = charged / np.maximum(hours_charging, 1)
        else:
            c_rate = np.zeros(n_chunk)
            charge_rate = np.zeros(n_chunk)
        if peak is not None:
            c_rate = np.maximum(c_rate, peak[ch])
        if given_charge_rate is not None:
            charge_rate = given_charge_rate[ch]
        if cycles.lane.size == 0:
            continue
        if not use_kernel:
            site_of_cycle = lane_site[ch][cycles.lane]
            cycle_temp = 0.5 * (temp[cycles.i_start, site_of_cycle] + temp[cycles.i_end, site_of_cycle])
            cycle_month = MONTH_OF_HOUR[cycles.i_end]
        inc, _ = cycle_state_increment(
            params.cycle_model, params.cycle, chem, cycles.range_, cycles.mean, cycles.count,
            cycle_temp, c_rate[cycles.lane], charge_v[ch][cycles.lane],
            charge_c_rate=charge_rate[cycles.lane])
        key = cycles.lane * 12 + cycle_month
        cyc_monthly[:, ch] = np.bincount(key, weights=inc, minlength=12 * n_chunk).reshape(n_chunk, 12).T

    if initial_state is None:
        cal0, cyc0, age0 = np.zeros(n_lanes), np.zeros(n_lanes), np.zeros(n_lanes)
    else:
        # Equivalent time across laws: carry the *losses*, re-expressed in this law's state.
        cal0 = np.broadcast_to(state_from_loss(initial_state.calendar_loss_frac, cal_exp), (n_lanes,))
        cyc0 = np.broadcast_to(state_from_loss(initial_state.cycle_loss_frac, cyc_exp), (n_lanes,))
        age0 = np.broadcast_to(initial_state.age_years, (n_lanes,))
    cal_states = repeat_year(cal0, cal_monthly, horizon)
    cyc_states = repeat_year(cyc0, cyc_monthly, horizon)
    cal_loss = loss_from_state(cal_states, cal_exp)
    cyc_loss = loss_from_state(cyc_states, cyc_exp)
    soh = np.maximum(1.0 - cal_loss - cyc_loss, 0.0)
    state = AgingState(cal_states[-1].copy(), cyc_states[-1].copy(), cal_exp, cyc_exp,
                       np.asarray(age0, dtype=float) + horizon)
    return FadeResult(soh_monthly=soh, calendar_loss_frac=cal_loss, cycle_loss_frac=cyc_loss,
                      efc_per_year=efc, state=state, chemistry_id=chem.id, aging_set=params.name)
