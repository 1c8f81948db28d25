"""Compiled hot path of the aging engine: one pass over each lane's hourly year.

The numpy path of :func:`planner.aging.age_lanes` makes several passes over every
``(8760, n_lanes)`` array (a transposed copy, the SOC-rate lookup, the reversal search,
repeated four-point passes of the rainflow count). Here the same work is done in one
sweep over the hours, compiled with numba when it is installed and spread over the cores:

* :func:`hour_sweep` reads the hours x lanes arrays row by row, in memory order (the
  layout the SOC simulation writes); :func:`lane_sweep` does the same for arrays stored
  lane by lane (column-major);
* calendar rate: ``sum_h table[bin(SOC_h)] * temp_rate[site, h]`` per month, the SOC
  bin found with exactly the arithmetic of the numpy lookup (same bin, same value);
* discharge throughput (equivalent full cycles), hours of discharge and monthly
  discharged charge (the primary-cell load law);
* reversals of each lane by the rules of the reference ``rainflow`` package (3.x);
  then :func:`cycles_pass` counts each lane's year as one period of a repeating
  history (ASTM E1049-85, section 5.4.4) with the package's three-point stack, so each
  cycle is the package's, with its indices, and :func:`compact_cycles` gathers them
  with their temperature and month.

Every function here is plain Python on numpy arrays; ``numba.njit`` compiles it when
numba is importable (``AVAILABLE``), and its ``py_func`` stays callable, which is how
the tests check the kernels without the compiler. The cycle fade laws themselves stay
in :mod:`planner.aging.cycle` (numpy on the flat cycle arrays): one implementation of
each law.

References
----------
ASTM E1049-85 (reapproved 2017), Standard Practices for Cycle Counting in Fatigue
Analysis, section 5.4.4 Rainflow Counting.
Lam, S. K., Pitrou, A., Seibert, S. (2015), Numba: a LLVM-based Python JIT compiler,
Proc. Second Workshop on the LLVM Compiler Infrastructure in HPC, 1-6 (from memory).
"""

from __future__ import annotations

import numpy as np

try:  # optional accelerator (pip install '.[fast]'); the numpy path is used without it
    import numba as _numba
except ImportError:  # pragma: no cover - depends on the environment
    _numba = None

AVAILABLE = _numba is not None
"""True when numba is importable and the compiled kernels are used by default."""

REVERSAL_CAPACITY = 4096
"""Reversals stored per lane by the hour sweep (a year of daily cycles has ~730); a lane
with more is counted again on its own column (:func:`lane_cycles`)."""

STAGE = 16
"""Reversals staged per lane in :func:`hour_sweep` before they are written out together."""

prange = _numba.prange if AVAILABLE else range  # numba.prange is range when interpreted


def reversals_into(x, n, out_v, out_i):
    """Reversals of ``x[:n]`` by the rules of ``rainflow.reversals`` 3.x, packed into buffers.

    First point always; an inner point when the step into it (skipping zero steps, so a
    plateau reports its last index) and the step out of it have opposite signs; the last
    point when ``n >= 3``. One point gives nothing; two give only the first.

    Parameters
    ----------
    x : ndarray, shape (>= n,)
    n : int
    out_v : ndarray of float, shape (capacity,)
    out_i : ndarray of int, shape (capacity,)
        Receive the first ``capacity`` reversals.

    Returns
    -------
    int
        Number of reversals (all of them, also those beyond ``capacity``).
    """
    if n < 2:
        return 0
    capacity = out_v.shape[0]
    k = 0
    if k < capacity:
        out_v[k] = x[0]
        out_i[k] = 0
    k += 1
    value = float(x[1])
    d_last = value - float(x[0])
    for j in range(2, n):
        x_next = float(x[j])
        if x_next == value:
            continue
        d_next = x_next - value
        if d_last * d_next < 0:
            if k < capacity:
                out_v[k] = value
                out_i[k] = j - 1
            k += 1
        value = x_next
        d_last = d_next
    if n >= 3:
        if k < capacity:
            out_v[k] = x[n - 1]
            out_i[k] = n - 1
        k += 1
    return k


