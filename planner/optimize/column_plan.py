"""Column generation for the fleet plan: site schedules priced per trip group, then an
integer problem over the generated schedules.

The master LP and the trip-year local search live in :mod:`planner.optimize.colgen`,
the pricer in :mod:`planner.optimize.pricing`; this module runs them over the trip
groups (one master per group, or one over all groups when fleet-wide limits bind them)
and reads the plans.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace
from typing import NamedTuple

import numpy as np

from planner import economics as ec
from planner.optimize.colgen import (
    MasterResult,
    column_coefficients,
    generate_columns,
    group_costs,
    polish_trip_years,
)
from planner.optimize.path_model import fleet_limit_texts
from planner.optimize.pricing import Column, Pricer
from planner.optimize.problem import MethodAnswer, SitePlan, Trip, Unserved
from planner.optimize.schedule import SiteGraphs, build_graphs
from planner.optimize.solver import SolveReport, gap, solve_milp
from planner.optimize.trip_plans import TripGroup, plans_and_trips, trip_groups

JOINT_MASTER = "column generation with one master over all trip groups and the fleet-wide rows"


class PlansAndTrips(NamedTuple):
    """Site plans and trips read from chosen paths, group after group."""

    plans: list[SitePlan]
    trips: list[Trip]


@dataclass(frozen=True)
class _Block:
    """Trip groups solved together: the time graphs of their sites and their trips."""

    groups: list[TripGroup]
    graphs: SiteGraphs
    site_group: np.ndarray  # block-local trip group of each site of ``graphs``
    trip_cost: np.ndarray  # one trip of each group
    is_open: np.ndarray  # False for groups that never travel (sites needing no visit)


class _WeakGroup(NamedTuple):
    """A trip group the integer step left above the gap, with its trip years."""

    group: TripGroup
    trip_years: np.ndarray


@dataclass
class _Tally:
    """What the blocks solved so far add up to (filled block by block)."""

    status: str = "optimal"
    bound: float = 0.0
    plans: list[SitePlan] = field(default_factory=list)
    trips: list[Trip] = field(default_factory=list)
    build_seconds: float = 0.0
    rounds: int = 0
    n_cols: int = 0
    converged: bool = True
    stops: set[str] = field(default_factory=set)  # why pricing stopped early in some block
    weak: list[_WeakGroup] = field(default_factory=list)
    lost: list[Unserved] = field(default_factory=list)
    rounded: int = 0  # blocks settled by the rounded LP trip years

    def count_pricing(self, mr: MasterResult) -> None:
        self.rounds = max(self.rounds, mr.iterations)
        self.n_cols += len(mr.columns)
        self.converged &= mr.converged
        if not mr.converged:
            self.stops.add(mr.stop)

    def add(self, found: PlansAndTrips) -> None:
        self.plans += found.plans
        self.trips += found.trips


def _fleet_rows(problem) -> bool:
    """Crew or budget limits: rows that bind every trip group together."""
    return problem.crew_site_visits_per_year is not None or problem.annual_budget is not None


def _side_rows(problem) -> bool:
    """Rows beside the visit rows (fleet-wide or payload): a site's cheapest path given
    the trip years is then not necessarily its best schedule."""
    return _fleet_rows(problem) or problem.payload_kg_per_trip is not None


def solve_columns(problem, served, cands, deadline) -> MethodAnswer:
    """Column generation, then integer problems over the generated schedules.

    Without fleet-wide limits every trip group has its own master LP and integer step
    (many small LPs re-solved warm are cheaper than one block-diagonal LP: measured
    0.4 s against 0.8 s per pricing round for 300 sites). With crew or budget limits
    one master holds every group and the fleet-wide rows, so their prices reach every
    site.
    """
    groups = trip_groups(served)
    blocks = [groups] if _fleet_rows(problem) else [[g] for g in groups]
    tally = _Tally()
    # Each block is solved to the end (columns, then its integer step) before the next is
    # built, so memory holds one block's time graph, columns and integer matrix at a time
    # (a 10,000-site fleet has some 250 trip groups of about 10 MB each).
    for bi, block_groups in enumerate(blocks):
        blocks_left = len(blocks) - bi
        t_build = time.perf_counter()
        block = _build_block(problem, served, cands, block_groups)
        tally.build_seconds += time.perf_counter() - t_build
        mr = _price_block(problem, block, deadline, blocks_left)
        tally.count_pricing(mr)
        if mr.infeasible:
            return _limits_unmet(problem, block, mr, deadline, tally.build_seconds)
        tally.bound += mr.lower_bound
        ended = _settle_block(problem, block, mr, deadline, blocks_left, tally)
        if ended is not None:
            return ended
    if tally.weak:
        # groups the integer step over columns left above the gap: local search on their
        # trip years, all such groups at once
        tally.add(_polish_weak_groups(problem, served, cands, tally.weak, deadline))
    return _answer(problem, tally, len(groups))


def _build_block(problem, served, cands, groups: list[TripGroup]) -> _Block:
    """Time graphs of the sites of ``groups`` and each group's trip cost."""
    sites = [served[i] for g in groups for i in g.members]
    site_group = np.concatenate([np.full(len(g.members), j) for j, g in enumerate(groups)]).astype(np.int64)
    graphs = build_graphs(sites, [cands[s.site_id] for s in sites], horizon_years=int(problem.horizon_years),
                          rate=float(problem.discount_rate_frac), residual_value=problem.residual_value,
                          design_changes=problem.design_changes)
    trip_cost = np.array([float(problem.trip_cost_by_region[g.region]) for g in groups])
    is_open = np.array([g.month != 0 for g in groups], dtype=bool)
    return _Block(groups, graphs, site_group, trip_cost, is_open)


