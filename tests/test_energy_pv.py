"""Tests of planner.energy.pv.

Check values: the solar geometry of Duffie & Beckman (2013, Solar Engineering of Thermal
Processes, 4th ed.: declination after Cooper 1969 eq. 1.6.1a, equation of time after
Spencer 1971 eq. 1.5.3, zenith eq. 1.6.5, angle of incidence eq. 1.6.2); the Hay-Davies
(1980) sky-diffuse formula; the SAPM cell temperature (King et al. 2004, SAND2004-3535,
eq. 11-12, open-rack glass/polymer a = -3.56, b = -0.075, dT = 3 K, Table 1, from memory
and equal to pvlib's table); PVWatts DC (Dobos 2014, eq. 3); and a figure measured with
pvlib alone in the research notes (ecosystem.md section 2: 100 W at Greensboro TMY3,
Hay-Davies, SAPM open rack, gamma -0.004 -> 167.0 kWh/yr DC before losses).
"""

import datetime as dt
import os
import types

import numpy as np
import pandas as pd
import pvlib
import pytest

from planner.energy import pv
from planner.errors import InputError

MST = dt.timezone(dt.timedelta(hours=-7))


def _one_hour(**kw):
    times = pd.DatetimeIndex([pd.Timestamp("2023-06-21 11:00", tz=MST)])
    args = dict(latitude_deg=40.0, longitude_deg=-105.0, altitude_m=1600.0, array_wp=100.0,
                tilt_deg=30.0, azimuth_deg=180.0, system_loss_frac=0.14,
                controller_efficiency_frac=0.95, albedo=0.2)
    args.update(kw)
    return times, args


def test_sun_is_placed_at_mid_hour():
    # hour 11:00-12:00 MST, 21 June, 40 N 105 W (on the -105 standard meridian):
    # Duffie & Beckman: n = 172, B = (n-1) 360/365, E (Spencer) in minutes, solar time =
    # 11:30 + E, hour angle w = 15 (t_solar - 12), cos z = sin(phi) sin(d) + cos cos cos w
    n = 172
    b = np.radians((n - 1) * 360 / 365)
    eot_min = 229.18 * (0.000075 + 0.001868 * np.cos(b) - 0.032077 * np.sin(b)
                        - 0.014615 * np.cos(2 * b) - 0.04089 * np.sin(2 * b))
    decl = np.radians(23.45 * np.sin(np.radians(360 * (284 + n) / 365)))
    omega = np.radians(15 * (11.5 + eot_min / 60 - 12))
    phi = np.radians(40.0)
    zen_hand = np.degrees(np.arccos(np.sin(phi) * np.sin(decl)
                                    + np.cos(phi) * np.cos(decl) * np.cos(omega)))
    times, _ = _one_hour()
    sun = pvlib.solarposition.get_solarposition(times + pd.Timedelta(minutes=30), 40.0,
                                                -105.0, altitude=1600.0)
    assert sun["zenith"].iloc[0] == pytest.approx(zen_hand, abs=0.3)
    # and placing it at the hour start instead would be ~6 degrees off: the check bites
    sun0 = pvlib.solarposition.get_solarposition(times, 40.0, -105.0, altitude=1600.0)
    assert abs(sun0["zenith"].iloc[0] - zen_hand) > 3.0


