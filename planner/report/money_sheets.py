"""Sheets about money: Spending by year (what finance budgets, with a present-value check)
and Cost comparison (each site under every chemistry, sensitivity cases)."""

from __future__ import annotations

from collections.abc import Mapping

from openpyxl.chart import Reference
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from planner.plan.numbers import finite_number
from planner.report import charts, styles
from planner.report.cells import cell_value, put
from planner.report.tables import (
    CHART_ROWS,
    Column,
    dig,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    write_table,
)

#: Spending columns: (JSON key, header words). Their sum is the row's total.
SPENDING_COLUMNS = (
    ("packs", "Packs"), ("labour", "Installation labour"), ("trips", "Trips"),
    ("disposal", "Disposal"), ("thermal", "Thermal measures"),
    ("downtime", "Days off air (expected)"), ("risk", "Failure risk (expected)"),
    ("residual", "Residual value"))
#: The check line passes when the present values add up to the plan's total within this.
PRESENT_VALUE_TOLERANCE = 0.01


def _spending_rows(plan) -> list[Mapping]:
    return [r for r in seq(plan.get("spending_by_year")) if isinstance(r, Mapping)]


def present_value_tolerance(rows, plan_total) -> float:
    """Tolerance of the check line: :data:`PRESENT_VALUE_TOLERANCE` plus the rounding of
    figures read back from the plan JSON (6 significant digits, docs/plan-json.md)."""
    stored = sum(abs(finite_number(r.get("present_value")) or 0.0) for r in rows) + abs(plan_total or 0.0)
    return PRESENT_VALUE_TOLERANCE + 5e-6 * stored


def spending_sheet(ws, plan, fmt) -> None:
    cur = fmt["cur"]
    money = styles.money_format_dash_zero(cur)
    study = mapping_of(plan.get("study"))
    inflation = finite_number(study.get("inflation_frac")) or 0.0
    rate = finite_number(study.get("discount_rate_frac"))
    title(ws, "Spending by year",
          f"Constant money of the study start [{cur}], as the optimizer prices it; money of the year at "
          f"{inflation:.1%} inflation; present value at the real rate"
          + (f" of {rate:.1%}" if rate is not None else "") + ". Last row: end of the study.")
    rows = _spending_rows(plan)
    if not rows:
        put(ws, 4, 1, "The plan holds no spending by year.")
        styles.landscape_fit_width(ws)
        return
    cols = [Column("Year", field_of("year"), styles.INTEGER, width=6),
            Column("Calendar year", field_of("calendar_year"), "0", optional=True, width=9)]
    # money columns take their width from the values (a 1,000-site fleet spends millions)
    cols += [Column(f"{word} [{cur}]", field_of(key), money) for key, word in SPENDING_COLUMNS]
    cols += [Column(f"Total [{cur}]", field_of("total"), money),
             Column(f"Total, money of the year [{cur}]", field_of("total_nominal"), money),
             Column(f"Present value [{cur}]", field_of("present_value"), money)]
    top = 4
    kept, last = write_table(ws, top, 1, cols, rows)
    headers = [c.header for c in kept]
    for c in range(1, len(kept) + 1):
        ws.cell(row=last, column=c).border = styles.YEAR_BORDER
    # Check lines: the present values add up to the plan's total present cost. Labels sit in
    # column A and run over the empty cells to their right.
    pv_col = headers.index(f"Present value [{cur}]") + 1
    total_pv = sum(finite_number(r.get("present_value")) or 0.0 for r in rows)
    plan_total = finite_number(plan.get("total_present_cost"))
    check = [("Sum of the present values above", total_pv),
             ("Total present cost of the plan", plan_total)]
    if plan_total is not None:
        check.append(("Difference", total_pv - plan_total))
    for offset, (label, value) in enumerate(check):
        put(ws, last + 1 + offset, 1, label).font = styles.HEADER_FONT
        put(ws, last + 1 + offset, pv_col, value, fmt["money"]).font = styles.HEADER_FONT
    widest = max(len(f"{v:,.0f} {cur}") for _, v in check if v is not None) + 3
    letter = get_column_letter(pv_col)
    ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, widest)
    if plan_total is not None:
        ok = abs(total_pv - plan_total) <= present_value_tolerance(rows, plan_total)
        put(ws, last + 1 + len(check), 1,
            "Check passed: the years add up to the plan's total present cost." if ok
            else "CHECK FAILED: the years do not add up to the plan's total present cost."
            ).font = styles.NOTE_FONT
    chart_top = last + 1 + len(check) + 2
    # chart and region table on a page of their own; the chart one row below the break, so
    # its frame is not drawn at the foot of the table's page
    ws.row_breaks.append(Break(id=chart_top - 1))
    first_part = headers.index(f"{SPENDING_COLUMNS[0][1]} [{cur}]") + 1
    series = [Reference(ws, min_col=first_part + k, min_row=top, max_row=last)
              for k, (key, _) in enumerate(SPENDING_COLUMNS)
              if any(finite_number(r.get(key)) for r in rows)]
    year_col = 2 if "Calendar year" in headers else 1
    charts.stacked_bar_chart(
        ws, title="Spending by year, constant money", x_title="Year",
        categories=Reference(ws, min_col=year_col, min_row=top + 1, max_row=last), series=series,
        y_title=f"[{cur}]", y_format=money, anchor=f"A{chart_top + 1}", width_cm=2 * charts.CHART_WIDTH_CM)
    region_top = chart_top + 1 + CHART_ROWS + 1
    region_last = _region_table(ws, plan, fmt, region_top)
    ws.freeze_panes = f"C{top + 1}"
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}",
                               area=f"A1:{get_column_letter(max(len(kept), ws.max_column))}{region_last}")


