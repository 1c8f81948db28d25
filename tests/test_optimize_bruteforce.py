"""Independent brute-force reference for the fleet optimizer tests.

Enumerates every set of trip years per region and, per site, every candidate and every
set of replacement years drawn from those trip years; prices each schedule with
planner.economics.schedule_present_cost (NIST HB 135 cash flows), not with the
optimizer's arc arrays. Only for tiny fleets (horizon <= 6).
"""

import itertools
import math

from planner import economics as ec


def _feasible(years, cand_life, existing_life, h):
    whole = math.floor(cand_life + 1e-9)
    if existing_life is None:
        if not years or years[0] != 0:
            return False
    else:
        if not years:
            return existing_life >= h - 1e-9
        if years[0] > math.floor(max(existing_life, 0.0) + 1e-9):
            return False
    if whole < 1 and years:
        return False
    for a, b in zip(years, years[1:]):
        if b - a > whole:
            return False
    return h - years[-1] <= cand_life + 1e-9


def site_best(site, allowed, h, rate, residual=True):
    """Cheapest (cost, candidate index, years) for one site given allowed visit years."""
    ex = site.existing
    ex_life = None if ex is None else float(ex.remaining_life_years)
    fail_cost = site.unplanned_trip_cost + site.downtime_cost_per_day * ec.expected_wait_days(site.access_months)
    best = (math.inf, None, None)
    allowed = sorted(allowed)
    subsets = [()]
    for r in range(1, len(allowed) + 1):
        subsets += list(itertools.combinations(allowed, r))
    for k, c in enumerate(site.candidates):
        for years in subsets:
            if not _feasible(list(years), c.life_years, ex_life, h):
                continue
            cost = ec.schedule_present_cost(
                years, horizon_years=h, rate=rate, pack_cost=c.pack_cost, life_years=c.life_years,
                install_cost=c.install_cost, disposal_cost=c.disposal_cost, trip_cost=site.site_visit_cost,
                existing_disposal_cost=None if ex is None else ex.disposal_cost,
                failure_prob_by_age=c.failure_prob_by_age, failure_cost=fail_cost,
                existing_failure_prob_by_age=None if ex is None else ex.failure_prob_by_age,
                residual_value=residual).total
            if cost < best[0] - 1e-12:
                best = (cost, k, years)
    if ex_life is not None and ex_life >= h - 1e-9:
        keep = ec.schedule_present_cost((), horizon_years=h, rate=rate, pack_cost=0.0, life_years=1.0,
                                        failure_cost=fail_cost,
                                        existing_failure_prob_by_age=ex.failure_prob_by_age).total
        if keep < best[0]:
            best = (keep, None, ())
    return best


def fleet_best(problem):
    """Brute-force optimum of a FleetProblem whose sites are all reachable every month."""
    h = problem.horizon_years
    rate = problem.discount_rate_frac
    total = 0.0
    for region in sorted({s.region for s in problem.sites}):
        sites = [s for s in problem.sites if s.region == region]
        trip = problem.trip_cost_by_region[region]
        best = math.inf
        for mask in range(1 << h):
            allowed = [t for t in range(h) if mask >> t & 1]
            cost = sum(trip * float(ec.spv(rate, t)) for t in allowed)
            for s in sites:
                cost += site_best(s, allowed, h, rate, problem.residual_value)[0]
                if cost >= best:
                    break
            best = min(best, cost)
        total += best
    return total