def test_clear_noon_hour_poa_and_dc_by_hand():
    times, args = _one_hour()
    ghi, dni, dhi, t_air, wind = 950.0, 900.0, 100.0, 25.0, 2.0
    out = pv.pv_dc_power_w(times, [ghi], [dni], [dhi], [t_air], [wind], **args)

    mid = times + pd.Timedelta(minutes=30)
    sun = pvlib.solarposition.get_solarposition(mid, 40.0, -105.0, altitude=1600.0)
    z = np.radians(sun["apparent_zenith"].iloc[0])
    az = np.radians(sun["azimuth"].iloc[0])
    beta, gamma_s = np.radians(30.0), np.radians(180.0)
    # angle of incidence, Duffie & Beckman eq. 1.6.2 in zenith/azimuth form
    cos_aoi = np.cos(z) * np.cos(beta) + np.sin(z) * np.sin(beta) * np.cos(az - gamma_s)
    i0 = pvlib.irradiance.get_extra_radiation(mid).iloc[0]
    a_index = dni / i0                                   # Hay-Davies anisotropy index
    rb = cos_aoi / np.cos(z)
    sky = dhi * (a_index * rb + (1 - a_index) * (1 + np.cos(beta)) / 2)
    ground = ghi * 0.2 * (1 - np.cos(beta)) / 2
    poa = dni * cos_aoi + sky + ground
    # SAPM cell temperature, King et al. 2004 eq. 11-12 (open rack glass/polymer)
    t_mod = poa * np.exp(-3.56 - 0.075 * wind) + t_air
    t_cell = t_mod + poa / 1000 * 3.0
    # PVWatts DC, Dobos 2014 eq. 3, then losses and controller efficiency
    dc = 100.0 * poa / 1000 * (1 - 0.004 * (t_cell - 25))
    assert out[0] == pytest.approx(dc * 0.86 * 0.95, rel=1e-9)
    assert 900 < poa < 1150   # a clear near-noon June sky on a 30 deg tilt (common practice)


def test_pvlib_bundled_tmy3_annual_energy_matches_notes():
    # ecosystem.md section 2 measured with pvlib alone: 167.0 kWh/yr DC (no losses)
    path = os.path.join(os.path.dirname(pvlib.__file__), "data", "723170TYA.CSV")
    wx, meta = pvlib.iotools.read_tmy3(path, coerce_year=1990)
    start = wx.index - pd.Timedelta(hours=1)        # TMY3 labels hour ends
    out = pv.pv_dc_power_w(start, wx["ghi"], wx["dni"], wx["dhi"], wx["temp_air"],
                           wx["wind_speed"], latitude_deg=meta["latitude"],
                           longitude_deg=meta["longitude"], altitude_m=meta["altitude"],
                           array_wp=100, tilt_deg=36.1, azimuth_deg=180,
                           system_loss_frac=0.0, controller_efficiency_frac=1.0)
    assert out.sum() / 1000 == pytest.approx(167.0, rel=0.005)
    assert np.all(out >= 0) and np.all(np.isfinite(out))


def _year(n=48):
    times = pd.date_range("2023-01-01", periods=n, freq="h", tz=MST)
    hod = np.asarray(times.hour)
    sun = np.clip(np.sin((hod - 6) / 12 * np.pi), 0, None)
    return types.SimpleNamespace(
        latitude_deg=40.0, longitude_deg=-105.0, altitude_m=1600.0, utc_offset_h=-7.0,
        temp_air_c=np.full(n, 0.0), ghi_w_m2=500 * sun, dni_w_m2=600 * sun,
        dhi_w_m2=100 * sun, wind_speed_m_s=np.full(n, 3.0), times=lambda: times)


def test_year_object_equals_arrays_and_night_is_zero():
    y = _year()
    by_obj = pv.pv_dc_power_w(y, array_wp=50, tilt_deg=40, azimuth_deg=180)
    by_arr = pv.pv_dc_power_w(y.times().tz_localize(None), y.ghi_w_m2, y.dni_w_m2,
                              y.dhi_w_m2, y.temp_air_c, y.wind_speed_m_s, latitude_deg=40.0,
                              longitude_deg=-105.0, altitude_m=1600.0, utc_offset_h=-7,
                              array_wp=50, tilt_deg=40, azimuth_deg=180)
    np.testing.assert_allclose(by_obj, by_arr)
    assert np.all(by_obj[y.ghi_w_m2 == 0] == 0)           # no light, no power
    assert by_obj.max() > 0
    # snow months with the array buried give nothing (January here)
    snowed = pv.pv_dc_power_w(y, array_wp=50, tilt_deg=40, azimuth_deg=180,
                              snow_months=(1,))
    assert np.all(snowed == 0)
    assert np.all(pv.pv_dc_power_w(y, array_wp=0, tilt_deg=40, azimuth_deg=180) == 0)


