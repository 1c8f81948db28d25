"""Field records through the whole plan: replacements move with the measured fade, a failed
cell raises a flag and a visit without touching the factor, and records that say nothing
leave the plan as it was.

The two-site study and every test record are invented.
"""

import json
import math

import pytest

from planner.pipeline import evidence_only, run_study
from planner.study.loading import load_study

SITES = ("id,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days,existing_chemistry,"
         "existing_capacity_wh,existing_installed_year\n"
         "A-1,delta,mediterranean,cabinet-shade,1.0,pv,40,5,vrla,480,2022\n"
         "B-2,delta,mediterranean,cabinet-shade,1.0,pv,40,5,vrla,480,2022\n")
STUDY = """[study]
sites_file = "sites.csv"
horizon_years = 12
start_year = 2027
[candidates]
chemistries = ["vrla"]
oversize_factors = [1.0]
[thermal]
measures = ["none"]
[regions.delta]
trip_cost = 900.0
[output]
sensitivity = false
"""
HEADER = ("site_id,test_date,kind,duration_h,capacity_pct,start_temp_c,rate_h,end_voltage_v_per_cell,"
          "lowest_cell_v,tested_pack_installed_year\n")
ACCEPT = "A-1,2022-02-01,acceptance,10,100,25,10,,,\n"


def plan_of(tmp_path, tests=None):
    (tmp_path / "sites.csv").write_text(SITES, encoding="utf-8")
    body = STUDY
    if tests is not None:
        (tmp_path / "tests.csv").write_text(HEADER + tests, encoding="utf-8")
        body += '[field_data]\ncapacity_tests_file = "tests.csv"\n'
    (tmp_path / "study.toml").write_text(body, encoding="utf-8")
    return json.loads(json.dumps(run_study(load_study(tmp_path / "study.toml"))))


def site(plan, site_id):
    return next(s for s in plan["sites"] if s["id"] == site_id)


@pytest.fixture(scope="module")
def lab(tmp_path_factory):
    return plan_of(tmp_path_factory.mktemp("lab"))


def test_laboratory_plan_replaces_the_packs_in_a_few_years(lab):
    # the premise of the next checks: a decision the records can move either way
    assert 1 <= site(lab, "A-1")["replacement_years"][0] <= 4


def test_slower_measured_fade_replaces_later_within_the_service_limit(tmp_path, lab):
    # 95 % at 4.5 years where the laws predict about 87 %: fade at under half the rate
    plan = plan_of(tmp_path, ACCEPT + "A-1,2026-07-01,performance,9.5,95,25,10,,,\n")
    a = site(plan, "A-1")
    assert a["field_evidence"]["factor_p90"] < 0.8
    assert a["replacement_years"][0] > site(lab, "A-1")["replacement_years"][0]
    # never kept past its service limit (the pack's components, planner.designs.service)
    _, designs = evidence_only(load_study(tmp_path / "study.toml"))
    limit = designs["A-1"].existing.service_limit_years
    assert a["existing_pack"]["remaining_life_years"] <= limit + 1e-9
    assert a["replacement_years"][0] <= limit


def test_faster_measured_fade_replaces_earlier(tmp_path, lab):
    # 82 % at 4.5 years where the laws predict about 87 %: fade well above the laws'
    plan = plan_of(tmp_path, ACCEPT + "A-1,2026-07-01,performance,8.2,82,25,10,,,\n")
    a = site(plan, "A-1")
    assert a["field_evidence"]["factor_p10"] > 1.0
    assert a["replacement_years"][0] < site(lab, "A-1")["replacement_years"][0]
    assert a["existing_pack"]["remaining_life_years"] < a["existing_pack"]["remaining_life_years_predicted"]


