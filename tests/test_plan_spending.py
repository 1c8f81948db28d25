"""Spending by year against the NIST HB 135 worked example of research note §3.4, and
the days-off-air split that must leave the optimizer's total unchanged."""

from dataclasses import replace

import numpy as np
import pytest

from planner import economics as ec
from planner.optimize import Candidate, FleetProblem, SiteOptions, solve_fleet
from planner.plan.spending import SPENDING_PARTS, spending_by_year

ALL_MONTHS = tuple(range(1, 13))


def _lfp_example(downtime=0.0, pack=4500.0, inflation=0.0):
    # research note §3.4, alternative B: 4,500 pack lasting 8 years, trip 3,000 per visit,
    # disposal 100 per removed pack, 3 %, 20 years -> replaced at 0, 8, 16; LCC 16,989.81
    cand = Candidate("lfp-8", "lfp", 1.0, 3.4, 1000.0, 10.0, pack, 0.0, 100.0, 8.0, None, "calendar",
                     downtime_cost=downtime)
    site = SiteOptions("S1", "A", ALL_MONTHS, [cand])
    problem = FleetProblem([site], 20, 0.03, {"A": 3000.0}, gap_rel_frac=1e-9)
    solution = solve_fleet(problem)
    rows = spending_by_year(problem, solution, start_year=2030, inflation_frac=inflation)
    return problem, solution, rows


def test_worked_example_year_by_year():
    _, solution, rows = _lfp_example()
    # research note §3.4: LCC_B = 16,989.81 (NIST HB 135 formulas)
    assert solution.objective == pytest.approx(16989.81, abs=0.01)
    assert solution.sites[0].replacement_years == (0, 8, 16)
    by_year = {r["year"]: r for r in rows}
    assert len(rows) == 21 and rows[0]["calendar_year"] == 2030 and rows[-1]["calendar_year"] == 2050
    # note §3.4 cash flows: 7,500 at year 0; 7,600 at years 8 and 16; residual 2,250 at 20
    assert by_year[0]["packs"] == 4500.0 and by_year[0]["trips"] == 3000.0 and by_year[0]["disposal"] == 0.0
    for year in (8, 16):
        assert by_year[year]["total"] == pytest.approx(7600.0)
        assert by_year[year]["disposal"] == pytest.approx(100.0)
    assert by_year[20]["residual"] == pytest.approx(-2250.0)
    # note §3.4: the residual's present value is 2,250 x SPV(3 %, 20) = 1,245.77
    assert by_year[20]["present_value"] == pytest.approx(-1245.77, abs=0.01)
    # every column is its own part: the parts add to the row total, no balancing entry
    for r in rows:
        assert sum(r[k] for k in SPENDING_PARTS) == pytest.approx(r["total"], abs=1e-9)
    assert all(r["thermal"] == 0.0 for r in rows)


def test_present_values_add_up_to_the_total_present_cost():
    # NIST HB 135: the present cost is the sum of each year's amount x SPV(d, t); the
    # spending table must reproduce the optimizer's total within 0.01.
    for downtime in (0.0, 1800.0):
        _, solution, rows = _lfp_example(downtime=downtime)
        assert abs(sum(r["present_value"] for r in rows) - solution.objective) <= 0.01


def test_nominal_column_is_constant_money_inflated():
    # NIST HB 135 ch. 4 (constant vs current money): nominal = constant x (1 + I)^t
    _, _, rows = _lfp_example(inflation=0.02)
    for r in rows:
        assert r["total_nominal"] == pytest.approx(r["total"] * 1.02 ** r["year"], rel=1e-12)
    # research note §3.3 equivalence: discounting the nominal amount at the nominal rate
    # gives the same present value as the constant amount at the real rate
    nominal_rate = float(ec.nominal_rate(0.03, 0.02))
    for r in rows:
        assert r["total_nominal"] / (1 + nominal_rate) ** r["year"] == pytest.approx(r["present_value"], abs=1e-6)


def test_days_off_air_apart_from_the_pack_price_keep_the_same_total():
    # The optimizer's objective must not change when days off air leave the pack price:
    # a 4,500 pack with 1,000 of days off air prices like a 5,500 pack did before.
    _, split, rows = _lfp_example(downtime=1000.0, pack=4500.0)
    _, folded, _ = _lfp_example(downtime=0.0, pack=5500.0)
    assert split.objective == pytest.approx(folded.objective, abs=1e-6)
    assert split.sites[0].replacement_years == folded.sites[0].replacement_years == (0, 8, 16)
    cost = split.sites[0].cost
    spv = float(ec.spv(0.03, 8)) + float(ec.spv(0.03, 16)) + 1.0
    # note §3.4: 4 of 8 years left at the horizon -> half of the last pack's share returned
    assert cost.packs == pytest.approx(4500.0 * spv)
    assert cost.residual == pytest.approx(-4500.0 * 0.5 * float(ec.spv(0.03, 20)))
    assert cost.downtime == pytest.approx(1000.0 * spv - 1000.0 * 0.5 * float(ec.spv(0.03, 20)))
    # Days off air fall in the years they happen: 1,000 is the present value at installation
    # of a uniform yearly cost over the 8-year life, so 1,000 / UPV(3 %, 8) = 142.46 a year
    # (NIST HB 135 App. D: UPV(3 %, 8) = 7.0197) from the year after each installation.
    yearly = 1000.0 / float(ec.upv(0.03, 8))
    assert yearly == pytest.approx(142.46, abs=0.01)
    by_year = {r["year"]: r for r in rows}
    assert by_year[0]["downtime"] == 0.0
    for year in range(1, 20):
        assert by_year[year]["downtime"] == pytest.approx(yearly, rel=1e-12), year
    # the end year balances the linear residual share against the amounts booked (the
    # optimizer's price is unchanged): the present values of the column equal cost.downtime
    pv = sum(r["downtime"] * float(ec.spv(0.03, r["year"])) for r in rows)
    assert pv == pytest.approx(cost.downtime, rel=1e-12)


