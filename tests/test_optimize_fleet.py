"""Fleet optimizer checks against published/computed vectors, brute force and
properties that follow from the model (sources beside each check)."""

from dataclasses import replace

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_optimize_bruteforce import fleet_best

from planner.errors import InputError
from planner.optimize import (
    Candidate,
    ExistingPack,
    FleetProblem,
    SiteOptions,
    compare_chemistries,
    sensitivity,
    solve_fleet,
)
from planner.optimize.analysis import restrict_chemistry, scale_trip_costs

ALL_MONTHS = tuple(range(1, 13))


def cand(design, life, pack, chem="lfp", install=0.0, disposal=0.0, mass=10.0, probs=None, trend=0.0,
         measure="", measure_price=0.0, measure_labour=0.0):
    return Candidate(design, chem, 1.0, 3.4, 1000.0, mass, pack, install, disposal, life, probs, "calendar",
                     price_trend_frac_per_year=trend, thermal_measure=measure, measure_price=measure_price,
                     measure_labour_cost=measure_labour)


def orp_site(i, life, pack, region="A"):
    # the ORP test vectors of research note §5.3 start from new packs at t = 0 and
    # replace in periods 1..12: here an existing pack of remaining life U, horizon 13
    # (years 0..12), no residual credit (the plain ORP has none)
    return SiteOptions(f"s{i}", region, ALL_MONTHS, [cand(f"d{i}", life, pack)], existing=ExistingPack(life))


def orp(sites, rate, solver="auto"):
    return FleetProblem(sites, 13, rate, {"A": 3000.0}, residual_value=False, gap_rel_frac=1e-9, solver=solver)


def test_two_site_grouping_vector():
    # research note §5.3 (computed with scipy.optimize.milp / HiGHS): lives 4, 6; packs
    # 1000, 1500; shared trip 3000; 12 periods; no discount -> 15,000
    sol = solve_fleet(orp([orp_site(1, 4, 1000), orp_site(2, 6, 1500)], 0.0))
    assert sol.status == "optimal"
    assert sol.objective == pytest.approx(15000.0, abs=1e-6)
    assert sol.gap_frac == pytest.approx(0.0, abs=1e-9)
    # per-site costs add up to the total (bookkeeping identity)
    assert sum(p.present_cost for p in sol.sites) == pytest.approx(sol.objective)


@pytest.mark.parametrize("solver", ["highs", "cbc"])
def test_three_site_grouping_vectors(solver):
    sites = [orp_site(1, 4, 1000), orp_site(2, 6, 1500), orp_site(3, 5, 1200)]
    # research note §5.3 (independent MILP, computed): undiscounted -> 17,400
    assert solve_fleet(orp(sites, 0.0, solver)).objective == pytest.approx(17400.0, abs=1e-6)
    # research note §5.3: 3 % -> 14,047.42 = 4000*(SPV4+SPV8+SPV12) + 2700*(SPV4+SPV8)
    sol = solve_fleet(orp(sites, 0.03, solver))
    assert sol.objective == pytest.approx(14047.42, abs=0.01)
    assert sol.best_bound <= sol.objective + 1e-6


def test_three_site_vector_without_grouping():
    # research note §5.3: each site in its own region (a trip per site visit) -> 29,400
    sites = [orp_site(1, 4, 1000, "A"), orp_site(2, 6, 1500, "B"), orp_site(3, 5, 1200, "C")]
    prob = replace(orp(sites, 0.0), trip_cost_by_region={"A": 3000.0, "B": 3000.0, "C": 3000.0})
    assert solve_fleet(prob).objective == pytest.approx(29400.0, abs=1e-6)


def test_three_site_variant_by_brute_force():
    # our own variant, optimum by brute-force enumeration (tests/test_optimize_bruteforce.py,
    # priced with NIST HB 135 cash flows): two designs per site, residual value on,
    # disposal and labour, 5 % over 6 years
    sites = [
        SiteOptions("a", "R", ALL_MONTHS, [cand("a1", 2, 900, disposal=50), cand("a2", 4.5, 2100, "nmc", 200)]),
        SiteOptions("b", "R", ALL_MONTHS, [cand("b1", 3, 1200, install=150)], existing=ExistingPack(1.5, disposal_cost=40)),
        SiteOptions("c", "R", ALL_MONTHS, [cand("c1", 5, 1600), cand("c2", 2.5, 700, "vrla", disposal=30)],
                    site_visit_cost=120),
    ]
    prob = FleetProblem(sites, 6, 0.05, {"R": 2500.0}, gap_rel_frac=1e-9)
    assert solve_fleet(prob).objective == pytest.approx(fleet_best(prob), rel=1e-9)


