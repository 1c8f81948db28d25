"""Sites at risk: the chance that the pack in service fails before the crew next comes.

For each site, the pack that serves it today (the pack already installed, or the one put
in at year 0) is followed to its next planned replacement (or to the end of the study
when none is planned). Its cumulative failure probability at that age comes from the
same distribution the optimizer prices (the pack Monte Carlo of :mod:`planner.pack.structure`, or
:mod:`planner.pack.life_risk` for packs it skips), and an expected failure is priced as the
optimizer prices it (:func:`planner.optimize.schedule.failure_cost`: an unplanned trip
plus the days off air until the site can be reached).
"""

from __future__ import annotations

from planner.economics import expected_wait_days
from planner.optimize.problem import SiteOptions, SitePlan
from planner.optimize.schedule import failure_cost


def _prob_at(probs, age_years: int) -> float:
    if not probs or age_years <= 0:
        return 0.0
    return float(probs[min(age_years, len(probs)) - 1])


def risk_before_next_visit(plan: SitePlan | None, site: SiteOptions, horizon_years: int) -> dict:
    """``{next_visit_year, risk_before_next_visit_frac, expected_failure_cost_before_next_visit,
    expected_downtime_cost_before_next_visit}`` of one site (money undiscounted).

    ``next_visit_year`` is None when no replacement is planned before the horizon (the
    risk then runs to the end of the study); every value is None for a site with no plan
    and no pack in service.
    """
    h = int(horizon_years)
    years = [int(t) for t in plan.replacement_years] if plan is not None else []
    if site.existing is not None and (not years or years[0] > 0):
        probs, start, later = site.existing.failure_prob_by_age, 0, years
    elif years and years[0] == 0 and plan.candidate is not None:
        probs, start, later = plan.candidate.failure_prob_by_age, 0, years[1:]
    else:
        return {"next_visit_year": None, "risk_before_next_visit_frac": None,
                "expected_failure_cost_before_next_visit": None,
                "expected_downtime_cost_before_next_visit": None}
    next_visit = later[0] if later else None
    risk = _prob_at(probs, (next_visit if next_visit is not None else h) - start)
    wait = expected_wait_days(site.access_months) if site.access_months else 0.0
    return {"next_visit_year": next_visit, "risk_before_next_visit_frac": risk,
            "expected_failure_cost_before_next_visit": risk * failure_cost(site),
            "expected_downtime_cost_before_next_visit": risk * site.downtime_cost_per_day * wait}