def _emit(count, v1, i1, v2, i2, at, o_range, o_mean, o_count, o_i0, o_i1):
    o_range[at] = abs(v1 - v2)
    o_mean[at] = 0.5 * (v1 + v2)
    o_count[at] = count
    o_i0[at] = i1
    o_i1[at] = i2
    return at + 1


def cycles_from_reversals(rv, ri, m, periodic, o_range, o_mean, o_count, o_i0, o_i1, at):
    """Rainflow cycles from a series' reversals, as ``rainflow.extract_cycles`` emits them.

    Parameters
    ----------
    rv, ri : ndarray, shape (>= m,)
        Reversal values and their indices in the series (see :func:`reversals_into`).
    m : int
        Number of reversals.
    periodic : bool
        False: count the series as given. True: count it as one period of a repeating
        history: the reversals rotated to start at the (first) largest one and closed
        by it again, the seam re-checked (as :mod:`planner.aging.rainflow` does).
    o_range, o_mean, o_count, o_i0, o_i1 : ndarray, shape (>= at + m,)
        Output: range, mean, count (0.5 or 1), start and end index of each cycle.
    at : int
        First output position.

    Returns
    -------
    int
        Position after the last cycle written (at most ``at + m``).
    """
    seq_v = np.empty(m + 1)
    seq_i = np.empty(m + 1, dtype=np.int64)
    if periodic:
        if m == 0:
            return at
        start = 0
        for k in range(1, m):
            if rv[k] > rv[start]:
                start = k
        rot_v = np.empty(m + 1)
        rot_i = np.empty(m + 1, dtype=np.int64)
        for k in range(m - start):  # rv[start:], rv[:start], rv[start] (no modulo per point)
            rot_v[k] = rv[start + k]
            rot_i[k] = ri[start + k]
        for k in range(start):
            rot_v[m - start + k] = rv[k]
            rot_i[m - start + k] = ri[k]
        rot_v[m] = rv[start]
        rot_i[m] = ri[start]
        m = reversals_into(rot_v, m + 1, seq_v, seq_i)
        for k in range(m):
            seq_i[k] = rot_i[seq_i[k]]
    else:
        for k in range(m):
            seq_v[k] = rv[k]
            seq_i[k] = ri[k]
    # Three-point stack of ASTM E1049 5.4.4 as the package runs it (points[lo:hi]).
    st_v = np.empty(m + 1)
    st_i = np.empty(m + 1, dtype=np.int64)
    lo = 0
    hi = 0
    for k in range(m):
        st_v[hi] = seq_v[k]
        st_i[hi] = seq_i[k]
        hi += 1
        while hi - lo >= 3:
            x1 = st_v[hi - 3]
            x2 = st_v[hi - 2]
            x3 = st_v[hi - 1]
            if abs(x3 - x2) < abs(x2 - x1):
                break
            if hi - lo == 3:  # the range holds the starting point: half cycle
                at = _emit(0.5, st_v[lo], st_i[lo], st_v[lo + 1], st_i[lo + 1], at,
                           o_range, o_mean, o_count, o_i0, o_i1)
                lo += 1
            else:
                at = _emit(1.0, st_v[hi - 3], st_i[hi - 3], st_v[hi - 2], st_i[hi - 2], at,
                           o_range, o_mean, o_count, o_i0, o_i1)
                st_v[hi - 3] = st_v[hi - 1]
                st_i[hi - 3] = st_i[hi - 1]
                hi -= 2
    while hi - lo > 1:  # residue: half cycles
        at = _emit(0.5, st_v[lo], st_i[lo], st_v[lo + 1], st_i[lo + 1], at,
                   o_range, o_mean, o_count, o_i0, o_i1)
        lo += 1
    return at