def test_nist_worked_costs_through_the_optimizer():
    # research note §3.4 (NIST HB 135 formulas, computed): a 4,500 pack lasting 10 y at 3 %
    # over 20 y with a 3,000 trip and 100 disposal -> 13,155.11 (0 and 10 is optimal)
    site = SiteOptions("x", "A", ALL_MONTHS, [cand("c", 10.0, 4500.0, disposal=100.0)])
    sol = solve_fleet(FleetProblem([site], 20, 0.03, {"A": 3000.0}))
    assert sol.objective == pytest.approx(13155.11, abs=0.01)
    assert sol.sites[0].replacement_years == (0, 10)
    # the 2,000 pack lasting 5 y -> 16,467.68 (replacements forced at 0, 5, 10, 15)
    site = replace(site, candidates=[cand("a", 5.0, 2000.0, disposal=100.0)])
    sol = solve_fleet(FleetProblem([site], 20, 0.03, {"A": 3000.0}))
    assert sol.objective == pytest.approx(16467.68, abs=0.01)


def test_failure_risk_cost_is_priced():
    # hand computation with NIST HB 135 end-of-year discounting: one pack for 3 years,
    # first failure in year 2 with probability 0.1 and year 3 with 0.2, failure cost =
    # unplanned trip 800 + downtime 0 (open all year): 800*(0.1*1.05**-2 + 0.2*1.05**-3)
    # (a 1,000 pack and 100 trip make one pack for the whole horizon the optimum)
    site = SiteOptions("x", "A", ALL_MONTHS, [cand("c", 3.0, 1000.0, probs=(0.0, 0.1, 0.3))],
                       unplanned_trip_cost=800.0, downtime_cost_per_day=50.0)
    sol = solve_fleet(FleetProblem([site], 3, 0.05, {"A": 100.0}))
    assert sol.sites[0].replacement_years == (0,)
    assert sol.sites[0].cost.failure_risk == pytest.approx(800 * (0.1 * 1.05**-2 + 0.2 * 1.05**-3), rel=1e-9)


def test_existing_pack_sets_first_replacement():
    # the existing pack can carry the site 2.5 more years: the first new pack goes in no
    # later than year 2 (replacement at or before the predicted life: docs/optimizer.md)
    site = SiteOptions("x", "A", ALL_MONTHS, [cand("c", 4.0, 1000.0)], existing=ExistingPack(2.5))
    sol = solve_fleet(FleetProblem([site], 8, 0.03, {"A": 500.0}))
    years = sol.sites[0].replacement_years
    assert years[0] <= 2
    assert all(b - a <= 4 for a, b in zip(years, years[1:]))


def test_trip_month_is_first_common_access_month():
    # two sites open June-August and July-September travel together in July, the first
    # month open to both (docs/optimizer.md: trips only in accessible months)
    a = SiteOptions("a", "N", (6, 7, 8), [cand("c", 5, 1000)])
    b = SiteOptions("b", "N", (7, 8, 9), [cand("c", 5, 1000)])
    sol = solve_fleet(FleetProblem([a, b], 5, 0.0, {"N": 1000.0}))
    assert {t.month for t in sol.trips} == {7}
    assert sol.trips[0].site_ids == ("a", "b")
    assert sol.objective == pytest.approx(1000 + 2000)  # one shared trip, two packs (computed)


def test_unserved_site_is_an_answer():
    ok = SiteOptions("ok", "A", ALL_MONTHS, [cand("c", 5, 1000)])
    cold = SiteOptions("cold", "A", ALL_MONTHS, [], unserved_reason="site cold: no candidate carries it at -35 C")
    short = SiteOptions("short", "A", ALL_MONTHS, [cand("c", 0.6, 100)])
    closed = SiteOptions("closed", "A", (), [cand("c", 5, 1000)])
    sol = solve_fleet(FleetProblem([ok, cold, short, closed], 5, 0.0, {"A": 100.0}))
    assert sol.status == "infeasible"
    limits = {u.site_id: u.limit for u in sol.unserved}
    assert limits == {"cold": "candidates", "short": "life", "closed": "access"}
    assert "-35 C" in next(u.reason for u in sol.unserved if u.site_id == "cold")
    assert [p.site_id for p in sol.sites] == ["ok"]
    assert sol.objective == pytest.approx(1100.0)  # pack + trip for the servable site (computed)


