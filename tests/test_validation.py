"""The validation report (planner.validation.published): bands, the committed report, sensitivity.

The published values and their sources are in planner/validation/published.py (PUBLISHED), each row
citing its paper (table/equation), standard clause, handbook or `common practice`.
"""

from dataclasses import replace
from pathlib import Path
from types import MappingProxyType

import pytest

from planner.chemistry import get_chemistry
from planner.validation import published as validate

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def rows():
    return validate.run_validation()


def test_every_published_point_is_within_its_band(rows):
    failed = [(r.point.key, r.predicted, r.point.band) for r in rows if not r.passed]
    assert not failed


def test_report_covers_the_published_points(rows):
    # The sources the aging laws rest on (docs/aging.md): Schmalstieg calendar and cycle, Naumann 2018/2020, Wang 2011 at C/2, the
    # lead-acid halving rule, Woehler points, ASTM E1049, NIST HB 135, IEEE 1013/1562,
    # and the facts of the trade.
    text = " ".join(r.point.source for r in rows)
    for name in ("Schmalstieg", "Naumann et al. 2018", "Naumann et al. 2020", "Wang et al. 2011",
                 "BU-806a", "AGM deep-cycle", "ASTM E1049", "NIST Handbook 135", "IEEE 1013",
                 "common practice", "Schimpe", "Waldmann"):
        assert name in text, name


def test_committed_report_equals_a_fresh_run(rows):
    # Compared at the precision printed: the rendered text is the comparison.
    committed = (REPO / "docs" / "validation.md").read_text(encoding="utf-8")
    assert committed == validate.render_markdown(rows)


def _perturbed(chem_id, set_name, part, key, factor):
    chem = get_chemistry(chem_id)
    params = chem.aging_set(set_name)
    values = dict(getattr(params, part))
    values[key] *= factor
    sets = dict(chem.aging_sets)
    sets[set_name] = replace(params, **{part: MappingProxyType(values)})
    changed = replace(chem, aging_sets=MappingProxyType(sets))
    return lambda cid: changed if cid == chem_id else get_chemistry(cid)


@pytest.mark.parametrize("chem_id, set_name, part, key, factor, expected_fail", [
    ("nmc", "schmalstieg-published", "calendar", "voltage_slope_per_v", 1.01, "schmalstieg_cal_41v_25c"),
    ("lfp", "calibrated", "cycle", "plating_activation_energy_j_mol", 1.2, "schimpe_plating"),
    ("lfp", "calibrated", "cycle", "a", 3.0, "lfp_daily_cycles"),
])
def test_a_perturbed_parameter_fails_the_validation(chem_id, set_name, part, key, factor,
                                                    expected_fail):
    rows = validate.run_validation(_perturbed(chem_id, set_name, part, key, factor))
    failed = {r.point.key for r in rows if not r.passed}
    assert expected_fail in failed


def test_main_writes_the_report_and_exit_code(tmp_path):
    out = tmp_path / "v.md"
    assert validate.main(["--out", str(out)]) == 0
    assert out.read_text(encoding="utf-8").startswith("# Validation report")
