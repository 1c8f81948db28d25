"""Climate archetypes generated from monthly normals."""

import math

import numpy as np
import pandas as pd
import pytest

from planner.climate import archetypes, load_climate
from planner.climate.solar import clear_sky_ghi, solar_geometry
from planner.errors import InputError

NAMES = archetypes.names()
KINDS = {"hot-desert", "tropical-humid", "mediterranean", "temperate-maritime",
         "humid-continental", "alpine", "subarctic-continental", "polar-coast"}


def test_the_eight_kinds_of_place_are_bundled():
    assert KINDS <= set(NAMES)


@pytest.mark.parametrize("name", sorted(KINDS))
def test_monthly_means_of_daily_extremes_reproduce_the_normals(name):
    # The generated monthly means of daily max and min reproduce the
    # input normals (the archetype file's values) within 0.3 K.
    definition = archetypes._definitions()[name]
    year = load_climate(name)
    days = pd.Series(year.temp_air_c, index=year.times().tz_localize(None))
    daily = days.resample("D").agg(["max", "min"])          # pandas, independent of the code
    monthly = daily.groupby(daily.index.month).mean()
    np.testing.assert_allclose(monthly["max"].to_numpy(), definition["tmax_c"], atol=0.3)
    np.testing.assert_allclose(monthly["min"].to_numpy(), definition["tmin_c"], atol=0.3)


def test_generation_is_deterministic():
    definition = archetypes._definitions()["alpine"]
    kwargs = dict(name="x", source="x", latitude_deg=46.5, longitude_deg=9.8, altitude_m=2000.0,
                  utc_offset_h=1.0, tmax_c=definition["tmax_c"], tmin_c=definition["tmin_c"],
                  clearness_frac=definition["clearness_frac"], seed=7)
    a = archetypes.generate_year(**kwargs)
    b = archetypes.generate_year(**kwargs)
    np.testing.assert_array_equal(a.temp_air_c, b.temp_air_c)
    np.testing.assert_array_equal(a.ghi_w_m2, b.ghi_w_m2)
    c = archetypes.generate_year(**{**kwargs, "seed": 8})
    assert not np.array_equal(a.temp_air_c, c.temp_air_c)


def test_mean_preserving_daily_is_smooth_and_exact():
    monthly = np.array([-10, -8, -2, 5, 11, 16, 18, 17, 12, 6, -1, -7], float)
    daily = archetypes.mean_preserving_daily(monthly)
    means = pd.Series(daily, index=pd.date_range("2023-01-01", periods=365)).groupby(
        lambda t: t.month).mean().to_numpy()
    np.testing.assert_allclose(means, monthly, atol=1e-4)
    # No step at month boundaries: day-to-day change stays below the largest
    # month-to-month change divided by the shortest month (28 days), times 2.
    assert np.max(np.abs(np.diff(np.r_[daily, daily[0]]))) < 2 * 7 / 28


def test_day_to_day_variability_present():
    year = load_climate("humid-continental")
    daily_mean = year.temp_air_c.reshape(365, 24).mean(axis=1)
    # Day-to-day changes of daily mean temperature in a continental winter are several
    # kelvin (common practice); a smooth curve alone would change < 0.3 K per day.
    assert np.std(np.diff(daily_mean[:59])) > 1.0


def test_parton_logan_shape():
    # Parton & Logan 1981: maximum at solar noon + a (a = 1.86 h) for the day curve
    # T = Tmin + (Tmax - Tmin) sin(pi m / (Y + 2a)), m measured from sunrise + c; the
    # minimum at sunrise + c. Equinox-like day length 12 h, one constant day repeated.
    ones = np.ones(365)
    hourly = archetypes.parton_logan_hourly(20 * ones, 10 * ones, 12 * ones, 0 * ones)
    day = hourly[24 * 100:24 * 101]
    peak_mid_hour = np.argmax(day) + 0.5
    a, c = 1.86, -0.17
    assert abs(peak_mid_hour - (12 + a + c)) <= 0.5
    assert day.max() <= 20 + 1e-9 and day.min() >= 10 - 1e-9
    # At sunrise (06:00) + c the curve passes through Tmin: the 05:30 and 06:30 hours
    # bracket it closely (within 0.6 K for a 10 K range).
    assert min(day[5], day[6]) - 10 < 0.6


def test_day_length_equinox_and_solstice():
    # Day length is 12 h everywhere at the equinox and 24 h north of the Arctic circle
    # at the June solstice (astronomy: sunset hour angle, Cooper 1969 declination).
    assert archetypes.day_length_h(45.0, np.array([81]))[0] == pytest.approx(12.0, abs=0.1)
    assert archetypes.day_length_h(70.0, np.array([172]))[0] == pytest.approx(24.0)
    # 45 N at the June solstice: 2 arccos(-tan 45 tan 23.45) / 15 = 15.43 h (computed).
    expected = 2 * math.degrees(math.acos(-math.tan(math.radians(45)) *
                                          math.tan(math.radians(23.45)))) / 15
    assert archetypes.day_length_h(45.0, np.array([172]))[0] == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize("name", ["hot-desert", "temperate-maritime", "polar-coast"])
def test_irradiance_follows_clearness_and_closes(name):
    definition = archetypes._definitions()[name]
    year = load_climate(name)
    sky = clear_sky_ghi(year.latitude_deg, year.longitude_deg, year.altitude_m, year.utc_offset_h)
    month = year.times().month.to_numpy()
    ratio = np.array([year.ghi_w_m2[month == m].sum() / max(sky["ghi"].to_numpy()[month == m].sum(), 1e-9)
                      for m in range(1, 13)])
    lit = np.array([sky["ghi"].to_numpy()[month == m].sum() > 1000 for m in range(1, 13)])
    # Monthly GHI / clear-sky GHI equals the file's clearness (definition of the input),
    # within 0.06 for the daily variability and its clipping at clear sky.
    np.testing.assert_allclose(ratio[lit], definition["clearness_frac"][lit], atol=0.06)
    # GHI = DNI cos(zenith) + DHI (definition; Erbs et al. 1982 split keeps it).
    zen = solar_geometry(year.latitude_deg, year.longitude_deg, year.altitude_m,
                         year.utc_offset_h)["zenith"].to_numpy()
    day = zen < 80
    np.testing.assert_allclose(year.dni_w_m2[day] * np.cos(np.radians(zen[day])) + year.dhi_w_m2[day],
                               year.ghi_w_m2[day], rtol=1e-6, atol=1e-6)
    assert np.all(year.ghi_w_m2[zen > 91] == 0)   # no sun below the horizon


def test_polar_night_has_no_sun():
    year = load_climate("polar-coast")
    # At 71.3 N the sun stays below the horizon from late November to mid January
    # (astronomy: latitude above 66.6 + refraction); December GHI is essentially 0.
    december = year.ghi_w_m2[year.times().month == 12]
    assert december.max() < 5.0


def test_bad_definition_is_input_error():
    with pytest.raises(InputError, match="expected 12"):
        archetypes.read_definition(
            'name="x"\ndescription="x"\nsource="x"\nlatitude_deg=1\nlongitude_deg=1\n'
            'altitude_m=1\nutc_offset_h=0\nwind_speed_m_s=1\nday_to_day_sd_k=1\nseed=1\n'
            'tmax_c=[1,2]\ntmin_c=[0,1]\nclearness_frac=[0.5,0.5]\n', "bad.toml")
