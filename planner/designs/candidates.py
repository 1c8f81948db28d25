"""Candidate packs for every site: what each design is and what it must do.

For each site and chemistry this module sizes the 1x reference pack (IEEE 1013 /
IEEE 1562 chain) and turns every oversizing factor and charge voltage into a concrete
whole-cell pack; :mod:`planner.designs.evaluation` runs the hourly energy balance for all
of them at once, ages them over the horizon, and reads off when each can no longer
carry its site. A pack can carry its site while

    capacity_wh x SOH x window(charge voltage) x available(coldest battery temp)
        >= daily load x days of autonomy

where ``window = usable_fraction(V) - (1 - max_dod)`` is the part of rated capacity
between the charge-voltage ceiling and the low-voltage reserve. The SOH at which the
inequality turns is the design's end-of-life threshold; it is higher (earlier) for a
smaller pack, a lower charge voltage or a colder site. Whatever the threshold, a pack is
not kept below its chemistry's worn-out SOH (here) nor beyond what its other components
and the study's ceiling allow (:mod:`planner.designs.service`).
"""

from __future__ import annotations

import copy
import functools
import math
from dataclasses import dataclass, field

import numpy as np

from planner.chemistry import Chemistry, get_chemistry
from planner.energy.sizing import (
    ReferenceSize,
    lead_acid_sizing_temperature_factor,
    reference_capacity,
    temperature_factor_from_derating,
)
from planner.pack.structure import PackStructure, pack_structure, series_count, whole_strings
from planner.site.model import SiteModel
from planner.study.loading import Study

# A chemistry is not offered where the battery spends more than this many hours a year
# above its upper temperature limit (1 % of the year; a few hot afternoons only warn).
HOT_HOURS_ALLOWED = 88
# Primary cells are a candidate only for small loads: bobbin Li-SOCl2 packs serve loggers
# drawing microwatts to about a tenth of a watt on average (common practice); above that the pack
# mass and price grow out of any sensible range.
PRIMARY_MAX_DAILY_LOAD_WH = 2.4
# Years of load a primary (non-rechargeable) pack is sized for, per "oversize" step.
PRIMARY_YEARS_OF_LOAD = (2.0, 5.0, 10.0, 15.0)


@dataclass(frozen=True)
class Design:
    """One concrete pack for one site (or the pack already installed there)."""

    site_index: int
    chemistry: str
    oversize_factor: float
    charge_voltage_v_per_cell: float
    pack: PackStructure
    reference: ReferenceSize | None
    existing_age_years: float | None = None
    measured_soh_frac: float | None = None
    service_life_years: float | None = None  # the study's ceiling ([service_life]); None: none
    thermal_measure: str = ""   # the thermal measure installed with it (planner.site.thermal_measures)
    install_years: tuple[int, int] | None = None  # its load step's install window (planner.designs.load_growth)
    # the study's candidate size that gave this pack (an oversize factor, or years of load for
    # primary cells); ``oversize_factor`` is the pack actually built over the 1x size, after
    # rounding to whole cells
    oversize_step: float | None = None

    @property
    def is_existing(self) -> bool:
        return self.existing_age_years is not None

    @property
    def design_id(self) -> str:
        if self.is_existing:
            return f"existing-{self.chemistry}"
        measure = f"+{self.thermal_measure}" if self.thermal_measure else ""
        step = f"@y{self.install_years[0]}" if self.install_years and self.install_years[0] > 0 else ""
        return (f"{self.chemistry}-{self.pack.label}-{self.charge_voltage_v_per_cell:.3f}v{measure}{step}")


