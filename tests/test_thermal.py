"""Lumped enclosure thermal model: analytic checks and behaviour."""

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from planner.climate import TypicalYear, load_climate
from planner.errors import InputError
from planner.thermal import battery as thermal
from planner.thermal import enclosures
from planner.thermal import lumped as lumped_thermal

N = 8760


def flat_year(temp_c=20.0, ghi=0.0, dni=0.0, dhi=0.0, lat=45.0):
    """A constant-weather year (inputs only; checks use analytic formulas)."""
    def full(v):
        return np.full(N, float(v)) if np.ndim(v) == 0 else np.asarray(v, float)

    return TypicalYear(name="flat", source="test", latitude_deg=lat, longitude_deg=0.0,
                       altitude_m=0.0, utc_offset_h=0.0, temp_air_c=full(temp_c),
                       ghi_w_m2=full(ghi), dni_w_m2=full(dni), dhi_w_m2=full(dhi),
                       wind_speed_m_s=full(2.0))


def test_step_response_is_the_analytic_exponential():
    # First-order lumped system, unit step at t = 0 from T = 0: T(t) = 1 - exp(-t/tau)
    # (Incropera & DeWitt, lumped capacitance, eq. 5.6). Hour means are the integral
    # of that curve over each hour: 1 - tau (e^(-k/tau) - e^(-(k+1)/tau)).
    tau = 5.0
    result = lumped_thermal.simulate_lumped(np.ones(48), tau, initial_c=0.0)
    k = np.arange(48)
    np.testing.assert_allclose(result.temp_end_c, 1 - np.exp(-(k + 1) / tau), rtol=1e-12)
    np.testing.assert_allclose(result.temp_mean_c,
                               1 - tau * (np.exp(-k / tau) - np.exp(-(k + 1) / tau)), rtol=1e-12)


def test_step_response_vectorised_across_sites():
    taus = np.array([0.5, 2.0, 30.0])
    result = lumped_thermal.simulate_lumped(np.ones((24, 3)), taus, initial_c=0.0)
    t = np.arange(1, 25)[:, None]
    np.testing.assert_allclose(result.temp_end_c, 1 - np.exp(-t / taus[None, :]), rtol=1e-12)


def test_steady_state_is_air_plus_gain_over_ua():
    # Energy balance at steady state: UA (T - T_air) = Q  ->  T = T_air + Q / UA.
    year = flat_year(20.0)
    result = thermal.battery_temperature(year, "cabinet-sun", internal_heat_w=30.0)
    ua = enclosures.ENCLOSURE_KINDS["cabinet-sun"].ua_w_k
    np.testing.assert_allclose(result.temp_battery_c, 20.0 + 30.0 / ua, rtol=1e-9)
    assert np.all(result.heater_power_w == 0) and np.all(result.hvac_power_w == 0)


def test_solar_gain_is_the_sol_air_heat_flow():
    # ASHRAE sol-air method: Q = U A alpha I / h_o. For a top-only enclosure the
    # horizontal surface receives GHI (isotropic model, tilt 0), so Q = UA alpha GHI / 17.
    rng = np.random.default_rng(1)
    ghi = np.clip(rng.normal(300, 200, N), 0, 1000)
    year = flat_year(10.0, ghi=ghi, dni=0.0, dhi=ghi)
    overrides = {"area_wall_m2": 0.0, "area_top_m2": 1.0, "ua_w_k": 6.0, "finish": "dark"}
    encl = enclosures.get_enclosure("cabinet-sun", overrides)
    gain = thermal.solar_gain_w(year, encl)
    np.testing.assert_allclose(gain, 6.0 * 0.90 * ghi / 17.0, rtol=1e-9)


def test_heater_holds_setpoint_and_reports_energy():
    # Holding 5 degC against -20 degC air needs UA * 25 K (steady energy balance).
    year = flat_year(-20.0)
    result = thermal.battery_temperature(year, "cabinet-shade", heater_setpoint_c=5.0,
                                         heater_power_w=1000.0)
    ua = enclosures.ENCLOSURE_KINDS["cabinet-shade"].ua_w_k
    np.testing.assert_allclose(result.temp_battery_c, 5.0, atol=1e-9)
    np.testing.assert_allclose(result.heater_power_w, ua * 25.0, rtol=1e-9)


def test_undersized_heater_runs_flat_out():
    # A 50 W heater lifts the steady temperature by 50 / UA only (energy balance).
    year = flat_year(-20.0)
    result = thermal.battery_temperature(year, "cabinet-shade", heater_setpoint_c=5.0)
    ua = enclosures.ENCLOSURE_KINDS["cabinet-shade"].ua_w_k
    np.testing.assert_allclose(result.heater_power_w, thermal.DEFAULT_HEATER_POWER_W)
    np.testing.assert_allclose(result.temp_battery_c, -20.0 + 50.0 / ua, rtol=1e-9)


