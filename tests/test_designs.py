"""Candidate designs: sizing wiring, end-of-life threshold and behaviour facts."""

from pathlib import Path

import numpy as np
import pytest

from planner.chemistry import get_chemistry
from planner.designs.candidates import (
    enumerate_site_designs,
    max_service_years,
    requirement_wh,
    window_frac,
    worn_out_soh_frac,
)
from planner.designs.evaluation import evaluate_fleet
from planner.site.model import model_sites
from planner.study.loading import load_study

QUICK = Path(__file__).resolve().parents[1] / "scenarios" / "quick.toml"


@pytest.fixture(scope="module")
def quick():
    study = load_study(QUICK)
    models = model_sites(study)
    return study, models, evaluate_fleet(study, models)


def test_reference_size_follows_the_ieee_1013_chain(quick):
    # IEEE 1013 / IEEE 1562 chain: E_day x N_aut / DOD_max x K_T x K_age x K_margin, with
    # K_T = 1 / available capacity at the coldest battery temperature (research notes §1.2).
    study, models, results = quick
    model, result = models[0], results[0]
    for chem_id, reference in result.references.items():
        chem = get_chemistry(chem_id)
        if not chem.rechargeable:
            continue
        k_t = max(1.0 / float(chem.available_capacity_fraction(model.design_temp_c)), 1.0)
        expected = (model.daily_load_wh * model.site.autonomy_days / chem.max_dod_frac
                    * k_t * 1.25 * 1.10)
        assert reference.capacity_wh == pytest.approx(expected, rel=1e-9)


def test_end_of_life_threshold_is_requirement_over_deliverable_energy(quick):
    # Definition (DESIGN.md): end of life is when the pack can no longer carry
    # load x days of autonomy at the coldest battery temperature after derating.
    _, models, results = quick
    for model, result in zip(models, results):
        for o in result.outcomes:
            chem = get_chemistry(o.design.chemistry)
            deliverable = (o.design.pack.capacity_wh * window_frac(chem, o.design.charge_voltage_v_per_cell)
                           * float(chem.available_capacity_fraction(model.design_temp_c)))
            expected = max(requirement_wh(model) / deliverable, worn_out_soh_frac(chem.id))
            assert o.eol_soh_frac == pytest.approx(expected, rel=1e-9)
            # the knee floor: lithium-ion lives end no lower than the lowest SOH the tests
            # behind the default aging set reached (80 %, chemistries.toml, from memory);
            # the life is flagged when that floor, not the load, decides it
            need = requirement_wh(model) / deliverable
            if chem.id in ("lfp", "nmc", "lto"):
                assert o.eol_soh_frac >= 0.8 - 1e-12
                assert o.knee_floor == (need < 0.8)


def test_larger_pack_never_has_a_higher_threshold(quick):
    # common practice: oversizing buys margin, so a bigger pack of the same chemistry and
    # charge voltage reaches its end-of-life threshold at a lower SOH.
    _, _, results = quick
    for result in results:
        groups = {}
        for o in result.outcomes:
            groups.setdefault((o.design.chemistry, o.design.charge_voltage_v_per_cell), []).append(o)
        for outcomes in groups.values():
            outcomes.sort(key=lambda o: o.design.pack.capacity_wh)
            thresholds = [o.eol_soh_frac for o in outcomes]
            assert all(a >= b - 1e-12 for a, b in zip(thresholds, thresholds[1:]))


def test_lives_respect_the_service_limit(quick):
    # common practice: no pack is planned beyond its chemistry's design life.
    _, _, results = quick
    for result in results:
        for o in result.outcomes:
            assert o.life_years <= max_service_years(o.design.chemistry) + 1e-9
            assert np.all(np.diff(o.soh_monthly) <= 1e-12)  # SOH never increases


