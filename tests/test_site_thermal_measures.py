"""Thermal measures as a design dimension: checks against physics and the trade's limits
(sources beside each check)."""

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from planner import pipeline
from planner.energy.soc import simulate_soc
from planner.errors import InputError
from planner.optimize import solve_fleet
from planner.plan.costing import build_problem
from planner.site.model import model_sites
from planner.site.thermal_measures import catalogue, offered_measures, variant_models
from planner.study.loading import load_study
from planner.thermal.enclosures import get_enclosure

HEADER = "id,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days,heater_setpoint_c,thermal_measures\n"


def _study(tmp_path: Path, rows: str, extra: str = ""):
    (tmp_path / "sites.csv").write_text(HEADER + rows)
    (tmp_path / "s.toml").write_text(
        '[study]\nsites_file = "sites.csv"\nhorizon_years = 10\n'
        '[candidates]\nchemistries = ["lfp", "lto"]\noversize_factors = [1.0, 2.0]\n'
        '[output]\nsensitivity = false\n' + extra)
    study = load_study(tmp_path / "s.toml")
    return study, model_sites(study)


def _plan(study, models):
    designs, hints = pipeline._evaluate_with_measures(study, models)
    return designs, solve_fleet(build_problem(study, models, designs, hints))


def test_cold_site_served_only_with_a_heater(tmp_path):
    # A subarctic cabinet reaches about -33 °C: below the -20 °C discharge limit of
    # lithium-ion and the -30 °C of LTO (common practice / LTO datasheets, from memory:
    # planner/data/chemistries.toml), so no design serves it without a measure.
    row = "C-1,r,subarctic-continental,cabinet-sun,2,pv,80,5,,{}\n"
    study, models = _study(tmp_path, row.format("none"))
    assert models[0].design_temp_c < -30.0
    _, sol = _plan(study, models)
    assert [u.site_id for u in sol.unserved] == ["C-1"]
    reason = sol.unserved[0].reason
    assert "discharge limit" in reason  # the binding limit is named
    assert "cheapest thermal measure that serves it" in reason  # and what would serve it

    study, models = _study(tmp_path, row.format("heater-box"))
    designs, sol = _plan(study, models)
    assert not sol.unserved
    plan = sol.site("C-1")
    assert plan.candidate.thermal_measure == "heater-box"
    heated = designs[0].measure_models["heater-box"]
    heater_wh = heated.heater_power_w
    assert heater_wh.sum() > 0
    # lithium-ion is not charged below 0 °C (common practice): with a measure's heater
    # the heated battery temperature alone decides, never "the heater is on"
    assert not heated.heater_on.any()
    # the heater's energy is part of the load the battery carries, hour by hour
    np.testing.assert_allclose(heated.load_w - models[0].load_w, heater_wh, rtol=0, atol=1e-9)
    # first law over the year with the heater in the load (energy in = out + losses +
    # change in stored energy; delivered + unserved = deficit), 1e-9 relative
    cap = plan.candidate.capacity_wh
    r = simulate_soc(heated.charge_w[:, None], heated.load_w[:, None], np.array([cap]),
                     heated.temp_battery_c[:, None], usable_fraction=0.95, charge_efficiency_frac=0.95,
                     discharge_efficiency_frac=0.96, self_discharge_frac_per_h=2e-5, max_charge_c_rate=0.5,
                     charge_temp_min_c=0.0, heater_on=heated.heater_on[:, None], min_soc_frac=0.2)
    scale = max(r.energy_in_wh[0], r.energy_out_wh[0], cap)
    residual = r.energy_in_wh - r.energy_out_wh - r.losses_wh - r.delta_stored_wh
    assert abs(residual[0]) <= 1e-9 * scale
    deficit = np.maximum(heated.load_w - heated.charge_w, 0.0).sum()
    assert r.energy_out_wh[0] + r.unserved_wh[0] == pytest.approx(deficit, rel=1e-9)