@pytest.mark.parametrize("kw, key", [
    (dict(tilt_deg=-1), "tilt_deg"),
    (dict(tilt_deg=91), "tilt_deg"),
    (dict(azimuth_deg=-0.5), "azimuth_deg"),
    (dict(azimuth_deg=361), "azimuth_deg"),
    (dict(array_wp=-5), "array_wp"),
    (dict(system_loss_frac=1.5), "system_loss_frac"),
    (dict(snow_months=(13,)), "snow_months"),
    (dict(mounting="on the roof"), "mounting"),
])
def test_bad_pv_input(kw, key):
    args = dict(array_wp=50, tilt_deg=40, azimuth_deg=180)
    args.update(kw)
    with pytest.raises(InputError) as err:
        pv.pv_dc_power_w(_year(), **args)
    assert key in str(err.value) and "\n" not in str(err.value)


def test_array_length_and_time_zone_errors():
    y = _year()
    with pytest.raises(InputError, match="ghi_w_m2"):
        pv.pv_dc_power_w(y.times(), y.ghi_w_m2[:10], y.dni_w_m2, y.dhi_w_m2, y.temp_air_c,
                         y.wind_speed_m_s, latitude_deg=40, longitude_deg=-105,
                         array_wp=50, tilt_deg=40, azimuth_deg=180)
    with pytest.raises(InputError, match="utc_offset_h"):
        pv.pv_dc_power_w(y.times().tz_localize(None), y.ghi_w_m2, y.dni_w_m2, y.dhi_w_m2,
                         y.temp_air_c, y.wind_speed_m_s, latitude_deg=40,
                         longitude_deg=-105, array_wp=50, tilt_deg=40, azimuth_deg=180)


def test_many_arrays_at_once_equal_one_at_a_time():
    # pv_dc_power_many_w runs the same chain on (hours, n) arrays; each column must equal
    # pv_dc_power_w for that array alone (same sun, weather and orientation).
    from planner.climate import load_climate
    from planner.climate.relocation import Place, relocate_years
    from planner.climate.solar import extra_radiation_many
    from planner.energy.pv import pv_dc_power_many_w, pv_dc_power_w

    base = load_climate("tmy3-greensboro-nc")
    places = [Place(-33.0, 151.0, 40.0, 10.0), Place(62.0, 25.0, 100.0, 2.0)]
    years = relocate_years([base, base], places)
    tilts, azimuths, snow = [30.0, 60.0], [0.0, 170.0], [(), (12, 1, 2)]
    stack = lambda name: np.column_stack([getattr(y, name) for y in years])  # noqa: E731
    many = pv_dc_power_many_w(
        stack("ghi_w_m2"), stack("dni_w_m2"), stack("dhi_w_m2"), stack("temp_air_c"),
        stack("wind_speed_m_s"),
        solar_apparent_zenith_deg=np.column_stack([y.sun.apparent_zenith_deg for y in years]),
        solar_azimuth_deg=np.column_stack([y.sun.azimuth_deg for y in years]),
        dni_extra_w_m2=extra_radiation_many([p.utc_offset_h for p in places]),
        month=years[0].times().month, array_wp=[50.0, 120.0], tilt_deg=tilts,
        azimuth_deg=azimuths, snow_months=snow, snow_loss_frac=0.5)
    for j, year in enumerate(years):
        one = pv_dc_power_w(year, array_wp=[50.0, 120.0][j], tilt_deg=tilts[j],
                            azimuth_deg=azimuths[j], snow_months=snow[j], snow_loss_frac=0.5,
                            solar_apparent_zenith_deg=year.sun.apparent_zenith_deg,
                            solar_azimuth_deg=year.sun.azimuth_deg)
        np.testing.assert_allclose(many[:, j], one, rtol=1e-12, atol=1e-12)
