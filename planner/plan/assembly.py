"""The plan dict (docs/plan-json.md) from the solved fleet and the site designs.

Per site: the chosen design, its lives and fade curve over the horizon (a sawtooth of
replacements), warnings and the best alternative of every other chemistry; for the
fleet: trips, the chemistry comparison, sensitivity cases, assumptions with sources and
cautions.
"""

from __future__ import annotations

import math

import numpy as np

from planner import __version__
from planner.aging.envelope import extrapolation_notes
from planner.chemistry import get_chemistry
from planner.designs.candidates import (
    CELL_LADDER_AH,
    PRIMARY_MAX_DAILY_LOAD_WH,
    Outcome,
    SiteDesigns,
    max_service_years,
    ruled_out_by_voltage,
    worn_out_soh_frac,
)
from planner.designs.service import SERVICE_CAUSES
from planner.energy.freezing import lead_acid_freezing_point_c
from planner.optimize import FleetProblem, FleetSolution
from planner.pack.structure import PARAMETER_SOURCES as PACK_SOURCES
from planner.plan.attention import needs_attention
from planner.plan.comparison import comparison_rows, cost_groups, fleet_cost
from planner.plan.costing import pack_price
from planner.plan.field_evidence import (
    field_assumption_rows,
    field_data_section,
    site_field_evidence,
    site_warnings,
)
from planner.plan.spending import spending_by_region, spending_by_year
from planner.plan.visit_risk import risk_before_next_visit
from planner.site.model import SiteModel
from planner.site.thermal_measures import base_measure_id
from planner.study.loading import Study
from planner.thermal.enclosures import get_enclosure


def _find(designs: SiteDesigns, design_id: str | None) -> Outcome | None:
    return next((o for o in designs.outcomes if o.design.design_id == design_id), None)


def sawtooth(horizon_years: int, replacement_years, new_curve, existing_curve=None) -> list[float]:
    """Monthly SOH of a site over the horizon: the pack in service, renewed at each
    replacement (new packs follow ``new_curve`` from month 0; a list gives one curve per
    replacement year, in order, when the design changes)."""
    months = 12 * horizon_years + 1
    out = np.full(months, np.nan)
    if existing_curve is not None:
        n = min(months, len(existing_curve))
        out[:n] = existing_curve[:n]
    years = sorted(replacement_years)
    curves = new_curve if isinstance(new_curve, list) else [new_curve] * len(years)
    for year, curve in zip(years, curves):
        start = 12 * int(year)
        n = min(months - start, len(curve))
        out[start:start + n] = curve[:n]
    # Python floats (tolist) and math.isfinite: a numpy scalar per month cost seconds
    # over a fleet's curves
    return [round(v, 5) if math.isfinite(v) else None for v in out.tolist()]


