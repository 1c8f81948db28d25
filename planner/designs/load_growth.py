"""Load growth per site: later packs are designed for a larger load.

A site's own load (not its heater or shelter HVAC) grows by ``load_growth_frac_per_year``.
The horizon is cut into steps of ``[candidates].load_growth_step_years``; a pack installed
in a step is sized, simulated and aged for the load at the step's end (the largest load
of its install window), and the optimizer may install it only in that step. While it
serves on, the load keeps growing: its end of life is the first month its remaining
capacity can no longer carry the grown requirement (daily load x days of autonomy),

    SOH(a) <= max(worn-out floor, requirement share x (1 + g)^(a - lag))

with ``lag`` the years between the simulated load and the latest install of the window
(1 for new packs; the step length for the pack in service today). Its cycling is not
re-simulated for the grown load (a few per cent of depth per step): re-simulating per
step of a few years is the resolution the study asks for.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from planner.chemistry import get_chemistry
from planner.designs.candidates import (
    Outcome,
    SiteDesigns,
    requirement_wh,
    window_frac,
    worn_out_soh_frac,
)
from planner.site.model import SiteModel
from planner.study.loading import Study


@dataclass(frozen=True)
class LoadStep:
    """Packs installed in years ``first_year..last_year`` are designed for the site's own
    load times ``load_factor``."""

    first_year: int
    last_year: int
    load_factor: float


def load_steps(growth_frac_per_year: float, horizon_years: int, step_years: int) -> list[LoadStep]:
    """The install windows of a site and the load each is designed for (the load at the
    start of the year after the window: ``(1 + g)^(last + 1)``)."""
    h = int(horizon_years)
    if growth_frac_per_year == 0.0:
        return [LoadStep(0, h - 1, 1.0)]
    n = max(1, int(step_years))
    return [LoadStep(e, min(e + n, h) - 1, float((1.0 + growth_frac_per_year) ** min(e + n, h)))
            for e in range(0, h, n)]


def scaled_model(model: SiteModel, factor: float) -> SiteModel:
    """``model`` with its own load (heater and shelter HVAC excluded) times ``factor``."""
    extra = model.heater_power_w + (0.0 if model.site.charging == "mains" else model.hvac_power_w)
    load = (model.load_w - extra) * factor + extra
    return dataclasses.replace(model, load_w=load, daily_load_wh=float(load.sum() / 365.0),
                               peak_load_w=float(model.peak_load_w * factor))


def requirement_share(outcome: Outcome, model: SiteModel) -> float:
    """Share of the pack's rated capacity the site's requirement takes at ``model``'s load
    (through the charge-voltage window, at the coldest battery temperature)."""
    d = outcome.design
    chem = get_chemistry(d.chemistry)
    return requirement_wh(model) / (d.pack.capacity_wh * window_frac(chem, d.charge_voltage_v_per_cell)
                                    * float(chem.available_capacity_fraction(model.design_temp_c)))


def grown_life_years(outcome: Outcome, model: SiteModel, growth_frac_per_year: float, lag_years: float) -> float:
    """Life of a pack while the load keeps growing after the load it was designed for.

    ``model`` is the site at that designed load. The requirement share of rated capacity
    grows as ``(1 + g)^(a - lag)`` from age ``lag`` on; the life is the first month the
    SOH curve falls to it (or to the worn-out floor), never longer than ``outcome.life_years``.
    """
    if growth_frac_per_year <= 0.0 or outcome.soh_monthly is None or len(outcome.soh_monthly) == 0:
        return outcome.life_years
    d = outcome.design
    share = requirement_share(outcome, model)
    life = life_under_growth(outcome.soh_monthly, share, worn_out_soh_frac(d.chemistry),
                             growth_frac_per_year, lag_years)
    return float(min(outcome.life_years, life))


def life_under_growth(soh_monthly, requirement_share: float, worn_out_soh_frac: float,
                      growth_frac_per_year: float, lag_years: float) -> float:
    """Years until a monthly SOH curve first falls to ``max(worn_out, share x (1 + g)^(a - lag))``
    (the share never below its designed value), linear between months; inf if never."""
    soh = np.asarray(soh_monthly, dtype=float)
    ages = np.arange(soh.size) / 12.0
    need = np.maximum(worn_out_soh_frac,
                      requirement_share * np.maximum(1.0, (1.0 + growth_frac_per_year) ** (ages - lag_years)))
    gap = soh - need
    short = np.nonzero(gap <= 0.0)[0]
    if short.size == 0:
        return float("inf")
    k = int(short[0])
    if k == 0:
        return 0.0
    return float(ages[k - 1] + gap[k - 1] / (gap[k - 1] - gap[k]) / 12.0)


def evaluate_with_growth(study: Study, models: list[SiteModel], evaluate) -> list[SiteDesigns]:
    """Designs of every model, with one set per load step at sites whose load grows.

    ``evaluate(study, models) -> [SiteDesigns]`` runs the design stage. Designs of a step carry
    its install window (``Design.install_years``; ids of later steps end in ``@y<first>``)
    and a life shortened by the growth after it. A site without growth is evaluated as
    it is.
    """
    h = study.settings["study"]["horizon_years"]
    step_years = study.settings["candidates"]["load_growth_step_years"]
    runs, owner = [], []
    for j, model in enumerate(models):
        g = float(model.site.load_growth_frac_per_year or 0.0)
        for step in load_steps(g, h, step_years):
            runs.append(model if g == 0.0 else scaled_model(model, step.load_factor))
            owner.append((j, step, g))
    evaluated = evaluate(study, runs)
    out: list[SiteDesigns | None] = [None] * len(models)
    for (j, step, g), run, designs in zip(owner, runs, evaluated):
        if g == 0.0:
            out[j] = designs
            continue
        window = (step.first_year, step.last_year)
        outcomes = [dataclasses.replace(o, design=dataclasses.replace(o.design, install_years=window),
                                        life_years=grown_life_years(o, run, g, 1.0))
                    for o in designs.outcomes]
        if out[j] is None:  # the first step holds the pack in service today
            existing = designs.existing
            if existing is not None:
                lag = float(step.last_year + 1)
                existing = dataclasses.replace(
                    existing, life_years=grown_life_years(existing, run, g, lag),
                    requirement_growth=(requirement_share(existing, run), g, lag))
            out[j] = dataclasses.replace(designs, outcomes=outcomes, existing=existing)
        else:
            out[j].outcomes.extend(outcomes)
    return out
