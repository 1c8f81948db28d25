"""A station's weather under a site's own sky: clearness kept, sun and clock the site's."""

import numpy as np
import pandas as pd
import pvlib
import pytest

from planner.climate import load_climate
from planner.climate.relocation import (
    Place,
    hourly_clearness,
    relocate_years,
    solar_time_lead_h,
    utc_offset_from_longitude,
)
from planner.climate.solar import extra_radiation_many, sun_paths
from planner.energy.pv import pv_dc_power_many_w, pv_dc_power_w

STATION = "tmy3-greensboro-nc"   # pvlib's bundled NREL TMY3 (36.1 N, -79.95 E, 273 m, UTC-5)
TILT, AZIMUTH = 45.0, 180.0
SAPM = pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS["sapm"]["open_rack_glass_polymer"]


def _december(values):
    return float(np.sum(values[-31 * 24:]))


def _direct_pvlib_december(year, latitude_deg):
    """December DC energy of 1 W at 45 deg tilt, computed with pvlib alone: the station's
    hourly global and beam clearness over pvlib's own Ineichen clear sky, moved to
    ``latitude_deg`` (hours with the station's clear sky under 50 W/m2 left dark: in
    December the site 20 degrees poleward has no sun in them)."""
    times = year.times()
    mid = times + pd.Timedelta(minutes=30)
    station = pvlib.location.Location(year.latitude_deg, year.longitude_deg, altitude=year.altitude_m)
    site = pvlib.location.Location(latitude_deg, year.longitude_deg, altitude=year.altitude_m)
    cs_station = station.get_clearsky(mid, model="ineichen")
    sun = site.get_solarposition(mid)
    cs_site = site.get_clearsky(mid, model="ineichen", solar_position=sun)
    lit = cs_station["ghi"].to_numpy() >= 50.0
    with np.errstate(divide="ignore", invalid="ignore"):
        k = np.where(lit, np.clip(year.ghi_w_m2 / cs_station["ghi"].to_numpy(), 0, 1.2), 0.0)
        kb = np.where(lit, np.clip(year.dni_w_m2 / cs_station["dni"].to_numpy(), 0, 1.2), 0.0)
    ghi = k * cs_site["ghi"].to_numpy()
    cos_z = np.cos(np.radians(sun["zenith"].to_numpy()))
    dni = np.clip(kb * cs_site["dni"].to_numpy(), 0, np.where(cos_z > 0, 0.9 * ghi / cos_z, 0))
    dhi = ghi - dni * np.maximum(cos_z, 0)
    poa = pvlib.irradiance.get_total_irradiance(
        TILT, AZIMUTH, sun["apparent_zenith"].to_numpy(), sun["azimuth"].to_numpy(),
        dni, ghi, dhi, dni_extra=pvlib.irradiance.get_extra_radiation(mid).to_numpy(),
        albedo=0.2, model="haydavies")["poa_global"]
    poa = np.maximum(np.nan_to_num(np.asarray(poa, float)), 0)
    cell = pvlib.temperature.sapm_cell(poa, year.temp_air_c, year.wind_speed_m_s, **SAPM)
    return _december(np.maximum(pvlib.pvsystem.pvwatts_dc(poa, cell, 1.0, -0.004), 0))


def test_twenty_degrees_poleward_lowers_december_pv_as_pvlib_gives():
    # Issue check: the same hourly clearness 20 degrees of latitude poleward lowers the
    # December yield as pvlib's own clear sky and transposition give (direct computation).
    year = load_climate(STATION)
    moved = relocate_years([year], [Place(year.latitude_deg + 20.0, year.longitude_deg,
                                          year.altitude_m, year.utc_offset_h)])[0]
    here = pv_dc_power_w(year, array_wp=1.0, tilt_deg=TILT, azimuth_deg=AZIMUTH,
                         system_loss_frac=0.0, controller_efficiency_frac=1.0)
    there = pv_dc_power_many_w(
        moved.ghi_w_m2[:, None], moved.dni_w_m2[:, None], moved.dhi_w_m2[:, None],
        moved.temp_air_c[:, None], moved.wind_speed_m_s[:, None],
        solar_apparent_zenith_deg=moved.sun.apparent_zenith_deg[:, None],
        solar_azimuth_deg=moved.sun.azimuth_deg[:, None],
        dni_extra_w_m2=extra_radiation_many([moved.utc_offset_h]), month=year.times().month,
        array_wp=[1.0], tilt_deg=[TILT], azimuth_deg=[AZIMUTH], system_loss_frac=0.0,
        controller_efficiency_frac=1.0)[:, 0]
    ours = _december(there) / _december(here)
    direct = _direct_pvlib_december(year, year.latitude_deg + 20.0) / _december(
        pv_dc_power_w(year, array_wp=1.0, tilt_deg=TILT, azimuth_deg=AZIMUTH,
                      system_loss_frac=0.0, controller_efficiency_frac=1.0))
    assert ours < 0.8                       # lower, as it must be in December
    assert ours == pytest.approx(direct, rel=0.03)


