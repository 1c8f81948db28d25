"""Capacity corrected to 25 °C against the standards' own rules, and what a test left
uncorrected does to the fade factor."""

import datetime as dt

import numpy as np
import pytest

from planner.evidence.correction import (
    capacity_at_25c,
    iec60896_capacity_at_25c,
    iec_lambda_per_k,
    ieee450_time_adjusted_at_25c,
    lithium_capacity_at_25c,
)
from planner.evidence.hierarchy import G_GRID, marginal_loglik, site_loglik
from planner.evidence.lives import PackCurve
from planner.evidence.observations import site_records
from planner.study.field_records import CapacityTest


# IEC 60896-21 rule C = Ca / (1 + λ(θ - 25)), λ = 0.006/K at 10-20 h, 0.01/K at 1-3 h
# (values read on a battery maker's support page quoting the standard; clause from memory).
@pytest.mark.parametrize("temp_c, rate_h, delivered, expected", [
    (15.0, 10.0, 0.94, 1.0),     # 10 K cold, 10 h: 6 % short
    (35.0, 10.0, 1.06, 1.0),     # 10 K warm, 10 h: 6 % over
    (15.0, 20.0, 0.94, 1.0),     # 20 h rate: same λ
    (15.0, 1.0, 0.90, 1.0),      # 1 h rate: λ = 0.01
    (5.0, 3.0, 0.80, 1.0),       # 3 h rate, 20 K cold: λ = 0.01
])
def test_iec60896_rule(temp_c, rate_h, delivered, expected):
    assert iec60896_capacity_at_25c(delivered, temp_c, rate_h) == pytest.approx(expected, abs=1e-12)


def test_iec_lambda_between_3_and_10_hours_lies_between_the_published_values():
    rates = np.array([3.0, 4.0, 5.0, 7.0, 10.0])
    lam = iec_lambda_per_k(rates)
    assert lam[0] == pytest.approx(0.01) and lam[-1] == pytest.approx(0.006)
    assert np.all(np.diff(lam) < 0)  # monotone from the short-rate to the long-rate value


# IEEE 450 time-adjusted method with the vented lead-acid factors of IEEE 485 Table 1
# (from memory; rows at 60, 50 and 40 °F confirmed by practitioner tables: 1.11, 1.19, 1.30).
@pytest.mark.parametrize("temp_f, factor", [(60.0, 1.11), (50.0, 1.19), (40.0, 1.30), (77.0, 1.0)])
def test_ieee450_time_adjusted_factors(temp_f, factor):
    temp_c = (temp_f - 32.0) * 5.0 / 9.0
    assert ieee450_time_adjusted_at_25c(1.0, temp_c) == pytest.approx(factor, abs=1e-9)


def test_ieee450_credits_a_warm_test():
    # a test above 25 °C delivers more than at 25 °C: corrected down (factor < 1)
    assert ieee450_time_adjusted_at_25c(1.0, 32.0) < 1.0


def test_lithium_uses_the_library_derating_curve():
    # chemistries.toml: LFP delivers 0.88 of its 25 °C capacity at 0 °C (from memory there)
    assert lithium_capacity_at_25c(0.88, 0.0, "lfp") == pytest.approx(1.0)
    assert lithium_capacity_at_25c(0.97, 30.0, "lfp") == pytest.approx(0.97)  # held above 25 °C
    assert capacity_at_25c(0.88, 0.0, 10.0, "lfp") == pytest.approx(1.0)


def test_lead_acid_rule_is_chosen_by_the_study_key():
    iec = capacity_at_25c(0.9, 15.0, 10.0, "vrla", "iec60896-21")
    ieee = capacity_at_25c(0.9, 15.0, 10.0, "vrla", "ieee450-time")
    assert iec == pytest.approx(0.9 / 0.94)
    assert ieee > iec  # the vented-cell table is the more temperature-sensitive


class _Site:
    id = "S-1"
    existing_capacity_wh = 1200.0
    system_voltage_v = 12.0
    existing_installed_year = 2020
    existing_soh_frac = 0.0
    charging = "pv"


def _test(row, day, pct, temp, corrected=False, kind="performance"):
    return CapacityTest(row=row, site_id="S-1", test_date=day, kind=kind, duration_h=10.0,
                        capacity_ah=None, capacity_pct=pct, start_temp_c=temp, corrected_to_25c=corrected,
                        rate_h=10.0, discharge_current_a=None, discharge_power_w=None,
                        end_voltage_v_per_cell=None, stopped_early=False, lowest_cell_v=None,
                        lowest_cell_id="", tested_pack_installed_year=None, notes="")


def _likeliest_factor(tests):
    """Factor of greatest likelihood (δ integrated against its prior) of an invented pack:
    linear predicted loss 3 %/year from installation in 2020."""
    months = np.arange(12 * 40 + 1)
    curve = PackCurve(0.03 * months / 12.0, np.zeros(months.size), 7.0, 0.8, 12.0)
    rec = site_records(_Site(), "vrla", curve, tests, None, start_year=2027, series_cells=6)
    lik = marginal_loglik(site_loglik(rec.observations))
    return float(np.exp(G_GRID[np.argmax(lik)]))


def test_a_test_left_uncorrected_10k_cold_moves_the_factor_by_the_lambda_rule():
    """Invented pack: linear predicted loss 3 %/year, true factor 1, acceptance test at
    100 %. After 5 years it holds 85 % at 25 °C; at 15 °C it delivers 0.85 x 0.94 (IEC
    60896-21, λ = 0.006 at 10 h). Read as if at 25 °C, the loss looks 0.85 x 0.06 larger:
    the factor rises by 0.051 / 0.15 = 0.34."""
    accept = _test(2, dt.date(2020, 1, 20), 100.0, 25.0)
    day = dt.date(2025, 1, 1)
    delivered = 100 * 0.85 * (1 + 0.006 * (15.0 - 25.0))
    right = _likeliest_factor([accept, _test(3, day, delivered, 15.0)])
    wrong = _likeliest_factor([accept, _test(3, day, delivered, 15.0, corrected=True)])
    age = (day - dt.date(2020, 1, 1)).days / 365.25
    assert right == pytest.approx(0.15 / (0.03 * age), rel=0.03)  # grid step 2 %
    assert wrong - right == pytest.approx(0.85 * 0.06 / (0.03 * age), rel=0.12)