def lane_cycles(x, periodic):
    """Rainflow cycles of one series ``x`` as arrays (range, mean, count, i_start, i_end).

    ``periodic=False`` gives exactly ``rainflow.extract_cycles(x)``, in its order.
    """
    n = x.shape[0]
    rv = np.empty(n + 1)
    ri = np.empty(n + 1, dtype=np.int64)
    m = reversals_into(x, n, rv, ri)
    size = m + 1
    o_range, o_mean, o_count = np.empty(size), np.empty(size), np.empty(size)
    o_i0, o_i1 = np.empty(size, dtype=np.int64), np.empty(size, dtype=np.int64)
    k = cycles_from_reversals(rv, ri, m, periodic, o_range, o_mean, o_count, o_i0, o_i1, 0)
    return o_range[:k], o_mean[:k], o_count[:k], o_i0[:k], o_i1[:k]


def _flush(stage_v, stage_i, fill, q, rev_v, rev_i, n_rev, r):
    # Append lane q's staged reversals to row r (those beyond the capacity are only counted).
    capacity = rev_v.shape[1]
    k = n_rev[r]
    for t in range(fill[q]):
        if k + t < capacity:
            rev_v[r, k + t] = stage_v[q, t]
            rev_i[r, k + t] = stage_i[q, t]
    n_rev[r] = k + fill[q]
    fill[q] = 0


