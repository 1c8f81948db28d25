"""The whole chain for one study, from validated inputs to the plan.

scenario -> site models (climate, battery temperature, load, charging)
         -> candidate designs (energy balance, aging, pack spread)
         -> fleet problem (costs per candidate) -> optimizer
         -> chemistry comparison and sensitivity -> plan (a plain dict, docs/plan-json.md)

This is the only module that knows every stage; each stage stays a pure function of
its inputs.
"""

from __future__ import annotations

from planner.costing import build_problem, offered_outcomes, pack_price
from planner.designs import evaluate_fleet
from planner.load_growth import evaluate_with_growth
from planner.optimize import compare_chemistries, solve_fleet
from planner.optimize.analysis import compare_solutions, sensitivity
from planner.plan_assembly import assemble_plan
from planner.scenario import Study
from planner.site_model import model_sites
from planner.thermal_measures import evaluate_with_measures

WARMING_SENSITIVITY_K = 2.0


# Steps a progress bar counts besides one per site: designs, fleet solve, chemistry
# comparison, sensitivity.
PROGRESS_STAGES = 4


def run_study(study: Study, *, progress=None) -> dict:
    """Plan ``study``; returns the plan dict (see docs/plan-json.md).

    ``progress(step, label)`` is called once per site and once per later stage
    (``len(study.sites) + PROGRESS_STAGES`` steps in all).
    """
    def advance(label):
        if progress:
            progress(1, label=label)

    models = model_sites(study, progress=progress)
    if progress:
        progress(0, label="Aging candidate packs")
    designs, hints = _evaluate_with_measures(study, models)
    advance("Optimising the fleet")
    problem = build_problem(study, models, designs, hints)
    solution = solve_fleet(problem)
    advance("Comparing chemistries")
    # Every comparison and sensitivity case is a full solve: each gets half the main limit.
    limit = 0.5 * study.settings["solver"]["time_limit_s"]
    comparison = compare_chemistries(problem, list(study.settings["candidates"]["chemistries"]),
                                     time_limit_s=limit)
    advance("Sensitivity cases")
    cases = []
    if study.settings["output"]["sensitivity"]:
        cases = sensitivity(problem, solution, time_limit_s=limit)
        warm_models = model_sites(study, extra_warming_k=WARMING_SENSITIVITY_K)
        warm = solve_fleet(build_problem(study, warm_models, _evaluate_with_measures(study, warm_models)[0]))
        cases.append(compare_solutions(f"warming +{WARMING_SENSITIVITY_K:g} K", solution, warm))
    advance("Writing the plan")
    return assemble_plan(study, models, designs, problem, solution, comparison, cases)


def _evaluate(study: Study, models):
    return evaluate_fleet(study, models, price_of=lambda chem, wh: pack_price(study, chem, wh))


def _evaluate_with_measures(study: Study, models):
    """Designs of every site, its thermal-measure variants and load-growth steps included
    (and what measure would serve a site nothing serves)."""
    return evaluate_with_measures(study, models,
                                  lambda st, ms: evaluate_with_growth(st, ms, _evaluate),
                                  lambda d: bool(offered_outcomes(d)))
