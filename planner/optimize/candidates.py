"""Candidate designs per site: screening and dominance pruning before the fleet model.

A candidate is dominated when another one at the same site costs no more on every count
(pack, labour, disposal), lives at least as long, weighs no more and is never more
likely to fail at any age, under the same price trend, install window and thermal
measure. Dropping it
cannot raise the optimum: in any plan the
dominating design can take its place at no extra cost (a longer life also keeps at least
the same residual value share of a no-dearer pack; NIST HB 135 linear residual).
"""

from __future__ import annotations

import math

import numpy as np

from planner.optimize.problem import Candidate, SiteOptions

_EPS = 1e-9


def whole_years(life_years: float) -> int:
    """Longest whole-year interval a pack of this life can serve (replacement at or before)."""
    return int(math.floor(life_years + _EPS))


def _risk_matrix(cands: list[Candidate], n_ages: int) -> np.ndarray:
    """Cumulative failure probability, shape (n_candidates, n_ages); None -> zeros."""
    out = np.zeros((len(cands), n_ages))
    for i, c in enumerate(cands):
        if c.failure_prob_by_age:
            p = np.asarray(c.failure_prob_by_age, dtype=float)
            out[i] = p[np.minimum(np.arange(n_ages), p.size - 1)]
    return out


def prune_dominated(cands: list[Candidate] | tuple[Candidate, ...]) -> list[Candidate]:
    """Candidates not dominated by another one, in their original order.

    Among exact ties the first one listed is kept. The comparison is vectorised over
    candidate pairs (a site has tens of candidates, not thousands).
    """
    cands = list(cands)
    if len(cands) < 2:
        return cands
    n_ages = 1 + max((len(c.failure_prob_by_age or ()) for c in cands), default=0)
    # pack price and days off air travel together (both are paid per pack and credited
    # by the same residual fraction), so their sum is one count; under a price trend the
    # price and the days off air also count apart (no dearer on both is no dearer in any
    # year of a trend shared by the candidates compared)
    cost = np.array([[c.pack_cost + c.downtime_cost, c.pack_cost if c.price_trend_frac_per_year else 0.0,
                      c.downtime_cost if c.price_trend_frac_per_year else 0.0, c.install_cost, c.disposal_cost,
                      c.mass_kg, -c.life_years] for c in cands], dtype=float)
    feats = np.hstack([cost, _risk_matrix(cands, n_ages)])
    # only candidates of one price trend, one install window and one thermal measure
    # compare (a path keeps its measure: a design of another measure cannot stand in)
    key = [(c.price_trend_frac_per_year, c.first_install_year, c.last_install_year, c.thermal_measure,
            c.measure_price, c.measure_labour_cost) for c in cands]
    same = np.array([[a == b for b in key] for a in key], dtype=bool)
    # le[i, j]: i is no worse than j on every count; lt: strictly better on one
    le = same & np.all(feats[:, None, :] <= feats[None, :, :] + _EPS, axis=2)
    lt = np.any(feats[:, None, :] < feats[None, :, :] - _EPS, axis=2)
    idx = np.arange(len(cands))
    tie_first = le & le.T & (idx[:, None] < idx[None, :])
    dominated = np.any((le & lt) | tie_first, axis=0)
    return [c for c, d in zip(cands, dominated) if not d]


def screen_site(site: SiteOptions, payload_kg_per_trip: float | None) -> tuple[list[Candidate], str, str]:
    """Usable, undominated candidates of a site, or why there are none.

    Returns ``(candidates, reason, limit)``; ``reason`` is empty when candidates remain.
    A candidate needs a life of at least one whole year (replacements fall in whole
    years) and, under a payload limit, a pack light enough for one trip.
    """
    cands = list(site.candidates)
    if not cands:
        reason = site.unserved_reason or f"site {site.site_id}: no candidate design was offered"
        return [], reason, "candidates"
    usable = [c for c in cands if whole_years(c.life_years) >= 1]
    if not usable:
        best = max(c.life_years for c in cands)
        return [], (f"site {site.site_id}: the longest predicted life of any candidate is "
                    f"{best:.2f} years, shorter than one year between replacements"), "life"
    if payload_kg_per_trip is not None:
        light = [c for c in usable if c.mass_kg <= payload_kg_per_trip + _EPS]
        if not light:
            lightest = min(c.mass_kg for c in usable)
            return [], (f"site {site.site_id}: the lightest usable pack weighs {lightest:.1f} kg, "
                        f"more than the {payload_kg_per_trip:.1f} kg payload of a trip"), "payload_kg_per_trip"
        usable = light
    return prune_dominated(usable), "", ""
