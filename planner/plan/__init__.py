"""From evaluated designs to a plan: candidates priced for the optimizer, and the plan
dict (docs/plan-json.md) built from its solution.

Public entry: :func:`build_problem` -> :class:`~planner.optimize.FleetProblem`;
:func:`assemble_plan` -> the plan dict.

Modules: :mod:`~planner.plan.costing` (pack price, days off air, the fleet problem),
:mod:`~planner.plan.assembly` (the plan dict), :mod:`~planner.plan.spending` (cash by
year and region), :mod:`~planner.plan.visit_risk` (failure before the next visit),
:mod:`~planner.plan.comparison` (chemistry comparison rows),
:mod:`~planner.plan.cautions` (safety cautions and per-site warnings, as data).
"""

from planner.plan.assembly import assemble_plan
from planner.plan.costing import build_problem

__all__ = ["assemble_plan", "build_problem"]
