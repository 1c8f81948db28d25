"""Air temperature with altitude: the ICAO standard atmosphere's lapse rate.

A weather station's (or a set of normals') air temperature is moved to a site at
another altitude by the temperature gradient of the ICAO standard atmosphere
(ICAO Doc 7488/3, 1993, Manual of the ICAO Standard Atmosphere: sea-level 15 degC
(288.15 K), gradient -6.5 K/km up to the tropopause at 11 km; the same values are in
ISO 2533:1975 and the U.S. Standard Atmosphere 1976):

    shift_K = -lapse_rate_K_per_km * (site_altitude_m - station_altitude_m) / 1000

The real gradient near the ground varies (inversions in valleys on clear nights, about
4-8 K/km over a year; from memory), which is why the plan warns past a study's
altitude-difference limit.
"""

from __future__ import annotations

import numpy as np

#: Temperature gradient of the ICAO standard atmosphere below 11 km, K per km (ICAO Doc
#: 7488/3 Table; ISO 2533:1975).
STANDARD_LAPSE_RATE_K_PER_KM = 6.5
#: Standard sea-level temperature, degC (288.15 K; ICAO Doc 7488/3).
SEA_LEVEL_TEMP_C = 15.0
#: Top of the layer in which the standard gradient holds (the tropopause), m.
TROPOPAUSE_M = 11_000.0


def standard_temperature_c(altitude_m):
    """Air temperature of the ICAO standard atmosphere at ``altitude_m`` (below 11 km), degC.

    Examples
    --------
    ICAO Doc 7488/3 tables: 8.5 degC at 1,000 m and -4.5 degC at 3,000 m.

    >>> float(standard_temperature_c(1000.0)), float(standard_temperature_c(3000.0))
    (8.5, -4.5)
    """
    altitude = np.asarray(altitude_m, dtype=float)
    return SEA_LEVEL_TEMP_C - STANDARD_LAPSE_RATE_K_PER_KM * altitude / 1000.0


def lapse_shift_k(site_altitude_m, station_altitude_m,
                  lapse_rate_k_per_km: float = STANDARD_LAPSE_RATE_K_PER_KM):
    """Kelvin to add to a station's air temperature to move it to a site's altitude.

    ``-lapse_rate_k_per_km * (site_altitude_m - station_altitude_m) / 1000``: a site
    500 m above its station is 3.25 K colder at the standard gradient.

    Examples
    --------
    >>> float(lapse_shift_k(1500.0, 1000.0))
    -3.25
    """
    site = np.asarray(site_altitude_m, dtype=float)
    station = np.asarray(station_altitude_m, dtype=float)
    return -float(lapse_rate_k_per_km) * (site - station) / 1000.0 + 0.0


__all__ = ["STANDARD_LAPSE_RATE_K_PER_KM", "standard_temperature_c", "lapse_shift_k"]
