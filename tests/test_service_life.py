"""Service-life caps (chemistries.toml, overridden per study) and how the plan shows them.

Check values: the caps of the chemistry library (common practice: 15-20 year design life
of stationary lithium-ion products; Eurobat 10-12 year class for VRLA, from memory) and
the behaviour the planner promises (docs/study-file.md, [service_life]): a shorter cap
plans more replacements.
"""

import json
import shutil
from pathlib import Path

from click.testing import CliRunner

from planner.chemistry import CHEMISTRY_IDS, get_chemistry
from planner.cli import cli
from planner.designs.candidates import max_service_years

REPO = Path(__file__).resolve().parents[1]


def test_caps_come_from_the_library_with_a_source():
    # common practice: lithium-ion 15-20 years; from memory: VRLA 10-12 years.
    assert 15.0 <= max_service_years("lfp") <= 20.0
    assert 10.0 <= max_service_years("vrla") <= 12.0
    for chem_id in CHEMISTRY_IDS:
        assert get_chemistry(chem_id).sources["service_life_years"]
    assert max_service_years("lfp", 10.0) == 10.0


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
    # A vendor's 10-year design life in the study ([service_life]) must bring the
    # replacements forward (quick study, 15-year horizon, LFP only).
    (tmp_path / "base").mkdir()
    (tmp_path / "capped").mkdir()
    base = _plan(tmp_path / "base", "")
    capped = _plan(tmp_path / "capped", "\n[service_life]\nlfp = 10\n")

    def count(plan):
        return sum(len(site["replacement_years"]) for site in plan["sites"])
    assert count(capped) > count(base)
    assert all(site["life_years"] <= 10.0 + 1e-9 for site in capped["sites"])
    assert capped["service_life_limited_sites"] >= 1
    rows = [r for r in capped["assumptions"] if r["name"] == "service-life limit lfp"]
    assert rows and rows[0]["value"] == 10.0 and rows[0]["source"] == "study file [service_life]"


def test_workbook_shows_the_cap_count_and_extrapolated_lives(tmp_path):
    # The Summary says how many sites the cap decides (docs/workbook.md); the Sites sheet marks
    # lives that lean on extrapolated laws (plan keys of docs/plan-json.md).
    import openpyxl

    plan = _plan(tmp_path, "\n[service_life]\nlfp = 10\n")
    book = openpyxl.load_workbook(tmp_path / "p.xlsx")
    summary = {row[0]: row[1] for row in book["Summary"].iter_rows(min_col=1, max_col=2,
                                                                      values_only=True)}
    assert summary["Sites whose life the service-life limit decides"] == \
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
