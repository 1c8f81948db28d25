"""The Summary sheet: the plan at a glance, at any fleet size.

Key figures and the plan's standing in plain words; the whole fleet forced to each
chemistry, split into equipment, trips and labour, days off air and failure risk, with
the sites that drive the difference; a fleet overview by region and by chemistry; the
ten most expensive sites; sites not served as a count with a pointer when the list would
be long; the safety pointer. Every per-site row stays on sheet Sites, so the Summary
prints on a few pages for 16 sites or 1,000.
"""

from __future__ import annotations

from collections.abc import Mapping

from openpyxl.chart import Reference
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from planner.plan.attention import attention_of
from planner.plan.cautions import DEFER_INSTRUCTION, STANDARD_CAUTIONS, derived_site_warnings
from planner.plan.numbers import finite_number
from planner.report import charts, styles
from planner.report.cells import cell_value, put, write_rows
from planner.report.charts import CHART_HEIGHT_CM, CHART_WIDTH_CM
from planner.report.tables import (
    CHART_ROWS,
    Column,
    column_at,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    write_table,
)
from planner.report.wording import (
    chemistry_name,
    comparison_label,
    coverage_text,
    downtime_share,
    drivers_text,
    plan_status_text,
)

#: How many of the most expensive sites the Summary lists.
TOP_SITES = 10
#: Longest list of sites not served written out on the Summary (beyond it: a count).
MAX_UNSERVED_LISTED = 10
#: Cost groups of a comparison row: (JSON key, header words). Their sum is the row's total.
COST_GROUPS = (("equipment", "Equipment"), ("trips_and_labour", "Trips and labour"),
               ("failure_risk", "Expected failure cost"), ("downtime", "Days off air"))
#: First column of the chart data block, right of the printed area.
CHART_DATA_COL = 16


def plan_cost_groups(plan) -> dict:
    """The plan's own cost groups: the plan's ``cost_groups``, else summed from the
    sites' cost breakdowns (equipment = packs + disposal + residual value)."""
    stored = plan.get("cost_groups")
    if isinstance(stored, Mapping) and all(finite_number(stored.get(k)) is not None for k, _ in COST_GROUPS):
        return {k: float(stored[k]) for k, _ in COST_GROUPS}
    out = dict.fromkeys((k for k, _ in COST_GROUPS), 0.0)
    for site in plan_sites(plan):
        b = mapping_of(site.get("cost_breakdown"))
        out["equipment"] += sum(finite_number(b.get(k)) or 0.0 for k in ("packs", "disposal", "residual"))
        out["trips_and_labour"] += sum(finite_number(b.get(k)) or 0.0 for k in ("trips", "labour"))
        out["failure_risk"] += finite_number(b.get("failure_risk")) or 0.0
        out["downtime"] += finite_number(b.get("downtime")) or 0.0
    return out


def _facts(plan, fmt) -> list[tuple[str, object, str | None]]:
    study = mapping_of(plan.get("study"))
    cur = fmt["cur"]
    sites = plan_sites(plan)
    attention = attention_of(plan)
    groups = {g.get("cause"): g for g in seq(attention.get("groups")) if isinstance(g, Mapping)}
    threshold = finite_number(attention.get("lost_load_threshold_frac")) or 0.0
    installed = sum(finite_number(s.get("capacity_wh")) or 0.0 for s in sites) / 1000.0
    packs = [len(seq(s.get("replacement_years"))) for s in sites]
    trips = sum(finite_number(t.get("trip_count")) or 1 for t in seq(plan.get("trips")) if isinstance(t, Mapping))
    inflation = finite_number(study.get("inflation_frac"))
    return [
        (f"Total present cost [{cur}]", plan.get("total_present_cost"), fmt["money"]),
        ("Plan status", plan_status_text(plan), None),
        ("Sites planned", len(sites), styles.INTEGER),
        (f"Sites not served (no design, or losing more than {threshold:.0%} of their load)",
         len(seq(attention.get("sites_not_served"))), styles.INTEGER),
        ("Sites that may fail before their next visit", (groups.get("at_risk") or {}).get("count", 0),
         styles.INTEGER),
        ("Installed capacity of the first new packs [kWh]", installed, styles.ONE_DECIMAL),
        ("First packs put in", sum(1 for n in packs if n), styles.INTEGER),
        ("Replacements after the first pack", sum(max(n - 1, 0) for n in packs), styles.INTEGER),
        ("Crew trips over the horizon", trips, styles.INTEGER),
        ("Horizon [years]", study.get("horizon_years"), styles.INTEGER),
        ("Real discount rate [%]", study.get("discount_rate_frac"), styles.PERCENT_FINE),
        ("Inflation [%/year]", inflation if inflation else None, styles.PERCENT_FINE),
        ("Sites file", study.get("sites_file"), None),
    ]