def test_regions_split_the_fleet_without_loss():
    # two regions: their spending adds up to the fleet's, year by year (bookkeeping identity)
    cand = Candidate("d", "lfp", 1.0, 3.4, 1000.0, 10.0, 2000.0, 300.0, 50.0, 5.0, None, "calendar")
    sites = [SiteOptions(f"S{i}", "AB"[i % 2], ALL_MONTHS, [replace(cand, design_id=f"d{i}")])
             for i in range(4)]
    problem = FleetProblem(sites, 12, 0.03, {"A": 1000.0, "B": 2500.0}, gap_rel_frac=1e-9)
    solution = solve_fleet(problem)
    fleet = spending_by_year(problem, solution, start_year=2030)
    parts = [spending_by_year(problem, solution, start_year=2030, regions=[r]) for r in "AB"]
    totals = np.array([r["total"] for r in fleet])
    assert np.allclose(totals, [a["total"] + b["total"] for a, b in zip(*parts)])
    assert sum(r["present_value"] for r in fleet) == pytest.approx(solution.objective, abs=0.01)


def test_existing_pack_disposal_and_risk_fall_in_their_years():
    # HB 135 end-of-year convention (research note §3.2): the pack in service goes out at
    # the first replacement and its disposal is paid that year; its expected failure
    # cost (F(a) - F(a-1)) x cost falls in year a; the years add up to the objective.
    from planner.optimize import ExistingPack
    from planner.pack.life_risk import failure_prob_by_age

    probs = failure_prob_by_age(2.5, 12, 0.3, age_years=4.0)
    cand = Candidate("d", "lfp", 1.0, 3.4, 1000.0, 10.0, 2000.0, 300.0, 50.0, 6.0, None, "calendar")
    site = SiteOptions("S1", "A", ALL_MONTHS, [cand], unplanned_trip_cost=1500.0,
                       existing=ExistingPack(2.5, disposal_cost=80.0, failure_prob_by_age=probs))
    problem = FleetProblem([site], 12, 0.03, {"A": 1000.0}, gap_rel_frac=1e-9)
    solution = solve_fleet(problem)
    first = solution.sites[0].replacement_years[0]
    assert first == 2  # kept two years: the optimizer's trade of risk against an early pack
    rows = spending_by_year(problem, solution, start_year=2030)
    assert rows[first]["disposal"] == pytest.approx(80.0)
    for year in range(1, first + 1):
        expected = (probs[year - 1] - (probs[year - 2] if year > 1 else 0.0)) * 1500.0
        assert rows[year]["risk"] == pytest.approx(expected, rel=1e-12)
    assert abs(sum(r["present_value"] for r in rows) - solution.objective) <= 0.01


def test_design_change_price_trend_and_measure_add_up_year_by_year():
    # the hand-worked design-change example of tests/test_optimize_fleet.py (A at year 0,
    # C at half price in year 1, trip 100 a year visited, 10 %), with a 250 thermal
    # measure plus 85 of labour paid once with the first pack: the cash of each year is
    # what that pack costs then, and the present values add up to the total (NIST HB 135)
    a = Candidate("A", "vrla", 1.0, 2.3, 1000.0, 10.0, 300.0, 0.0, 0.0, 1.0, None, "calendar",
                  thermal_measure="insulated-box", measure_price=250.0, measure_labour_cost=85.0)
    c = Candidate("C", "lfp", 1.0, 3.4, 1000.0, 10.0, 400.0, 0.0, 0.0, 1.0, None, "calendar",
                  price_trend_frac_per_year=-0.5, thermal_measure="insulated-box", measure_price=250.0,
                  measure_labour_cost=85.0)
    problem = FleetProblem([SiteOptions("S1", "A", ALL_MONTHS, [a, c])], 2, 0.10, {"A": 100.0},
                           residual_value=False, gap_rel_frac=0.0)
    solution = solve_fleet(problem)
    assert [x.design_id for x in solution.sites[0].installations] == ["A", "C"]
    rows = {r["year"]: r for r in spending_by_year(problem, solution, start_year=2030)}
    assert rows[0]["packs"] == pytest.approx(300.0) and rows[1]["packs"] == pytest.approx(200.0)
    # the measure's price is a thermal-measure cost, its 85 of fitting labour installation
    # labour, as the optimizer's cost groups count them
    assert rows[0]["thermal"] == pytest.approx(250.0) and rows[1]["thermal"] == 0.0
    assert rows[0]["labour"] == pytest.approx(85.0)
    # 300 + 335 + 100 + (200 + 100) / 1.1 (arithmetic)
    assert solution.objective == pytest.approx(735.0 + 300.0 / 1.1, rel=1e-12)
    assert sum(r["present_value"] for r in rows.values()) == pytest.approx(solution.objective, rel=1e-12)
