"""Enclosure kinds and their thermal parameters, for :mod:`planner.thermal.battery`.

Cabinet in sun or shade, buried vault, equipment shelter: each with documented
defaults (sources in ``Enclosure.sources``) and checked per-site overrides.
"""

from __future__ import annotations

import dataclasses
import difflib

from planner.errors import InputError
from planner.thermal import ground

#: Absorptance of light and dark finishes: ASHRAE alpha/h_o = 0.026 (light) and 0.052
#: (dark) m2K/W times h_o = 17 W/m2K (from memory).
ABSORPTANCE = {"light": 0.45, "dark": 0.90}


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


__all__ = ["ENCLOSURE_KINDS", "Enclosure", "get_enclosure"]
