"""Component lives besides cell fade (planner.pack.components) and how the plan uses them.

Check values and their sources:
- the 10-degree rule of aluminium electrolytic capacitors: wear-out life halves per 10 K
  (capacitor makers' life formula L = L0 2^((T0 - T)/10), from memory; common practice
  for battery-management electronics);
- control-chart tables (textbook): expected range of n normal draws, d2 = 2.059 (n = 4),
  3.532 (n = 16);
- common practice: a buried vault is damp, a conditioned shelter dry; cell imbalance only
  where balancing never starts.
"""

import math
from pathlib import Path

import numpy as np
import pytest

from planner.chemistry import get_chemistry
from planner.pack.components import (
    CEILING,
    ELECTRONICS,
    SEALS,
    condensation_class,
    electronics_life_years,
    expected_range_of_normals,
    imbalance_loss_frac_per_year,
    service_limit,
    site_components,
)
from planner.site import model_sites
from planner.study import load_study

REPO = Path(__file__).resolve().parents[1]
HEADER = ("id,name,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days,"
          "system_voltage_v,access_months\n")


def _models(tmp_path, rows, extra="", horizon=20):
    (tmp_path / "sites.csv").write_text(HEADER + rows)
    (tmp_path / "s.toml").write_text(
        f'[study]\nsites_file = "sites.csv"\nhorizon_years = {horizon}\n'
        '[candidates]\nchemistries = ["lfp"]\noversize_factors = [1.0, 2.0]\n'
        '[output]\nsensitivity = false\n' + extra)
    study = load_study(tmp_path / "s.toml")
    return study, model_sites(study)


def test_desert_cabinet_electronics_wear_out_sooner_than_in_a_shelter_by_the_10k_rule(tmp_path):
    # The same design in a desert sun cabinet and in a conditioned shelter: the management
    # electronics' life is the reference life over the mean of 2^(max(T - 25, 0) / 10)
    # across the hours (10-degree rule), so the ratio of the two lives is the ratio of
    # those means, computed here from the battery temperatures themselves.
    _, (cabinet, shelter) = _models(tmp_path, "D-1,D-1,r,hot-desert,cabinet-sun,3,pv,60,5,12,\n"
                                              "D-2,D-2,r,hot-desert,shelter,3,pv,60,5,12,\n")
    params = get_chemistry("lfp").components
    life = {}
    for model in (cabinet, shelter):
        parts = site_components(params, True, True, model.temp_battery_c, model.year.temp_dew_c,
                                model.enclosure.kind)
        life[model.enclosure.kind] = parts.lives[ELECTRONICS]

    def mean_rate(temp):
        return float(np.mean(np.exp2(np.maximum(temp - 25.0, 0.0) / 10.0)))

    expected = mean_rate(cabinet.temp_battery_c) / mean_rate(shelter.temp_battery_c)
    assert life["shelter"] / life["cabinet-sun"] == pytest.approx(expected, rel=1e-12)
    assert expected > 1.3                  # the desert cabinet is much hotter
    assert life["shelter"] <= params["electronics_life_years_ref"] + 1e-9


def test_electronics_rule_at_constant_temperatures():
    # 10-degree rule: 20 years at 25 °C, 10 at 35 °C, 5 at 45 °C; no credit below 25 °C
    kw = dict(electronics_life_years_ref=20.0, electronics_temp_ref_c=25.0,
              electronics_halving_k=10.0)
    for temp_c, years in ((25.0, 20.0), (35.0, 10.0), (45.0, 5.0), (5.0, 20.0)):
        assert electronics_life_years(np.full(8760, temp_c), **kw) == pytest.approx(years)


def test_condensation_class_from_dew_point_site_input_or_enclosure():
    battery = np.full(8760, 10.0)
    dew = np.full(8760, 0.0)
    dew[:500] = 15.0                       # 5.7 % of the hours below the dew point
    assert condensation_class(battery, dew, "cabinet-sun") == "occasional"
    dew[:1000] = 15.0                      # 11.4 %
    assert condensation_class(battery, dew, "cabinet-sun") == "frequent"
    assert condensation_class(battery, np.full(8760, -5.0), "vault") == "dry"
    # the sites table's class wins; without a dew point, the enclosure's (common practice)
    assert condensation_class(battery, dew, "cabinet-sun", "dry") == "dry"
    assert condensation_class(battery, None, "vault") == "frequent"
    assert condensation_class(battery, None, "shelter") == "dry"


