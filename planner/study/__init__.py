"""The study: the TOML settings file and its sites table, checked before any work.

Public entry: :func:`load_study` -> :class:`Study` (its rows are :class:`Site`).

Modules: :mod:`~planner.study.schema` (every key and column with unit, default and
range), :mod:`~planner.study.loading` (reading and checking the files).
"""

from planner.study.loading import Site, Study, load_study

__all__ = ["Site", "Study", "load_study"]
