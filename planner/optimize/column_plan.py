"""Column generation for the fleet plan: site schedules priced per trip group, then an
integer problem over the generated schedules.

The pricer, the master LP and the trip-year local search live in
:mod:`planner.optimize.colgen`; this module runs them over the trip groups (one master
per group, or one over all groups when fleet-wide limits bind them) and reads the plans.
"""

from __future__ import annotations

import math
import time
from dataclasses import replace

import numpy as np

from planner import economics as ec
from planner.optimize.colgen import (
    Pricer,
    column_coefficients,
    generate_columns,
    group_costs,
    polish_trip_years,
)
from planner.optimize.path_model import fleet_limit_texts
from planner.optimize.problem import Unserved
from planner.optimize.schedule import build_graphs
from planner.optimize.solver import gap, solve_milp
from planner.optimize.trip_plans import plans_and_trips, trip_groups


def solve_columns(problem, served, cands, deadline):
    """Column generation, then integer problems over the generated schedules.

    Without fleet-wide limits every trip group has its own master LP and integer step
    (many small LPs re-solved warm are cheaper than one block-diagonal LP: measured
    0.4 s against 0.8 s per pricing round for 300 sites). With crew or budget limits
    one master holds every group and the fleet-wide rows, so their prices reach every
    site. Returns ``(status, bound, plans, trips, decomposition, binding, build_seconds)``.
    """
    h = int(problem.horizon_years)
    rate = float(problem.discount_rate_frac)
    crew, budget = problem.crew_site_visits_per_year, problem.annual_budget
    fleet_rows = crew is not None or budget is not None
    side = fleet_rows or problem.payload_kg_per_trip is not None
    tg = trip_groups(served)
    blocks = [list(range(len(tg)))] if fleet_rows else [[k] for k in range(len(tg))]
    status = "optimal"
    bound = 0.0
    plans, trips = [], []
    build_seconds = 0.0
    rounds = n_cols = 0
    converged = True
    stops = set()  # why pricing stopped early in some block
    weak = []
    lost = []
    rounded = 0
    # Each block is solved to the end (columns, then its integer step) before the next is
    # built, so memory holds one block's time graph, columns and integer matrix at a time
    # (a 10,000-site fleet has some 250 trip groups of about 10 MB each).
    for bi, block in enumerate(blocks):
        t_build = time.perf_counter()
        sites = [served[i] for k in block for i in tg[k][2]]
        site_group = np.concatenate([np.full(len(tg[k][2]), j) for j, k in enumerate(block)]).astype(np.int64)
        gr = build_graphs(sites, [cands[s.site_id] for s in sites], horizon_years=h, rate=rate,
                          residual_value=problem.residual_value, design_changes=problem.design_changes)
        trip_cost = np.array([float(problem.trip_cost_by_region[tg[k][0]]) for k in block])
        is_open = np.array([tg[k][1] != 0 for k in block], dtype=bool)
        build_seconds += time.perf_counter() - t_build
        # column generation may use 80 % of the time left (its bound is what proves the
        # gap; the integer step is often a rounding), less a reserve for each block still
        # to come: an even share per block (0.19 s at 10,000 sites and a 60 s limit, the
        # 0.5 s floor) stopped pricing in some groups and made the plan depend on the
        # machine's speed, although the whole solve ended well within the limit
        share = _time_share(0.8 * (deadline - time.perf_counter()), len(blocks) - bi, 0.5)
        mr = generate_columns(gr, site_group, trip_cost, is_open, rate=rate,
                              payload_kg=problem.payload_kg_per_trip, crew=crew, budget=budget,
                              time_limit_s=share, bound_gap_frac=0.2 * problem.gap_rel_frac)
        rounds = max(rounds, mr.iterations)
        n_cols += len(mr.columns)
        converged &= mr.converged
        if not mr.converged:
            stops.add(mr.stop)
        if mr.infeasible:
            # phase 1 proved that no LP solution, so no plan, meets the fleet-wide rows
            text = (f"column generation with one master over all trip groups and the fleet-wide rows: "
                    f"phase 1 proves after {mr.iterations} pricing round(s) that the fleet-wide limits "
                    f"cannot be met, even in the LP relaxation")
            return ("infeasible", float("nan"), [], [], text,
                    _diagnose(problem, gr, site_group, trip_cost, is_open, deadline), build_seconds)
        bound += mr.lower_bound
        # integer step per block (measured: one block-diagonal model over 14 groups took
        # 24 s in HiGHS against 5 s for the 14 models one by one)
        cols = mr.columns
        if not side and mr.y_lp is not None:
            # the master LP's trip years, rounded, often prove the gap already: then no MIP
            y = (mr.y_lp > 0.5).astype(float)
            cost = group_costs(Pricer(gr), site_group, y, trip_cost, rate)
            if np.all(np.isfinite(cost)) and gap(float(cost.sum()), mr.lower_bound) <= problem.gap_rel_frac:
                allowed = y[site_group[gr.arc_site], gr.arc_t1] > 0.5
                _, chosen = Pricer(gr).price(np.where(allowed, 0.0, np.inf), np.zeros(gr.ex_cost.size), per_site=1)
                for j, k in enumerate(block):
                    mine = [c for c in chosen if site_group[c.site] == j]
                    p, t = plans_and_trips(gr, [c.site for c in mine], [(c.pair, c.years, c.arcs, c.ex) for c in mine],
                                            y[j], tg[k][0], tg[k][1], float(trip_cost[j]), rate)
                    plans += p
                    trips += t
                rounded += 1
                continue
        m = _column_matrix(gr, cols, np.arange(len(sites)), site_group, np.arange(len(block)),
                           trip_cost, is_open, problem)
        rep = solve_milp(m["c"], m["rows"], m["cols"], m["vals"], m["lo"], m["hi"], m["col_ub"], m["integer"],
                         solver=problem.solver,
                         time_limit_s=_time_share(deadline - time.perf_counter(), len(blocks) - bi, 1.0),
                         gap_rel_frac=problem.gap_rel_frac)
        build_seconds += rep.build_seconds
        if rep.values is None and rep.status == "infeasible" and fleet_rows and mr.lp_feasible:
            # the LP relaxation meets the fleet-wide rows but no integer choice among the
            # generated schedules does: not a proof (price-and-branch prices at the root only)
            limits = " and the ".join(text for _, text in fleet_limit_texts(problem))
            text = (f"column generation with one master over all trip groups and the fleet-wide rows: "
                    f"{len(cols)} schedules, {mr.iterations} pricing round(s); the integer problem over "
                    f"them is infeasible")
            return ("infeasible", float("nan"), [], [], text,
                    [f"no plan over the generated schedules meets the {limits} (the LP relaxation does; "
                     f"method 'path' decides it exactly)"], build_seconds)
        if rep.values is None:
            # no integer plan in time for this block: its sites are reported, not dropped
            lost += [Unserved(s.site_id, f"site {s.site_id}: no plan found for trip group {tg[k][0]} "
                              f"within the time limit", "time_limit") for k in block for s in
                     (served[i] for i in tg[k][2])]
            status = "infeasible"
            bound = float("nan")
            continue
        if rep.status == "feasible" and status == "optimal":
            status = "feasible"
        xv = rep.values
        y = np.rint(xv[len(cols):]).reshape(len(block), h)
        if side:
            chosen = [cols[j] for j in np.nonzero(xv[:len(cols)] > 0.5)[0]]
        else:
            # trips fixed: every site takes its exact cheapest path over its group's trip
            # years in its full time graph (never worse than the columns the MIP saw)
            allowed = y[site_group[gr.arc_site], gr.arc_t1] > 0.5
            _, chosen = Pricer(gr).price(np.where(allowed, 0.0, np.inf), np.zeros(gr.ex_cost.size), per_site=1)
        group_plans = []
        for j, k in enumerate(block):
            mine = [c for c in chosen if site_group[c.site] == j]
            paths = [(c.pair, c.years, c.arcs, c.ex) for c in mine]
            group_plans.append(plans_and_trips(gr, [c.site for c in mine], paths, y[j], tg[k][0], tg[k][1],
                                                float(trip_cost[j]), rate))
        block_cost = sum(p.present_cost for pl, _ in group_plans for p in pl)
        if not side and gap(block_cost, mr.lower_bound) > problem.gap_rel_frac:
            weak.append((block[0], y[0], mr.lower_bound))  # improved below by local search
            continue
        for p, t in group_plans:
            plans += p
            trips += t
    if weak:
        # groups the integer step over columns left above the gap: local search on their
        # trip years, all such groups at once
        ks = [k for k, _, _ in weak]
        sites = [served[i] for k in ks for i in tg[k][2]]
        site_group = np.concatenate([np.full(len(tg[k][2]), j) for j, k in enumerate(ks)]).astype(np.int64)
        gr = build_graphs(sites, [cands[s.site_id] for s in sites], horizon_years=h, rate=rate,
                          residual_value=problem.residual_value, design_changes=problem.design_changes)
        trip_cost = np.array([float(problem.trip_cost_by_region[tg[k][0]]) for k in ks])
        y = polish_trip_years(gr, site_group, np.array([yk for _, yk, _ in weak]), trip_cost, rate,
                              deadline=deadline)
        allowed = y[site_group[gr.arc_site], gr.arc_t1] > 0.5
        _, chosen = Pricer(gr).price(np.where(allowed, 0.0, np.inf), np.zeros(gr.ex_cost.size), per_site=1)
        for j, k in enumerate(ks):
            mine = [c for c in chosen if site_group[c.site] == j]
            paths = [(c.pair, c.years, c.arcs, c.ex) for c in mine]
            p, t = plans_and_trips(gr, [c.site for c in mine], paths, y[j], tg[k][0], tg[k][1],
                                    float(trip_cost[j]), rate)
            plans += p
            trips += t
    how = ("one master and one integer problem over all trip groups with the fleet-wide crew/budget rows"
           if fleet_rows else f"one master and integer step per trip group ({len(tg)} groups, region x access month)")
    text = (f"column generation (price-and-branch), {how}: up to {rounds} pricing rounds, {n_cols} schedules, "
            f"{'converged' if converged else _stopped(stops)}; {rounded} group(s) settled by the "
            f"rounded LP trip years, the rest by an integer problem; bound = sum of Lagrangian bounds")
    if status == "optimal" and gap(sum(p.present_cost for p in plans), bound) > problem.gap_rel_frac + 1e-12:
        status = "feasible"  # the integer step over generated columns is not proved within the gap
    return status, bound, plans, trips, text, lost, build_seconds


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