def test_seal_life_follows_the_class_and_the_ceiling_wins_when_lower():
    params = get_chemistry("vrla").components
    damp = site_components(params, True, False, np.full(8760, 20.0), None, "vault")
    dry = site_components(params, True, False, np.full(8760, 20.0), None, "shelter")
    assert damp.lives[SEALS] < dry.lives[SEALS]
    assert ELECTRONICS not in damp.lives          # lead-acid has no management system
    assert service_limit(damp.lives, None) == (damp.lives[SEALS], SEALS)
    assert service_limit(damp.lives, 5.0) == (5.0, CEILING)
    assert service_limit({}, None) == (math.inf, "")


def test_expected_range_against_control_chart_constants():
    # d2 of control-chart tables: 2.059 (n = 4), 2.847 (n = 8), 3.532 (n = 16)
    for n, d2 in ((4, 2.059), (8, 2.847), (16, 3.532)):
        assert expected_range_of_normals(n) == pytest.approx(d2, rel=0.02)


def test_imbalance_only_below_the_balancing_start_and_faster_when_warm():
    params = get_chemistry("lfp").components
    start = params["balancing_start_v_per_cell"]
    cool, warm = np.full(8760, 25.0), np.full(8760, 35.0)
    assert imbalance_loss_frac_per_year(cool, 4, start, **params) == 0.0
    below = imbalance_loss_frac_per_year(cool, 4, start - 0.05, **params)
    # d2(4) x 0.5 %/yr drift spread at 25 °C (the pack model's figure, from memory)
    assert below == pytest.approx(expected_range_of_normals(4) * 0.005)
    # self-discharge doubles per 10 K (common practice): so does the drift
    assert imbalance_loss_frac_per_year(warm, 4, start - 0.05, **params) == pytest.approx(2 * below)
    assert imbalance_loss_frac_per_year(cool, 1, start - 0.05, **params) == 0.0


def test_a_sun_shield_can_win_at_a_hot_desert_site(tmp_path):
    # In a desert sun cabinet the battery passes the 45 °C maximum charge temperature of
    # LFP for hundreds of hours (charging blocked) and its electronics and cells age by
    # the heat; a sun shield lowers both. With LFP the only chemistry, the shield must be
    # tried; at its default price (250 + 2 crew hours) it wins where the longer life saves
    # a replacement trip (invented case: a 16-year horizon, a 5,000 trip).
    from planner import pipeline
    from planner.optimize import solve_fleet
    from planner.plan import build_problem

    study, models = _models(tmp_path, "D-1,D-1,r,hot-desert,cabinet-sun,4.5,pv,80,5,12,\n",
                            '[thermal]\nmeasures = ["sun-shield"]\n'
                            '[regions.r]\ntrip_cost = 5000.0\n', horizon=16)
    designs, hints = pipeline._evaluate_with_measures(study, models)
    measures = {o.design.thermal_measure for o in designs[0].outcomes}
    assert "sun-shield" in measures
    shaded = [o for o in designs[0].outcomes if o.design.thermal_measure == "sun-shield"]
    bare = [o for o in designs[0].outcomes if not o.design.thermal_measure]
    assert max(o.life_years for o in shaded) > max(o.life_years for o in bare)
    assert min(o.charge_blocked_hot_hours for o in shaded) < min(o.charge_blocked_hot_hours for o in bare)
    # the plan counts the hours heat blocks charging, apart from the cold ones
    assert min(o.charge_blocked_hot_hours for o in bare) > 100
    assert all(o.charge_blocked_hours == o.charge_blocked_cold_hours + o.charge_blocked_hot_hours
               for o in designs[0].outcomes)
    solution = solve_fleet(build_problem(study, models, designs, hints))
    chosen = solution.sites[0].installations[0].design_id
    assert chosen.endswith("+sun-shield"), chosen
