"""Tests for planner.report.plan_json: deterministic, atomic plan JSON."""

from __future__ import annotations

import json
import math
import os
import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from plan_fixture import make_plan

from planner.report import plan_to_json_text, write_json
from planner.report.plan_json import round_significant

# Fixed keys of the plan JSON (docs/plan-json.md, "fixed" marks): scripts read them.
FIXED_TOP = ("total_present_cost", "solver", "sites", "trips", "chemistry_comparison")
FIXED_SOLVER = ("name", "status", "gap_frac", "seconds")
FIXED_SITE = ("id", "chemistry", "oversize_factor", "charge_voltage_v", "capacity_wh", "replacement_years",
              "life_years", "present_cost", "reference_capacity_wh", "unserved_wh_per_year",
              "equivalent_full_cycles_per_year", "life_p10_years", "life_p50_years", "life_p90_years")
FIXED_TRIP = ("region", "year", "month", "site_ids")
FIXED_CHEM = ("chemistry", "total_present_cost")


def test_identical_input_gives_byte_identical_file(tmp_path):
    # Requirement of docs/plan-json.md: identical inputs give byte-identical JSON.
    a = write_json(make_plan(5, seed=3), tmp_path / "a.json")
    b = write_json(make_plan(5, seed=3), tmp_path / "b.json")
    assert a.read_bytes() == b.read_bytes()


def test_key_insertion_order_does_not_change_text():
    # Sorted keys (docs/plan-json.md): a dict built in reverse order gives the same text.
    plan = make_plan(2)
    reordered = {k: plan[k] for k in reversed(list(plan))}
    reordered["sites"] = [{k: s[k] for k in reversed(list(s))} for s in plan["sites"]]
    assert plan_to_json_text(reordered) == plan_to_json_text(plan)


def test_fixed_keys_present():
    # Fixed key names of docs/plan-json.md.
    data = json.loads(plan_to_json_text(make_plan(3)))
    for key in FIXED_TOP:
        assert key in data
    for key in FIXED_SOLVER:
        assert key in data["solver"]
    for site in data["sites"]:
        for key in FIXED_SITE:
            assert key in site, key
    for trip in data["trips"]:
        for key in FIXED_TRIP:
            assert key in trip
    for row in data["chemistry_comparison"]:
        for key in FIXED_CHEM:
            assert key in row


def test_no_timestamp_and_values_round_trip():
    # Values survive within the 6-significant-digit rounding (relative error <= 5e-6,
    # half a unit in the 6th digit: definition of rounding).
    plan = make_plan(3, seed=1)
    data = json.loads(plan_to_json_text(plan))
    assert data["total_present_cost"] == pytest.approx(plan["total_present_cost"], rel=5e-6)
    for site_json, site in zip(data["sites"], plan["sites"]):
        assert site_json["present_cost"] == pytest.approx(site["present_cost"], rel=5e-6)
        assert site_json["soh_by_month"] == pytest.approx(site["soh_by_month"], rel=5e-6)
        assert site_json["replacement_years"] == site["replacement_years"]
    # No clock time in the text (docs/plan-json.md: "no timestamps").
    assert not re.search(r"\d{4}-\d{2}-\d{2}T\d{2}:", plan_to_json_text(plan))


@settings(max_examples=200, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False, width=64))
def test_round_significant_matches_numpy(x):
    # Reference: numpy.format_float_positional(precision=6, unique=False, fractional=False)
    # rounds to 6 significant digits (numpy documentation).
    expected = float(np.format_float_positional(x, precision=6, unique=False, fractional=False, trim="-"))
    assert round_significant(x) == expected + 0.0


def test_round_significant_examples():
    # Hand-checked decimal rounding to 6 significant digits (arithmetic).
    assert round_significant(123456789.0) == 123457000.0
    assert round_significant(0.123456789) == 0.123457
    assert round_significant(-0.0) == 0.0 and math.copysign(1, round_significant(-0.0)) == 1.0
    assert round_significant(float("nan")) is None


def test_fast_and_slow_rounding_paths_agree():
    # A float list goes through the vectorised path, a mixed list element by element;
    # both must give the values round_significant gives (its definition above).
    values = [1.23456789, -9.87654321e-7, 12345678.9, 0.0, -0.0]
    fast = json.loads(plan_to_json_text({"v": values}))["v"]
    slow = json.loads(plan_to_json_text({"v": values + ["x"]}))["v"][:-1]
    assert fast == slow == [round_significant(v) for v in values]


def test_numpy_types_nan_and_paths_are_plain_json():
    # JSON has no NaN (RFC 8259 §6): non-finite numbers become null.
    from pathlib import Path

    plan = {"a": np.float32(1.5), "b": np.int64(7), "c": np.array([1.0, np.nan]), "d": np.bool_(True),
            "e": Path("x") / "y.csv", "f": (1, 2), "g": float("inf")}
    data = json.loads(plan_to_json_text(plan))
    assert data == {"a": 1.5, "b": 7, "c": [1.0, None], "d": True, "e": "x/y.csv", "f": [1, 2], "g": None}


def test_non_string_key_is_a_clear_error():
    with pytest.raises(TypeError, match=r"plan\.sites"):
        plan_to_json_text({"sites": {1: "x"}})


def test_failed_write_leaves_existing_file_and_no_debris(tmp_path, monkeypatch):
    # Atomic replacement (write to a temporary file in the folder, then os.replace).
    target = tmp_path / "plan.json"
    target.write_bytes(b"earlier plan")
    import planner.fileio as atomic

    def broken_replace(src, dst):
        raise OSError("simulated crash before rename")

    monkeypatch.setattr(atomic.os, "replace", broken_replace)
    with pytest.raises(OSError):
        write_json(make_plan(2), target)
    assert target.read_bytes() == b"earlier plan"
    assert os.listdir(tmp_path) == ["plan.json"]


def test_creates_missing_folder(tmp_path):
    out = write_json(make_plan(1), tmp_path / "new" / "plan.json")
    assert json.loads(out.read_text(encoding="utf-8"))["schema_version"] == 1


def test_number_lists_on_one_line_and_text_is_still_the_same_json():
    # The compact leaf layout must parse to exactly what the standard encoder gives
    # (reference: json.dumps of the same normalised data, Python standard library).
    from planner.report.plan_json import normalise

    plan = make_plan(2, seed=4)
    text = plan_to_json_text(plan)
    assert json.loads(text) == json.loads(json.dumps(normalise(plan), sort_keys=True))
    assert '"replacement_years": [' in text and "]\n" in text
    line = next(ln for ln in text.splitlines() if '"soh_by_month"' in ln)
    assert len(json.loads(line.split(": ", 1)[1].rstrip(","))) == 12 * 20 + 1


def test_string_that_looks_like_a_placeholder_is_kept():
    # A NUL-bearing string must come back unchanged (JSON escapes NUL as \u0000, RFC 8259 §7).
    plan = {"name": "\x000\x00", "v": [1.0, 2.0]}
    assert json.loads(plan_to_json_text(plan)) == plan
