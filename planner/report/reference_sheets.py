"""Reference sheets: Assumptions and sources, Cautions."""

from __future__ import annotations

from collections.abc import Mapping

from planner.plan.cautions import DEFER_INSTRUCTION, STANDARD_CAUTIONS, derived_site_warnings
from planner.report import styles
from planner.report.cells import put
from planner.report.tables import (
    Column,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    wrap_rows,
    write_table,
)


# ---------------------------------------------------------------- Assumptions
def assumptions_sheet(ws, plan) -> None:
    title(ws, "Assumptions and sources",
           "Every study input with its unit, and every model parameter with its source. Rows marked "
           "illustrative are demo figures, not prices to budget with.")
    study = mapping_of(plan.get("study"))
    units = {"horizon_years": "years", "discount_rate_frac": "fraction", "currency": "", "name": "",
             "sites_file": ""}
    records = [{"group": "study", "name": k, "value": v, "unit": units.get(k, ""), "source": "study file"}
               for k, v in study.items()]
    records += [a for a in seq(plan.get("assumptions")) if isinstance(a, Mapping)]

    def illustrative(rec):
        return "illustrative" if "illustrative" in str(rec.get("source", "")).lower() else None

    cols = [Column("Group", field_of("group"), width=14), Column("Name", field_of("name"), width=36),
            Column("Value", field_of("value"), "General", width=16), Column("Unit", field_of("unit"), width=16),
            Column("Source", field_of("source"), width=60), Column("Illustrative", illustrative, width=12)]
    kept, last = write_table(ws, 4, 1, cols, records, drop_empty=False)
    for row in range(5, last + 1):
        if ws.cell(row=row, column=6).value:
            for c in range(1, 7):
                ws.cell(row=row, column=c).font = styles.NOTE_FONT
    ws.freeze_panes = "A5"
    styles.landscape_fit_width(ws, title_rows="4:4")


# ---------------------------------------------------------------- Cautions
def cautions_sheet(ws, plan) -> None:
    title(ws, "Safety cautions")
    cell = put(ws, 2, 1, DEFER_INSTRUCTION)
    cell.alignment = styles.WRAP_TOP
    cell.font = styles.SECTION_FONT
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=3)
    ws.row_dimensions[2].height = 48
    records = [{"topic": c.topic, "text": c.text, "defer": c.defer_to} for c in STANDARD_CAUTIONS]
    # The pipeline may copy the standard cautions into the plan; list only the others.
    standard = tuple(f"{c.topic}:" for c in STANDARD_CAUTIONS)
    records += [{"topic": "From the plan", "text": str(t), "defer": "local codes and licensed practice"}
                for t in seq(plan.get("cautions")) if not str(t).startswith(standard)]
    cols = [Column("Topic", field_of("topic"), width=30), Column("Caution", field_of("text"), width=90),
            Column("Defer to", field_of("defer"), width=50)]
    _, last = write_table(ws, 4, 1, cols, records)
    wrap_rows(ws, 5, last, 3)
    row = last + 2
    put(ws, row, 1, "Per-site warnings").font = styles.SECTION_FONT
    warn = [{"id": s.get("id"), "name": s.get("name"), "text": w}
            for s in plan_sites(plan) for w in derived_site_warnings(s)]
    warn += [{"id": u.get("id"), "name": None, "text": f"no design can serve this site: {u.get('reason', '')}"}
             for u in seq(plan.get("unserved_sites")) if isinstance(u, Mapping)]
    if warn:
        wcols = [Column("Site id", field_of("id"), width=30), Column("Warning", field_of("text"), width=90),
                 Column("Site name", field_of("name"), width=50)]
        _, wlast = write_table(ws, row + 1, 1, wcols, warn)
        wrap_rows(ws, row + 2, wlast, 3)
    else:
        put(ws, row + 1, 1, "No per-site warnings were raised.")
    ws.freeze_panes = "A2"
    styles.landscape_fit_width(ws, title_rows="4:4")
