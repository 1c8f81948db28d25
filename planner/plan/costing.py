"""The optimizer's view of a study: every offered design priced as a candidate.

Prices a design's pack (study or library price per kWh plus a fixed part), its days off
air (NIST Handbook 135 uniform present value, kept apart from the pack price so every
cost part is reported on its own), installation labour, disposal and the probability of
failing before each age, and
collects sites, candidates, existing packs and limits into a
:class:`planner.optimize.FleetProblem`.
"""

from __future__ import annotations

import math

import numpy as np

from planner.chemistry import get_chemistry
from planner.designs.candidates import Outcome, SiteDesigns, requirement_wh
from planner.economics import spv, upv
from planner.evidence.fleet import FleetEvidence
from planner.optimize import Candidate, ExistingPack, FleetProblem, SiteOptions
from planner.pack.life_risk import chemistry_life_log_sigma, failure_prob_by_age
from planner.site.model import SiteModel
from planner.site.thermal_measures import base_measure_id, catalogue, measure_cost
from planner.study.loading import Study

# Lives beyond this are "longer than any plan needs" for the optimizer.
LIFE_CAP_YEARS = 100.0


def pack_price(study: Study, chemistry: str, capacity_wh: float) -> float:
    """Purchase price of a pack: per-kWh price (study or library) plus the fixed part."""
    given = study.prices.get(chemistry, {})
    per_kwh = given.get("price_per_kwh")
    if per_kwh is None:
        per_kwh = get_chemistry(chemistry).price_per_kwh
    return capacity_wh / 1000.0 * per_kwh + given.get("fixed_price", 0.0)


def downtime_present_cost(study: Study, model: SiteModel, outcome: Outcome) -> float:
    """Present value, at installation, of the days off air while this pack serves.

    Load not served in the typical year is counted as energy-equivalent days
    (unserved Wh / daily load Wh), priced at ``downtime_cost_per_day`` and summed as a
    uniform series over the pack's service (NIST Handbook 135 uniform present value).
    """
    if outcome.unserved_wh_per_year <= 0 or model.daily_load_wh <= 0:
        return 0.0
    days = outcome.unserved_wh_per_year / model.daily_load_wh
    years = min(outcome.life_years, study.settings["study"]["horizon_years"])
    return float(study.settings["costs"]["downtime_cost_per_day"] * days
                 * upv(study.discount_rate_frac, years))


def failure_probabilities(study: Study, outcome: Outcome) -> tuple[float, ...]:
    """Cumulative probability that the pack of ``outcome`` fails before ages 1..H+1.

    The pack Monte Carlo's answer where it ran; otherwise (the pack in service today,
    primary cells) the log-normal life of :mod:`planner.pack.life_risk` around the nominal
    life, conditioned on the age of a pack already in service.
    """
    if outcome.failure_prob_by_age is not None:
        return outcome.failure_prob_by_age
    d = outcome.design
    # The nominal life is not capped by the service-life limit (a planning rule, not a
    # failure); an infinite one (never worn out in the simulated years) gives no risk.
    return failure_prob_by_age(outcome.nominal_life_years, study.settings["study"]["horizon_years"] + 1,
                               chemistry_life_log_sigma(d.chemistry),
                               age_years=d.existing_age_years or 0.0)


def _candidate(study: Study, model: SiteModel, outcome: Outcome) -> Candidate:
    d = outcome.design
    costs = study.settings["costs"]
    life = outcome.life_years if math.isfinite(outcome.life_years) else LIFE_CAP_YEARS
    measure_price = measure_labour = 0.0
    if d.thermal_measure:
        measure_price, measure_labour = measure_cost(study, catalogue(study)[d.thermal_measure])
    return Candidate(
        design_id=d.design_id, chemistry=d.chemistry, oversize_factor=round(d.oversize_factor, 4),
        charge_voltage_v_per_cell=d.charge_voltage_v_per_cell, capacity_wh=d.pack.capacity_wh,
        mass_kg=d.pack.mass_kg, pack_cost=pack_price(study, d.chemistry, d.pack.capacity_wh),
        # Days off air are a cost of choosing this pack, paid with each pack.
        downtime_cost=downtime_present_cost(study, model, outcome),
        install_cost=costs["labour_hours_per_replacement"] * costs["labour_rate_per_h"],
        disposal_cost=d.pack.mass_kg * costs["disposal_per_kg"],
        life_years=min(life, LIFE_CAP_YEARS), failure_prob_by_age=failure_probabilities(study, outcome),
        limiting_cause=outcome.limiting_cause,
        thermal_measure=d.thermal_measure or base_measure_id(model), measure_price=measure_price,
        measure_labour_cost=measure_labour,
        first_install_year=d.install_years[0] if d.install_years else 0,
        last_install_year=d.install_years[1] if d.install_years else None,
        price_trend_frac_per_year=study.prices.get(d.chemistry, {}).get("price_trend_frac_per_year", 0.0))


def offered_outcomes(designs: SiteDesigns) -> list[Outcome]:
    """Designs worth offering: they carry the site's autonomy requirement when new, last
    at least a year, are not beaten on every count by another design and are not far
    dearer than the site's best (days off air are priced, not excluded)."""
    return [o for o in designs.outcomes
            if o.eol_soh_frac < 1.0 and o.life_years >= 1.0 and not o.dominated
            and not o.far_from_best]