def _site_entry(study, model: SiteModel, designs: SiteDesigns, plan, by_chemistry, options,
                evidence=None) -> dict:
    site = model.site
    site_ev = evidence.site(site.id) if evidence is not None else None
    horizon = study.settings["study"]["horizon_years"]
    candidate = plan.candidate if plan is not None else None
    chosen = _find(designs, candidate.design_id) if candidate else None
    existing = designs.existing
    shown = chosen or existing
    measure = candidate.thermal_measure if candidate else base_measure_id(model)
    # what the first new pack sees: the site with its thermal measure
    model = designs.measure_models.get(measure, model)
    temps = model.temperatures.to_dict()
    entry = {
        "id": site.id, "name": site.name, "region": site.region, "climate": site.climate,
        "enclosure": site.enclosure, "charging": site.charging, "notes": site.notes,
        "system_voltage_v": site.system_voltage_v, "autonomy_days": site.autonomy_days,
        "access_months": list(model.access_months),
        "daily_load_wh": model.daily_load_wh, "load_peak_w": model.peak_load_w,
        "temperature": temps,
        "climate_monthly": {"air_mean_c": temps.get("air_monthly_mean_c"),
                            "battery_mean_c": temps.get("battery_monthly_mean_c")},
        "replacement_years": list(plan.replacement_years) if plan else [],
        "replacement_months": list(plan.replacement_months) if plan else [],
        "present_cost": plan.present_cost if plan else None,
        "cost_breakdown": plan.cost.to_dict() if plan else None,
        "warnings": list(model.warnings) + [
            f"{chem} is not offered: {why}"
            for chem, why in sorted(ruled_out_by_voltage(designs.excluded).items())],
        "thermal_measure": measure,
        "heater_energy_wh_per_year": model.heater_energy_wh_per_year,
        "site_climate": model.site_climate.to_dict() if model.site_climate else None,
        **risk_before_next_visit(plan, options, horizon),
    }
    if shown is not None:
        d = shown.design
        chem = get_chemistry(d.chemistry)
        reference = designs.references.get(d.chemistry)
        entry.update({
            "design_id": d.design_id, "chemistry": d.chemistry,
            "oversize_factor": round(d.oversize_factor, 4) if not d.is_existing else None,
            "oversize_factor_step": d.oversize_step,
            "charge_voltage_v_per_cell": d.charge_voltage_v_per_cell,
            "charge_voltage_v": round(d.charge_voltage_v_per_cell * d.pack.series_cells, 4),
            "capacity_wh": d.pack.capacity_wh, "capacity_ah": d.pack.capacity_ah,
            "pack_structure": d.pack.label, "pack_mass_kg": d.pack.mass_kg,
            "life_years": _finite(shown.life_years), "limiting_cause": shown.limiting_cause,
            "eol_soh_frac": shown.eol_soh_frac,
            "years_to_report_soh": years_to_soh(shown.soh_monthly,
                                                study.settings["study"]["report_soh_frac"]),
            "life_p10_years": _finite(shown.life_p10_years),
            "life_p50_years": _finite(shown.life_p50_years),
            "life_p90_years": _finite(shown.life_p90_years),
            "unserved_wh_per_year": shown.unserved_wh_per_year,
            "equivalent_full_cycles_per_year": shown.efc_per_year,
            "mean_soc_frac": shown.mean_soc_frac,
            "charge_blocked_hours_per_year": shown.charge_blocked_hours,
            "charge_blocked_cold_hours_per_year": shown.charge_blocked_cold_hours,
            "charge_blocked_hot_hours_per_year": shown.charge_blocked_hot_hours,
            "reference_capacity_wh": reference.capacity_wh if reference else None,
            "reference_factors": _reference_factors(reference, model),
            "chemistry_name": chem.name,
        })
        existing_curve = existing.soh_monthly if existing is not None else None
        if site_ev is not None:  # the pack in service as its field records say
            existing_curve = site_ev.soh_from_now(12 * horizon + 1)
        replacements = plan.replacement_years if plan else ()
        installed = [_find(designs, c.design_id) for c in plan.installations] if plan else []
        entry["soh_by_month"] = sawtooth(horizon, replacements,
                                         [o.soh_monthly if o else np.array([]) for o in installed],
                                         existing_curve)
        if installed and all(o is not None and o.soh_p10_monthly is not None for o in installed):
            entry["soh_p10_by_month"] = sawtooth(horizon, replacements,
                                                 [o.soh_p10_monthly for o in installed], existing_curve)
            entry["soh_p90_by_month"] = sawtooth(horizon, replacements,
                                                 [o.soh_p90_monthly for o in installed], existing_curve)
        notes = _extrapolation(model, shown)
        entry["life_knee_floor"] = bool(shown.knee_floor)
        if shown.knee_floor:
            notes.append(f"life ends at {shown.eol_soh_frac:.0%} state of health, the lowest "
                         "the aging tests behind the laws reached: the knee-free laws are not "
                         "carried below it")
        entry["life_extrapolated"] = bool(notes)
        entry["life_extrapolation_note"] = "; ".join(notes)
        entry["warnings"] += _design_warnings(model, shown)
        if notes:
            entry["warnings"].append("life leans on extrapolated aging laws: " + "; ".join(notes))
    entry["replacements"] = _replacements(designs, plan) if plan else []
    if existing is not None:
        remaining = existing.life_years if site_ev is None else options.existing.remaining_life_years
        entry["existing_pack"] = {
            "chemistry": existing.design.chemistry, "capacity_wh": existing.design.pack.capacity_wh,
            "age_years": existing.design.existing_age_years,
            "pack_mass_kg": existing.design.pack.mass_kg,
            "remaining_life_years": _finite(remaining),
            "remaining_life_years_predicted": _finite(existing.life_years)}
    entry["field_evidence"] = site_field_evidence(evidence, site.id, study.settings["study"]["start_year"])
    entry["warnings"] += site_warnings(evidence, site.id)
    shortfall = model.charging_shortfall
    if shortfall is not None:
        # The source, not the pack, limits this site: say it first, with the two numbers.
        entry["warnings"].insert(0, shortfall.warning())
        entry["limiting_cause"] = shortfall.cause()
    entry.update(_life_limit(shown, entry.get("limiting_cause"), shortfall is not None))
    entry["alternatives"] = _alternatives(study, site.id, designs, by_chemistry,
                                          candidate.chemistry if candidate else None, existing)
    return entry