def _price_block(problem, block: _Block, deadline: float, blocks_left: int) -> MasterResult:
    """Column generation over one block within its share of the time left."""
    # column generation may use 80 % of the time left (its bound is what proves the
    # gap; the integer step is often a rounding), less a reserve for each block still
    # to come: an even share per block (0.19 s at 10,000 sites and a 60 s limit, the
    # 0.5 s floor) stopped pricing in some groups and made the plan depend on the
    # machine's speed, although the whole solve ended well within the limit
    share = _time_share(0.8 * (deadline - time.perf_counter()), blocks_left, 0.5)
    return generate_columns(block.graphs, block.site_group, block.trip_cost, block.is_open,
                            rate=float(problem.discount_rate_frac), payload_kg=problem.payload_kg_per_trip,
                            crew=problem.crew_site_visits_per_year, budget=problem.annual_budget,
                            time_limit_s=share, bound_gap_frac=0.2 * problem.gap_rel_frac)


def _settle_block(problem, block: _Block, mr: MasterResult, deadline: float, blocks_left: int,
                  tally: _Tally) -> MethodAnswer | None:
    """Plans of one block from its columns, added to ``tally``: the rounded LP trip
    years when they prove the gap, else an integer problem over the columns. Returns
    the answer instead when no integer plan over the columns meets the fleet rows."""
    side = _side_rows(problem)
    if not side and mr.y_lp is not None:
        found = _rounded_lp_plans(problem, block, mr)
        if found is not None:
            tally.add(found)
            tally.rounded += 1
            return None
    rep = _solve_integer(problem, block, mr.columns, deadline, blocks_left)
    tally.build_seconds += rep.build_seconds
    if rep.values is None and rep.status == "infeasible" and _fleet_rows(problem) and mr.lp_feasible:
        return _integer_infeasible(problem, mr, tally.build_seconds)
    if rep.values is None:
        # no integer plan in time for this block: its sites are reported, not dropped
        region = [g.region for g in block.groups]
        tally.lost += [Unserved(s.site_id, f"site {s.site_id}: no plan found for trip group {region[j]} "
                                f"within the time limit", "time_limit")
                       for s, j in zip(block.graphs.sites, block.site_group)]
        tally.status = "infeasible"
        tally.bound = float("nan")
        return None
    if rep.status == "feasible" and tally.status == "optimal":
        tally.status = "feasible"
    y, found = _integer_plans(problem, block, mr.columns, rep.values, side)
    if not side and gap(sum(p.present_cost for p in found.plans), mr.lower_bound) > problem.gap_rel_frac:
        tally.weak.append(_WeakGroup(block.groups[0], y[0]))  # improved by local search
        return None
    tally.add(found)
    return None


