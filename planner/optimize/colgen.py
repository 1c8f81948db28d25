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
from typing import NamedTuple

import numpy as np

from planner import economics as ec
from planner.optimize.pricing import Column, Pricer
from planner.optimize.schedule import SiteGraphs
from planner.optimize.solver import quiet_stdout

_NEG = 1e-7


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
    t_start = time.perf_counter()
    pricer = Pricer(g)
    master = _Master(g, site_group, group_trip_cost, group_open, rate=rate, payload_kg=payload_kg,
                     crew=crew, budget=budget)
    _seed_columns(master, pricer, group_trip_cost, rate, per_site)
    # sites with no schedule at all cannot be served (callers screen these out first)
    lower = -math.inf
    lp = _LpSolution(math.nan, None, np.zeros(master.n_slack), None)
    stop = "iterations"
    it = 0
    for it in range(1, max_iterations + 1):
        failed = master.solve()
        if failed is not None:
            # not a time limit: the master LP itself failed; callers say so
            return MasterResult(master.columns, -math.inf, math.nan, it, False, master.slack_by_limit(lp.slack),
                                stop=f"master LP: {failed}", lp_feasible=not master.phase1)
        lp = master.solution()
        if master.phase1 and lp.z <= _FEASIBLE_SLACK:
            # the fleet rows are met: phase 2 with the real costs and the slack closed
            if feasibility_only:
                return MasterResult(master.columns, -math.inf, math.nan, it, True, master.slack_by_limit(lp.slack))
            master.start_phase2()
            continue
        prices = master.prices(lp.dual)
        tol = _NEG * max(1.0, abs(lp.z))
        if master.phase1:
            new = _phase1_columns(pricer, prices, lp.z, per_site, tol)
            if new is None:
                return MasterResult(master.columns, -math.inf, math.nan, it, True, master.slack_by_limit(lp.slack),
                                    infeasible=True, lp_feasible=False)
        else:
            values, new = pricer.price(prices.arc_extra, prices.ex_extra, prices.sigma, per_site=per_site, tol=tol)
            lower = max(lower, lp.z + float(np.minimum(values - prices.sigma, 0.0).sum()))
            # no column prices out, or the LP bound is proved to within bound_gap_frac
            if not new or lp.z - lower <= bound_gap_frac * max(1.0, abs(lp.z)):
                stop = "converged"
                break
        master.add(new)
        if time.perf_counter() - t_start > time_limit_s:
            stop = "time_limit"
            break
    if master.phase1:
        # stopped before phase 1 decided: no plan proved, no bound
        return MasterResult(master.columns, -math.inf, math.nan, it, False, master.slack_by_limit(lp.slack),
                            stop=stop, lp_feasible=False)
    converged = stop == "converged"
    if converged:
        lower = max(lower, lp.z)
    return MasterResult(master.columns, lower, lp.z, it, converged, master.slack_by_limit(lp.slack), lp.y_lp,
                        stop=stop)


# phase 1 ends when its slack is zero (up to this many site visits or money units)
_FEASIBLE_SLACK = 1e-7


class _LpSolution(NamedTuple):
    """One solve of the master LP: objective, trip columns y[k, t] (groups x years),
    slack on the fleet rows, and the row duals."""

    z: float
    y_lp: np.ndarray | None
    slack: np.ndarray
    dual: np.ndarray | None


class _Prices(NamedTuple):
    """Dual prices in pricing form: ``sigma`` per site (convexity rows), and what each
    arc and existing-pack arc adds to its cost (visit, payload, crew and budget rows)."""

    sigma: np.ndarray
    arc_extra: np.ndarray
    ex_extra: np.ndarray


def _seed_columns(master: _Master, pricer: Pricer, group_trip_cost, rate: float, per_site: int) -> None:
    """Start the master with each site's best schedule if it paid for its own trips, and
    each design's best schedule with free trips, so every design starts in the master."""
    g = master.g
    visit_price = np.zeros(g.arc_cost.size)
    trip = group_trip_cost[master.site_group[g.arc_site]] * ec.spv(rate, g.arc_t1)
    _, first = pricer.price(visit_price + trip, np.zeros(g.ex_cost.size), per_site=per_site)
    master.add(first)
    _, free = pricer.price(visit_price, np.zeros(g.ex_cost.size), per_site=per_site)
    master.add(free)


