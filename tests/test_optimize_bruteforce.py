"""Independent brute-force reference for the fleet optimizer tests.

Enumerates every set of trip years per region and, per site, every set of replacement
years drawn from those trip years and every candidate at each replacement (one candidate
for the whole schedule when design changes are off); prices each schedule pack by pack
from planner.economics cash flows (NIST HB 135), cross-checked against
planner.economics.schedule_present_cost for one design, never with the optimizer's arc
arrays. Only for tiny fleets (horizon <= 6).
"""

import itertools
import math

from planner import economics as ec


def _segment_ok(span, life, terminal):
    """A pack serves ``span`` whole years: up to its whole-year life between replacements,
    up to its (fractional) life when it carries the site to the horizon."""
    return span <= (life + 1e-9 if terminal else math.floor(life + 1e-9))


def path_cost(years, packs, site, h, rate, residual=True):
    """Present cost of one schedule whose pack ``packs[i]`` goes in at ``years[i]``, priced
    pack by pack from NIST HB 135 cash flows (SPV, linear residual, failure risk), each
    pack's price following its trend from the year it is bought, and the thermal measure
    of the first new pack paid once with it. None if infeasible."""
    ex = site.existing
    fail_cost = site.unplanned_trip_cost + site.downtime_cost_per_day * ec.expected_wait_days(site.access_months)
    ends = list(years[1:]) + [h]
    if len({c.thermal_measure for c in packs}) > 1:
        return None  # a site keeps the thermal measure of its first new pack
    first = packs[0]
    total = (first.measure_price + first.measure_labour_cost) * float(ec.spv(rate, years[0]))
    for t1, t2, c in zip(years, ends, packs):
        if not c.first_install_year <= t1 <= (h - 1 if c.last_install_year is None else c.last_install_year):
            return None
        if not _segment_ok(t2 - t1, c.life_years, t2 == h):
            return None
        price = c.pack_cost * (1.0 + c.price_trend_frac_per_year) ** t1
        total += (price + c.downtime_cost + c.install_cost + site.site_visit_cost) * float(ec.spv(rate, t1))
        if t2 < h:
            total += c.disposal_cost * float(ec.spv(rate, t2))
        elif residual:
            left = float(ec.residual_fraction(t2 - t1, c.life_years)) * float(ec.spv(rate, h))
            total -= (price + c.downtime_cost) * left
        total += ec.failure_risk_cost(t1, t2 - t1, c.failure_prob_by_age, fail_cost, rate)
    if ex is not None:
        total += ex.disposal_cost * float(ec.spv(rate, years[0]))
        total += ec.failure_risk_cost(0, years[0], ex.failure_prob_by_age, fail_cost, rate)
    return total


def schedule_costs(site, h, rate, residual=True, design_changes=False):
    """Cheapest cost of every replacement-year set of one site: {years: cost}. With
    ``design_changes`` every replacement may take any candidate, else one candidate
    serves the whole schedule; ``()`` is keeping the existing pack to the horizon."""
    ex = site.existing
    ex_life = None if ex is None else float(ex.remaining_life_years)
    fail_cost = site.unplanned_trip_cost + site.downtime_cost_per_day * ec.expected_wait_days(site.access_months)
    n = len(site.candidates)
    trended = any(c.price_trend_frac_per_year or c.first_install_year or c.last_install_year is not None
                  or c.measure_price or c.measure_labour_cost or c.downtime_cost for c in site.candidates)
    out = {}
    for r in range(1, h + 1):
        for years in itertools.combinations(range(h), r):
            if ex_life is None and years[0] != 0:
                continue
            if ex_life is not None and years[0] > math.floor(max(ex_life, 0.0) + 1e-9):
                continue
            choices = (itertools.product(range(n), repeat=len(years)) if design_changes
                       else ((k,) * len(years) for k in range(n)))
            for ks in choices:
                packs = [site.candidates[k] for k in ks]
                cost = path_cost(years, packs, site, h, rate, residual)
                if cost is None:
                    continue
                if len(set(ks)) == 1 and not trended:
                    # cross-check: one design priced by planner.economics.schedule_present_cost
                    c = packs[0]
                    ref = ec.schedule_present_cost(
                        years, horizon_years=h, rate=rate, pack_cost=c.pack_cost, life_years=c.life_years,
                        install_cost=c.install_cost, disposal_cost=c.disposal_cost,
                        trip_cost=site.site_visit_cost,
                        existing_disposal_cost=None if ex is None else ex.disposal_cost,
                        failure_prob_by_age=c.failure_prob_by_age, failure_cost=fail_cost,
                        existing_failure_prob_by_age=None if ex is None else ex.failure_prob_by_age,
                        residual_value=residual).total
                    assert math.isclose(cost, ref, rel_tol=1e-9, abs_tol=1e-9)
                out[years] = min(out.get(years, math.inf), cost)
    if ex_life is not None and ex_life >= h - 1e-9:
        out[()] = ec.schedule_present_cost((), horizon_years=h, rate=rate, pack_cost=0.0, life_years=1.0,
                                           failure_cost=fail_cost,
                                           existing_failure_prob_by_age=ex.failure_prob_by_age).total
    return out


def fleet_best(problem):
    """Brute-force optimum of a FleetProblem whose sites are all reachable every month."""
    h = problem.horizon_years
    rate = problem.discount_rate_frac
    total = 0.0
    for region in sorted({s.region for s in problem.sites}):
        sites = [s for s in problem.sites if s.region == region]
        costs = [schedule_costs(s, h, rate, problem.residual_value, problem.design_changes) for s in sites]
        trip = problem.trip_cost_by_region[region]
        best = math.inf
        for mask in range(1 << h):
            allowed = {t for t in range(h) if mask >> t & 1}
            cost = sum(trip * float(ec.spv(rate, t)) for t in allowed)
            for table in costs:
                cost += min((v for years, v in table.items() if allowed.issuperset(years)), default=math.inf)
                if cost >= best:
                    break
            best = min(best, cost)
        total += best
    return total
