"""The whole chain for one study, from validated inputs to the plan.

scenario -> site models (climate, battery temperature, load and charging)
         -> candidate designs (energy balance, aging, pack spread)
         -> fleet problem (costs per candidate) -> optimizer
         -> chemistry comparison and sensitivity -> plan (a plain dict, docs/plan-json.md)

This is the only module that knows every stage; each stage stays a pure function of
its inputs. The per-site stages are one function of a list of site rows
(:func:`plan_sites`), mapped over chunks of a fixed number of sites; the re-solves are
functions of a fleet problem. Both run over :class:`planner.parallel.Workers`, so the
plan is the same for any number of workers.
"""

from __future__ import annotations

from dataclasses import replace
from functools import partial
from types import MappingProxyType

import numpy as np

from planner.designs.evaluation import evaluate_fleet
from planner.designs.load_growth import evaluate_with_growth
from planner.evidence import rank_tests, update_fleet
from planner.optimize import solve_fleet
from planner.optimize.analysis import (
    compare_chemistry,
    compare_solutions,
    restrict_chemistry,
    same_method,
    sensitivity_problems,
)
from planner.parallel import StageLog, Workers
from planner.plan.assembly import assemble_plan
from planner.plan.costing import build_problem, offered_outcomes, pack_price, standalone_cost_bounds
from planner.site.model import model_sites
from planner.site.thermal_measures import check_site_measures, evaluate_with_measures
from planner.study.loading import Study

WARMING_SENSITIVITY_K = 2.0

# Sites per piece of the per-site stages: set by the fleet's size alone, never by the
# number of workers (results do not depend on it anyway). About 8 pieces spread a fleet
# over the cores; up to 100 sites a piece amortise the hour loops (measured 31.8 ms of
# CPU per site at 100 sites a piece, 38.5 at 25) and bound each worker's hourly arrays
# (a 100-site piece peaked at 655 MB, benchmarks/bench_plan.py fleet).
CHUNK_SITES_MIN = 10
CHUNK_SITES_MAX = 100
PIECES = 8

# Steps a progress bar counts besides one per site and stage pass: fleet solve,
# chemistry comparison and sensitivity, plan.
PROGRESS_STAGES = 3


def progress_steps(study: Study) -> int:
    """Steps of the ``progress`` callback of :func:`run_study` for this study."""
    passes = 2 if study.settings["output"]["sensitivity"] else 1
    return passes * len(study.sites) + PROGRESS_STAGES


def plan_sites(study: Study, extra_warming_k: float = 0.0, curves: bool = True):
    """Site summaries and designs (pack spread included) of every site of ``study``.

    A pure function of the study's settings and its site rows: map it over studies
    holding a chunk of the sites each (:func:`site_chunks`) and join the lists.
    Returns per site its summary, its designs (thermal-measure variants and load-growth
    steps included; variants' models as summaries) and the hint of what thermal measure
    would serve it when nothing does ("" otherwise). ``curves=False`` drops the monthly
    state-of-health curves too (a sensitivity case: its plan is costed, never drawn).
    """
    models = model_sites(study, extra_warming_k=extra_warming_k)
    designs, hints = _evaluate_with_measures(study, models)
    designs = [_variants_summarised(_offered_only(d, curves)) for d in designs]
    return ([m.summary() for m in models], designs,
            [hints.get(i, "") for i in range(len(models))])


def _evaluate(study: Study, models):
    return evaluate_fleet(
        study, models, price_of=lambda chem, wh: pack_price(study, chem, wh),
        cost_bounds_of=lambda model, outcome: standalone_cost_bounds(study, model, outcome))


def _evaluate_with_measures(study: Study, models):
    """Designs of every site, its thermal-measure variants and load-growth steps included
    (and what measure would serve a site nothing serves)."""
    return evaluate_with_measures(study, models,
                                  lambda st, ms: evaluate_with_growth(st, ms, _evaluate),
                                  lambda d: bool(offered_outcomes(d)))