def test_hotter_climate_never_lengthens_life():
    # Behaviour check (common practice: heat shortens battery life). A pack whose charging
    # the heat blocks (above its maximum charge temperature) has another duty: it sits
    # emptier, which can slow its calendar fade; it is compared on its served load instead.
    study = load_study(QUICK)
    base = {o.design.design_id: o
            for r in evaluate_fleet(study, model_sites(study)) for o in r.outcomes}
    warm = {o.design.design_id: o
            for r in evaluate_fleet(study, model_sites(study, extra_warming_k=5.0))
            for o in r.outcomes}
    shared = set(base) & set(warm)
    same_duty = [d for d in shared if warm[d].charge_blocked_hot_hours == 0]
    assert len(same_duty) > 10
    for design_id in same_duty:
        assert warm[design_id].life_years <= base[design_id].life_years + 1e-9, design_id
    for design_id in set(shared) - set(same_duty):
        assert warm[design_id].unserved_wh_per_year >= base[design_id].unserved_wh_per_year - 1e-6


def test_no_rechargeable_pack_without_a_charging_source(tmp_path):
    # A site with no charging source can only take primary cells.
    (tmp_path / "s.csv").write_text(
        "id,region,climate,load_w,charging,autonomy_days\nX,r,hot-desert,0.05,none,30\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "s.csv"\n')
    study = load_study(tmp_path / "s.toml")
    model = model_sites(study)[0]
    designs, excluded, _ = enumerate_site_designs(study, 0, model)
    assert {d.chemistry for d in designs} == {"lisocl2"}
    assert set(excluded) == {"vrla", "lfp", "nmc", "lto"}


def test_far_from_best_keeps_what_can_win_within_each_chemistry():
    # Definition of the screen (docs/scaling.md): a design is out when its cost with no
    # trip exceeds the best full-trip cost of its chemistry at the site by over 10 %.
    from types import SimpleNamespace

    from planner.designs.screening import RELEVANCE_FRAC, mark_far_from_best

    def outcome(chem, low, high):
        design = SimpleNamespace(site_index=0, chemistry=chem, is_existing=False)
        return SimpleNamespace(design=design, eol_soh_frac=0.8, dominated=False, life_years=5.0,
                               far_from_best=False, bounds=(low, high))

    best = outcome("lfp", 900.0, 1000.0)
    close = outcome("lfp", 1000.0 * (1 + RELEVANCE_FRAC) - 1.0, 2000.0)
    far = outcome("lfp", 1000.0 * (1 + RELEVANCE_FRAC) + 1.0, 2000.0)
    other = outcome("vrla", 5000.0, 6000.0)  # dear, but the best of its own chemistry
    group = [best, close, far, other]
    mark_far_from_best(group, lambda o: o.bounds)
    assert [o.far_from_best for o in group] == [False, False, True, False]


def test_packs_left_unsimulated_are_the_ones_the_full_run_marks_dominated(monkeypatch):
    # Internal equivalence (a speed-up must not change a decision): with prices known, a
    # dearer and heavier pack of a chemistry whose smallest pack already lasts to the
    # service limit with no load unserved is not simulated. Against the run that
    # simulates every pack: the same designs are offered with the same figures, and every
    # pack left out is one that run marks dominated (or too small to be offered).
    from planner.designs import evaluation as design_evaluation
    from planner.plan.costing import offered_outcomes, pack_price, standalone_cost_bounds

    study = load_study(Path(__file__).resolve().parents[1] / "scenarios" / "corvale.toml")
    models = model_sites(study)

    def run():
        return evaluate_fleet(
            study, models, price_of=lambda chem, wh: pack_price(study, chem, wh),
            cost_bounds_of=lambda m, o: standalone_cost_bounds(study, m, o))

    pruned = run()
    monkeypatch.setattr(design_evaluation, "_smallest_packs", lambda chunk: np.ones(len(chunk), bool))
    full = run()

    def figures(o):
        return o.life_years, o.life_p10_years, o.unserved_wh_per_year

    left_out = 0
    for a, b in zip(pruned, full):
        ours, theirs = offered_outcomes(a), offered_outcomes(b)
        assert [o.design.design_id for o in ours] == [o.design.design_id for o in theirs]
        for o, t in zip(ours, theirs):
            # the aging of a lane runs beside other lanes: the last bits may differ
            assert figures(o) == pytest.approx(figures(t), rel=1e-12, nan_ok=True)
        kept = {o.design.design_id for o in a.outcomes}
        missing = [o for o in b.outcomes if o.design.design_id not in kept]
        left_out += len(missing)
        assert all(o.dominated or o.eol_soh_frac >= 1.0 for o in missing)
    assert left_out > 0  # the demo has lithium packs at their service limit
