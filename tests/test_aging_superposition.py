"""Equivalent-time superposition and the repeated year (planner.aging.superposition)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.aging import age_lanes
from planner.aging import calendar as cal
from planner.aging import superposition as sp
from planner.chemistry import get_chemistry

R = 8.314462618  # CODATA 2018 molar gas constant, J/(mol K)


def _af(temp_c, ea=50e3, ref_c=25.0):
    # Arrhenius factor written out independently with the math module.
    return math.exp(-ea / R * (1.0 / (temp_c + 273.15) - 1.0 / (ref_c + 273.15)))


def test_clock_convention_worked_example():
    # Research note §6.1/§0 (method): sqrt(t) law, Ea = 50 kJ/mol, half a year at 35 °C then
    # half a year at 15 °C -> t_eq = 1.21 y at 25 °C and a loss 1.100 x that of 1 y at 25 °C.
    t_eq = sp.reference_equivalent_time([_af(35.0), _af(15.0)], [0.5, 0.5], 0.5, "clock")
    assert float(t_eq) == pytest.approx(1.21, abs=0.005)
    assert math.sqrt(float(t_eq)) == pytest.approx(1.100, abs=0.002)


def test_coefficient_convention_differs_under_varying_temperature():
    # Coefficient convention (Arrhenius factor in k): t_eq = sum(AF**(1/z) dt); for z = 0.5,
    # AF squared: 0.5 * (AF35^2 + AF15^2) (research note §6.1, formula (B)).
    expected = 0.5 * (_af(35.0) ** 2 + _af(15.0) ** 2)
    got = sp.reference_equivalent_time([_af(35.0), _af(15.0)], [0.5, 0.5], 0.5, "coefficient")
    assert float(got) == pytest.approx(expected, rel=1e-12)
    assert float(got) > 1.21 + 0.5  # clearly not the clock result
    # At constant temperature the two conventions give the same loss: k_ref AF t^z both ways.
    clock = sp.reference_equivalent_time([_af(35.0)], [1.0], 0.5, "clock")
    coeff = sp.reference_equivalent_time([_af(35.0)], [1.0], 0.5, "coefficient")
    # clock: loss = k (AF t)^z ; coefficient: loss = k (AF^(1/z) t)^z = k AF t^z.
    assert math.sqrt(float(coeff)) == pytest.approx(_af(35.0), rel=1e-12)
    assert math.sqrt(float(clock)) == pytest.approx(math.sqrt(_af(35.0)), rel=1e-12)


def test_lfp_engine_uses_the_coefficient_convention():
    # Naumann et al. 2018 fitted k_ref * AF * g(SOC) * sqrt(t): the engine must superpose a
    # hot half-year and a cold half-year as sum(AF^2 dt), not sum(AF dt) (research note §6.1).
    chem = get_chemistry("lfp")
    p = chem.aging_set("naumann").calendar
    temp = np.where(np.arange(8760) < 4380, 35.0, 15.0)[:, None]
    result = age_lanes(chem, temp, np.full((8760, 1), 0.5), None, 3.55, 1, aging_set="naumann",
                       rate_bin_k=None, soc_bin_frac=None)
    k25 = p["k_ref_per_sqrt_s"] * (p["soc_c"] * 0.0 + p["soc_d"])
    ea = p["activation_energy_j_mol"]
    half = 4380 * 3600.0
    coefficient = k25 * math.sqrt((_af(35.0, ea) ** 2 + _af(15.0, ea) ** 2) * half)
    clock = k25 * math.sqrt((_af(35.0, ea) + _af(15.0, ea)) * half)
    assert result.calendar_loss_frac[-1, 0] == pytest.approx(coefficient, rel=1e-9)
    assert abs(result.calendar_loss_frac[-1, 0] - clock) > 1e-4


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(1e-4, 1e-1), min_size=1, max_size=12),
       st.lists(st.floats(0.01, 5.0), min_size=12, max_size=12),
       st.sampled_from([0.5, 0.75, 1.0]))
def test_state_sum_equals_textbook_equivalent_time_updates(coefficients, durations, z):
    # Textbook virtual-time update (research note §6.1, steps 1-2) applied step by step
    # equals the state sum S = sum(k^(1/z) dt), loss = S^z.
    loss = 0.0
    state = 0.0
    for k, dt in zip(coefficients, durations):
        loss = float(sp.equivalent_time_step(loss, k, dt, z))
        state += k ** (1.0 / z) * dt
    assert float(sp.loss_from_state(state, z)) == pytest.approx(loss, rel=1e-9)


@settings(max_examples=50, deadline=None)
@given(st.floats(1e-4, 1e-1), st.lists(st.floats(0.01, 5.0), min_size=1, max_size=10),
       st.sampled_from([0.5, 0.75, 1.0]))
def test_splitting_a_constant_period_changes_nothing(k, pieces, z):
    # Closed form at constant conditions: Q = k * t^z (definition of the law).
    loss = 0.0
    for dt in pieces:
        loss = float(sp.equivalent_time_step(loss, k, dt, z))
    assert loss == pytest.approx(k * sum(pieces) ** z, rel=1e-9)


@settings(max_examples=30, deadline=None)
@given(st.floats(-20.0, 55.0), st.floats(0.0, 1.0), st.integers(1, 25))
def test_engine_constant_conditions_equal_closed_form(temp_c, soc, years):
    # Naumann et al. 2018 closed form k(T, SOC) sqrt(t) at every month end, exact mode (the
    # set with that law; the default's law in test_aging_large_format.py).
    chem = get_chemistry("lfp")
    p = chem.aging_set("large-format").calendar
    result = age_lanes(chem, np.full((8760, 1), temp_c), np.full((8760, 1), soc), None, 3.55, years,
                       rate_bin_k=None, soc_bin_frac=None, aging_set="large-format")
    month_hours = np.concatenate([[0], np.cumsum(np.tile([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
                                                         years))]) * 24.0
    closed = cal.naumann2018_calendar_loss(temp_c, soc, month_hours * 3600.0, **p)
    np.testing.assert_allclose(result.calendar_loss_frac[:, 0], closed, rtol=1e-9, atol=1e-15)
    # Binned lookup tables (the default) stay within 0.1 % of the exact rates.
    binned = age_lanes(chem, np.full((8760, 1), temp_c), np.full((8760, 1), soc), None, 3.55, years,
                       aging_set="large-format")
    np.testing.assert_allclose(binned.calendar_loss_frac[:, 0], closed, rtol=1e-3, atol=1e-12)


def test_repeat_year_equals_brute_force_accumulation():
    # Algebra of the repeated year against an explicit month-by-month running sum.
    rng = np.random.default_rng(0)
    inc = rng.uniform(0, 1, size=(12, 3))
    state0 = np.array([0.0, 0.5, 2.0])
    years = 7
    brute = np.vstack([state0, state0 + np.cumsum(np.tile(inc, (years, 1)), axis=0)])
    np.testing.assert_allclose(sp.repeat_year(state0, inc, years), brute, rtol=1e-12)