def test_failed_cell_flags_a_visit_and_leaves_the_factor(tmp_path):
    slow = ACCEPT + "A-1,2026-07-01,performance,9.5,95,25,10,,,\n"
    failed = "A-1,2026-10-01,performance,7.0,70,25,10,1.80,1.45,\n"  # one cell 0.35 V low
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    without = site(plan_of(tmp_path / "a", slow), "A-1")
    plan = plan_of(tmp_path / "b", slow + failed)
    with_cell = site(plan, "A-1")
    groups = {g["cause"]: g for g in plan["needs_attention"]["groups"]}
    assert [i["id"] for i in groups["failed_cell"]["items"]] == ["A-1"]  # first page of the plan
    fe = with_cell["field_evidence"]
    assert fe["visit_recommended"] and "1.45 V" in fe["failed_cell"]
    assert any("failed cell" in w for w in with_cell["warnings"])
    for key in ("factor_p10", "factor_p50", "factor_p90", "replace_by_years"):
        assert fe[key] == without["field_evidence"][key]
    assert [t["used"] for t in fe["tests"]] == [True, True, False]


def test_site_without_records_moves_with_its_chemistrys_fleet(tmp_path):
    plan = plan_of(tmp_path, ACCEPT + "A-1,2026-07-01,performance,9.5,95,25,10,,,\n")
    b = site(plan, "B-2")["field_evidence"]
    assert b["records_used"] == 0 and b["factor_p50"] < 1.0  # pulled by A-1's slow fade
    assert plan["field_data"]["chemistries"][0]["sites_with_records"] == 1


def _without_new_keys(plan):
    plan = json.loads(json.dumps(plan))
    for key in ("field_data", "assumptions", "solver"):
        plan.pop(key, None)
    for s in plan["sites"]:
        s.pop("field_evidence", None)
    return plan


def test_records_that_say_nothing_leave_the_plan_unchanged(tmp_path, lab):
    # the only test is of a pack replaced since: skipped with a warning, no record left
    plan = plan_of(tmp_path, "A-1,2019-02-01,performance,9,90,25,10,,,2015\n")
    assert "replaced since" in plan["field_data"]["skipped_records"][0]
    assert _without_new_keys(plan) == _without_new_keys(lab)


def test_value_of_a_test_is_listed_for_every_pack_in_service(lab):
    ranked = lab["field_data"]["test_value"]
    assert {r["site_id"] for r in ranked} == {"A-1", "B-2"}
    for r in ranked:
        assert r["value"] >= 0 and r["test_cost"] > 0
        assert math.isclose(r["net_value"], r["value"] - r["test_cost"], abs_tol=0.02)
    values = [r["net_value"] for r in ranked]
    assert values == sorted(values, reverse=True)


def test_a_test_that_pays_needs_attention():
    """An invented plan whose ranking says one test pays: it is listed with its net value."""
    from planner.plan.attention import needs_attention

    plan = {"study": {"start_year": 2027}, "sites": [{"id": "S-1", "name": "Gauge"}],
            "field_data": {"test_value": [
                {"site_id": "S-1", "value": 900.0, "test_cost": 300.0, "net_value": 600.0,
                 "replacement_year_after_test_low": 1, "replacement_year_after_test_high": 6},
                {"site_id": "S-2", "value": 0.0, "test_cost": 300.0, "net_value": -300.0}]}}
    groups = {g["cause"]: g for g in needs_attention(plan)["groups"]}
    (item,) = groups["test_pays"]["items"]
    assert item["id"] == "S-1" and item["cost"] == 600.0 and "2028" in item["detail"]


def test_every_documented_field_key_is_written_with_records(tmp_path):
    import importlib.util
    from pathlib import Path

    spec = importlib.util.spec_from_file_location(
        "pipeline_tests", Path(__file__).resolve().parent / "test_pipeline.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    plan = plan_of(tmp_path, ACCEPT + "A-1,2026-07-01,performance,9.5,95,25,10,,,\n")
    written = module._plan_keys(plan)
    assert module.field_record_keys() - written == set()
