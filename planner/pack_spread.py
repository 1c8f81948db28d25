"""Pack life spread: a seeded Monte Carlo over cells, strings and model sets.

A pack's cells differ from the day they are made, run at different temperatures and
carry different currents, so the pack fades faster than its nominal cell. This module
turns the nominal cell's fade curves from the aging engine into a distribution of
pack life, vectorised over sites x draws x cells. The pack's structure and the
physical building blocks it uses are in :mod:`planner.pack`.

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

Strings as units
----------------
Strings in parallel share nothing in this model but the pack terminals: each is an
independent copy of the same random process, except the most loaded one. So the
cost need not grow with the string count. The most loaded string and up to
``EXACT_REST_STRINGS`` others are simulated cell by cell; a pack with more strings
takes the mean of its ``n - 1`` other strings as ``mu + (mean_m - mu) * sqrt(m / (n - 1))``,
``mean_m`` the mean of the ``m`` simulated ones and ``mu`` their expectation (the
mean over draws). That has the mean and the covariance over time of the mean of
``n - 1`` independent strings (variance of a mean of independent copies, textbook),
and the central limit theorem makes the mean of many strings close to normal, so
its relative spread shrinks like ``1/sqrt(n - 1)``. Packs of up to
``EXACT_REST_STRINGS + 1`` strings are simulated exactly.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtri

from planner import _spread_kernels as _sk
from planner.errors import InputError
from planner.pack import (
    BALANCING_KINDS,
    GAS_CONSTANT_J_MOL_K,
    SPREAD_PRESETS,
    _crossing_rows,
    _positive,
    _whole,
    inner_temperature_offsets_k,
    row_years,
    usable_string_capacity_frac,
)

__all__ = [
    "DEFAULT_DRAWS",
    "EXACT_REST_STRINGS",
    "LifeDistribution",
    "life_distribution",
    "life_fields",
    "life_summary",
]

#: Equivalent time is followed up to this multiple of the input horizon (a cell
#: aging with a 4x coefficient on a square-root law); beyond, its loss stays flat.
_EXTEND = 16

#: Default Monte Carlo draws. With one production lot and passive or active
#: balancing, P50 life differs by at most about 1 % between seeds at this count
#: (measured, docs/pack.md; checked in tests/test_pack.py); mixed lots or no
#: balancing widen the distribution and need 4,000-8,000 draws for 2 %.
DEFAULT_DRAWS = 1000

#: Elements (sites x draws x cells) processed at once: a few MB per array keeps the
#: step loop near the CPU caches and bounds memory.
DEFAULT_CHUNK_ELEMENTS = 100_000

#: Other (not most loaded) strings simulated cell by cell; packs with more strings
#: take the mean of their other strings from these (module docstring). One keeps
#: packs of up to two strings exact; against the all-strings simulation it moved the
#: demo's P10/P50/P90 by at most 0.22 % of life at 1,000 draws (three: 0.30 %, the
#: sampling noise), at half the cost of three (docs/pack.md).
EXACT_REST_STRINGS = 1

# ---------------------------------------------------------------------------
# Monte Carlo
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class LifeDistribution:
    """Pack life distribution per site.

    Attributes
    ----------
    p10_years, p50_years, p90_years : numpy.ndarray, shape (n_sites,)
        Percentiles of years to the site's end-of-life threshold (``inf`` = beyond
        the horizon of the input curves). P10 is the early-failure side.
    prob_fail_before_year : numpy.ndarray, shape (horizon_years, n_sites)
        Row ``y - 1``: probability that the pack falls below the threshold before
        age ``y`` years (y = 1..horizon).
    soh_p10_by_month, soh_p50_by_month, soh_p90_by_month : numpy.ndarray
        Percentiles of pack SOH (usable capacity / rated), shape (n_months+1, n_sites).
    draws : int
        Monte Carlo draws per site.
    series_cells, parallel_strings : int
    balancing : str
    notes : tuple of str
        Method and assumptions, for the plan's cautions and the workbook.
    """

    p10_years: np.ndarray
    p50_years: np.ndarray
    p90_years: np.ndarray
    prob_fail_before_year: np.ndarray
    soh_p10_by_month: np.ndarray
    soh_p50_by_month: np.ndarray
    soh_p90_by_month: np.ndarray
    draws: int
    series_cells: int
    parallel_strings: int
    balancing: str
    notes: tuple


def _curves(name, value, n_months_plus_1=None):
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found a non-numeric array, expected loss fractions",
                         source="life") from None
    if a.ndim == 1:
        a = a[:, None]
    if a.ndim != 2 or a.shape[0] < 13:
        raise InputError(
            f"{name}: found shape {np.shape(value)}, expected (n_months+1,) or (n_months+1, n_sites) "
            "with at least 12 months", source="life")
    if n_months_plus_1 is not None and a.shape[0] != n_months_plus_1:
        raise InputError(f"{name}: found {a.shape[0]} months+1, expected {n_months_plus_1} like "
                         "the first curve", source="life")
    if not np.all(np.isfinite(a)):
        raise InputError(f"{name}: found non-finite values, expected finite loss fractions", source="life")
    return a


def _fraction(name, value, upper=None):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a number >= 0", source="life") from None
    if not math.isfinite(x) or x < 0 or (upper is not None and x > upper):
        lim = f" and <= {upper}" if upper is not None else ""
        raise InputError(f"{name}: found {value!r}, expected a number >= 0{lim}", source="life")
    return x


def _quantiles(x, qs, axis):
    """Linear-interpolated quantiles that keep ``inf`` (beyond horizon) as ``inf``."""
    big = 1e30
    q = np.quantile(np.where(np.isinf(x), big, x), qs, axis=axis)
    return np.where(q > 1e20, np.inf, q)


def life_distribution(
    *,
    calendar_loss_frac,
    cycle_loss_frac,
    eol_soh_frac=0.8,
    series_cells,
    parallel_strings=1,
    cell_spread_frac=SPREAD_PRESETS["one-lot"].cell_spread_frac,
    resistance_spread_frac=SPREAD_PRESETS["one-lot"].resistance_spread_frac,
    rate_spread_frac=SPREAD_PRESETS["one-lot"].rate_spread_frac,
    inner_delta_k=1.0,
    activation_energy_j_mol=50e3,
    cycle_activation_energy_j_mol=None,
    reference_temp_c=25.0,
    parallel_imbalance_frac=0.1,
    balancing="passive",
    draws=DEFAULT_DRAWS,
    seed=0,
    model_sets=None,
    calendar_time_exponent=0.5,
    cycle_time_exponent=0.5,
    self_heating_k=0.5,
    resistance_growth_per_loss=2.0,
    depth_stress_exponent=1.0,
    soc_offset_spread_frac=0.01,
    soc_drift_spread_frac_per_year=0.005,
    active_recovery_frac=0.8,
    step_months=6,
    chunk_elements=DEFAULT_CHUNK_ELEMENTS,
):
    """Distribution of pack life from the nominal cell's fade curves.

    Parameters
    ----------
    calendar_loss_frac, cycle_loss_frac : array_like
        Nominal cell's monthly calendar and cycle loss [fraction of rating],
        shape ``(n_months+1,)`` (same for all sites) or ``(n_months+1, n_sites)``;
        the ``FadeResult`` fields of :func:`planner.aging.age_lanes`.
    eol_soh_frac : float or array_like (n_sites,)
        Pack SOH below which the site's requirement is no longer met.
    series_cells : int
        Cells in series per string (see :func:`planner.pack.pack_structure`).
    parallel_strings : int or array_like (n_sites,)
        Strings in parallel, one count for all sites or one per site. The cost does
        not grow with it: the most loaded string and at most ``EXACT_REST_STRINGS``
        others are simulated (strings as units, module docstring).
    cell_spread_frac, resistance_spread_frac, rate_spread_frac : float
        Coefficients of variation of initial capacity (normal), initial resistance
        and aging-rate coefficient (log-normal, median 1). Defaults: one production
        lot, ``SPREAD_PRESETS["one-lot"]``; ``SPREAD_PRESETS["mixed-lots"]`` for
        mixed stock.
    inner_delta_k : float
        Centre cell of a row runs this much warmer than the end cells [K].
    activation_energy_j_mol : float or array_like (n_sites,)
        Ea of the chemistry's calendar law [J/mol], for temperature offsets.
    cycle_activation_energy_j_mol : float or array_like (n_sites,), optional
        Ea of the cycle law [J/mol]; default: the calendar one. For a halving rule
        with step dT use ``R * T_ref * (T_ref + dT) * ln 2 / dT``.
    reference_temp_c : float or array_like (n_sites,)
        Battery temperature the nominal curves stand for [degC] (e.g. the site's
        Arrhenius-effective battery temperature).
    parallel_imbalance_frac : float
        Extra current share of the most loaded parallel string (0.1 = +10 %).
    balancing : {"none", "passive", "active"}
    draws : int
        Monte Carlo draws per site (default 1000).
    seed : int
        Seed (>= 0); results do not depend on the chunking.
    model_sets : list of (calendar, cycle) pairs or FadeResult, optional
        Alternative nominal curves (aging engine's alternative parameter sets),
        each shaped like ``calendar_loss_frac``; objects with ``calendar_loss_frac``
        and ``cycle_loss_frac`` attributes (``FadeResult``) are accepted. Draws are
        spread evenly across the sets (draw ``d`` uses set ``d mod K``), which widens
        the distribution by the disagreement between published models. When given,
        the main curves are used only for their shape check and the sets replace
        them (list the default set too if it should take part).
    calendar_time_exponent, cycle_time_exponent : float
        Time exponents ``z`` of the nominal laws (0.5 for square-root laws; 1 for
        laws linear in time such as Arrhenius life halving).
    self_heating_k : float
        Nominal cell's mean rise from its own I^2 R loss [K]; a cell with relative
        resistance ``r`` and current share ``l`` rises ``self_heating_k * r * l**2``.
    resistance_growth_per_loss : float
        Relative resistance rise per unit capacity loss [-].
    depth_stress_exponent : float
        Exponent ``kappa`` of the depth ratio in the cycle clock.
    soc_offset_spread_frac, soc_drift_spread_frac_per_year : float
        Standard deviations of initial charge offsets [fraction of rating] and of
        their drift [fraction per year] (self-discharge differences); they matter
        only with ``balancing="none"``.
    active_recovery_frac : float
        Share of the weakest-to-mean capacity gap active balancing recovers.
    step_months : int
        Months between re-evaluations of the cell stresses (1 = monthly feedback;
        default 6, which moved P10/P50/P90 by under 0.1 % against monthly steps,
        docs/pack.md). Between steps the pack SOH follows the nominal curve times a
        linearly interpolated pack-to-nominal ratio, so the single-cell case is
        exact at any step.
    chunk_elements : int
        Sites x draws x cells processed at once (memory bound).

    Returns
    -------
    LifeDistribution
        ``parallel_strings`` is the largest count given.
    """
    p = _check_options(
        balancing=balancing, series_cells=series_cells, parallel_strings=parallel_strings,
        draws=draws, seed=seed, step_months=step_months, cell_spread_frac=cell_spread_frac,
        resistance_spread_frac=resistance_spread_frac, rate_spread_frac=rate_spread_frac,
        inner_delta_k=inner_delta_k, parallel_imbalance_frac=parallel_imbalance_frac,
        self_heating_k=self_heating_k, resistance_growth_per_loss=resistance_growth_per_loss,
        depth_stress_exponent=depth_stress_exponent, soc_offset_spread_frac=soc_offset_spread_frac,
        soc_drift_spread_frac_per_year=soc_drift_spread_frac_per_year,
        active_recovery_frac=active_recovery_frac, calendar_time_exponent=calendar_time_exponent,
        cycle_time_exponent=cycle_time_exponent)
    pairs = _curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets)
    site = _site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                        cycle_activation_energy_j_mol, np.size(parallel_strings))
    p["same_ea"] = site["same_ea"]
    n_sites, n_mp1, k_sets = site["n_sites"], pairs[0][0].shape[0], len(pairs)
    n_p = _string_counts(parallel_strings, n_sites, p["imb"])
    # Units: the most loaded string, then the other strings simulated cell by cell.
    p["units"] = 1 + min(EXACT_REST_STRINGS, int(n_p.max()) - 1)
    n_draws, n_cells = p["draws"], p["n_s"] * p["units"]

    # (K, M+1, S) float32 curves; model set of draw d is d mod K (evenly spread).
    cal_k = np.stack([np.broadcast_to(a, (n_mp1, n_sites)) for a, _ in pairs]).astype(np.float32)
    cyc_k = np.stack([np.broadcast_to(b, (n_mp1, n_sites)) for _, b in pairs]).astype(np.float32)
    set_of_draw = np.arange(n_draws) % k_sets
    cells = _cells(n_draws, p["n_s"], p["units"], p["seed"], p["balancing"], p["sig_c"],
                   p["sig_r"], p["sig_k"], p["sig_u0"], p["sig_du"])

    out_years = np.empty((n_sites, n_draws))
    soh_q = np.empty((3, n_mp1, n_sites))
    per_chunk = max(1, int(chunk_elements) // (n_draws * n_cells))
    # The gather tables hold (horizon x extension) months per site and set: bound them.
    per_chunk = min(per_chunk, max(1, 1_000_000 // (k_sets * ((n_mp1 - 1) * _EXTEND + 2))))
    for s0 in range(0, n_sites, per_chunk):
        sl = slice(s0, min(n_sites, s0 + per_chunk))
        out_years[sl], soh_q[:, :, sl] = _simulate_chunk(
            cal_k[:, :, sl], cyc_k[:, :, sl], set_of_draw, site["eol"][sl], site["t_ref"][sl],
            site["ea_cal"][sl], site["ea_cyc"][sl], n_p[sl], cells, p)

    p10, p50, p90 = _quantiles(out_years, [0.1, 0.5, 0.9], axis=1)
    ages = np.arange(1, (n_mp1 - 1) // 12 + 1, dtype=float)
    prob = (out_years[None, :, :] < ages[:, None, None]).mean(axis=2)
    return LifeDistribution(
        p10_years=p10, p50_years=p50, p90_years=p90,
        prob_fail_before_year=prob,
        soh_p10_by_month=soh_q[0], soh_p50_by_month=soh_q[1], soh_p90_by_month=soh_q[2],
        draws=n_draws, series_cells=p["n_s"], parallel_strings=int(n_p.max()), balancing=balancing,
        notes=_notes(p, n_p, k_sets, bool(np.any(np.isinf(out_years)))),
    )


def _check_options(**o):
    """Validated scalar options of :func:`life_distribution` as the internal dict."""
    if o["balancing"] not in BALANCING_KINDS:
        raise InputError(f"balancing: found {o['balancing']!r}, expected one of "
                         f"{', '.join(BALANCING_KINDS)}", source="life")
    counts = np.atleast_1d(np.asarray(o["parallel_strings"], dtype=object)).reshape(-1)
    if counts.size == 0:
        raise InputError("parallel_strings: found an empty list, expected a whole number >= 1",
                         source="life")
    for c in counts:
        _whole("parallel_strings", c, source="life")
    n_s = _whole("series_cells", o["series_cells"], source="life")
    p = dict(
        balancing=o["balancing"], n_s=n_s,
        draws=_whole("draws", o["draws"], source="life"),
        seed=_whole("seed", o["seed"], minimum=0, source="life"),
        step=_whole("step_months", o["step_months"], source="life"),
        sig_c=_fraction("cell_spread_frac", o["cell_spread_frac"], upper=0.3),
        sig_r=_fraction("resistance_spread_frac", o["resistance_spread_frac"], upper=2.0),
        sig_k=_fraction("rate_spread_frac", o["rate_spread_frac"], upper=2.0),
        d_in=_fraction("inner_delta_k", o["inner_delta_k"], upper=40.0),
        # checked against each site's string count in _string_counts
        imb=_fraction("parallel_imbalance_frac", o["parallel_imbalance_frac"]),
        theta=_fraction("self_heating_k", o["self_heating_k"], upper=40.0),
        g_res=_fraction("resistance_growth_per_loss", o["resistance_growth_per_loss"]),
        kappa=_fraction("depth_stress_exponent", o["depth_stress_exponent"], upper=5.0),
        sig_u0=_fraction("soc_offset_spread_frac", o["soc_offset_spread_frac"], upper=0.5),
        sig_du=_fraction("soc_drift_spread_frac_per_year", o["soc_drift_spread_frac_per_year"], upper=0.5),
        eta=_fraction("active_recovery_frac", o["active_recovery_frac"], upper=1.0),
        z_cal=_positive("calendar_time_exponent", o["calendar_time_exponent"], source="life"),
        z_cyc=_positive("cycle_time_exponent", o["cycle_time_exponent"], source="life"),
    )
    p["grad_k"] = inner_temperature_offsets_k(n_s, p["d_in"])
    return p


def _string_counts(parallel_strings, n_sites, imbalance):
    """Strings in parallel per site (n_sites,) int; the imbalance applies where n > 1."""
    n_p = np.asarray(parallel_strings, dtype=float).reshape(-1)
    if n_p.size not in (1, n_sites):
        raise InputError(f"parallel_strings: found {n_p.size} counts, expected one or one per "
                         f"site ({n_sites})", source="life")
    n_p = np.broadcast_to(n_p, (n_sites,)).astype(np.int64)
    if np.any((n_p > 1) & (imbalance > n_p - 1.0)):
        raise InputError(f"parallel_imbalance_frac: found {imbalance!r}, expected a number >= 0 "
                         "and <= parallel_strings - 1", source="life")
    return n_p


def _unit_weights(n_p, units, imbalance):
    """Current share (U, S) of each simulated string unit, and how its SOH counts.

    Unit 0 is the most loaded string (``1 + imbalance`` of an even share, Kirchhoff);
    the others carry the rest evenly (:func:`planner.pack.string_current_shares`).
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


def _curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets):
    """Checked (calendar, cycle) curve pairs, each (M+1, S or 1) float."""
    cal = _curves("calendar_loss_frac", calendar_loss_frac)
    cyc = _curves("cycle_loss_frac", cycle_loss_frac, cal.shape[0])
    if model_sets is None:
        return [(cal, cyc)]
    try:
        model_list = [(m.calendar_loss_frac, m.cycle_loss_frac) if hasattr(m, "cycle_loss_frac")
                      else m for m in model_sets]
        pairs = [(_curves(f"model_sets[{j}] calendar", a, cal.shape[0]),
                  _curves(f"model_sets[{j}] cycle", b, cal.shape[0]))
                 for j, (a, b) in enumerate(model_list)]
    except (TypeError, ValueError):
        raise InputError("model_sets: expected a list of (calendar, cycle) curve pairs",
                         source="life") from None
    if not pairs:
        raise InputError("model_sets: found an empty list, expected at least one pair", source="life")
    return pairs


