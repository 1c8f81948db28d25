"""The plan, written out: deterministic JSON and the planner's workbook.

- :func:`write_json` / :func:`plan_to_json_text`: the plan as JSON (``docs/plan-json.md``).
- :func:`write_workbook`: the plan workbook (``docs/workbook.md``).
- :mod:`planner.plan.cautions`: the standard safety cautions and per-site warning helpers.
"""

from planner.plan.cautions import STANDARD_CAUTIONS, derived_site_warnings
from planner.report.cells import neutralise_text
from planner.report.plan_json import plan_to_json_text, write_json
from planner.report.workbook import SHEET_NAMES, build_workbook, write_workbook

__all__ = [
    "SHEET_NAMES",
    "STANDARD_CAUTIONS",
    "build_workbook",
    "derived_site_warnings",
    "neutralise_text",
    "plan_to_json_text",
    "write_json",
    "write_workbook",
]
