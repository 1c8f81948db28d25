"""Optimizer: per-site candidate designs -> fleet replacement and trip plan.

``solve_fleet(problem) -> FleetSolution`` is the entry point; :mod:`.analysis` re-solves
for the per-chemistry comparison and the sensitivity cases.
"""

from planner.optimize.analysis import (
    ChemistryResult,
    SensitivityResult,
    compare_chemistries,
    compare_solutions,
    sensitivity,
)
from planner.optimize.candidates import prune_dominated
from planner.optimize.fleet import solve_fleet
from planner.optimize.problem import (
    Candidate,
    ExistingPack,
    FleetProblem,
    FleetSolution,
    SiteOptions,
    SitePlan,
    Trip,
    Unserved,
)

__all__ = [
    "Candidate", "ExistingPack", "SiteOptions", "FleetProblem", "FleetSolution", "SitePlan", "Trip",
    "Unserved", "solve_fleet", "prune_dominated", "compare_chemistries", "sensitivity",
    "compare_solutions", "ChemistryResult", "SensitivityResult",
]