def hour_sweep(soc, current, lane_lo, lane_hi, n_groups, has_current, do_calendar, do_cycles,
               lane_rate_row, temp_rate_hourly, soc_table, soc_lo, soc_hi, soc_offset,
               soc_inv_step, month_of_hour, cal_monthly, efc, hours_on, discharge_monthly,
               rev_v, rev_i, n_rev, charged, hours_charging, do_plating, plating_temp_hourly,
               plating_table, rate_lo, rate_hi, rate_offset, rate_inv_step, charge_rate,
               plating_monthly):
    """One pass over the hours of lanes ``lane_lo:lane_hi`` (output row r = lane lane_lo + r).

    Hour by hour, lane by lane within the hour: each hour's row of the (hours x lanes)
    inputs is read once, in order, which is what the memory system streams fastest
    (a lane at a time would read a cache line per value). The lanes are split in
    ``n_groups`` column groups, one per core.

    Parameters
    ----------
    soc : ndarray, shape (n_hours, n_lanes), float32 or float64
        Hourly SOC, fraction (float32 is widened exactly, value by value).
    current : ndarray, shape (n_hours, n_lanes) or (n_hours, 1)
        Hourly C-rate, + discharge (one column: shared by every lane).
    lane_rate_row : ndarray of int, shape (n_lanes,)
        Column of ``temp_rate_hourly`` for each lane (its site).
    temp_rate_hourly : ndarray, shape (n_hours, n_rows)
        Temperature part of the calendar rate per hour and site.
    soc_table : ndarray
        SOC part of the calendar rate at the bins of the lookup.
    soc_lo, soc_hi, soc_offset, soc_inv_step : float
        bin = int((min(max(x, soc_lo), soc_hi) - soc_offset) * soc_inv_step), the
        arithmetic of the numpy lookup (offset = lo - step / 2, inv = 1 / step).
    month_of_hour : ndarray of int, shape (n_hours,)
    cal_monthly, discharge_monthly : ndarray, shape (n_chunk, 12), zeros
        Out (added to): calendar state increment; discharged charge (C-rate x h) per month.
    efc, hours_on : ndarray, shape (n_chunk,), zeros
        Out: discharged charge per year (C-rate x h); hours with discharge.
    rev_v, rev_i : ndarray, shape (n_chunk, capacity)
        Out: each lane's reversals (``rainflow.reversals`` rules), the first ``capacity``.
    n_rev : ndarray of int, shape (n_chunk,)
        Out: each lane's number of reversals (above ``capacity``: row incomplete).
    charged, hours_charging : ndarray, shape (n_chunk,), zeros
        Out: charge taken per year (C-rate x h) and hours with charge (the mean charge
        C-rate of the lithium-plating share).
    do_plating : bool
        Sum the plating term over the charging hours (:mod:`planner.aging.plating`).
    plating_temp_hourly : ndarray, shape (n_hours, n_rows)
        ``AF_pl(T)**2`` per hour and site (rows as ``temp_rate_hourly``).
    plating_table, rate_lo, rate_hi, rate_offset, rate_inv_step
        ``exp(2 beta (C - 1))`` at the bins of the charge C-rate, with the arithmetic of
        the SOC lookup.
    charge_rate : ndarray, shape (n_chunk,)
        A given charge C-rate per lane, NaN for each hour's own charge current.
    plating_monthly : ndarray, shape (n_chunk, 12), zeros
        Out (added to): ``sum AF_pl**2 exp(2 beta (C - 1)) C`` over each month's
        charging hours.
    """
    n_hours = soc.shape[0]
    n_chunk = lane_hi - lane_lo
    capacity = rev_v.shape[1]
    shared_current = current.shape[1] == 1
    width = (n_chunk + n_groups - 1) // n_groups
    for group in prange(n_groups):
        r0 = min(group * width, n_chunk)
        w = min(r0 + width, n_chunk) - r0
        first = lane_lo + r0
        # Accumulators month x lane: the inner loop over lanes runs along memory.
        cal = np.zeros((12, w))
        dis = np.zeros((12, w))
        on = np.zeros(w, dtype=np.int64)
        chg = np.zeros(w)
        chg_on = np.zeros(w, dtype=np.int64)
        pl = np.zeros((12, w))
        rows = lane_rate_row[first:first + w]
        # rainflow.reversals for all lanes of the group, hour by hour. The package's "last
        # distinct point" always equals the previous hour's value (a zero step leaves it
        # unchanged because it is equal), so each lane carries only its last non-zero
        # step. Reversals are staged STAGE at a time per lane (the stage stays in cache)
        # and then written as one run: a store per reversal straight into the lane's row
        # would land a page away from the previous lane's every time.
        d_last = np.zeros(w)
        turned = np.zeros(w, dtype=np.int8)
        stage_v = np.empty((w, STAGE))
        stage_i = np.empty((w, STAGE), dtype=np.int64)
        fill = np.zeros(w, dtype=np.int64)
        if do_cycles and n_hours >= 2:
            for q in range(w):
                rev_v[r0 + q, 0] = soc[0, first + q]
                rev_i[r0 + q, 0] = 0
                n_rev[r0 + q] = 1
                d_last[q] = float(soc[1, first + q]) - float(soc[0, first + q])
        # One pass over the hours; the parts share each hour row while it is in cache.
        # Row views indexed from 0 let the compiler drop the negative-index test.
        for h in range(n_hours):
            x_row = soc[h, first:first + w]
            month = month_of_hour[h]
            if do_calendar:
                rate_row = temp_rate_hourly[h]
                acc = cal[month]
                for q in range(w):
                    v = min(max(float(x_row[q]), soc_lo), soc_hi)
                    acc[q] += soc_table[int((v - soc_offset) * soc_inv_step)] * rate_row[rows[q]]
            if has_current:
                acc = dis[month]
                if shared_current:
                    d = float(current[h, 0])
                    for q in range(w):
                        acc[q] += d if d > 0.0 else 0.0
                        on[q] += 1 if d > 0.0 else 0
                        chg[q] += -d if d < 0.0 else 0.0
                        chg_on[q] += 1 if d < 0.0 else 0
                else:
                    c_row = current[h, first:first + w]
                    for q in range(w):
                        d = float(c_row[q])
                        acc[q] += d if d > 0.0 else 0.0
                        on[q] += 1 if d > 0.0 else 0
                        chg[q] += -d if d < 0.0 else 0.0
                        chg_on[q] += 1 if d < 0.0 else 0
                if do_plating:
                    p_acc = pl[month]
                    p_temp = plating_temp_hourly[h]
                    for q in range(w):
                        d = float(current[h, 0]) if shared_current else float(current[h, first + q])
                        if d < 0.0:
                            given = charge_rate[r0 + q]
                            v = -d if given != given else given  # NaN: the hour's own rate
                            v = min(max(v, rate_lo), rate_hi)
                            p_acc[q] += (plating_table[int((v - rate_offset) * rate_inv_step)]
                                         * -d * p_temp[rows[q]])
            if do_cycles and h >= 2:
                p_row = soc[h - 1, first:first + w]
                turns = 0
                for q in range(w):  # branch-free, so it runs along the lanes at full speed
                    d = float(x_row[q]) - float(p_row[q])
                    dl = d_last[q]
                    t = 1 if dl * d < 0 else 0
                    turned[q] = t
                    turns += t
                    d_last[q] = d if d != 0.0 else dl
                if turns:
                    for q in range(w):
                        if turned[q]:
                            f = fill[q]
                            stage_v[q, f] = p_row[q]
                            stage_i[q, f] = h - 1
                            f += 1
                            if f == STAGE:  # write the run out, inline (a call costs more)
                                r = r0 + q
                                k = n_rev[r]
                                for t in range(STAGE):
                                    if k + t < capacity:
                                        rev_v[r, k + t] = stage_v[q, t]
                                        rev_i[r, k + t] = stage_i[q, t]
                                n_rev[r] = k + STAGE
                                f = 0
                            fill[q] = f
        if do_cycles and n_hours >= 2:
            for q in range(w):
                _flush(stage_v, stage_i, fill, q, rev_v, rev_i, n_rev, r0 + q)
            if n_hours >= 3:
                for q in range(w):
                    k = n_rev[r0 + q]
                    if k < capacity:
                        rev_v[r0 + q, k] = soc[n_hours - 1, first + q]
                        rev_i[r0 + q, k] = n_hours - 1
                    n_rev[r0 + q] = k + 1
        for q in range(w):
            total = 0.0
            for month in range(12):
                cal_monthly[r0 + q, month] = cal[month, q]
                discharge_monthly[r0 + q, month] = dis[month, q]
                total += dis[month, q]
            efc[r0 + q] = total
            hours_on[r0 + q] = on[q]
            charged[r0 + q] = chg[q]
            hours_charging[r0 + q] = chg_on[q]
            for month in range(12):
                plating_monthly[r0 + q, month] = pl[month, q]


