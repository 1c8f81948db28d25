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
from planner.report.summary_sheet import plan_cost_groups
from planner.report.tables import (
    CHART_ROWS,
    Column,
    dig,
    field_of,
    long_table_print_area,
    mapping_of,
    plan_sites,
    seq,
    title,
    write_table,
)
from planner.report.wording import chemistry_name

#: Spending columns: (JSON key, header words). Their sum is the row's total.
SPENDING_COLUMNS = (
    ("packs", "Packs"), ("labour", "Installation labour"), ("trips", "Trips"),
    ("disposal", "Disposal"), ("thermal", "Thermal measures"),
    ("downtime", "Days off air"), ("risk", "Expected failure cost"),
    ("residual", "Residual value"))
#: Which spending columns make up each of the Summary's cost groups (their present values
#: add up to the group of "This plan"; summary_sheet.COST_GROUPS has the same keys).
GROUP_PARTS = (("equipment", "Equipment: packs, thermal measures, disposal, residual value",
                ("packs", "thermal", "disposal", "residual")),
               ("trips_and_labour", "Trips and labour: installation labour, trips", ("labour", "trips")),
               ("failure_risk", "Expected failure cost", ("risk",)),
               ("downtime", "Days off air", ("downtime",)))
#: The check line passes when the present values add up to the plan's total within this.
PRESENT_VALUE_TOLERANCE = 0.01
#: Amounts smaller than half a cent are shown as 0 (a computed 1e-245 is no spending).
CENT = 0.005


def _spending_rows(plan) -> list[Mapping]:
    return [r for r in seq(plan.get("spending_by_year")) if isinstance(r, Mapping)]


def present_value_tolerance(rows, plan_total) -> float:
    """Tolerance of the check line: :data:`PRESENT_VALUE_TOLERANCE` plus the rounding of
    figures read back from the plan JSON (6 significant digits, docs/plan-json.md)."""
    stored = sum(abs(finite_number(r.get("present_value")) or 0.0) for r in rows) + abs(plan_total or 0.0)
    return PRESENT_VALUE_TOLERANCE + 5e-6 * stored


def whole_cents(value):
    """A money amount for a cell: amounts below half a cent become 0."""
    value = finite_number(value)
    if value is None:
        return None
    return 0.0 if abs(value) < CENT else value


def _money(key):
    return lambda record: whole_cents(record.get(key))


def _part_sums(rows, rate, inflation) -> dict[str, dict[str, float]]:
    """Per spending part: its total in constant money, money of the year and present value."""
    out = {}
    for key in [k for k, _ in SPENDING_COLUMNS] + ["total"]:
        const = nominal = present = 0.0
        for r in rows:
            value = finite_number(r.get(key)) or 0.0
            year = finite_number(r.get("year")) or 0
            const += value
            nominal += value * (1.0 + inflation) ** year
            present += value / (1.0 + rate) ** year
        out[key] = {"constant": const, "nominal": nominal, "present": present}
    return out


def _totals_rows(ws, rows, kept, last, rate, inflation, money) -> int:
    """Three total rows under the table: constant money, money of the year, present value."""
    sums = _part_sums(rows, rate, inflation)
    keys = {f"{word} [": key for key, word in SPENDING_COLUMNS}
    labels = (("constant", "Total, constant money"), ("nominal", "Total, money of the year"),
              ("present", "Total, present value"))
    for offset, (kind, label) in enumerate(labels, start=1):
        row = last + offset
        put(ws, row, 1, label).font = styles.HEADER_FONT
        ws.cell(row=row, column=1).alignment = styles.WRAP_TOP
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=2)
        ws.row_dimensions[row].height = 30
        for c, col in enumerate(kept, start=1):
            key = next((k for prefix, k in keys.items() if col.header.startswith(prefix)), None)
            if col.header.startswith("Total ["):
                value = sums["total"][kind]
            elif col.header.startswith("Total, money of the year ["):
                value = sums["total"]["nominal"] if kind == "nominal" else None
            elif col.header.startswith("Present value ["):
                value = sums["total"]["present"] if kind == "present" else None
            else:
                value = sums[key][kind] if key else None
            if value is None:
                continue
            cell = put(ws, row, c, whole_cents(value), money)
            cell.font, cell.alignment = styles.HEADER_FONT, styles.TOP
            if offset == 1:
                cell.border = styles.TOTAL_BORDER
    return last + len(labels)


def _reconciliation(ws, plan, rows, top, cur, money, rate, inflation, value_col) -> int:
    """Check lines: the present values add up to the plan's total and to the Summary's cost
    groups, and the Trips column to the Trip list. Returns the last row written."""
    sums = _part_sums(rows, rate, inflation)
    plan_total = finite_number(plan.get("total_present_cost"))
    groups = plan_cost_groups(plan)
    trips = [t for t in seq(plan.get("trips")) if isinstance(t, Mapping)]
    lines = [("The present values above add up to the plan's total present cost (Summary)",
              sums["total"]["present"], plan_total)]
    for key, words, parts in GROUP_PARTS:
        lines.append((f"{words}: present value = this plan's {words.split(':')[0].lower()} on the Summary",
                      sum(sums[p]["present"] for p in parts), groups.get(key)))
    if trips:
        listed = sum((finite_number(t.get("cost")) or 0.0) + (finite_number(t.get("site_visits_cost")) or 0.0)
                     for t in trips)
        lines.append(("Trips column in constant money = the Trip list's trip costs plus site visits",
                      sums["trips"]["constant"], listed))
    put(ws, top, 1, "Reconciliation").font = styles.SECTION_FONT
    header = top + 1
    put(ws, header, 1, "Check")
    for offset, word in enumerate((f"This sheet [{cur}]", f"Compared with [{cur}]", f"Difference [{cur}]",
                                   "Holds to the cent")):
        put(ws, header, value_col + offset, word)
    styles.style_header_row(ws, header, 1, value_col + 3)
    tolerance = present_value_tolerance(rows, plan_total)
    row = header
    for label, mine, theirs in lines:
        row += 1
        put(ws, row, 1, label)
        put(ws, row, value_col, whole_cents(mine), money)
        if theirs is None:
            continue
        put(ws, row, value_col + 1, whole_cents(theirs), money)
        diff = mine - theirs
        put(ws, row, value_col + 2, whole_cents(diff), styles.money_format_cents(cur))
        holds = abs(diff) <= CENT
        put(ws, row, value_col + 3, "yes" if holds else "NO").font = (
            styles.HEADER_FONT if holds else styles.CREW_FLAG_FONT)
    ok = plan_total is not None and abs(sums["total"]["present"] - plan_total) <= tolerance
    put(ws, row + 1, 1,
        "Check passed: the years add up to the plan's total present cost." if ok
        else "CHECK FAILED: the years do not add up to the plan's total present cost."
        ).font = styles.NOTE_FONT
    return row + 1