def test_crew_limit_infeasible_names_the_limit():
    # three new sites all need a pack in year 0 but the crew can visit two per year
    sites = [SiteOptions(f"s{i}", "A", ALL_MONTHS, [cand("c", 5, 1000)]) for i in range(3)]
    sol = solve_fleet(FleetProblem(sites, 5, 0.0, {"A": 100.0}, crew_site_visits_per_year=2))
    assert sol.status == "infeasible"
    assert any("crew" in b for b in sol.binding_limits)


def test_crew_limit_binding_is_met_by_joint_model():
    # 4 existing packs all due by year 2; crew of 2 site visits per year (fleet-wide limit):
    # the joint model must spread the visits over the years
    sites = [SiteOptions(f"s{i}", "A", ALL_MONTHS, [cand("c", 3, 1000)], existing=ExistingPack(2.0))
             for i in range(4)]
    prob = FleetProblem(sites, 4, 0.0, {"A": 500.0}, crew_site_visits_per_year=2, gap_rel_frac=1e-9)
    sol = solve_fleet(prob)
    assert sol.status == "optimal"
    assert "joint" in sol.decomposition
    per_year = {}
    for p in sol.sites:
        for t in p.replacement_years:
            per_year[t] = per_year.get(t, 0) + 1
    assert max(per_year.values()) <= 2
    # the limit can only raise the cost (relaxation argument)
    assert sol.objective >= solve_fleet(replace(prob, crew_site_visits_per_year=None)).objective - 1e-6


def test_payload_limit_needs_two_trips():
    # two 60 kg packs and a 100 kg payload: year 0 needs two trips (computed: 2*300 + 2*1000)
    sites = [SiteOptions(f"s{i}", "A", ALL_MONTHS, [cand("c", 5, 1000, mass=60.0)]) for i in range(2)]
    sol = solve_fleet(FleetProblem(sites, 5, 0.0, {"A": 300.0}, payload_kg_per_trip=100.0))
    assert sol.objective == pytest.approx(2600.0)
    assert sol.trips[0].count == 2
    heavy = solve_fleet(FleetProblem(sites, 5, 0.0, {"A": 300.0}, payload_kg_per_trip=50.0))
    assert {u.limit for u in heavy.unserved} == {"payload_kg_per_trip"}


def test_bad_problem_raises_input_error():
    site = SiteOptions("x", "nowhere", ALL_MONTHS, [cand("c", 5, 1000)])
    with pytest.raises(InputError, match="nowhere"):
        solve_fleet(FleetProblem([site], 5, 0.0, {"A": 100.0}))
    with pytest.raises(InputError, match="access month 13"):
        solve_fleet(FleetProblem([replace(site, region="A", access_months=(13,))], 5, 0.0, {"A": 100.0}))


def test_json_dict_is_deterministic():
    sites = [orp_site(1, 4, 1000), orp_site(2, 6, 1500)]
    a = solve_fleet(orp(sites, 0.03)).to_dict()
    b = solve_fleet(orp(sites, 0.03)).to_dict()
    for d in (a, b):
        d["solver"].pop("seconds")
    assert a == b
    assert set(a) >= {"total_present_cost", "solver", "sites", "trips"}


# ---------------------------------------------------------------- random small fleets

