"""Risk before the next visit: the P10 definition on a solved plan, existing packs, and
the expected cost priced as the optimizer prices a failure."""

import pytest
from scipy import stats

from planner.economics import CostBreakdown, expected_wait_days
from planner.optimize import Candidate, ExistingPack, FleetProblem, SiteOptions, solve_fleet
from planner.optimize.problem import SitePlan
from planner.pack.life_risk import failure_prob_by_age
from planner.plan.visit_risk import risk_before_next_visit

ALL_MONTHS = tuple(range(1, 13))


def _probs(median, sigma, n=30):
    return failure_prob_by_age(median, n, sigma)


def test_p10_life_shorter_than_the_interval_shows_ten_percent_or_more():
    # A pack planned for 8 years whose P10 life (scipy.stats.lognorm quantile) is 7.8 years:
    # by the definition of P10 at least 10 % fail before the visit at year 8.
    sigma, median = 0.15, 9.55
    assert stats.lognorm(sigma, scale=median).ppf(0.10) < 8.0
    cand = Candidate("d", "lfp", 1.0, 3.4, 1000.0, 10.0, 3000.0, 0.0, 0.0, 8.0, _probs(median, sigma), "calendar")
    site = SiteOptions("S1", "A", ALL_MONTHS, [cand], downtime_cost_per_day=50.0, unplanned_trip_cost=2000.0)
    problem = FleetProblem([site], 16, 0.03, {"A": 1000.0}, gap_rel_frac=1e-9)
    plan = solve_fleet(problem).sites[0]
    assert plan.replacement_years == (0, 8)
    risk = risk_before_next_visit(plan, site, 16)
    assert risk["next_visit_year"] == 8
    assert risk["risk_before_next_visit_frac"] >= 0.10
    # every month open: no wait for access, so a failure costs the unplanned trip only
    assert risk["expected_failure_cost_before_next_visit"] == pytest.approx(
        risk["risk_before_next_visit_frac"] * 2000.0)
    assert risk["expected_downtime_cost_before_next_visit"] == 0.0


def test_existing_pack_until_the_first_replacement():
    # The pack in service today is followed to the first replacement; its probability is
    # the derived one at that age; days off air wait for the next open month
    # (expected_wait_days, checked in test_economics against its worked values).
    probs = failure_prob_by_age(4.0, 20, 0.2, age_years=6.0)
    cand = Candidate("d", "lfp", 1.0, 3.4, 1000.0, 10.0, 3000.0, 0.0, 0.0, 10.0, None, "calendar")
    site = SiteOptions("S1", "A", (6, 7, 8), [cand], existing=ExistingPack(4.0, failure_prob_by_age=probs),
                       downtime_cost_per_day=100.0, unplanned_trip_cost=500.0)
    plan = SitePlan("S1", "A", cand, (3, 13), (7, 7), CostBreakdown())
    risk = risk_before_next_visit(plan, site, 20)
    assert risk["next_visit_year"] == 3
    assert risk["risk_before_next_visit_frac"] == pytest.approx(probs[2])
    wait = expected_wait_days((6, 7, 8))
    assert risk["expected_downtime_cost_before_next_visit"] == pytest.approx(probs[2] * 100.0 * wait)


def test_no_visit_before_the_horizon_runs_to_the_end():
    cand = Candidate("d", "lfp", 1.0, 3.4, 1000.0, 10.0, 3000.0, 0.0, 0.0, 20.0, _probs(15.0, 0.1), "calendar")
    site = SiteOptions("S1", "A", ALL_MONTHS, [cand])
    risk = risk_before_next_visit(SitePlan("S1", "A", cand, (0,), (6,), CostBreakdown()), site, 12)
    assert risk["next_visit_year"] is None
    assert risk["risk_before_next_visit_frac"] == pytest.approx(_probs(15.0, 0.1)[11])
    assert risk_before_next_visit(None, site, 12)["risk_before_next_visit_frac"] is None
