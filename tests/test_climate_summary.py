"""Battery-temperature summary and the Arrhenius-effective temperature."""

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from planner.climate.summary import effective_temperature_c, monthly_means_c, summarize_temperatures

R = 8.314462618   # J/(mol K), CODATA 2018


def test_effective_temperature_of_constant_series_is_that_constant():
    assert effective_temperature_c(np.full(8760, 23.5)) == pytest.approx(23.5, abs=1e-9)


def test_effective_temperature_two_level_worked_example():
    # Half the time at 10 degC, half at 40 degC, Ea = 50 kJ/mol; computed by hand from
    # the definition T_eff = -Ea / (R ln(mean exp(-Ea/(R T)))) with math.exp.
    ea = 50e3
    k = 0.5 * (math.exp(-ea / (R * 283.15)) + math.exp(-ea / (R * 313.15)))
    expected = -ea / (R * math.log(k)) - 273.15
    series = np.r_[np.full(4380, 10.0), np.full(4380, 40.0)]
    assert effective_temperature_c(series, ea) == pytest.approx(expected, abs=1e-9)
    assert expected > 25.0    # hot hours weigh more: above the arithmetic mean (Jensen)


@settings(max_examples=100, deadline=None)
@given(temps=hnp.arrays(np.float64, st.integers(1, 500),
                        elements=st.floats(-60, 80, allow_nan=False)),
       ea=st.floats(10e3, 150e3))
def test_effective_temperature_never_below_mean(temps, ea):
    # Jensen's inequality: exp(-Ea/(R T)) is convex for T < Ea/(2R) (above 6 kJ/mol that
    # covers every temperature up to 80 degC drawn here), so the
    # Arrhenius-effective temperature is >= the arithmetic mean.
    assert effective_temperature_c(temps, ea) >= temps.mean() - 1e-9
    assert effective_temperature_c(temps, ea) <= temps.max() + 1e-9


def test_effective_temperature_vectorised():
    a = np.r_[np.full(100, 0.0), np.full(100, 30.0)]
    both = effective_temperature_c(np.c_[a, a + 5.0])
    assert both[0] == pytest.approx(effective_temperature_c(a))
    assert both[1] == pytest.approx(effective_temperature_c(a + 5.0))


def test_summary_counts_percentiles_and_months():
    times = pd.date_range("2023-01-01", periods=8760, freq="h")
    # Battery: month number x 5 - 25 degC (Jan -20, Dec 35); air a little cooler.
    battery = times.month.to_numpy() * 5.0 - 25.0
    battery[:10] = -30.0          # ten very cold hours in January
    battery[-5:] = 60.0           # five very hot hours in December
    air = battery - 2.0
    s = summarize_temperatures(air, battery)
    d = s.to_dict()
    for key in ("air_mean_c", "air_p99_c", "battery_mean_c", "battery_p1_c", "battery_p99_c",
                "hours_above_45c", "hours_below_0c", "effective_temp_c", "air_p1_c",
                "hours_above_35c", "hours_above_55c", "hours_below_minus20c", "coldest_month",
                "hottest_month", "air_monthly_mean_c", "battery_monthly_mean_c"):
        assert key in d
    # Counts by direct definition with pandas on the same inputs.
    series = pd.Series(battery, index=times)
    assert d["hours_below_0c"] == int((series < 0).sum())          # Jan-Apr (<= -5) hours
    assert d["hours_below_minus20c"] == 10
    assert d["hours_above_55c"] == 5
    assert d["hours_above_45c"] == 5
    assert d["hours_above_35c"] == 5    # December is exactly 35 -> not above
    assert d["coldest_month"] == 1 and d["hottest_month"] == 12
    np.testing.assert_allclose(d["battery_monthly_mean_c"],
                               series.groupby(series.index.month).mean().round(3).to_numpy())
    assert d["battery_p99_c"] == pytest.approx(round(float(np.percentile(battery, 99)), 3))
    assert d["air_mean_c"] == pytest.approx(round(float(battery.mean() - 2.0), 3))


def test_monthly_means_2d():
    x = np.random.default_rng(0).normal(size=(8760, 3))
    np.testing.assert_allclose(monthly_means_c(x)[:, 1], monthly_means_c(x[:, 1]))
