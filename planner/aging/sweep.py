"""One typical year of a chunk of lanes, swept once: calendar sums, throughput and cycles.

:func:`sweep_chunk` is the step of :func:`planner.aging.age_lanes` that reads the
hourly arrays. For the lanes of one chunk it returns (:class:`ChunkSweep`) the monthly
calendar-state increments, the discharge and charge throughput with their hours, and
the rainflow cycles of the year with the temperature and month of each. Two paths
compute the same thing: array passes with numpy (:func:`_numpy_sweep`) and the one-pass
kernels of :mod:`planner.aging.kernels` (:func:`_kernel_sweep`), compiled with numba
when it is installed. They count the same cycles and put every hour in the same lookup
bin; sums differ by rounding only.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging import kernels
from planner.aging.rainflow import Cycles, extract_cycles_lanes

_DAYS_PER_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
MONTH_START_H = np.concatenate([[0], np.cumsum(_DAYS_PER_MONTH)[:-1]]) * 24
"""Hour index at which each month of the typical year starts (leap day dropped)."""
MONTH_OF_HOUR = np.repeat(np.arange(12), _DAYS_PER_MONTH * 24)
# Hour -> month indicator: monthly sums as one matrix product (BLAS) instead of reduceat.
MONTH_MATRIX = np.zeros((HOURS_PER_YEAR, 12))
MONTH_MATRIX[np.arange(HOURS_PER_YEAR), MONTH_OF_HOUR] = 1.0

TEMP_TABLE_C = (-90.0, 110.0)
"""Range of the temperature lookup tables, °C (hours outside are clipped to it)."""
SOC_TABLE = (0.0, 1.5)
"""Range of the state-of-charge lookup table, fraction of rated capacity."""
CHARGE_RATE_TABLE = (0.0, 10.0)
"""Range of the charge C-rate lookup table of the plating term, 1/h (clipped beyond)."""


def tabulated(func, x, bounds, step):
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


def lookup_table(func, bounds, step):
    """``func`` at the bin centres ``lo + step * i`` of a lookup table over ``bounds``."""
    lo, hi = bounds
    size = int(round((hi - lo) / step)) + 1
    return np.asarray(func(lo + step * np.arange(size)), dtype=float)


@dataclass(frozen=True)
class CalendarRates:
    """The calendar law of an aging call, ready for the hour sweeps.

    ``temp_rate_site`` holds the temperature part per site that has lanes in the call
    (rows: sites, columns: hours); ``rate_row`` is each lane's row. ``soc_part`` is the
    law's state-of-charge part (None when it has none) and ``soc_table`` the same part
    at the lookup bins the kernels read (None on the numpy path or unbinned).
    """

    temp_rate_site: np.ndarray
    rate_row: np.ndarray
    soc_part: object
    soc_table: np.ndarray | None
    soc_bin_frac: float | None
    exponent: float


@dataclass(frozen=True)
class PlatingRates:
    """The plating term of an aging call, ready for the hour sweeps (or None without it).

    ``temp_site`` holds ``AF_pl(T)**2`` per site and hour (rows as ``CalendarRates``);
    ``rate_part`` is ``exp(2 beta (C - 1))`` of the charge C-rate and ``rate_table`` the
    same at the lookup bins of ``rate_bin`` over :data:`CHARGE_RATE_TABLE` (None:
    evaluated exactly, numpy path only); ``charge_rate`` is a given charge C-rate per
    lane (None: each hour's own charge current).
    """

    temp_site: np.ndarray
    rate_part: object
    rate_table: np.ndarray | None
    rate_bin: float | None
    charge_rate: np.ndarray | None


@dataclass(frozen=True)
class ChunkSweep:
    """What one sweep over a chunk's year yields, per lane of the chunk.

    Attributes
    ----------
    cal_monthly : ndarray, shape (n_chunk, 12)
        Calendar-state increment of each month.
    efc, charged : ndarray, shape (n_chunk,)
        Discharged and charged charge over the year, C-rate x h (equivalent full cycles).
    hours_on, hours_charging : ndarray of int, shape (n_chunk,)
        Hours with discharge and with charge.
    discharge_monthly : ndarray, shape (n_chunk, 12), or None
        Discharged charge per month (the primary-cell load law).
    cycles : Cycles or None
        Rainflow cycles of the year (``cycles.lane`` counts from the chunk's first lane).
    cycle_temp_c, cycle_month : ndarray or None
        Temperature (mean of the two reversal hours) and closing month of each cycle.
    plating_monthly : ndarray, shape (n_chunk, 12), or None
        Sum over each month's charging hours of ``AF_pl(T_h)**2 exp(2 beta (C_h - 1))
        C_h`` (:mod:`planner.aging.plating`; None without the plating term).
    """

    cal_monthly: np.ndarray | None
    efc: np.ndarray
    hours_on: np.ndarray | None
    charged: np.ndarray | None
    hours_charging: np.ndarray | None
    discharge_monthly: np.ndarray | None
    cycles: Cycles | None
    cycle_temp_c: np.ndarray | None
    cycle_month: np.ndarray | None
    plating_monthly: np.ndarray | None = None


def sweep_chunk(soc, current, temp, lane_site, ch: slice, rates: CalendarRates,
                plating: PlatingRates | None, *, do_cycles: bool, use_kernel: bool,
                compiled: bool) -> ChunkSweep:
    """Sweep the lanes ``ch`` once: calendar sums, throughput and (``do_cycles``) cycles.

    ``soc``, ``current`` are (8760, n_lanes) (``current`` may be None or one shared
    column); ``temp`` is (8760, n_sites) and ``lane_site`` each lane's column of it.
    """
    if use_kernel and (plating is None or plating.rate_table is not None):
        sweep = _kernel_sweep(soc, current, ch, rates, plating, do_cycles, compiled, temp,
                              lane_site)
        if rates.soc_table is None and rates.soc_part is not None:
            cal = _calendar_numpy(np.ascontiguousarray(soc[:, ch].T), rates, rates.rate_row[ch])
            return dataclasses.replace(sweep, cal_monthly=cal)
        if rates.soc_part is None:
            return dataclasses.replace(sweep, cal_monthly=None)
        return sweep
    return _numpy_sweep(soc, current, temp, lane_site, ch, rates, plating, do_cycles)


def _plating_numpy(cur, rates: CalendarRates, plating: PlatingRates, ch) -> np.ndarray:
    """Monthly plating sums ``(n_chunk, 12)`` of the chunk's charging hours (numpy path)."""
    charge = np.maximum(-np.asarray(cur, dtype=float), 0.0)
    rate = charge if plating.charge_rate is None else np.where(
        charge > 0.0, plating.charge_rate[ch][None, :], 0.0)
    factor = tabulated(plating.rate_part, rate, CHARGE_RATE_TABLE, plating.rate_bin)
    hourly = factor * charge * plating.temp_site[rates.rate_row[ch]].T
    return (MONTH_MATRIX.T @ hourly).T


def _calendar_numpy(soc_by_lane, rates: CalendarRates, rate_row) -> np.ndarray:
    """Monthly calendar-state increments of lanes given lane by lane, ``(n_chunk, 12)``."""
    rate = tabulated(rates.soc_part, soc_by_lane, SOC_TABLE, rates.soc_bin_frac)
    out = np.empty((soc_by_lane.shape[0], 12))
    # sum_h soc_part * temp_part * [month]: the temperature part goes into a per-site
    # (8760, 12) weight matrix, so each site's lanes need one matrix product and no
    # elementwise pass over the hourly array.
    for row in np.unique(rate_row):
        lanes = np.flatnonzero(rate_row == row)
        weights = rates.temp_rate_site[row][:, None] * MONTH_MATRIX
        contiguous = lanes[-1] - lanes[0] + 1 == lanes.size
        block = rate[lanes[0]:lanes[-1] + 1] if contiguous else rate[lanes]
        out[lanes] = block @ weights
    return out


def _numpy_sweep(soc, current, temp, lane_site, ch, rates, plating, do_cycles) -> ChunkSweep:
    """The numpy path: array passes over the chunk's lanes, contiguous in time."""
    n_chunk = ch.stop - ch.start
    # Lanes x hours, contiguous in time: one copy serves the rate and the rainflow.
    soc_by_lane = np.ascontiguousarray(soc[:, ch].T)
    cal = None
    if rates.soc_part is not None:
        cal = _calendar_numpy(soc_by_lane, rates, rates.rate_row[ch])
    efc = np.zeros(n_chunk)
    hours_on = charged = hours_charging = discharge_monthly = plated = None
    if current is not None:
        cur = current[:, ch] if current.shape[1] > 1 else np.broadcast_to(
            current, (HOURS_PER_YEAR, n_chunk))
        discharge = np.maximum(cur, 0.0)
        efc = discharge.sum(axis=0)
        hours_on = np.count_nonzero(discharge, axis=0)
        if do_cycles:
            charge = np.maximum(-cur, 0.0)
            charged = charge.sum(axis=0)
            hours_charging = np.count_nonzero(charge, axis=0)
            del charge
            if plating is not None:
                plated = _plating_numpy(cur, rates, plating, ch)
        else:
            discharge_monthly = (MONTH_MATRIX.T @ discharge).T
    if not do_cycles:
        return ChunkSweep(cal, efc, hours_on, charged, hours_charging, discharge_monthly,
                          None, None, None)
    cycles = extract_cycles_lanes(soc_by_lane, periodic=True, time_axis=1)
    del soc_by_lane
    site_of_cycle = lane_site[ch][cycles.lane]
    cycle_temp = 0.5 * (temp[cycles.i_start, site_of_cycle] + temp[cycles.i_end, site_of_cycle])
    return ChunkSweep(cal, efc, hours_on, charged, hours_charging, discharge_monthly, cycles,
                      cycle_temp, MONTH_OF_HOUR[cycles.i_end], plated)


def _kernel_sweep(soc, current, ch, rates: CalendarRates, plating: PlatingRates | None,
                  do_cycles, compiled, temp, lane_site) -> ChunkSweep:
    """The kernels of :mod:`planner.aging.kernels` on the lanes ``ch``."""
    fn = (lambda k: k) if compiled else kernels.python_function
    n_chunk = ch.stop - ch.start
    has_current = current is not None
    cur = current if has_current else np.zeros((1, 1))
    soc_table = rates.soc_table
    if soc_table is None:
        table, lo, hi, offset, inv = np.zeros(1), 0.0, 0.0, 0.0, 0.0
    else:
        lo, hi = SOC_TABLE
        # The same arithmetic as tabulated(), so each hour falls in the same bin.
        table, offset, inv = soc_table, lo - 0.5 * rates.soc_bin_frac, 1.0 / rates.soc_bin_frac
    capacity = kernels.REVERSAL_CAPACITY if do_cycles else 0
    cal, dis = np.zeros((n_chunk, 12)), np.zeros((n_chunk, 12))
    efc, hours_on = np.zeros(n_chunk), np.zeros(n_chunk, np.int64)
    charged, hours_charging = np.zeros(n_chunk), np.zeros(n_chunk, np.int64)
    rev_v, rev_i = np.empty((n_chunk, capacity)), np.empty((n_chunk, capacity), np.int64)
    n_rev = np.zeros(n_chunk, np.int64)
    rate_row, temp_rate_site = rates.rate_row, rates.temp_rate_site
    pl = _kernel_plating_inputs(plating, ch, n_chunk)
    if soc.flags.f_contiguous and not soc.flags.c_contiguous:
        # Stored lane by lane: sweep each lane along its own contiguous year.
        cur_t = np.ascontiguousarray(cur.T)
        fn(kernels.lane_sweep)(
            soc.T, cur_t, ch.start, ch.stop, has_current, soc_table is not None, do_cycles,
            rate_row, temp_rate_site, table, lo, hi, offset, inv,
            np.append(MONTH_START_H, HOURS_PER_YEAR).astype(np.int64), cal, efc,
            hours_on, dis, rev_v, rev_i, n_rev, charged, hours_charging, pl.do,
            np.ascontiguousarray(pl.temp_site), *pl.lookup, pl.charge_rate, pl.monthly)
    else:
        # Stored hour by hour (as the SOC simulation writes it): sweep hour rows.
        n_groups = min(kernels.thread_count(), n_chunk) if compiled else 1
        soc_rows, cur_rows, shift, rows_of_lane = block_in_parent(soc, cur, rate_row) or (
            np.ascontiguousarray(soc), np.ascontiguousarray(cur), 0, rate_row)
        fn(kernels.hour_sweep)(
            soc_rows, cur_rows, ch.start + shift, ch.stop + shift, n_groups,
            has_current, soc_table is not None, do_cycles, rows_of_lane,
            np.ascontiguousarray(temp_rate_site.T), table, lo, hi, offset, inv, MONTH_OF_HOUR,
            cal, efc, hours_on, dis, rev_v, rev_i, n_rev, charged, hours_charging, pl.do,
            np.ascontiguousarray(pl.temp_site.T), *pl.lookup, pl.charge_rate, pl.monthly)
    cycles = cycle_temp = cycle_month = None
    if do_cycles:
        cycles, cycle_temp, cycle_month = _kernel_cycles(
            fn, soc, ch, rev_v, rev_i, n_rev, capacity, temp, lane_site)
    return ChunkSweep(cal, efc, hours_on, charged, hours_charging, dis, cycles, cycle_temp,
                      cycle_month, pl.monthly if pl.do else None)


@dataclass(frozen=True)
class _KernelPlating:
    """The plating inputs of the sweep kernels (dummies when ``do`` is False)."""

    do: bool
    temp_site: np.ndarray
    lookup: tuple
    charge_rate: np.ndarray
    monthly: np.ndarray


def _kernel_plating_inputs(plating: PlatingRates | None, ch: slice, n_chunk: int) -> _KernelPlating:
    if plating is None:
        return _KernelPlating(False, np.zeros((1, 1)), (np.zeros(1), 0.0, 0.0, 0.0, 0.0),
                              np.zeros(1), np.zeros((n_chunk, 12)))
    lo, hi = CHARGE_RATE_TABLE
    step = plating.rate_bin
    # NaN: each hour's own charge current (the kernels test v == v)
    rate = (np.full(n_chunk, np.nan) if plating.charge_rate is None
            else np.ascontiguousarray(plating.charge_rate[ch], dtype=float))
    return _KernelPlating(True, plating.temp_site,
                          (plating.rate_table, lo, hi, lo - 0.5 * step, 1.0 / step), rate,
                          np.zeros((n_chunk, 12)))


def _kernel_cycles(fn, soc, ch, rev_v, rev_i, n_rev, capacity, temp, lane_site):
    """Rainflow cycles of the chunk from the reversals the hour sweep stored, gathered
    gap-free with their temperature and month: ``(Cycles, temp_c, month)``."""
    n_chunk = ch.stop - ch.start
    # Room for n_rev + 1 cycles per lane (a periodic count emits at most that many).
    stored = np.where(n_rev <= capacity, n_rev + 1, 0)
    offsets = np.cumsum(stored) - stored
    total = int(stored.sum())
    flat = (np.empty(total), np.empty(total), np.empty(total), np.empty(total, np.int64),
            np.empty(total, np.int64))
    n_cycles = np.zeros(n_chunk, np.int64)
    fn(kernels.cycles_pass)(rev_v, rev_i, n_rev, True, offsets, *flat, n_cycles)
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
    return Cycles(*joined[:6]), joined[6], joined[7]


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


def block_in_parent(soc, cur, rate_row):
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