@st.composite
def small_fleets(draw, max_regions=2, max_sites=3, h_max=5, rate=None, chems=("lfp", "vrla"), changes=None):
    h = draw(st.integers(2, h_max))
    # one real price trend per chemistry (the study's [prices.<chem>] table)
    trend = {c: draw(st.sampled_from([0.0, 0.0, -0.03, -0.2, 0.05])) for c in chems}
    # thermal measures: none, or a priced one paid once with the first new pack
    measures = {"": (0.0, 0.0), "heater": (float(draw(st.integers(0, 800))), float(draw(st.integers(0, 200))))}
    n_regions = draw(st.integers(1, max_regions))
    design_changes = draw(st.booleans()) if changes is None else changes
    sites = []
    for i in range(draw(st.integers(1, max_sites))):
        n_c = draw(st.integers(1, 3))
        cands = []
        for k in range(n_c):
            probs = None
            if draw(st.booleans()):
                steps = draw(st.lists(st.floats(0.0, 0.3), min_size=1, max_size=4))
                acc, probs = 0.0, []
                for s in steps:
                    acc = min(1.0, acc + s)
                    probs.append(acc)
                probs = tuple(probs)
            chem = draw(st.sampled_from(chems))
            measure = draw(st.sampled_from(sorted(measures)))
            cands.append(cand(f"d{i}{k}{measure}", draw(st.floats(1.0, 6.0)), float(draw(st.integers(100, 3000))),
                              chem=chem, install=float(draw(st.integers(0, 300))),
                              disposal=float(draw(st.integers(0, 200))), probs=probs, trend=trend[chem],
                              measure=measure, measure_price=measures[measure][0],
                              measure_labour=measures[measure][1]))
            if design_changes and k > 0 and draw(st.booleans()):
                # an install window, as a load step gives (planner.designs.load_growth)
                first = draw(st.integers(0, h - 1))
                last = draw(st.one_of(st.none(), st.integers(first, h - 1)))
                cands[-1] = replace(cands[-1], first_install_year=first, last_install_year=last)
        existing = None
        if draw(st.booleans()):
            existing = ExistingPack(draw(st.floats(0.0, 7.0)), disposal_cost=float(draw(st.integers(0, 100))))
        sites.append(SiteOptions(f"s{i}", f"R{draw(st.integers(0, n_regions - 1))}", ALL_MONTHS, cands,
                                 existing=existing, site_visit_cost=float(draw(st.integers(0, 200))),
                                 unplanned_trip_cost=float(draw(st.integers(0, 2000)))))
    trip = {f"R{r}": float(draw(st.integers(0, 5000))) for r in range(n_regions)}
    d = draw(st.sampled_from([0.0, 0.03, 0.1])) if rate is None else rate
    return FleetProblem(sites, h, d, trip, gap_rel_frac=1e-9, residual_value=draw(st.booleans()),
                        design_changes=design_changes)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets())
def test_milp_equals_brute_force(prob):
    # brute-force enumeration of trip years, designs and replacement years (independent
    # code path priced with planner.economics, NIST HB 135 cash flows)
    sol = solve_fleet(prob)
    assert sol.status == "optimal"
    assert sol.objective == pytest.approx(fleet_best(prob), rel=1e-7, abs=1e-6)
    assert sum(p.present_cost for p in sol.sites) == pytest.approx(sol.objective)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets(rate=0.0), st.floats(1.1, 4.0))
def test_higher_trip_cost_never_adds_trips(prob, factor):
    # revealed preference: optima at trip costs F1 < F2 satisfy (F2 - F1)(n2 - n1) <= 0,
    # so the number of trips (undiscounted, rate 0) never rises with the trip cost
    base = solve_fleet(prob)
    dear = solve_fleet(scale_trip_costs(prob, factor))
    assert sum(t.count for t in dear.trips) <= sum(t.count for t in base.trips)


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets(max_regions=1, max_sites=1, rate=0.0), st.floats(1.1, 4.0))
def test_higher_trip_cost_never_shortens_interval(prob, factor):
    # one site per region: every replacement is a trip, so by the same revealed-preference
    # argument the pack count never rises and the average interval never shortens
    def mean_interval(sol):
        return sum(prob.horizon_years / max(1, len(p.replacement_years)) for p in sol.sites) / len(sol.sites)
    base = solve_fleet(prob)
    dear = solve_fleet(scale_trip_costs(prob, factor))
    if base.sites:
        assert mean_interval(dear) >= mean_interval(base) - 1e-12


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets())
def test_forbidding_a_chemistry_never_lowers_cost(prob):
    # restriction of the feasible set can only raise the minimum (common practice of
    # optimisation: a subset's minimum is no lower)
    base = solve_fleet(prob)
    for res in compare_chemistries(prob):
        if res.status != "infeasible":
            assert res.total_present_cost >= base.objective - 1e-6 * max(1.0, abs(base.objective))


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets(), st.floats(0.0, 0.9))
def test_shorter_life_never_lowers_cost(prob, cut):
    # a shorter life shrinks every site's set of feasible schedules and lowers the linear
    # residual value (NIST HB 135 ch. 5), so the optimum cannot fall
    shorter = replace(prob, sites=[replace(s, candidates=[replace(c, life_years=max(1.0, c.life_years - cut))
                                                            for c in s.candidates]) for s in prob.sites])
    assert solve_fleet(shorter).objective >= solve_fleet(prob).objective - 1e-6