def _site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                 cycle_activation_energy_j_mol, n_string_counts=1):
    """Per-site arrays (n_sites,) of threshold, reference temperature and Ea."""
    def flat(value, name):
        try:
            return np.asarray(value, dtype=float).reshape(-1)
        except (TypeError, ValueError):
            raise InputError(f"{name}: found {value!r}, expected a number or one per site",
                             source="life") from None

    eol = flat(eol_soh_frac, "eol_soh_frac")
    t_ref = flat(reference_temp_c, "reference_temp_c")
    ea = flat(activation_energy_j_mol, "activation_energy_j_mol")
    same_ea = cycle_activation_energy_j_mol is None
    ea_cyc = ea if same_ea else flat(cycle_activation_energy_j_mol, "cycle_activation_energy_j_mol")
    widths = {a.shape[1] for pair in pairs for a in pair} | {eol.size, t_ref.size, ea.size, ea_cyc.size,
                                                             n_string_counts}
    widths.discard(1)
    if len(widths) > 1:
        raise InputError(f"site count: found inconsistent site counts {sorted(widths)} among curves, "
                         "eol_soh_frac, reference_temp_c, activation energies and parallel_strings, expected one",
                         source="life")
    if not np.all((eol > 0) & (eol < 1.5)):
        raise InputError(f"eol_soh_frac: found {eol_soh_frac!r}, expected fractions in (0, 1.5)",
                         source="life")
    if not np.all((t_ref >= -80) & (t_ref <= 120)):
        raise InputError(f"reference_temp_c: found {reference_temp_c!r}, expected -80..120 degC",
                         source="life")
    if not (np.all(ea >= 0) and np.all(ea_cyc >= 0)):
        raise InputError(f"activation_energy_j_mol: found {activation_energy_j_mol!r} (cycle "
                         f"{cycle_activation_energy_j_mol!r}), expected >= 0 J/mol", source="life")
    n = widths.pop() if widths else 1
    ea_b = np.broadcast_to(ea, (n,))
    return dict(n_sites=n, eol=np.broadcast_to(eol, (n,)), t_ref=np.broadcast_to(t_ref, (n,)),
                ea_cal=ea_b, ea_cyc=ea_b if same_ea else np.broadcast_to(ea_cyc, (n,)),
                same_ea=same_ea)


