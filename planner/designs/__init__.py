"""Candidate packs per site and how each fares over the horizon.

Public entry: :func:`evaluate_fleet` -> list of :class:`SiteDesigns` (each design's
:class:`Outcome`: lives, fade curve, unserved load).

Modules: :mod:`~planner.designs.candidates` (sizing, packs, exclusions, end-of-life
limits), :mod:`~planner.designs.evaluation` (energy balance and aging of every
candidate, smallest pack first), :mod:`~planner.designs.screening` (dominated and
far-from-best designs), :mod:`~planner.designs.load_growth` (install windows and lives
under a growing load).
"""

from planner.designs.candidates import Outcome, SiteDesigns
from planner.designs.evaluation import evaluate_fleet

__all__ = ["Outcome", "SiteDesigns", "evaluate_fleet"]
