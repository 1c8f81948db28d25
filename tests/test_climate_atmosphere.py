"""Air temperature with altitude: the ICAO standard atmosphere's lapse rate."""

import pytest

from planner.climate.atmosphere import lapse_shift_k, standard_temperature_c

# ICAO Doc 7488/3 (1993), Manual of the ICAO Standard Atmosphere, table of the standard
# atmosphere (the same values in ISO 2533:1975): 288.15 K at sea level, 281.65 K at
# 1,000 m, 268.65 K at 3,000 m, 255.65 K at 5,000 m (from memory).
ICAO_TABLE_K = {0.0: 288.15, 1000.0: 281.65, 3000.0: 268.65, 5000.0: 255.65}


@pytest.mark.parametrize("altitude_m", sorted(ICAO_TABLE_K))
def test_standard_temperature_is_the_icao_table(altitude_m):
    assert standard_temperature_c(altitude_m) + 273.15 == pytest.approx(ICAO_TABLE_K[altitude_m],
                                                                        abs=1e-9)


@pytest.mark.parametrize(("station_m", "site_m"), [(0.0, 1000.0), (1000.0, 3000.0), (5000.0, 0.0)])
def test_lapse_shift_moves_a_station_as_the_standard_atmosphere_does(station_m, site_m):
    # A station's temperature moved to a site's altitude changes by the same amount as the
    # ICAO standard atmosphere between the two altitudes (two altitudes of the table each).
    expected = ICAO_TABLE_K[site_m] - ICAO_TABLE_K[station_m]
    assert lapse_shift_k(site_m, station_m) == pytest.approx(expected, abs=1e-9)


def test_a_lapse_rate_of_zero_switches_the_shift_off():
    assert lapse_shift_k(2500.0, 100.0, lapse_rate_k_per_km=0.0) == 0.0