def _notes(p, n_p, k_sets, beyond):
    """Plain-text method notes for the plan's cautions and the workbook."""
    lo, hi = int(n_p.min()), int(n_p.max())
    strings = f"{p['n_s']}s{hi}p" if lo == hi else f"{p['n_s']}s, {lo}-{hi} strings in parallel"
    notes = [
        f"Monte Carlo over {p['draws']} draws per site (seed {p['seed']}, Latin hypercube), "
        f"pack {strings}, balancing '{p['balancing']}'.",
        f"Cell spread: capacity CV {p['sig_c']:.3g}, resistance CV {p['sig_r']:.3g}, aging-rate "
        f"CV {p['sig_k']:.3g}; inner cells up to {p['d_in']:.3g} K warmer; most loaded string "
        f"+{p['imb']:.3g} current.",
        "Each cell ages along the nominal curves at its own equivalent time (coefficient "
        "multipliers m act as clock m**(1/z)); stresses re-evaluated every "
        f"{p['step']} month(s); the weakest cell limits each string, strings add.",
    ]
    if hi - 1 > EXACT_REST_STRINGS:
        notes.append(f"Strings as units: the most loaded string and {EXACT_REST_STRINGS} others are "
                     "simulated; the mean of more strings keeps their mean and a spread shrunk "
                     "by sqrt(strings) (independent strings).")
    if k_sets > 1:
        notes.append(f"Model uncertainty: draws spread evenly over {k_sets} alternative aging "
                     "parameter sets; the life band includes the disagreement between published models.")
    if beyond:
        notes.append("Some draws stay above the threshold for the whole horizon; their life is "
                     "reported as beyond the horizon (inf).")
    return tuple(notes)