def _variants_summarised(site_designs):
    """The measure variants' site models as summaries: no hourly arrays leave a piece."""
    if not site_designs.measure_models:
        return site_designs
    return replace(site_designs, measure_models={
        k: v.summary() for k, v in site_designs.measure_models.items()})


def _offered_only(site_designs, curves: bool = True):
    """The site's designs cut to those the plan can use (offered to the optimizer, the
    pack installed today), without the aging curves the plan does not show (without
    any curve when ``curves`` is False): a fleet's designs then stay small in memory and
    cheap to send back from a worker. The chemistries tried are kept for the reason a
    site goes unserved."""
    offered = offered_outcomes(site_designs)
    for o in (*offered, site_designs.existing):
        if o is not None:
            o.calendar_loss_frac = o.cycle_loss_frac = _EMPTY
            if not curves:
                o.soh_monthly = _EMPTY
                o.soh_p10_monthly = o.soh_p90_monthly = None
    return replace(site_designs, outcomes=offered, tried=tuple(site_designs.tried_chemistries()))


_EMPTY = np.empty(0)


def _plan_sites_piece(args):
    study, extra_warming_k = args
    # the warming case is costed, not drawn: its pieces bring back no curves
    return plan_sites(study, extra_warming_k, curves=extra_warming_k == 0.0)


def site_chunks(study: Study, extra_warming_k: float = 0.0) -> list:
    """(study holding a piece of the sites, warming) pieces for :func:`plan_sites`.

    The warming case uses the same pieces with ``extra_warming_k``: every piece of the
    per-site stage depends on air temperature (climate, battery temperature, heater and
    shelter energy in the load, PV cell temperature, the design temperature of the
    reference size, hence the packs themselves, energy balance, aging, spread), so it
    is recomputed, on the workers and while the parent solves the base plan.
    """
    size = chunk_sites(len(study.sites))
    # field records are read in the planner's process, never by the per-site pieces
    return [(replace(study, sites=study.sites[i:i + size], field_data=None), extra_warming_k)
            for i in range(0, len(study.sites), size)]