def _phase1_columns(pricer: Pricer, prices: _Prices, z: float, per_site: int, tol: float) -> list[Column] | None:
    """Columns that lower the phase-1 slack; None once the Lagrangian bound on the least
    slack is above zero: then no LP solution (and so no plan) meets the fleet rows."""
    g = pricer.g
    # phase-1 reduced cost of a schedule: its duals alone (its own cost is 0)
    values, new = pricer.price(prices.arc_extra - g.arc_cost, prices.ex_extra - g.ex_cost, prices.sigma,
                               per_site=per_site, tol=tol)
    if not new or z + float(np.minimum(values - prices.sigma, 0.0).sum()) > _FEASIBLE_SLACK:
        return None
    return new


class _Master:
    """The restricted master LP in HiGHS, re-solved warm after each round of columns.

    Columns: trips y[k, t] (group k, year t) first, then the slack of the fleet rows,
    then the site schedules. Rows: convexity [0, n) | payload (k, t) | crew t | budget
    t | visit rows (s, t), added only when a column first visits (s, t): until then the
    row would be "-y <= 0", never binding, with dual 0 (keeps the degenerate master
    small). With fleet rows, phase 1 gives every schedule and trip cost 0 and the slack
    cost 1; :meth:`start_phase2` puts the real costs back and closes the slack.
    """

    def __init__(self, g: SiteGraphs, site_group, group_trip_cost, group_open, *, rate, payload_kg,
                 crew, budget):
        import highspy

        self.g, self.site_group = g, site_group
        self.payload_kg, self.crew, self.budget = payload_kg, crew, budget
        self.h = h = g.horizon_years
        self.n_sites = n_sites = len(g.sites)
        self.n_groups = n_groups = len(group_trip_cost)
        self._optimal = highspy.HighsModelStatus.kOptimal
        self.inf = inf = highspy.kHighsInf
        self.r_conv = 0
        self.r_pay = n_sites
        self.n_pay = n_groups * h if payload_kg is not None else 0
        self.r_crew = self.r_pay + self.n_pay
        self.n_crew = h if crew is not None else 0
        self.r_bud = self.r_crew + self.n_crew
        self.n_bud = h if budget is not None else 0
        self.n_rows = self.r_bud + self.n_bud
        self.n_slack = self.n_crew + self.n_bud
        self.visit_row = np.full((n_sites, h), -1, dtype=np.int64)
        lo = np.concatenate([np.ones(n_sites), np.full(self.n_pay + self.n_crew + self.n_bud, -inf)])
        hi = np.concatenate([np.ones(n_sites), np.zeros(self.n_pay),
                             np.full(self.n_crew, float(crew or 0.0)), np.full(self.n_bud, float(budget or 0.0))])
        with quiet_stdout():  # the banner is printed when the instance is created
            self.hs = highspy.Highs()
            self.hs.setOptionValue("output_flag", False)
            self.hs.setOptionValue("threads", 1)
            # re-solves after adding columns start from the last basis; presolve would discard it
            self.hs.setOptionValue("presolve", "off")
        self.hs.addRows(self.n_rows, lo, hi, 0, np.zeros(1, dtype=np.int32), np.zeros(0, dtype=np.int32),
                        np.zeros(0))
        self.phase1 = self.n_slack > 0
        self.columns: list[Column] = []
        self.real_cost: list[float] = []
        self._add_trips_and_slack(group_trip_cost, group_open, rate)

    def _add_trips_and_slack(self, group_trip_cost, group_open, rate) -> None:
        """The trip columns y[k, t] (G*H, small) and one slack column per fleet row."""
        h, n_groups = self.h, self.n_groups
        ks, ts = np.meshgrid(np.arange(n_groups), np.arange(h), indexing="ij")
        ks, ts = ks.ravel(), ts.ravel()
        y_cost = group_trip_cost[ks] * ec.spv(rate, ts)
        y_ub = np.where(group_open[ks], 1.0 if self.payload_kg is None else float(max(1, self.n_sites)), 0.0)
        entries = []
        for k, t in zip(ks, ts):  # one column per (group, year): G*H, small
            idx, val = [], []
            if self.payload_kg is not None:
                idx.append(self.r_pay + k * h + t)
                val.append(-float(self.payload_kg))
            if self.budget is not None:
                idx.append(self.r_bud + t)
                val.append(float(group_trip_cost[k]))
            entries.append((idx, val))
        self.real_cost = list(y_cost)
        _add_cols(self.hs, np.zeros(len(y_cost)) if self.phase1 else y_cost, np.zeros(len(y_cost)), y_ub, entries)
        slack_rows = list(range(self.r_crew, self.r_crew + self.n_crew)) + list(range(self.r_bud,
                                                                                    self.r_bud + self.n_bud))
        _add_cols(self.hs, np.ones(len(slack_rows)), np.zeros(len(slack_rows)), np.full(len(slack_rows), self.inf),
                  [([r], [-1.0]) for r in slack_rows])
        self.real_cost += [0.0] * len(slack_rows)
        self.n_fixed = len(y_cost) + len(slack_rows)

    def _entries(self, col: Column):
        """Rows and coefficients of one schedule in this master."""
        s, k, h = col.site, int(self.site_group[col.site]), self.h
        return column_coefficients(
            self.g, col, convex_row=self.r_conv + s, visit_row=lambda t: int(self.visit_row[s, t]),
            pay_row=None if self.payload_kg is None else (lambda t: self.r_pay + k * h + t),
            crew_row=None if self.crew is None else (lambda t: self.r_crew + t),
            budget_row=None if self.budget is None else (lambda t: self.r_bud + t))

    def add(self, cols: list[Column]) -> None:
        """Add schedules as columns, with the visit rows they are the first to use."""
        cols = [c for c in cols if c is not None]
        new_rows = sorted({(c.site, t) for c in cols for t in c.years if self.visit_row[c.site, t] < 0})
        if new_rows:
            sv = np.array([r[0] for r in new_rows], dtype=np.int64)
            tv = np.array([r[1] for r in new_rows], dtype=np.int64)
            self.visit_row[sv, tv] = self.n_rows + np.arange(sv.size)
            self.n_rows += sv.size
            # entry: -1 on y[group(s), t] (column index k*h + t)
            self.hs.addRows(sv.size, np.full(sv.size, -self.inf), np.zeros(sv.size), sv.size,
                            np.arange(sv.size, dtype=np.int32), (self.site_group[sv] * self.h + tv).astype(np.int32),
                            -np.ones(sv.size))
        if cols:
            costs = np.array([c.cost for c in cols])
            self.real_cost.extend(costs)
            _add_cols(self.hs, np.zeros(len(cols)) if self.phase1 else costs, np.zeros(len(cols)),
                      np.full(len(cols), self.inf), [self._entries(c) for c in cols])
            self.columns.extend(cols)

    def solve(self) -> str | None:
        """Re-solve the LP; None when optimal, else HiGHS's status in words."""
        with quiet_stdout():
            self.hs.run()
        status = self.hs.getModelStatus()
        return None if status == self._optimal else self.hs.modelStatusToString(status)

    def solution(self) -> _LpSolution:
        z = float(self.hs.getInfo().objective_function_value)
        solution = self.hs.getSolution()
        n_y = self.n_groups * self.h
        values = np.asarray(solution.col_value)
        return _LpSolution(z, values[:n_y].reshape(self.n_groups, self.h), values[n_y:self.n_fixed],
                           np.asarray(solution.row_dual))

    def prices(self, dual: np.ndarray) -> _Prices:
        """The row duals as the pricing problem adds them to arcs and existing-pack arcs."""
        g, h = self.g, self.h
        sigma = dual[self.r_conv:self.r_conv + self.n_sites]
        vis = np.where(self.visit_row >= 0, dual[np.maximum(self.visit_row, 0)], 0.0)
        extra = -vis[g.arc_site, g.arc_t1]
        if self.payload_kg is not None:
            pay = dual[self.r_pay:self.r_pay + self.n_pay].reshape(self.n_groups, h)
            extra -= pay[self.site_group[g.arc_site], g.arc_t1] * g.arc_mass_kg
        ex_extra = np.zeros(g.ex_cost.size)
        if self.crew is not None:
            extra -= dual[self.r_crew + g.arc_t1]
        if self.budget is not None:
            bud = np.concatenate([dual[self.r_bud:self.r_bud + h], [0.0]])
            extra -= bud[g.arc_t1] * g.arc_spend_t1 + bud[g.arc_t2] * g.arc_spend_t2
            ex_extra -= bud[np.minimum(g.ex_t, h)] * g.ex_spend
        return _Prices(sigma, extra, ex_extra)

    def start_phase2(self) -> None:
        """The fleet rows are met: every column gets its real cost and the slack is closed."""
        self.phase1 = False
        n_col = self.hs.getNumCol()
        self.hs.changeColsCost(n_col, np.arange(n_col, dtype=np.int32), np.asarray(self.real_cost, dtype=float))
        idx = np.arange(self.n_groups * self.h, self.n_fixed, dtype=np.int32)
        self.hs.changeColsBounds(idx.size, idx, np.zeros(idx.size), np.zeros(idx.size))

    def slack_by_limit(self, slack: np.ndarray) -> dict[str, float]:
        """Each fleet limit's share of the phase-1 slack (site visits, money)."""
        out = {}
        if self.n_crew:
            out["crew_site_visits_per_year"] = float(slack[:self.n_crew].sum())
        if self.n_bud:
            out["annual_budget"] = float(slack[self.n_crew:].sum())
        return out


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