def lane_sweep(soc_by_lane, current_by_lane, lane_lo, lane_hi, has_current, do_calendar,
               do_cycles, lane_rate_row, temp_rate_site, soc_table, soc_lo, soc_hi, soc_offset,
               soc_inv_step, month_start_h, cal_monthly, efc, hours_on, discharge_monthly,
               rev_v, rev_i, n_rev, charged, hours_charging, do_plating, plating_temp_site,
               plating_table, rate_lo, rate_hi, rate_offset, rate_inv_step, charge_rate,
               plating_monthly):
    """:func:`hour_sweep` for inputs stored lane by lane (lanes x hours, each lane contiguous).

    Same outputs from the same arithmetic; used when the caller's hourly arrays are
    column-major (Fortran order), where reading hour rows would jump a lane's length per value.
    ``current_by_lane`` is (n_lanes, n_hours) or (1, n_hours) (shared by every lane);
    ``month_start_h`` (13,) holds each month's first hour and the year's length;
    ``temp_rate_site`` and ``plating_temp_site`` are (n_rows, n_hours), the transposes of
    ``temp_rate_hourly`` and ``plating_temp_hourly``.
    """
    n_hours = soc_by_lane.shape[1]
    shared_current = current_by_lane.shape[0] == 1
    for r in prange(lane_hi - lane_lo):
        lane = lane_lo + r
        x = soc_by_lane[lane]
        if do_calendar:
            rate = temp_rate_site[lane_rate_row[lane]]
            for month in range(12):
                acc = 0.0  # a local sum: no store-to-load chain through memory per hour
                for h in range(month_start_h[month], month_start_h[month + 1]):
                    v = min(max(float(x[h]), soc_lo), soc_hi)
                    acc += soc_table[int((v - soc_offset) * soc_inv_step)] * rate[h]
                cal_monthly[r, month] = acc
        if has_current:
            c = current_by_lane[0] if shared_current else current_by_lane[lane]
            on = 0
            total = 0.0
            chg = 0.0
            chg_on = 0
            for month in range(12):
                acc = 0.0
                for h in range(month_start_h[month], month_start_h[month + 1]):
                    d = float(c[h])
                    acc += d if d > 0.0 else 0.0
                    on += 1 if d > 0.0 else 0
                    chg += -d if d < 0.0 else 0.0
                    chg_on += 1 if d < 0.0 else 0
                discharge_monthly[r, month] = acc
                total += acc
            efc[r] = total
            hours_on[r] = on
            charged[r] = chg
            hours_charging[r] = chg_on
            if do_plating:
                p_temp = plating_temp_site[lane_rate_row[lane]]
                given = charge_rate[r]
                for month in range(12):
                    acc = 0.0
                    for h in range(month_start_h[month], month_start_h[month + 1]):
                        d = float(c[h])
                        if d < 0.0:
                            v = -d if given != given else given  # NaN: the hour's own rate
                            v = min(max(v, rate_lo), rate_hi)
                            acc += (plating_table[int((v - rate_offset) * rate_inv_step)]
                                    * -d * p_temp[h])
                    plating_monthly[r, month] = acc
        if do_cycles:
            n_rev[r] = reversals_into(x, n_hours, rev_v[r], rev_i[r])


