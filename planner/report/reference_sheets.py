"""Reference sheets: Assumptions and sources, Cautions."""

from __future__ import annotations

from collections.abc import Mapping

from openpyxl.utils import get_column_letter

from planner.plan.cautions import (
    DEFER_INSTRUCTION,
    STANDARD_CAUTIONS,
    derived_site_warnings,
    warning_kind,
)
from planner.plan.numbers import finite_number
from planner.report import styles
from planner.report.cells import put
from planner.report.tables import (
    PRINT_ALL_ROWS_MAX,
    Column,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    wrap_rows,
    write_table,
)

#: Study keys shown under "study" when the plan holds no assumption rows for them, with units.
STUDY_UNITS = {"horizon_years": "years", "discount_rate_frac": "1/year", "inflation_frac": "1/year",
               "start_year": "calendar year", "report_soh_frac": "fraction", "payload_kg_per_trip": "kg"}


def _solver_rows(plan) -> list[dict]:
    """How the plan was found: the optimizer's own figures, kept off the Summary."""
    solver = mapping_of(plan.get("solver"))
    cur = mapping_of(plan.get("study")).get("currency") or ""
    words = {"name": ("solver", ""), "status": ("solver status", ""),
             "gap_frac": ("optimality gap (cost above the best bound, fraction)", "fraction"),
             "best_bound": ("best bound: no plan costs less than this", cur),
             "objective": ("objective (total present cost)", cur), "seconds": ("solve time", "s"),
             "decomposition": ("decomposition", "")}
    rows = [{"group": "how the plan was found", "name": text, "value": solver.get(key), "unit": unit,
             "source": "the optimizer's answer (planner.optimize)"}
            for key, (text, unit) in words.items() if solver.get(key) is not None]
    counts = (("service_life_limited_sites", "sites whose pack life a service limit sets (not fade)"),
              ("component_limited_sites", "of which a component's life (seals, terminals, electronics)"),
              ("ceiling_limited_sites", "of which the study's [service_life] ceiling"))
    for key, words in counts:
        if finite_number(plan.get(key)) is not None:
            rows.append({"group": "how the plan was found", "name": words, "value": plan.get(key),
                         "unit": "sites", "source": "design rules below"})
    return rows


def assumptions_sheet(ws, plan, fmt) -> None:
    title(ws, "Assumptions and sources",
          "Every study input with its unit, every model parameter with its source, and how the plan was "
          "found. Rows marked illustrative are demo figures, not prices to budget with.")
    study = mapping_of(plan.get("study"))
    assumptions = [a for a in seq(plan.get("assumptions")) if isinstance(a, Mapping)]
    # The study's settings are listed once: from the plan's assumption rows (with their
    # units) when it has them, else from the plan's study block.
    listed = {str(a.get("name")) for a in assumptions if str(a.get("group", "")).startswith("study")}
    records = [{"group": "study", "name": k, "value": v, "unit": STUDY_UNITS.get(k, ""), "source": "study file"}
               for k, v in study.items() if k not in listed and not isinstance(v, Mapping | list)]
    records += assumptions + _solver_rows(plan)

    def illustrative(rec):
        return "illustrative" if "illustrative" in str(rec.get("source", "")).lower() else None

    cols = [Column("Group", field_of("group"), width=18), Column("Name", field_of("name"), width=36),
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
def _site_warnings(plan) -> list[dict]:
    warn = [{"id": s.get("id"), "name": s.get("name"), "text": w, "kind": warning_kind(w)}
            for s in plan_sites(plan) for w in derived_site_warnings(s)]
    warn += [{"id": u.get("id"), "name": None, "text": f"no design can serve this site: {u.get('reason', '')}",
              "kind": warning_kind("no design can serve this site")}
             for u in seq(plan.get("unserved_sites")) if isinstance(u, Mapping)]
    order = {kind.title: k for k, kind in enumerate(warning_kinds())}
    warn.sort(key=lambda w: (order.get(w["kind"].title, len(order)), str(w["id"])))
    return warn


def warning_kinds():
    from planner.plan.cautions import WARNING_KINDS
    return WARNING_KINDS


def cautions_sheet(ws, plan, fmt) -> None:
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
    warn = _site_warnings(plan)
    row = last + 2
    put(ws, row, 1, "Per-site warnings by kind, the ones to act on first").font = styles.SECTION_FONT
    if not warn:
        put(ws, row + 1, 1, "No per-site warnings were raised.")
        ws.freeze_panes = "A2"
        styles.landscape_fit_width(ws, title_rows="4:4")
        return
    kinds: dict[str, dict] = {}
    for w in warn:
        k = kinds.setdefault(w["kind"].title, {"kind": w["kind"], "count": 0, "sites": []})
        k["count"] += 1
        if len(k["sites"]) < 5:
            k["sites"].append(str(w["id"]))
    # the columns line up with the cautions above: text in the wide ones
    gcols = [Column("Kind", lambda k: k["kind"].title, width=30),
             Column("What to do", lambda k: k["kind"].action, width=90),
             Column("First sites", lambda k: ", ".join(k["sites"]) + (", ..." if k["count"] > 5 else ""),
                    width=50),
             Column("Warnings", field_of("count"), styles.INTEGER, width=10)]
    _, glast = write_table(ws, row + 1, 1, gcols, list(kinds.values()))
    wrap_rows(ws, row + 2, glast, 4)
    table_top = glast + 2
    long_list = len(warn) > PRINT_ALL_ROWS_MAX
    put(ws, table_top, 1, f"Every per-site warning ({len(warn):,}): filter the Kind column"
        + ("; not printed (the kinds above are)" if long_list else "")).font = styles.SECTION_FONT
    wcols = [Column("Kind", lambda w: w["kind"].title, width=30), Column("Warning", field_of("text"), width=90),
             Column("Site id", field_of("id"), width=14), Column("Site name", field_of("name"), width=24)]
    kept, wlast = write_table(ws, table_top + 1, 1, wcols, warn)
    ws.auto_filter.ref = f"A{table_top + 1}:{get_column_letter(len(kept))}{wlast}"
    ws.freeze_panes = "A2"
    styles.landscape_fit_width(ws, title_rows="4:4")
    if long_list:
        # a fleet's warnings run to hundreds of pages: the kinds print, the list filters
        ws.print_area = f"A1:{get_column_letter(len(kept))}{table_top}"
    else:
        wrap_rows(ws, table_top + 2, wlast, len(kept))