def standalone_cost_bounds(study: Study, model: SiteModel, outcome: Outcome) -> tuple[float, float]:
    """Present cost of serving the horizon with this design alone: (low, high).

    The pack goes in at year 0 and again every whole year of its life (at least one),
    each time paying pack price with days off air, labour, disposal and the site visit
    (NIST Handbook 135 single present values). ``high`` also pays a whole trip of the
    region per replacement, ``low`` none: a fleet plan shares trips, so a site's share
    lies between. Failure risk and the residual value are left out.
    """
    d = outcome.design
    costs = study.settings["costs"]
    horizon = int(study.settings["study"]["horizon_years"])
    life = outcome.life_years if math.isfinite(outcome.life_years) else LIFE_CAP_YEARS
    step = max(1, int(math.floor(life + 1e-9)))
    factor = float(np.sum(spv(study.discount_rate_frac, np.arange(0, horizon, step))))
    region = study.region(model.site.region)
    each = (pack_price(study, d.chemistry, d.pack.capacity_wh)
            + downtime_present_cost(study, model, outcome)
            + costs["labour_hours_per_replacement"] * costs["labour_rate_per_h"]
            + d.pack.mass_kg * costs["disposal_per_kg"] + region["site_visit_cost"])
    return each * factor, (each + region["trip_cost"]) * factor


def _unserved_reason(model: SiteModel, designs: SiteDesigns, hint: str = "") -> str:
    reasons = [f"{chem}: {why}" for chem, why in sorted(designs.excluded.items())]
    tried = designs.tried_chemistries()
    if tried:
        reasons.append(f"{', '.join(tried)}: no pack size on the grid carries "
                       f"{requirement_wh(model):.0f} Wh through the coldest hour "
                       f"({model.design_temp_c:.1f} °C) for at least a year")
    if designs.measure_models:
        reasons.append(f"also tried with {', '.join(sorted(designs.measure_models))}")
    return f"no candidate serves site {model.site.id} ({'; '.join(reasons)})" + (f"; {hint}" if hint else "")


def existing_pack(study: Study, outcome: Outcome, site_id: str,
                  evidence: FleetEvidence | None = None) -> ExistingPack:
    """The pack in service as the optimizer sees it: its remaining life and the
    probability it fails before each age. With field records of its site (or its
    chemistry), both come from the posterior predictive of :mod:`planner.evidence`;
    otherwise from the laboratory prediction."""
    costs = study.settings["costs"]
    d = outcome.design
    remaining, probs = outcome.life_years, failure_probabilities(study, outcome)
    site_ev = evidence.site(site_id) if evidence is not None else None
    if site_ev is not None:
        belief = site_ev.existing_life(outcome)
        remaining = belief.replace_by_years()
        probs = belief.failure_prob_by_age(study.settings["study"]["horizon_years"] + 1)
    return ExistingPack(
        remaining_life_years=min(remaining, LIFE_CAP_YEARS), chemistry=d.chemistry,
        capacity_wh=d.pack.capacity_wh, mass_kg=d.pack.mass_kg,
        disposal_cost=d.pack.mass_kg * costs["disposal_per_kg"], failure_prob_by_age=probs)


def build_problem(study: Study, models: list[SiteModel], designs: list[SiteDesigns],
                  hints: dict[int, str] | None = None,
                  evidence: FleetEvidence | None = None) -> FleetProblem:
    """The optimizer's view of the study: sites, candidates with costs, limits.

    ``hints[i]`` adds a line to site i's reason when no candidate serves it (what
    thermal measure would, :func:`planner.site.thermal_measures.evaluate_with_measures`).
    ``evidence`` (field records, :func:`planner.evidence.update_fleet`) replaces the
    predicted life of the packs in service it covers by their posterior predictive.
    """
    costs = study.settings["costs"]
    sites = []
    for i, (model, site_designs) in enumerate(zip(models, designs)):
        site = model.site
        region = study.region(site.region)
        offered = [_candidate(study, model, o) for o in offered_outcomes(site_designs)]
        existing = None
        if site_designs.existing is not None:
            existing = existing_pack(study, site_designs.existing, site.id, evidence)
        unplanned = costs["unplanned_trip_cost"]
        if unplanned is None:
            unplanned = 1.5 * region["trip_cost"]
        sites.append(SiteOptions(
            site_id=site.id, region=site.region, access_months=model.access_months,
            candidates=offered, existing=existing, site_visit_cost=region["site_visit_cost"],
            downtime_cost_per_day=costs["downtime_cost_per_day"], unplanned_trip_cost=unplanned,
            unserved_reason="" if offered else _unserved_reason(model, site_designs, (hints or {}).get(i, ""))))
    limits = study.settings["limits"]
    solver = study.settings["solver"]
    return FleetProblem(
        sites=sites, horizon_years=study.settings["study"]["horizon_years"],
        discount_rate_frac=study.discount_rate_frac,
        trip_cost_by_region={s.region: study.region(s.region)["trip_cost"] for s in study.sites},
        crew_site_visits_per_year=limits["crew_site_visits_per_year"] or None,
        annual_budget=limits["annual_budget"] or None,
        payload_kg_per_trip=limits["payload_kg_per_trip"] or None,
        time_limit_s=solver["time_limit_s"], gap_rel_frac=solver["gap_rel_frac"],
        solver=solver["name"], design_changes=study.settings["candidates"]["design_changes"])
