"""A pack in service read from today, capped by a measured SOH (planner/aging/measured.py).

Class: a measured state of health below the simulated curve used to be ignored (an LFP
pack measured at 1 % kept 16 more years). From the day measured, the pack's health is
never above the measurement. The curves here are invented shapes; the rule is the
module's (equivalent age on the curve, or the curve's relative pace from the measurement).
"""

import numpy as np
import pytest

from planner.aging.measured import health_from_today

CURVE = 1.0 - 0.002 * np.arange(241)          # 20 years, 0.2 % a month (invented)


def test_no_measurement_reads_the_curve_from_the_age():
    health = health_from_today(CURVE, age_months=36)
    assert health.start_month == 36 and health.soh_monthly[0] == pytest.approx(CURVE[36])
    assert health.years_to(0.7) == pytest.approx((150 - 36) / 12)


def test_measurement_on_the_curve_gives_the_equivalent_age():
    # measured worse than the age says: it behaves like an older pack
    older = health_from_today(CURVE, age_months=36, measured_soh_frac=0.8)
    assert older.start_month == 100 and older.on_model_curve
    # variant: measured better than predicted: a younger equivalent age
    younger = health_from_today(CURVE, age_months=36, measured_soh_frac=0.95)
    assert younger.start_month == 25 and younger.years_to(0.7) > older.years_to(0.7)


def test_measurement_below_the_whole_curve_caps_the_health():
    # 1 % of capacity
    health = health_from_today(CURVE, age_months=36, measured_soh_frac=0.01)
    assert not health.on_model_curve
    assert health.soh_monthly.max() <= 0.01 and health.years_to(0.7) == 0.0
    # variant: a measurement just below the curve's end fades on at the curve's pace
    flat_end = np.concatenate([CURVE[:121], np.full(120, CURVE[120])])   # stops fading
    health = health_from_today(flat_end, age_months=12, measured_soh_frac=0.7)
    assert health.soh_monthly[0] == pytest.approx(0.7)
    assert health.soh_monthly[60] == pytest.approx(0.7 * flat_end[72] / flat_end[12])
    assert np.all(np.diff(health.soh_monthly) <= 1e-12)


def test_months_are_padded_to_the_horizon():
    health = health_from_today(CURVE, age_months=0, measured_soh_frac=0.6)
    assert health.start_month == 200 and health.months(120).size == 120
    assert health.months(120)[-1] == pytest.approx(CURVE[-1])


def test_existing_pack_measured_at_one_percent_is_not_kept(tmp_path):
    from planner.designs.evaluation import evaluate_fleet
    from planner.site.model import model_sites
    from planner.study.loading import load_study

    (tmp_path / "s.csv").write_text(
        "id,region,climate,load_w,charging,pv_wp,autonomy_days,existing_chemistry,"
        "existing_capacity_wh,existing_installed_year,existing_soh_frac\n"
        "A,r,temperate-maritime,2,pv,60,5,lfp,1000,2024,0.01\n"
        "B,r,temperate-maritime,2,pv,60,5,lfp,1000,2024,\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "s.csv"\nhorizon_years = 10\n'
                                     '[candidates]\nchemistries = ["lfp"]\n')
    study = load_study(tmp_path / "s.toml")
    measured, unmeasured = (r.existing for r in evaluate_fleet(study, model_sites(study)))
    assert measured.life_years == 0.0 and measured.soh_monthly.max() <= 0.01
    assert unmeasured.life_years > 5.0       # the same pack without a test lasts on
