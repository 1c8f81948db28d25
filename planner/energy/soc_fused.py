"""The fused SOC path: the hour loop inside the kernel of :mod:`planner.energy._soc_kernels`.

With numba installed the kernel runs compiled (lane blocks on every core, four lanes
stepped together); its plain-Python form runs in tests on tiny inputs. The groups'
offers and sums are computed here with numpy for the whole year (the functions of
:mod:`planner.energy.soc_numpy`), then the kernel steps the lanes; both paths give the
same numbers (tested).
"""

from __future__ import annotations

import numpy as np

from planner.energy import _soc_kernels as _kernels
from planner.energy.soc_numpy import group_offers, groups
from planner.energy.soc_results import HOURS_PER_YEAR, SocChunk, finish_chunk, monthly_unserved

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


def run_chunk(p: dict, start: int, stop: int, keep, kernel) -> SocChunk:
    """:func:`planner.energy.soc_numpy.run_chunk` with the hour loop inside ``kernel``
    (compiled or plain Python).

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
    eta_c, eta_d = p["eta_c"][lane], p["eta_d"][lane]
    t_min, t_max = p["t_min"][lane], p["t_max"][lane]
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
    sum_sur, sum_dfc = np.zeros(k), np.zeros(k)
    blk_cold, blk_hot = np.zeros(k, dtype=np.int64), np.zeros(k, dtype=np.int64)
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
    n_groups = groups(col, eta_c, eta_d, t_min, t_max).size
    piece = k if n_groups <= _KERNEL_GROUPS else max(4, k * _KERNEL_GROUPS // n_groups)
    for a in range(0, k, piece):
        b = min(k, a + piece)
        g = groups(col[a:b], eta_c[a:b], eta_d[a:b], t_min[a:b], t_max[a:b])
        ginv = g.of_lane
        offers = group_offers(p, 0, n_hours, g)
        sur, dfc, offer = offers.surplus_w, offers.deficit_w, offers.offer_wh
        # running sums in hour order (cumsum adds in order, like the numpy loop)
        cum_dfc = np.cumsum(dfc, axis=0)
        sum_sur[a:b] = np.cumsum(sur, axis=0)[-1][ginv]
        sum_dfc[a:b] = cum_dfc[-1][ginv]
        snap_dfc[:, a:b] = cum_dfc[month_rows][:, ginv]
        if offers.cold is not None:
            blk_cold[a:b] = offers.cold.sum(axis=0)[ginv]
        if offers.hot is not None:
            blk_hot[a:b] = offers.hot.sum(axis=0)[ginv]
        del sur, dfc, cum_dfc, offers
        kernel(_kernels.readonly(offer), sd, avail, ginv.astype(np.int64), col[a:b],
               par[a:b], state[a:b], series_col[a:b], soc_s, cr_s, month_end,
               snap_dr[:, a:b], _kernels.block_lanes(b - a, _threads()))
    st = {name: state[:, getattr(_kernels, "S_" + name)].copy()
          for name in ("E", "ACC", "D", "SD", "SOC", "MIN_SOC", "MAX_CR", "LONGEST", "UNS")}
    n_uns = st["UNS"].astype(np.int64)
    return finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, st["E"], e_start,
                        st["ACC"], st["ACC"] - st["D"], st["SD"], n_uns, blk_cold, blk_hot, sum_sur,
                        sum_dfc,
                        monthly_unserved(list(snap_dr), list(snap_dfc), None, eta_d, n_uns),
                        st["SOC"] / n_hours, st["MIN_SOC"], st["MAX_CR"], st["LONGEST"],
                        soc_s, cr_s)


def _threads() -> int:
    """Threads the compiled kernel runs on (1 without numba)."""
    if _kernels._numba is None:
        return 1
    return int(_kernels._numba.get_num_threads())
