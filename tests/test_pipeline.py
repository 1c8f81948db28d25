"""End-to-end planning of the quick study, and the pipeline's own arithmetic."""

import json
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.economics import upv
from planner.plan.assembly import sawtooth

REPO = Path(__file__).resolve().parents[1]
QUICK = REPO / "scenarios" / "quick.toml"

FIXED_SITE_KEYS = {  # docs/plan-json.md, keys marked fixed (scripts read them)
    "id", "chemistry", "oversize_factor", "charge_voltage_v", "capacity_wh", "replacement_years",
    "life_years", "present_cost", "reference_capacity_wh", "unserved_wh_per_year",
    "equivalent_full_cycles_per_year", "life_p10_years", "life_p50_years", "life_p90_years",
}


@pytest.fixture(scope="module")
def quick_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("plan")
    runner = CliRunner()
    result = runner.invoke(cli, ["--quiet", "plan", str(QUICK), "--workers", "1", "--out", str(out / "q.xlsx"),
                                 "--json", str(out / "q.json")])
    return result, out


def test_quick_study_writes_workbook_and_json(quick_run):
    result, out = quick_run
    assert result.exit_code == 0, result.output
    book = openpyxl.load_workbook(out / "q.xlsx")
    assert len(book.sheetnames) >= 7
    plan = json.loads((out / "q.json").read_text())
    assert {"total_present_cost", "solver", "sites", "trips", "chemistry_comparison"} <= set(plan)
    assert {"name", "status", "gap_frac", "seconds"} <= set(plan["solver"])
    for site in plan["sites"]:
        assert FIXED_SITE_KEYS <= set(site), FIXED_SITE_KEYS - set(site)
    for trip in plan["trips"]:
        assert {"region", "year", "month", "site_ids"} <= set(trip)


def test_replacements_list_each_new_pack(quick_run):
    # docs/plan-json.md: one replacements entry per replacement year, in order; the
    # site-level design keys describe the first new pack; every site names its measure
    _, out = quick_run
    plan = json.loads((out / "q.json").read_text())
    for site in plan["sites"]:
        reps = site["replacements"]
        assert [r["year"] for r in reps] == site["replacement_years"]
        assert [r["month"] for r in reps] == site["replacement_months"]
        assert isinstance(site["thermal_measure"], str) and site["thermal_measure"]
        if reps:
            first = reps[0]
            assert (first["chemistry"], first["capacity_wh"], first["charge_voltage_v"]) == (
                site["chemistry"], site["capacity_wh"], site["charge_voltage_v"])
            assert first["thermal_measure"] == site["thermal_measure"]


def test_plan_total_is_the_sum_of_site_costs(quick_run):
    # The fleet objective is the sum of every site's present cost (trip costs shared out).
    _, out = quick_run
    plan = json.loads((out / "q.json").read_text())
    total = sum(site["present_cost"] for site in plan["sites"])
    # every figure is rounded to 6 significant digits (docs/plan-json.md): the sum of the
    # rounded site costs may differ from the rounded total by a few units of the 6th digit
    assert total == pytest.approx(plan["total_present_cost"], rel=1e-5)


def test_visits_fall_in_access_months(quick_run):
    # No trip outside a region's access months (docs/optimizer.md; quick.toml: hills 6-9).
    _, out = quick_run
    plan = json.loads((out / "q.json").read_text())
    for trip in plan["trips"]:
        if trip["region"] == "hills":
            assert 6 <= trip["month"] <= 9


def test_identical_inputs_give_byte_identical_json(quick_run, tmp_path):
    # Identical inputs must give byte-identical JSON (docs/plan-json.md).
    _, out = quick_run
    runner = CliRunner()
    result = runner.invoke(cli, ["--quiet", "plan", str(QUICK), "--workers", "1", "--out", str(tmp_path / "a.xlsx"),
                                 "--json", str(tmp_path / "a.json")])
    assert result.exit_code == 0, result.output
    assert (tmp_path / "a.json").read_bytes() == (out / "q.json").read_bytes()


