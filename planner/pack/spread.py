"""Pack life spread: a seeded Monte Carlo over cells, strings and model sets.

A pack's cells differ from the day they are made, run at different temperatures and
carry different currents, so the pack fades faster than its nominal cell. This module
turns the nominal cell's fade curves from the aging engine into a distribution of
pack life, vectorised over sites x draws x cells. The pack's structure and the
physical building blocks it uses are in :mod:`planner.pack.structure`; the cell-by-cell
simulation (draws, equivalent-time aging, pack SOH) is in :mod:`planner.pack.spread_cells`,
the checks of the inputs in :mod:`planner.pack.spread_inputs`. This module holds the
interface and the percentiles, failure probabilities and notes read off the draws.

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

from dataclasses import dataclass

import numpy as np

from planner.errors import InputError
from planner.pack.spread_cells import EXTEND, cached_cells, simulate_chunk
from planner.pack.spread_inputs import check_options, curve_pairs, site_inputs, string_counts
from planner.pack.structure import SPREAD_PRESETS

__all__ = [
    "DEFAULT_DRAWS",
    "EXACT_REST_STRINGS",
    "LifeDistribution",
    "life_distribution",
    "life_fields",
    "life_summary",
]

#: Default Monte Carlo draws. With one production lot and passive or active
#: balancing, P50 life differs by at most about 1 % between seeds at this count
#: (measured, docs/pack.md; checked in tests/test_pack_structure.py); mixed lots or no
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
        Cells in series per string (see :func:`planner.pack.structure.pack_structure`).
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
    p = check_options(
        balancing=balancing, series_cells=series_cells, parallel_strings=parallel_strings,
        draws=draws, seed=seed, step_months=step_months, cell_spread_frac=cell_spread_frac,
        resistance_spread_frac=resistance_spread_frac, rate_spread_frac=rate_spread_frac,
        inner_delta_k=inner_delta_k, parallel_imbalance_frac=parallel_imbalance_frac,
        self_heating_k=self_heating_k, resistance_growth_per_loss=resistance_growth_per_loss,
        depth_stress_exponent=depth_stress_exponent, soc_offset_spread_frac=soc_offset_spread_frac,
        soc_drift_spread_frac_per_year=soc_drift_spread_frac_per_year,
        active_recovery_frac=active_recovery_frac, calendar_time_exponent=calendar_time_exponent,
        cycle_time_exponent=cycle_time_exponent)
    pairs = curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets)
    site = site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                       cycle_activation_energy_j_mol, np.size(parallel_strings))
    p["same_ea"] = site["same_ea"]
    n_sites, n_mp1, k_sets = site["n_sites"], pairs[0][0].shape[0], len(pairs)
    n_p = string_counts(parallel_strings, n_sites, p["imb"])
    # Units: the most loaded string, then the other strings simulated cell by cell.
    p["units"] = 1 + min(EXACT_REST_STRINGS, int(n_p.max()) - 1)
    n_draws, n_cells = p["draws"], p["n_s"] * p["units"]

    # (K, M+1, S) float32 curves; model set of draw d is d mod K (evenly spread).
    cal_k = np.stack([np.broadcast_to(a, (n_mp1, n_sites)) for a, _ in pairs]).astype(np.float32)
    cyc_k = np.stack([np.broadcast_to(b, (n_mp1, n_sites)) for _, b in pairs]).astype(np.float32)
    set_of_draw = np.arange(n_draws) % k_sets
    cells = cached_cells(n_draws, p["n_s"], p["units"], p["seed"], p["balancing"], p["sig_c"],
                         p["sig_r"], p["sig_k"], p["sig_u0"], p["sig_du"])

    out_years = np.empty((n_sites, n_draws))
    soh_q = np.empty((3, n_mp1, n_sites))
    per_chunk = max(1, int(chunk_elements) // (n_draws * n_cells))
    # The gather tables hold (horizon x extension) months per site and set: bound them.
    per_chunk = min(per_chunk, max(1, 1_000_000 // (k_sets * ((n_mp1 - 1) * EXTEND + 2))))
    for s0 in range(0, n_sites, per_chunk):
        sl = slice(s0, min(n_sites, s0 + per_chunk))
        out_years[sl], soh_q[:, :, sl] = simulate_chunk(
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
