"""Each site's typical year where the site really is.

A site names a climate (bundled, a weather file, a folder of station files or a table of
monthly normals) and may carry its own ``latitude_deg``, ``longitude_deg``,
``altitude_m`` and ``utc_offset_h``. This module turns that into the site's
:class:`~planner.climate.TypicalYear` and a :class:`SiteClimate` saying how:

- a site with coordinates gets its own sky: the climate's hourly clearness under the
  site's sun, clear sky and clock (:mod:`planner.climate.relocation`), or, with normals,
  a year generated at its position (:mod:`planner.climate.normals`);
- a station folder gives each site its nearest station by great-circle distance;
- a site with an altitude gets the climate's air temperature moved by the lapse rate
  (:mod:`planner.climate.atmosphere`), an offset on a shared year, never a cached year
  per site;
- a site with none of these columns gets the climate exactly as before (one shared,
  cached year per climate).

Sun positions, clear skies and generated years are computed for all the sites of a call
at once (arrays of 8760 x sites), so a piece of a fleet costs a few numpy passes.
"""

from __future__ import annotations

import dataclasses
import functools
import zlib
from pathlib import Path

import numpy as np

from planner.climate import TypicalYear, load_climate
from planner.climate.atmosphere import lapse_shift_k
from planner.climate.normalise import DEFAULT_CLEARNESS_FRAC
from planner.climate.normals import (
    clearness_from_irradiation,
    clearness_of_cloudiness,
    generate_years,
)
from planner.climate.relocation import Place, relocate_years, utc_offset_from_longitude
from planner.climate.solar import clear_sky_ghi_many, sun_paths
from planner.climate.stations import nearest_stations, scan_station_folder, station_year
from planner.study.loading import Site, Study
from planner.study.schema import MONTHS

#: Latitude beyond which a climate and a site are taken to lie in different hemispheres
#: (seasons six months apart); near the equator the seasons hardly differ.
HEMISPHERE_MARGIN_DEG = 10.0


@dataclasses.dataclass(frozen=True)
class SiteClimate:
    """How a site's typical year was made (the plan's per-site ``site_climate``)."""

    kind: str                       # "bundled", "file", "station" or "normals"
    climate: str                    # the site's climate column
    source: str                     # bundled name, file, station file or normals row
    latitude_deg: float
    longitude_deg: float
    altitude_m: float | None
    position_from: str              # "sites table" or "climate"
    utc_offset_h: float
    utc_offset_from: str            # "sites table", "longitude" or "climate"
    station_distance_km: float | None = None
    reference_altitude_m: float | None = None  # altitude the lapse shift starts from
    altitude_shift_k: float = 0.0
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        out = dataclasses.asdict(self)
        out["notes"], out["warnings"] = list(self.notes), list(self.warnings)
        return out


def site_years(study: Study, sites, warming_k) -> list[tuple[TypicalYear, SiteClimate]]:
    """Typical year and its description for each of ``sites`` (same order).

    ``warming_k`` holds each site's total warming offset (study, site and sensitivity).
    """
    settings = study.settings["location"]
    plans = [_plan(study, site) for site in sites]
    _pick_stations(study, sites, plans, settings)
    moved = [j for j, p in enumerate(plans) if p["place"] is not None and p["kind"] != "normals"]
    relocated = relocate_years([plans[j]["base"] for j in moved], [plans[j]["place"] for j in moved])
    for j, year in zip(moved, relocated):
        plans[j]["year"] = year
    made = [j for j, p in enumerate(plans) if p["kind"] == "normals"]
    for j, year in zip(made, _normals_years(study, [sites[j] for j in made],
                                            [plans[j] for j in made])):
        plans[j]["year"] = year
    return [_finish(study, site, plan, float(w), settings)
            for site, plan, w in zip(sites, plans, np.broadcast_to(warming_k, (len(sites),)))]


# --------------------------------------------------------------------------- per site

def _plan(study: Study, site: Site) -> dict:
    """What the site's climate is and where the site is, before any year is made."""
    options = dict(study.climates.get(site.climate, {}))
    kind = "station" if "stations" in options else "normals" if "normals" in options else None
    place = utc_from = None
    if site.latitude_deg is not None:
        if site.utc_offset_h is not None:
            offset, utc_from = float(site.utc_offset_h), "sites table"
        else:
            offset, utc_from = float(utc_offset_from_longitude(site.longitude_deg)), "longitude"
        place = Place(site.latitude_deg, site.longitude_deg,
                      np.nan if site.altitude_m is None else site.altitude_m, offset)
    plan = {"kind": kind, "place": place, "utc_from": utc_from, "base": None, "year": None,
            "notes": [], "warnings": [], "source": site.climate, "distance": None}
    if kind is None:
        source = options.pop("file", site.climate)
        plan["base"] = shared_climate(study, site.climate, 0.0)
        plan["kind"] = "file" if "file" in study.climates.get(site.climate, {}) or \
            Path(source).suffix else "bundled"
        plan["source"] = Path(source).name if plan["kind"] == "file" else source
        _with_altitude(plan, plan["base"].altitude_m)
    return plan