def test_insulated_box_is_a_conductance_in_series(tmp_path):
    # Thermal resistances in series add (Incropera & DeWitt, Fundamentals of Heat and Mass
    # Transfer, thermal circuits): 1/UA = 1/15 + 1/1 W/K for the cabinet and the box.
    study, models = _study(tmp_path, "B-1,r,alpine,cabinet-sun,2,pv,80,5,,insulated-box\n")
    (i, m, variant), = variant_models(study, models, [(0, catalogue(study)["insulated-box"])], keep_all=True)
    cabinet = get_enclosure("cabinet-sun")
    assert variant.enclosure.total_ua_w_k == pytest.approx(1.0 / (1.0 / cabinet.ua_w_k + 1.0 / 1.0), rel=1e-12)
    # a longer time constant smooths the daily swing: the coldest hour is warmer, the
    # hottest cooler (lumped-capacitance response, same reference)
    assert variant.temperatures.battery_min_c > models[0].temperatures.battery_min_c
    assert variant.temperatures.battery_max_c < models[0].temperatures.battery_max_c


def test_measures_offered_only_where_they_can_matter(tmp_path):
    rows = ("H-1,r,hot-desert,cabinet-sun,2,pv,80,5,,\n"      # hot, never below 0 °C
            "H-2,r,hot-desert,shelter,2,pv,80,5,,\n"          # conditioned shelter
            "A-1,r,alpine,cabinet-sun,2,pv,80,5,,\n"          # cold
            "A-2,r,alpine,cabinet-sun,2,pv,80,5,8,\n")        # cold, heater in the sites table
    study, models = _study(tmp_path, rows)
    offered = {(models[i].site.id, m.id) for i, m in offered_measures(study, models)}
    # lithium-ion is not charged below 0 °C (common practice): heaters only where the
    # battery gets colder than that; shade and vaults where it gets hot
    assert ("H-1", "heater-box") not in offered and ("H-1", "sun-shield") in offered
    assert not any(site == "H-2" for site, _ in offered)
    assert ("A-1", "heater-box") in offered and ("A-1", "sun-shield") not in offered
    # a setpoint in the sites table forces today's heater: no heater measure on top
    assert ("A-2", "heater-box") not in offered
    assert models[3].heater_power_w.sum() > 0


def test_measures_switched_off_and_bad_ids(tmp_path):
    study, models = _study(tmp_path, "A-1,r,alpine,cabinet-sun,2,pv,80,5,,\n",
                           '[thermal]\nmeasures = ["none"]\n')
    assert offered_measures(study, models) == []
    # the study loader checks every site's ids with the study's other mistakes, before
    # any site is modelled (a 10,000-site fleet would otherwise fail pieces into the run)
    with pytest.raises(InputError, match="row 2, column thermal_measures.*heated-blanket"):
        _study(tmp_path, "A-1,r,alpine,cabinet-sun,2,pv,80,5,,heated-blanket\n")
    with pytest.raises(InputError, match="row 2, column thermal_measures: 'none' together with vault"):
        _study(tmp_path, "A-1,r,alpine,cabinet-sun,2,pv,80,5,,none;vault\n")


def test_measure_evaluated_only_for_chemistries_it_can_help(tmp_path):
    # A measure changes a decision only through temperature: a chemistry left out for a
    # temperature limit, one whose charging the cold blocks (lithium-ion is not charged
    # below 0 °C, common practice), or one whose life ends by aging. A chemistry that lasts
    # to its service-life limit and is never blocked gains nothing worth a measure.
    from types import SimpleNamespace as NS

    from planner.site.thermal_measures import helped_chemistries

    study, models = _study(tmp_path, "A-1,r,alpine,cabinet-sun,2,pv,80,5,,\n")
    model = models[0]
    assert model.design_temp_c < 0.0

    def outcome(chem, blocked, cause):
        return NS(design=NS(chemistry=chem), charge_blocked_hours=blocked,
                  charge_blocked_cold_hours=blocked, charge_blocked_hot_hours=0.0,
                  limiting_cause=cause)

    box = catalogue(study)["heater-box"]
    capped = NS(excluded={}, outcomes=[outcome("lfp", 0.0, "service-life limit"),
                                       outcome("lto", 0.0, "service-life limit")])
    assert helped_chemistries(study, capped, box, model) == ()
    blocked = NS(excluded={}, outcomes=[outcome("lfp", 120.0, "service-life limit"),
                                        outcome("lto", 0.0, "service-life limit")])
    assert helped_chemistries(study, blocked, box, model) == ("lfp",)
    cold_out = NS(excluded={"lto": "battery reaches -31.0 °C, below the -30 °C discharge limit"},
                  outcomes=[outcome("lfp", 0.0, "calendar")])
    assert helped_chemistries(study, cold_out, box, model) == ("lfp", "lto")


