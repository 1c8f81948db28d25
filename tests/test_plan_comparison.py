"""Chemistry comparison rows: cost groups add up, the site that drives a difference is
named with its days off air, and sites another chemistry keeps are listed."""

import pytest

from planner.optimize import Candidate, FleetProblem, SiteOptions, compare_chemistries, solve_fleet
from planner.plan.comparison import comparison_rows
from planner.report.wording import coverage_text, drivers_text

ALL_MONTHS = tuple(range(1, 13))


def cand(design, chem, pack, downtime=0.0, life=10.0):
    return Candidate(design, chem, 1.0, 3.4, 1000.0, 10.0, pack, 200.0, 20.0, life, None, "calendar",
                     downtime_cost=downtime)


def _problem():
    # Invented demo numbers: site B loses days off air with lfp (cold charging), site C
    # has no lfp design at all.
    sites = [SiteOptions("A", "R", ALL_MONTHS, [cand("a-lfp", "lfp", 1000.0), cand("a-lto", "lto", 1500.0)]),
             SiteOptions("B", "R", ALL_MONTHS, [cand("b-lfp", "lfp", 1000.0, downtime=50000.0),
                                                cand("b-lto", "lto", 1500.0)]),
             SiteOptions("C", "R", ALL_MONTHS, [cand("c-pri", "lisocl2", 800.0, life=12.0)])]
    return FleetProblem(sites, 10, 0.03, {"R": 2000.0}, gap_rel_frac=1e-9)


def test_rows_split_name_the_driver_and_keep_the_solver_status():
    problem = _problem()
    plan = solve_fleet(problem)
    rows = {r["chemistry"]: r for r in comparison_rows(plan, compare_chemistries(problem, ["lfp", "lto"]))}
    lfp = rows["lfp"]
    # bookkeeping identity: the four groups add up to the fleet total
    assert (lfp["equipment"] + lfp["trips_and_labour"] + lfp["downtime"] + lfp["failure_risk"]
            == pytest.approx(lfp["total_with_others_present_cost"]))
    # the 50,000 of days off air at B (paid once, 10-year pack, 10-year horizon: no credit)
    assert lfp["downtime"] == pytest.approx(50000.0)
    assert [d["id"] for d in lfp["driving_sites"]] == ["B"]
    assert lfp["driving_sites"][0]["downtime_difference"] == pytest.approx(50000.0)
    assert lfp["status"] == "infeasible" and lfp["sites_unserved"] == ["C"]
    assert lfp["kept_by_other"] == {"C": "lisocl2"}
    assert coverage_text(lfp, 3) == "serves 2 of 3 sites; C keeps lisocl2"
    assert drivers_text(lfp, "EUR").startswith("B: +")
    assert "of which days off air +50,000 EUR" in drivers_text(lfp, "EUR")
    assert rows["lto"]["downtime"] == 0.0