def _with_altitude(plan: dict, altitude_m: float) -> None:
    """Fill a place's unknown altitude (the climate's own) before its sky is made."""
    place = plan["place"]
    if place is not None and np.isnan(place.altitude_m):
        plan["place"] = dataclasses.replace(place, altitude_m=float(altitude_m))


def _pick_stations(study: Study, sites, plans, settings) -> None:
    """Nearest station of each station-folder site, with its distance and warnings."""
    by_climate: dict = {}
    for j, plan in enumerate(plans):
        if plan["kind"] == "station":
            by_climate.setdefault(sites[j].climate, []).append(j)
    for name, members in by_climate.items():
        folder = scan_station_folder(study.path.parent / str(study.climates[name]["stations"]))
        index, distance = nearest_stations(folder, [sites[j].latitude_deg for j in members],
                                           [sites[j].longitude_deg for j in members])
        for j, i, d in zip(members, index, distance):
            station = folder.stations[int(i)]
            plan = plans[j]
            plan["base"] = station_year(station)
            plan["source"], plan["distance"] = station.name, float(d)
            if folder.skipped:
                plan["notes"].append(f"station files left out: {_skipped_text(folder.skipped)}")
            if d > settings["station_distance_limit_km"]:
                plan["warnings"].append(
                    f"nearest station {station.name} is {d:,.0f} km away (limit "
                    f"{settings['station_distance_limit_km']:g} km): its typical year may not "
                    "represent this site; add a nearer station or give the site its own normals")
            _with_altitude(plan, plan["base"].altitude_m)


def _skipped_text(skipped) -> str:
    shown = "; ".join(f"{name} ({why})" for name, why in skipped[:3])
    return shown + (f" and {len(skipped) - 3} more" if len(skipped) > 3 else "")


def _normals_years(study: Study, sites, plans) -> list[TypicalYear]:
    """Years generated from each site's normals at its own position (all at once)."""
    if not sites:
        return []
    rows = [study.normals[s.climate][s.normals_id or s.id] for s in sites]
    for site, plan, row in zip(sites, plans, rows):
        # Unknown site altitude: the normals' own, else sea level (clear sky only).
        _with_altitude(plan, row["altitude_m"] if row["altitude_m"] is not None else 0.0)
        plan["source"] = f"{row['id']} ({Path(str(study.climates[site.climate]['normals'])).name})"
        plan["base_altitude"] = row["altitude_m"]
    places = [p["place"] for p in plans]
    lat, lon, alt, off = (np.array([getattr(p, k) for p in places], float) for k in
                          ("latitude_deg", "longitude_deg", "altitude_m", "utc_offset_h"))
    sun = sun_paths(lat, lon, alt, off)
    clear = clear_sky_ghi_many(sun, lat, lon, alt, off)
    clearness = np.empty((12, len(sites)))
    for j, (row, plan) in enumerate(zip(rows, plans)):
        clearness[:, j] = _row_clearness(row, clear[:, j], plan)
    made = generate_years(
        latitude_deg=lat, longitude_deg=lon, utc_offset_h=off,
        tmax_c=np.array([[r[f"tmax_{m}_c"] for m in MONTHS] for r in rows]).T,
        tmin_c=np.array([[r[f"tmin_{m}_c"] for m in MONTHS] for r in rows]).T,
        clearness_frac=clearness, clear_ghi_w_m2=clear, zenith_deg=sun.zenith_deg,
        seeds=[zlib.crc32(s.id.encode("utf-8")) for s in sites],
        day_to_day_sd_k=np.array([r["day_to_day_sd_k"] for r in rows]))
    years = []
    for j, (site, row, plan) in enumerate(zip(sites, rows, plans)):
        place = plan["place"]
        years.append(TypicalYear(
            name=f"{site.climate}:{row['id']}",
            source=f"generated from the monthly normals '{row['id']}' at the site's position "
                   f"({plan['clearness_note']})",
            latitude_deg=place.latitude_deg, longitude_deg=place.longitude_deg,
            altitude_m=place.altitude_m, utc_offset_h=place.utc_offset_h,
            temp_air_c=made.temp_air_c[:, j], ghi_w_m2=made.ghi_w_m2[:, j],
            dni_w_m2=made.dni_w_m2[:, j], dhi_w_m2=made.dhi_w_m2[:, j],
            wind_speed_m_s=np.full(made.temp_air_c.shape[0], float(row["wind_speed_m_s"])),
            sun=sun.column(j)))
    return years


