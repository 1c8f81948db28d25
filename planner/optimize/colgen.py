"""Column generation over site schedules for large fleets (price-and-branch).

The master problem chooses one schedule (a column: design + replacement years) per
site and the trips; the pricing problem finds, for every site at once, the cheapest
path through its time graph (:mod:`planner.optimize.schedule`) with the master's dual
prices added to each visit (a vectorised shortest path over years). This is the
Dantzig-Wolfe form of the path model with the same LP bound (Desrosiers & Lübbecke
2005, "A primer in column generation", in *Column Generation*, Springer, 1-32); the
periodic-maintenance literature solves it the same way (Grigoriev, van de Klundert &
Spieksma 2006, EJOR 172:1, 80-98). Fleet-wide crew and budget rows sit in the master,
so their prices reach every site: this is the coupling master of the decomposition.

The restricted master LP is re-solved warm in HiGHS directly (PuLP rebuilds a model on
every solve); the final integer problem over the generated columns goes through PuLP
(:func:`planner.optimize.solver.solve_milp`). Lower bound: the Lagrangian bound
``z_LP + sum_s min(0, reduced cost_s)`` (Desrosiers & Lübbecke 2005, §2.1), valid at
every iteration, so the reported gap is honest even when pricing stops early.

Fleet-wide crew and budget rows may make the master infeasible. Column generation then
runs in two phases, the textbook way to start a restricted master with artificial
variables (Lübbecke & Desrosiers 2005, "Selected topics in column generation", Oper.
Res. 53:6, 1007-1023, on initialising the master; from memory). Phase 1 minimises the
slack on those rows with every schedule and trip at cost 0, priced with the same
shortest paths less each arc's own cost. Its Lagrangian bound above zero proves that
even the LP relaxation cannot meet the limits, so no plan can; once the slack is zero,
phase 2 restores the costs and closes the slack. A big-M penalty on the slack instead
(the former way) needs M above every dual price, and an M that large (1e11 on a
40-site fleet) made the warm-started simplex stop with a solve error.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from planner import economics as ec
from planner.optimize import _path_kernels as _paths
from planner.optimize.schedule import SiteGraphs
from planner.optimize.solver import quiet_stdout

_NEG = 1e-7


@dataclass
class Column:
    site: int
    pair: int
    arcs: tuple[int, ...]
    ex: int | None
    years: tuple[int, ...]
    cost: float


class Pricer:
    """Shortest paths with dual prices for every site of a :class:`SiteGraphs`.

    ``engine``: "auto" runs the year sweep compiled with numba when it is installed;
    "numpy" forces the numpy sweep (both give the same values and paths)."""

    def __init__(self, g: SiteGraphs, single_design: bool = False, engine: str = "auto"):
        self.g = g
        self.engine = engine
        h = g.horizon_years
        self.h = h
        n_pairs = len(g.pair_cand)
        self.n_pairs = n_pairs
        self.has_ex = np.array([s.existing is not None for s in g.sites], dtype=bool)
        # dense (design, start year, service years - 1) layout of the arcs: the shortest
        # path then runs as H vectorised steps over every design of every site
        span = g.arc_t2 - g.arc_t1
        self.dense = (g.arc_pair * h + g.arc_t1) * h + (span - 1)
        self.arc_id = np.full(n_pairs * h * h, -1, dtype=np.int64)
        self.arc_id[self.dense] = np.arange(g.arc_pair.size)
        self.arc_id = self.arc_id.reshape(n_pairs, h, h)
        ex_new = g.ex_pair >= 0
        self.ex_new = np.nonzero(ex_new)[0]
        self.ex_keep = np.nonzero(~ex_new)[0]
        self.node = g.pair_node
        # node families shared by several designs (a site that may change design): the
        # best arc into a node is then the cheapest over its designs
        self.shared = bool(n_pairs) and np.unique(self.node).size < n_pairs
        # existing-pack arcs that start each family's paths: (row of best, existing arc)
        self.ex_rows, self.ex_arcs = g.ex_pair[self.ex_new], self.ex_new
        self.single = None
        if single_design:
            # every design its own family (paths that keep one design: still paths of
            # the shared graph); an existing arc into a family starts each of its designs
            self.node = np.arange(n_pairs)
            self.shared = False
            order = np.argsort(g.ex_pair[self.ex_new], kind="stable")
            fam = g.ex_pair[self.ex_new][order]
            lo = np.searchsorted(fam, g.pair_node, side="left")
            hi = np.searchsorted(fam, g.pair_node, side="right")
            counts = hi - lo
            self.ex_rows = np.repeat(np.arange(n_pairs), counts)
            self.ex_arcs = self.ex_new[order][np.concatenate(
                [np.arange(a, b) for a, b in zip(lo, hi)]) if counts.sum() else np.zeros(0, dtype=np.int64)]
        elif self.shared:
            # one-design paths as extra columns: pricing one path per site and round
            # converges slowly; the best path of each design adds variety cheaply
            self.single = Pricer(g, single_design=True, engine=engine)
            # families laid out contiguously, so a family's cheapest design is a segment
            # minimum (np.minimum.reduceat) instead of a sort per year
            self.perm = np.argsort(self.node, kind="stable")
            fam_sorted = self.node[self.perm]
            self.seg_start = np.flatnonzero(np.r_[True, fam_sorted[1:] != fam_sorted[:-1]])
            self.seg_fam = fam_sorted[self.seg_start]
            self.seg_len = np.diff(np.r_[self.seg_start, n_pairs])
        self.new_nodes = np.unique(self.node[~self.has_ex[g.pair_site]])

    def values(self, arc_extra: np.ndarray, ex_extra: np.ndarray):
        """Shortest-path value per node family (and per site's keep arc) with ``arc_extra``
        / ``ex_extra`` added to the arc costs; remembers predecessors for :meth:`column`.

        The returned per-pair array holds each node family's value on its first pair and
        +inf on the other pairs of a shared family."""
        g, h, n = self.g, self.h, self.n_pairs
        cost = np.full(n * h * h, np.inf)
        cost[self.dense] = g.arc_cost + arc_extra
        cost = cost.reshape(n, h, h)
        best = np.full((n, h + 1), np.inf)
        pred = np.full((n, h + 1), -1, dtype=np.int64)
        best[self.new_nodes, 0] = 0.0
        if self.ex_arcs.size:
            e, r = self.ex_arcs, self.ex_rows
            best[r, g.ex_t[e]] = g.ex_cost[e] + ex_extra[e]
            pred[r, g.ex_t[e]] = -2 - e  # existing arc e encoded as -2 - e
        if _paths.SWEEP is not None and self.engine != "numpy":
            _paths.SWEEP(cost, self.arc_id, self.node, self.shared, best, pred, np.empty(n),
                         np.empty(n, dtype=np.int64))
        else:
            self._numpy_sweep(cost, best, pred)
        n_sites = len(g.sites)
        keep_val = np.full(n_sites, np.inf)
        keep_arc = np.full(n_sites, -1, dtype=np.int64)
        if self.ex_keep.size:
            e = self.ex_keep
            keep_val[g.ex_site[e]] = g.ex_cost[e] + ex_extra[e]
            keep_arc[g.ex_site[e]] = e
        self._last = (pred, pred[:, h])
        return best[:, h], keep_val, keep_arc

    def _numpy_sweep(self, cost, best, pred):
        """The year-by-year sweep of :meth:`values` in numpy (the compiled
        :func:`planner.optimize._path_kernels.year_sweep` does the same operations)."""
        n, h = self.n_pairs, self.h
        rows = np.arange(n)
        node = self.node
        for t2 in range(1, h + 1):  # years of the horizon (about 20), each step over all designs
            t1 = np.arange(t2)
            cand = best[node, :t2] + cost[:, t1, t2 - t1 - 1]
            j = np.argmin(cand, axis=1)
            v = cand[rows, j]
            arc = self.arc_id[rows, j, t2 - j - 1]
            if self.shared:
                # cheapest design per node family (first pair in family order on ties)
                vp = v[self.perm]
                low = np.minimum.reduceat(vp, self.seg_start)
                at = np.where(vp <= np.repeat(low, self.seg_len), np.arange(n), n)
                win = self.perm[np.minimum.reduceat(at, self.seg_start)]
                fam, v, arc = self.seg_fam, low, arc[win]
            else:
                fam = rows
            better = v < best[fam, t2]
            best[fam[better], t2] = v[better]
            pred[fam[better], t2] = arc[better]

    def column(self, pair: int, site: int, keep_arc: int = -1) -> Column:
        """Backtrack the cheapest path of node family ``pair`` (or the keep arc) found by
        :meth:`values`; the column's ``pair`` is the design of its first new pack."""
        g = self.g
        if pair < 0:
            return Column(site, -1, (), keep_arc, (), float(g.ex_cost[keep_arc]))
        pred, final_arc = self._last
        arcs = [int(final_arc[pair])]
        ex = None
        while True:  # at most H steps back through the years
            prev = int(pred[pair, int(g.arc_t1[arcs[-1]])])
            if prev >= 0:
                arcs.append(prev)
            else:
                if prev <= -2:
                    ex = -2 - prev
                break
        arcs.reverse()
        real = float(g.arc_cost[arcs].sum() + (g.ex_cost[ex] if ex is not None else 0.0))
        return Column(site, int(g.arc_pair[arcs[0]]), tuple(arcs), ex, tuple(int(g.arc_t1[a]) for a in arcs),
                      real)

    def price(self, arc_extra, ex_extra, sigma=None, per_site: int = 1, tol: float = 0.0):
        """Up to ``per_site`` columns per site (distinct designs), cheapest first, whose
        priced cost minus ``sigma`` is below ``-tol`` (all sites' best when sigma is None).

        Returns ``(best priced value per site, columns)``.
        """
        g = self.g
        final, keep_val, keep_arc = self.values(arc_extra, ex_extra)
        n_sites = len(g.sites)
        site_val = np.minimum(keep_val, np.inf)
        if self.n_pairs:
            np.minimum.at(site_val, g.pair_site, final)
        limit = np.full(n_sites, np.inf) if sigma is None else sigma - tol
        cols = []
        # candidates: (site, value, pair) for every design path and keep arc under the limit
        pair_ok = np.isfinite(final) & (final < limit[g.pair_site]) if self.n_pairs else np.zeros(0, bool)
        pairs = np.nonzero(pair_ok)[0]
        order = np.lexsort((final[pairs], g.pair_site[pairs]))
        pairs = pairs[order]
        taken = np.zeros(n_sites, dtype=np.int64)
        keep_ok = np.isfinite(keep_val) & (keep_val < limit)
        for s_ in np.nonzero(keep_ok)[0]:
            cols.append(self.column(-1, int(s_), int(keep_arc[s_])))
            taken[s_] += 1
        for p in pairs:  # a few per site
            s_ = int(g.pair_site[p])
            if taken[s_] >= per_site:
                continue
            taken[s_] += 1
            cols.append(self.column(int(p), s_))
        if self.single is not None and per_site > 1:
            _, more = self.single.price(arc_extra, ex_extra, sigma, per_site=per_site, tol=tol)
            cols += [c for c in more if c.pair >= 0]
        return site_val, cols


@dataclass
class MasterResult:
    """``stop`` says why pricing ended: "converged", "time_limit", "iterations" or
    "master LP: <HiGHS status>". ``infeasible`` is True when phase 1 proved that the
    fleet-wide rows cannot be met even in the LP relaxation; ``slack`` then holds each
    limit's share of the phase-1 slack (units: site visits, money). ``lp_feasible`` is
    True once the LP relaxation is known to meet every row (always, without fleet rows)."""

    columns: list[Column]
    lower_bound: float
    lp_objective: float
    iterations: int
    converged: bool
    slack: dict[str, float]
    y_lp: np.ndarray | None = None
    infeasible: bool = False
    stop: str = "converged"
    lp_feasible: bool = True


def generate_columns(g: SiteGraphs, site_group: np.ndarray, group_trip_cost: np.ndarray,
                     group_open: np.ndarray, *, rate: float, payload_kg: float | None,
                     crew: float | None, budget: float | None, time_limit_s: float,
                     max_iterations: int = 500, per_site: int = 3,
                     bound_gap_frac: float = 0.0, feasibility_only: bool = False) -> MasterResult:
    """Solve the LP master by column generation; return all columns and a lower bound.

    ``site_group[s]`` is the trip group of site s; ``group_trip_cost[k]`` its trip cost;
    ``group_open[k]`` False for groups that never travel (sites needing no visit).
    Pricing stops early once the Lagrangian bound is within ``bound_gap_frac`` of the
    master LP value (the tailing-off of column generation buys little bound).
    With crew or budget rows, phase 1 first decides whether the LP relaxation can meet
    them (``infeasible`` when it cannot); ``feasibility_only`` stops after phase 1.
    """
    import highspy

    t_start = time.perf_counter()
    h = g.horizon_years
    n_sites = len(g.sites)
    n_groups = len(group_trip_cost)
    inf = highspy.kHighsInf
    pricer = Pricer(g)

    # row layout: convexity [0, n) | payload (k, t) | crew t | budget t | visit rows (s, t),
    # added only when a column first visits (s, t): until then the row would be
    # "-y <= 0", never binding, with dual 0 (keeps the degenerate master small)
    r_conv = 0
    r_pay = n_sites
    n_pay = n_groups * h if payload_kg is not None else 0
    r_crew = r_pay + n_pay
    n_crew = h if crew is not None else 0
    r_bud = r_crew + n_crew
    n_bud = h if budget is not None else 0
    n_rows = r_bud + n_bud
    visit_row = np.full((n_sites, h), -1, dtype=np.int64)
    lo = np.concatenate([np.ones(n_sites), np.full(n_pay + n_crew + n_bud, -inf)])
    hi = np.concatenate([np.ones(n_sites), np.zeros(n_pay),
                         np.full(n_crew, float(crew or 0.0)), np.full(n_bud, float(budget or 0.0))])

    with quiet_stdout():  # the banner is printed when the instance is created
        hs = highspy.Highs()
        hs.setOptionValue("output_flag", False)
        hs.setOptionValue("threads", 1)
        # re-solves after adding columns start from the last basis; presolve would discard it
        hs.setOptionValue("presolve", "off")
    hs.addRows(n_rows, lo, hi, 0, np.zeros(1, dtype=np.int32), np.zeros(0, dtype=np.int32), np.zeros(0))

    # trip columns y[k, t]
    ks, ts = np.meshgrid(np.arange(n_groups), np.arange(h), indexing="ij")
    ks, ts = ks.ravel(), ts.ravel()
    y_cost = group_trip_cost[ks] * ec.spv(rate, ts)
    y_ub = np.where(group_open[ks], 1.0 if payload_kg is None else float(max(1, n_sites)), 0.0)
    entries = []
    for k, t in zip(ks, ts):  # one column per (group, year): G*H, small
        idx, val = [], []
        if payload_kg is not None:
            idx.append(r_pay + k * h + t)
            val.append(-float(payload_kg))
        if budget is not None:
            idx.append(r_bud + t)
            val.append(float(group_trip_cost[k]))
        entries.append((idx, val))
    # phase 1 (only with fleet rows): every schedule and trip costs 0, the slack on the
    # fleet rows costs 1; phase 2 puts the real costs back and closes the slack
    phase1 = n_crew + n_bud > 0
    real_cost = list(y_cost)
    _add_cols(hs, np.zeros(len(y_cost)) if phase1 else y_cost, np.zeros(len(y_cost)), y_ub, entries)
    n_fixed = len(y_cost)
    slack_rows = list(range(r_crew, r_crew + n_crew)) + list(range(r_bud, r_bud + n_bud))
    _add_cols(hs, np.ones(len(slack_rows)), np.zeros(len(slack_rows)), np.full(len(slack_rows), inf),
              [([r], [-1.0]) for r in slack_rows])
    real_cost += [0.0] * len(slack_rows)
    n_fixed += len(slack_rows)

    columns: list[Column] = []

    def column_entries(col: Column):
        s, k = col.site, int(site_group[col.site])
        return column_coefficients(
            g, col, convex_row=r_conv + s, visit_row=lambda t: int(visit_row[s, t]),
            pay_row=None if payload_kg is None else (lambda t: r_pay + k * h + t),
            crew_row=None if crew is None else (lambda t: r_crew + t),
            budget_row=None if budget is None else (lambda t: r_bud + t))

    def add(cols):
        nonlocal n_rows
        cols = [c for c in cols if c is not None]
        new_rows = sorted({(c.site, t) for c in cols for t in c.years if visit_row[c.site, t] < 0})
        if new_rows:
            sv = np.array([r[0] for r in new_rows], dtype=np.int64)
            tv = np.array([r[1] for r in new_rows], dtype=np.int64)
            visit_row[sv, tv] = n_rows + np.arange(sv.size)
            n_rows += sv.size
            # entry: -1 on y[group(s), t] (column index k*h + t)
            hs.addRows(sv.size, np.full(sv.size, -inf), np.zeros(sv.size), sv.size,
                       np.arange(sv.size, dtype=np.int32), (site_group[sv] * h + tv).astype(np.int32),
                       -np.ones(sv.size))
        if cols:
            costs = np.array([c.cost for c in cols])
            real_cost.extend(costs)
            _add_cols(hs, np.zeros(len(cols)) if phase1 else costs, np.zeros(len(cols)),
                      np.full(len(cols), inf), [column_entries(c) for c in cols])
            columns.extend(cols)

    # start: each site's best schedule if it paid for its own trips
    visit_price = np.zeros(g.arc_cost.size)
    trip = group_trip_cost[site_group[g.arc_site]] * ec.spv(rate, g.arc_t1)
    # and each design's best schedule with free trips, so every design starts in the master
    _, first = pricer.price(visit_price + trip, np.zeros(g.ex_cost.size), per_site=per_site)
    add(first)
    _, free = pricer.price(visit_price, np.zeros(g.ex_cost.size), per_site=per_site)
    add(free)
    # sites with no schedule at all cannot be served (callers screen these out first)
    lower = -math.inf
    z = math.nan
    y_lp = None
    fleet_slack = np.zeros(len(slack_rows))
    converged = False
    stop = "iterations"
    # phase 1 ends when its slack is zero (up to this many visits or money units)
    feas_tol = 1e-7
    it = 0

    def slack_by_limit():
        out = {}
        if n_crew:
            out["crew_site_visits_per_year"] = float(fleet_slack[:n_crew].sum())
        if n_bud:
            out["annual_budget"] = float(fleet_slack[n_crew:].sum())
        return out

    for it in range(1, max_iterations + 1):
        with quiet_stdout():
            hs.run()
        status = hs.getModelStatus()
        if status != highspy.HighsModelStatus.kOptimal:
            # not a time limit: the master LP itself failed; callers say so
            return MasterResult(columns, -math.inf, math.nan, it, False, slack_by_limit(),
                                stop=f"master LP: {hs.modelStatusToString(status)}", lp_feasible=not phase1)
        z = float(hs.getInfo().objective_function_value)
        solution = hs.getSolution()
        y_lp = np.asarray(solution.col_value)[:n_groups * h].reshape(n_groups, h)
        fleet_slack = np.asarray(solution.col_value)[n_groups * h:n_fixed]
        dual = np.asarray(solution.row_dual)
        sigma = dual[r_conv:r_conv + n_sites]
        vis = np.where(visit_row >= 0, dual[np.maximum(visit_row, 0)], 0.0)
        extra = -vis[g.arc_site, g.arc_t1]
        if payload_kg is not None:
            pay = dual[r_pay:r_pay + n_pay].reshape(n_groups, h)
            extra -= pay[site_group[g.arc_site], g.arc_t1] * g.arc_mass_kg
        ex_extra = np.zeros(g.ex_cost.size)
        if crew is not None:
            extra -= dual[r_crew + g.arc_t1]
        if budget is not None:
            bud = np.concatenate([dual[r_bud:r_bud + h], [0.0]])
            extra -= bud[g.arc_t1] * g.arc_spend_t1 + bud[g.arc_t2] * g.arc_spend_t2
            ex_extra -= bud[np.minimum(g.ex_t, h)] * g.ex_spend
        if phase1 and z <= feas_tol:
            # the fleet rows are met: phase 2 with the real costs and the slack closed
            phase1 = False
            if feasibility_only:
                return MasterResult(columns, -math.inf, math.nan, it, True, slack_by_limit())
            n_col = hs.getNumCol()
            hs.changeColsCost(n_col, np.arange(n_col, dtype=np.int32), np.asarray(real_cost, dtype=float))
            idx = np.arange(n_groups * h, n_fixed, dtype=np.int32)
            hs.changeColsBounds(idx.size, idx, np.zeros(idx.size), np.zeros(idx.size))
            continue
        scale = max(1.0, abs(z))
        if phase1:
            # phase-1 reduced cost of a schedule: its duals alone (its own cost is 0)
            values, new = pricer.price(extra - g.arc_cost, ex_extra - g.ex_cost, sigma, per_site=per_site,
                                       tol=_NEG * scale)
            # Lagrangian bound on the least slack: above zero, no LP solution (and so no
            # plan) meets the fleet rows
            if not new or z + float(np.minimum(values - sigma, 0.0).sum()) > feas_tol:
                return MasterResult(columns, -math.inf, math.nan, it, True, slack_by_limit(), infeasible=True,
                                    lp_feasible=False)
        else:
            values, new = pricer.price(extra, ex_extra, sigma, per_site=per_site, tol=_NEG * scale)
            rc = values - sigma
            lower = max(lower, z + float(np.minimum(rc, 0.0).sum()))
            if not new:
                converged, stop = True, "converged"
                break
            if z - lower <= bound_gap_frac * scale:
                converged, stop = True, "converged"  # LP bound proved to within bound_gap_frac
                break
        add(new)
        if time.perf_counter() - t_start > time_limit_s:
            stop = "time_limit"
            break
    if phase1:
        # stopped before phase 1 decided: no plan proved, no bound
        return MasterResult(columns, -math.inf, math.nan, it, False, slack_by_limit(), stop=stop,
                            lp_feasible=False)
    if converged:
        lower = max(lower, z)
    return MasterResult(columns, lower, z, it, converged, slack_by_limit(), y_lp, stop=stop)


def column_coefficients(g: SiteGraphs, col: Column, *, convex_row, visit_row, pay_row=None,
                        crew_row=None, budget_row=None):
    """Rows and coefficients of one site schedule (a column) in a master or integer problem.

    The schedule takes its site's convexity row (1), a visit row per replacement year (1),
    and, where those fleet limits exist, the payload row of its trip group and year (pack
    mass), the crew row of the year (1) and the budget row of each year it spends in
    (undiscounted spend). Row numbers come from the callables of year ``t``.
    """
    h = g.horizon_years
    rows, vals = [convex_row], [1.0]
    spend = np.zeros(h)
    for a in col.arcs:
        t1, t2 = int(g.arc_t1[a]), int(g.arc_t2[a])
        rows.append(visit_row(t1))
        vals.append(1.0)
        if pay_row is not None:
            rows.append(pay_row(t1))
            vals.append(float(g.arc_mass_kg[a]))
        if crew_row is not None:
            rows.append(crew_row(t1))
            vals.append(1.0)
        spend[t1] += g.arc_spend_t1[a]
        if t2 < h:
            spend[t2] += g.arc_spend_t2[a]
    if col.ex is not None and g.ex_t[col.ex] < h:
        spend[g.ex_t[col.ex]] += g.ex_spend[col.ex]
    if budget_row is not None:
        for t in np.nonzero(spend)[0]:
            rows.append(budget_row(int(t)))
            vals.append(float(spend[t]))
    return rows, vals


def _add_cols(hs, cost, lower, upper, entries):
    starts, index, value = [], [], []
    for idx, val in entries:
        starts.append(len(index))
        index.extend(idx)
        value.extend(val)
    hs.addCols(len(cost), np.asarray(cost, dtype=float), np.asarray(lower, dtype=float),
               np.asarray(upper, dtype=float), len(index), np.asarray(starts, dtype=np.int32),
               np.asarray(index, dtype=np.int32), np.asarray(value, dtype=float))


def group_costs(pricer: Pricer, site_group: np.ndarray, y: np.ndarray, trip_cost: np.ndarray,
                rate: float) -> np.ndarray:
    """Exact present cost of each trip group given its trip years ``y`` (groups x years):
    trips plus every site's cheapest path over those years (+inf if a site has none)."""
    g = pricer.g
    n_groups, h = y.shape
    allowed = y[site_group[g.arc_site], g.arc_t1] > 0.5
    final, keep_val, _ = pricer.values(np.where(allowed, 0.0, np.inf), np.zeros(g.ex_cost.size))
    site_val = keep_val.copy()
    np.minimum.at(site_val, g.pair_site, final)
    per_site = np.bincount(site_group, weights=np.where(np.isfinite(site_val), site_val, 0.0),
                           minlength=n_groups)
    bad = np.bincount(site_group, weights=~np.isfinite(site_val), minlength=n_groups) > 0
    trip_pv = trip_cost[:, None] * ec.spv(rate, np.arange(h))[None, :]
    return np.where(bad, np.inf, per_site + (y * trip_pv).sum(axis=1))


def polish_trip_years(g: SiteGraphs, site_group: np.ndarray, y: np.ndarray, trip_cost: np.ndarray,
                      rate: float, *, deadline: float, max_passes: int = 6) -> np.ndarray:
    """Local search on the trip years of several independent trip groups at once.

    Moves: open/close one year, or shift a trip by one year; every move is tried in all
    groups together (one fleet-wide shortest-path evaluation per move) and kept in the
    groups where it lowers cost. Only for groups without payload, crew or budget rows,
    where a site's best schedule given the trip years is its shortest path.
    """
    pricer = Pricer(g)
    h = g.horizon_years

    def cost(yy):
        return group_costs(pricer, site_group, yy, trip_cost, rate)

    best = cost(y)
    for _ in range(max_passes):
        improved = False
        moves = [("flip", t) for t in range(h)] + [("shift", t) for t in range(h - 1)]
        for kind, t in moves:  # about 2H moves, each vectorised over every group and site
            if time.perf_counter() > deadline:
                return y
            trial = y.copy()
            if kind == "flip":
                trial[:, t] = 1.0 - trial[:, t]
            else:
                trial[:, [t, t + 1]] = trial[:, [t + 1, t]]
            c = cost(trial)
            better = c < best - 1e-9 * np.maximum(1.0, np.abs(best))
            if better.any():
                y = np.where(better[:, None], trial, y)
                best = np.where(better, c, best)
                improved = True
        if not improved:
            break
    return y
