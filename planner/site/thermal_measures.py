"""Thermal measures: what a new installation may add to keep its battery in range.

A measure changes the battery's thermal world, not the pack: a heater pad with a
thermostat (its energy drawn from the battery and the charging source hour by hour), an
insulated battery box inside the cabinet (a small conductance in series with the
cabinet's: a longer time constant and smaller daily swings), a sun shield over a
sun-exposed cabinet, or moving the battery into a buried vault. Each measure is a
*variant* of a site's model (its own battery temperature, heater power and load), so
the energy balance, the aging and the cost of every design see it; the optimizer then
chooses the pack and the measure together.

The sites table's ``enclosure`` and ``heater_setpoint_c`` describe what is installed
today: a setpoint given there forces the heater (the heater measures are then not
offered, the others keep that heater). Measures are offered only where they can change
a decision: heaters and the box where the battery gets colder than some chemistry of the
study may be charged, shade, a vault and the box where it gets hot.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from planner.chemistry import get_chemistry
from planner.climate.summary import summarize_temperatures
from planner.errors import InputError
from planner.site.model import SiteModel
from planner.study.loading import Study
from planner.thermal.battery import battery_temperature_fleet
from planner.thermal.enclosures import get_enclosure

#: A site counts as hot when its aging-effective battery temperature passes this: lead-acid
#: life halves for every 8-10 K above 25 °C (IEEE 1188 / vendor practice, from memory) and
#: lithium-ion calendar fade roughly doubles per 10 K (Arrhenius, common practice), so 5 K
#: above 25 °C costs about a third of the life.
HOT_EFFECTIVE_C = 30.0
#: ... or when the battery spends any hour above this (the plan's heat warning).
HOT_HOUR_C = 45.0
#: A variant that moves neither the coldest battery hour nor the aging-effective
#: temperature by this much is not offered: it cannot change a decision.
MIN_EFFECT_K = 2.0
#: Enclosure kinds that take each kind of measure (a shelter has its own HVAC).
_CABINETS = ("cabinet-sun", "cabinet-shade")


@dataclass(frozen=True)
class Measure:
    """One thermal measure: what it changes and what it costs (capital and crew hours)."""

    id: str
    description: str
    helps: str                      # "cold", "hot" or "both"
    fits: tuple[str, ...]           # enclosure kinds it can be added to
    heater: bool = False
    box: bool = False
    enclosure: str | None = None    # replaces today's enclosure kind
    price: float = 0.0
    labour_h: float = 0.0


def catalogue(study: Study) -> dict[str, Measure]:
    """Every measure the study knows, priced from its ``[thermal]`` section."""
    t = study.settings["thermal"]
    return {m.id: m for m in (
        Measure("insulated-box", "insulated battery box inside the enclosure", "both",
                _CABINETS + ("vault",), box=True, price=t["box_price"], labour_h=t["box_labour_h"]),
        Measure("heater", f"battery heater pad, {t['heater_power_w']:g} W, to {t['heater_setpoint_c']:g} °C "
                          f"({t['heater_control']})", "cold", _CABINETS + ("vault",), heater=True,
                price=t["heater_price"], labour_h=t["heater_labour_h"]),
        Measure("heater-box", "battery heater pad inside an insulated battery box", "cold",
                _CABINETS + ("vault",), heater=True, box=True, price=t["heater_price"] + t["box_price"],
                labour_h=t["heater_labour_h"] + t["box_labour_h"]),
        Measure("sun-shield", "sun shield or canopy over the cabinet", "hot", ("cabinet-sun",),
                enclosure="cabinet-shade", price=t["shield_price"], labour_h=t["shield_labour_h"]),
        Measure("vault", "battery moved into a buried vault", "both", _CABINETS, enclosure="vault",
                price=t["vault_price"], labour_h=t["vault_labour_h"]),
    )}


def _allowed_ids(study: Study, site) -> tuple[str, ...]:
    """Measure ids a site may use: its ``thermal_measures`` column, else the study's list."""
    known = catalogue(study)
    text = str(site.thermal_measures or "").strip()
    if text:
        ids = tuple(x.strip() for x in text.replace(",", ";").split(";") if x.strip())
        where, source = f"row {site.row}, column thermal_measures", study.sites_path.name
    else:
        ids = tuple(study.settings["thermal"]["measures"])
        where, source = "[thermal].measures", study.path.name
    if ids == ("none",):
        return ()
    for i in ids:
        if i not in known:
            raise InputError(f"{where}: unknown thermal measure {i!r}; expected 'none' or some of "
                             f"{', '.join(known)}", source=source)
    return ids