def _facts_table(ws, plan, fmt, top: int) -> int:
    cur = fmt["cur"]
    kept = [f for f in _facts(plan, fmt) if cell_value(f[1]) is not None or f[0] in
            ("Sites planned", f"Total present cost [{cur}]")]
    cols = [Column("Item", lambda f: f[0], width=34), Column("Value", lambda f: f[1], width=18)]
    _, end = write_table(ws, top, 1, cols, kept, drop_empty=False)
    for offset, (_, value, number_format) in enumerate(kept):
        cell = ws.cell(row=top + 1 + offset, column=2)
        label = ws.cell(row=top + 1 + offset, column=1)
        label.alignment = styles.WRAP_TOP
        if number_format and isinstance(cell_value(value), float | int):
            cell.number_format = number_format
            cell.alignment = styles.TOP
        elif isinstance(cell.value, str) and len(cell.value) > 20:
            # a sentence (plan status): merged over the columns to its right so it is never
            # cut; the row height is set once the column widths are final (_fit_sentences)
            cell.alignment = styles.WRAP_TOP
            ws.merge_cells(start_row=cell.row, start_column=2, end_row=cell.row, end_column=3)
    ws.cell(row=top + 1, column=1).font = ws.cell(row=top + 1, column=2).font = styles.HEADER_FONT
    return end


def _comparison_rows(plan, fmt) -> list[dict]:
    """The plan itself, then the fleet forced to each chemistry wherever it can serve."""
    names = fmt["chemistry_names"]
    n_sites = len(plan_sites(plan))
    mine = plan_cost_groups(plan)
    total = finite_number(plan.get("total_present_cost"))
    served = n_sites - len(seq(attention_of(plan).get("sites_not_served")))
    rows = [{"case": "This plan", "short": "This plan", "total": total, **mine,
             "share": (mine["downtime"] / total) if total else None,
             "coverage": f"serves {served:,} of {n_sites:,} sites", "drivers": None}]
    for c in seq(plan.get("chemistry_comparison")):
        if not isinstance(c, Mapping):
            continue
        rows.append({"case": comparison_label(c, names), "short": chemistry_name(c.get("chemistry"), names),
                     "total": c.get("total_with_others_present_cost"),
                     **{k: c.get(k) for k, _ in COST_GROUPS}, "share": downtime_share(c),
                     "coverage": coverage_text(c, n_sites, names), "drivers": drivers_text(c, fmt["cur"])})
    return rows