def _rounded_lp_plans(problem, block: _Block, mr: MasterResult) -> PlansAndTrips | None:
    """The master LP's trip years, rounded, often prove the gap already: then the plans
    they give, with no integer problem; None when they do not."""
    rate = float(problem.discount_rate_frac)
    y = (mr.y_lp > 0.5).astype(float)
    pricer = Pricer(block.graphs)
    cost = group_costs(pricer, block.site_group, y, block.trip_cost, rate)
    if not (np.all(np.isfinite(cost)) and gap(float(cost.sum()), mr.lower_bound) <= problem.gap_rel_frac):
        return None
    return _plans_for_trip_years(block, y, rate, pricer)


def _solve_integer(problem, block: _Block, cols: list[Column], deadline: float,
                   blocks_left: int) -> SolveReport:
    """Integer problem over one block's columns (measured: one block-diagonal model over
    14 groups took 24 s in HiGHS against 5 s for the 14 models one by one)."""
    m = _column_matrix(block.graphs, cols, np.arange(len(block.graphs.sites)), block.site_group,
                       np.arange(len(block.groups)), block.trip_cost, block.is_open, problem)
    return solve_milp(m["c"], m["rows"], m["cols"], m["vals"], m["lo"], m["hi"], m["col_ub"], m["integer"],
                      solver=problem.solver,
                      time_limit_s=_time_share(deadline - time.perf_counter(), blocks_left, 1.0),
                      gap_rel_frac=problem.gap_rel_frac)


def _integer_plans(problem, block: _Block, cols: list[Column], values: np.ndarray,
                   side: bool) -> tuple[np.ndarray, PlansAndTrips]:
    """Trip years (groups x years) and plans of an integer solution over the columns."""
    rate = float(problem.discount_rate_frac)
    y = np.rint(values[len(cols):]).reshape(len(block.groups), int(problem.horizon_years))
    if side:
        chosen = [cols[j] for j in np.nonzero(values[:len(cols)] > 0.5)[0]]
        return y, _read_plans(block, chosen, y, rate)
    # trips fixed: every site takes its exact cheapest path over its group's trip
    # years in its full time graph (never worse than the columns the MIP saw)
    return y, _plans_for_trip_years(block, y, rate)


def _plans_for_trip_years(block: _Block, y: np.ndarray, rate: float,
                          pricer: Pricer | None = None) -> PlansAndTrips:
    """Plans and trips once the trip years ``y`` (groups x years) are fixed: every site
    takes its cheapest path that visits only in its group's trip years."""
    gr = block.graphs
    allowed = y[block.site_group[gr.arc_site], gr.arc_t1] > 0.5
    _, chosen = (pricer or Pricer(gr)).price(np.where(allowed, 0.0, np.inf), np.zeros(gr.ex_cost.size),
                                              per_site=1)
    return _read_plans(block, chosen, y, rate)


def _read_plans(block: _Block, chosen: list[Column], y: np.ndarray, rate: float) -> PlansAndTrips:
    """Site plans and trips of each group of the block from the chosen columns."""
    plans, trips = [], []
    for j, g in enumerate(block.groups):
        mine = [c for c in chosen if block.site_group[c.site] == j]
        p, t = plans_and_trips(block.graphs, [c.site for c in mine], [(c.pair, c.years, c.arcs, c.ex) for c in mine],
                               y[j], g.region, g.month, float(block.trip_cost[j]), rate)
        plans += p
        trips += t
    return PlansAndTrips(plans, trips)


def _polish_weak_groups(problem, served, cands, weak: list[_WeakGroup], deadline: float) -> PlansAndTrips:
    """Local search on the trip years of the groups left above the gap, then their plans."""
    rate = float(problem.discount_rate_frac)
    block = _build_block(problem, served, cands, [w.group for w in weak])
    y = polish_trip_years(block.graphs, block.site_group, np.array([w.trip_years for w in weak]),
                          block.trip_cost, rate, deadline=deadline)
    return _plans_for_trip_years(block, y, rate)


