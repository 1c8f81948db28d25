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
from planner.errors import InputError
from planner.optimize.candidates import screen_site, whole_years
from planner.optimize.colgen import column_coefficients
from planner.optimize.problem import (
    FleetProblem, FleetSolution, SiteOptions, SitePlan, Trip, Unserved,
)
from planner.optimize.schedule import COST_PARTS, SiteGraphs, build_graphs, trace_paths
from planner.optimize.solver import gap, highs_available, pick_solver, solve_milp

_TOL = 1e-6
# above this many arcs in the whole fleet, "auto" switches from the full path model to
# column generation (measured: PuLP builds about 30,000 columns per second here)
AUTO_COLUMNS_ABOVE_ARCS = 60_000


@dataclass
class _Group:
    region: str
    month: int
    trip_cost: float
    graphs: SiteGraphs


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


def _trip_groups(sites: list[SiteOptions]) -> list[tuple[str, int, list[int]]]:
    """Split each region's sites into trip groups that can travel in one month.

    Greedy: the month open to most of the region's remaining sites (earliest on ties)
    forms a group; repeat. Sites that need no visit sit in a group of month 0.
    """
    out = []
    regions = sorted({s.region for s in sites})
    for region in regions:
        idx = [i for i, s in enumerate(sites) if s.region == region]
        no_visit = [i for i in idx if not sites[i].access_months]
        left = [i for i in idx if sites[i].access_months]
        while left:
            counts = np.zeros(13, dtype=int)
            for i in left:
                counts[sorted(set(int(m) for m in sites[i].access_months))] += 1
            month = int(np.argmax(counts))
            members = [i for i in left if month in sites[i].access_months]
            out.append((region, month, members))
            left = [i for i in left if month not in sites[i].access_months]
        if no_visit:
            out.append((region, 0, no_visit))
    return out


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
    for k, (r, cidx, v, rlo, rhi) in enumerate(fleet_rows(col_off)):
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


def _plans_and_trips(gr: SiteGraphs, site_idx, paths, y, region, month, trip_cost, rate):
    """Site plans (with cost breakdown and trip shares) and trips of one trip group.

    ``paths[i]`` is ``(pair, years, arcs, existing_arc)`` for site ``site_idx[i]`` of
    ``gr``; ``y[t]`` the number of trips in year t. The mobilisation of a trip is shared
    equally by the sites it serves.
    """
    plans, trips = [], []
    visitors = {}
    for i, (pair, years, arcs, e) in enumerate(paths):
        for t in years:
            visitors.setdefault(t, []).append(i)
    share = {}
    mass_at = [dict(zip(years, gr.arc_mass_kg[list(arcs)])) for _, years, arcs, _ in paths]
    for t, members in sorted(visitors.items()):
        count = max(1, int(round(y[t])))
        mass = float(sum(mass_at[i][t] for i in members))
        cost = trip_cost * count
        trips.append(Trip(region=region, year=int(t), month=int(month),
                          site_ids=tuple(gr.sites[site_idx[i]].site_id for i in members), pack_count=len(members),
                          pack_mass_kg=mass, count=count, cost=float(cost)))
        share[t] = cost * float(ec.spv(rate, t)) / len(members)
    for i, (pair, years, arcs, e) in enumerate(paths):
        parts = {}
        for k in COST_PARTS:
            parts[k] = float(gr.arc_parts[k][list(arcs)].sum()) if arcs else 0.0
            if e is not None:
                parts[k] += float(gr.ex_parts[k][e])
        parts["trips"] += float(sum(share[t] for t in years))
        site = gr.sites[site_idx[i]]
        plans.append(SitePlan(site_id=site.site_id, region=site.region,
                              candidate=gr.pair_cand[pair] if pair >= 0 else None,
                              replacement_years=tuple(years),
                              replacement_months=tuple(int(month) for _ in years),
                              cost=ec.CostBreakdown(**parts),
                              installations=tuple(gr.pair_cand[gr.arc_pair[a]] for a in arcs)))
    return plans, trips


