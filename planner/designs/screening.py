"""Screens of evaluated designs (:mod:`planner.designs.evaluation`): which designs can
never be a site's choice, so the pack Monte Carlo and the optimizer may skip them.
"""

from __future__ import annotations

import numpy as np

from planner.designs.candidates import Outcome


def mark_dominated(outcomes: list[Outcome], price_of) -> None:
    """Flag designs another design of the same site and chemistry beats on every count
    (price, mass, life, unserved load), with one strictly better (ties keep the first
    listed). Chemistries are kept apart so the per-chemistry comparison stays whole."""
    by_site: dict[tuple[int, str], list[Outcome]] = {}
    for o in outcomes:
        if not o.design.is_existing and o.eol_soh_frac < 1.0:
            by_site.setdefault((o.design.site_index, o.design.chemistry), []).append(o)
    for group in by_site.values():
        feats = np.array([[price_of(o.design.chemistry, o.design.pack.capacity_wh),
                           o.design.pack.mass_kg, -o.life_years, o.unserved_wh_per_year]
                          for o in group])
        le = np.all(feats[:, None, :] <= feats[None, :, :] + 1e-9, axis=2)
        lt = np.any(feats[:, None, :] < feats[None, :, :] - 1e-9, axis=2)
        idx = np.arange(len(group))
        tie_first = le & le.T & (idx[:, None] < idx[None, :])
        for o, dominated in zip(group, np.any((le & lt) | tie_first, axis=0)):
            o.dominated = bool(dominated)


# The pack Monte Carlo and the optimizer see a design only if its present cost at its
# site, with no trip cost, is within this share above the cheapest full-trip cost of the
# site's designs of its chemistry (costing.standalone_cost_bounds); the share leaves
# room for the failure risk cost the Monte Carlo adds to the best design. Comparing
# within a chemistry keeps what the chemistry comparison (every site forced to one
# chemistry) can choose.
RELEVANCE_FRAC = 0.10


def mark_far_from_best(outcomes: list[Outcome], cost_bounds_of) -> None:
    """Flag designs that cannot be a site's choice, in the plan or in the chemistry
    comparison: their cost without any trip exceeds, by more than ``RELEVANCE_FRAC``, the
    cost of the best design of their chemistry at the site with a whole trip per
    replacement. A fleet plan shares trips, so a site's cost with a design lies between
    the two bounds; swapping in the best design then cannot raise the fleet's cost by
    more than the share (fleet-wide limits aside)."""
    by_site: dict[tuple[int, str], list[tuple[Outcome, float, float]]] = {}
    for o in outcomes:
        if not o.design.is_existing and o.eol_soh_frac < 1.0 and not o.dominated \
                and o.life_years >= 1.0:
            low, high = cost_bounds_of(o)
            by_site.setdefault((o.design.site_index, o.design.chemistry), []).append((o, low, high))
    for group in by_site.values():
        best_high = min(high for _, _, high in group)
        for o, low, _ in group:
            o.far_from_best = low > (1.0 + RELEVANCE_FRAC) * best_high
