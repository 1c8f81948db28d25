"""The cell-by-cell Monte Carlo of the pack life spread (:mod:`planner.pack.spread`).

Draws every cell of the simulated string units, ages each along the nominal curves
at its own equivalent time, and reads pack SOH bands and years to end of life off the
draws; vectorised over sites x draws x cells.

Model in one paragraph (details in ``docs/pack.md``)
----------------------------------------------------
Each cell ``i`` ages along the nominal cell's calendar and cycle loss curves at its
own *equivalent time* (the virtual-time method of notes section 6.1)::

    d tau_cal/dt = (k_i * AF_i)**(1/z_cal)
    d tau_cyc/dt = l_s * depth_i**kappa * (k_i * AF_i)**(1/z_cyc)
    loss_i(t)    = L_cal_nom(tau_cal) + L_cyc_nom(tau_cyc)

Stress multipliers on the *coefficient* of a ``k * t**z`` law (``k_i`` the cell's
aging-rate draw, ``AF_i`` the Arrhenius factor of its temperature offset) become a
clock rate ``m**(1/z)`` -- for a constant multiplier
``L_nom(m**(1/z) * t) = m * L_nom(t)`` exactly for a power law (convention B of
notes section 6.1, the one fitted Arrhenius laws use). Throughput effects act on
the *clock* itself (Palmgren-Miner damage is linear in cycles): the string's
current share ``l_s`` and the depth ratio ``depth_i = c_nom / c_i`` (the same
ampere-hours through a smaller cell are more of its own full cycles). The rates
are re-evaluated every ``step_months`` from the current state, so a cell that has
fallen behind cycles deeper and, with its resistance grown, runs warmer: the
feedback widens the spread with time. Usable string capacity is the weakest cell
(capacity and state-of-charge window); strings in parallel add.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from scipy.special import ndtri

from planner.pack import _kernels as _sk
from planner.pack.structure import (
    GAS_CONSTANT_J_MOL_K,
    _crossing_rows,
    row_years,
    usable_string_capacity_frac,
)

#: Equivalent time is followed up to this multiple of the input horizon (a cell
#: aging with a 4x coefficient on a square-root law); beyond, its loss stays flat.
EXTEND = 16


def _unit_weights(n_p, units, imbalance):
    """Current share (U, S) of each simulated string unit, and how its SOH counts.

    Unit 0 is the most loaded string (``1 + imbalance`` of an even share, Kirchhoff);
    the others carry the rest evenly (:func:`planner.pack.structure.string_current_shares`).
    ``weight`` (U, S): unit 0 weighs ``1 / n``; the ``m = min(n - 1, units - 1)``
    simulated other strings ``(n - 1) / (n m)`` each; ``scale`` (S,): how far their
    mean's deviation from its expectation is kept, ``sqrt(m / (n - 1))`` (1 when every
    string is simulated).
    """
    n = n_p.astype(float)
    rest = np.where(n > 1, (n - 1.0 - imbalance) / np.maximum(n - 1.0, 1.0), 1.0)
    share = np.where(np.arange(units)[:, None] == 0, np.where(n > 1, 1.0 + imbalance, 1.0),
                     rest[None, :])
    m = np.minimum(n - 1.0, units - 1.0)
    used = (np.arange(units)[:, None] >= 1) & (np.arange(units)[:, None] <= m[None, :])
    weight = np.where(np.arange(units)[:, None] == 0, 1.0 / n,
                      np.where(used, (n - 1.0) / (n * np.maximum(m, 1.0)), 0.0))
    scale = np.where(n - 1.0 > m, np.sqrt(np.maximum(m, 1.0) / np.maximum(n - 1.0, 1.0)), 1.0)
    return share, weight, scale


def simulate_chunk(cal_k, cyc_k, set_of_draw, eol, t_ref_c, ea_cal, ea_cyc, n_p, cells, p):
    """Monte Carlo for a chunk of sites; returns years (S, D) and SOH bands (3, M+1, S)."""
    n_sites = cal_k.shape[2]
    n_draws = set_of_draw.size
    cells = {k: np.broadcast_to(v, (v.shape[0], n_sites, n_draws)) for k, v in cells.items()}
    units = _unit_weights(n_p, p["units"], p["imb"])
    stress_cal = _log_stress(cells, t_ref_c, ea_cal, units[0], p)
    stress = [stress_cal, stress_cal if p["same_ea"]
              else _log_stress(cells, t_ref_c, ea_cyc, units[0], p)]
    marks = np.unique(np.r_[np.arange(0, cal_k.shape[1] - 1, p["step"]), cal_k.shape[1] - 1])
    soh_marks = _age_cells(cal_k, cyc_k, set_of_draw, cells, stress, marks, units, p)
    soh_nom_k = np.float32(1.0) - (cal_k + cyc_k)  # (K, M+1, S)
    bands = _soh_bands(soh_marks, marks, soh_nom_k)
    years = _years_between_marks(soh_marks, marks, soh_nom_k, set_of_draw, eol)
    return years, bands


@functools.lru_cache(maxsize=64)
def cached_cells(n_draws, n_s, units, seed, balancing, sig_c, sig_r, sig_k, sig_u0, sig_du):
    """Per-cell draws of :func:`_draw_cells`, cached and read-only."""
    # A plan asks for the same few structures chunk after chunk; the arrays are only read.
    cells = _draw_cells(n_draws, dict(n_s=n_s, units=units, seed=seed, balancing=balancing,
                                      sig_c=sig_c, sig_r=sig_r, sig_k=sig_k, sig_u0=sig_u0,
                                      sig_du=sig_du))
    for v in cells.values():
        v.flags.writeable = False
    return cells


def _draw_cells(n_draws, p):
    """Per-cell draws, each (N, 1, D) float32; one stream per (quantity, unit, cell).

    Cells lead the shape so that reductions over a string run over whole slabs. Every
    site of a call gets the same cells (common random numbers: A.M. Law, W.D. Kelton,
    Simulation Modeling and Analysis, 3rd ed. 2000, section 11.2, from memory), so a
    site's result does not depend on which sites share its call or chunk, and designs
    are compared on the same cells.
    """
    f32 = np.float32
    quantities = ("capacity", "resistance", "rate") + (
        ("soc0", "drift") if p["balancing"] == "none" else ())
    cells_n = [(u, i) for u in range(p["units"]) for i in range(p["n_s"])]

    def normal(q):
        # Latin hypercube per cell and quantity (McKay, Beckman and Conover 1979,
        # Technometrics 21 (2) 239-245, from memory): each of the D draws falls in its own 1/D
        # probability stratum, in random order, which steadies the percentiles. The
        # streams are nested across pack sizes (cell i of unit u is the same whatever
        # the series count).
        qi = quantities.index(q)
        out = np.empty((len(cells_n), 1, n_draws), f32)
        for j, (u, i) in enumerate(cells_n):
            v = np.random.default_rng([p["seed"], qi, u, i]).random((2, n_draws))
            stratum = np.argsort(v[0])  # a uniform random permutation
            out[j, 0] = ndtri(np.clip((stratum + v[1]) / n_draws, 1e-12, 1.0 - 1e-12))
        return out

    def log_sigma(cv):
        # Log-normal with median 1 and coefficient of variation cv.
        return f32(math.sqrt(math.log1p(cv * cv)))

    cells = {
        "c0": np.maximum(f32(1.0) + f32(p["sig_c"]) * normal("capacity"), f32(0.05)),
        "r0": np.exp(log_sigma(p["sig_r"]) * normal("resistance")),
        "log_k": log_sigma(p["sig_k"]) * normal("rate"),
    }
    if p["balancing"] == "none":
        cells["u0"] = f32(p["sig_u0"]) * normal("soc0")
        cells["du"] = f32(p["sig_du"] / 12.0) * normal("drift")
    return cells


def _log_stress(cells, t_ref_c, ea, share_us, p):
    """Log stress coefficient ``x = x_static + x_heat * h`` of each cell, one mechanism.

    ``h`` is the cell's resistance relative to the nominal cell's (grows with its
    own loss). Gradient: exact Arrhenius at the cell's static temperature T_s;
    self-heating ``theta * r * l**2`` (a fraction of a kelvin) to first order in
    1/T around T_s: ``d(-Ea/RT) = Ea/R * dT / T_s**2``.
    """
    f32 = np.float32
    grad = np.tile(p["grad_k"], p["units"]).astype(f32)[:, None, None]  # (N, 1, 1)
    share = np.repeat(share_us, p["n_s"], axis=0).astype(f32)[:, :, None]  # (N, S, 1)
    theta = f32(p["theta"])
    t_ref = (np.asarray(t_ref_c) + 273.15).astype(f32)[None, :, None]  # (1, S, 1)
    ea_r = (np.asarray(ea) / GAS_CONSTANT_J_MOL_K).astype(f32)[None, :, None]
    t_s = t_ref + grad  # (N, S, 1)
    a_heat = ea_r / (t_s * t_s)
    x_static = ea_r * (f32(1.0) / t_ref - f32(1.0) / t_s) + cells["log_k"] - a_heat * theta
    x_heat = (a_heat * theta) * cells["r0"] * (share * share)
    return x_static, x_heat


def _gather_table(curves, z):
    """Loss and slope to the next month, flat over (set, month, site), float32 each.

    Beyond the input horizon the curve continues as its ``t**z`` law (notes 6.1)
    up to ``EXTEND`` x the horizon, then stays flat (a last row with zero slope).
    """
    n_months = curves.shape[1] - 1
    months_ext = np.arange(n_months + 1, n_months * EXTEND + 1) / n_months
    ext = curves[:, -1:, :].astype(float) * (months_ext ** z)[None, :, None]
    loss_pad = np.concatenate([curves, ext, ext[:, -1:]], axis=1)
    slope = np.diff(loss_pad, axis=1, append=loss_pad[:, -1:])
    return loss_pad.astype(np.float32).reshape(-1), slope.astype(np.float32).reshape(-1)


def _age_cells(cal_k, cyc_k, set_of_draw, cells, stress, marks, units, p):
    """Step every cell's equivalent times from mark to mark; pack SOH at the marks.

    Arrays are (N cells, S sites, D draws) float32, cells string unit by unit;
    ``units`` = (share, weight, scale) of :func:`_unit_weights`.
    """
    f32 = np.float32
    n_sets, n_mp1, n_sites = cal_k.shape
    n_draws = set_of_draw.size
    n_s, n_u = p["n_s"], p["units"]
    shape = (n_s * n_u, n_sites, n_draws)
    cells4 = (n_u, n_s, n_sites, n_draws)
    rows = (n_mp1 - 1) * EXTEND + 2
    tabs = (_gather_table(cal_k, p["z_cal"]), _gather_table(cyc_k, p["z_cyc"]))
    # Flat row of (set k, month m, site s): (k * rows + m) * S + s.
    base = (set_of_draw[None, :] * (rows * n_sites) + np.arange(n_sites)[:, None]).astype(np.intp)
    loss_nom_draw = (cal_k + cyc_k)[set_of_draw]  # (D, M+1, S)
    m_last = f32(rows - 1)
    share_n = np.repeat(units[0], n_s, axis=0).astype(f32)[:, :, None]
    weight = units[1].astype(f32)[:, :, None]  # (U, S, 1)
    scale = units[2].astype(f32)[:, None]  # (S, 1)

    def read(tab, tau):
        # Linear interpolation in the nominal curve at equivalent time tau [months].
        if _sk.READ is not None:
            out = np.empty(tau.shape, f32)
            _sk.READ(tab[0], tab[1], tau, base, n_sites, m_last, out)
            return out
        whole = np.floor(tau)
        np.minimum(whole, m_last, out=whole)
        f = tau - whole
        i = whole.astype(np.intp)
        i *= n_sites
        i += base
        f *= np.take(tab[1], i)
        f += np.take(tab[0], i)
        return f

    def pack_soh(cap, month):
        u = None
        if p["balancing"] == "none":
            u = (cells["u0"] + cells["du"] * f32(month)).reshape(cells4)
        usable = usable_string_capacity_frac(cap.reshape(cells4), u, balancing=p["balancing"],
                                             active_recovery_frac=f32(p["eta"]), axis=1)
        pack = weight[0] * usable[0]
        if n_u > 1:
            # Other strings: their weighted mean, its deviation from the expectation
            # (mean over draws) shrunk to that of the mean of all of them.
            rest = (weight[1:] * usable[1:]).sum(axis=0)
            mu = rest.mean(axis=1, keepdims=True)
            pack += mu + (rest - mu) * scale
        return pack

    tau = [np.zeros(shape, f32), np.zeros(shape, f32)]  # calendar, cycle [months]
    loss = read(tabs[0], tau[0])
    loss += read(tabs[1], tau[1])
    inv_z = (f32(1.0 / p["z_cal"]), f32(1.0 / p["z_cyc"]))
    g_res = f32(p["g_res"])
    dynamic = p["theta"] > 0 and g_res > 0
    same = inv_z[0] == inv_z[1] and stress[0] is stress[1]
    soh_marks = np.empty((marks.size, n_sites, n_draws), f32)
    rate = None
    for j, m0 in enumerate(marks):
        cap = np.subtract(f32(1.0), loss)
        np.maximum(cap, f32(0.0), out=cap)
        cap *= cells["c0"]
        soh_marks[j] = pack_soh(cap, m0)
        if j == marks.size - 1:
            break
        dt = f32(marks[j + 1] - m0)
        l_nom = loss_nom_draw[:, m0, :].T[None].astype(f32)  # (1, S, D)
        if rate is None or dynamic:
            # Clock rates at the start of the step (explicit equivalent-time update):
            # coefficient**(1/z) = exp(x / z); resistance relative to the nominal cell's.
            h = loss * g_res
            h += f32(1.0)
            h /= f32(1.0) + g_res * l_nom
            rate = [None, None]
            for k in (0, 1):
                if k == 1 and same:
                    rate[1] = rate[0]
                    break
                x = h * stress[k][1]
                x += stress[k][0]
                x *= inv_z[k]
                rate[k] = np.exp(x, out=x)
        tau[0] += dt * rate[0]
        # Cycle clock: current share x (depth ratio)**kappa x coefficient**(1/z).
        if p["balancing"] == "active":
            c4 = cap.reshape(cells4)
            cap = (c4 + f32(p["eta"]) * (c4.mean(axis=1, keepdims=True) - c4)).reshape(shape)
        depth = np.maximum(cap, f32(1e-6))
        np.divide(np.maximum(f32(1.0) - l_nom, f32(1e-6)), depth, out=depth)
        depth = _pow(depth, p["kappa"])
        depth *= share_n * dt
        depth *= rate[1]
        tau[1] += depth
        loss = read(tabs[0], tau[0])
        loss += read(tabs[1], tau[1])
    return soh_marks


def _soh_bands(soh_marks, marks, soh_nom_k):
    """P10/P50/P90 of pack SOH by month, shape (3, M+1, S).

    Quantiles of pack SOH relative to the (set-mean) nominal SOH at the yearly
    marks, interpolated between them and multiplied back by the monthly nominal
    curve: exact at whole years, and exact everywhere for one cell without spread.
    """
    # Yearly marks (and the last) are enough for a band that rides on the monthly
    # nominal curve, and halve the cost of the quantiles.
    keep = (marks % 12 == 0) | (marks == marks[-1])
    soh_marks, marks = soh_marks[keep], marks[keep]
    nom_ref = soh_nom_k.mean(axis=0)  # (M+1, S)
    rel = soh_marks / nom_ref[marks][:, :, None]
    q_marks = np.quantile(rel, [0.1, 0.5, 0.9], axis=2)  # (3, n_marks, S)
    months = np.arange(nom_ref.shape[0])
    seg = np.clip(np.searchsorted(marks, months, side="right") - 1, 0, marks.size - 2)
    w = (months - marks[seg]) / (marks[seg + 1] - marks[seg])
    q_m = (1.0 - w)[None, :, None] * q_marks[:, seg] + w[None, :, None] * q_marks[:, seg + 1]
    return nom_ref[None].astype(float) * q_m


def _years_between_marks(soh_marks, marks, soh_nom_k, set_of_draw, eol):
    """Years to ``eol`` per (site, draw) from pack SOH at the marks.

    Locates the first mark at or below the threshold, then refines month by month
    inside the preceding step: monthly SOH is the nominal SOH of the draw's model
    set times the pack-to-nominal ratio interpolated linearly between the marks.
    """
    n_marks, n_sites, n_draws = soh_marks.shape
    thr = eol[:, None]
    below = soh_marks <= thr
    hit = below.any(axis=0)
    jm = np.maximum(np.argmax(below, axis=0), 1)
    m_lo, m_hi = marks[jm - 1], marks[jm]
    site = np.arange(n_sites)[:, None]
    k = set_of_draw[None, :]
    s_lo = np.take_along_axis(soh_marks, (jm - 1)[None], 0)[0]
    s_hi = np.take_along_axis(soh_marks, jm[None], 0)[0]
    tiny = np.float32(1e-6)
    r_lo = s_lo / np.maximum(soh_nom_k[k, m_lo, site], tiny)
    r_hi = s_hi / np.maximum(soh_nom_k[k, m_hi, site], tiny)
    offs = np.arange(int(np.max(np.diff(marks))) + 1)[:, None, None]
    m = np.minimum(m_lo[None] + offs, m_hi[None])  # (step+1, S, D)
    w = (m - m_lo[None]) / np.maximum(m_hi - m_lo, 1)[None]
    soh = soh_nom_k[k[None], m, site[None]] * ((1.0 - w) * r_lo[None] + w * r_hi[None])
    soh[0] = s_lo  # exact at the marks (no rounding through the ratio)
    soh = np.where(m == m_hi[None], s_hi[None], soh)
    within = _crossing_rows(soh, thr)  # rows after m_lo
    rows = np.where(np.isfinite(within), m_lo + within, m_hi)
    years = np.where(below[0], 0.0, row_years(rows))
    return np.where(hit, years, np.inf)


def _pow(x, e):
    # Identity and square are exact and cheap; the common square-root laws hit them.
    if e == 1.0:
        return x
    if e == 2.0:
        return x * x
    return x ** np.float32(e)