def test_shelter_cooling_energy():
    # Shelter at 40 degC air, no sun: cooling removes UA (40 - 27) W of heat; the
    # electric power is that divided by the COP (definition of the coefficient of
    # performance).
    year = flat_year(40.0)
    shelter = enclosures.ENCLOSURE_KINDS["shelter"]
    result = thermal.battery_temperature(year, "shelter")
    np.testing.assert_allclose(result.temp_battery_c, shelter.hvac_cool_setpoint_c, atol=1e-9)
    expected = shelter.ua_w_k * (40.0 - shelter.hvac_cool_setpoint_c) / shelter.hvac_cool_cop
    np.testing.assert_allclose(result.hvac_power_w, expected, rtol=1e-9)


def test_shelter_heating_energy():
    year = flat_year(-15.0)
    shelter = enclosures.ENCLOSURE_KINDS["shelter"]
    result = thermal.battery_temperature(year, "shelter", internal_heat_w=100.0)
    np.testing.assert_allclose(result.temp_battery_c, shelter.hvac_heat_setpoint_c, atol=1e-9)
    # Heat balance: heater + internal gains = UA (T_set - T_air); COP 1 (resistance).
    expected = shelter.ua_w_k * (shelter.hvac_heat_setpoint_c + 15.0) - 100.0
    np.testing.assert_allclose(result.hvac_power_w, expected, rtol=1e-9)


def test_vault_follows_the_ground_at_depth():
    # A vault coupled only to the soil settles at the Kusuda-Achenbach temperature:
    # annual mean = surface mean, amplitude damped by exp(-z sqrt(pi/(alpha P))).
    days = (np.arange(N) + 0.5) / 24
    air = 5.0 - 15.0 * np.cos(2 * np.pi * (days - 20.0) / 365.0)
    year = flat_year(air)
    result = thermal.battery_temperature(year, "vault", overrides={"ua_w_k": 0.0, "depth_m": 2.0})
    alpha = enclosures.ENCLOSURE_KINDS["vault"].soil_diffusivity_m2_day
    damping = math.exp(-2.0 * math.sqrt(math.pi / (alpha * 365.0)))
    assert result.temp_battery_c.mean() == pytest.approx(5.0, abs=0.05)
    half_range = (result.temp_battery_c.max() - result.temp_battery_c.min()) / 2
    # The vault's own time constant (hours) barely damps an annual wave further.
    assert half_range == pytest.approx(15.0 * damping, rel=0.01)


def test_sun_warms_a_cabinet_and_shade_helps():
    year = load_climate("hot-desert")
    sun = thermal.battery_temperature(year, "cabinet-sun")
    shade = thermal.battery_temperature(year, "cabinet-shade")
    dark = thermal.battery_temperature(year, "cabinet-sun", overrides={"finish": "dark"})
    assert sun.temp_battery_c.mean() > year.temp_air_c.mean()
    assert shade.temp_battery_c.max() < sun.temp_battery_c.max() < dark.temp_battery_c.max()
    # Sun-exposed cabinets run some 5-15 K above air at peak (common practice).
    peak_rise = np.max(sun.temp_battery_c - year.temp_air_c)
    assert 3.0 < peak_rise < 25.0


def test_fleet_equals_single_sites():
    years = [load_climate("alpine"), load_climate("tmy3-greensboro-nc"), load_climate("alpine")]
    kinds = ["vault", "cabinet-sun", "shelter"]
    fleet = thermal.battery_temperature_fleet(years, kinds, internal_heat_w=np.array([0, 10, 50]),
                                              heater_setpoint_c=np.array([np.nan, 0.0, np.nan]))
    for j, (year, kind) in enumerate(zip(years, kinds)):
        single = thermal.battery_temperature(
            year, kind, internal_heat_w=[0, 10, 50][j],
            heater_setpoint_c=None if j != 1 else 0.0)
        np.testing.assert_allclose(fleet.temp_battery_c[:, j], single.temp_battery_c, atol=1e-8)
        np.testing.assert_allclose(fleet.heater_power_w[:, j], single.heater_power_w, atol=1e-6)


def test_periodic_start():
    # The year starts in its periodic state: restarting from the year-end state
    # reproduces the same year (to well below 1 mK).
    year = load_climate("mediterranean")
    encl = enclosures.get_enclosure("vault")
    eq = thermal.equilibrium_temp_c(year, encl)
    first = lumped_thermal.simulate_lumped(eq, encl.tau_h)
    again = lumped_thermal.simulate_lumped(eq, encl.tau_h, initial_c=first.temp_end_c[-1])
    np.testing.assert_allclose(again.temp_mean_c, first.temp_mean_c, atol=1e-3)


@settings(max_examples=40, deadline=None)
@given(drive=hnp.arrays(np.float64, st.integers(48, 400),
                        elements=st.floats(-40, 60, allow_nan=False)),
       tau=st.floats(0.2, 4.0))
def test_mean_of_a_periodic_linear_response_equals_mean_drive(drive, tau):
    # For a stable linear first-order system in periodic steady state, the time
    # average of dT/dt is zero, so mean(T) = mean(T_eq) (integrate the ODE over a period).
    result = lumped_thermal.simulate_lumped(drive, tau)
    assert result.temp_mean_c.mean() == pytest.approx(drive.mean(), abs=1e-3 * (1 + np.ptp(drive)))
    # And the response never leaves the range of its drive (maximum principle).
    assert result.temp_mean_c.max() <= drive.max() + 1e-9
    assert result.temp_mean_c.min() >= drive.min() - 1e-9


