"""Typical years generated from monthly normals, many places at once."""

import numpy as np
import pandas as pd
import pytest

from planner.climate import load_climate
from planner.climate.normals import (
    clearness_from_irradiation,
    clearness_of_cloudiness,
    generate_years,
    kasten_czeplak_clearness,
    mean_preserving_daily,
)
from planner.climate.solar import clear_sky_ghi_many, sun_paths

DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def _normals_of(year):
    """Monthly mean daily min, max and GHI (kWh/m2/day) of an hourly year, with pandas."""
    index = pd.date_range("2023-01-01", periods=8760, freq="h")
    frame = pd.DataFrame({"t": year.temp_air_c, "g": year.ghi_w_m2 / 1000.0}, index=index)
    daily = frame.resample("D").agg({"t": ["min", "max"], "g": "sum"})
    monthly = daily.groupby(daily.index.month).mean()
    return (monthly[("t", "min")].to_numpy(), monthly[("t", "max")].to_numpy(),
            monthly[("g", "sum")].to_numpy())


# Normals of a measured year: pvlib's bundled Greensboro TMY3 (NREL data, an open dataset).
MEASURED = _normals_of(load_climate("tmy3-greensboro-nc"))
PLACES = [(36.1, -79.95, 273.0, -5.0), (-33.0, 151.0, 50.0, 10.0), (69.0, 18.0, 20.0, 1.0)]


def _generate(places, tmin, tmax, ghi_kwh):
    lat, lon, alt, off = (np.array(v, float) for v in zip(*places))
    sun = sun_paths(lat, lon, alt, off)
    clear = clear_sky_ghi_many(sun, lat, lon, alt, off)
    n = len(places)
    clearness = np.clip(clearness_from_irradiation(np.repeat(ghi_kwh[:, None], n, 1), clear),
                        0.05, 1.0)
    made = generate_years(latitude_deg=lat, longitude_deg=lon, utc_offset_h=off,
                          tmax_c=np.repeat(tmax[:, None], n, 1), tmin_c=np.repeat(tmin[:, None], n, 1),
                          clearness_frac=clearness, clear_ghi_w_m2=clear, zenith_deg=sun.zenith_deg,
                          seeds=np.arange(n) + 3)
    return made, clear


def test_a_year_from_normals_reproduces_them():
    # Issue check: each month's mean daily minimum and maximum within 0.3 K and monthly
    # irradiation within 3 % (the input is the definition), at the normals' own place.
    tmin, tmax, ghi = MEASURED
    made, _ = _generate(PLACES[:1], tmin, tmax, ghi)
    year = type("Y", (), {"temp_air_c": made.temp_air_c[:, 0], "ghi_w_m2": made.ghi_w_m2[:, 0]})
    got_min, got_max, got_ghi = _normals_of(year)
    np.testing.assert_allclose(got_min, tmin, atol=0.3)
    np.testing.assert_allclose(got_max, tmax, atol=0.3)
    np.testing.assert_allclose(got_ghi, ghi, rtol=0.03)


def test_both_hemispheres_and_polar_night():
    tmin, tmax, ghi = MEASURED
    made, clear = _generate(PLACES, tmin, tmax, ghi)
    sun = sun_paths(*(np.array(v, float) for v in zip(*PLACES)))
    # No sun at night at any place (Erbs split of a clear-sky-scaled GHI).
    assert np.all(made.ghi_w_m2[sun.apparent_zenith_deg > 90.0] == 0.0)
    assert np.all(made.dni_w_m2 >= 0) and np.all(made.dhi_w_m2 >= 0)
    # Temperatures follow the input months at every place (the normals are not moved).
    for j in range(len(PLACES)):
        year = type("Y", (), {"temp_air_c": made.temp_air_c[:, j], "ghi_w_m2": made.ghi_w_m2[:, j]})
        got_min, got_max, _ = _normals_of(year)
        np.testing.assert_allclose(got_max, tmax, atol=0.3)
    # At 69 N the sun stays down in late December (astronomy: polar night above about 67 N).
    december = slice(-10 * 24, None)
    assert made.ghi_w_m2[december, 2].max() < 5.0


def test_a_place_alone_gets_the_same_year_as_in_a_crowd():
    # A site's year is a function of its own inputs only (never of the other sites of its piece).
    tmin, tmax, ghi = MEASURED
    together, _ = _generate(PLACES, tmin, tmax, ghi)
    alone, _ = _generate(PLACES[1:2], tmin, tmax, ghi)
    # seeds are 3 + position: the crowd's second place has seed 4, the lone place seed 3;
    # use the same seed by generating the crowd's first place alone instead.
    first, _ = _generate(PLACES[:1], tmin, tmax, ghi)
    np.testing.assert_allclose(first.temp_air_c[:, 0], together.temp_air_c[:, 0], rtol=0, atol=1e-9)
    np.testing.assert_allclose(first.ghi_w_m2[:, 0], together.ghi_w_m2[:, 0], rtol=0, atol=1e-9)
    assert alone.temp_air_c.shape == (8760, 1)


def test_mean_preserving_daily_is_exact_for_many_columns():
    monthly = np.array([[-10, -8, -2, 5, 11, 16, 18, 17, 12, 6, -1, -7],
                        [25, 24, 21, 17, 13, 10, 9, 10, 13, 16, 20, 23]], float).T
    daily = mean_preserving_daily(monthly)
    starts = np.r_[0, np.cumsum(DAYS)[:-1]]
    means = np.add.reduceat(daily, starts, axis=0) / DAYS[:, None]
    np.testing.assert_allclose(means, monthly, atol=1e-9)


def test_kasten_czeplak_and_the_cloudiness_classes():
    # Kasten & Czeplak (1980), Solar Energy 24, 177-189: G/G_clear = 1 - 0.75 (N/8)^3.4;
    # clear sky 1, overcast 0.25.
    assert kasten_czeplak_clearness(0) == 1.0
    assert kasten_czeplak_clearness(8) == pytest.approx(0.25)
    assert kasten_czeplak_clearness(6) == pytest.approx(1 - 0.75 * 0.75 ** 3.4)
    values = [clearness_of_cloudiness(c) for c in ("clear", "few", "scattered", "broken", "overcast")]
    assert values == sorted(values, reverse=True)
    assert clearness_of_cloudiness("broken") == pytest.approx(
        np.mean([1 - 0.75 * (n / 8) ** 3.4 for n in (5, 6, 7)]))