def _limits_unmet(problem, block: _Block, mr: MasterResult, deadline: float,
                  build_seconds: float) -> MethodAnswer:
    """Phase 1 proved that no LP solution, so no plan, meets the fleet-wide rows."""
    text = (f"{JOINT_MASTER}: phase 1 proves after {mr.iterations} pricing round(s) that the fleet-wide "
            f"limits cannot be met, even in the LP relaxation")
    binding = _diagnose(problem, block.graphs, block.site_group, block.trip_cost, block.is_open, deadline)
    return _columns_answer("infeasible", float("nan"), [], [], text, binding, [], build_seconds)


def _integer_infeasible(problem, mr: MasterResult, build_seconds: float) -> MethodAnswer:
    """The LP relaxation meets the fleet-wide rows but no integer choice among the
    generated schedules does: not a proof (price-and-branch prices at the root only)."""
    limits = " and the ".join(text for _, text in fleet_limit_texts(problem))
    text = (f"{JOINT_MASTER}: {len(mr.columns)} schedules, {mr.iterations} pricing round(s); the integer "
            f"problem over them is infeasible")
    binding = [f"no plan over the generated schedules meets the {limits} (the LP relaxation does; "
               f"method 'path' decides it exactly)"]
    return _columns_answer("infeasible", float("nan"), [], [], text, binding, [], build_seconds)


def _answer(problem, tally: _Tally, n_groups: int) -> MethodAnswer:
    """The plans of every block, the bound, and how they were found, in words."""
    how = ("one master and one integer problem over all trip groups with the fleet-wide crew/budget rows"
           if _fleet_rows(problem)
           else f"one master and integer step per trip group ({n_groups} groups, region x access month)")
    text = (f"column generation (price-and-branch), {how}: up to {tally.rounds} pricing rounds, "
            f"{tally.n_cols} schedules, {'converged' if tally.converged else _stopped(tally.stops)}; "
            f"{tally.rounded} group(s) settled by the rounded LP trip years, the rest by an integer "
            f"problem; bound = sum of Lagrangian bounds")
    status = tally.status
    if status == "optimal" and gap(sum(p.present_cost for p in tally.plans), tally.bound) > problem.gap_rel_frac + 1e-12:
        status = "feasible"  # the integer step over generated columns is not proved within the gap
    return _columns_answer(status, tally.bound, tally.plans, tally.trips, text, [], tally.lost,
                           tally.build_seconds)


def _columns_answer(status, bound, plans, trips, text, binding, unserved, build_seconds) -> MethodAnswer:
    """The answer priced: the plans' cost is the objective, and no bound above it."""
    objective = float(sum(p.present_cost for p in plans)) if plans else float("nan")
    if math.isfinite(objective) and math.isfinite(bound):
        bound = min(bound, objective)
    return MethodAnswer(status, objective, bound, plans, trips, text, binding, unserved, build_seconds)


def _stopped(stops) -> str:
    """Why pricing stopped before convergence, in words."""
    words = {"time_limit": "at the time limit", "iterations": "at the cap on pricing rounds"}
    return "stopped " + " and ".join(words.get(s, f"by a failed {s}") for s in sorted(stops))


# Seconds each block still to come keeps back from the time left (its own solve takes
# about 0.06 s for a 40-site trip group, measured on the 1,000-site benchmark).
BLOCK_RESERVE_S = 0.1


def _time_share(left_s: float, blocks_left: int, floor_s: float) -> float:
    """Time limit of the current block: what is left less a reserve per later block,
    never below ``floor_s``. Binding only when the whole solve runs short of time, so a
    plan solved within the limit does not depend on how fast each block ran."""
    return max(floor_s, left_s - BLOCK_RESERVE_S * (blocks_left - 1))