def test_json_to_stdout_is_clean(tmp_path):
    # The solver banner must not reach standard output when the plan is printed there.
    runner = CliRunner()
    result = runner.invoke(cli, ["plan", str(QUICK), "--workers", "1", "--out", str(tmp_path / "b.xlsx"), "--json", "-"])
    assert result.exit_code == 0
    json.loads(result.stdout)


def test_sawtooth_restarts_at_each_replacement():
    # Definition: the SOH curve of the pack in service restarts from new at a replacement.
    curve = np.linspace(1.0, 0.5, 121)
    out = sawtooth(10, [0, 4], curve)
    assert out[0] == 1.0 and out[48] == 1.0
    assert out[47] == pytest.approx(curve[47], abs=1e-5)  # stored to 5 decimals
    assert out[120] == pytest.approx(curve[72], abs=1e-5)


def test_downtime_present_value_uses_uniform_series():
    # NIST Handbook 135 UPV(3 %, 20) = 14.877475 (computed in the research notes §3.3).
    assert float(upv(0.03, 20)) == pytest.approx(14.877475, abs=1e-6)


def test_study_with_a_user_csv_climate_in_fahrenheit(tmp_path):
    # A logger file in °F with hour-ending timestamps, declared in [climates.<name>]; the
    # planner converts at the input boundary: 77 °F = 25 °C (definition of the scale).
    import pandas as pd

    times = pd.date_range("2021-01-01 01:00", periods=8760, freq="h")
    air_c = 25.0 + 8.0 * np.sin(2 * np.pi * (np.arange(8760) / 24.0))
    pd.DataFrame({"time": times.strftime("%Y-%m-%d %H:%M"),
                  "air_f": air_c * 9 / 5 + 32}).to_csv(tmp_path / "logger.csv", index=False)
    (tmp_path / "sites.csv").write_text(
        "id,region,climate,load_w,charging,pv_wp,autonomy_days\nL-1,r,logger,2,pv,60,5\n")
    (tmp_path / "s.toml").write_text(
        '[study]\nsites_file = "sites.csv"\nhorizon_years = 10\n'
        '[candidates]\nchemistries = ["lfp"]\noversize_factors = [1.0, 2.0]\n'
        '[output]\nsensitivity = false\n'
        '[climates.logger]\nfile = "logger.csv"\ntemperature_unit = "F"\ntimestamp_marks = "end"\n'
        'utc_offset_h = -7\nlatitude_deg = 35.0\nlongitude_deg = -110.0\n'
        'temperature_column = "air_f"\n')
    result = CliRunner().invoke(cli, ["--quiet", "plan", str(tmp_path / "s.toml"), "--workers", "1", "--out",
                                      str(tmp_path / "p.xlsx"), "--json", str(tmp_path / "p.json")])
    assert result.exit_code == 0, result.output
    site = json.loads((tmp_path / "p.json").read_text())["sites"][0]
    assert site["temperature"]["air_mean_c"] == pytest.approx(25.0, abs=0.05)


def test_forcing_a_chemistry_never_lowers_the_fleet_cost(quick_run):
    # Behaviour check: restricting the choice can never beat the free optimum
    # (a property of minimisation; the quick study solves to a proven 0 % gap).
    _, out = quick_run
    plan = json.loads((out / "q.json").read_text())
    best = plan["total_present_cost"]
    for row in plan["chemistry_comparison"]:
        assert row["total_with_others_present_cost"] >= best * (1 - 1e-6)
        # Serving only the sites a chemistry can serve never costs more than serving them
        # plus the others (every site's present cost is non-negative).
        assert row["total_present_cost"] <= row["total_with_others_present_cost"] * (1 + 1e-6)