#: Limiting causes that are cell fade (planner.designs.evaluation._cause).
_FADE_CAUSES = ("calendar", "cycling", "calendar (cold derating)", "cycling (cold derating)",
                "none within the horizon")


def _life_limit(shown: Outcome | None, cause: str | None, source_limited: bool) -> dict:
    """What ends the pack in service first at a site, for the plan's readers:
    ``life_limited_by`` (the limiting cause in words), ``life_limit_kind`` ("cell fade",
    "component", "ceiling", "energy", "size" or "charging source"), the component lives
    and the service limit they and the ceiling set."""
    if shown is None:
        return {}
    if source_limited:
        kind = "charging source"
    elif cause == "service-life limit":
        kind = "ceiling"
    elif cause in SERVICE_CAUSES:
        kind = "component"
    elif cause in _FADE_CAUSES:
        kind = "cell fade"
    elif cause in ("energy drawn", "self-discharge"):
        kind = "energy"
    else:
        kind = "size"
    words = {"calendar": "cell fade (calendar)", "cycling": "cell fade (cycling)",
             "service-life limit": "service-life ceiling ([service_life])"}
    # the charging source's cause carries its own figures: one name for the counts
    name = "charging source too small" if source_limited else words.get(cause, cause)
    if kind == "cell fade" and shown.knee_floor:
        name += " to the knee floor"
    return {"life_limited_by": name, "life_limit_kind": kind,
            "component_lives_years": {_component_id(k): _finite(v)
                                      for k, v in sorted(shown.component_lives.items())},
            "service_limit_years": _finite(shown.service_limit_years),
            "imbalance_loss_frac_per_year": shown.imbalance_frac_per_year,
            "condensation_class": shown.condensation}


def _replacements(designs: SiteDesigns, plan) -> list[dict]:
    """One object per new pack of the plan: when it goes in and what it is."""
    out = []
    for year, month, c in zip(plan.replacement_years, plan.replacement_months, plan.installations):
        outcome = _find(designs, c.design_id)
        cells = outcome.design.pack.series_cells if outcome else None
        out.append({
            "year": int(year), "month": int(month), "design_id": c.design_id, "chemistry": c.chemistry,
            "oversize_factor": c.oversize_factor, "capacity_wh": c.capacity_wh,
            "oversize_factor_step": outcome.design.oversize_step if outcome else None,
            "pack_structure": outcome.design.pack.label if outcome else None,
            "charge_voltage_v_per_cell": c.charge_voltage_v_per_cell,
            "charge_voltage_v": round(c.charge_voltage_v_per_cell * cells, 4) if cells else None,
            "pack_mass_kg": c.mass_kg, "life_years": _finite(c.life_years),
            "thermal_measure": c.thermal_measure or "none",
            "thermal_measure_cost": (c.measure_price + c.measure_labour_cost) if year == plan.replacement_years[0]
            else 0.0,
            "purchase_price": float(c.pack_cost_in(year)),
        })
    return out


def _alternatives(study, site_id, designs, by_chemistry, chosen_chemistry, existing) -> list[dict]:
    horizon = study.settings["study"]["horizon_years"]
    out = []
    for result, plans in by_chemistry:
        if result.chemistry == chosen_chemistry:
            continue
        plan = plans.get(site_id)
        if plan is None or plan.candidate is None:
            continue
        outcome = _find(designs, plan.candidate.design_id)
        out.append({
            "chemistry": result.chemistry, "oversize_factor": plan.candidate.oversize_factor,
            "charge_voltage_v": round(plan.candidate.charge_voltage_v_per_cell
                                      * outcome.design.pack.series_cells, 4) if outcome else None,
            "capacity_wh": plan.candidate.capacity_wh,
            "life_years": _finite(outcome.life_years) if outcome else None,
            "present_cost": plan.present_cost,
            "replacement_years": list(plan.replacement_years),
            "soh_by_month": sawtooth(horizon, plan.replacement_years,
                                     outcome.soh_monthly if outcome else np.array([]),
                                     existing.soh_monthly if existing is not None else None),
        })
    return out