@dataclass
class Outcome:
    """How one design fares at its site (all years from installation, or from now for an
    existing pack)."""

    design: Design
    eol_soh_frac: float
    life_years: float
    limiting_cause: str
    soh_monthly: np.ndarray
    calendar_loss_frac: np.ndarray
    cycle_loss_frac: np.ndarray
    efc_per_year: float
    unserved_wh_per_year: float
    charge_blocked_hours: float       # cold + hot
    mean_soc_frac: float
    life_p10_years: float = float("nan")
    life_p50_years: float = float("nan")
    life_p90_years: float = float("nan")
    failure_prob_by_age: tuple[float, ...] | None = None
    soh_p10_monthly: np.ndarray | None = None
    soh_p90_monthly: np.ndarray | None = None
    nominal_life_years: float = float("inf")
    knee_floor: bool = False                 # the end of life is the knee floor, not the load
    service_limit_years: float = float("inf")  # components and ceiling (planner.designs.service)
    component_lives: dict = field(default_factory=dict)   # component -> years (inf: never)
    imbalance_frac_per_year: float = 0.0     # capacity lost to cell imbalance each year
    condensation: str = ""                   # the site's condensation class
    dominated: bool = False
    far_from_best: bool = False
    charge_blocked_cold_hours: float = 0.0   # below the minimum charge temperature
    charge_blocked_hot_hours: float = 0.0    # above the maximum charge temperature
    # the pack in service only: calendar and cycle loss by month from its installation
    # (float32), which field records scale (planner.evidence)
    install_calendar_loss_frac: np.ndarray | None = None
    install_cycle_loss_frac: np.ndarray | None = None
    # the pack in service at a site whose load grows: (requirement share of rated
    # capacity, growth per year, years from now the growth starts to count)
    requirement_growth: tuple[float, float, float] | None = None


@dataclass
class SiteDesigns:
    """All designs of one site, and why chemistries were left out."""

    outcomes: list[Outcome]
    existing: Outcome | None
    excluded: dict[str, str]
    references: dict[str, ReferenceSize]
    # thermal measure id -> the site's model with it, for designs evaluated with a measure
    measure_models: dict = field(default_factory=dict)
    # chemistries whose packs were evaluated here; None: those of ``outcomes`` (set when
    # the outcomes are cut to the designs worth offering, planner.pipeline)
    tried: tuple[str, ...] | None = None

    def tried_chemistries(self) -> list[str]:
        """Chemistries with at least one evaluated pack at the site, sorted."""
        if self.tried is not None:
            return list(self.tried)
        return sorted({o.design.chemistry for o in self.outcomes})


# ---------------------------------------------------------------- enumeration


def requirement_wh(model: SiteModel) -> float:
    """Energy the pack must deliver with no charging: daily load x days of autonomy."""
    return model.daily_load_wh * model.site.autonomy_days


def window_frac(chem: Chemistry, charge_voltage_v_per_cell: float) -> float:
    """Usable part of rated capacity between the charge ceiling and the DOD reserve."""
    return usable_fraction(chem.id, float(charge_voltage_v_per_cell)) - (1.0 - chem.max_dod_frac)


@functools.lru_cache(maxsize=256)
def usable_fraction(chem_id: str, charge_voltage_v_per_cell: float) -> float:
    """The chemistry's usable fraction of rated capacity at this charge voltage, cached."""
    # A few charge voltages per chemistry, asked for every design of every site.
    return float(get_chemistry(chem_id).usable_fraction(charge_voltage_v_per_cell))


def _reference(study: Study, model: SiteModel, chem: Chemistry) -> ReferenceSize:
    cand = study.settings["candidates"]
    available = float(chem.available_capacity_fraction(model.design_temp_c))
    factor = (lead_acid_sizing_temperature_factor(model.design_temp_c, available,
                                                  cand.get("lead_acid_temperature_factor", "datasheet"))
              if chem.id == "vrla" else temperature_factor_from_derating(available))
    return reference_capacity(
        daily_load_wh=max(model.daily_load_wh, 1e-6), system_voltage_v=model.site.system_voltage_v,
        autonomy_days=model.site.autonomy_days, max_dod_frac=chem.max_dod_frac,
        temperature_factor=factor,
        aging_factor=cand["aging_factor"], design_margin=cand["design_margin"])


def _primary_reference(study: Study, model: SiteModel, chem: Chemistry) -> ReferenceSize:
    """A primary pack's 1x size holds one year of load (plus margins), not an autonomy."""
    cand = study.settings["candidates"]
    available = float(chem.available_capacity_fraction(model.design_temp_c))
    return reference_capacity(
        daily_load_wh=max(model.daily_load_wh, 1e-6), system_voltage_v=model.site.system_voltage_v,
        autonomy_days=365.0, max_dod_frac=chem.max_dod_frac,
        temperature_factor=temperature_factor_from_derating(available),
        aging_factor=1.0, design_margin=cand["design_margin"])


