"""The chemistry comparison as a reader needs it: what the difference is made of, and where.

Each row of ``chemistry_comparison`` (docs/plan-json.md) is the fleet with every site
forced to one chemistry wherever it can serve, the other sites keeping their best design.
Its present cost is split into equipment (packs, disposal, residual value), trips and
labour, days off air (``downtime``) and failure risk, and the one or two sites that make
most of the difference to the chosen plan are named with their share of days off air.
"""

from __future__ import annotations

from planner.economics import CostBreakdown
from planner.optimize.problem import FleetSolution

#: A second site is named when the first explains less than this share of the difference.
FIRST_DRIVER_SHARE = 0.8


def cost_groups(cost: CostBreakdown) -> dict[str, float]:
    """A cost breakdown in the reader's four groups (their sum is the total)."""
    return {"equipment": cost.packs + cost.disposal + cost.residual,
            "trips_and_labour": cost.trips + cost.labour,
            "downtime": cost.downtime, "failure_risk": cost.failure_risk}


def fleet_cost(solution: FleetSolution) -> CostBreakdown:
    """The cost breakdown of a whole fleet solution (the sum over its sites)."""
    total = CostBreakdown()
    for plan in solution.sites:
        total = total + plan.cost
    return total


def driving_sites(plan: FleetSolution, other: FleetSolution) -> list[dict]:
    """The one or two sites that make most of ``other``'s extra cost over ``plan``.

    Returns ``[{id, chemistry, difference, downtime_difference}]`` (present values);
    empty when ``other`` costs no more than the plan.
    """
    chosen = {p.site_id: p for p in plan.sites}
    diffs = []
    for p in other.sites:
        base = chosen.get(p.site_id)
        if base is None:
            continue
        diffs.append((p.present_cost - base.present_cost, p, base))
    total = sum(d for d, _, _ in diffs)
    if total <= 0:
        return []
    diffs.sort(key=lambda x: (-x[0], x[1].site_id))
    out = []
    for d, p, base in diffs[:2]:
        if d <= 0 or (out and out[0]["difference"] >= FIRST_DRIVER_SHARE * total):
            break
        out.append({"id": p.site_id, "chemistry": p.candidate.chemistry if p.candidate else None,
                    "difference": d, "downtime_difference": p.cost.downtime - base.cost.downtime})
    return out


def comparison_rows(solution: FleetSolution, comparison) -> list[dict]:
    """``chemistry_comparison`` rows of the plan JSON (see docs/plan-json.md)."""
    rows = []
    for r in comparison:
        full = r.with_others or r.solution
        chem_at = {p.site_id: p.candidate.chemistry for p in full.sites if p.candidate is not None}
        unserved = [u.site_id for u in r.unserved]
        rows.append({
            "chemistry": r.chemistry, "total_present_cost": r.total_present_cost,
            "total_with_others_present_cost": r.total_with_others_present_cost,
            "status": r.status, "sites_served": r.sites_served, "sites_unserved": unserved,
            "kept_by_other": {i: chem_at[i] for i in unserved if i in chem_at},
            **cost_groups(fleet_cost(full)),
            "driving_sites": driving_sites(solution, full),
        })
    return rows
