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
  depth (Kusuda & Achenbach 1965, :mod:`planner.ground`) and the air above the lid;
* equipment shelter: as a cabinet, plus heating and cooling to setpoints;
* an optional battery heater with a thermostat.

Over each hour the drive and heat inputs are constant, so the model is solved
exactly: with e = exp(-dt/tau), tau = C/UA and T_eq = T_drive + Q/UA,

    T(end)  = T_eq + (T(start) - T_eq) e
    T(mean) = T_eq + (T(start) - T_eq) (tau/dt) (1 - e)

(the solution of a linear first-order ODE with constant input). Thermostats choose
the constant power, within their capacity, that brings the end-of-hour temperature
to the setpoint. The year starts from its periodic state: the last hours of the year
(25 time constants) are run first as a warm-up. Reported temperatures are hour means.

Everything is vectorised across sites: arrays are shaped (8760, n_sites) and the
only Python loop runs over the 8,760 hours (:func:`simulate_lumped`).
"""

from __future__ import annotations

import dataclasses
import difflib
from typing import Sequence

import numpy as np

from planner import _thermal_kernels as _tk
from planner import ground
from planner.climate import HOURS_PER_YEAR, TypicalYear
from planner.errors import InputError

#: Exterior surface film coefficient, W/m2K: ASHRAE Handbook-Fundamentals sol-air
#: temperature, h_o = 17 W/m2K (3.0 Btu/h.ft2.F) for summer design (from memory).
H_OUT_W_M2K = 17.0
#: Absorptance of light and dark finishes: ASHRAE alpha/h_o = 0.026 (light) and 0.052
#: (dark) m2K/W times h_o = 17 W/m2K (from memory).
ABSORPTANCE = {"light": 0.45, "dark": 0.90}
#: Ground albedo for the reflected part of wall irradiance (common practice 0.2).
ALBEDO_FRAC = 0.2
#: Default electric power of a battery heater pad, W (from memory: pads for
#: 100-200 Ah packs are typically 20-100 W).
DEFAULT_HEATER_POWER_W = 50.0
#: Warm-up length in time constants for the periodic start (e^-25 ~ 1e-11).
WARM_UP_TAUS = 25.0


@dataclasses.dataclass(frozen=True)
class Enclosure:
    """Thermal parameters of one enclosure kind (all SI, units in names).

    ``area_wall_m2`` is the area of each of four vertical walls, the first facing
    ``azimuth_deg`` (180 = south) and the others at +90, +180, +270 degrees.
    ``ua_w_k`` is the conductance to outside air; ``ground_ua_w_k`` the conductance to
    the soil at ``depth_m`` (vaults). Setpoints ``None`` mean no HVAC.
    """

    kind: str
    description: str
    ua_w_k: float
    thermal_mass_j_k: float
    absorptance_frac: float
    area_top_m2: float
    area_wall_m2: float
    azimuth_deg: float = 180.0
    beam_shading_frac: float = 0.0
    sky_view_frac: float = 1.0
    ground_ua_w_k: float = 0.0
    depth_m: float = 0.0
    soil_diffusivity_m2_day: float = ground.SOIL_DIFFUSIVITY_M2_DAY
    surface_offset_k: float = 0.0
    hvac_heat_setpoint_c: float | None = None
    hvac_cool_setpoint_c: float | None = None
    hvac_heat_capacity_w: float = 0.0
    hvac_cool_capacity_w: float = 0.0
    hvac_heat_cop: float = 1.0
    hvac_cool_cop: float = 3.0
    sources: tuple = ()

    @property
    def total_ua_w_k(self) -> float:
        return self.ua_w_k + self.ground_ua_w_k

    @property
    def tau_h(self) -> float:
        """Time constant C / UA, hours."""
        return self.thermal_mass_j_k / self.total_ua_w_k / 3600.0

    def to_dict(self) -> dict:
        out = dataclasses.asdict(self)
        out["sources"] = dict(self.sources)
        out["tau_h"] = self.tau_h
        return out


_CABINET_SOURCES = (
    ("ua_w_k", "from memory: uninsulated metal cabinet, U = 1/(1/17 + 1/8.3) = 5.6 W/m2K "
               "(ASHRAE exterior and still-air interior film coefficients) x 2.5 m2, plus vents"),
    ("thermal_mass_j_k", "from memory: 60 kg battery x ~900 J/kgK + 35 kg steel x 480 J/kgK"),
    ("absorptance_frac", "ASHRAE sol-air alpha/h_o = 0.026 m2K/W for light finishes x 17 "
                         "(from memory); use overrides {'finish': 'dark'} for 0.90"),
    ("area_top_m2", "from memory: 0.6 x 0.5 x 1.0 m pole- or plinth-mounted cabinet"),
    ("area_wall_m2", "from memory: mean wall of a 0.6 x 0.5 x 1.0 m cabinet"),
)

#: Enclosure kinds with documented defaults; ``cabinet-sun`` is the default kind.
ENCLOSURE_KINDS: dict[str, Enclosure] = {
    "cabinet-sun": Enclosure(
        kind="cabinet-sun",
        description="light-coloured metal cabinet in full sun (pole or plinth mounted)",
        ua_w_k=15.0, thermal_mass_j_k=8.0e4, absorptance_frac=0.45, area_top_m2=0.30,
        area_wall_m2=0.55, sources=_CABINET_SOURCES + (
            ("beam_shading_frac", "0: no shading"),)),
    "cabinet-shade": Enclosure(
        kind="cabinet-shade",
        description="the same cabinet under a sun shield or canopy (no direct sun, half the sky)",
        ua_w_k=15.0, thermal_mass_j_k=8.0e4, absorptance_frac=0.45, area_top_m2=0.30,
        area_wall_m2=0.55, beam_shading_frac=1.0, sky_view_frac=0.5,
        sources=_CABINET_SOURCES + (
            ("beam_shading_frac", "1.0: a shield blocks direct sun (common practice)"),
            ("sky_view_frac", "0.5: a canopy hides about half the sky (from memory)"))),
    "vault": Enclosure(
        kind="vault",
        description="buried precast vault, battery about 1 m below ground, lid at grade",
        ua_w_k=1.5, thermal_mass_j_k=3.0e5, absorptance_frac=0.0, area_top_m2=0.0,
        area_wall_m2=0.0, ground_ua_w_k=10.0, depth_m=1.0,
        sources=(
            ("ua_w_k", "from memory: insulated lid of about 0.4 m2 to outside air"),
            ("ground_ua_w_k", "from memory: ~4 m2 of concrete wall and floor in contact with "
                              "soil (soil conductivity ~1.5 W/mK over ~0.5 m)"),
            ("thermal_mass_j_k", "from memory: battery plus inner concrete layer"),
            ("depth_m", "from memory: typical hand-hole/vault battery depth"),
            ("soil_diffusivity_m2_day", "from memory: moist mineral soil, 5e-7 m2/s"),
            ("absorptance_frac", "0: sun on the lid is absorbed by the ground surface"))),
    "shelter": Enclosure(
        kind="shelter",
        description="insulated walk-in equipment shelter, heated and air-conditioned",
        ua_w_k=25.0, thermal_mass_j_k=8.0e5, absorptance_frac=0.30, area_top_m2=7.5,
        area_wall_m2=6.9, hvac_heat_setpoint_c=10.0, hvac_cool_setpoint_c=27.0,
        hvac_heat_capacity_w=2000.0, hvac_cool_capacity_w=3500.0, hvac_heat_cop=1.0,
        hvac_cool_cop=2.8,
        sources=(
            ("ua_w_k", "from memory: 3 x 2.5 x 2.5 m shelter, 35 m2 x U 0.5 W/m2K sandwich "
                       "panel + 0.5 air changes per hour"),
            ("thermal_mass_j_k", "from memory: batteries, racks and equipment, ~1 t"),
            ("absorptance_frac", "from memory: white or light-grey shelter skin"),
            ("hvac_heat_setpoint_c", "common practice: keep batteries and electronics above "
                                     "~10 degC"),
            ("hvac_cool_setpoint_c", "common practice: cooling set around 25-27 degC in "
                                     "equipment shelters"),
            ("hvac_heat_cop", "1.0: resistance heater"),
            ("hvac_cool_cop", "from memory: small wall-mounted air conditioner, COP ~2.5-3"),
            ("hvac_heat_capacity_w", "from memory"), ("hvac_cool_capacity_w", "from memory"))),
}

_OVERRIDABLE = tuple(f.name for f in dataclasses.fields(Enclosure)
                     if f.name not in ("kind", "description", "sources"))
_BOUNDS = {
    "ua_w_k": (0.0, 1e4), "thermal_mass_j_k": (1e3, 1e9), "absorptance_frac": (0.0, 1.0),
    "area_top_m2": (0.0, 500.0), "area_wall_m2": (0.0, 500.0), "azimuth_deg": (0.0, 360.0),
    "beam_shading_frac": (0.0, 1.0), "sky_view_frac": (0.0, 1.0), "ground_ua_w_k": (0.0, 1e4),
    "depth_m": (0.0, 20.0), "soil_diffusivity_m2_day": (1e-3, 1.0),
    "surface_offset_k": (-10.0, 10.0), "hvac_heat_setpoint_c": (-40.0, 40.0),
    "hvac_cool_setpoint_c": (0.0, 60.0), "hvac_heat_capacity_w": (0.0, 1e6),
    "hvac_cool_capacity_w": (0.0, 1e6), "hvac_heat_cop": (0.5, 10.0),
    "hvac_cool_cop": (0.5, 10.0),
}


def get_enclosure(kind: str = "cabinet-sun", overrides: dict | None = None) -> Enclosure:
    """An enclosure kind's defaults, with ``overrides`` (checked) applied.

    ``overrides`` keys are :class:`Enclosure` fields, plus ``finish`` ('light' or
    'dark') as a shorthand for ``absorptance_frac``. Unknown kinds or keys and
    out-of-range values raise :class:`InputError`.
    """
    if isinstance(kind, Enclosure):
        base = kind
    elif kind not in ENCLOSURE_KINDS:
        close = difflib.get_close_matches(str(kind), list(ENCLOSURE_KINDS), n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise InputError(f"enclosure is {kind!r}; expected one of "
                         f"{', '.join(ENCLOSURE_KINDS)}{hint}", source="enclosure")
    else:
        base = ENCLOSURE_KINDS[kind]
    if not overrides:
        return base
    changes = {}
    for key, value in overrides.items():
        if key == "finish":
            if value not in ABSORPTANCE:
                raise InputError(f"finish is {value!r}; expected 'light' or 'dark'",
                                 source="enclosure")
            changes["absorptance_frac"] = ABSORPTANCE[value]
            continue
        if key not in _OVERRIDABLE:
            close = difflib.get_close_matches(str(key), list(_OVERRIDABLE) + ["finish"], n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise InputError(f"unknown enclosure parameter '{key}'{hint}", source="enclosure")
        if value is None and key.startswith("hvac_") and key.endswith("setpoint_c"):
            changes[key] = None
            continue
        lo, hi = _BOUNDS[key]
        try:
            number = float(value)
        except (TypeError, ValueError):
            number = float("nan")
        if isinstance(value, bool) or not lo <= number <= hi:
            raise InputError(f"enclosure parameter '{key}' is {value!r}; expected a number from "
                             f"{lo:g} to {hi:g}", source="enclosure")
        changes[key] = number
    result = dataclasses.replace(base, **changes)
    if result.total_ua_w_k <= 0:
        raise InputError("enclosure conductance ua_w_k + ground_ua_w_k is 0; expected > 0",
                         source="enclosure")
    return result


# --------------------------------------------------------------------------- core solver

@dataclasses.dataclass
class LumpedResult:
    """Output of :func:`simulate_lumped`; arrays shaped like ``temp_eq_c``.

    ``temp_mean_c``: hour-mean temperature; ``temp_end_c``: temperature at hour end;
    ``heater_w``, ``heat_w``, ``cool_w``: constant thermal power over each hour of the
    battery heater, the HVAC heating and the HVAC cooling (W, = Wh per hour).
    """

    temp_mean_c: np.ndarray
    temp_end_c: np.ndarray
    heater_w: np.ndarray
    heat_w: np.ndarray
    cool_w: np.ndarray


def _per_lane(value, n, default=np.nan) -> np.ndarray:
    if value is None:
        return np.full(n, default)
    arr = np.asarray(value, dtype=float)
    return np.broadcast_to(arr, (n,)).astype(float) if arr.ndim <= 1 else arr


def simulate_lumped(temp_eq_c: np.ndarray, tau_h, *, ua_w_k=1.0, initial_c=None,
                    heater_setpoint_c=None, heater_max_w=None, heat_setpoint_c=None,
                    heat_max_w=None, cool_setpoint_c=None, cool_max_w=None,
                    dt_h: float = 1.0) -> LumpedResult:
    """Exact hourly solution of ``C dT/dt = UA (T_eq - T) + P_thermostats``.

    Parameters
    ----------
    temp_eq_c : (hours,) or (hours, n) array
        Free equilibrium temperature per hour, T_drive + Q/UA, degC (constant over
        each hour).
    tau_h : float or (n,) array
        Time constant C/UA, hours.
    ua_w_k : float or (n,) array
        Conductance, W/K (converts thermostat powers to temperature shifts).
    initial_c : float or (n,) array, optional
        Temperature at the start of hour 0. Default: the periodic state (the series
        repeats): exact in closed form for lanes without thermostats; for lanes with
        thermostats, from a warm-up over the last 25 time constants of the series
        (error below e^-25, about 1e-11, of the initial mismatch).
    heater_setpoint_c, heat_setpoint_c : float or (n,) array, optional
        Thermostat setpoints of the battery heater and of HVAC heating (NaN = none).
    heater_max_w, heat_max_w, cool_max_w : float or (n,) array
        Thermal capacity of each source, W.
    cool_setpoint_c : float or (n,) array, optional
        HVAC cooling setpoint (NaN = none).
    dt_h : float
        Step, hours.

    Returns
    -------
    LumpedResult

    Notes
    -----
    Exact solution of the linear first-order ODE with constant input over a step
    (any heat-transfer text, e.g. Incropera & DeWitt, Fundamentals of Heat and Mass
    Transfer, lumped capacitance, eq. 5.6): T_end = T_eq + (T_0 - T_eq) e^(-dt/tau);
    the hour mean is the integral of that exponential over the step.
    """
    temp_eq = np.asarray(temp_eq_c, dtype=float)
    squeeze = temp_eq.ndim == 1
    if squeeze:
        temp_eq = temp_eq[:, None]
    hours, n = temp_eq.shape
    tau = _per_lane(tau_h, n)
    if np.any(~(tau > 0)):
        raise ValueError("tau_h must be positive")
    ua = _per_lane(ua_w_k, n)
    initial = None if initial_c is None else _per_lane(initial_c, n)
    thermostats = []
    active = np.zeros(n, dtype=bool)
    for name, sp, cap, sign in (("heat", heat_setpoint_c, heat_max_w, 1.0),
                                ("heater", heater_setpoint_c, heater_max_w, 1.0),
                                ("cool", cool_setpoint_c, cool_max_w, -1.0)):
        sp_arr = _per_lane(sp, n)
        has = ~np.isnan(sp_arr)
        if not has.any():
            continue
        cap_arr = np.where(has, _per_lane(cap, n, default=np.inf), 0.0)
        has &= cap_arr > 0
        active |= has
        thermostats.append((name, np.nan_to_num(sp_arr, nan=0.0), cap_arr, sign))

    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = {name: np.zeros((hours, n)) for name in ("heat", "heater", "cool")}
    # Lanes without a working thermostat are linear: exact periodic closed form.
    if not active.any():
        out_mean, out_end = _linear_lanes(temp_eq, tau, initial, dt_h)
    elif not active.all():
        lanes = np.nonzero(~active)[0]
        x0 = None if initial is None else initial[lanes]
        out_mean[:, lanes], out_end[:, lanes] = _linear_lanes(
            np.ascontiguousarray(temp_eq[:, lanes]), tau[lanes], x0, dt_h)
    lanes = np.nonzero(active)[0]
    if len(lanes) == n:
        temp_eq = np.ascontiguousarray(temp_eq)
        out_mean, out_end, powers = _thermostat_lanes(temp_eq, tau, ua, thermostats, initial,
                                                      dt_h)
        out_p.update(powers)
    elif len(lanes):
        x0 = None if initial is None else initial[lanes]
        subset = [(name, sp[lanes], cap[lanes], sign) for name, sp, cap, sign in thermostats]
        mean, end_, powers = _thermostat_lanes(np.ascontiguousarray(temp_eq[:, lanes]),
                                               tau[lanes], ua[lanes], subset, x0, dt_h)
        out_mean[:, lanes], out_end[:, lanes] = mean, end_
        for name, power in powers.items():
            out_p[name][:, lanes] = power
    result = LumpedResult(out_mean, out_end, out_p["heater"], out_p["heat"], out_p["cool"])
    if squeeze:
        result = LumpedResult(*(a[:, 0] for a in dataclasses.astuple(result)))
    return result


def _linear_lanes(temp_eq, tau_h, initial, dt_h):
    """Exact response of lanes without thermostats (per-lane time constants).

    End-of-hour states follow x[k] = e x[k-1] + (1 - e) T_eq[k] (a first-order
    recursion). The periodic start follows from superposition: a first pass from
    x = 0 ends at y, and x0 = y / (1 - e^hours) repeats exactly after a year.
    Row-by-row passes (two per year) were measured faster here than
    ``scipy.signal.lfilter`` along the hour axis, which strides across memory.
    """
    hours, n = temp_eq.shape
    decay = np.exp(-dt_h / tau_h)
    one_minus = 1.0 - decay
    mean_weight = tau_h / dt_h * one_minus
    if _tk.LINEAR is not None:
        # the same operations compiled (same numbers): no per-hour array overhead
        if initial is None:
            x = np.zeros(n)
            _tk.LINEAR(temp_eq, decay, one_minus, mean_weight, x, _NO_OUT, _NO_OUT, False)
            initial = x / (1.0 - decay ** hours)
        x = np.array(initial, dtype=float)
        out_mean = np.empty((hours, n))
        out_end = np.empty((hours, n))
        _tk.LINEAR(temp_eq, decay, one_minus, mean_weight, x, out_mean, out_end, True)
        return out_mean, out_end
    if initial is None:
        x = np.zeros(n)
        for k in range(hours):
            x *= decay
            x += one_minus * temp_eq[k]
        initial = x / (1.0 - decay ** hours)
    x = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    offset = np.empty(n)
    for k in range(hours):   # vectorised across lanes; the hour loop is inherent
        row = temp_eq[k]
        np.subtract(x, row, out=offset)
        np.multiply(offset, mean_weight, out=out_mean[k])
        out_mean[k] += row
        np.multiply(offset, decay, out=x)
        x += row
        out_end[k] = x
    return out_mean, out_end


def _thermostat_lanes(temp_eq, tau, ua, thermostats, initial, dt_h):
    """Hour-by-hour exact steps for lanes with thermostats (vectorised across lanes)."""
    hours, n = temp_eq.shape
    decay = np.exp(-dt_h / tau)
    one_minus = 1.0 - decay
    mean_weight = tau / dt_h * one_minus
    # Pre-computed so each step is a few in-place array operations: the power that
    # brings the end-of-hour state to setpoint s is sign*ua*((s - x0 e)/(1 - e) - T_eq).
    prepared = [(name, sp / one_minus, decay / one_minus, cap, ua * sign, sign / ua)
                for name, sp, cap, sign in thermostats]
    eq = np.empty(n)
    work = np.empty(n)

    def step(x0, eq_row, powers):
        np.copyto(eq, eq_row)
        for (name, a, b, cap, ua_sign, sign_per_ua), power in zip(prepared, powers):
            np.multiply(x0, b, out=work)
            np.subtract(a, work, out=work)
            np.subtract(work, eq, out=work)
            np.multiply(work, ua_sign, out=work)
            np.maximum(work, 0.0, out=power)
            np.minimum(power, cap, out=power)
            np.multiply(power, sign_per_ua, out=work)
            np.add(eq, work, out=eq)
        np.subtract(x0, eq, out=work)                 # offset from the equilibrium
        mean = eq + work * mean_weight
        return eq + work * decay, mean

    if _tk.THERMOSTAT is not None:
        return _thermostat_compiled(temp_eq, decay, mean_weight, prepared, initial, tau, dt_h)
    scratch = [np.empty(n) for _ in prepared]
    if initial is None:
        warm = int(min(hours, np.ceil(WARM_UP_TAUS * tau.max() / dt_h)))
        state = temp_eq[hours - warm].copy()
        for k in range(hours - warm, hours):
            state = step(state, temp_eq[k], scratch)[0]
    else:
        state = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = [np.empty((hours, n)) for _ in prepared]
    for k in range(hours):   # vectorised across lanes; the hour loop is inherent
        state, out_mean[k] = step(state, temp_eq[k], [store[k] for store in out_p])
        out_end[k] = state
    return out_mean, out_end, {p[0]: store for p, store in zip(prepared, out_p)}


def _thermostat_compiled(temp_eq, decay, mean_weight, prepared, initial, tau, dt_h):
    """:func:`_thermostat_lanes` with its hour loop compiled (the same operations)."""
    hours, n = temp_eq.shape
    # (thermostats, lanes) arrays of the prepared terms a, b, cap, ua_sign, sign_per_ua
    a, b, cap, ua_sign, sign_per_ua = (
        np.stack([np.broadcast_to(np.asarray(p[i], dtype=float), (n,)) for p in prepared])
        for i in range(1, 6))
    temp_eq = np.ascontiguousarray(temp_eq)
    if initial is None:
        warm = int(min(hours, np.ceil(WARM_UP_TAUS * tau.max() / dt_h)))
        state = temp_eq[hours - warm].copy()
        _tk.THERMOSTAT(temp_eq, hours - warm, hours, decay, mean_weight, a, b, cap, ua_sign,
                       sign_per_ua, state, _NO_OUT, _NO_OUT, _NO_OUT3, False)
    else:
        state = np.array(initial, dtype=float)
    out_mean = np.empty((hours, n))
    out_end = np.empty((hours, n))
    out_p = np.empty((len(prepared), hours, n))
    _tk.THERMOSTAT(temp_eq, 0, hours, decay, mean_weight, a, b, cap, ua_sign, sign_per_ua,
                   state, out_mean, out_end, out_p, True)
    return out_mean, out_end, {p[0]: out_p[t] for t, p in enumerate(prepared)}


_NO_OUT = np.zeros((0, 0))
_NO_OUT3 = np.zeros((0, 0, 0))


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
    from planner.climate.readers import solar_geometry

    sun = solar_geometry(year.latitude_deg, year.longitude_deg, year.altitude_m,
                         year.utc_offset_h)
    parts = pvlib.irradiance.get_total_irradiance(
        tilt_deg, azimuth_deg, sun["apparent_zenith"].to_numpy(), sun["azimuth"].to_numpy(),
        year.dni_w_m2, year.ghi_w_m2, year.dhi_w_m2, albedo=ALBEDO_FRAC, model="isotropic")
    beam = np.nan_to_num(np.asarray(parts["poa_direct"], float))
    sky = np.nan_to_num(np.asarray(parts["poa_sky_diffuse"], float))
    grd = np.nan_to_num(np.asarray(parts["poa_ground_diffuse"], float))
    return np.maximum(beam * (1.0 - beam_shading_frac) + sky * sky_view_frac + grd, 0.0)


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


def equilibrium_temp_c(year: TypicalYear, enclosure: Enclosure, internal_heat_w=0.0):
    """Free equilibrium temperature T_drive + (Q_solar + Q_internal) / UA, degC (8760,)."""
    ua = enclosure.total_ua_w_k
    drive = year.temp_air_c * (enclosure.ua_w_k / ua)
    if enclosure.ground_ua_w_k > 0:
        drive = drive + ground_temperature_c(year, enclosure) * (enclosure.ground_ua_w_k / ua)
    gain = solar_gain_w(year, enclosure) + np.asarray(internal_heat_w, float)
    return drive + gain / ua


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
    for (_, e), g in groups.items():
        j = int(np.argmax(inverse == g))
        drives[:, g] = equilibrium_temp_c(years[j], e)
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


__all__ = ["ENCLOSURE_KINDS", "Enclosure", "get_enclosure", "battery_temperature",
           "battery_temperature_fleet", "simulate_lumped", "LumpedResult", "BatteryThermal",
           "FleetThermal", "solar_gain_w", "surface_irradiance_w_m2", "ground_temperature_c",
           "equilibrium_temp_c", "DEFAULT_HEATER_POWER_W"]
