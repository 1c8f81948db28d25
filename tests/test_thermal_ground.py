"""Kusuda-Achenbach ground temperature."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.thermal import ground

ALPHA = 0.0432   # m2/day = 5e-7 m2/s, a moist soil (from memory)
P = 365.0


def test_damping_and_phase_lag_at_one_metre():
    # Kusuda & Achenbach 1965: amplitude ratio exp(-z sqrt(pi/(alpha P))) and lag
    # (z/2) sqrt(P/(pi alpha)) days. Computed by hand for z = 1 m, alpha = 0.0432 m2/day:
    # sqrt(pi / 15.768) = 0.44636 -> ratio 0.6400; lag = 0.5 * sqrt(365 / 0.135717) = 25.93 d.
    assert ground.amplitude_ratio(1.0, ALPHA, P) == pytest.approx(math.exp(-0.446363), rel=1e-5)
    assert ground.phase_lag_days(1.0, ALPHA, P) == pytest.approx(25.930, abs=0.005)


def test_damping_depth_of_moist_soil():
    # d = sqrt(2 alpha / omega) for the annual wave; for 5e-7 m2/s this is 2.24 m
    # (heat-conduction texts give ~2-3 m annual damping depth in moist soil: common practice).
    alpha_m2_s = 5e-7
    omega = 2 * math.pi / (365 * 86400)
    assert ground.damping_depth_m(ALPHA, P) == pytest.approx(math.sqrt(2 * alpha_m2_s / omega),
                                                             rel=1e-3)


def test_profile_extremes_match_damping_and_lag():
    days = np.arange(0, 365, 0.01)
    for z in (0.5, 1.0, 2.0, 4.0):
        t = ground.kusuda_achenbach_temp_c(z, days, mean_surface_temp_c=8.0, amplitude_k=12.0,
                                           day_of_minimum=30.0, diffusivity_m2_day=ALPHA)
        half_range = (t.max() - t.min()) / 2
        assert half_range == pytest.approx(12.0 * math.exp(-z * math.sqrt(math.pi / (ALPHA * P))),
                                           rel=1e-6)
        day_min = days[np.argmin(t)]
        lag = z / 2 * math.sqrt(P / (math.pi * ALPHA))
        assert (day_min - 30.0 - lag + P / 2) % P - P / 2 == pytest.approx(0.0, abs=0.01)
        assert t.mean() == pytest.approx(8.0, abs=1e-3)


@settings(max_examples=30, deadline=None)
@given(z=st.floats(0.2, 5.0), t=st.floats(0, 365), alpha=st.floats(0.02, 0.1))
def test_solves_the_heat_equation(z, t, alpha):
    # The profile satisfies dT/dt = alpha d2T/dz2 (Fourier's heat equation), checked
    # with central finite differences.
    kw = dict(mean_surface_temp_c=5.0, amplitude_k=10.0, day_of_minimum=15.0,
              diffusivity_m2_day=alpha)
    h_t, h_z = 1e-2, 1e-2
    def f(zz, tt):
        return ground.kusuda_achenbach_temp_c(zz, tt, **kw)

    dt = (f(z, t + h_t) - f(z, t - h_t)) / (2 * h_t)
    d2z = (f(z + h_z, t) - 2 * f(z, t) + f(z - h_z, t)) / h_z ** 2
    assert dt == pytest.approx(alpha * d2z, abs=1e-3 + 1e-3 * abs(dt))


def test_surface_boundary_condition():
    days = np.linspace(0, 365, 50)
    t0 = ground.kusuda_achenbach_temp_c(0.0, days, mean_surface_temp_c=3.0, amplitude_k=9.0,
                                        day_of_minimum=25.0)
    np.testing.assert_allclose(t0, 3.0 - 9.0 * np.cos(2 * np.pi * (days - 25.0) / 365.0))


def test_annual_harmonic_recovers_a_sinusoid():
    days = (np.arange(8760) + 0.5) / 24
    temp = 12.0 - 9.0 * np.cos(2 * np.pi * (days - 20.0) / 365.0)
    temp = temp + 4.0 * np.sin(2 * np.pi * days)          # a diurnal cycle does not matter
    mean, amp, day_min = ground.annual_harmonic(temp)
    assert mean == pytest.approx(12.0, abs=1e-9)
    assert amp == pytest.approx(9.0, abs=1e-3)
    assert day_min == pytest.approx(20.0, abs=0.05)
    both = ground.annual_harmonic(np.c_[temp, temp + 1])
    np.testing.assert_allclose(both[0], [12.0, 13.0])
