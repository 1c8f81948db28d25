"""Field evidence: capacity tests and battery logs update the fade of the packs in service.

``update_fleet(study, designs) -> FleetEvidence | None`` turns the study's field records
into a posterior per pack in service (hierarchical model over the fleet, exact grids:
:mod:`planner.evidence.hierarchy`); :func:`planner.plan.costing.build_problem` prices
those packs by it. ``rank_tests(study, problem, solution, designs, evidence)`` says where
one more capacity test pays (:mod:`planner.evidence.sample_information`).
"""

from planner.evidence.fleet import FleetEvidence, SiteEvidence, update_fleet
from planner.evidence.sample_information import TestValue, rank_tests

__all__ = ["FleetEvidence", "SiteEvidence", "TestValue", "rank_tests", "update_fleet"]