def test_no_site_gets_sun_at_night_in_either_hemisphere():
    year = load_climate(STATION)
    places = [Place(-35.0, 150.0, 10.0, 10.0), Place(65.0, 25.0, 100.0, 2.0),
              Place(0.5, -60.0, 50.0, float(utc_offset_from_longitude(-60.0)))]
    for year_there, place in zip(relocate_years([year] * 3, places), places):
        sun = sun_paths(place.latitude_deg, place.longitude_deg, place.altitude_m, place.utc_offset_h)
        night = sun.apparent_zenith_deg[:, 0] > 90.0
        assert year_there.ghi_w_m2[night].max() == 0.0
        assert year_there.dni_w_m2[night].max() == 0.0
        # the year is labelled in the site's own clock, its sun attached
        assert year_there.utc_offset_h == place.utc_offset_h
        np.testing.assert_array_equal(year_there.sun.apparent_zenith_deg, sun.apparent_zenith_deg[:, 0])
    # Southern summer is brighter than southern winter at 35 S (seasons follow the site's sun).
    south = relocate_years([year], places[:1])[0]
    assert south.ghi_w_m2[:31 * 24].sum() > 2 * south.ghi_w_m2[181 * 24:212 * 24].sum()


def test_clearness_is_kept_where_the_station_had_sun():
    year = load_climate(STATION)
    k, k_beam = hourly_clearness(year)
    moved = relocate_years([year], [Place(40.0, year.longitude_deg, 273.0, -5.0)])[0]
    from planner.climate.solar import clear_sky_many
    sun = sun_paths(40.0, year.longitude_deg, 273.0, -5.0)
    clear, clear_dni = (a[:, 0] for a in clear_sky_many(sun, 40.0, year.longitude_deg, 273.0, -5.0))
    lit = clear > 100
    np.testing.assert_allclose(moved.ghi_w_m2[lit], np.minimum(k[lit] * clear[lit], 1400.0),
                               rtol=1e-12)
    # The beam clearness too, where the diffuse floor (DHI >= 0.1 GHI) does not bind.
    cos_z = np.cos(np.radians(sun.zenith_deg[:, 0]))
    free = lit & (k_beam * clear_dni * cos_z < 0.85 * moved.ghi_w_m2)
    np.testing.assert_allclose(moved.dni_w_m2[free], k_beam[free] * clear_dni[free], rtol=1e-12)
    # Closure: GHI = DNI cos(z) + DHI (definition), DHI >= 0.1 GHI.
    np.testing.assert_allclose(moved.dni_w_m2 * np.maximum(cos_z, 0) + moved.dhi_w_m2,
                               moved.ghi_w_m2, atol=1e-9)
    assert np.all(moved.dhi_w_m2 >= 0.1 * moved.ghi_w_m2 - 1e-9)


def test_the_climate_own_place_keeps_the_measured_year():
    year = load_climate(STATION)
    same = relocate_years([year], [Place(year.latitude_deg, year.longitude_deg, 500.0,
                                         year.utc_offset_h)])[0]
    assert same is year


def test_solar_time_lead_and_nautical_zone():
    # Solar time = clock + (longitude - 15 x offset) / 15 h (+ equation of time): 15 deg east
    # on the same clock is one hour ahead; a nautical zone is round(longitude / 15).
    assert solar_time_lead_h(15.0, 0.0, 0.0, 0.0) == 1
    assert solar_time_lead_h(-80.0, -5.0, -80.0, -5.0) == 0
    assert solar_time_lead_h(-75.0, -6.0, -75.0, -5.0) == 1
    assert utc_offset_from_longitude(-79.95) == -5.0 and utc_offset_from_longitude(7.4) == 0.0