# Cell or monobloc capacities (Ah) a pack can be built from. Small telemetry packs are
# not built from the library's reference cell alone: catalogues offer ladders of sizes
# (common practice: VRLA monoblocs of 7-100 Ah, LFP prismatic and cylindrical cells of
# 6-100 Ah, NMC parallel groups of cylindrical cells, LTO cells of 10-40 Ah, Li-SOCl2
# AA/C/D bobbin cells of 2.4/8.5/19 Ah).
CELL_LADDER_AH = {
    "vrla": (7.0, 12.0, 18.0, 26.0, 40.0, 55.0, 75.0, 100.0),
    "lfp": (6.0, 10.0, 20.0, 50.0, 100.0),
    "nmc": (3.0, 10.0, 20.0, 50.0),
    "lto": (10.0, 20.0, 40.0),
    "lisocl2": (2.4, 8.5, 19.0),
}


def _pack(model: SiteModel, chem: Chemistry, capacity_wh: float) -> PackStructure:
    """The whole-cell pack closest above ``capacity_wh`` over the chemistry's cell ladder
    (ties go to fewer parallel strings)."""
    # a copy: every design keeps a pack object of its own, as without the cache
    return copy.copy(_ladder_pack(
        model.site.system_voltage_v, chem.id, chem.cell_capacity_ah, chem.cell_voltage_v,
        max(chem.charge_voltages_v_per_cell), chem.mass_kg_per_kwh, chem.volume_l_per_kwh,
        capacity_wh))


@functools.lru_cache(maxsize=1 << 16)
def _ladder_pack(system_voltage_v, chem_id, cell_capacity_ah, cell_voltage_v,
                 charge_voltage_v_per_cell, mass_kg_per_kwh, volume_l_per_kwh, capacity_wh):
    """:func:`_pack` for hashable inputs (sites of a fleet repeat the same sizes).

    Each rung of the ladder is scored by its whole-string count and capacity (the
    arithmetic of :func:`planner.pack.structure.pack_structure`); only the winner is built."""
    best = None
    n_s = series_count(system_voltage_v, cell_voltage_v, charge_voltage_v_per_cell)
    for cell_ah in CELL_LADDER_AH.get(chem_id, (cell_capacity_ah,)):
        n_p, pack_wh = whole_strings(capacity_wh, n_s, cell_voltage_v, cell_ah)
        key = (round(pack_wh, 6), n_p)
        if best is None or key < best[0]:
            best = (key, cell_ah)
    return pack_structure(system_voltage_v=system_voltage_v, required_capacity_wh=capacity_wh,
                          cell_voltage_v=cell_voltage_v, cell_capacity_ah=best[1],
                          charge_voltage_v_per_cell=charge_voltage_v_per_cell,
                          mass_kg_per_kwh=mass_kg_per_kwh, volume_l_per_kwh=volume_l_per_kwh)


#: Start of the reason a chemistry is left out when one of its cells is above the bus.
VOLTAGE_EXCLUSION = "system voltage"


def ruled_out_by_voltage(excluded: dict[str, str]) -> dict[str, str]:
    """The chemistries of ``excluded`` (id -> reason) left out for the system voltage."""
    return {chem: why for chem, why in excluded.items() if why.startswith(VOLTAGE_EXCLUSION)}


def _exclusion(model: SiteModel, chem: Chemistry) -> str:
    """Why a chemistry cannot serve a site at all, or an empty string."""
    site = model.site
    if site.system_voltage_v < chem.cell_voltage_v:
        # One cell alone is above the bus: no whole-cell pack fits (planner.study rejects
        # a system voltage below every candidate's cell).
        return (f"{VOLTAGE_EXCLUSION} {site.system_voltage_v:g} V is below one {chem.id} cell "
                f"({chem.cell_voltage_v:g} V)")
    if chem.rechargeable and site.charging == "none":
        return "no charging source on site, and the pack is rechargeable"
    if not chem.rechargeable and model.daily_load_wh > PRIMARY_MAX_DAILY_LOAD_WH:
        return (f"load of {model.daily_load_wh:.0f} Wh/day is above the "
                f"{PRIMARY_MAX_DAILY_LOAD_WH:g} Wh/day (0.1 W mean) primary cells are used for")
    if model.design_temp_c < chem.discharge_temp_min_c:
        return (f"battery reaches {model.design_temp_c:.1f} °C, below the {chem.discharge_temp_min_c:g} °C "
                "discharge limit")
    hot_hours = int(np.count_nonzero(model.temp_battery_c > chem.discharge_temp_max_c))
    if hot_hours > HOT_HOURS_ALLOWED:
        return (f"battery above the {chem.discharge_temp_max_c:g} °C limit for {hot_hours} h of a "
                "typical year")
    return ""


