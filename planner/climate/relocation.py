"""A climate's weather under another place's sky.

A station's hourly irradiance belongs to the station's sun and clock. To use it at a
site elsewhere, this module keeps the station's hourly **clearness** (measured over the
station's own Ineichen clear sky: global k = GHI / GHI_clear, and beam k_b = DNI / DNI_clear)
and rebuilds the irradiance with the site's own sun position, clear sky and UTC offset:

    GHI_site(h) = k(h + s) GHI_clear,site(h)
    DNI_site(h) = k_b(h + s) DNI_clear,site(h), at most what leaves DHI >= 0.1 GHI
    DHI_site(h) = GHI_site(h) - DNI_site(h) cos(zenith_site(h))

Keeping the beam clearness keeps the file's own split of direct and diffuse light (a
decomposition model such as Erbs 1982 would replace it with a correlation: at a subarctic
coastal station it took 30 % off December's yield on a steep array), and a site at the
station's place gets the station's hours back.

``s`` is the whole number of hours by which the site's solar time leads the station's
at the same clock hour, so afternoon weather stays in the afternoon and the air
temperature's daily cycle keeps its place relative to the site's sun (air temperature
and wind are moved by the same ``s``). Hours in which the station's clear-sky GHI is
below :data:`MIN_CLEAR_SKY_W_M2` (sun near or below its horizon) take that day's
clearness, days without any station sun take the clearness of the nearest days with
sun, so a site with daylight where the station had none still gets a plausible sky;
night at the site is always dark (its clear sky is zero).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from planner import HOURS_PER_YEAR
from planner.climate.solar import clear_sky_ghi, clear_sky_many, sun_paths
from planner.climate.typical_year import TypicalYear

#: Below this station clear-sky GHI (W/m2, sun within a few degrees of the horizon) an
#: hour's measured/clear-sky ratio is dominated by noise and horizon effects; the day's
#: clearness is used instead (common practice in clear-sky-index work, from memory).
MIN_CLEAR_SKY_W_M2 = 50.0
#: Cap of an hour's clearness: hour means rarely exceed the clear sky by more than
#: 10-20 % (cloud enhancement, turbidity below the climatology; from memory).
MAX_HOURLY_CLEARNESS = 1.2
#: Plausible upper bound of hour-mean GHI at the surface (as the file readers check).
MAX_GHI_W_M2 = 1400.0
#: A site within this distance of the climate's location, on the same clock, keeps the
#: climate's measured irradiance as it is.
SAME_PLACE_KM = 1.0
#: Smallest diffuse fraction DHI/GHI a rebuilt hour keeps: the clearest skies scatter
#: about a tenth of the global irradiance (from memory); a beam clearness taken at the
#: station's higher sun must not leave the site without diffuse light.
MIN_DIFFUSE_FRAC = 0.1

_CLEARNESS_CACHE: dict = {}


def hourly_clearness(year: TypicalYear) -> tuple[np.ndarray, np.ndarray]:
    """A year's hourly global and beam clearness, (8760,) each: GHI over its own Ineichen
    clear-sky GHI and DNI over clear-sky DNI, with the rules of the module docstring for
    low-sun hours and sunless days (cached per year)."""
    key = id(year.ghi_w_m2)
    hit = _CLEARNESS_CACHE.get(key)
    if hit is not None and hit[0] is year.ghi_w_m2:
        return hit[1]
    sky = clear_sky_ghi(year.latitude_deg, year.longitude_deg, year.altitude_m, year.utc_offset_h)
    clear_ghi = sky["ghi"].to_numpy()
    valid = clear_ghi >= MIN_CLEAR_SKY_W_M2
    out = (_clearness(year.ghi_w_m2, clear_ghi, valid),
           _clearness(year.dni_w_m2, sky["dni"].to_numpy(), valid))
    if len(_CLEARNESS_CACHE) > 128:
        _CLEARNESS_CACHE.clear()
    _CLEARNESS_CACHE[key] = (year.ghi_w_m2, out)
    return out


def _clearness(measured: np.ndarray, clear: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """measured / clear in valid hours, the day's ratio in the others (days without a
    valid hour: the nearest days'), clipped to 0...MAX_HOURLY_CLEARNESS; read-only."""
    day_clear = np.where(valid, clear, 0.0).reshape(365, 24).sum(axis=1)
    day_measured = np.where(valid, measured, 0.0).reshape(365, 24).sum(axis=1)
    lit = day_clear > 0.0
    days = np.arange(365)
    if lit.any():
        day_k = np.interp(days, days[lit],
                          np.clip(day_measured[lit] / day_clear[lit], 0.0, MAX_HOURLY_CLEARNESS),
                          period=365)
    else:
        day_k = np.full(365, 0.7)
    with np.errstate(divide="ignore", invalid="ignore"):
        hour_k = np.where(valid, measured / clear, np.repeat(day_k, 24))
    k = np.clip(np.nan_to_num(hour_k, nan=0.0), 0.0, MAX_HOURLY_CLEARNESS)
    k.setflags(write=False)
    return k


