"""The plan workbook: one sheet per question a planner asks.

Sheets: Summary (fleet overview), Spending by year, Sites at risk, Field evidence, Sites,
Capacity fade, Fade by year, Visit schedule, Trip list, Cost comparison, Climate,
Assumptions and sources, Cautions. The input is the plan dict laid out in ``docs/plan-json.md``; optional
parts that are missing are left out, never faked. The layout is described in
``docs/workbook.md``; each sheet is built in the module named beside it below.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

from openpyxl import Workbook

from planner.fileio import write_atomically
from planner.report import styles
from planner.report.evidence_sheet import evidence_sheet
from planner.report.money_sheets import cost_sheet, spending_sheet
from planner.report.reference_sheets import assumptions_sheet, cautions_sheet
from planner.report.risk_sheet import risk_sheet
from planner.report.schedule_sheets import trip_sheet, visit_grid_sheet
from planner.report.site_sheets import climate_sheet, fade_sheet, fade_table_sheet, sites_sheet
from planner.report.summary_sheet import summary_sheet
from planner.report.tables import mapping_of, plan_horizon_years

#: Sheet names, in order (plain words of our own), and the function that fills each.
SHEETS = (
    ("Summary", lambda ws, plan, fmt, h: summary_sheet(ws, plan, fmt)),
    ("Spending by year", lambda ws, plan, fmt, h: spending_sheet(ws, plan, fmt)),
    ("Sites at risk", lambda ws, plan, fmt, h: risk_sheet(ws, plan, fmt)),
    ("Field evidence", lambda ws, plan, fmt, h: evidence_sheet(ws, plan, fmt)),
    ("Sites", lambda ws, plan, fmt, h: sites_sheet(ws, plan, fmt)),
    ("Capacity fade", lambda ws, plan, fmt, h: fade_sheet(ws, plan)),
    ("Fade by year", lambda ws, plan, fmt, h: fade_table_sheet(ws, plan, h)),
    ("Visit schedule", lambda ws, plan, fmt, h: visit_grid_sheet(ws, plan, h)),
    ("Trip list", lambda ws, plan, fmt, h: trip_sheet(ws, plan, fmt)),
    ("Cost comparison", lambda ws, plan, fmt, h: cost_sheet(ws, plan, fmt)),
    ("Climate", lambda ws, plan, fmt, h: climate_sheet(ws, plan)),
    ("Assumptions and sources", lambda ws, plan, fmt, h: assumptions_sheet(ws, plan)),
    ("Cautions", lambda ws, plan, fmt, h: cautions_sheet(ws, plan)),
)
SHEET_NAMES = tuple(name for name, _ in SHEETS)


def build_workbook(plan: Mapping) -> Workbook:
    """Build the plan workbook in memory (see module docstring for the sheets)."""
    if not isinstance(plan, Mapping):
        raise TypeError(f"plan must be a mapping, got {type(plan).__name__}")
    study = mapping_of(plan.get("study"))
    cur = styles.currency_label(study.get("currency"))
    fmt = {"cur": cur, "money": styles.money_format(cur)}
    horizon = plan_horizon_years(plan)
    wb = Workbook()
    for index, (name, fill) in enumerate(SHEETS):
        ws = wb.active if index == 0 else wb.create_sheet()
        ws.title = name
        fill(ws, plan, fmt, horizon)
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