# Keys a plan has only when the study asks for them (sites with an existing pack,
# sensitivity cases, unserved sites); the quick study has none of them.
OPTIONAL_PLAN_KEYS = {"existing_pack", "age_years", "remaining_life_years", "case", "change_frac",
                      "designs_changed", "reason", "limit",
                      # components of chemistries the quick study may not pick
                      "shelf_life", "standby_drain", "battery_management_electronics"}


def field_record_keys() -> set[str]:
    """Keys docs/plan-json.md lists under ``field_evidence`` and ``field_data``: written only
    for packs in service and field records, which the quick study has not
    (tests/test_pipeline_evidence.py checks them on a study that has)."""
    import re

    block = (REPO / "docs" / "plan-json.md").read_text(encoding="utf-8").split("```")[1]
    parts = [block[block.index('"field_evidence"'):block.index('"alternatives"')],
             block[block.index('"field_data"'):]]
    return {key for part in parts for key in re.findall(r'"([a-z_0-9]+)"', part)}


def _plan_keys(obj, out=None):
    out = set() if out is None else out
    if isinstance(obj, dict):
        for key, value in obj.items():
            out.add(key)
            if key != "kept_by_other":  # a map of site ids, not keys of the layout
                _plan_keys(value, out)
    elif isinstance(obj, list):
        for value in obj:
            _plan_keys(value, out)
    return out


def test_plan_json_and_its_reference_are_in_step(quick_run):
    # docs/plan-json.md lists every key the plan writes, and only those.
    import re

    _, out = quick_run
    plan = json.loads((out / "q.json").read_text(encoding="utf-8"))
    block = (REPO / "docs" / "plan-json.md").read_text(encoding="utf-8").split("```")[1]
    documented = set(re.findall(r'"([a-z_0-9]+)"', block))
    written = _plan_keys(plan)
    assert written - documented == set(), "written but not documented"
    optional = OPTIONAL_PLAN_KEYS | field_record_keys() | {"remaining_life_years_predicted"}
    assert documented - written - optional == set(), "documented but never written"


def test_quick_plan_spending_adds_up_and_sites_carry_risk(quick_run):
    # NIST HB 135: each year's amount x SPV(d, t) summed is the plan's total present cost;
    # here through the whole pipeline and the JSON (6 significant digits per value).
    _, out = quick_run
    plan = json.loads((out / "q.json").read_text(encoding="utf-8"))
    rows = plan["spending_by_year"]
    assert len(rows) == plan["study"]["horizon_years"] + 1
    tolerance = 0.01 + 5e-6 * sum(abs(r["present_value"]) for r in rows)
    assert abs(sum(r["present_value"] for r in rows) - plan["total_present_cost"]) <= tolerance
    for site in plan["sites"]:
        assert 0.0 <= site["risk_before_next_visit_frac"] <= 1.0
        assert sum(site["cost_breakdown"].values()) == pytest.approx(site["present_cost"], rel=1e-5)


def test_no_site_served_gives_a_null_total(tmp_path):
    # docs/plan-json.md: a value that does not exist is null. Rechargeable packs only and
    # no charging source: no site can be served, so there is no total (it was 0.0), and
    # the command exits 3 with the workbook written.
    from click.testing import CliRunner

    from planner.cli import cli

    (tmp_path / "s.csv").write_text("id,region,climate,load_w,charging,autonomy_days\n"
                                    "A,r,alpine,2,none,5\nB,r,hot-desert,1,none,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "s.csv"\nhorizon_years = 5\n'
                                     '[candidates]\nchemistries = ["lfp"]\n'
                                     "[output]\nsensitivity = false\n")
    result = CliRunner().invoke(cli, ["plan", str(tmp_path / "s.toml"), "--out",
                                      str(tmp_path / "p.xlsx"), "--json", str(tmp_path / "p.json"),
                                      "--workers", "1", "--quiet"])
    assert result.exit_code == 3, result.output
    plan = json.loads((tmp_path / "p.json").read_text())
    assert plan["total_present_cost"] is None and len(plan["unserved_sites"]) == 2
    assert (tmp_path / "p.xlsx").stat().st_size > 0
