"""The reader's wording: coverage, drivers and plan status, with no solver vocabulary.

Expected sentences are the wording of docs/workbook.md ("serves 15 of 16 sites; DP-05
keeps lisocl2" rather than a solver status), checked literally.
"""

import math

from planner.report.wording import coverage_text, downtime_share, drivers_text, plan_status_text


def test_coverage_sentences():
    row = {"sites_served": 15, "sites_unserved": ["DP-05"], "kept_by_other": {"DP-05": "lisocl2"}}
    assert coverage_text(row, 16) == "serves 15 of 16 sites; DP-05 keeps lisocl2"
    two = {"sites_served": 13, "sites_unserved": ["A", "B", "C"],
           "kept_by_other": {"A": "lfp", "B": "lfp", "C": "lisocl2"}}
    assert coverage_text(two, 16) == "serves 13 of 16 sites; A and B keep lfp; C keeps lisocl2"
    assert coverage_text({"sites_served": 16, "sites_unserved": []}, 16) == "serves all 16 sites"
    assert coverage_text({"sites_served": 0, "sites_unserved": list("abcd")}, 4) == "serves none of the 4 sites"
    lonely = {"sites_served": 2, "sites_unserved": ["X"], "kept_by_other": {}}
    assert coverage_text(lonely, 3) == "serves 2 of 3 sites; X cannot be served"


def test_drivers_and_share():
    row = {"driving_sites": [{"id": "UV-04", "difference": 216689.4, "downtime_difference": 216895.2}],
           "downtime": 216895.0, "total_with_others_present_cost": 275314.0}
    assert drivers_text(row, "EUR") == "UV-04: +216,689 EUR, of which days off air +216,895 EUR"
    assert downtime_share(row) == 216895.0 / 275314.0
    assert drivers_text({"driving_sites": []}, "EUR") is None


def test_plan_status_has_no_solver_words_and_tolerates_nan():
    plan = {"sites": [{"id": "a"}, {"id": "b"}], "unserved_sites": [{"id": "b"}],
            "solver": {"status": "infeasible", "gap_frac": 0.0}}
    text = plan_status_text(plan)
    assert text == "1 of 2 sites served; 1 not (see Needs attention); cost within 0.00% of the lowest possible"
    # a site that loses more than 1 % of its load is not served either (planner.plan.attention)
    lossy = {"sites": [{"id": "a", "daily_load_wh": 100.0, "unserved_wh_per_year": 0.02 * 36500.0},
                       {"id": "b", "daily_load_wh": 100.0, "unserved_wh_per_year": 0.005 * 36500.0}],
             "solver": {"status": "optimal", "gap_frac": 0.0}}
    assert plan_status_text(lossy).startswith("1 of 2 sites served; 1 not (see Needs attention)")
    plan["solver"]["gap_frac"] = math.nan
    assert "nan" not in plan_status_text(plan)
    stopped = {"sites": [{"id": "a"}], "solver": {"status": "feasible", "gap_frac": 0.031}}
    assert plan_status_text(stopped) == ("the site is served; stopped at the time limit, within 3.1% "
                                         "of the lowest possible cost")