def check_site_measures(study: Study) -> None:
    """Raise the one-line :class:`InputError` of the first site (or of ``[thermal].measures``)
    naming a thermal measure the catalogue does not hold, before any site is modelled."""
    for site in study.sites:
        _allowed_ids(study, site)


def cold_limit_c(study: Study) -> float:
    """Highest low-temperature limit among the study's chemistries (charging for the
    rechargeable ones, discharging for primary cells): below it some chemistry cannot
    work without help."""
    chems = [get_chemistry(c) for c in study.settings["candidates"]["chemistries"]]
    return max(c.charge_temp_min_c if c.rechargeable else c.discharge_temp_min_c for c in chems)


def can_matter(measure: Measure, model: SiteModel, cold_c: float) -> bool:
    """A measure can change a decision at this site (cold, hot, its enclosure fits, and a
    heater is not there already)."""
    site = model.site
    if site.enclosure not in measure.fits:
        return False
    if measure.heater and site.heater_setpoint_c is not None:
        return False  # the site table forces its own heater
    cold = model.design_temp_c < cold_c
    t = model.temperatures
    hot = t.effective_temp_c > HOT_EFFECTIVE_C or t.battery_max_c > HOT_HOUR_C
    return {"cold": cold, "hot": hot, "both": cold or hot}[measure.helps]


def offered_measures(study: Study, models: list[SiteModel]) -> list[tuple[int, Measure]]:
    """(site index, measure) pairs worth evaluating: allowed and able to matter."""
    known = catalogue(study)
    cold_c = cold_limit_c(study)
    out = []
    for i, model in enumerate(models):
        for mid in _allowed_ids(study, model.site):
            if can_matter(known[mid], model, cold_c):
                out.append((i, known[mid]))
    return out


def variant_models(study: Study, models: list[SiteModel], pairs: list[tuple[int, Measure]],
                   *, keep_all: bool = False) -> list[tuple[int, Measure, SiteModel]]:
    """The site models with each measure applied (one vectorised enclosure run).

    The variant keeps the site's load and charging; its battery temperature, heater
    power (added to the load the battery carries) and temperature summary come from the
    enclosure model with the measure. An added heater either heats to charge
    (``[thermal].heater_control = "charging"``: it runs on the charging source's surplus
    over the load, up to its power, while the battery is below the setpoint) or holds its
    setpoint day and night ("thermostat"). Variants that
    move the battery temperature less than :data:`MIN_EFFECT_K` are dropped unless
    ``keep_all``.
    """
    if not pairs:
        return []
    t = study.settings["thermal"]
    kinds, overrides, setpoints, internal, years = [], [], [], [], []
    for i, m in pairs:
        model = models[i]
        site = model.site
        kind = m.enclosure or site.enclosure
        kinds.append(kind)
        over = {}
        heat = site.load_w if site.electronics_heat_w is None else site.electronics_heat_w
        if m.box:
            # the box's conductance in series with the enclosure's (to air and to ground);
            # sun on the shell keeps its sol-air drive (the gain scales with ua_w_k), and the
            # electronics outside the box warm the enclosure air, not the battery: their heat
            # reaches the battery node scaled by the same series ratio
            e = get_enclosure(kind)
            scale = 1.0 / (1.0 + e.total_ua_w_k / t["box_ua_w_k"])
            over = {"ua_w_k": e.ua_w_k * scale, "ground_ua_w_k": e.ground_ua_w_k * scale}
            heat *= scale
        overrides.append(over or None)
        sp = site.heater_setpoint_c if site.heater_setpoint_c is not None else (
            t["heater_setpoint_c"] if m.heater and t["heater_control"] == "thermostat" else None)
        setpoints.append(np.nan if sp is None else sp)
        internal.append(heat)
        years.append(model.year)
    thermal = battery_temperature_fleet(years, kinds, internal_heat_w=np.array(internal),
                                        heater_setpoint_c=np.array(setpoints),
                                        heater_power_w=t["heater_power_w"], overrides=overrides)
    temps, heaters = thermal.temp_battery_c, thermal.heater_power_w
    charging = [j for j, (i, m) in enumerate(pairs)
                if m.heater and t["heater_control"] == "charging" and models[i].site.heater_setpoint_c is None]
    if charging:
        # heat to charge: the charging source's surplus over the load (up to the pad's
        # power) in the hours the unheated battery is below the setpoint, energy a cold
        # lithium pack could not have taken anyway; the heat is an input of the linear
        # enclosure model, so the heated temperature is exact for that schedule
        power = np.column_stack([
            np.where(temps[:, j] < t["heater_setpoint_c"],
                     np.clip(models[pairs[j][0]].charge_w - models[pairs[j][0]].load_w, 0.0, t["heater_power_w"]),
                     0.0) for j in charging])
        heated = battery_temperature_fleet([years[j] for j in charging], [kinds[j] for j in charging],
                                           internal_heat_w=np.array([internal[j] for j in charging]) + power,
                                           overrides=[overrides[j] for j in charging])
        temps, heaters = temps.copy(), heaters.copy()
        temps[:, charging], heaters[:, charging] = heated.temp_battery_c, power
    out = []
    for j, (i, m) in enumerate(pairs):
        variant = apply_thermal(models[i], m.id, temps[:, j], heaters[:, j], thermal.enclosures[j])
        base, new = models[i].temperatures, variant.temperatures
        moved = max(abs(new.battery_min_c - base.battery_min_c),
                    abs(new.effective_temp_c - base.effective_temp_c))
        if keep_all or moved >= MIN_EFFECT_K:
            out.append((i, m, variant))
    return out


