"""Capacity from battery logs: total least squares between rest points (Plett 2011), and
the chemistries and duties where a log cannot tell capacity.

Logs here are synthetic (benchmarks/field_gen.py simulates an invented PV-charged pack of
known capacity hour by hour); the checks are that the estimator recovers that capacity.
"""

import datetime as dt
import importlib.util
from pathlib import Path

import numpy as np
import pytest

from planner.evidence.battery_logs import (
    capacity_from_log,
    charge_drawn,
    log_unusable_reason,
    rest_ends,
    tls_capacity,
)

REPO = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("field_gen", REPO / "benchmarks" / "field_gen.py")
field_gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(field_gen)


def _hours(log):
    return (log["time"] - np.datetime64("2027-01-01")).astype(float) / 3600.0


def test_total_least_squares_is_unbiased_where_ordinary_least_squares_is_not():
    """Plett 2011 (J. Power Sources 196(4) 2319): with noise on the state-of-charge axis,
    ordinary least squares of ΔQ on ΔSOC shrinks the capacity (errors-in-variables
    attenuation); the weighted total least squares estimate does not."""
    rng = np.random.default_rng(1)
    q_true, n = 80.0, 400
    x_true = rng.uniform(-0.5, 0.5, n)
    sx, sy = 0.08, 0.5
    x = x_true + sx * rng.standard_normal(n)
    y = q_true * x_true + sy * rng.standard_normal(n)
    ols = float(np.sum(x * y) / np.sum(x * x))
    tls, sd = tls_capacity(y, x, np.full(n, sy), np.full(n, sx), bounds_ah=(1.0, 400.0))
    assert ols < 0.95 * q_true  # attenuated by var(x_true) / (var(x_true) + sx²) ≈ 0.93
    assert abs(tls - q_true) < max(3 * sd, 0.03 * q_true)


@pytest.mark.parametrize("chemistry, cells, capacity_ah, rated_ah, bias", [
    ("vrla", 6, 66.0, 75.0, 0.04),  # lead-acid: a shallow rest-voltage slope, weak records
    ("nmc", 3, 40.0, 50.0, 0.01),
])
def test_log_recovers_a_known_capacity(chemistry, cells, capacity_ah, rated_ah, bias):
    """Six synthetic half-years of one pack: the records' mean lies within ``bias`` of the
    true capacity and every record within three of its own standard errors."""
    found = []
    for seed in range(6):
        log = field_gen.synthetic_log(chemistry=chemistry, capacity_ah=capacity_ah, series_cells=cells,
                                      load_a=0.3, pv_peak_a=3.0, days=180, end=dt.datetime(2027, 1, 1),
                                      temp_mean_c=25.0, seed=seed)
        one = capacity_from_log(chemistry, "pv", _hours(log), log["pack_voltage_v"], log["current_a"],
                                log["battery_temp_c"], series_cells=cells, rated_ah=rated_ah, age_now_years=3.0)
        assert one.usable, one.reason
        assert np.all((one.age_years > 2.4) & (one.age_years < 3.0))
        found.append(one)
    caps = np.concatenate([f.capacity_frac for f in found])
    sigmas = np.concatenate([f.sigma_frac for f in found])
    truth = capacity_ah / rated_ah
    assert abs(caps.mean() - truth) < bias
    assert np.all(np.abs(caps - truth) < 3 * sigmas)


def test_flat_plateaus_and_float_duty_say_why_not():
    assert "plateau" in log_unusable_reason("lfp", "pv")
    assert "flat" in log_unusable_reason("lto", "pv")
    assert "float" in log_unusable_reason("vrla", "mains")
    assert log_unusable_reason("vrla", "pv") == "" and log_unusable_reason("nmc", "pv") == ""
    t = np.arange(100.0)
    found = capacity_from_log("lfp", "pv", t, np.full(100, 13.2), np.zeros(100), np.full(100, 20.0),
                              series_cells=4, rated_ah=50.0, age_now_years=2.0)
    assert not found.usable and "plateau" in found.reason


def test_a_log_without_rests_says_so():
    t = np.arange(200.0)
    found = capacity_from_log("vrla", "pv", t, np.full(200, 12.6), np.full(200, -5.0), np.full(200, 20.0),
                              series_cells=6, rated_ah=50.0, age_now_years=2.0)
    assert not found.usable and "rests" in found.reason


def test_rest_ends_need_enough_quiet_hours():
    t = np.arange(12.0)
    i = np.array([-3, 0, 0, 0, 0, 0, -3, 0, 0, -3, 0, 0], dtype=float)
    assert rest_ends(t, i, 100.0, 4.0).tolist() == [5]  # 1..5 lasts 4 h; 7..8 only 1 h


def test_primary_pack_counts_the_charge_drawn():
    t = np.arange(0.0, 1001.0)
    first, last, ah = charge_drawn(t, np.full(t.size, -0.1), rated_ah=19.0)
    assert (first, last) == (0.0, 1000.0) and ah == pytest.approx(100.0)
