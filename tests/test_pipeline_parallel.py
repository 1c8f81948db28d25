"""The plan does not depend on the number of workers, and the warming case is a re-run.

The fleet is invented (benchmarks/fleet_gen.py, seeded); the checks compare the planner
with itself: the same study planned serially and over two worker processes, and the
warming sensitivity case against a full plan of the warmed study. Only the solver's
timing fields may differ (docs/scaling.md).
"""

import importlib.util
import json
from dataclasses import replace
from pathlib import Path
from types import MappingProxyType

import pytest

from planner import pipeline
from planner.parallel import StageLog
from planner.report import plan_to_json_text
from planner.study.loading import load_study

REPO = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("fleet_gen", REPO / "benchmarks" / "fleet_gen.py")
fleet_gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(fleet_gen)


def _small_fleet(tmp_path, n_sites, sensitivity):
    path = fleet_gen.write_fleet(tmp_path, n_sites, seed=5, sensitivity=sensitivity)
    text = path.read_text()
    # fewer candidates keep the test short; the mix of sites stays. NMC stays among them:
    # at these sites the LFP packs' fade lives lie beyond their component lives, so only
    # an NMC pack's cell spread reaches below its service limit (a pack Monte Carlo whose
    # draws matter)
    text = text.replace('chemistries = ["vrla", "lfp", "nmc", "lto", "lisocl2"]',
                        'chemistries = ["vrla", "lfp", "nmc", "lisocl2"]')
    text = text.replace("oversize_factors = [1.0, 1.25, 1.5, 2.0, 3.0]", "oversize_factors = [1.0, 2.0]")
    path.write_text(text)
    return load_study(path)


def _without_timing(plan):
    data = json.loads(plan_to_json_text(plan))
    for key in ("seconds", "build_seconds"):
        data["solver"].pop(key, None)
    return data


def test_parallel_plan_equals_serial_plan(tmp_path, monkeypatch):
    study = _small_fleet(tmp_path, 24, sensitivity=True)
    monkeypatch.setattr(pipeline, "CHUNK_SITES_MAX", 8)  # 3 pieces over 2 worker processes
    assert len(pipeline.site_chunks(study)) == 3
    serial = pipeline.run_study(study, workers=1)
    log = StageLog()
    parallel = pipeline.run_study(study, workers=2, log=log)
    assert len(log.worker_peak) == 2  # two worker processes did the work
    # the pack Monte Carlo ran for some chosen designs (P10 below P90)
    spread = [s for s in serial["sites"] if s.get("life_p10_years") is not None
              and s["life_p10_years"] < s["life_p90_years"]]
    assert spread
    assert _without_timing(serial) == _without_timing(parallel)


def test_fast_warming_case_equals_a_full_rerun(tmp_path):
    study = _small_fleet(tmp_path, 6, sensitivity=True)
    plan = pipeline.run_study(study, workers=1)
    warming = next(c for c in plan["sensitivity"] if c["case"].startswith("warming"))
    settings = {k: dict(v) for k, v in study.settings.items()}
    settings["study"]["warming_k"] += pipeline.WARMING_SENSITIVITY_K
    settings["output"]["sensitivity"] = False
    warmed = replace(study, settings=MappingProxyType(
        {k: MappingProxyType(v) for k, v in settings.items()}))
    full = pipeline.run_study(warmed, workers=1)
    assert warming["total_present_cost"] == pytest.approx(full["total_present_cost"], rel=1e-9)
    base_ids = {s["id"]: s.get("design_id") for s in plan["sites"]}
    changed = sum(1 for s in full["sites"] if base_ids[s["id"]] != s.get("design_id"))
    assert warming["designs_changed"] == changed
    assert changed > 0  # the case moves something: the comparison is not trivial
