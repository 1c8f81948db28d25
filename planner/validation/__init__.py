"""The models against published values: ``python -m planner.validation`` writes
``docs/validation.md``.

Public entry: :func:`run_validation` -> list of :class:`Row`; :func:`render_markdown`.
"""

from planner.validation.published import Row, render_markdown, run_validation

__all__ = ["Row", "render_markdown", "run_validation"]