def _reference_factors(reference, model: SiteModel) -> dict | None:
    if reference is None:
        return None
    return {"daily_load_wh": reference.daily_load_wh, "autonomy_days": reference.autonomy_days,
            "max_dod_frac": reference.max_dod_frac, "temperature_factor": reference.temperature_factor,
            "aging_factor": reference.aging_factor, "design_margin": reference.design_margin,
            "design_temp_c": model.design_temp_c, "system_voltage_v": reference.system_voltage_v,
            "capacity_ah": reference.capacity_ah}


def _design_warnings(model: SiteModel, outcome: Outcome) -> list[str]:
    d = outcome.design
    chem = get_chemistry(d.chemistry)
    out = []
    if outcome.unserved_wh_per_year > 0:
        out.append(f"{outcome.unserved_wh_per_year:.0f} Wh of load a year not served with this "
                   "pack: the charging source is too small for the site's darkest or coldest weeks")
    if outcome.charge_blocked_cold_hours > 0 and chem.rechargeable:
        out.append(f"charging blocked by cold for {outcome.charge_blocked_cold_hours:.0f} h a year "
                   f"(below {chem.charge_temp_min_c:g} °C); a battery heater would recover it")
    if outcome.charge_blocked_hot_hours > 0 and chem.rechargeable:
        out.append(f"charging blocked by heat for {outcome.charge_blocked_hot_hours:.0f} h a year "
                   f"(above {chem.charge_temp_max_c:g} °C, the battery management system's stop); "
                   "shade, a vault or a lighter enclosure would recover it")
    if d.chemistry == "vrla":
        lowest_soc = 1.0 - chem.max_dod_frac
        freezing = float(lead_acid_freezing_point_c(lowest_soc))
        if model.design_temp_c < freezing + 5.0:
            out.append(f"lead-acid electrolyte may freeze: battery reaches {model.design_temp_c:.1f} °C "
                       f"and a pack at the lowest allowed charge freezes near {freezing:.0f} °C "
                       "(US Army TM 5-1185 table)")
    if d.is_existing and outcome.life_years < 1.0:
        out.append("the pack installed today is at or near the end of its life")
    return out


def _extrapolation(model: SiteModel, outcome: Outcome) -> list[str]:
    """Where the predicted life leaves the envelope the default aging set was fitted on."""
    chem = get_chemistry(outcome.design.chemistry)
    return extrapolation_notes(chem.aging.envelope,
                               mean_temp_c=float(model.temperatures.battery_mean_c),
                               life_years=outcome.life_years, efc_per_year=outcome.efc_per_year)


def _finite(value):
    return float(value) if value is not None and math.isfinite(value) else None


def years_to_soh(soh_monthly, soh_frac: float) -> float | None:
    """Years from installation until a monthly SOH curve first falls below ``soh_frac``
    (None when it stays above it over the curve).

    >>> years_to_soh([1.0, 0.95, 0.9, 0.85, 0.79], 0.8)
    0.3333333333333333
    """
    curve = np.asarray(soh_monthly if soh_monthly is not None else [], dtype=float)
    below = np.flatnonzero(curve < soh_frac)
    return float(below[0]) / 12.0 if below.size else None


def _assumptions(study: Study) -> list[dict]:
    from planner.study.schema import SECTIONS

    rows = []
    illustrative = study.settings["costs"]["illustrative"]
    for section, specs in SECTIONS.items():
        if section == "field_data" and study.field_data is None:
            continue  # listed only for a study with field records
        for spec in specs:
            value = study.settings[section][spec.name]
            source = "study file"
            if section == "costs" and illustrative:
                source = "study file (illustrative)"
            rows.append({"group": f"study [{section}]", "name": spec.name,
                         "value": _plain(value), "unit": spec.unit, "source": source})
    for region in sorted({s.region for s in study.sites}):
        for key, value in study.region(region).items():
            rows.append({"group": f"region {region}", "name": key, "value": _plain(value),
                         "unit": "", "source": "study file" + (" (illustrative)" if illustrative and
                                                               "cost" in key else "")})
    for chem_id in study.settings["candidates"]["chemistries"]:
        chem = get_chemistry(chem_id)
        for name, source in sorted(chem.sources.items()):
            rows.append({"group": f"chemistry {chem_id}", "name": name,
                         "value": _plain(_chem_value(chem, name)), "unit": "", "source": source})
        price = pack_price(study, chem_id, 1000.0) - study.prices.get(chem_id, {}).get("fixed_price", 0.0)
        rows.append({"group": f"chemistry {chem_id}", "name": "price_per_kwh_used", "value": price,
                     "unit": f"{study.settings['study']['currency']}/kWh",
                     "source": "study file" if chem_id in study.prices else
                     "chemistry library (illustrative)"})
    for kind in sorted({site.enclosure for site in study.sites}):
        enclosure = get_enclosure(kind)
        for name, source in enclosure.sources:
            rows.append({"group": f"enclosure {kind}", "name": name,
                         "value": _plain(getattr(enclosure, name, "")), "unit": "", "source": source})
    for name, source in PACK_SOURCES.items():
        rows.append({"group": "pack spread", "name": name, "value": "", "unit": "", "source": source})
    rows += _design_rule_rows(study)
    rows += field_assumption_rows(study)
    rows += [{"group": "method", "name": name, "value": "", "unit": "", "source": source}
             for name, source in METHODS]
    rows.append({"group": "method", "name": "planner version", "value": __version__, "unit": "",
                 "source": "this program"})
    return rows


