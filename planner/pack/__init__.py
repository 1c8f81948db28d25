"""Packs built from cells: their structure, the spread of their lives, and the chance
that a pack in service fails by a given age.

Public entry: :func:`pack_structure` -> :class:`PackStructure`; :func:`life_distribution`
and :func:`life_summary` (life P10/P50/P90 from a Monte Carlo over cells);
:func:`failure_prob_by_age` (closed-form failure probability of packs in service).

Modules: :mod:`~planner.pack.structure` (series and parallel cells, stress factors),
:mod:`~planner.pack.spread` (Monte Carlo interface and percentiles) with
:mod:`~planner.pack.spread_cells` (cell draws and pack SOH),
:mod:`~planner.pack.spread_inputs` (input checks) and :mod:`~planner.pack._kernels`
(compiled curve lookup); :mod:`~planner.pack.life_risk` (failure probability without
Monte Carlo).
"""

from planner.pack.life_risk import failure_prob_by_age
from planner.pack.spread import life_distribution, life_summary
from planner.pack.structure import PackStructure, pack_structure

__all__ = ["PackStructure", "failure_prob_by_age", "life_distribution", "life_summary",
           "pack_structure"]
