"""Solver front end: stdout stays clean, HiGHS and CBC agree, statuses are honest."""

import numpy as np
import pytest
from test_optimize_fleet import orp, orp_site

from planner.optimize import solve_fleet
from planner.optimize.solver import gap, pick_solver, solve_milp


def test_highs_banner_does_not_reach_stdout(capfd):
    # ecosystem note §1: HiGHS prints a banner on stdout even with msg=False
    solve_fleet(orp([orp_site(1, 4, 1000), orp_site(2, 6, 1500)], 0.0, solver="highs"))
    out, _ = capfd.readouterr()
    assert out == ""


def test_cbc_and_highs_agree():
    # research note §5.3 vector (14,047.42 at 3 %) from both solvers
    sites = [orp_site(1, 4, 1000), orp_site(2, 6, 1500), orp_site(3, 5, 1200)]
    values = {name: solve_fleet(orp(sites, 0.03, solver=name)).objective for name in ("highs", "cbc")}
    assert values["highs"] == pytest.approx(values["cbc"], abs=1e-6)


def test_infeasible_milp_reports_status_not_value():
    # x >= 2 and x <= 1: infeasible; ecosystem note §1: CBC still leaves an objective value
    for name in ("highs", "cbc"):
        rep = solve_milp(np.array([1.0]), np.array([0, 1]), np.array([0, 0]), np.array([1.0, 1.0]),
                         np.array([2.0, -np.inf]), np.array([np.inf, 1.0]), np.array([10.0]),
                         np.array([True]), solver=name, time_limit_s=5)
        assert rep.status == "infeasible" and rep.values is None


def test_small_milp_bound_and_gap():
    # min -x - y, x + y <= 1.5, integers in [0, 1]: optimum -1 (by hand)
    rep = solve_milp(np.array([-1.0, -1.0]), np.array([0, 0]), np.array([0, 1]), np.array([1.0, 1.0]),
                     np.array([-np.inf]), np.array([1.5]), np.array([1.0, 1.0]), np.array([True, True]),
                     solver="highs", time_limit_s=5, gap_rel_frac=0.0)
    assert rep.status == "optimal"
    assert rep.objective == pytest.approx(-1.0)
    assert rep.best_bound <= rep.objective + 1e-9


def test_gap_definition_and_solver_choice():
    assert gap(100.0, 99.5) == pytest.approx(0.005)  # (obj - bound)/|obj|, docs/optimizer.md
    assert pick_solver("cbc") == "cbc"
    assert pick_solver("auto") in ("highs", "cbc")
    with pytest.raises(ValueError):
        pick_solver("gurobi-like")


def test_column_generation_keeps_stdout_clean(capfd):
    # ecosystem note §1: every HiGHS instance prints a banner; colgen creates its own
    from dataclasses import replace
    sites = [orp_site(1, 4, 1000), orp_site(2, 6, 1500), orp_site(3, 5, 1200)]
    solve_fleet(replace(orp(sites, 0.03), method="columns"))
    out, _ = capfd.readouterr()
    assert out == ""


def test_costs_at_the_money_bound_solve_to_the_scaled_optimum():
    # Amounts near the schema bound (1e12, docs/study-file.md) must solve like small ones.
    # Check value: research note §5.3 two-site vector (lives 4 and 6, packs 1000 and 1500,
    # shared trip 3000, no discount: 15,000), with every amount times 1e8; a linear
    # objective's optimum scales with its costs.
    from test_optimize_fleet import cand

    from planner.optimize import ExistingPack, FleetProblem, SiteOptions

    k = 1e8
    months = tuple(range(1, 13))
    sites = [SiteOptions(f"s{i}", "A", months, [cand(f"d{i}", life, pack * k)], existing=ExistingPack(life))
             for i, life, pack in ((1, 4, 1000.0), (2, 6, 1500.0))]
    sol = solve_fleet(FleetProblem(sites, 13, 0.0, {"A": 3000.0 * k}, residual_value=False,
                                   gap_rel_frac=1e-9, solver="highs"))
    assert sol.status == "optimal"
    assert sol.objective == pytest.approx(15000.0 * k, rel=1e-9)


def test_non_finite_money_is_refused_before_solving():
    # An overflowed amount (1e308 x 1.5 = inf) never reaches the solver: a non-finite
    # cost makes the solver search without end.
    from planner.errors import InputError
    from planner.optimize import FleetProblem
    from planner.optimize.solver import objective_scale

    with pytest.raises(InputError, match="trip cost of region 'A' is inf"):
        solve_fleet(FleetProblem([orp_site(1, 4, 1000)], 13, 0.0, {"A": float("inf")}))
    with pytest.raises(InputError, match="too large to be a finite number"):
        objective_scale(np.array([1.0, np.inf]))
    assert objective_scale(np.array([2e12, 5.0])) == pytest.approx(2e6)
    assert objective_scale(np.array([250.0])) == 1.0
