"""One site's hourly world: climate, battery temperature, load and charging source.

This is the first half of the chain for a site (scenario -> climate -> battery
temperature -> load and charging power); it knows nothing about candidate packs.
Climates are cached, because a fleet repeats a few climates over many sites.
"""

from __future__ import annotations

import warnings
import zlib
from dataclasses import dataclass, field

import numpy as np

from planner.climate import ClimateWarning, TypicalYear
from planner.climate.solar import extra_radiation_many, solar_geometry
from planner.climate.summary import TemperatureSummary, summarize_temperatures
from planner.energy.balance import ChargingShortfall, charging_shortfall
from planner.energy.loads import hourly_load_w, peak_power_w, read_hourly_load_csv
from planner.energy.mains import float_charge_power_w, mains_available
from planner.energy.pv import pv_dc_power_many_w, pv_dc_power_w
from planner.errors import InputError
from planner.site.location import (
    SiteClimate,
    describe_shared,
    has_location,
    shared_climate,
    site_years,
)
from planner.study.loading import Site, Study
from planner.thermal.battery import battery_temperature_fleet
from planner.thermal.enclosures import Enclosure

# A float charger is sized well above the load; the pack's own acceptance limit
# (max charge C-rate) is what caps charging in the SOC recursion (common practice).
FLOAT_CHARGER_MARGIN = 10.0


@dataclass(frozen=True)
class SiteModel:
    """Hourly inputs of one site for every candidate pack (arrays of 8,760 hours)."""

    site: Site
    year: TypicalYear
    temp_battery_c: np.ndarray
    heater_power_w: np.ndarray    # battery heater (energy drawn from the battery)
    hvac_power_w: np.ndarray      # shelter heating and cooling
    enclosure: Enclosure
    temperatures: TemperatureSummary
    load_w: np.ndarray            # load the battery carries, heater and HVAC included
    peak_load_w: float            # highest instantaneous load (bursts)
    charge_w: np.ndarray          # power the charging source offers at the battery bus
    daily_load_wh: float
    design_temp_c: float          # coldest battery temperature of the typical year
    access_months: tuple[int, ...]
    pv_tilt_deg: float | None
    pv_azimuth_deg: float | None
    warnings: list[str] = field(default_factory=list)
    thermal_measure: str = ""     # a thermal measure's variant of the site (planner.site.thermal_measures)
    # False: the battery temperature already holds the heater's effect, so charging
    # follows it alone (no lithium charged below its limit while a heater warms up)
    heater_enables_charge: bool = True
    site_climate: SiteClimate | None = None   # how the site's year was made (location)

    @property
    def heater_on(self) -> np.ndarray:
        """Hours the energy balance lets a heated pack charge whatever its temperature."""
        on = self.heater_power_w > 0
        return on if self.heater_enables_charge else np.zeros_like(on)

    @property
    def charging_shortfall(self) -> ChargingShortfall | None:
        """The period in which the charging source yields less than the load, or None."""
        return charging_shortfall(self.load_w, self.charge_w, charging=self.site.charging)

    @property
    def heater_energy_wh_per_year(self) -> float:
        """Energy the battery heater draws over the typical year (1-hour steps)."""
        return float(np.sum(self.heater_power_w))

    def summary(self) -> SiteSummary:
        """What the later stages read of this site, without its hourly arrays."""
        return SiteSummary(site=self.site, temperatures=self.temperatures,
                           charging_shortfall=self.charging_shortfall,
                           peak_load_w=self.peak_load_w, daily_load_wh=self.daily_load_wh,
                           design_temp_c=self.design_temp_c, access_months=self.access_months,
                           pv_tilt_deg=self.pv_tilt_deg, pv_azimuth_deg=self.pv_azimuth_deg,
                           heater_energy_wh_per_year=self.heater_energy_wh_per_year,
                           thermal_measure=self.thermal_measure, warnings=list(self.warnings),
                           site_climate=self.site_climate)


@dataclass(frozen=True)
class SiteSummary:
    """A site model's scalars (the plan, costing and optimizer need no hourly data), so a
    fleet's hourly arrays are never all in memory at once."""

    site: Site
    temperatures: TemperatureSummary
    charging_shortfall: ChargingShortfall | None
    peak_load_w: float
    daily_load_wh: float
    design_temp_c: float
    access_months: tuple[int, ...]
    pv_tilt_deg: float | None
    pv_azimuth_deg: float | None
    heater_energy_wh_per_year: float = 0.0
    thermal_measure: str = ""
    warnings: list[str] = field(default_factory=list)
    site_climate: SiteClimate | None = None