METHODS = (
    ("1x reference size", "IEEE 1013 / IEEE 1562 sizing chain (aging factor 1.25, design margin)"),
    ("PV power", "pvlib: Hay-Davies plane-of-array irradiance, SAPM cell temperature, PVWatts DC"),
    ("enclosure temperature", "lumped first-order model, exact exponential step; buried vaults: "
                              "Kusuda & Achenbach 1965 ground temperature"),
    ("calendar fade under varying temperature", "equivalent-time superposition of each t^z law"),
    ("cycle counting", "rainflow after ASTM E1049-85, checked against the rainflow package"),
    ("present values", "NIST Handbook 135 (Fuller & Petersen 1996): constant money, real rate, "
                       "end-of-year discounting, linear residual value"),
    ("fleet schedule", "opportunistic replacement MILP (Patriksson, Stromberg & Wojciechowski "
                       "2015, Annals of OR 224), solved with HiGHS or CBC through PuLP"),
)


def _design_rule_rows(study: Study) -> list[dict]:
    rows = []
    for chem_id in study.settings["candidates"]["chemistries"]:
        rows.append({"group": "design rules", "name": f"worn-out SOH {chem_id}",
                     "value": worn_out_soh_frac(chem_id), "unit": "fraction",
                     "source": "IEEE 450 / IEEE 1188 80 % replacement criterion for lead-acid "
                               "(from memory); lithium-ion: no lower than the lowest state of "
                               "health the tests behind the aging set reached (a knee typically "
                               "lies between 80 and 70 %, Attia et al. 2022, J. Electrochem. Soc. "
                               "169, 060517)"})
        rows.append({"group": "design rules", "name": f"cell sizes {chem_id}",
                     "value": _plain(CELL_LADDER_AH.get(chem_id, ())), "unit": "Ah",
                     "source": "catalogue ladders of cells and monoblocs (common practice)"})
        override = study.settings.get("service_life", {}).get(chem_id)
        if override is not None:
            rows.append({"group": "design rules", "name": f"service-life ceiling {chem_id}",
                         "value": max_service_years(chem_id, override), "unit": "years",
                         "source": "study file [service_life]"})
        chem = get_chemistry(chem_id)
        for key, value in chem.components.items():
            rows.append({"group": "component lives", "name": f"{chem_id} {key}", "value": value,
                         "unit": _component_unit(key),
                         "source": chem.sources[f"components.{key}"]})
    rows.append({"group": "design rules", "name": "primary cells up to", "value":
                 PRIMARY_MAX_DAILY_LOAD_WH, "unit": "Wh/day",
                 "source": "common practice: bobbin Li-SOCl2 packs serve loads up to about 0.1 W"})
    return rows


def _chem_value(chem, name):
    """The value behind a chemistry source key ('mass_kg_per_kwh', 'aging.<set>.cycle.a')."""
    if name.startswith("aging."):
        set_name, section, key = name[len("aging."):].rsplit(".", 2)
        params = chem.aging_sets.get(set_name)
        return getattr(params, section).get(key, "") if params else ""
    value = getattr(chem, name, None)
    if callable(value) or value is None:
        return "table (see chemistries.toml)"
    return value


def _component_id(name: str) -> str:
    """A component's JSON key: its name in snake case ("seals and terminals" ->
    "seals_and_terminals")."""
    return name.replace("-", "_").replace(" ", "_")


def _component_unit(key: str) -> str:
    for ending, unit in (("_years", "years"), ("_years_ref", "years"), ("_c", "°C"), ("_k", "K"),
                         ("_v_per_cell", "V per cell"), ("_per_year_ref", "fraction/year"),
                         ("_per_month", "fraction/month")):
        if key.endswith(ending):
            return unit
    return "years" if "_years_" in key else ""