def test_sensitivity_cases():
    sites = [orp_site(1, 4, 1000), orp_site(2, 6, 1500), orp_site(3, 5, 1200)]
    prob = orp(sites, 0.03)
    cases = {r.case: r for r in sensitivity(prob)}
    assert set(cases) == {"trip cost x0.5", "trip cost x2", "discount rate -2 points", "discount rate +2 points"}
    # all trip costs are positive, so doubling them raises and halving lowers the optimum
    assert cases["trip cost x2"].change_frac > 0 > cases["trip cost x0.5"].change_frac
    # only payments, no residual credit: a higher rate discounts them more (HB 135 SPV)
    assert cases["discount rate +2 points"].change_frac < 0 < cases["discount rate -2 points"].change_frac


def test_chemistry_comparison_reports_unserved_sites():
    a = SiteOptions("a", "A", ALL_MONTHS, [cand("a1", 5, 1000, "lfp"), cand("a2", 3, 500, "vrla")])
    b = SiteOptions("b", "A", ALL_MONTHS, [cand("b1", 5, 1000, "lfp")])
    res = {r.chemistry: r for r in compare_chemistries(FleetProblem([a, b], 5, 0.0, {"A": 100.0}))}
    assert res["lfp"].sites_served == 2 and not res["lfp"].unserved
    assert [u.site_id for u in res["vrla"].unserved] == ["b"]
    assert "vrla" in res["vrla"].unserved[0].reason
    restricted = restrict_chemistry(FleetProblem([a, b], 5, 0.0, {"A": 100.0}), "vrla")
    assert [len(s.candidates) for s in restricted.sites] == [1, 0]


def test_infeasible_dict_has_no_nan():
    # JSON (RFC 8259) has no NaN: unknown numbers become null
    sites = [SiteOptions(f"s{i}", "A", ALL_MONTHS, [cand("c", 5, 1000)]) for i in range(3)]
    d = solve_fleet(FleetProblem(sites, 5, 0.0, {"A": 100.0}, crew_site_visits_per_year=2)).to_dict()
    assert d["solver"]["status"] == "infeasible"
    assert d["total_present_cost"] is None and d["solver"]["best_bound"] is None


def test_existing_pack_lasting_the_study_needs_nothing():
    # a pack that carries the site past the horizon: nothing bought, no trip (the plan
    # starts from the existing pack: docs/optimizer.md); no failure data -> zero cost
    site = SiteOptions("x", "A", (), [], existing=ExistingPack(25.0))
    sol = solve_fleet(FleetProblem([site], 20, 0.03, {"A": 5000.0}))
    assert sol.status == "optimal" and not sol.unserved
    assert sol.sites[0].candidate is None and sol.sites[0].replacement_years == ()
    assert sol.objective == 0.0 and sol.trips == []


# ---------------------------------------------------------------- design changes at replacement

def test_design_change_worked_example():
    # worked example computed by hand (our own numbers): one site, two years, 10 % real
    # rate, trip 100 per year visited, no residual credit. Five designs (life years, price):
    # A vrla (1, 300), B vrla (2, 700), C lfp (1, 400), D lfp (2, 900), E nmc (1, 350);
    # lithium iron phosphate prices fall 50 % a year (one price trend: C costs 200 in year 1).
    #   keep one design: B = 700 + 100 = 800; D = 900 + 100 = 1000;
    #     A, A = 300 + 100 + (300 + 100)/1.1 = 763.64; C, C = 400 + 100 + (200 + 100)/1.1 = 772.73;
    #     E, E = 350 + 100 + (350 + 100)/1.1 = 859.09  -> best A, A = 763.64
    #   change at year 1: cheapest first pack A (300), cheapest second C (200):
    #     300 + 100 + (200 + 100)/1.1 = 672.73
    designs = [cand("A", 1, 300, "vrla"), cand("B", 2, 700, "vrla"), cand("C", 1, 400, "lfp", trend=-0.5),
               cand("D", 2, 900, "lfp", trend=-0.5), cand("E", 1, 350, "nmc")]
    prob = FleetProblem([SiteOptions("s", "R", ALL_MONTHS, designs)], 2, 0.10, {"R": 100.0},
                        residual_value=False, gap_rel_frac=0.0)
    for method in ("path", "columns"):
        fixed = solve_fleet(replace(prob, design_changes=False, method=method))
        assert fixed.objective == pytest.approx(300 + 100 + 400 / 1.1, rel=1e-12)
        assert [c.design_id for c in fixed.sites[0].installations] == ["A", "A"]
        free = solve_fleet(replace(prob, method=method))
        assert free.objective == pytest.approx(300 + 100 + 300 / 1.1, rel=1e-12)
        plan = free.sites[0]
        assert plan.replacement_years == (0, 1)
        assert [c.design_id for c in plan.installations] == ["A", "C"]
        assert plan.candidate.design_id == "A"  # the site-level design is the first new pack
        assert plan.cost.packs == pytest.approx(300 + 200 / 1.1, rel=1e-12)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_fleets(changes=False))