def spending_sheet(ws, plan, fmt) -> None:
    cur = fmt["cur"]
    money = styles.money_format_dash_zero(cur)
    study = mapping_of(plan.get("study"))
    inflation = finite_number(study.get("inflation_frac")) or 0.0
    rate = finite_number(study.get("discount_rate_frac"))
    note = (f"Constant money of the study start [{cur}], as the optimizer prices it; money of the year at "
            f"{inflation:.1%} inflation; present value at the real rate"
            + (f" of {rate:.1%}" if rate is not None else "") + ". Days off air and failure costs fall in "
            "the years they may happen (after each installation); the last row is the end of the study.")
    title(ws, "Spending by year")
    rows = _spending_rows(plan)
    if not rows:
        put(ws, 4, 1, "The plan holds no spending by year.")
        styles.landscape_fit_width(ws)
        return
    cols = [Column("Year", field_of("year"), styles.INTEGER, width=6),
            Column("Calendar year", field_of("calendar_year"), "0", optional=True, width=9)]
    # money columns take their width from the values (a 1,000-site fleet spends millions)
    cols += [Column(f"{word} [{cur}]", _money(key), money) for key, word in SPENDING_COLUMNS]
    cols += [Column(f"Total [{cur}]", _money("total"), money),
             Column(f"Total, money of the year [{cur}]", _money("total_nominal"), money),
             Column(f"Present value [{cur}]", _money("present_value"), money)]
    top = 4
    kept, last = write_table(ws, top, 1, cols, rows)
    title(ws, "Spending by year", note, note_width=120)
    headers = [c.header for c in kept]
    for c in range(1, len(kept) + 1):
        ws.cell(row=last, column=c).border = styles.YEAR_BORDER
    totals_last = _totals_rows(ws, rows, kept, last, rate or 0.0, inflation, money)
    pv_col = headers.index(f"Present value [{cur}]") + 1
    check_last = _reconciliation(ws, plan, rows, totals_last + 2, cur, fmt["money"], rate or 0.0, inflation,
                                 pv_col - 2)
    for letter in (get_column_letter(c) for c in range(pv_col - 2, pv_col + 2)):
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, 16)
    chart_top = check_last + 2
    # chart and region table on a page of their own; the chart one row below the break, so
    # its frame is not drawn at the foot of the table's page
    ws.row_breaks.append(Break(id=chart_top - 1))
    first_part = headers.index(f"{SPENDING_COLUMNS[0][1]} [{cur}]") + 1
    drawn = [(k, key) for k, (key, _) in enumerate(SPENDING_COLUMNS) if any(finite_number(r.get(key)) for r in rows)]
    year_col = 2 if "Calendar year" in headers else 1
    charts.stacked_bar_chart(
        ws, title="Spending by year, constant money", x_title="Year",
        categories=Reference(ws, min_col=year_col, min_row=top + 1, max_row=last),
        series=[Reference(ws, min_col=first_part + k, min_row=top, max_row=last) for k, _ in drawn],
        y_title=f"[{cur}]", y_format=money, anchor=f"A{chart_top + 1}", width_cm=2 * charts.CHART_WIDTH_CM,
        colours=[styles.COST_COLOURS[key] for _, key in drawn])
    region_top = chart_top + 1 + CHART_ROWS + 1
    region_last = _region_table(ws, plan, fmt, region_top)
    ws.freeze_panes = f"C{top + 1}"
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}",
                               area=f"A1:{get_column_letter(max(len(kept), pv_col + 1))}{region_last}")


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
    cols += [Column(f"{b.get('region')} [{cur}]", (lambda rec, k=k: whole_cents(rec["totals"][k])), money)
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

    cur, names = fmt["cur"], fmt["chemistry_names"]
    cols = [Column("Site id", field_of("id")), Column("Site name", field_of("name")),
            Column("Chosen chemistry", lambda s: chemistry_name(s.get("chemistry"), names), width=40),
            Column(f"Chosen present cost [{cur}]", field_of("present_cost"), fmt["money"])]
    for chem in order:
        name = chemistry_name(chem, names)
        cols.append(Column(f"{name}: present cost [{cur}]", (lambda s, c=chem: best(s, c, "present_cost")),
                           fmt["money"], optional=True, width=14))
        cols.append(Column(f"{name}: life [years]", (lambda s, c=chem: best(s, c, "life_years")),
                           styles.ONE_DECIMAL, optional=True, width=12))
    sites = plan_sites(plan)
    kept, last = write_table(ws, 1, 1, cols, sites)
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
    long_table_print_area(ws, 1, 1, last, ws.max_column, "sites")