def _diagnose(problem, gr, site_group, trip_cost, is_open, deadline) -> list[str]:
    """Which fleet-wide limit makes the study infeasible, worded as the path model words
    it (:func:`planner.optimize.path_model._diagnose`): drop each limit in turn. With no
    fleet limit left every served site has a schedule (screened), so a plan exists; with
    another limit left, phase 1 of column generation decides it for the LP relaxation."""
    active = fleet_limit_texts(problem)
    out = []
    for key, text in active:
        if len(active) == 1:
            out.append(f"{text} cannot be met; without it a plan exists")
            continue
        kept = replace(problem, **{key: None})
        mr = generate_columns(gr, site_group, trip_cost, is_open, rate=float(problem.discount_rate_frac),
                              payload_kg=problem.payload_kg_per_trip, crew=kept.crew_site_visits_per_year,
                              budget=kept.annual_budget, feasibility_only=True,
                              time_limit_s=max(0.5, min(10.0, deadline - time.perf_counter())))
        if mr.converged and not mr.infeasible:
            out.append(f"{text} cannot be met; without it the other limit is met in the LP relaxation")
    if not out:
        out.append(" and ".join(text for _, text in active) + " together cannot be met")
    return out


def _column_matrix(gr, cols, bsites, site_group, block, trip_cost, is_open, problem):
    """Integer problem over generated schedules: lambda (one per column) then y[k, t]."""
    h = gr.horizon_years
    n = len(cols)
    rate = problem.discount_rate_frac
    payload, crew, budget = problem.payload_kg_per_trip, problem.crew_site_visits_per_year, problem.annual_budget
    local = {int(s): i for i, s in enumerate(bsites)}
    kpos = {int(k): i for i, k in enumerate(block)}
    nb = len(bsites)
    r_visit = nb
    r_pay = r_visit + nb * h
    r_crew = r_pay + (len(block) * h if payload is not None else 0)
    r_bud = r_crew + (h if crew is not None else 0)
    n_rows = r_bud + (h if budget is not None else 0)
    rows, cidx, vals = [], [], []
    for j, c in enumerate(cols):  # a few columns per site
        s = local[c.site]
        k = kpos[int(site_group[c.site])]
        col_rows, col_vals = column_coefficients(
            gr, c, convex_row=s, visit_row=lambda t, s=s: r_visit + s * h + t,
            pay_row=None if payload is None else (lambda t, k=k: r_pay + k * h + t),
            crew_row=None if crew is None else (lambda t: r_crew + t),
            budget_row=None if budget is None else (lambda t: r_bud + t))
        rows += col_rows
        vals += col_vals
        cidx += [j] * len(col_rows)
    y_cost, y_ub = [], []
    for bi, k in enumerate(block):
        members = [local[int(s)] for s in np.nonzero(site_group == k)[0]]
        for t in range(h):
            j = n + bi * h + t
            for s in members:
                rows.append(r_visit + s * h + t)
                cidx.append(j)
                vals.append(-1.0)
            if payload is not None:
                rows.append(r_pay + bi * h + t)
                cidx.append(j)
                vals.append(-float(payload))
            if budget is not None:
                rows.append(r_bud + t)
                cidx.append(j)
                vals.append(float(trip_cost[k]))
            y_cost.append(float(trip_cost[k] * ec.spv(rate, t)))
            y_ub.append(0.0 if not is_open[k] else (1.0 if payload is None else float(max(1, len(members)))))
    lo = np.concatenate([np.ones(nb), np.full(n_rows - nb, -math.inf)])
    hi = np.concatenate([np.ones(nb), np.zeros(r_crew - nb),
                         np.full(r_bud - r_crew, float(crew or 0)), np.full(n_rows - r_bud, float(budget or 0))])
    # without side rows a site's choice is integral once the trips are fixed (it picks its
    # cheapest schedule among those visiting only trip years): only y need be integer
    side = payload is not None or crew is not None or budget is not None
    return dict(c=np.concatenate([[c.cost for c in cols], y_cost]), rows=np.array(rows), cols=np.array(cidx),
                vals=np.array(vals), lo=lo, hi=hi, col_ub=np.concatenate([np.ones(n), y_ub]),
                integer=np.concatenate([np.full(n, side), np.ones(len(y_cost), dtype=bool)]))