def utc_offset_from_longitude(longitude_deg):
    """Nautical time zone of a longitude: round(longitude / 15) hours (a place's clock
    when no offset is given; civil zones differ, so a sites-table offset is better)."""
    return np.round(np.asarray(longitude_deg, float) / 15.0) + 0.0


def solar_time_lead_h(site_longitude_deg, site_utc_offset_h, longitude_deg, utc_offset_h):
    """Whole hours by which a site's solar time leads a climate's at the same clock hour.

    Solar time = clock time + (longitude - 15 x UTC offset) / 15 h (+ the equation of
    time, the same at both): the difference of the two longitude terms, rounded.
    """
    lead = (np.asarray(site_longitude_deg, float) / 15.0 - np.asarray(site_utc_offset_h, float)) \
        - (np.asarray(longitude_deg, float) / 15.0 - np.asarray(utc_offset_h, float))
    return np.round(lead).astype(int)


@dataclasses.dataclass(frozen=True)
class Place:
    """Where a site is: degrees north and east, metres, standard-time offset in hours."""

    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    utc_offset_h: float


def same_place(year: TypicalYear, place: Place) -> bool:
    """Whether a place is the climate's own location (within 1 km, same clock)."""
    from planner.climate.stations import great_circle_km

    return (float(place.utc_offset_h) == float(year.utc_offset_h)
            and float(great_circle_km(year.latitude_deg, year.longitude_deg, place.latitude_deg,
                                      place.longitude_deg)) < SAME_PLACE_KM)


def _closed_split(ghi, dni, zenith_deg):
    """DNI limited so DHI = GHI - DNI cos(z) keeps at least MIN_DIFFUSE_FRAC of GHI."""
    cos_z = np.cos(np.radians(zenith_deg))
    up = cos_z > 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        beam_max = np.where(up, ghi * (1.0 - MIN_DIFFUSE_FRAC) / cos_z, 0.0)
    dni = np.clip(dni, 0.0, beam_max)
    dhi = ghi - dni * np.where(up, cos_z, 0.0)
    return dni, dhi


def relocate_years(years, places) -> list[TypicalYear]:
    """Each climate's weather under its place's own sky (see module docstring).

    Parameters
    ----------
    years : sequence of n TypicalYear
        The climate each place uses (the same object may repeat).
    places : sequence of n :class:`Place`

    Returns
    -------
    list of n TypicalYear
        At the place's position and UTC offset, with the place's sun attached; air
        temperature and wind moved by the solar-time lead, not shifted in level. A
        place at its climate's own location gets the climate unchanged.
    """
    out = list(years)
    moved = [j for j, (y, p) in enumerate(zip(years, places)) if not same_place(y, p)]
    if not moved:
        return out
    lat = np.array([places[j].latitude_deg for j in moved], float)
    lon = np.array([places[j].longitude_deg for j in moved], float)
    alt = np.array([places[j].altitude_m for j in moved], float)
    off = np.array([places[j].utc_offset_h for j in moved], float)
    sun = sun_paths(lat, lon, alt, off)
    clear_ghi, clear_dni = clear_sky_many(sun, lat, lon, alt, off)
    lead = solar_time_lead_h(lon, off, [years[j].longitude_deg for j in moved],
                             [years[j].utc_offset_h for j in moved])
    ghi = np.empty((HOURS_PER_YEAR, len(moved)))
    dni = np.empty((HOURS_PER_YEAR, len(moved)))
    for c, j in enumerate(moved):
        k_global, k_beam = hourly_clearness(years[j])
        ghi[:, c] = np.roll(k_global, -lead[c])
        dni[:, c] = np.roll(k_beam, -lead[c])
    ghi *= clear_ghi
    np.minimum(ghi, MAX_GHI_W_M2, out=ghi)
    dni *= clear_dni
    dni, dhi = _closed_split(ghi, dni, sun.zenith_deg)
    for c, j in enumerate(moved):
        base, p = years[j], places[j]
        note = (f"; sky rebuilt at {p.latitude_deg:.4g} N {p.longitude_deg:.4g} E from the "
                f"climate's hourly global and beam clearness" + (f", hours moved {lead[c]:+d} h to solar time"
                                                 if lead[c] else ""))
        out[j] = TypicalYear(
            name=base.name, source=base.source + note, latitude_deg=float(p.latitude_deg),
            longitude_deg=float(p.longitude_deg), altitude_m=float(p.altitude_m),
            utc_offset_h=float(p.utc_offset_h),
            temp_air_c=np.roll(base.temp_air_c, -lead[c]) if lead[c] else base.temp_air_c,
            ghi_w_m2=ghi[:, c], dni_w_m2=dni[:, c], dhi_w_m2=dhi[:, c],
            wind_speed_m_s=np.roll(base.wind_speed_m_s, -lead[c]) if lead[c]
            else base.wind_speed_m_s,
            sun=sun.column(c))
    return out


__all__ = ["relocate_years", "hourly_clearness", "utc_offset_from_longitude",
           "solar_time_lead_h", "Place", "same_place", "MIN_CLEAR_SKY_W_M2"]