def chunk_sites(n_sites: int) -> int:
    """Sites per piece of a fleet of ``n_sites``."""
    return min(CHUNK_SITES_MAX, max(CHUNK_SITES_MIN, -(-n_sites // PIECES)))


def run_study(study: Study, *, progress=None, workers: int = 1, log: StageLog | None = None) -> dict:
    """Plan ``study``; returns the plan dict (see docs/plan-json.md).

    ``progress(step, label)`` advances a bar of :func:`progress_steps` steps.
    ``workers`` processes share the per-site stages and the re-solves (1: all in this
    process); ``log`` collects wall, CPU and memory per stage.
    """
    log = log if log is not None else StageLog()

    def advance(step, label):
        if progress:
            progress(step, label=label)

    sensitivity_on = study.settings["output"]["sensitivity"]
    check_site_measures(study)  # a bad measure id fails now, not pieces into the run
    # A study of one piece gains nothing from starting processes (the plan is the same).
    with Workers(min(workers, len(site_chunks(study))), log) as pool:
        advance(0, "Sites and candidate packs")
        with log.stage("sites and designs"):
            summaries, designs, hints = _join(pool.map(
                _plan_sites_piece, site_chunks(study),
                progress=lambda piece: advance(len(piece[0]), "Sites and candidate packs")))
        # The warming case's sites start in the background while the fleet is solved.
        warm_handle = pool.submit(_plan_sites_piece, site_chunks(study, WARMING_SENSITIVITY_K)) \
            if sensitivity_on and pool.workers > 1 else None
        with log.stage("field evidence"):
            evidence = update_fleet(study, designs)
        advance(0, "Optimising the fleet")
        with log.stage("optimizer"):
            problem = build_problem(study, summaries, designs, dict(enumerate(hints)), evidence=evidence)
            solution = solve_fleet(problem)
        advance(1, "Comparing chemistries and sensitivity cases")
        # Every comparison and sensitivity case is a full solve: each gets half the main limit.
        limit = 0.5 * study.settings["solver"]["time_limit_s"]
        chems = list(study.settings["candidates"]["chemistries"])
        resolve = same_method(problem, solution)
        # Each comparison task gets its chemistry's problem only (sites that lack the
        # chemistry keep their own candidates): the same answer from a smaller problem.
        compare_handle = pool.submit(partial(_compare, base=solution, time_limit_s=limit),
                                     [(chem, restrict_chemistry(resolve, chem, others_keep_all=True))
                                      for chem in chems])
        cases_handle = pool.submit(_solve, sensitivity_problems(resolve, time_limit_s=limit)) \
            if sensitivity_on else None
        # while the workers re-solve: where one more capacity test pays
        with log.stage("value of a capacity test"):
            test_values = rank_tests(study, problem, solution, designs, evidence) \
                if study.settings["field_data"]["test_value"] else []
        warm = None
        if sensitivity_on:
            # The warming case's sites were queued first: the planner's process solves its
            # fleet while the workers carry on with the re-solves queued behind them.
            with log.stage("warming sensitivity"):
                step = lambda piece: advance(len(piece[0]), "Warming case")  # noqa: E731
                if warm_handle is None:
                    warm_handle = pool.submit(_plan_sites_piece,
                                              site_chunks(study, WARMING_SENSITIVITY_K))
                warm_summaries, warm_designs, _ = _join(pool.gather(warm_handle, progress=step))
                warm = solve_fleet(build_problem(study, warm_summaries, warm_designs, evidence=evidence))
        with log.stage("comparison and sensitivity solves"):
            comparison = pool.gather(compare_handle)
            cases = []
            if cases_handle is not None:
                cases = [compare_solutions(name, solution, sol)
                         for name, sol in pool.gather(cases_handle)]
            if warm is not None:
                cases.append(compare_solutions(f"warming +{WARMING_SENSITIVITY_K:g} K", solution, warm))
    advance(1, "Writing the plan")
    with log.stage("plan assembly"):
        plan = assemble_plan(study, summaries, designs, problem, solution, comparison, cases,
                             evidence=evidence, test_values=test_values)
    advance(1, "Writing the plan")
    return plan


def evidence_only(study: Study, site_ids=None):
    """Field evidence without a plan (``planner evidence``): the packs in service of the
    sites with field records (and of ``site_ids``) are simulated, no candidate pack, and
    their posteriors computed. Returns ``(FleetEvidence or None, {site id: SiteDesigns})``."""
    data = study.field_data
    wanted = set(site_ids or ())
    if data is not None:
        wanted |= {t.site_id for t in data.tests} | set(data.logs)
    sites = tuple(s for s in study.sites if s.id in wanted and s.has_existing_pack)
    if not sites:
        return update_fleet(replace(study, sites=()), []), {}
    settings = dict(study.settings)
    settings["candidates"] = MappingProxyType({**study.settings["candidates"], "chemistries": ()})
    settings["output"] = MappingProxyType({**study.settings["output"], "sensitivity": False})
    sub = replace(study, sites=sites, settings=MappingProxyType(settings))
    designs = evaluate_with_growth(sub, model_sites(sub), _evaluate)
    return update_fleet(sub, designs), {s.id: d for s, d in zip(sites, designs)}


def _compare(chem_problem, **options):
    chemistry, problem = chem_problem
    return compare_chemistry(problem, chemistry, **options)


def _solve(named_problem):
    name, problem = named_problem
    return name, solve_fleet(problem)


def _join(pieces):
    summaries, designs, hints = [], [], []
    for piece_summaries, piece_designs, piece_hints in pieces:
        summaries += piece_summaries
        designs += piece_designs
        hints += piece_hints
    return summaries, designs, hints
