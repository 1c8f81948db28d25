"""The plan workbook: one sheet per question a planner asks.

Sheets: Needs attention (first: what to act on), Summary (fleet overview), Spending by
year, Sites at risk, Field evidence, Sites, Capacity fade, Fade by year, Visit schedule,
Trip list, Crew trips, Cost comparison, Climate, Site map, Assumptions and sources,
Cautions. The input is
the plan dict laid out in ``docs/plan-json.md``; optional parts that are missing are left
out, never faked. The layout is described in ``docs/workbook.md``; each sheet is built in
the module named beside it in :data:`SHEETS`, and adding a sheet is one entry there.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path

from openpyxl import Workbook

from planner.fileio import write_atomically
from planner.report import styles
from planner.report.attention_sheet import attention_sheet
from planner.report.crew_sheet import crew_sheet
from planner.report.evidence_sheet import evidence_sheet
from planner.report.map_sheet import map_sheet
from planner.report.money_sheets import cost_sheet, spending_sheet
from planner.report.reference_sheets import assumptions_sheet, cautions_sheet
from planner.report.risk_sheet import risk_sheet
from planner.report.schedule_sheets import trip_sheet, visit_grid_sheet
from planner.report.site_sheets import climate_sheet, fade_sheet, fade_table_sheet, sites_sheet
from planner.report.summary_sheet import summary_sheet
from planner.report.tables import mapping_of, plan_horizon_years
from planner.report.wording import chemistry_names


@dataclass(frozen=True)
class Sheet:
    """One sheet of the workbook: its name (plain words of our own) and the function that
    fills it, ``fill(ws, plan, fmt)``; ``fmt`` holds the currency label (``cur``), the
    money number format (``money``), the horizon in years (``horizon``) and the
    chemistry names (``chemistry_names``)."""

    name: str
    fill: Callable


#: The sheets, in order.
SHEETS = (
    Sheet("Needs attention", attention_sheet),
    Sheet("Summary", summary_sheet),
    Sheet("Spending by year", spending_sheet),
    Sheet("Sites at risk", risk_sheet),
    Sheet("Field evidence", evidence_sheet),
    Sheet("Sites", sites_sheet),
    Sheet("Capacity fade", fade_sheet),
    Sheet("Fade by year", fade_table_sheet),
    Sheet("Visit schedule", visit_grid_sheet),
    Sheet("Trip list", trip_sheet),
    Sheet("Crew trips", crew_sheet),
    Sheet("Cost comparison", cost_sheet),
    Sheet("Climate", climate_sheet),
    Sheet("Site map", map_sheet),
    Sheet("Assumptions and sources", assumptions_sheet),
    Sheet("Cautions", cautions_sheet),
)
SHEET_NAMES = tuple(sheet.name for sheet in SHEETS)


def build_workbook(plan: Mapping) -> Workbook:
    """Build the plan workbook in memory (see module docstring for the sheets)."""
    if not isinstance(plan, Mapping):
        raise TypeError(f"plan must be a mapping, got {type(plan).__name__}")
    study = mapping_of(plan.get("study"))
    cur = styles.currency_label(study.get("currency"))
    fmt = {"cur": cur, "money": styles.money_format(cur), "horizon": plan_horizon_years(plan),
           "chemistry_names": chemistry_names(plan)}
    wb = Workbook()
    for index, sheet in enumerate(SHEETS):
        ws = wb.active if index == 0 else wb.create_sheet()
        ws.title = sheet.name
        sheet.fill(ws, plan, fmt)
    return wb


def write_workbook(plan: Mapping, path) -> Path:
    """Write the plan workbook to ``path`` atomically and return the path.

    Parameters
    ----------
    plan : mapping
        The plan dict laid out as in ``docs/plan-json.md``. Optional parts that are missing
        (sensitivity, alternatives, P10/P90 life, pack structure, ...) are left out.
    path : str or Path
        Target ``.xlsx`` file; its folder is created if needed.

    Returns
    -------
    Path
        The target path. The workbook is saved to a temporary file in the target folder
        and renamed over the target, so a failure leaves any earlier workbook intact.
    """
    wb = build_workbook(plan)
    return write_atomically(path, wb.save, what="plan workbook")