def _decode(groups, x, col_off, rate):
    """Site plans and trips from a solution vector of stacked path-model groups."""
    plans, trips = [], []
    for gi, g in enumerate(groups):
        gr = g.graphs
        n_arc, n_ex = gr.arc_pair.size, gr.ex_site.size
        xv = x[col_off[gi]:col_off[gi + 1]]
        paths = trace_paths(gr, xv[:n_arc] > 0.5, xv[n_arc:n_arc + n_ex] > 0.5)
        p, t = _plans_and_trips(gr, range(len(gr.sites)), paths, np.rint(xv[n_arc + n_ex:]),
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
        spend = _annual_spend(problem, plans, trips)
        years = np.nonzero(spend > problem.annual_budget + 1e-6)[0]
        if years.size:
            broken.append(f"annual budget of {problem.annual_budget:g} (years {', '.join(map(str, years))})")
    return broken


def _annual_spend(problem, plans, trips) -> np.ndarray:
    """Undiscounted money spent per year by a plan (packs, labour, visits, disposal, trips)."""
    h = int(problem.horizon_years)
    spend = np.zeros(h)
    sites = {s.site_id: s for s in problem.sites}
    for p in plans:
        s = sites[p.site_id]
        for j, (t, c) in enumerate(zip(p.replacement_years, p.installations)):
            spend[t] += float(c.pack_cost_in(t)) + c.downtime_cost + c.install_cost + s.site_visit_cost
            if j > 0:
                spend[t] += p.installations[j - 1].disposal_cost
            else:
                spend[t] += c.measure_price + c.measure_labour_cost  # thermal measure, once
            if j == 0 and s.existing is not None:
                spend[t] += s.existing.disposal_cost
    for tr in trips:
        spend[tr.year] += tr.cost
    return spend


def _solve_columns(problem, served, cands, deadline):
    """Column generation, then integer problems over the generated schedules.

    Without fleet-wide limits every trip group has its own master LP and integer step
    (many small LPs re-solved warm are cheaper than one block-diagonal LP: measured
    0.4 s against 0.8 s per pricing round for 300 sites). With crew or budget limits
    one master holds every group and the fleet-wide rows, so their prices reach every
    site. Returns ``(status, bound, plans, trips, decomposition, binding, build_seconds)``.
    """
    from planner.optimize.colgen import Pricer, generate_columns, group_costs

    h = int(problem.horizon_years)
    rate = float(problem.discount_rate_frac)
    crew, budget = problem.crew_site_visits_per_year, problem.annual_budget
    fleet_rows = crew is not None or budget is not None
    side = fleet_rows or problem.payload_kg_per_trip is not None
    tg = _trip_groups(served)
    blocks = [list(range(len(tg)))] if fleet_rows else [[k] for k in range(len(tg))]
    status = "optimal"
    bound = 0.0
    plans, trips = [], []
    build_seconds = 0.0
    rounds = n_cols = 0
    converged = True
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
        # column generation gets 80 % of the time left, shared over the blocks still to do
        # (its bound is what proves the gap; the integer step is often a rounding)
        share = max(0.5, 0.8 * (deadline - time.perf_counter()) / (len(blocks) - bi))
        mr = generate_columns(gr, site_group, trip_cost, is_open, rate=rate,
                              payload_kg=problem.payload_kg_per_trip, crew=crew, budget=budget,
                              time_limit_s=share, bound_gap_frac=0.2 * problem.gap_rel_frac)
        rounds = max(rounds, mr.iterations)
        n_cols += len(mr.columns)
        converged &= mr.converged
        stuck = [k for k, v in mr.slack.items() if v > 1e-6]
        if stuck and mr.converged:
            names = {"crew_site_visits_per_year": f"crew limit of {crew} site visits per year",
                     "annual_budget": f"annual budget of {budget}"}
            text = "column generation with one master over all trip groups and the fleet-wide rows"
            return ("infeasible", float("nan"), [], [], text, [f"{names[k]} cannot be met" for k in stuck],
                    build_seconds)
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
                    p, t = _plans_and_trips(gr, [c.site for c in mine], [(c.pair, c.years, c.arcs, c.ex) for c in mine],
                                            y[j], tg[k][0], tg[k][1], float(trip_cost[j]), rate)
                    plans += p
                    trips += t
                rounded += 1
                continue
        m = _column_matrix(gr, cols, np.arange(len(sites)), site_group, np.arange(len(block)),
                           trip_cost, is_open, problem)
        rep = solve_milp(m["c"], m["rows"], m["cols"], m["vals"], m["lo"], m["hi"], m["col_ub"], m["integer"],
                         solver=problem.solver,
                         time_limit_s=max(1.0, (deadline - time.perf_counter()) / (len(blocks) - bi)),
                         gap_rel_frac=problem.gap_rel_frac)
        build_seconds += rep.build_seconds
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
            group_plans.append(_plans_and_trips(gr, [c.site for c in mine], paths, y[j], tg[k][0], tg[k][1],
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
        from planner.optimize.colgen import polish_trip_years
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
            p, t = _plans_and_trips(gr, [c.site for c in mine], paths, y[j], tg[k][0], tg[k][1],
                                    float(trip_cost[j]), rate)
            plans += p
            trips += t
    how = ("one master and one integer problem over all trip groups with the fleet-wide crew/budget rows"
           if fleet_rows else f"one master and integer step per trip group ({len(tg)} groups, region x access month)")
    text = (f"column generation (price-and-branch), {how}: up to {rounds} pricing rounds, {n_cols} schedules, "
            f"{'converged' if converged else 'stopped at the time limit'}; {rounded} group(s) settled by the "
            f"rounded LP trip years, the rest by an integer problem; bound = sum of Lagrangian bounds")
    if status == "optimal" and gap(sum(p.present_cost for p in plans), bound) > problem.gap_rel_frac + 1e-12:
        status = "feasible"  # the integer step over generated columns is not proved within the gap
    return status, bound, plans, trips, text, lost, build_seconds


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
                rows.append(r_visit + s * h + t); cidx.append(j); vals.append(-1.0)
            if payload is not None:
                rows.append(r_pay + bi * h + t); cidx.append(j); vals.append(-float(payload))
            if budget is not None:
                rows.append(r_bud + t); cidx.append(j); vals.append(float(trip_cost[k]))
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


def solve_fleet(problem: FleetProblem) -> FleetSolution:
    """Lowest present-cost design and replacement schedule for every site, and the trips.

    Returns a :class:`FleetSolution`; an infeasible study is an answer (status
    "infeasible" with the unserved sites and binding limits), not an exception.
    Raises :class:`planner.errors.InputError` for malformed problems.
    """
    t0 = time.perf_counter()
    _validate(problem)
    h = int(problem.horizon_years)
    rate = float(problem.discount_rate_frac)
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
    if method == "columns" and served:
        deadline = t0 + float(problem.time_limit_s)
        status, bound, plans, trips, decomposition, extra, build_seconds = _solve_columns(
            problem, served, cands, deadline)
        binding = [x for x in extra if isinstance(x, str)]
        unserved += [x for x in extra if not isinstance(x, str)]
        objective = float(sum(p.present_cost for p in plans)) if plans else float("nan")
        if math.isfinite(objective) and math.isfinite(bound):
            bound = min(bound, objective)
        return _solution(problem, t0, solver_name, status, objective, bound, plans, trips, unserved,
                         binding, decomposition, build_seconds, gap_without_plans=float("nan"))

    groups = []
    t_build = time.perf_counter()
    for region, month, members in _trip_groups(served):
        sites = [served[i] for i in members]
        graphs = build_graphs(sites, [cands[s.site_id] for s in sites], horizon_years=h, rate=rate,
                              residual_value=problem.residual_value, design_changes=problem.design_changes)
        groups.append(_Group(region, month, float(problem.trip_cost_by_region[region]), graphs))

    build_seconds = time.perf_counter() - t_build
    status = "optimal"
    objective = bound = 0.0
    plans, trips = [], []
    deadline = t0 + float(problem.time_limit_s)
    integer_flows = problem.payload_kg_per_trip is not None
    for g in groups:
        rep, m = _solve_stack([g], problem, False, max(1.0, deadline - time.perf_counter()), integer_flows)
        build_seconds += rep.build_seconds
        if rep.values is None:
            # no plan in time for this group: its sites are reported, not dropped
            unserved += [Unserved(s.site_id, f"site {s.site_id}: no plan found for trip group {g.region} "
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
    return _solution(problem, t0, solver_name, status, objective, bound, plans, trips, unserved,
                     binding, decomposition, build_seconds,
                     gap_without_plans=0.0 if not unserved else float("nan"))


def _solution(problem, t0, solver_name, status, objective, bound, plans, trips, unserved, binding,
              decomposition, build_seconds, *, gap_without_plans) -> FleetSolution:
    """The answer of either method: fleet-wide gap status, unserved sites make it
    infeasible, trips and plans in a stable order."""
    status = _within_gap(status, objective, bound, problem.gap_rel_frac)
    if unserved:
        status = "infeasible"
    trips.sort(key=lambda t: (t.year, t.region, t.month))
    order = {s.site_id: i for i, s in enumerate(problem.sites)}
    plans.sort(key=lambda p: order[p.site_id])
    return FleetSolution(status=status, objective=objective, best_bound=bound,
                         gap_frac=gap(objective, bound) if plans else gap_without_plans,
                         solver_name=solver_name, seconds=time.perf_counter() - t0,
                         decomposition=decomposition, sites=plans, trips=trips, unserved=unserved,
                         binding_limits=binding, build_seconds=build_seconds)


def _within_gap(status: str, objective: float, bound: float, gap_rel_frac: float) -> str:
    """"optimal" means proved within the relative gap for the whole fleet: a plan stopped
    early in one group is still optimal in that sense when the fleet-wide bound proves it."""
    if status == "feasible" and math.isfinite(objective) and math.isfinite(bound):
        if gap(objective, bound) <= gap_rel_frac:
            return "optimal"
    return status


def _diagnose(problem: FleetProblem, groups) -> list[str]:
    """Which fleet-wide limit makes the study infeasible: drop each in turn and re-solve."""
    from dataclasses import replace
    out = []
    limits = [("crew_site_visits_per_year", f"crew limit of {problem.crew_site_visits_per_year} site visits per year"),
              ("annual_budget", f"annual budget of {problem.annual_budget}")]
    active = [(k, text) for k, text in limits if getattr(problem, k) is not None]
    for key, text in active:
        relaxed = replace(problem, **{key: None}, time_limit_s=min(10.0, problem.time_limit_s))
        rep, _ = _solve_stack(groups, relaxed, True, relaxed.time_limit_s, True)
        if rep.status != "infeasible":
            out.append(f"{text} cannot be met; without it a plan exists")
    if not out:
        out.append(" and ".join(text for _, text in active) + " together cannot be met")
    return out
