"""The fleet replacement and visit model: one path per site, trips shared per region.

Decision variables (per trip group g = region x access month, year t = 0..H-1):

* ``f[a]`` flow on arc a of a site's time graph (:mod:`planner.optimize.schedule`);
* ``y[g, t]`` number of trips of group g in year t (binary unless a payload limit can
  need several).

Constraints: one unit of flow per site through its graph (flow conservation per design
node, so a site keeps one design); a pack goes in only on a trip of its group
(``sum_{a out of t} f[a] <= y[g, t]``, one row per site and year, the strong
disaggregated form); optional payload per trip, fleet-wide site-visits per year and
annual budget. Objective: present cost of every arc plus discounted trip mobilisation.
This is the opportunistic replacement problem (Patriksson, Strömberg & Wojciechowski
2015, Annals of OR 224:25-50) with per-site design choice, written in path form.

Decomposition: trip groups share nothing but the fleet-wide limits, so each group is
solved as its own model. Without side constraints a site's flow is integral once the
trips are fixed (network matrix), so only ``y`` is declared integer. When the combined
plan breaks a fleet-wide limit, the groups are re-solved as one joint model with
integer flows (the sum of group optima stays a valid lower bound).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from planner import economics as ec
from planner.optimize.problem import FleetProblem, MethodAnswer, Unserved
from planner.optimize.schedule import SiteGraphs, build_graphs, trace_paths
from planner.optimize.solver import solve_milp
from planner.optimize.trip_plans import annual_spend, plans_and_trips, trip_groups

_TOL = 1e-6


@dataclass
class _Group:
    region: str
    month: int
    trip_cost: float
    graphs: SiteGraphs


def solve_paths(problem: FleetProblem, served, cands, deadline: float) -> MethodAnswer:
    """The path model, one model per trip group, and one joint model when their combined
    plan breaks a fleet-wide limit.

    Sites of groups left without a plan in time are the answer's ``unserved``.
    """
    h = int(problem.horizon_years)
    rate = float(problem.discount_rate_frac)
    lost: list[Unserved] = []
    groups = []
    t_build = time.perf_counter()
    for region, month, members in trip_groups(served):
        sites = [served[i] for i in members]
        graphs = build_graphs(sites, [cands[s.site_id] for s in sites], horizon_years=h, rate=rate,
                              residual_value=problem.residual_value, design_changes=problem.design_changes)
        groups.append(_Group(region, month, float(problem.trip_cost_by_region[region]), graphs))

    build_seconds = time.perf_counter() - t_build
    status = "optimal"
    objective = bound = 0.0
    plans, trips = [], []
    integer_flows = problem.payload_kg_per_trip is not None
    for g in groups:
        rep, m = _solve_stack([g], problem, False, max(1.0, deadline - time.perf_counter()), integer_flows)
        build_seconds += rep.build_seconds
        if rep.values is None:
            # no plan in time for this group: its sites are reported, not dropped
            lost += [Unserved(s.site_id, f"site {s.site_id}: no plan found for trip group {g.region} "
                              f"within the time limit", "time_limit") for s in g.graphs.sites]
            bound = float("nan")
            continue
        if rep.status == "feasible":
            status = "feasible" if status == "optimal" else status
        p, tr = _decode([g], rep.values, m["col_off"], rate)
        plans += p
        trips += tr
        bound += rep.best_bound
    n_groups = len(groups)
    decomposition = (f"by trip group: {n_groups} independent model(s) (region x access month); "
                     f"only trip years integer, site paths integral by network structure"
                     if not integer_flows else
                     f"by trip group: {n_groups} independent model(s) (region x access month) with payload rows")
    binding = []
    fleet = problem.crew_site_visits_per_year is not None or problem.annual_budget is not None
    if fleet:
        broken = _limits_broken(problem, plans, trips)
        if not broken:
            decomposition += "; fleet-wide limits checked: not binding"
        else:
            relaxed_bound = bound
            rep, m = _solve_stack(groups, problem, True, max(1.0, deadline - time.perf_counter()), True)
            build_seconds += rep.build_seconds
            decomposition = (f"joint model over {n_groups} trip group(s): the decomposed plan breaks the "
                             f"{' and the '.join(broken)}; bound = max(joint bound, sum of group optima)")
            if rep.values is None:
                plans, trips = [], []
                status = "infeasible" if rep.status == "infeasible" else "feasible"
                binding = _diagnose(problem, groups) if rep.status == "infeasible" else broken
                if rep.status != "infeasible":
                    decomposition += "; no plan found within the time limit"
                objective = bound = float("nan")
            else:
                plans, trips = _decode(groups, rep.values, m["col_off"], rate)
                bound = max(rep.best_bound, relaxed_bound)
                status = rep.status if status == "optimal" else status
    if plans or not fleet or status != "infeasible":
        objective = float(sum(p.present_cost for p in plans))
        bound = min(bound, objective) if math.isfinite(bound) else bound
    return MethodAnswer(status, objective, bound, plans, trips, decomposition, binding, lost,
                        build_seconds)


def _group_matrix(g: _Group, rate: float, payload: float | None, integer_flows: bool):
    """Columns [arcs | existing arcs | y(t)] and rows of one trip group (local indices)."""
    gr = g.graphs
    h = gr.horizon_years
    n_arc, n_ex = gr.arc_pair.size, gr.ex_site.size
    y0 = n_arc + n_ex
    n_col = y0 + h
    has_ex = np.array([s.existing is not None for s in gr.sites], dtype=bool)
    a_site = gr.arc_site
    rows, cols, vals, lo, hi = [], [], [], [], []
    n_row = 0

    def add(r, c, v):
        rows.append(np.asarray(r, dtype=np.int64))
        cols.append(np.asarray(c, dtype=np.int64))
        vals.append(np.asarray(v, dtype=float))

    # one unit of flow leaves each site's start
    first = (gr.arc_t1 == 0) & ~has_ex[a_site]
    add(n_row + a_site[first], np.nonzero(first)[0], np.ones(first.sum()))
    add(n_row + gr.ex_site, n_arc + np.arange(n_ex), np.ones(n_ex))
    n_sites = len(gr.sites)
    lo += [1.0] * n_sites
    hi += [1.0] * n_sites
    n_row += n_sites

    # flow conservation at (design, year) nodes, or (site, year) when designs may change
    into = gr.arc_t2 < h
    out_ok = ~first
    ex_into = gr.ex_pair >= 0
    node = gr.pair_node[gr.arc_pair]
    keys = np.concatenate([node[into] * h + gr.arc_t2[into],
                           node[out_ok] * h + gr.arc_t1[out_ok],
                           gr.ex_pair[ex_into] * h + gr.ex_t[ex_into]])
    uniq, inv = np.unique(keys, return_inverse=True)
    ccols = np.concatenate([np.nonzero(into)[0], np.nonzero(out_ok)[0], n_arc + np.nonzero(ex_into)[0]])
    cvals = np.concatenate([np.ones(into.sum()), -np.ones(out_ok.sum()), np.ones(ex_into.sum())])
    add(n_row + inv, ccols, cvals)
    lo += [0.0] * uniq.size
    hi += [0.0] * uniq.size
    n_row += uniq.size

    # a pack goes in only on a trip: per (site, year)
    vkey = a_site * h + gr.arc_t1
    vuniq, vinv = np.unique(vkey, return_inverse=True)
    add(n_row + vinv, np.arange(n_arc), np.ones(n_arc))
    add(n_row + np.arange(vuniq.size), y0 + vuniq % h, -np.ones(vuniq.size))
    lo += [-math.inf] * vuniq.size
    hi += [0.0] * vuniq.size
    n_row += vuniq.size

    if payload is not None:
        add(n_row + gr.arc_t1, np.arange(n_arc), gr.arc_mass_kg)
        add(n_row + np.arange(h), y0 + np.arange(h), -float(payload) * np.ones(h))
        lo += [-math.inf] * h
        hi += [0.0] * h
        n_row += h

    c = np.concatenate([gr.arc_cost, gr.ex_cost, g.trip_cost * ec.spv(rate, np.arange(h))])
    y_ub = 0.0 if g.month == 0 else (1.0 if payload is None else float(max(1, n_sites)))
    col_ub = np.concatenate([np.ones(n_arc + n_ex), np.full(h, y_ub)])
    integer = np.concatenate([np.full(n_arc + n_ex, integer_flows), np.ones(h, dtype=bool)])
    return dict(c=c, rows=np.concatenate(rows), cols=np.concatenate(cols), vals=np.concatenate(vals),
                lo=np.array(lo), hi=np.array(hi), col_ub=col_ub, integer=integer, n_col=n_col, n_row=n_row)


def _stack(mats, fleet_rows):
    """Block-diagonal join of group matrices plus fleet-wide rows."""
    col_off = np.cumsum([0] + [m["n_col"] for m in mats])
    row_off = np.cumsum([0] + [m["n_row"] for m in mats])
    rows = [m["rows"] + row_off[i] for i, m in enumerate(mats)]
    cols = [m["cols"] + col_off[i] for i, m in enumerate(mats)]
    vals = [m["vals"] for m in mats]
    lo = [m["lo"] for m in mats]
    hi = [m["hi"] for m in mats]
    base = row_off[-1]
    for r, cidx, v, rlo, rhi in fleet_rows(col_off):
        rows.append(base + np.asarray(r))
        cols.append(np.asarray(cidx))
        vals.append(np.asarray(v, dtype=float))
        lo.append(rlo)
        hi.append(rhi)
        base += len(rlo)
    return dict(c=np.concatenate([m["c"] for m in mats]), rows=np.concatenate(rows),
                cols=np.concatenate(cols), vals=np.concatenate(vals), lo=np.concatenate(lo),
                hi=np.concatenate(hi), col_ub=np.concatenate([m["col_ub"] for m in mats]),
                integer=np.concatenate([m["integer"] for m in mats]), col_off=col_off)


def _fleet_rows(groups, h, crew, budget):
    """Fleet-wide rows (site visits per year, spending per year) for stacked groups."""
    def rows(col_off):
        out = []
        if crew is not None:
            r, c, v = [], [], []
            for gi, g in enumerate(groups):
                gr = g.graphs
                r.append(gr.arc_t1)
                c.append(col_off[gi] + np.arange(gr.arc_t1.size))
                v.append(np.ones(gr.arc_t1.size))
            out.append((np.concatenate(r), np.concatenate(c), np.concatenate(v),
                        np.full(h, -math.inf), np.full(h, float(crew))))
        if budget is not None:
            r, c, v = [], [], []
            for gi, g in enumerate(groups):
                gr = g.graphs
                n_arc, n_ex = gr.arc_t1.size, gr.ex_site.size
                arcs = np.arange(n_arc)
                inner = gr.arc_t2 < h
                exs = gr.ex_t < h
                y0 = col_off[gi] + n_arc + n_ex
                r += [gr.arc_t1, gr.arc_t2[inner], gr.ex_t[exs], np.arange(h)]
                c += [col_off[gi] + arcs, col_off[gi] + arcs[inner], col_off[gi] + n_arc + np.nonzero(exs)[0],
                      y0 + np.arange(h)]
                v += [gr.arc_spend_t1, gr.arc_spend_t2[inner], gr.ex_spend[exs], np.full(h, g.trip_cost)]
            out.append((np.concatenate(r), np.concatenate(c), np.concatenate(v),
                        np.full(h, -math.inf), np.full(h, float(budget))))
        return out
    return rows


def _decode(groups, x, col_off, rate):
    """Site plans and trips from a solution vector of stacked path-model groups."""
    plans, trips = [], []
    for gi, g in enumerate(groups):
        gr = g.graphs
        n_arc, n_ex = gr.arc_pair.size, gr.ex_site.size
        xv = x[col_off[gi]:col_off[gi + 1]]
        paths = trace_paths(gr, xv[:n_arc] > 0.5, xv[n_arc:n_arc + n_ex] > 0.5)
        p, t = plans_and_trips(gr, range(len(gr.sites)), paths, np.rint(xv[n_arc + n_ex:]),
                                g.region, g.month, g.trip_cost, rate)
        plans += p
        trips += t
    return plans, trips


def _is_integral(x, mat) -> bool:
    return bool(np.all(np.abs(x - np.rint(x)) < _TOL))


def _solve_stack(groups, problem, fleet_limits: bool, time_limit_s: float, integer_flows: bool):
    h = int(problem.horizon_years)
    t0 = time.perf_counter()
    mats = [_group_matrix(g, problem.discount_rate_frac, problem.payload_kg_per_trip, integer_flows)
            for g in groups]
    crew = problem.crew_site_visits_per_year if fleet_limits else None
    budget = problem.annual_budget if fleet_limits else None
    m = _stack(mats, _fleet_rows(groups, h, crew, budget))
    matrix_seconds = time.perf_counter() - t0
    rep = solve_milp(m["c"], m["rows"], m["cols"], m["vals"], m["lo"], m["hi"], m["col_ub"], m["integer"],
                     solver=problem.solver, time_limit_s=time_limit_s, gap_rel_frac=problem.gap_rel_frac)
    if rep.values is not None and not integer_flows and not _is_integral(rep.values, m):
        # a non-basic optimum of the network part: re-solve with integral flows
        m["integer"][:] = True
        rep = solve_milp(m["c"], m["rows"], m["cols"], m["vals"], m["lo"], m["hi"], m["col_ub"], m["integer"],
                         solver=problem.solver, time_limit_s=time_limit_s, gap_rel_frac=problem.gap_rel_frac)
    rep.build_seconds += matrix_seconds
    return rep, m


def _limits_broken(problem, plans, trips) -> list[str]:
    h = int(problem.horizon_years)
    broken = []
    if problem.crew_site_visits_per_year is not None:
        visits = np.zeros(h, dtype=int)
        for p in plans:
            for t in p.replacement_years:
                visits[t] += 1
        years = np.nonzero(visits > problem.crew_site_visits_per_year)[0]
        if years.size:
            broken.append(f"crew limit of {problem.crew_site_visits_per_year} site visits per year "
                          f"(years {', '.join(map(str, years))})")
    if problem.annual_budget is not None:
        spend = annual_spend(problem, plans, trips)
        years = np.nonzero(spend > problem.annual_budget + 1e-6)[0]
        if years.size:
            broken.append(f"annual budget of {problem.annual_budget:g} (years {', '.join(map(str, years))})")
    return broken


def fleet_limit_texts(problem: FleetProblem) -> list[tuple[str, str]]:
    """``(field name, wording)`` of each fleet-wide limit the problem sets, as both
    methods name them in ``binding_limits``."""
    limits = [("crew_site_visits_per_year", f"crew limit of {problem.crew_site_visits_per_year} site visits per year"),
              ("annual_budget", f"annual budget of {problem.annual_budget}")]
    return [(k, text) for k, text in limits if getattr(problem, k) is not None]


def _diagnose(problem: FleetProblem, groups) -> list[str]:
    """Which fleet-wide limit makes the study infeasible: drop each in turn and re-solve."""
    from dataclasses import replace
    out = []
    active = fleet_limit_texts(problem)
    for key, text in active:
        relaxed = replace(problem, **{key: None}, time_limit_s=min(10.0, problem.time_limit_s))
        rep, _ = _solve_stack(groups, relaxed, True, relaxed.time_limit_s, True)
        if rep.status != "infeasible":
            out.append(f"{text} cannot be met; without it a plan exists")
    if not out:
        out.append(" and ".join(text for _, text in active) + " together cannot be met")
    return out