def cycles_pass(rev_v, rev_i, n_rev, periodic, offsets, o_range, o_mean, o_count, o_i0, o_i1,
                n_cycles):
    """Rainflow cycles of every lane from its reversals (rows with ``n_rev`` <= capacity).

    Lane r writes from ``offsets[r]`` (room for ``n_rev[r] + 1`` cycles); ``n_cycles[r]``
    receives its count. Lanes run in parallel.
    """
    capacity = rev_v.shape[1]
    for r in prange(n_rev.shape[0]):
        if n_rev[r] <= capacity:
            end = cycles_from_reversals(rev_v[r], rev_i[r], n_rev[r], periodic, o_range, o_mean,
                                        o_count, o_i0, o_i1, offsets[r])
            n_cycles[r] = end - offsets[r]


def compact_cycles(offsets, n_cycles, dest, o_range, o_mean, o_count, o_i0, o_i1, lane_lo,
                   lane_site, temp_c, month_of_hour, c_range, c_mean, c_count, c_i0, c_i1,
                   c_temp, c_month):
    """Gather the lanes' cycle runs of :func:`cycles_pass` into gap-free arrays ``c_*``.

    Lane r's ``n_cycles[r]`` cycles move from ``offsets[r]`` to ``dest[r]`` (the running
    sum of ``n_cycles``), lanes in parallel. Each cycle also gets its temperature (mean of
    its two reversal hours at the lane's site, ``temp_c`` shaped (n_hours, n_sites)) and
    the month of its end.
    """
    for r in prange(offsets.shape[0]):
        site = lane_site[lane_lo + r]
        for k in range(n_cycles[r]):
            src = offsets[r] + k
            at = dest[r] + k
            i0 = o_i0[src]
            i1 = o_i1[src]
            c_range[at] = o_range[src]
            c_mean[at] = o_mean[src]
            c_count[at] = o_count[src]
            c_i0[at] = i0
            c_i1[at] = i1
            c_temp[at] = 0.5 * (temp_c[i0, site] + temp_c[i1, site])
            c_month[at] = month_of_hour[i1]


if AVAILABLE:
    # Module globals are rebound to the compiled versions, so compiled callers call
    # compiled callees; each keeps its plain-Python original as ``py_func``.
    reversals_into = _numba.njit(cache=True)(reversals_into)
    _emit = _numba.njit(cache=True)(_emit)
    _flush = _numba.njit(cache=True)(_flush)
    cycles_from_reversals = _numba.njit(cache=True)(cycles_from_reversals)
    lane_cycles = _numba.njit(cache=True)(lane_cycles)
    hour_sweep = _numba.njit(cache=True, parallel=True)(hour_sweep)
    lane_sweep = _numba.njit(cache=True, parallel=True)(lane_sweep)
    cycles_pass = _numba.njit(cache=True, parallel=True)(cycles_pass)
    compact_cycles = _numba.njit(cache=True, parallel=True)(compact_cycles)


def python_function(kernel):
    """The plain-Python original of a kernel (itself when numba is not installed)."""
    return getattr(kernel, "py_func", kernel)


def thread_count():
    """Threads the compiled kernels run on (1 without numba)."""
    return _numba.get_num_threads() if AVAILABLE else 1
