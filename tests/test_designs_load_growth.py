"""Load growth per site: install windows, grown load and the life it leaves (sources
beside each check)."""

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

from planner import pipeline
from planner.designs.load_growth import life_under_growth, load_steps, scaled_model
from planner.optimize import solve_fleet
from planner.plan.costing import build_problem
from planner.site.model import model_sites
from planner.study.loading import load_study


def test_load_steps_compound_growth():
    # compound growth, L(t) = L0 (1 + g)^t (definition): 5 %/year, 12 years in steps of 5;
    # each window is designed for the load at the start of the year after it
    steps = load_steps(0.05, 12, 5)
    assert [(s.first_year, s.last_year) for s in steps] == [(0, 4), (5, 9), (10, 11)]
    assert [s.load_factor for s in steps] == pytest.approx([1.05 ** 5, 1.05 ** 10, 1.05 ** 12], rel=1e-12)
    assert [(s.first_year, s.last_year, s.load_factor) for s in load_steps(0.0, 12, 5)] == [(0, 11, 1.0)]


def test_life_under_growth_matches_the_crossing():
    # our own worked example: SOH falls linearly 2 %/year; the pack needs 60 % of its rated
    # capacity for the designed load, growing 5 %/year after one year; worn out at 70 %.
    # The crossing 1 - 0.02 a = 0.6 x 1.05^(a - 1) is found independently by scipy's brentq
    # (Brent 1973): a = 9.36 years (before the 70 % floor at 15 years).
    ages = np.arange(0, 30 * 12 + 1) / 12.0
    soh = 1.0 - 0.02 * ages
    root = brentq(lambda a: 1.0 - 0.02 * a - 0.6 * 1.05 ** (a - 1.0), 1.0, 15.0)
    assert life_under_growth(soh, 0.6, 0.7, 0.05, 1.0) == pytest.approx(root, abs=1e-3)
    # without growth the floor decides: 1 - 0.02 a = 0.7 at a = 15 (arithmetic)
    assert life_under_growth(soh, 0.6, 0.7, 0.0, 1.0) == pytest.approx(15.0, abs=1e-9)
    assert math.isinf(life_under_growth(np.ones(10), 0.5, 0.7, 0.05, 1.0))


def _study(tmp_path: Path, growth: float):
    (tmp_path / "sites.csv").write_text(
        "id,region,climate,load_w,charging,pv_wp,autonomy_days,heater_setpoint_c,load_growth_frac_per_year\n"
        f"G-1,r,hot-desert,3,pv,150,5,,{growth}\n")
    (tmp_path / "s.toml").write_text(
        '[study]\nsites_file = "sites.csv"\nhorizon_years = 12\n'
        '[candidates]\nchemistries = ["lfp"]\noversize_factors = [1.0, 1.5, 2.0]\nload_growth_step_years = 4\n'
        '[thermal]\nmeasures = ["none"]\n[output]\nsensitivity = false\n')
    study = load_study(tmp_path / "s.toml")
    return study, model_sites(study)


def test_growing_site_installs_within_its_windows(tmp_path):
    study, models = _study(tmp_path, 0.10)
    grown = scaled_model(models[0], 1.1 ** 4)
    # the site's own load scales, nothing else (energy: daily Wh = sum of hourly W / 365)
    assert grown.daily_load_wh == pytest.approx(models[0].daily_load_wh * 1.1 ** 4, rel=1e-12)
    designs, hints = pipeline._evaluate_with_measures(study, models)
    windows = {o.design.install_years for o in designs[0].outcomes}
    assert windows == {(0, 3), (4, 7), (8, 11)}
    sol = solve_fleet(build_problem(study, models, designs, hints))
    plan = sol.site("G-1")
    for year, c in zip(plan.replacement_years, plan.installations):
        assert c.first_install_year <= year <= c.last_install_year
    # a pack designed for a larger load holds at least the requirement it was sized for:
    # later windows never offer a smaller 1x pack (IEEE 1013 chain, linear in the load)
    smallest = {}
    for o in designs[0].outcomes:
        w = o.design.install_years
        smallest[w] = min(smallest.get(w, math.inf), o.design.reference.capacity_wh)
    assert smallest[(0, 3)] < smallest[(4, 7)] < smallest[(8, 11)]