def model_sites(study: Study, *, extra_warming_k: float = 0.0, progress=None) -> list[SiteModel]:
    """Climate, battery temperature, load and charging power of every site of ``study``.

    The enclosure model runs once for the whole fleet (vectorised across sites), and so
    do the sun, sky and PV of the sites with their own position.
    """
    years, described, notices = _years(study, extra_warming_k)
    internal = [site.load_w if site.electronics_heat_w is None else site.electronics_heat_w
                for site in study.sites]
    setpoints = np.array([np.nan if site.heater_setpoint_c is None else site.heater_setpoint_c
                          for site in study.sites])
    thermal = battery_temperature_fleet(years, [site.enclosure for site in study.sites],
                                        internal_heat_w=np.array(internal),
                                        heater_setpoint_c=setpoints)
    own_sky_pv = _own_sky_pv_per_wp(study.sites, years)
    models = []
    for j, (site, year) in enumerate(zip(study.sites, years)):
        model = _model_site(study, site, year, thermal.temp_battery_c[:, j],
                            thermal.heater_power_w[:, j], thermal.hvac_power_w[:, j],
                            thermal.enclosures[j], own_sky_pv.get(j), described[j])
        model.warnings.extend(notices[j])
        models.append(model)
        if progress:
            progress(1, label=f"Site {site.id}")
    return models


def _years(study: Study, extra_warming_k: float):
    """Each site's typical year, how it was made, and the notices for its warnings."""
    warming = [study.settings["study"]["warming_k"] + site.warming_k + extra_warming_k
               for site in study.sites]
    located = [j for j, site in enumerate(study.sites) if has_location(site)
               or "stations" in study.climates.get(site.climate, {})
               or "normals" in study.climates.get(site.climate, {})]
    years, described = [None] * len(study.sites), [None] * len(study.sites)
    located_set = set(located)
    notices = [[] for _ in study.sites]
    for j, site in enumerate(study.sites):
        if j in located_set:
            continue
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ClimateWarning)
            try:
                years[j] = shared_climate(study, site.climate, warming[j])
            except InputError as err:  # name the site as well as the file
                raise InputError(f"{site.where()}, column climate (site {site.id}): {err}",
                                 source=study.sites_path.name) from None
        described[j] = describe_shared(study, site, years[j])
        notices[j] = [f"climate {site.climate}: {w.message}" for w in caught
                      if issubclass(w.category, ClimateWarning)]
    if located:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ClimateWarning)
            made = site_years(study, [study.sites[j] for j in located], [warming[j] for j in located])
        repaired = [f"climate: {w.message}" for w in caught if issubclass(w.category, ClimateWarning)]
        for k, (j, (year, how)) in enumerate(zip(located, made)):
            years[j], described[j] = year, how
            notices[j] = list(how.warnings) + (repaired if k == 0 else [])
    return years, described, notices


def _model_site(study, site, year, temp_battery_c, heater_power_w, hvac_power_w, enclosure,
                pv_per_wp=None, site_climate=None):
    summary = summarize_temperatures(year.temp_air_c, temp_battery_c)
    burst = dict(burst_w=site.burst_w, burst_duration_s=site.burst_s,
                 burst_interval_min=site.burst_every_min,
                 daily_schedule_w=site.load_schedule_w or None,
                 monthly_multipliers=site.load_monthly_factors or None,
                 hourly_w=(read_hourly_load_csv(study.path.parent / site.load_file)
                           if site.load_file else None))
    base_load = hourly_load_w(constant_w=site.load_w, **burst)
    load = base_load + heater_power_w
    if site.charging != "mains":
        # Off the grid the battery also runs the shelter's heating and cooling.
        load = load + hvac_power_w
    peak = float(np.max(peak_power_w(constant_w=site.load_w, **burst) + heater_power_w))

    tilt = azimuth = None
    if site.charging == "pv":
        tilt, azimuth = _pv_orientation(site, year)
        if pv_per_wp is None:
            pv_per_wp = _pv_per_wp(year, tilt, azimuth, tuple(site.pv_snow_months))
        charge = site.pv_wp * pv_per_wp
    elif site.charging == "mains":
        up = mains_available(outages_per_year=site.outages_per_year,
                             mean_outage_h=site.outage_mean_h, seed=_stable_seed(site.id))
        charge = float_charge_power_w(up, FLOAT_CHARGER_MARGIN * max(peak, 1.0))
    else:
        charge = np.zeros_like(load)

    return SiteModel(
        site=site, year=year, temp_battery_c=np.asarray(temp_battery_c, dtype=float),
        heater_power_w=np.asarray(heater_power_w, dtype=float),
        hvac_power_w=np.asarray(hvac_power_w, dtype=float), enclosure=enclosure,
        temperatures=summary, load_w=np.asarray(load, dtype=float), peak_load_w=peak,
        charge_w=np.asarray(charge, dtype=float),
        daily_load_wh=float(load.sum() / 365.0),
        design_temp_c=float(np.min(temp_battery_c)),
        access_months=study.access_months(site),
        pv_tilt_deg=tilt, pv_azimuth_deg=azimuth,
        warnings=_temperature_warnings(site, temp_battery_c, heater_power_w),
        site_climate=site_climate,
    )