def _simulate_chunk(cal_k, cyc_k, set_of_draw, eol, t_ref_c, ea_cal, ea_cyc, n_p, cells, p):
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
def _cells(n_draws, n_s, units, seed, balancing, sig_c, sig_r, sig_k, sig_u0, sig_du):
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
    up to ``_EXTEND`` x the horizon, then stays flat (a last row with zero slope).
    """
    n_months = curves.shape[1] - 1
    months_ext = np.arange(n_months + 1, n_months * _EXTEND + 1) / n_months
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
    rows = (n_mp1 - 1) * _EXTEND + 2
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


def life_fields(dist, *, prefix="life"):
    """The fixed JSON fields of the life percentiles, one dict per site.

    ``prefix="life"`` gives ``life_p10_years``, ``life_p50_years``, ``life_p90_years``
    (plan JSON); ``prefix="years_to_eol"`` gives ``years_to_eol_p10``,
    ``years_to_eol_p50``, ``years_to_eol_p90`` (``planner life --json``). Years
    beyond the horizon become ``None`` (JSON null).
    """
    def val(x):
        return None if not np.isfinite(x) else round(float(x), 3)

    rows = []
    for i in range(dist.p50_years.size):
        vals = (dist.p10_years[i], dist.p50_years[i], dist.p90_years[i])
        if prefix == "years_to_eol":
            keys = ("years_to_eol_p10", "years_to_eol_p50", "years_to_eol_p90")
        elif prefix == "life":
            keys = ("life_p10_years", "life_p50_years", "life_p90_years")
        else:
            raise InputError(f"prefix: found {prefix!r}, expected 'life' or 'years_to_eol'", source="life")
        rows.append({k: val(v) for k, v in zip(keys, vals)})
    return rows


def life_summary(fade=None, *, calendar_loss_frac=None, cycle_loss_frac=None, prefix="life",
                 **options):
    """One call from the aging engine's curves to the fixed JSON life fields.

    Parameters
    ----------
    fade : FadeResult, optional
        The aging engine's result (its ``calendar_loss_frac`` and
        ``cycle_loss_frac``, one column per site or lane); or pass the two arrays.
    prefix : {"life", "years_to_eol"}
        Key style, see :func:`life_fields`.
    **options
        Everything else of :func:`life_distribution` (``eol_soh_frac``,
        ``series_cells``, ``parallel_strings``, ``cell_spread_frac``, ``balancing``,
        ``draws``, ``seed``, ``model_sets`` ...).

    Returns
    -------
    rows : list of dict
        Per site, the three percentile fields (None = beyond the horizon).
    dist : LifeDistribution
        The full distribution (failure probabilities, SOH bands, notes).
    """
    if fade is not None:
        calendar_loss_frac, cycle_loss_frac = fade.calendar_loss_frac, fade.cycle_loss_frac
    if calendar_loss_frac is None or cycle_loss_frac is None:
        raise InputError("fade: found no fade curves, expected a FadeResult or both "
                         "calendar_loss_frac and cycle_loss_frac", source="life")
    dist = life_distribution(calendar_loss_frac=calendar_loss_frac, cycle_loss_frac=cycle_loss_frac,
                             **options)
    return life_fields(dist, prefix=prefix), dist
