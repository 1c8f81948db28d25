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
                        time_limit_s: float | None = None,
                        base: FleetSolution | None = None) -> list[ChemistryResult]:
    """Best plan per chemistry (whole fleet forced to it), in the order given (default:
    every chemistry offered, sorted). ``time_limit_s`` overrides the limit of each re-solve;
    ``base`` (the unrestricted plan) spares the re-solve it already answers."""
    found = sorted({c.chemistry for s in problem.sites for c in s.candidates})
    return [compare_chemistry(problem, chem, base=base, time_limit_s=time_limit_s)
            for chem in (chemistries or found)]


def compare_chemistry(problem: FleetProblem, chemistry: str, *, base: FleetSolution | None = None,
                      time_limit_s: float | None = None) -> ChemistryResult:
    """Best plan with every site forced to ``chemistry`` (one chemistry of the comparison).

    When the unrestricted plan ``base`` already puts that chemistry at every site and
    every site offers it, ``base`` is the answer: it is feasible for the restricted
    problem, and no restricted plan can cost less than the unrestricted optimum.
    """
    if time_limit_s is not None:
        problem = replace(problem, time_limit_s=time_limit_s)
    sol = base if base is not None and _uses_only(base, problem, chemistry) else None
    if sol is None:
        sol = solve_fleet(restrict_chemistry(problem, chemistry))
    others = sol
    if sol.unserved:
        others = solve_fleet(restrict_chemistry(problem, chemistry, others_keep_all=True))
    return ChemistryResult(
        chemistry=chemistry, total_present_cost=sol.objective, status=sol.status,
        sites_served=len(sol.sites), unserved=list(sol.unserved),
        site_costs={p.site_id: p.present_cost for p in sol.sites}, solution=sol,
        total_with_others_present_cost=others.objective, with_others=others)


def _uses_only(solution: FleetSolution, problem: FleetProblem, chemistry: str) -> bool:
    offered = all(any(c.chemistry == chemistry for c in s.candidates) for s in problem.sites)
    chosen = all(p.candidate is not None and p.candidate.chemistry == chemistry
                 for p in solution.sites)
    return (offered and chosen and not solution.unserved
            and len(solution.sites) == len(problem.sites))


def compare_solutions(case: str, base: FleetSolution, other: FleetSolution) -> SensitivityResult:
    """Change in total cost and number of sites whose chosen design differs."""
    base_design = {p.site_id: (p.candidate.design_id if p.candidate else None) for p in base.sites}
    changed = sum(1 for p in other.sites
                  if base_design.get(p.site_id, "<absent>") != (p.candidate.design_id if p.candidate else None))
    denom = abs(base.objective) if base.objective else float("nan")
    change = (other.objective - base.objective) / denom if math.isfinite(denom) else float("nan")
    return SensitivityResult(case=case, total_present_cost=other.objective, change_frac=change,
                             designs_changed=changed, status=other.status)


def same_method(problem: FleetProblem, base: FleetSolution) -> FleetProblem:
    """``problem`` solved the way ``base`` was: a re-solve of a fleet solved by column
    generation uses it too, even when the restricted problem is small enough for the
    path model ("auto"), which measured 10-30x slower on the restricted problems of a
    100-site fleet (benchmarks/bench_plan.py) for the same objective within the gap."""
    if problem.method == "auto" and base.decomposition.startswith("column generation"):
        return replace(problem, method="columns")
    return problem


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
    return [compare_solutions(name, base, solve_fleet(p))
            for name, p in sensitivity_problems(problem, time_limit_s=time_limit_s)]


def sensitivity_problems(problem: FleetProblem, *,
                         time_limit_s: float | None = None) -> list[tuple[str, FleetProblem]]:
    """The (case name, modified problem) pairs of :func:`sensitivity`, to solve anywhere."""
    if time_limit_s is not None:
        problem = replace(problem, time_limit_s=time_limit_s)
    return [
        ("trip cost x0.5", scale_trip_costs(problem, 0.5)),
        ("trip cost x2", scale_trip_costs(problem, 2.0)),
        ("discount rate -2 points", replace(problem, discount_rate_frac=_lower_rate(problem.discount_rate_frac))),
        ("discount rate +2 points", replace(problem, discount_rate_frac=problem.discount_rate_frac + 0.02)),
    ]


def _lower_rate(rate: float) -> float:
    """Two points below ``rate``, not below 0 (nor, for a rate already negative, below the
    lowest real rate a study may use: planner.economics.MIN_REAL_RATE_FRAC)."""
    from planner.economics import MIN_REAL_RATE_FRAC

    return max(MIN_REAL_RATE_FRAC if rate < 0.0 else 0.0, rate - 0.02)
