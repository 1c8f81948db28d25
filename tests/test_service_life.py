"""Service limits besides cell fade: component lives (chemistries.toml [<id>.components])
under the study's [service_life] ceiling, and how the plan shows them.

Check values: the sources of the component parameters (common practice: 15-20 year design
life of stationary lithium-ion products, battery-management electronics included; the
10-degree rule of electrolytic capacitors; from memory: seals by condensation class) and
the behaviour the planner promises: a shorter ceiling plans more replacements.
"""

import json
import math
import shutil
from pathlib import Path

from click.testing import CliRunner

from planner.chemistry import CHEMISTRY_IDS, get_chemistry
from planner.cli import cli
from planner.designs.candidates import max_service_years

REPO = Path(__file__).resolve().parents[1]


def test_component_lives_come_from_the_library_with_a_source():
    # every component parameter carries its source; there is no flat cap per chemistry
    # any more: without [service_life] the ceiling is none
    for chem_id in CHEMISTRY_IDS:
        chem = get_chemistry(chem_id)
        assert chem.components, chem_id
        for key in chem.components:
            assert chem.sources[f"components.{key}"], (chem_id, key)
    assert math.isinf(max_service_years("lfp"))
    assert max_service_years("lfp", 10.0) == 10.0
    # common practice: 15-20 year design life of stationary lithium-ion electronics at 25 °C
    assert 15.0 <= get_chemistry("lfp").components["electronics_life_years_ref"] <= 20.0


def _plan(tmp_path, extra: str) -> dict:
    shutil.copy(REPO / "scenarios" / "quick_sites.csv", tmp_path / "quick_sites.csv")
    text = (REPO / "scenarios" / "quick.toml").read_text(encoding="utf-8")
    text = text.replace('chemistries = ["vrla", "lfp", "nmc"]', 'chemistries = ["lfp"]')
    study = tmp_path / "study.toml"
    study.write_text(text + extra, encoding="utf-8")
    result = CliRunner().invoke(cli, ["--quiet", "plan", str(study), "--out",
                                      str(tmp_path / "p.xlsx"), "--json", str(tmp_path / "p.json")])
    assert result.exit_code == 0, result.output
    return json.loads((tmp_path / "p.json").read_text(encoding="utf-8"))


def test_a_ten_year_lfp_cap_plans_more_replacements(tmp_path):
    # A vendor's 10-year design life in the study ([service_life], the user's ceiling)
    # must bring the replacements forward (quick study, 15-year horizon, LFP only).
    (tmp_path / "base").mkdir()
    (tmp_path / "capped").mkdir()
    base = _plan(tmp_path / "base", "")
    capped = _plan(tmp_path / "capped", "\n[service_life]\nlfp = 10\n")

    def count(plan):
        return sum(len(site["replacement_years"]) for site in plan["sites"])
    assert count(capped) > count(base)
    assert all(site["life_years"] <= 10.0 + 1e-9 for site in capped["sites"])
    assert capped["service_life_limited_sites"] >= 1
    assert capped["ceiling_limited_sites"] >= 1
    limited = [site for site in capped["sites"] if site["life_limit_kind"] == "ceiling"]
    assert all(site["life_limited_by"] == "service-life ceiling ([service_life])"
               and site["limiting_cause"] == "service-life limit" for site in limited)
    rows = [r for r in capped["assumptions"] if r["name"] == "service-life ceiling lfp"]
    assert rows and rows[0]["value"] == 10.0 and rows[0]["source"] == "study file [service_life]"
    # every site says what limits its life, and the counts add up
    assert all(site["life_limited_by"] for site in base["sites"])
    assert sum(row["sites"] for row in base["life_limited_by_counts"]) == len(base["sites"])


def test_workbook_shows_the_cap_count_and_extrapolated_lives(tmp_path):
    # The workbook says how many sites the cap decides (docs/workbook.md: Needs attention, as a
    # cause with its count; Assumptions, under how the plan was found); the Sites sheet marks
    # lives that lean on extrapolated laws (plan keys of docs/plan-json.md).
    import openpyxl

    plan = _plan(tmp_path, "\n[service_life]\nlfp = 10\n")
    book = openpyxl.load_workbook(tmp_path / "p.xlsx")
    causes = {}  # the first table: one row per cause with its count
    for cause, count in book["Needs attention"].iter_rows(min_col=1, max_col=2, values_only=True):
        causes.setdefault(cause, count)
    assert causes["Life set by a service limit (a component or the ceiling), not by fade"] == plan["service_life_limited_sites"]
    found = {row[1]: row[2] for row in book["Assumptions and sources"].iter_rows(values_only=True)
             if row[0] == "how the plan was found"}
    assert found["sites whose pack life a service limit sets (not fade)"] == \
        plan["service_life_limited_sites"]
    sites = book["Sites"]
    header = [c.value for c in sites[1]]
    column = header.index("Life extrapolated")
    by_id = {row[0]: row[column] for row in sites.iter_rows(min_row=2, values_only=True)}
    for site in plan["sites"]:
        assert isinstance(site["life_extrapolated"], bool)
        text = by_id[site["id"]]
        assert text.startswith("yes: ") == site["life_extrapolated"]
        if site["life_extrapolated"]:
            assert site["life_extrapolation_note"] in text
            assert any(w.startswith("life leans on extrapolated") for w in site["warnings"])