def _counts(values) -> dict:
    out: dict[str, int] = {}
    for value in values:
        if value:
            out[value] = out.get(value, 0) + 1
    return dict(sorted(out.items()))


def _plain(value):
    if isinstance(value, (tuple, list)):
        return ", ".join(str(v) for v in value)
    if value is None:
        return ""
    return value


def assemble_plan(study, models, designs, problem: FleetProblem, solution: FleetSolution,
                  comparison, cases, *, evidence=None, test_values=()) -> dict:
    """The plan dict of docs/plan-json.md. ``evidence`` and ``test_values`` are the field
    records' posteriors (:func:`planner.evidence.update_fleet`) and the value of one more
    capacity test per site (:func:`planner.evidence.rank_tests`)."""
    from planner.plan.cautions import STANDARD_CAUTIONS

    plans = {p.site_id: p for p in solution.sites}
    options = {o.site_id: o for o in problem.sites}
    # each chemistry's plan per site, looked up by id (a scan per site grew as n^2)
    by_chemistry = [(r, {p.site_id: p for p in r.solution.sites}) for r in comparison]
    sites = [_site_entry(study, m, d, plans.get(m.site.id), by_chemistry, options[m.site.id], evidence)
             for m, d in zip(models, designs)]
    s = study.settings["study"]
    spend = {"start_year": s["start_year"], "inflation_frac": s["inflation_frac"]}
    visit_cost = {o.site_id: o.site_visit_cost for o in problem.sites}
    plan = {
        "schema_version": 1,
        "study": {"name": study.name, "currency": s["currency"], "horizon_years": s["horizon_years"],
                  "discount_rate_frac": study.discount_rate_frac, "start_year": s["start_year"],
                  "inflation_frac": s["inflation_frac"], "report_soh_frac": s["report_soh_frac"],
                  "payload_kg_per_trip": study.settings["limits"]["payload_kg_per_trip"] or None,
                  "sites_file": study.sites_path.name, "planner_version": __version__},
        # no site served: there is no plan whose cost could be given (docs/plan-json.md)
        "total_present_cost": solution.objective if solution.sites else None,
        "solver": {"name": solution.solver_name, "status": solution.status,
                   "gap_frac": solution.gap_frac, "seconds": int(solution.seconds),
                   "objective": solution.objective, "best_bound": solution.best_bound,
                   "decomposition": solution.decomposition},
        "sites": sites,
        # sites whose life a service limit (a component or the [service_life] ceiling),
        # not cell fade, decides; and the same split by kind and by what limits life
        "service_life_limited_sites": sum(
            1 for site in sites if site.get("life_limit_kind") in ("component", "ceiling")),
        "component_limited_sites": sum(
            1 for site in sites if site.get("life_limit_kind") == "component"),
        "ceiling_limited_sites": sum(
            1 for site in sites if site.get("life_limit_kind") == "ceiling"),
        "life_limited_by_counts": [{"life_limited_by": name, "sites": n} for name, n in
                                   _counts(site.get("life_limited_by") for site in sites).items()],
        "trips": [{"region": t.region, "year": t.year, "month": t.month,
                   "site_ids": list(t.site_ids), "pack_count": t.pack_count,
                   "pack_mass_kg": t.pack_mass_kg, "trip_count": t.count, "cost": t.cost,
                   "site_visits_cost": sum(visit_cost.get(i, 0.0) for i in t.site_ids)}
                  for t in solution.trips],
        "spending_by_year": spending_by_year(problem, solution, **spend),
        "spending_by_region": spending_by_region(problem, solution, **spend),
        "cost_groups": cost_groups(fleet_cost(solution)),
        "chemistry_comparison": comparison_rows(solution, comparison),
        "sensitivity": [{"case": c.case, "total_present_cost": c.total_present_cost,
                         "change_frac": c.change_frac, "designs_changed": c.designs_changed,
                         "status": c.status} for c in cases],
        "assumptions": _assumptions(study),
        "cautions": [f"{c.topic}: {c.text} Defer to: {c.defer_to}." for c in STANDARD_CAUTIONS],
        "unserved_sites": [{"id": u.site_id, "reason": u.reason, "limit": u.limit}
                           for u in solution.unserved],
        "binding_limits": list(solution.binding_limits),
        "field_data": field_data_section(study, evidence, list(test_values), s["horizon_years"]),
    }
    plan["needs_attention"] = needs_attention(plan)
    return plan