def test_enclosure_kinds_and_errors():
    assert list(enclosures.ENCLOSURE_KINDS) == ["cabinet-sun", "cabinet-shade", "vault", "shelter"]
    for kind in enclosures.ENCLOSURE_KINDS.values():
        assert dict(kind.sources), kind.kind   # every kind documents its sources
        assert kind.tau_h > 0
    with pytest.raises(InputError, match="did you mean 'cabinet-sun'"):
        enclosures.get_enclosure("cabinet_sun")
    with pytest.raises(InputError, match="did you mean 'thermal_mass_j_k'"):
        enclosures.get_enclosure("vault", {"thermal_mass_jk": 1e5})
    with pytest.raises(InputError, match="expected a number from 0 to 1"):
        enclosures.get_enclosure("vault", {"absorptance_frac": 2})
    with pytest.raises(InputError, match="internal_heat_w"):
        thermal.battery_temperature_fleet([flat_year()], ["vault"], internal_heat_w=np.array([-5.0]))
    with pytest.raises(InputError, match="heater_setpoint_c"):
        thermal.battery_temperature_fleet([flat_year()], ["vault"],
                                          heater_setpoint_c=np.array([90.0]))
    with pytest.raises(InputError, match="expected 1 or 8760"):
        thermal.battery_temperature(flat_year(), internal_heat_w=np.zeros(10))


def test_compiled_hour_loops_give_the_numpy_loops_bits(monkeypatch):
    # The exact lumped step (Incropera & DeWitt, lumped capacitance, eq. 5.6) run by the
    # compiled loops of planner.thermal._kernels must be the numpy loops' numbers bit for
    # bit: plans must not change with numba installed or not.
    from planner.thermal import _kernels as tk
    if tk.LINEAR is None:
        pytest.skip("numba not installed")
    rng = np.random.default_rng(3)
    temp_eq = 10.0 + 15.0 * rng.standard_normal((24 * 40, 5))
    kwargs = dict(ua_w_k=np.array([1.5, 2.0, 0.7, 3.0, 1.1]),
                  heater_setpoint_c=np.array([5.0, np.nan, 8.0, 5.0, np.nan]),
                  heater_max_w=np.array([20.0, 0.0, 5.0, 40.0, 0.0]),
                  cool_setpoint_c=np.array([np.nan, np.nan, 30.0, 28.0, np.nan]),
                  cool_max_w=50.0)
    tau = np.array([8.0, 20.0, 3.0, 12.0, 30.0])
    compiled = [lumped_thermal.simulate_lumped(temp_eq, tau, **kwargs),
                lumped_thermal.simulate_lumped(temp_eq, tau, ua_w_k=2.0)]
    monkeypatch.setattr(tk, "LINEAR", None)
    monkeypatch.setattr(tk, "THERMOSTAT", None)
    numpy_loops = [lumped_thermal.simulate_lumped(temp_eq, tau, **kwargs),
                   lumped_thermal.simulate_lumped(temp_eq, tau, ua_w_k=2.0)]
    for got, want in zip(compiled, numpy_loops):
        for a, b in zip(dataclasses.astuple(got), dataclasses.astuple(want)):
            np.testing.assert_array_equal(a, b)
    assert np.any(compiled[0].heater_w > 0) and np.any(compiled[0].cool_w > 0)


def test_enclosure_irradiance_of_many_sites_equals_the_per_surface_transposition():
    # Closed form for four walls at right angles (sum of max(cos AOI, 0) over the four
    # azimuths = |cos dA| + |sin dA| for vertical walls; Liu & Jordan isotropic sky) against
    # pvlib's get_total_irradiance surface by surface (surface_irradiance_w_m2).
    import dataclasses

    from planner.climate import load_climate
    from planner.climate.relocation import Place, relocate_years
    from planner.thermal.battery import enclosure_flux_many_w, surface_irradiance_w_m2
    from planner.thermal.enclosures import get_enclosure

    base = load_climate("tmy3-greensboro-nc")
    years = relocate_years([base, base], [Place(-30.0, 20.0, 100.0, 1.0), Place(60.0, 10.0, 0.0, 1.0)])
    kinds = [dataclasses.replace(get_enclosure("cabinet-sun"), azimuth_deg=35.0),
             get_enclosure("cabinet-shade")]
    many = enclosure_flux_many_w(years, kinds)
    for j, (year, e) in enumerate(zip(years, kinds)):
        kw = dict(beam_shading_frac=e.beam_shading_frac, sky_view_frac=e.sky_view_frac)
        one = e.area_top_m2 * surface_irradiance_w_m2(year, 0.0, 180.0, **kw)
        for turn in (0.0, 90.0, 180.0, 270.0):
            one = one + e.area_wall_m2 * surface_irradiance_w_m2(
                year, 90.0, (e.azimuth_deg + turn) % 360.0, **kw)
        np.testing.assert_allclose(many[:, j], one, rtol=1e-9, atol=1e-9)