def test_design_changes_never_raise_cost(prob):
    # allowing a replacement to take any design relaxes the problem (every one-design
    # schedule stays a path of the larger graph): with the gap set to 0 its optimum is
    # never dearer (follows from the model; brute force in test_milp_equals_brute_force)
    prob = replace(prob, gap_rel_frac=0.0)
    fixed = solve_fleet(prob)
    free = solve_fleet(replace(prob, design_changes=True))
    assert free.gap_frac == pytest.approx(0.0, abs=1e-9)
    assert free.objective <= fixed.objective + 1e-6 * max(1.0, abs(fixed.objective))


def test_design_change_respects_payload_and_reports_mass_per_visit():
    # the pack carried on each trip is the one that visit installs: a 40 kg first pack,
    # then a 5 kg one (prices halve, same worked-example arithmetic as above)
    designs = [cand("heavy", 1, 300, "vrla", mass=40.0), cand("light", 1, 400, "lfp", mass=5.0, trend=-0.5)]
    prob = FleetProblem([SiteOptions("s", "R", ALL_MONTHS, designs)], 2, 0.10, {"R": 100.0},
                        residual_value=False, gap_rel_frac=0.0, payload_kg_per_trip=50.0)
    sol = solve_fleet(prob)
    assert [c.design_id for c in sol.sites[0].installations] == ["heavy", "light"]
    assert [t.pack_mass_kg for t in sol.trips] == [40.0, 5.0]
    capped = solve_fleet(replace(prob, payload_kg_per_trip=20.0))
    assert [c.design_id for c in capped.sites[0].installations] == ["light", "light"]


@pytest.mark.parametrize("method", ["path", "columns"])
def test_design_changes_keep_crew_and_budget_limits(method):
    # fleet limits still bind when designs change at a replacement (model property): three
    # sites whose packs in service last two more years share one trip unless the crew, who
    # visit one site a year, and a budget that one pack a year fits spread them out;
    # lithium-ion 20 % cheaper each year (invented test numbers)
    designs = [cand("v", 2.0, 300, "vrla"), cand("l", 4.0, 900, "lfp", trend=-0.2)]
    sites = [SiteOptions(f"s{i}", "R", ALL_MONTHS, designs, existing=ExistingPack(2.0)) for i in range(3)]
    prob = FleetProblem(sites, 5, 0.05, {"R": 200.0}, crew_site_visits_per_year=1, annual_budget=1500.0,
                        gap_rel_frac=0.0, method=method)
    sol = solve_fleet(prob)
    exact = solve_fleet(replace(prob, method="path"))
    assert exact.status == "optimal"
    # price-and-branch need not prove a zero gap; the gap it reports is honest
    assert sol.status in ("optimal", "feasible")
    assert sol.best_bound <= exact.objective + 1e-6 <= sol.objective + 2e-6
    visits = {}
    for p in sol.sites:
        for t in p.replacement_years:
            visits[t] = visits.get(t, 0) + 1
    assert max(visits.values()) <= 1
    from planner.optimize.trip_plans import annual_spend
    assert (annual_spend(prob, sol.sites, sol.trips) <= 1500.0 + 1e-6).all()
    free = solve_fleet(replace(prob, crew_site_visits_per_year=None, annual_budget=None))
    assert free.objective < sol.objective - 1.0  # the limits bind: without them, one shared trip
    assert max(len(t.site_ids) for t in free.trips) > 1