def apply_thermal(model: SiteModel, measure_id: str, temp_battery_c, heater_power_w, enclosure) -> SiteModel:
    """``model`` with another battery temperature and heater power (same load otherwise).

    The heater's electric power is drawn hour by hour: it replaces the old heater's share
    of the load. The peak load keeps the old bursts and adds the new heater's full power
    (an upper bound). Charging follows the heated battery temperature alone: a pack below
    its charging limit is not charged while the heater warms it (lithium plating, common
    practice).
    """
    temp = np.asarray(temp_battery_c, dtype=float)
    heater = np.asarray(heater_power_w, dtype=float)
    load = model.load_w - model.heater_power_w + heater
    heater_kwh = float(heater.sum()) / 1000.0
    notes = [w for w in model.warnings if not w.startswith("battery heater")]
    if heater_kwh > 0:
        notes.append(f"with {measure_id}: the battery heater draws {heater_kwh:.1f} kWh a year from the battery")
    return dataclasses.replace(
        model, temp_battery_c=temp, heater_power_w=heater, enclosure=enclosure,
        temperatures=summarize_temperatures(model.year.temp_air_c, temp), load_w=load,
        peak_load_w=float(model.peak_load_w - np.max(model.heater_power_w) + np.max(heater)),
        daily_load_wh=float(load.sum() / 365.0), design_temp_c=float(np.min(temp)),
        warnings=notes, thermal_measure=measure_id, heater_enables_charge=False)


def measure_cost(study: Study, measure: Measure) -> tuple[float, float]:
    """(capital, labour cost) of a measure, paid once with the first new pack."""
    return float(measure.price), float(measure.labour_h * study.settings["costs"]["labour_rate_per_h"])


def base_measure_id(model: SiteModel) -> str:
    """What today's installation has: 'site-heater' when the sites table sets a heater."""
    return "site-heater" if model.site.heater_setpoint_c is not None else "none"


def evaluate_with_measures(study: Study, models: list[SiteModel], evaluate, serves):
    """Every site's designs with and without the thermal measures it may use.

    ``evaluate(study, models) -> [SiteDesigns]`` runs the design stage; ``serves(site_designs)``
    says whether any design can be offered. A measure variant is evaluated only for the
    chemistries it can help at that site (:func:`helped_chemistries`). Returns
    ``(designs, hints)``: one SiteDesigns per site whose outcomes include the designs of
    its measure variants (``measure_models`` maps each measure to its variant model), and
    for every site no design serves, a one-line hint naming the cheapest thermal measure
    that would serve it (the whole catalogue, every chemistry, is tried for those sites
    only) or saying none does.
    """
    base = evaluate(study, list(models))
    variants = variant_models(study, models, offered_measures(study, models))
    by_chems: dict[tuple, list] = {}
    for i, m, v in variants:
        chems = helped_chemistries(study, base[i], m, models[i], v)
        if chems:
            by_chems.setdefault(chems, []).append((i, m, v))
    found = {k: [] for k in range(len(models))}
    for chems, members in by_chems.items():  # a few chemistry sets, each one design run
        for (i, m, v), d in zip(members, evaluate(with_chemistries(study, chems), [v for _, _, v in members])):
            found[i].append((m, v, d))
    designs = [_merge(d, found[k]) for k, d in enumerate(base)]
    lost = [k for k, d in enumerate(designs) if not serves(d)]
    hints = {}
    if lost:
        tried = {(i, m.id) for i, m, _ in variants}
        known = catalogue(study)
        pairs = [(k, m) for k in lost for m in known.values()
                 if models[k].site.enclosure in m.fits and (k, m.id) not in tried
                 and not (m.heater and models[k].site.heater_setpoint_c is not None)]
        extra = variant_models(study, models, pairs, keep_all=True)
        extra_designs = evaluate(study, [v for _, _, v in extra]) if extra else []
        for k in lost:
            # the variants already merged in serve nothing here (else the site is served)
            serving = [m for (i, m, _), d in zip(extra, extra_designs) if i == k and serves(d)]
            hints[k] = _hint(study, serving)
    return designs, hints