def enumerate_site_designs(study: Study, index: int, model: SiteModel):
    """Designs of one site: (designs, excluded chemistries with reasons, references)."""
    designs, excluded, references = [], {}, {}
    factors = study.settings["candidates"]["oversize_factors"]
    caps = study.settings.get("service_life", {})
    for chem_id in study.settings["candidates"]["chemistries"]:
        chem = get_chemistry(chem_id)
        reason = _exclusion(model, chem)
        if reason:
            excluded[chem_id] = reason
            continue
        if chem.rechargeable:
            reference = _reference(study, model, chem)
            steps = [(f, reference.capacity_wh * f) for f in factors]
        else:
            reference = _primary_reference(study, model, chem)
            steps = [(y, reference.capacity_wh * y) for y in PRIMARY_YEARS_OF_LOAD]
        references[chem_id] = reference
        seen = set()
        for step, capacity in steps:
            pack = _pack(model, chem, capacity)
            if pack.label in seen:  # whole cells: two factors can give the same pack
                continue
            seen.add(pack.label)
            for volts in chem.charge_voltages_v_per_cell:
                if window_frac(chem, volts) <= 0:
                    continue
                designs.append(Design(index, chem_id, pack.capacity_wh / reference.capacity_wh,
                                      float(volts), pack, reference,
                                      service_life_years=caps.get(chem_id),
                                      thermal_measure=model.thermal_measure, oversize_step=float(step)))
    site = model.site
    if site.has_existing_pack and not model.thermal_measure:  # today's pack sits in today's enclosure
        chem = get_chemistry(site.existing_chemistry)
        pack = _pack(model, chem, site.existing_capacity_wh)
        age = float(study.settings["study"]["start_year"] - site.existing_installed_year)
        designs.append(Design(index, chem.id, 1.0, chem.default_charge_voltage_v_per_cell, pack,
                              None, existing_age_years=age,
                              measured_soh_frac=site.existing_soh_frac or None,
                              service_life_years=caps.get(chem.id)))
    return designs, excluded, references


# ---------------------------------------------------------------- service limits


# Below these SOH values a pack is worn out whatever its size: lead-acid loses capacity
# abruptly after 80 % (the IEEE 450 / IEEE 1188 replacement criterion, from memory) and
# lithium-ion cells reach a knee of accelerating fade, typically between about 80 and 70 %
# (review: Attia et al. 2022, J. Electrochem. Soc. 169, 060517), that the fitted laws do
# not describe. Primary cells run down to their reserve.
WORN_OUT_SOH = {"vrla": 0.80, "lfp": 0.70, "nmc": 0.70, "lto": 0.70, "lisocl2": 0.0}


def worn_out_soh_frac(chemistry: str) -> float:
    """SOH below which a pack of this chemistry is not kept in service: the chemistry's
    worn-out floor, or the lowest state of health the tests behind its default aging set
    reached when that is higher (:func:`knee_floor_soh_frac`)."""
    return max(WORN_OUT_SOH.get(chemistry, 0.8), knee_floor_soh_frac(chemistry))


def knee_floor_soh_frac(chemistry: str) -> float:
    """Lowest state of health the tests behind the chemistry's default aging set reached
    (``envelope.lowest_soh_frac``; 0 when none is recorded).

    The fitted square-root laws have no knee; published aging trajectories of lithium-ion
    cells show one, typically between about 80 % and 70 % (Attia et al. 2022). Rather than
    carry a knee-free law below the data it was fitted on, a pack's life ends there at
    the latest; a life this floor decides is flagged (it leans on the rule).
    """
    envelope = get_chemistry(chemistry).aging.envelope
    if envelope is None or envelope.lowest_soh_frac is None:
        return 0.0
    return float(envelope.lowest_soh_frac)


def max_service_years(chemistry: str, override: float | None = None) -> float:
    """The user's ceiling on a pack's service: the study's ``override`` ([service_life]),
    else none (``inf``). What else ends a pack besides fade (electronics, seals,
    imbalance, standby drain) depends on the site and the design:
    :mod:`planner.designs.service`."""
    return float(override) if override is not None else math.inf