# PVWatts power is proportional to the array's nameplate (pvlib pvwatts_dc: pdc0 scales
# the whole expression), so sites sharing a climate and an orientation share one
# per-watt profile: the sun's position and the plane-of-array irradiance are computed
# once. The key holds the year object itself, so a freed year is never mistaken.
_PV_CACHE: dict = {}


def _pv_per_wp(year: TypicalYear, tilt, azimuth, snow_months) -> np.ndarray:
    key = (id(year), tilt, azimuth, snow_months)
    hit = _PV_CACHE.get(key)
    if hit is None or hit[0] is not year:
        if len(_PV_CACHE) > 256:
            _PV_CACHE.clear()
        sun = solar_geometry(year.latitude_deg, year.longitude_deg, year.altitude_m,
                             year.utc_offset_h)
        hit = (year, pv_dc_power_w(year, array_wp=1.0, tilt_deg=tilt, azimuth_deg=azimuth,
                                   snow_months=snow_months,
                                   solar_apparent_zenith_deg=sun["apparent_zenith"].to_numpy(),
                                   solar_azimuth_deg=sun["azimuth"].to_numpy()))
        _PV_CACHE[key] = hit
    return hit[1]


#: PV arrays of sites with their own sun computed together (bounds temporary arrays).
PV_BLOCK_SITES = 128


def _own_sky_pv_per_wp(sites, years) -> dict[int, np.ndarray]:
    """PV power per Wp of the PV sites whose year carries its own sun, all at once."""
    picks = [j for j, (site, year) in enumerate(zip(sites, years))
             if site.charging == "pv" and year.sun is not None]
    out = {}
    month = years[picks[0]].times().month.to_numpy() if picks else None
    for start in range(0, len(picks), PV_BLOCK_SITES):
        part = picks[start:start + PV_BLOCK_SITES]
        ys = [years[j] for j in part]
        ghi, dni, dhi, temp, wind = (np.column_stack([getattr(y, name) for y in ys]) for name in
                                     ("ghi_w_m2", "dni_w_m2", "dhi_w_m2", "temp_air_c",
                                      "wind_speed_m_s"))
        power = pv_dc_power_many_w(
            ghi, dni, dhi, temp, wind,
            solar_apparent_zenith_deg=np.column_stack([y.sun.apparent_zenith_deg for y in ys]),
            solar_azimuth_deg=np.column_stack([y.sun.azimuth_deg for y in ys]),
            dni_extra_w_m2=extra_radiation_many([y.utc_offset_h for y in ys]), month=month,
            array_wp=1.0, tilt_deg=[_pv_orientation(sites[j], y)[0] for j, y in zip(part, ys)],
            azimuth_deg=[_pv_orientation(sites[j], y)[1] for j, y in zip(part, ys)],
            snow_months=[tuple(sites[j].pv_snow_months) for j in part])
        out.update({j: power[:, c] for c, j in enumerate(part)})
    return out


def _pv_orientation(site: Site, year: TypicalYear) -> tuple[float, float]:
    """Tilt and azimuth of a site's array: given, or |latitude| + 15 facing the equator."""
    tilt = site.pv_tilt_deg
    if tilt is None:
        tilt = min(abs(year.latitude_deg) + 15.0, 90.0)
    azimuth = site.pv_azimuth_deg
    if azimuth is None:
        azimuth = 180.0 if year.latitude_deg >= 0 else 0.0
    return tilt, azimuth


def _stable_seed(text: str) -> int:
    """A seed that depends only on the text (Python's hash() changes between runs)."""
    return zlib.crc32(text.encode("utf-8"))


def _temperature_warnings(site: Site, temp_battery_c, heater_power_w) -> list[str]:
    warnings = []
    hot = int(np.count_nonzero(temp_battery_c > 45.0))
    if hot:
        warnings.append(f"battery above 45 °C for {hot} h of a typical year: heat shortens life "
                        "sharply; consider shade, a vault or a lighter enclosure finish")
    if site.heater_setpoint_c is not None:
        kwh = float(np.sum(heater_power_w)) / 1000.0
        warnings.append(f"battery heater set to {site.heater_setpoint_c:g} °C draws {kwh:.1f} kWh "
                        "a year from the battery")
    return warnings