def _row_clearness(row, clear_ghi_w_m2, plan) -> np.ndarray:
    """Monthly clearness of a normals row: from its irradiation, its cloudiness class or
    the default (with a warning saying what was assumed)."""
    if row["ghi_jan_kwh_m2_day"] is not None:
        given = np.array([row[f"ghi_{m}_kwh_m2_day"] for m in MONTHS])[:, None]
        ratio = clearness_from_irradiation(given, clear_ghi_w_m2[:, None])[:, 0]
        bright = [m for m, r in zip(MONTHS, ratio) if r > 1.0]
        if bright:
            plan["warnings"].append(
                f"normals '{row['id']}': irradiation above the clear sky at the site in "
                f"{', '.join(bright)}; clear sky assumed for those months (check the unit: "
                "kWh/m² per day)")
        plan["clearness_note"] = "irradiation from the normals"
        return np.clip(ratio, 0.05, 1.0)
    if row["cloudiness"]:
        value = clearness_of_cloudiness(row["cloudiness"])
        plan["clearness_note"] = (f"cloudiness '{row['cloudiness']}': clearness {value:.2f}, "
                                  "Kasten & Czeplak 1980")
        return np.full(12, value)
    plan["warnings"].append(
        f"normals '{row['id']}' give neither irradiation nor cloudiness: clearness "
        f"{DEFAULT_CLEARNESS_FRAC:g} of the clear sky assumed in every month")
    plan["clearness_note"] = f"clearness {DEFAULT_CLEARNESS_FRAC:g} assumed"
    return np.full(12, DEFAULT_CLEARNESS_FRAC)


def _finish(study: Study, site: Site, plan: dict, warming_k: float,
            settings) -> tuple[TypicalYear, SiteClimate]:
    """The lapse-rate shift, the warming offset and the description of one site."""
    place = plan["place"]
    year = plan["year"] or plan["base"]
    if plan["kind"] == "normals":
        reference = plan.get("base_altitude")
    else:
        reference = plan["base"].altitude_m
    shift = 0.0
    if site.altitude_m is not None and reference is not None:
        shift = float(lapse_shift_k(site.altitude_m, reference, settings["lapse_rate_k_per_km"]))
        difference = site.altitude_m - reference
        if abs(difference) > settings["station_altitude_limit_m"]:
            plan["warnings"].append(
                f"site altitude {site.altitude_m:,.0f} m is {abs(difference):,.0f} m "
                f"{'above' if difference > 0 else 'below'} its climate's {reference:,.0f} m "
                f"(limit {settings['station_altitude_limit_m']:g} m): air temperature moved "
                f"{shift:+.1f} K by {settings['lapse_rate_k_per_km']:g} K/km; local inversions "
                "and exposure can differ by several kelvin")
        year = year.with_air_offset(
            shift, f"air temperature {shift:+.2f} K for {difference:+.0f} m of altitude "
                   f"({settings['lapse_rate_k_per_km']:g} K/km)")
    if place is not None and plan["kind"] != "normals" and plan["base"] is not None:
        base_lat = plan["base"].latitude_deg
        if min(place.latitude_deg, base_lat) < -HEMISPHERE_MARGIN_DEG and \
                max(place.latitude_deg, base_lat) > HEMISPHERE_MARGIN_DEG:
            plan["warnings"].append(
                f"climate {site.climate} lies in the other hemisphere ({base_lat:.1f}°): its "
                "seasons are not moved (its July stays its July); choose a climate of the "
                "site's hemisphere")
    year = year.with_warming(warming_k)
    description = SiteClimate(
        kind=plan["kind"], climate=site.climate, source=plan["source"],
        latitude_deg=float(year.latitude_deg), longitude_deg=float(year.longitude_deg),
        altitude_m=None if site.altitude_m is None else float(site.altitude_m),
        position_from="sites table" if place is not None else "climate",
        utc_offset_h=float(year.utc_offset_h),
        utc_offset_from=plan["utc_from"] or "climate",
        station_distance_km=plan["distance"], reference_altitude_m=reference,
        altitude_shift_k=shift, notes=tuple(plan["notes"]), warnings=tuple(plan["warnings"]))
    return year, description


# Sites sharing a climate and a warming get the same TypicalYear object, which lets the
# fleet enclosure model build their solar drive once (it groups sites by object).
@functools.lru_cache(maxsize=64)
def _shared_climate(source, base_dir, options, warming_k):
    return load_climate(source, base_dir=Path(base_dir), options=dict(options) or None,
                        warming_k=warming_k)


def shared_climate(study: Study, name: str, warming_k: float) -> TypicalYear:
    """The climate of a site without location columns: one cached object per climate."""
    options = dict(study.climates.get(name, {}))
    source = options.pop("file", name)
    return _shared_climate(source, str(study.path.parent), tuple(sorted(options.items())),
                           warming_k)


def describe_shared(study: Study, site: Site, year: TypicalYear) -> SiteClimate:
    """The description of a site without location columns: its climate's own place."""
    options = study.climates.get(site.climate, {})
    source = str(options.get("file", site.climate))
    kind = "file" if "file" in options or Path(source).suffix else "bundled"
    return SiteClimate(kind=kind, climate=site.climate,
                       source=Path(source).name if kind == "file" else source,
                       latitude_deg=float(year.latitude_deg), longitude_deg=float(year.longitude_deg),
                       altitude_m=None, position_from="climate",
                       utc_offset_h=float(year.utc_offset_h), utc_offset_from="climate",
                       reference_altitude_m=float(year.altitude_m))


def has_location(site: Site) -> bool:
    """Whether the site carries any location column (else it shares its climate's year)."""
    return site.latitude_deg is not None or site.altitude_m is not None


__all__ = ["site_years", "SiteClimate", "shared_climate", "has_location", "describe_shared"]