def _region_table(ws, plan, fmt, top: int) -> int:
    """Total spending by year (rows) and region (columns), constant money, with each
    region's present value in the last row."""
    blocks = [b for b in seq(plan.get("spending_by_region"))
              if isinstance(b, Mapping) and seq(b.get("rows"))]
    if not blocks:
        return top
    cur = fmt["cur"]
    money = styles.money_format_dash_zero(cur)
    put(ws, top, 1, f"Total spending by region, constant money [{cur}]").font = styles.SECTION_FONT
    by_region = [{r.get("year"): r for r in seq(b.get("rows")) if isinstance(r, Mapping)} for b in blocks]
    years = [r for r in seq(blocks[0].get("rows")) if isinstance(r, Mapping)]
    records = [{"year": r.get("year"), "calendar_year": r.get("calendar_year"),
                "totals": [dig(rows, r.get("year"), "total") for rows in by_region]} for r in years]
    records.append({"year": "Present value",
                    "totals": [sum(finite_number(x.get("present_value")) or 0.0 for x in rows.values())
                               for rows in by_region]})
    cols = [Column("Year", field_of("year"), styles.INTEGER, width=6),
            Column("Calendar year", field_of("calendar_year"), "0", optional=True, width=9)]
    cols += [Column(f"{b.get('region')} [{cur}]", (lambda rec, k=k: rec["totals"][k]), money)
             for k, b in enumerate(blocks)]
    _, last = write_table(ws, top + 1, 1, cols, records)
    for c in range(1, len(cols) + 1):
        ws.cell(row=last, column=c).border = styles.YEAR_BORDER
        ws.cell(row=last, column=c).font = styles.HEADER_FONT
    return last


# ---------------------------------------------------------------- Cost comparison
def cost_sheet(ws, plan, fmt) -> None:
    order = [str(c.get("chemistry")) for c in seq(plan.get("chemistry_comparison")) if isinstance(c, Mapping)]
    for site in plan_sites(plan):
        for design in [site] + [a for a in seq(site.get("alternatives")) if isinstance(a, Mapping)]:
            if str(design.get("chemistry")) not in order:
                order.append(str(design.get("chemistry")))

    def best(site, chem, key):
        designs = [site] + [a for a in seq(site.get("alternatives")) if isinstance(a, Mapping)]
        found = [d for d in designs if str(d.get("chemistry")) == chem
                 and isinstance(cell_value(d.get("present_cost")), float | int)]
        if not found:
            return None
        return min(found, key=lambda d: float(d["present_cost"])).get(key)

    cur = fmt["cur"]
    cols = [Column("Site id", field_of("id")), Column("Site name", field_of("name")),
            Column("Chosen chemistry", field_of("chemistry")),
            Column(f"Chosen present cost [{cur}]", field_of("present_cost"), fmt["money"])]
    for chem in order:
        cols.append(Column(f"{chem} present cost [{cur}]", (lambda s, c=chem: best(s, c, "present_cost")),
                           fmt["money"], optional=True))
        cols.append(Column(f"{chem} life [years]", (lambda s, c=chem: best(s, c, "life_years")),
                           styles.ONE_DECIMAL, optional=True))
    kept, last = write_table(ws, 1, 1, cols, plan_sites(plan))
    sens = [s for s in seq(plan.get("sensitivity")) if isinstance(s, Mapping)]
    if sens:
        left = len(kept) + 2
        base = {"case": "plan as chosen", "total_present_cost": plan.get("total_present_cost"),
                "change_frac": 0.0, "designs_changed": 0}
        scols = [Column("Sensitivity case", field_of("case"), width=24),
                 Column(f"Total present cost [{cur}]", field_of("total_present_cost"), fmt["money"]),
                 Column("Change [%]", field_of("change_frac"), styles.PERCENT),
                 Column("Designs changed", field_of("designs_changed"), styles.INTEGER)]
        write_table(ws, 1, left, scols, [base, *sens])
    ws.freeze_panes = "C2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B")
