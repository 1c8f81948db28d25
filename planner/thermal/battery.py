"""Battery temperature inside its enclosure: a lumped first-order thermal model.

The battery and the enclosure air and walls are one thermal node of heat capacity C
(J/K), exchanging heat with a drive temperature through a conductance UA (W/K):

    C dT/dt = UA (T_drive - T) + Q_solar + Q_internal + Q_heat - Q_cool

* cabinets: T_drive is the outside air; Q_solar follows the sol-air method of the
  ASHRAE Handbook-Fundamentals (heat-gain chapter): the absorbed flux alpha*I on a
  surface of conductance U raises the heat flow by U*A*alpha*I/h_o, with h_o the
  exterior surface film coefficient (17 W/m2K for the ASHRAE summer design
  condition); I on the top and on four walls comes from pvlib (sun position at
  mid-hour, isotropic sky, ``pvlib.irradiance.get_total_irradiance``);
* buried vault: T_drive is a conductance-weighted mix of the ground at the vault's
  depth (Kusuda & Achenbach 1965, :mod:`planner.thermal.ground`) and the air above the lid;
* equipment shelter: as a cabinet, plus heating and cooling to setpoints;
* an optional battery heater with a thermostat.

This module builds the drives and runs the fleet; the enclosure kinds and their
parameters are in :mod:`planner.thermal.enclosures`, the exact hourly solution of the node
(periodic start, thermostats) in :mod:`planner.thermal.lumped`.

Everything is vectorised across sites: arrays are shaped (8760, n_sites) and the
only Python loop runs over the 8,760 hours (:func:`planner.thermal.lumped.simulate_lumped`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from planner.climate import HOURS_PER_YEAR, TypicalYear
from planner.errors import InputError
from planner.thermal import ground
from planner.thermal.enclosures import Enclosure, get_enclosure
from planner.thermal.lumped import simulate_lumped

#: Exterior surface film coefficient, W/m2K: ASHRAE Handbook-Fundamentals sol-air
#: temperature, h_o = 17 W/m2K (3.0 Btu/h.ft2.F) for summer design (from memory).
H_OUT_W_M2K = 17.0
#: Ground albedo for the reflected part of wall irradiance (common practice 0.2).
ALBEDO_FRAC = 0.2
#: Default electric power of a battery heater pad, W (from memory: pads for
#: 100-200 Ah packs are typically 20-100 W).
DEFAULT_HEATER_POWER_W = 50.0
#: Sites whose enclosure irradiance is computed together (bounds the temporary arrays).
FLUX_BLOCK_SITES = 128


# --------------------------------------------------------------------------- drives

_SOLAR_CACHE: dict = {}


def surface_irradiance_w_m2(year: TypicalYear, tilt_deg: float, azimuth_deg: float, *,
                            beam_shading_frac: float = 0.0,
                            sky_view_frac: float = 1.0) -> np.ndarray:
    """Hour-mean irradiance on one enclosure surface, W/m2.

    pvlib isotropic-sky transposition (Liu & Jordan 1963 via
    ``pvlib.irradiance.get_total_irradiance``) with the sun at mid-hour; the beam part
    is reduced by ``beam_shading_frac`` and the sky-diffuse part scaled by
    ``sky_view_frac``.
    """
    import pvlib

    from planner.climate.solar import solar_geometry

    if year.sun is not None:
        zenith, azimuth = year.sun.apparent_zenith_deg, year.sun.azimuth_deg
    else:
        sun = solar_geometry(year.latitude_deg, year.longitude_deg, year.altitude_m,
                             year.utc_offset_h)
        zenith, azimuth = sun["apparent_zenith"].to_numpy(), sun["azimuth"].to_numpy()
    parts = pvlib.irradiance.get_total_irradiance(
        tilt_deg, azimuth_deg, zenith, azimuth,
        year.dni_w_m2, year.ghi_w_m2, year.dhi_w_m2, albedo=ALBEDO_FRAC, model="isotropic")
    beam = np.nan_to_num(np.asarray(parts["poa_direct"], float))
    sky = np.nan_to_num(np.asarray(parts["poa_sky_diffuse"], float))
    grd = np.nan_to_num(np.asarray(parts["poa_ground_diffuse"], float))
    return np.maximum(beam * (1.0 - beam_shading_frac) + sky * sky_view_frac + grd, 0.0)


def enclosure_flux_many_w(years: Sequence[TypicalYear], enclosures: Sequence[Enclosure]) -> np.ndarray:
    """Area-weighted irradiance on the top and four walls of n enclosures, (8760, n), W.

    The same isotropic-sky transposition as :func:`surface_irradiance_w_m2` (Liu & Jordan
    1963: beam DNI cos(AOI) >= 0, sky DHI (1 + cos tilt)/2, ground GHI albedo
    (1 - cos tilt)/2) in closed form for many sites with their own sun (``year.sun``):
    on four walls at right angles the beam projections sum to
    DNI sin(z) (|cos(dA)| + |sin(dA)|), dA = sun azimuth - first wall's azimuth.
    """
    zen = np.radians(np.column_stack([y.sun.apparent_zenith_deg for y in years]))
    azi = np.radians(np.column_stack([y.sun.azimuth_deg for y in years]))
    dni = np.column_stack([y.dni_w_m2 for y in years])
    ghi = np.column_stack([y.ghi_w_m2 for y in years])
    dhi = np.column_stack([y.dhi_w_m2 for y in years])
    top = np.array([e.area_top_m2 for e in enclosures])[None, :]
    wall = np.array([e.area_wall_m2 for e in enclosures])[None, :]
    beam_kept = 1.0 - np.array([e.beam_shading_frac for e in enclosures])[None, :]
    sky = np.array([e.sky_view_frac for e in enclosures])[None, :]
    facing = azi - np.radians([e.azimuth_deg for e in enclosures])[None, :]
    beam_top = np.maximum(dni * np.cos(zen), 0.0)
    beam_walls = np.maximum(dni * np.sin(zen), 0.0) * (np.abs(np.cos(facing))
                                                        + np.abs(np.sin(facing)))
    return (top * (beam_top * beam_kept + dhi * sky)
            + wall * (beam_walls * beam_kept + 2.0 * (dhi * sky + ghi * ALBEDO_FRAC)))


def solar_gain_w(year: TypicalYear, enclosure: Enclosure) -> np.ndarray:
    """Solar heat reaching the enclosure interior each hour, W (sol-air method).

    Q = sum over surfaces of U A alpha I / h_o (ASHRAE Handbook-Fundamentals, sol-air
    temperature T_sa = T_o + alpha I / h_o applied to the envelope conductance), with
    U = ua_w_k / exposed area. Cached per climate irradiance and geometry.
    """
    area = enclosure.area_top_m2 + 4.0 * enclosure.area_wall_m2
    if area <= 0 or enclosure.absorptance_frac <= 0:
        return np.zeros(HOURS_PER_YEAR)
    # Keyed on the (read-only) irradiance arrays' identity; the cache holds them, so
    # an id cannot be reused while its entry lives. Warmed copies share the arrays.
    key = (year.latitude_deg, year.longitude_deg, year.altitude_m, year.utc_offset_h,
           id(year.ghi_w_m2), id(year.dni_w_m2), id(year.dhi_w_m2), enclosure.area_top_m2,
           enclosure.area_wall_m2, enclosure.azimuth_deg, enclosure.beam_shading_frac,
           enclosure.sky_view_frac)
    cached = _SOLAR_CACHE.get(key)
    flux = None if cached is None else cached[0]   # area-weighted irradiance sum, W
    if flux is None:
        kw = dict(beam_shading_frac=enclosure.beam_shading_frac,
                  sky_view_frac=enclosure.sky_view_frac)
        flux = enclosure.area_top_m2 * surface_irradiance_w_m2(year, 0.0, 180.0, **kw)
        if enclosure.area_wall_m2 > 0:
            for turn in (0.0, 90.0, 180.0, 270.0):
                flux = flux + enclosure.area_wall_m2 * surface_irradiance_w_m2(
                    year, 90.0, (enclosure.azimuth_deg + turn) % 360.0, **kw)
        if len(_SOLAR_CACHE) > 256:
            _SOLAR_CACHE.clear()
        _SOLAR_CACHE[key] = (flux, year.ghi_w_m2, year.dni_w_m2, year.dhi_w_m2)
    u_w_m2k = enclosure.ua_w_k / area
    return u_w_m2k * enclosure.absorptance_frac * flux / H_OUT_W_M2K


def ground_temperature_c(year: TypicalYear, enclosure: Enclosure) -> np.ndarray:
    """Hourly soil temperature at the enclosure's depth (Kusuda & Achenbach 1965).

    Driven by the first annual harmonic of the air temperature plus
    ``surface_offset_k``; time is days since 1 January 00:00 at mid-hour.
    """
    mean, amplitude, day_min = ground.annual_harmonic(year.temp_air_c)
    t_days = (np.arange(HOURS_PER_YEAR) + 0.5) / 24.0
    return ground.kusuda_achenbach_temp_c(
        enclosure.depth_m, t_days, mean_surface_temp_c=float(mean) + enclosure.surface_offset_k,
        amplitude_k=float(amplitude), day_of_minimum=float(day_min),
        diffusivity_m2_day=enclosure.soil_diffusivity_m2_day)


def equilibrium_temp_c(year: TypicalYear, enclosure: Enclosure, internal_heat_w=0.0,
                       flux_w=None):
    """Free equilibrium temperature T_drive + (Q_solar + Q_internal) / UA, degC (8760,).

    ``flux_w``: the enclosure's area-weighted irradiance when already computed
    (:func:`enclosure_flux_many_w`); otherwise :func:`solar_gain_w` computes it.
    """
    ua = enclosure.total_ua_w_k
    drive = year.temp_air_c * (enclosure.ua_w_k / ua)
    if enclosure.ground_ua_w_k > 0:
        drive = drive + ground_temperature_c(year, enclosure) * (enclosure.ground_ua_w_k / ua)
    gain = solar_gain_w(year, enclosure) if flux_w is None else _gain_from_flux(flux_w, enclosure)
    gain = gain + np.asarray(internal_heat_w, float)
    return drive + gain / ua


def _gain_from_flux(flux_w, enclosure: Enclosure) -> np.ndarray:
    """Sol-air heat gain from the area-weighted irradiance (see :func:`solar_gain_w`)."""
    area = enclosure.area_top_m2 + 4.0 * enclosure.area_wall_m2
    if area <= 0 or enclosure.absorptance_frac <= 0:
        return np.zeros(HOURS_PER_YEAR)
    return enclosure.ua_w_k / area * enclosure.absorptance_frac * flux_w / H_OUT_W_M2K


# --------------------------------------------------------------------------- public API

@dataclasses.dataclass
class BatteryThermal:
    """Hourly battery temperature and the energy spent on keeping it in range.

    Attributes
    ----------
    temp_battery_c : (8760,) hour-mean battery temperature, degC.
    heater_power_w : (8760,) electric power of the battery heater, W (= Wh drawn from
        the battery each hour; the energy balance must subtract it).
    hvac_power_w : (8760,) electric power of shelter heating and cooling, W.
    enclosure : Enclosure
        The parameters used.
    solar_gain_w : (8760,) solar heat into the enclosure, W.
    """

    temp_battery_c: np.ndarray
    heater_power_w: np.ndarray
    hvac_power_w: np.ndarray
    enclosure: Enclosure
    solar_gain_w: np.ndarray


@dataclasses.dataclass
class FleetThermal:
    """:func:`battery_temperature_fleet` output; arrays shaped (8760, n_sites)."""

    temp_battery_c: np.ndarray
    heater_power_w: np.ndarray
    hvac_power_w: np.ndarray
    enclosures: list


def battery_temperature_fleet(years: Sequence[TypicalYear], enclosures: Sequence, *,
                              internal_heat_w=0.0, heater_setpoint_c=None,
                              heater_power_w=DEFAULT_HEATER_POWER_W,
                              overrides: Sequence[dict | None] | None = None) -> FleetThermal:
    """Battery temperature for many sites at once (vectorised across sites).

    Parameters
    ----------
    years : sequence of n TypicalYear
        One climate per site (the same object may repeat; drives are cached).
    enclosures : sequence of n kind ids or Enclosure
    internal_heat_w : float, (n,) or (8760, n) array
        Heat released inside the enclosure (electronics, battery losses), W.
    heater_setpoint_c : None, float or (n,) array
        Battery-heater thermostat per site; NaN or None = no heater.
    heater_power_w : float or (n,) array
        Heater electric (= thermal, resistive) power, W.
    overrides : sequence of n dicts, optional
        Per-site enclosure overrides (see :func:`get_enclosure`).

    Returns
    -------
    FleetThermal
    """
    n = len(years)
    if len(enclosures) != n:
        raise ValueError("years and enclosures must have the same length")
    overrides = overrides or [None] * n
    encl = [get_enclosure(k, o) for k, o in zip(enclosures, overrides)]
    ua = np.array([e.total_ua_w_k for e in encl])
    # Sites sharing a climate and an enclosure share their drive: build each once.
    groups: dict = {}
    inverse = np.empty(n, dtype=np.intp)
    for j in range(n):
        inverse[j] = groups.setdefault((id(years[j]), encl[j]), len(groups))
    drives = np.empty((HOURS_PER_YEAR, len(groups)))
    first = {g: j for j, g in reversed(list(enumerate(inverse.tolist())))}
    # Sites with their own sun: the enclosures' irradiance of all of them in one pass.
    own = [g for g in range(len(groups)) if years[first[g]].sun is not None]
    flux = {}
    for start in range(0, len(own), FLUX_BLOCK_SITES):
        part = own[start:start + FLUX_BLOCK_SITES]
        block = enclosure_flux_many_w([years[first[g]] for g in part], [encl[first[g]] for g in part])
        flux.update({g: block[:, c] for c, g in enumerate(part)})
    for (_, e), g in groups.items():
        drives[:, g] = equilibrium_temp_c(years[first[g]], e, flux_w=flux.get(g))
    temp_eq = drives[:, inverse]
    internal = np.asarray(internal_heat_w, dtype=float)
    if not np.all(np.isfinite(internal)) or np.any(internal < 0) or np.any(internal > 1e6):
        raise InputError("internal_heat_w has a value outside 0...1e6 W or not a number; "
                         "expected heat released in the enclosure, W", source="thermal")
    setpoints = None if heater_setpoint_c is None else np.asarray(heater_setpoint_c, float)
    if setpoints is not None and np.any(np.abs(setpoints[~np.isnan(setpoints)]) > 40.0):
        raise InputError("heater_setpoint_c has a value outside -40...40 degC; expected a "
                         "battery heater thermostat setpoint (NaN for no heater)",
                         source="thermal")
    temp_eq += (internal / ua) if internal.ndim < 2 else internal / ua[None, :]
    tau = np.array([e.tau_h for e in encl])
    heat_sp = np.array([np.nan if e.hvac_heat_setpoint_c is None else e.hvac_heat_setpoint_c
                        for e in encl])
    cool_sp = np.array([np.nan if e.hvac_cool_setpoint_c is None else e.hvac_cool_setpoint_c
                        for e in encl])
    result = simulate_lumped(
        temp_eq, tau, ua_w_k=ua, heater_setpoint_c=heater_setpoint_c,
        heater_max_w=heater_power_w, heat_setpoint_c=heat_sp,
        heat_max_w=np.array([e.hvac_heat_capacity_w for e in encl]), cool_setpoint_c=cool_sp,
        cool_max_w=np.array([e.hvac_cool_capacity_w for e in encl]))
    heat_cop = np.array([e.hvac_heat_cop for e in encl])
    cool_cop = np.array([e.hvac_cool_cop for e in encl])
    hvac = result.heat_w
    hvac /= heat_cop
    hvac += result.cool_w / cool_cop
    return FleetThermal(result.temp_mean_c, result.heater_w, hvac, encl)


def battery_temperature(year: TypicalYear, enclosure: str = "cabinet-sun", *,
                        internal_heat_w: float | np.ndarray = 0.0,
                        heater_setpoint_c: float | None = None,
                        heater_power_w: float = DEFAULT_HEATER_POWER_W,
                        overrides: dict | None = None) -> BatteryThermal:
    """Hourly battery temperature at one site for a typical year.

    Parameters
    ----------
    year : TypicalYear
    enclosure : str
        One of :data:`ENCLOSURE_KINDS` (default ``cabinet-sun``).
    internal_heat_w : float or (8760,) array
        Heat released inside the enclosure (electronics, battery losses), W.
    heater_setpoint_c : float, optional
        Battery-heater thermostat setpoint, degC (None: no heater).
    heater_power_w : float
        Heater power, W (default 50 W, from memory).
    overrides : dict, optional
        Enclosure parameter overrides (see :func:`get_enclosure`).

    Returns
    -------
    BatteryThermal
    """
    encl = get_enclosure(enclosure, overrides)
    heat = np.asarray(internal_heat_w, dtype=float)
    if heat.ndim == 1:
        if heat.shape != (HOURS_PER_YEAR,):
            raise InputError(f"internal_heat_w has {heat.size} values; expected 1 or 8760",
                             source="thermal")
        heat = heat[:, None]
    if heater_setpoint_c is not None:
        if not -40.0 <= float(heater_setpoint_c) <= 40.0:
            raise InputError(f"heater_setpoint_c is {heater_setpoint_c!r}; expected -40 to 40 "
                             "degC", source="thermal")
        if not 0.0 <= float(heater_power_w) <= 1e5:
            raise InputError(f"heater_power_w is {heater_power_w!r}; expected 0 to 100000 W",
                             source="thermal")
    fleet = battery_temperature_fleet(
        [year], [encl], internal_heat_w=heat if heat.ndim == 2 else float(heat),
        heater_setpoint_c=None if heater_setpoint_c is None else float(heater_setpoint_c),
        heater_power_w=float(heater_power_w))
    return BatteryThermal(fleet.temp_battery_c[:, 0], fleet.heater_power_w[:, 0],
                          fleet.hvac_power_w[:, 0], encl, solar_gain_w(year, encl))


__all__ = ["battery_temperature", "battery_temperature_fleet", "BatteryThermal",
           "FleetThermal", "solar_gain_w", "surface_irradiance_w_m2", "ground_temperature_c",
           "equilibrium_temp_c", "DEFAULT_HEATER_POWER_W"]