def _comparison(ws, plan, fmt, top: int) -> tuple[int, list[dict]]:
    """This plan and the whole fleet forced to each chemistry; returns the last row written."""
    rows = _comparison_rows(plan, fmt)
    if len(rows) == 1 and not seq(plan.get("chemistry_comparison")):
        return top - 1, []
    cur = fmt["cur"]
    put(ws, top, 1, "This plan, and the whole fleet with one chemistry wherever it can serve "
                    "(the other sites keep their best design)").font = styles.SECTION_FONT
    # money columns take their width from the values (a fleet's days off air run to millions)
    cols = [Column("Case", field_of("case"), width=40),
            Column(f"Fleet present cost [{cur}]", field_of("total"), fmt["money"])]
    cols += [Column(f"{word} [{cur}]", field_of(key), fmt["money"], optional=True)
             for key, word in COST_GROUPS]
    cols += [Column("Days off air share [%]", field_of("share"), styles.PERCENT, optional=True, width=10),
             Column("Coverage", field_of("coverage"), width=34),
             Column("Sites that make most of the difference to the plan",
                    lambda r: r["drivers"] or "", width=40)]
    kept, last = write_table(ws, top + 1, 1, cols, rows)
    for row in range(top + 2, last + 1):
        lines = 1
        for offset, col in enumerate(kept):
            cell = ws.cell(row=row, column=1 + offset)
            # every cell reads from the top, so wrapped text and numbers stay on one line
            cell.alignment = styles.WRAP_TOP_INDENT if col.fmt is None else styles.TOP
            if col.fmt is None and col.width:
                lines = max(lines, -(-len(str(cell.value or "")) // int(col.width - 2)))
        ws.row_dimensions[row].height = 15 * min(lines, 6)
    for c in range(1, len(kept) + 1):
        ws.cell(row=top + 2, column=c).font = styles.HEADER_FONT
    return last, rows


def _comparison_charts(ws, rows, fmt, anchor_row: int) -> None:
    """Stacked columns per case without days off air, and days off air on a chart of its
    own (they can be hundreds of times the rest). The chart data sit right of the
    printed area, in COST_GROUPS order."""
    if len(rows) < 2:
        return
    left = CHART_DATA_COL
    put(ws, 1, left, "Chart data").font = styles.NOTE_FONT
    data = [[r["short"]] + [finite_number(r.get(k)) or 0.0 for k, _ in COST_GROUPS] for r in rows]
    for offset, (_, word) in enumerate(COST_GROUPS, start=1):
        put(ws, 2, left + offset, word)
    write_rows(ws, 3, left, data, [None] + [fmt["money"]] * len(COST_GROUPS))
    last = 2 + len(rows)
    categories = Reference(ws, min_col=left, min_row=3, max_row=last)
    keys = [k for k, _ in COST_GROUPS]
    parts = [Reference(ws, min_col=left + 1 + i, min_row=2, max_row=last)
             for i, k in enumerate(keys) if k != "downtime"]
    height = CHART_HEIGHT_CM + 0.6 * len(rows)
    charts.stacked_bar_chart(
        ws, title="Fleet present cost by case, without days off air",
        categories=categories, series=parts, y_title=f"Present cost [{fmt['cur']}]", y_format=fmt["money"],
        anchor=f"A{anchor_row}", colours=[styles.COST_COLOURS[k] for k in keys if k != "downtime"],
        horizontal=True, width_cm=CHART_WIDTH_CM * 1.2, height_cm=height)
    if any(row[1 + keys.index("downtime")] for row in data):
        charts.bar_chart(
            ws, title="Days off air by case (on their own scale)", categories=categories,
            values=Reference(ws, min_col=left + 1 + keys.index("downtime"), min_row=3, max_row=last),
            y_title=f"Present cost [{fmt['cur']}]", y_format=fmt["money"],
            anchor=f"{column_at(ws, CHART_WIDTH_CM * 1.2 + 0.5)}{anchor_row}",
            colour=styles.COST_COLOURS["downtime"], horizontal=True, width_cm=CHART_WIDTH_CM * 1.2,
            height_cm=height)


def chart_rows_of(rows) -> int:
    """Sheet rows the comparison charts take (their height at the default row height)."""
    return int((CHART_HEIGHT_CM + 0.6 * len(rows)) / 0.53) + 1


def fleet_groups(sites, key: str, label=None) -> list[dict]:
    """Per value of ``key`` (region, chemistry): sites, kWh installed, present cost,
    replacements. Sorted by present cost, largest first; ``label`` names a group."""
    groups: dict[str, dict] = {}
    for site in sites:
        name = str(cell_value(site.get(key)) or "(none)")
        g = groups.setdefault(name, {"group": label(name) if label else name, "key": name, "sites": 0,
                                     "installed_kwh": 0.0, "present_cost": 0.0, "replacements": 0})
        g["sites"] += 1
        g["installed_kwh"] += (finite_number(site.get("capacity_wh")) or 0.0) / 1000.0
        g["present_cost"] += finite_number(site.get("present_cost")) or 0.0
        g["replacements"] += len(seq(site.get("replacement_years")))
    return sorted(groups.values(), key=lambda g: (-g["present_cost"], g["group"]))


def _group_table(ws, top: int, label: str, groups, fmt) -> int:
    cols = [Column(label, field_of("group"), width=40),
            Column("Sites", field_of("sites"), styles.INTEGER, width=8),
            Column("Installed [kWh]", field_of("installed_kwh"), styles.ONE_DECIMAL, width=11),
            Column(f"Present cost [{fmt['cur']}]", field_of("present_cost"), fmt["money"], width=14),
            Column("Replacements", field_of("replacements"), styles.INTEGER, width=12)]
    _, last = write_table(ws, top, 1, cols, groups)
    return last


def _overview(ws, plan, fmt, top: int) -> int:
    sites = plan_sites(plan)
    names = fmt["chemistry_names"]
    put(ws, top, 1, "Fleet overview").font = styles.SECTION_FONT
    by_chem = fleet_groups(sites, "chemistry", lambda c: chemistry_name(c, names))
    chem_top = top + 1
    chem_last = _group_table(ws, chem_top, "Chemistry of the first new pack", by_chem, fmt)
    if chem_last > chem_top:
        charts.bar_chart(ws, title="Present cost by chemistry of the first new pack",
                         categories=Reference(ws, min_col=1, min_row=chem_top + 1, max_row=chem_last),
                         values=Reference(ws, min_col=4, min_row=chem_top + 1, max_row=chem_last),
                         y_title=f"Present cost [{fmt['cur']}]", y_format=fmt["money"],
                         anchor=f"{column_at(ws, 0.2 * 80)}{chem_top}", horizontal=True,
                         point_colours=[styles.chemistry_colour(g["key"]) for g in by_chem])
    region_top = max(chem_last, chem_top + CHART_ROWS) + 2
    return _group_table(ws, region_top, "Region", fleet_groups(sites, "region"), fmt)


def _top_sites(ws, plan, fmt, top: int) -> int:
    sites = plan_sites(plan)
    costed = [s for s in sites if finite_number(s.get("present_cost")) is not None]
    ranked = sorted(costed, key=lambda s: (-float(s["present_cost"]), str(s.get("id"))))[:TOP_SITES]
    total = finite_number(plan.get("total_present_cost"))
    put(ws, top, 1, f"The {len(ranked)} most expensive sites of {len(sites):,} "
                    "(every site: sheet Sites)").font = styles.SECTION_FONT
    cols = [Column("Site id", field_of("id"), width=12), Column("Site name", field_of("name")),
            Column("Region", field_of("region"), optional=True),
            Column("Chemistry", lambda s: chemistry_name(s.get("chemistry"), fmt["chemistry_names"]), width=22),
            Column("Pack size [Wh]", field_of("capacity_wh"), styles.INTEGER, width=9),
            Column("Replacement years", field_of("replacement_years"), width=12),
            Column(f"Present cost [{fmt['cur']}]", field_of("present_cost"), fmt["money"], width=13),
            Column("Share of the total [%]",
                   lambda s: float(s["present_cost"]) / total if total else None, styles.PERCENT,
                   optional=True, width=10)]
    _, last = write_table(ws, top + 1, 1, cols, ranked)
    return last


def _unserved(ws, plan, top: int) -> int:
    attention = attention_of(plan)
    groups = [g for g in seq(attention.get("groups")) if isinstance(g, Mapping) and g.get("not_served")]
    cases = [{**i, "cause": g.get("title")} for g in groups for i in seq(g.get("items")) if isinstance(i, Mapping)]
    put(ws, top, 1, "Sites not served").font = styles.SECTION_FONT
    if not cases:
        put(ws, top + 1, 1, "Every site is served.")
        return top + 1
    if len(cases) > MAX_UNSERVED_LISTED:
        put(ws, top + 1, 1, f"{len(cases):,} sites are not served; each is listed with its cause and "
                            "the suggested fix on sheet Needs attention.")
        return top + 1
    cols = [Column("Site id", field_of("id"), width=12), Column("Cause", field_of("cause"), width=30),
            Column("What", field_of("detail"), width=70)]
    _, last = write_table(ws, top + 1, 1, cols, cases)
    return last


def _safety(ws, plan, top: int) -> int:
    put(ws, top, 1, "Safety").font = styles.SECTION_FONT
    cell = put(ws, top + 1, 1, DEFER_INSTRUCTION)
    cell.alignment = styles.WRAP_TOP
    ws.merge_cells(start_row=top + 1, start_column=1, end_row=top + 1, end_column=8)
    ws.row_dimensions[top + 1].height = 32
    topics = "; ".join(c.topic for c in STANDARD_CAUTIONS)
    put(ws, top + 2, 1, f"Cautions that apply to this work: {topics}. Details and per-site warnings: "
                        "sheet Cautions.")
    n_warn = sum(len(derived_site_warnings(s)) for s in plan_sites(plan))
    n_unserved = len(seq(plan.get("unserved_sites")))
    put(ws, top + 3, 1, f"Per-site warnings raised: {n_warn:,}; sites no design can serve: "
                        f"{n_unserved:,}.")
    return top + 3


def _fit_sentences(ws, first: int, last: int) -> None:
    """Rows of the facts table whose label or value wraps get the height of their lines
    (LibreOffice does not grow rows for wrapped text on load; about one character per
    width unit). A long value spans columns B and C."""
    label_width = ws.column_dimensions["A"].width or 10
    width = (ws.column_dimensions["B"].width or 10) + (ws.column_dimensions["C"].width or 10)
    for row in range(first, last + 1):
        value, label = ws.cell(row=row, column=2).value, ws.cell(row=row, column=1).value
        lines = 1
        if isinstance(value, str) and len(value) > 20:
            lines = -(-int(len(value) * 1.1) // max(int(width) - 1, 1))
        if isinstance(label, str):
            lines = max(lines, -(-int(len(label) * 1.1) // max(int(label_width) - 1, 1)))
        ws.row_dimensions[row].height = 15 * min(max(lines, 1), 6)


def summary_sheet(ws, plan, fmt) -> None:
    study = mapping_of(plan.get("study"))
    cur = fmt["cur"]
    title(ws, f"Battery plan: {study.get('name') or 'study'}",
          f"Money in {cur or 'the study currency'}, present value at the study start, real terms; "
          "years count from the start (year 0 = first installation). Year by year: sheet Spending by year. "
          "What to act on first: sheet Needs attention.")
    put(ws, 3, 1, "The plan").font = styles.SECTION_FONT
    facts_end = _facts_table(ws, plan, fmt, 4)
    comp_top = facts_end + 2
    comp_last, rows = _comparison(ws, plan, fmt, comp_top)
    comparison_columns = sum(1 for c in range(1, CHART_DATA_COL) if ws.cell(row=comp_top + 1, column=c).value)
    # Page 2 starts with the charts and the fleet overview: no chart is cut by a page.
    # the charts two rows below the break, so no chart frame is drawn at the foot of page 1
    chart_top = comp_last + 3
    ws.row_breaks.append(Break(id=comp_last + 1))
    _comparison_charts(ws, rows, fmt, chart_top)
    after = chart_top + (chart_rows_of(rows) if len(rows) > 1 else 0)
    row = _overview(ws, plan, fmt, after + 1) + 2
    row = _top_sites(ws, plan, fmt, row) + 2
    row = _unserved(ws, plan, row) + 2
    last = _safety(ws, plan, row)
    _fit_sentences(ws, 5, facts_end)
    ws.freeze_panes = "A3"
    width = max(comparison_columns, 8)
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(width)}{last}")
