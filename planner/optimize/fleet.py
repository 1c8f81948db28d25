"""The fleet plan's entry point: checks the problem, screens each site's candidates,
picks the method and assembles the answer.

Two models solve the same problem: the path model by trip group
(:mod:`planner.optimize.path_model`) and column generation over site schedules
(:mod:`planner.optimize.column_plan`, with the pricer and master LP in
:mod:`planner.optimize.colgen`). Both read site plans and trips from the paths they
choose with :mod:`planner.optimize.trip_plans`.
"""

from __future__ import annotations

import math
import time

from planner.errors import InputError
from planner.optimize.candidates import screen_site, whole_years
from planner.optimize.column_plan import solve_columns
from planner.optimize.path_model import solve_paths
from planner.optimize.problem import (
    FleetProblem,
    FleetSolution,
    MethodAnswer,
    SiteOptions,
    Unserved,
)
from planner.optimize.solver import gap, highs_available, pick_solver

# above this many arcs in the whole fleet, "auto" switches from the full path model to
# column generation (measured: PuLP builds about 30,000 columns per second here)
AUTO_COLUMNS_ABOVE_ARCS = 60_000


def _validate(problem: FleetProblem) -> None:
    src = "fleet problem"
    if int(problem.horizon_years) < 1:
        raise InputError(f"horizon_years is {problem.horizon_years}, expected a whole number >= 1", source=src)
    if not problem.discount_rate_frac > -1.0:
        raise InputError(f"discount_rate_frac is {problem.discount_rate_frac}, expected > -1", source=src)
    for s in problem.sites:
        if s.region not in problem.trip_cost_by_region:
            raise InputError(f"site {s.site_id}: region {s.region!r} has no trip cost in trip_cost_by_region "
                             f"(known: {', '.join(sorted(problem.trip_cost_by_region)) or 'none'})", source=src)
        bad = [m for m in s.access_months if not 1 <= int(m) <= 12]
        if bad:
            raise InputError(f"site {s.site_id}: access month {bad[0]} is outside 1-12", source=src)
    _check_finite_money(problem, src)
    ids = [s.site_id for s in problem.sites]
    if len(set(ids)) != len(ids):
        dup = sorted({i for i in ids if ids.count(i) > 1})[0]
        raise InputError(f"site id {dup!r} appears more than once", source=src)


def _check_finite_money(problem: FleetProblem, src: str) -> None:
    """Every amount must be a finite number before any model is built (an overflowed
    amount makes the solver search without end)."""
    amounts = [(f"trip cost of region {r!r}", v) for r, v in problem.trip_cost_by_region.items()]
    amounts.append(("annual_budget", problem.annual_budget or 0.0))
    for s in problem.sites:
        amounts += [(f"site {s.site_id}: site_visit_cost", s.site_visit_cost),
                    (f"site {s.site_id}: downtime_cost_per_day", s.downtime_cost_per_day),
                    (f"site {s.site_id}: unplanned_trip_cost", s.unplanned_trip_cost)]
        if s.existing is not None:
            amounts.append((f"site {s.site_id}: disposal of the existing pack", s.existing.disposal_cost))
        for c in s.candidates:
            amounts += [(f"site {s.site_id}, design {c.design_id}: {name}", getattr(c, name))
                        for name in ("pack_cost", "install_cost", "disposal_cost")]
    for what, value in amounts:
        if not math.isfinite(float(value)):
            raise InputError(f"{what} is {value}; expected a finite amount (money fields are "
                             "bounded, docs/study-file.md)", source=src)


def _keeps_to_horizon(site: SiteOptions, h: int) -> bool:
    return site.existing is not None and site.existing.remaining_life_years >= h - 1e-9


def solve_fleet(problem: FleetProblem) -> FleetSolution:
    """Lowest present-cost design and replacement schedule for every site, and the trips.

    Returns a :class:`FleetSolution`; an infeasible study is an answer (status
    "infeasible" with the unserved sites and binding limits), not an exception.
    Raises :class:`planner.errors.InputError` for malformed problems.
    """
    t0 = time.perf_counter()
    _validate(problem)
    h = int(problem.horizon_years)
    solver_name = pick_solver(problem.solver)

    unserved: list[Unserved] = []
    served: list[SiteOptions] = []
    cands = {}
    for s in problem.sites:
        keep = _keeps_to_horizon(s, h)
        usable, reason, limit = screen_site(s, problem.payload_kg_per_trip)
        if not s.access_months and not keep:
            unserved.append(Unserved(s.site_id, f"site {s.site_id}: no access month in which a crew can reach it",
                                     "access"))
            continue
        if not s.access_months:
            usable = []
        if not usable and not keep:
            unserved.append(Unserved(s.site_id, reason, limit))
            continue
        served.append(s)
        cands[s.site_id] = usable

    method = (problem.method or "auto").lower()
    if method not in ("auto", "path", "columns"):
        raise InputError(f"method is {problem.method!r}, expected 'auto', 'path' or 'columns'",
                         source="fleet problem")
    if method == "auto":
        arcs = sum(min(whole_years(c.life_years), h) * h for s in served for c in cands[s.site_id])
        method = "columns" if arcs > AUTO_COLUMNS_ABOVE_ARCS else "path"
    if method == "columns" and not highs_available():
        method = "path"  # the pricing master needs highspy; the path model runs on CBC too
    deadline = t0 + float(problem.time_limit_s)
    if method == "columns" and served:
        found = solve_columns(problem, served, cands, deadline)
        gap_without_plans = float("nan")
    else:
        found = solve_paths(problem, served, cands, deadline)
        gap_without_plans = 0.0 if not (unserved or found.unserved) else float("nan")
    return _solution(problem, t0, solver_name, found, unserved + found.unserved,
                     gap_without_plans=gap_without_plans)


def _solution(problem, t0, solver_name, found: MethodAnswer, unserved, *,
              gap_without_plans) -> FleetSolution:
    """The answer of either method: fleet-wide gap status, unserved sites make it
    infeasible, trips and plans in a stable order."""
    objective, bound, plans, trips = found.objective, found.bound, found.plans, found.trips
    status = _within_gap(found.status, objective, bound, problem.gap_rel_frac)
    if unserved:
        status = "infeasible"
    trips.sort(key=lambda t: (t.year, t.region, t.month))
    order = {s.site_id: i for i, s in enumerate(problem.sites)}
    plans.sort(key=lambda p: order[p.site_id])
    return FleetSolution(status=status, objective=objective, best_bound=bound,
                         gap_frac=gap(objective, bound) if plans else gap_without_plans,
                         solver_name=solver_name, seconds=time.perf_counter() - t0,
                         decomposition=found.decomposition, sites=plans, trips=trips,
                         unserved=unserved, binding_limits=found.binding,
                         build_seconds=found.build_seconds)


def _within_gap(status: str, objective: float, bound: float, gap_rel_frac: float) -> str:
    """"optimal" means proved within the relative gap for the whole fleet: a plan stopped
    early in one group is still optimal in that sense when the fleet-wide bound proves it."""
    if status == "feasible" and math.isfinite(objective) and math.isfinite(bound):
        if gap(objective, bound) <= gap_rel_frac:
            return "optimal"
    return status
