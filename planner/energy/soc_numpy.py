"""The numpy hour loop of the SOC simulation: Python over hours, numpy across lanes.

The recursion loops over the hours of the typical year in Python and updates every lane
of a chunk at once with numpy (the physics is in :mod:`planner.energy.soc`). What
depends only on a site column and the chemistry is computed once per *group* of lanes
(:func:`groups`, :func:`group_offers`); the compiled path
(:mod:`planner.energy.soc_fused`) uses the same group offers.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.energy.soc_results import HOURS_PER_YEAR, SocChunk, finish_chunk, monthly_unserved


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


@dataclass(frozen=True)
class Groups:
    """Lanes that read the same column with the same efficiencies and charge window.

    Each attribute but ``of_lane`` is ``(m,)``, one value per group: its site column,
    charge and discharge efficiency, and minimum and maximum charge temperature;
    ``of_lane`` is each lane's group, ``(k,)``.
    """

    col: np.ndarray
    eta_c: np.ndarray
    eta_d: np.ndarray
    t_min: np.ndarray
    t_max: np.ndarray
    of_lane: np.ndarray

    @property
    def size(self) -> int:
        return self.col.size


def groups(col, eta_c, eta_d, t_min, t_max) -> Groups:
    """The :class:`Groups` of lanes sharing a column, efficiencies and charge window."""
    keys = np.stack([np.asarray(col, dtype=float), eta_c, eta_d, t_min, t_max], axis=1)
    keys_g, ginv = np.unique(keys, axis=0, return_inverse=True)
    return Groups(keys_g[:, 0].astype(np.intp), keys_g[:, 1], keys_g[:, 2], keys_g[:, 3],
                  keys_g[:, 4], ginv.reshape(-1))


@dataclass(frozen=True)
class GroupOffers:
    """Hours ``t0:t1`` of every group, each ``(t1 - t0, m)``: the source's surplus and
    deficit (W), the hours whose surplus the cold and the heat block (bool, ``None``
    when no group has that limit), and the offer to the store (Wh)."""

    surplus_w: np.ndarray
    deficit_w: np.ndarray
    cold: np.ndarray | None
    hot: np.ndarray | None
    offer_wh: np.ndarray


def group_offers(p, t0, t1, g: Groups) -> GroupOffers:
    """Hours ``t0:t1`` of every group: surplus, deficit, charge blocks and offer to the store.

    The source serves the load first; the store is offered ``eta_c * surplus`` minus
    ``deficit / eta_d``. The surplus is not taken while the battery is below its minimum
    charge temperature with the heater off (lithium plating) or above its maximum charge
    temperature (a battery management system stops charging a hot pack; a heater does
    not help there).
    """
    net = _hour_block(p["charge"], t0, t1, g.col) - _hour_block(p["load"], t0, t1, g.col)
    sur = np.maximum(net, 0.0)
    dfc = sur - net
    cold = hot = None
    charged = sur
    limited_low, limited_high = np.any(np.isfinite(g.t_min)), np.any(np.isfinite(g.t_max))
    if limited_low or limited_high:
        temp = _hour_block(p["temp"], t0, t1, g.col)
        ok = np.ones(sur.shape, dtype=bool)
        if limited_low:
            warm = temp >= g.t_min
            if p["heater"] is not None:
                warm = warm | _hour_block(p["heater"], t0, t1, g.col)
            cold = (sur > 0.0) & ~warm
            ok &= warm
        if limited_high:
            cool = temp <= g.t_max
            hot = (sur > 0.0) & ~cool
            ok &= cool
        charged = sur * ok
    return GroupOffers(sur, dfc, cold, hot, charged * g.eta_c - dfc / g.eta_d)


def run_chunk(p: dict, start: int, stop: int, keep) -> SocChunk:
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
    series returned), ``slice(None)`` or local lane indices. The compiled kernel of
    :mod:`planner.energy.soc_fused` runs the same hours instead when numba is installed
    (chosen by :func:`planner.energy.soc._run_chunk`).
    """
    k = stop - start
    n_hours = p["n_hours"]
    lane = slice(start, stop)
    cap, usable, soc_min = p["cap"][lane], p["usable"][lane], p["soc_min"][lane]
    eta_c, eta_d = p["eta_c"][lane], p["eta_d"][lane]
    col = np.arange(start, stop) if p["site_idx"] is None else p["site_idx"][lane]
    g = groups(col, eta_c, eta_d, p["t_min"][lane], p["t_max"][lane])
    m, ginv = g.size, g.of_lane
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
    cold_g, hot_g = np.zeros(m, dtype=np.int64), np.zeros(m, dtype=np.int64)
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
        offers = group_offers(p, t0, t1, g)
        sur, dfc, x_g = offers.surplus_w, offers.deficit_w, offers.offer_wh
        # running sums continued hour by hour (cumsum adds in order, like a loop would)
        cum_sur = np.cumsum(np.vstack([sum_sur_g, sur]), axis=0)[1:]
        cum_dfc = np.cumsum(np.vstack([sum_dfc_g, dfc]), axis=0)[1:]
        sum_sur_g, sum_dfc_g = cum_sur[-1].copy(), cum_dfc[-1].copy()
        if offers.cold is not None:
            cold_g += offers.cold.sum(axis=0)
        if offers.hot is not None:
            hot_g += offers.hot.sum(axis=0)
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
    return finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, e, e_start, sum_acc,
                        sum_acc - sum_d, sum_sd, n_uns, cold_g[ginv], hot_g[ginv], sum_sur_g[ginv],
                        sum_dfc_g[ginv],
                        monthly_unserved(snap_dr, snap_dfc, ginv, eta_d, n_uns), *stats,
                        soc_s, flow_s)


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
