"""Where one more capacity test pays: expected value of sample information per site.

For a pack in service, a capacity test now would move the belief about its fade and so,
perhaps, the year it is replaced. Its value is the expected saving in present cost from
re-planning on the result (Bayesian preposterior analysis: Raiffa & Schlaifer 1961,
*Applied Statistical Decision Theory*, ch. 4; for inspections of degrading systems,
Straub & Faber 2005, Structural Safety 27(4) 335-355):

    EVSI = E_y[ C(a0 | b_y) - min(C(a0 | b_y), min_a C(a | b_y)) ]

with ``b_y`` the belief after a test reading ``y`` (drawn from the current predictive),
``a0`` the best replacement of the pack under today's belief, and ``C`` the site's
present cost under a belief: disposal, failure risk of the pack in service until it is
replaced (priced as the optimizer prices it), and the cheapest continuation with new
packs from that year. The net value subtracts the test's marginal cost: its labour where
a visit to the site is planned in year 0 anyway, a site visit where a trip to its region
goes in year 0, a whole trip otherwise.

Re-planning is per site with the other sites' trips held fixed (a year in which a trip
of the site's region already goes, in a month the site can be reached, costs no trip):
the fleet is not re-solved per site and result. Crew and budget limits are left out of
this per-site re-planning. The cost of each continuation comes from one backward pass
over the site's schedule graph (:mod:`planner.optimize.schedule`), so the value of every
result is a minimum over at most H+1 numbers.

Today's belief is the posterior of :mod:`planner.evidence.fleet` where the chemistry has
records; where it has none yet, the fleet model's prior (the plan itself keeps the
laboratory prediction there, whose spread is the cells' spread inside one pack only).
Primary packs are not tested (a test spends the charge it measures).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from planner import economics as ec
from planner.evidence._kernels import t4_cdf
from planner.evidence.fleet import FleetEvidence, curve_of, packs_in_service
from planner.evidence.hierarchy import (
    D_GRID,
    G_GRID,
    Observations,
    prior_hyper,
    site_posteriors,
    student_t_logpdf,
)
from planner.evidence.lives import total_life_years
from planner.evidence.observations import TEST_SIGMA_FRAC
from planner.optimize.candidates import screen_site
from planner.optimize.problem import ExistingPack, FleetProblem, FleetSolution
from planner.optimize.schedule import build_graphs, failure_cost

#: Simulated results of the one more test per site (Latin-hypercube strata of the
#: predictive: factor belief and measurement error).
N_RESULTS = 16


@dataclass(frozen=True)
class TestValue:
    """The value of one more capacity test at one site (money of the study start)."""

    site_id: str
    region: str
    chemistry: str
    value: float
    test_cost: float
    cost_basis: str
    replace_year_now: int | None
    replace_year_low: int | None
    replace_year_high: int | None
    change_frac: float
    factor_log_sd: float

    @property
    def net_value(self) -> float:
        return self.value - self.test_cost

    def to_dict(self) -> dict:
        return {"site_id": self.site_id, "region": self.region, "chemistry": self.chemistry,
                "value": round(self.value, 2), "test_cost": round(self.test_cost, 2),
                "net_value": round(self.net_value, 2), "test_cost_basis": self.cost_basis,
                "replacement_year_now": self.replace_year_now,
                "replacement_year_after_test_low": self.replace_year_low,
                "replacement_year_after_test_high": self.replace_year_high,
                "replacement_changes_frac": round(self.change_frac, 4),
                "factor_log_sd": round(self.factor_log_sd, 4)}


def rank_tests(study, problem: FleetProblem, solution: FleetSolution, designs,
               evidence: FleetEvidence | None) -> list[TestValue]:
    """:class:`TestValue` of every pack in service worth testing, best net value first."""
    options = {s.site_id: s for s in problem.sites}
    plans = {p.site_id: p for p in solution.sites}
    todo = []
    for i, outcome in packs_in_service(study, designs):
        site_id = study.sites[i].id
        if outcome.design.chemistry == "lisocl2" or site_id not in plans or site_id not in options:
            continue
        if outcome.eol_soh_frac >= 1.0:
            continue  # too small even new: replaced at the first visit whatever a test says
        todo.append((site_id, outcome))
    if not todo:
        return []
    h = int(problem.horizon_years)
    rate = problem.discount_rate_frac
    cont = _continuation_costs(problem, solution, [options[s] for s, _ in todo])
    labour_rate = study.settings["costs"]["labour_rate_per_h"]
    labour = study.settings["field_data"]["test_labour_h"] * labour_rate
    out = []
    by_chem: dict[str, list[int]] = {}
    for k, (_, outcome) in enumerate(todo):
        by_chem.setdefault(outcome.design.chemistry, []).append(k)
    for chem, members in sorted(by_chem.items()):
        hyper = evidence.hyper(chem) if evidence is not None else prior_hyper()
        obs = []
        for k in members:
            ev = evidence.site(todo[k][0]) if evidence is not None else None
            obs.append(ev.records.observations if ev is not None else Observations.empty())
        for m, post in site_posteriors(hyper, obs):
            k = members[m]
            site_id, outcome = todo[k]
            opt = options[site_id]
            value, now, low, high, change = _site_value(curve_of(outcome), post, hyper.rho, cont[k],
                                                        failure_cost(opt), h, rate)
            cost, basis = _test_cost(opt, plans[site_id], solution, problem, labour)
            marginal = post.sum(axis=1)
            mean = float(np.sum(marginal * G_GRID))
            sd = math.sqrt(max(float(np.sum(marginal * (G_GRID - mean) ** 2)), 0.0))
            out.append(TestValue(site_id, opt.region, chem, value, cost, basis, now, low, high,
                                 change, sd))
    out.sort(key=lambda v: (-v.net_value, v.site_id))
    return out


# ---------------------------------------------------------------- costs of a site's plan


def _continuation_costs(problem: FleetProblem, solution: FleetSolution, sites) -> np.ndarray:
    """``W[i, t]``: present cost of taking site i's pack in service out in year ``t`` and
    carrying on at least cost with new packs (t < H), or keeping it (t = H), with the
    other sites' trips fixed; failure risk of the pack in service left out (it depends
    on the belief). +inf where impossible."""
    h = int(problem.horizon_years)
    rate = problem.discount_rate_frac
    open_sites = [replace(s, existing=ExistingPack(
        remaining_life_years=float(h), chemistry=s.existing.chemistry, capacity_wh=s.existing.capacity_wh,
        mass_kg=s.existing.mass_kg, disposal_cost=s.existing.disposal_cost)) for s in sites]
    cands = [screen_site(s, problem.payload_kg_per_trip)[0] for s in open_sites]
    g = build_graphs(open_sites, cands, horizon_years=h, rate=rate, residual_value=problem.residual_value,
                     design_changes=problem.design_changes)
    trip_free = _trip_free_years(problem, solution, open_sites)
    site_of_arc = g.pair_site[g.arc_pair]
    trip_cost = np.array([problem.trip_cost_by_region[s.region] for s in open_sites])
    extra = np.where(trip_free[site_of_arc, g.arc_t1], 0.0, trip_cost[site_of_arc] * ec.spv(rate, g.arc_t1))
    value = np.full((len(g.pair_cand), h + 1), np.inf)
    value[:, h] = 0.0
    family = g.pair_node[g.arc_pair]
    arc_total = g.arc_cost + extra
    for t in range(h - 1, -1, -1):  # backward over the years: about 20 vectorised steps
        sel = np.flatnonzero(g.arc_t1 == t)
        cand = arc_total[sel] + value[family[sel], g.arc_t2[sel]]
        np.minimum.at(value[:, t], family[sel], cand)
    w = np.full((len(sites), h + 1), np.inf)
    for e in range(g.ex_site.size):  # one row per site, family and year
        i, p, t = int(g.ex_site[e]), int(g.ex_pair[e]), int(g.ex_t[e])
        total = g.ex_cost[e] + (value[p, t] if p >= 0 else 0.0)
        w[i, t] = min(w[i, t], total)
    return w


def _trip_free_years(problem, solution, sites) -> np.ndarray:
    """``free[i, t]``: a trip of site i's region goes in year t for other sites, in a month
    site i can be reached."""
    h = int(problem.horizon_years)
    free = np.zeros((len(sites), h + 1), dtype=bool)
    by_region: dict[str, list] = {}
    for trip in solution.trips:
        by_region.setdefault(trip.region, []).append(trip)
    for i, s in enumerate(sites):
        months = set(s.access_months)
        for trip in by_region.get(s.region, ()):
            if trip.month in months and any(x != s.site_id for x in trip.site_ids) and trip.year < h:
                free[i, trip.year] = True
    return free


def _test_cost(site, plan, solution, problem, labour: float) -> tuple[float, str]:
    """Marginal cost of one capacity test in year 0 and what it pays for."""
    if plan is not None and 0 in plan.replacement_years:
        return labour, "labour (visit planned)"
    months = set(site.access_months)
    if any(t.region == site.region and t.year == 0 and t.month in months for t in solution.trips):
        return labour + site.site_visit_cost, "labour and a site visit (trip planned)"
    return (labour + site.site_visit_cost + problem.trip_cost_by_region[site.region],
            "labour, a site visit and a trip")


# ---------------------------------------------------------------- preposterior analysis


def _site_value(curve, post, rho, cont, c_fail, h, rate):
    """Expected saving of one test now at one site: (value, replacement year now, lowest
    and highest year after a test, share of results that change the year)."""
    if not np.isfinite(cont).any():
        return 0.0, None, None, None, 0.0
    w0, g, d = _coarse(post)
    remaining = total_life_years(curve, g, d, rho) - curve.age_years
    loss_now = curve.loss_frac(rho)[min(int(round(curve.age_years * 12)), curve.calendar_loss_frac.size - 1)]
    mean_now = 1.0 + d - np.exp(g) * loss_now
    results = _predictive_results(mean_now, w0)
    ll = student_t_logpdf((results[:, None] - mean_now[None, :]) / TEST_SIGMA_FRAC)
    weights = np.vstack([w0, w0[None, :] * np.exp(ll - ll.max(axis=1, keepdims=True))])
    weights /= weights.sum(axis=1, keepdims=True)
    service_left = max(0.0, curve.service_limit_years - curve.age_years)
    costs, priced = _plan_costs(remaining, weights, service_left, cont, c_fail, h, rate)
    best_now = int(np.argmin(costs[0]))
    # without the test the pack still goes out in year best_now; its risk is priced under
    # what the result says (even beyond the latest replacement the result would allow)
    keep_now = priced[1:, best_now]
    best_after = costs[1:].min(axis=1)
    saving = np.maximum(keep_now - np.minimum(best_after, keep_now), 0.0)
    years = costs[1:].argmin(axis=1)
    return (float(saving.mean()), best_now, int(years.min()), int(years.max()),
            float(np.mean(years != best_now)))


#: The belief on a coarser grid for the preposterior loop (cells of COARSE_G x COARSE_D
#: grid points summed): a test's value needs the decision, not the fine posterior.
COARSE_G, COARSE_D = 2, 3


def _coarse(post):
    """``(weights, g, δ)`` of the posterior summed into coarse cells (weighted centres)."""
    kg, kd = COARSE_G, COARSE_D
    ng, nd = post.shape[0] // kg * kg, post.shape[1] // kd * kd
    p = post[:ng, :nd]
    blocks = p.reshape(ng // kg, kg, nd // kd, kd)
    w = blocks.sum(axis=(1, 3))
    safe = np.where(w > 0, w, 1.0)
    g = (blocks.sum(axis=3) * G_GRID[:ng].reshape(-1, kg)[:, :, None]).sum(axis=1) / safe
    d = (blocks.sum(axis=1) * D_GRID[:nd].reshape(-1, kd)[None, :, :]).sum(axis=2) / safe
    g = np.where(w > 0, g, G_GRID[:ng].reshape(-1, kg).mean(axis=1)[:, None])
    d = np.where(w > 0, d, D_GRID[:nd].reshape(-1, kd).mean(axis=1)[None, :])
    return w.ravel() / w.sum(), g.ravel(), d.ravel()


def _predictive_results(mean_now, w0) -> np.ndarray:
    """:data:`N_RESULTS` test readings stratified over the predictive: belief quantiles
    paired with measurement-error quantiles in a fixed Latin-hypercube order."""
    n = N_RESULTS
    u = (np.arange(n) + 0.5) / n
    order = np.argsort(mean_now)
    c = np.cumsum(w0[order])
    c /= c[-1]
    m = mean_now[order][np.minimum(np.searchsorted(c, u), order.size - 1)]
    return m + TEST_SIGMA_FRAC * _ERROR_QUANTILES


def _error_quantiles(n: int) -> np.ndarray:
    """Measurement-error strata of the results, in a fixed order prime to ``n``."""
    v = ((np.arange(n) * 7) % n + 0.5) / n  # 7 is prime to N_RESULTS: a permutation
    return _t4_quantile(v)


def _t4_quantile(p):
    """Inverse of :func:`planner.evidence._kernels.t4_cdf` by bisection (vectorised)."""
    lo, hi = np.full_like(p, -50.0), np.full_like(p, 50.0)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        below = t4_cdf(mid) < p
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    return 0.5 * (lo + hi)


def _plan_costs(remaining, weights, service_left, cont, c_fail, h, rate):
    """Present cost of replacing the pack in service in each year 0..H (H: keeping it)
    under each belief (rows of ``weights``): ``(allowed, priced)``, the first +inf where
    the belief's latest replacement (median remaining life, capped by the service limit)
    forbids the year, the second the priced cost of every year."""
    n_b = weights.shape[0]
    alive = remaining > 0.0
    order = np.argsort(remaining)
    r_sorted = remaining[order]
    w_sorted = weights[:, order] * alive[order][None, :]
    total = w_sorted.sum(axis=1, keepdims=True)
    dead = total[:, 0] < 1e-9
    w_sorted = w_sorted / np.where(total > 0, total, 1.0)
    cum = np.cumsum(w_sorted, axis=1)
    # P(remaining < a | alive) for a = 0..H
    ages = np.arange(h + 1, dtype=float)
    at = np.searchsorted(r_sorted, ages, side="left")
    f = np.where(at[None, :] > 0, cum[:, np.maximum(at - 1, 0)], 0.0)
    f = np.maximum.accumulate(f, axis=1)
    f[dead] = 1.0
    pdf = np.diff(f, axis=1)
    risk = np.concatenate([np.zeros((n_b, 1)), np.cumsum(pdf * ec.spv(rate, np.arange(1, h + 1)), axis=1)],
                          axis=1)
    median_at = (cum < 0.5).sum(axis=1)
    median = r_sorted[np.minimum(median_at, r_sorted.size - 1)]
    latest = np.where(dead, 0.0, np.minimum(np.maximum(median, 0.0), service_left))
    costs = cont[None, :] + c_fail * risk
    years = np.arange(h + 1)
    allowed = (years[None, :] <= np.floor(latest[:, None] + 1e-9)) & (years[None, :] < h)
    allowed |= (years[None, :] == h) & (latest[:, None] >= h - 1e-9)
    return np.where(allowed, costs, np.inf), costs


_ERROR_QUANTILES = _error_quantiles(N_RESULTS)