def test_warming_helps_aging_only_where_cold_speeds_it(tmp_path):
    # Warming a battery speeds calendar aging (Arrhenius, common practice) but slows the
    # lithium plating that graphite-anode cells suffer when cycled cold (Waldmann et al.
    # 2014; Schimpe et al. 2018): a heater can only help the aging of a chemistry whose
    # cycle law has that cold branch (lfp here), never of lead-acid.
    from types import SimpleNamespace as NS

    from planner.site.thermal_measures import helped_chemistries, with_chemistries

    study, models = _study(tmp_path, "A-1,r,alpine,cabinet-sun,2,pv,80,5,,\n",
                           '[thermal]\nmeasures = ["heater-box"]\n')
    study = with_chemistries(study, ("vrla", "lfp"))
    model = models[0]
    aging = NS(excluded={}, outcomes=[NS(design=NS(chemistry=c), charge_blocked_hours=0.0,
                                         charge_blocked_cold_hours=0.0,
                                         charge_blocked_hot_hours=0.0, limiting_cause="calendar")
                                      for c in ("vrla", "lfp")])
    warmer = NS(design_temp_c=model.design_temp_c + 10.0, heater_power_w=np.ones(10),
                temperatures=NS(effective_temp_c=model.temperatures.effective_temp_c + 2.0))
    cooler = NS(design_temp_c=model.design_temp_c, heater_power_w=np.zeros(10),
                temperatures=NS(effective_temp_c=model.temperatures.effective_temp_c - 3.0))
    box = catalogue(study)["heater-box"]
    assert helped_chemistries(study, aging, box, model, warmer) == ("lfp",)
    assert helped_chemistries(study, aging, box, model, cooler) == ("vrla", "lfp")
    # a box around today's heater cuts its energy: every chemistry's energy balance gains
    heated = dataclasses.replace(model, heater_power_w=np.full(8760, 5.0))
    boxed = NS(design_temp_c=model.design_temp_c, heater_power_w=np.full(8760, 2.0),
               temperatures=NS(effective_temp_c=model.temperatures.effective_temp_c + 1.0,
                               battery_max_c=model.temperatures.battery_max_c))
    capped = NS(excluded={}, outcomes=[NS(design=NS(chemistry=c), charge_blocked_hours=0.0,
                                          charge_blocked_cold_hours=0.0,
                                          charge_blocked_hot_hours=0.0,
                                          limiting_cause="service-life limit") for c in ("vrla", "lfp")])
    assert helped_chemistries(study, capped, catalogue(study)["insulated-box"], heated, boxed) == ("vrla", "lfp")


def test_heat_blocked_charging_is_helped_by_a_measure_that_cools(tmp_path):
    # A battery management system stops charging above the maximum charge temperature
    # (45 °C for lithium-ion, common practice): a sun shield that lowers the hottest
    # battery hour can win back that charge, whatever limits the pack's life; a heater
    # cannot.
    from types import SimpleNamespace as NS

    from planner.site.thermal_measures import helped_chemistries

    study, models = _study(tmp_path, "D-1,r,hot-desert,cabinet-sun,3,pv,60,5,,\n")
    model = models[0]
    hot = NS(excluded={}, outcomes=[NS(design=NS(chemistry="lfp"), charge_blocked_hours=300.0,
                                       charge_blocked_cold_hours=0.0,
                                       charge_blocked_hot_hours=300.0,
                                       limiting_cause="service-life limit")])
    shaded = NS(design_temp_c=model.design_temp_c, heater_power_w=np.zeros(8760),
                temperatures=NS(effective_temp_c=model.temperatures.effective_temp_c,
                                battery_max_c=model.temperatures.battery_max_c - 6.0))
    shield = catalogue(study)["sun-shield"]
    assert "lfp" in helped_chemistries(study, hot, shield, model, shaded)
    assert "lfp" not in helped_chemistries(study, hot, catalogue(study)["heater-box"], model)
