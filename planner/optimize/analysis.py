"""Re-solves around a plan: per-chemistry comparison and sensitivity cases."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from planner.optimize.fleet import solve_fleet
from planner.optimize.problem import FleetProblem, FleetSolution, Unserved


@dataclass
class ChemistryResult:
    """Best plan if every site were forced to ``chemistry``. ``total_present_cost``
    covers the sites it can serve; ``unserved`` lists the others with the reason."""

    chemistry: str
    total_present_cost: float
    status: str
    sites_served: int
    unserved: list[Unserved]
    site_costs: dict[str, float]
    solution: FleetSolution
    # The fleet total when the sites this chemistry cannot serve keep their best design
    # of another chemistry (equal to total_present_cost when it serves every site).
    total_with_others_present_cost: float = float("nan")
    # The plan behind total_with_others_present_cost (``solution`` when it serves every site).
    with_others: FleetSolution | None = None


@dataclass
class SensitivityResult:
    """One re-solved case: total cost, its change against the base, designs changed."""

    case: str
    total_present_cost: float
    change_frac: float
    designs_changed: int
    status: str


def restrict_chemistry(problem: FleetProblem, chemistry: str, *,
                       others_keep_all: bool = False) -> FleetProblem:
    """The same problem with every site's candidates cut to one chemistry.

    With ``others_keep_all``, a site that has no candidate of that chemistry keeps all of
    its candidates, so the fleet total stays comparable across chemistries.
    """
    sites = []
    for s in problem.sites:
        cands = [c for c in s.candidates if c.chemistry == chemistry]
        if not cands and others_keep_all:
            sites.append(s)
            continue
        reason = s.unserved_reason if cands else f"site {s.site_id}: no candidate of chemistry {chemistry}"
        sites.append(replace(s, candidates=cands, unserved_reason=reason))
    return replace(problem, sites=sites)


def compare_chemistries(problem: FleetProblem, chemistries=None, *,
                        time_limit_s: float | None = None) -> list[ChemistryResult]:
    """Best plan per chemistry (whole fleet forced to it), in the order given (default:
    every chemistry offered, sorted). ``time_limit_s`` overrides the limit of each re-solve."""
    found = sorted({c.chemistry for s in problem.sites for c in s.candidates})
    if time_limit_s is not None:
        problem = replace(problem, time_limit_s=time_limit_s)
    out = []
    for chem in (chemistries or found):
        sol = solve_fleet(restrict_chemistry(problem, chem))
        others = sol
        if sol.unserved:
            others = solve_fleet(restrict_chemistry(problem, chem, others_keep_all=True))
        out.append(ChemistryResult(
            chemistry=chem, total_present_cost=sol.objective, status=sol.status,
            sites_served=len(sol.sites), unserved=list(sol.unserved),
            site_costs={p.site_id: p.present_cost for p in sol.sites}, solution=sol,
            total_with_others_present_cost=others.objective, with_others=others))
    return out


def compare_solutions(case: str, base: FleetSolution, other: FleetSolution) -> SensitivityResult:
    """Change in total cost and number of sites whose chosen design differs."""
    base_design = {p.site_id: (p.candidate.design_id if p.candidate else None) for p in base.sites}
    changed = sum(1 for p in other.sites
                  if base_design.get(p.site_id, "<absent>") != (p.candidate.design_id if p.candidate else None))
    denom = abs(base.objective) if base.objective else float("nan")
    change = (other.objective - base.objective) / denom if math.isfinite(denom) else float("nan")
    return SensitivityResult(case=case, total_present_cost=other.objective, change_frac=change,
                             designs_changed=changed, status=other.status)


def scale_trip_costs(problem: FleetProblem, factor: float) -> FleetProblem:
    """Trip mobilisation costs (per region) multiplied by ``factor``."""
    return replace(problem, trip_cost_by_region={k: v * factor for k, v in problem.trip_cost_by_region.items()})


def sensitivity(problem: FleetProblem, base: FleetSolution | None = None, *,
                time_limit_s: float | None = None) -> list[SensitivityResult]:
    """Trip cost x0.5 and x2, discount rate -2 and +2 points (floored at 0).

    The warming case needs the aging stage re-run: build that modified problem in the
    pipeline and pass it to :func:`compare_solutions`. ``time_limit_s`` overrides the
    limit of each re-solve.
    """
    base = base or solve_fleet(problem)
    if time_limit_s is not None:
        problem = replace(problem, time_limit_s=time_limit_s)
    cases = [
        ("trip cost x0.5", scale_trip_costs(problem, 0.5)),
        ("trip cost x2", scale_trip_costs(problem, 2.0)),
        ("discount rate -2 points", replace(problem, discount_rate_frac=max(0.0, problem.discount_rate_frac - 0.02))),
        ("discount rate +2 points", replace(problem, discount_rate_frac=problem.discount_rate_frac + 0.02)),
    ]
    return [compare_solutions(name, base, solve_fleet(p)) for name, p in cases]