def helped_chemistries(study: Study, base, measure: Measure, model: SiteModel,
                       variant: SiteModel | None = None) -> tuple[str, ...]:
    """Chemistries of the study whose decision a measure can change at a site, judged from
    the site's designs without it (``base``, a SiteDesigns) and the battery temperature
    with it (``variant``): every one when the measure cuts the energy today's heater draws;
    those left out for a temperature limit; those whose charging the cold blocks (cold
    measures at a cold site) or the heat blocks (measures that lower the hottest battery
    hour); and those whose life the ceiling of the study ([service_life]) does not decide
    for every design, when the measure slows what ends them: a cooler aging-effective
    temperature (cell fade by Arrhenius, electronics and imbalance by their own rules), or
    a warmer coldest hour for a chemistry whose cycling ages faster in the cold (lithium
    plating while charging). A smaller
    pack from less cold derating alone is not counted: it saves a part of one pack's
    price, less than a measure costs."""
    cold = measure.helps in ("cold", "both") and model.design_temp_c < cold_limit_c(study)
    cools = measure.helps in ("hot", "both")
    cooler = warmer = True  # without the variant's temperature: any aging may change
    saves = False
    if variant is not None:
        cooler = variant.temperatures.effective_temp_c < model.temperatures.effective_temp_c - 0.5
        warmer = variant.design_temp_c > model.design_temp_c + 0.5
        cools = cools and variant.temperatures.battery_max_c < model.temperatures.battery_max_c - 0.5
        # less heater energy (a box around today's heater): every design's energy balance gains
        saves = float(np.sum(variant.heater_power_w)) < 0.95 * float(np.sum(model.heater_power_w))
    out = []
    for chem in study.settings["candidates"]["chemistries"]:
        why = base.excluded.get(chem, "")
        mine = [o for o in base.outcomes if o.design.chemistry == chem]
        # Life is the measure's business unless the user's [service_life] ceiling decides
        # every design: cell fade and the components (electronics halving per 10 K, cell
        # imbalance drifting faster when warm, seals by condensation) all see temperature.
        aging = bool(mine) and not all(o.limiting_cause == "service-life limit" for o in mine)
        if "°C" in why or (mine and saves):
            out.append(chem)
        elif mine and cold and any(o.charge_blocked_cold_hours > 0 for o in mine):
            out.append(chem)
        elif mine and cools and any(o.charge_blocked_hot_hours > 0 for o in mine):
            out.append(chem)   # heat blocks its charging: a cooler battery gets it back
        elif aging and (cooler or (warmer and _ages_faster_cold(chem))):
            out.append(chem)
    return tuple(out)


def _ages_faster_cold(chemistry: str) -> bool:
    """The chemistry's cycle-aging law has a plating term (grows as charging cools)."""
    chem = get_chemistry(chemistry)
    params = chem.aging_sets.get(chem.default_aging_set)
    # the plating term's parameters (planner.aging.plating, a later stage: read as data)
    return params is not None and "plating_share_ref" in params.cycle


def with_chemistries(study: Study, chemistries: tuple[str, ...]) -> Study:
    """``study`` with its candidate chemistries cut to ``chemistries``."""
    settings = {k: dict(v) for k, v in study.settings.items()}
    settings["candidates"]["chemistries"] = tuple(chemistries)
    return dataclasses.replace(study, settings=MappingProxyType(
        {k: MappingProxyType(v) for k, v in settings.items()}))


def _merge(base, variants):
    """``base`` SiteDesigns with the outcomes of its measure variants added."""
    if not variants:
        return base
    outcomes = list(base.outcomes)
    for _, _, d in variants:
        outcomes += d.outcomes
    return dataclasses.replace(base, outcomes=outcomes,
                               measure_models={m.id: v for m, v, _ in variants})


def _hint(study: Study, serving: list[Measure]) -> str:
    currency = study.settings["study"]["currency"]
    if not serving:
        return "no thermal measure of the catalogue serves it either"
    best = min(serving, key=lambda m: sum(measure_cost(study, m)))
    price, labour = measure_cost(study, best)
    return (f"the cheapest thermal measure that serves it is {best.id} ({best.description}): "
            f"{price:,.0f} {currency} + {best.labour_h:g} h crew ({labour:,.0f} {currency})")
