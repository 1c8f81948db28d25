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

from planner.plan.cautions import DEFER_INSTRUCTION, STANDARD_CAUTIONS, derived_site_warnings
from planner.plan.numbers import finite_number
from planner.report import charts, styles
from planner.report.cells import cell_value, put
from planner.report.tables import (
    CHART_ROWS,
    Column,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    write_table,
)
from planner.report.wording import coverage_text, downtime_share, drivers_text, plan_status_text

#: How many of the most expensive sites the Summary lists.
TOP_SITES = 10
#: Longest list of sites not served written out on the Summary (beyond it: a count).
MAX_UNSERVED_LISTED = 10
#: Cost groups of a comparison row: (JSON key, header word).
COST_GROUPS = (("equipment", "Equipment"), ("trips_and_labour", "Trips and labour"),
               ("downtime", "Days off air"), ("failure_risk", "Failure risk"))


def _facts(plan, fmt) -> list[tuple[str, object, str | None]]:
    study = mapping_of(plan.get("study"))
    solver = mapping_of(plan.get("solver"))
    cur = fmt["cur"]
    sites = plan_sites(plan)
    unserved = seq(plan.get("unserved_sites"))
    installed = sum(finite_number(s.get("capacity_wh")) or 0.0 for s in sites) / 1000.0
    replacements = sum(len(seq(s.get("replacement_years"))) for s in sites)
    trips = sum(finite_number(t.get("trip_count")) or 1 for t in seq(plan.get("trips")) if isinstance(t, Mapping))
    inflation = finite_number(study.get("inflation_frac"))
    return [
        (f"Total present cost [{cur}]", plan.get("total_present_cost"), fmt["money"]),
        ("Plan status", plan_status_text(plan), None),
        ("Sites planned", len(sites), styles.INTEGER),
        ("Sites no design can serve", len(unserved), styles.INTEGER),
        ("Sites whose life the service-life limit decides", plan.get("service_life_limited_sites"),
         styles.INTEGER),
        ("Installed capacity of the chosen packs [kWh]", installed, styles.ONE_DECIMAL),
        ("Pack replacements over the horizon", replacements, styles.INTEGER),
        ("Crew trips over the horizon", trips, styles.INTEGER),
        ("Horizon [years]", study.get("horizon_years"), styles.INTEGER),
        ("Real discount rate [%]", study.get("discount_rate_frac"), styles.PERCENT_FINE),
        ("Inflation [%/year]", inflation if inflation else None, styles.PERCENT_FINE),
        ("Solver", solver.get("name"), None),
        ("Optimality gap [%]", solver.get("gap_frac"), styles.PERCENT_FINE),
        (f"Best bound [{cur}]", solver.get("best_bound"), fmt["money"]),
        ("Solve time [s]", solver.get("seconds"), styles.ONE_DECIMAL),
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
        if number_format and isinstance(cell_value(value), float | int):
            cell.number_format = number_format
        elif isinstance(cell.value, str) and len(cell.value) > 20:
            # a sentence (plan status): wrap it, label and value both read from the top; the
            # row height is set once the column widths are final (_fit_sentences)
            cell.alignment = ws.cell(row=cell.row, column=1).alignment = styles.WRAP_TOP
    ws.cell(row=top + 1, column=1).font = ws.cell(row=top + 1, column=2).font = styles.HEADER_FONT
    return end


def _comparison(ws, plan, fmt, top: int) -> int:
    """The whole fleet forced to each chemistry; returns the last row written."""
    rows = [c for c in seq(plan.get("chemistry_comparison")) if isinstance(c, Mapping)]
    if not rows:
        return top - 1
    cur = fmt["cur"]
    n_sites = len(plan_sites(plan))
    put(ws, top, 1, "The whole fleet with one chemistry wherever it can serve "
                    "(the other sites keep their best design)").font = styles.SECTION_FONT
    cols = [Column("Chemistry", field_of("chemistry"), width=12),
            Column(f"Fleet present cost, others keep their best [{cur}]",
                   field_of("total_with_others_present_cost"), fmt["money"], width=16)]
    cols += [Column(f"{word} [{cur}]", field_of(key), fmt["money"], optional=True, width=13)
             for key, word in COST_GROUPS]
    cols += [Column("Days off air share [%]", downtime_share, styles.PERCENT, optional=True, width=10),
             Column("Coverage", lambda r: coverage_text(r, n_sites), width=34),
             Column("Sites that make most of the difference to the plan",
                    lambda r: drivers_text(r, cur) or "", width=40)]
    kept, last = write_table(ws, top + 1, 1, cols, rows)
    for row in range(top + 2, last + 1):
        lines = 1
        for offset, col in enumerate(kept):
            cell = ws.cell(row=row, column=1 + offset)
            # every cell reads from the top, so wrapped text and numbers stay on one line
            cell.alignment = styles.WRAP_TOP_INDENT if col.fmt is None else styles.TOP
            if col.fmt is None and col.width:
                lines = max(lines, -(-len(str(cell.value or "")) // int(col.width - 2)))
        ws.row_dimensions[row].height = 15 * min(lines, 4)
    return last


def _comparison_chart(ws, plan, fmt, comp_top: int, comp_last: int, anchor: str) -> None:
    """Stacked columns per chemistry: where each fleet cost goes (days off air stand out)."""
    if comp_last <= comp_top + 1:
        return
    header = comp_top + 1
    headers = [ws.cell(row=header, column=c).value for c in range(1, ws.max_column + 1)]
    group_cols = [i + 1 for i, h in enumerate(headers)
                  if isinstance(h, str) and any(h.startswith(word + " [") for _, word in COST_GROUPS)]
    if not group_cols:
        return
    charts.stacked_bar_chart(
        ws, title="Fleet present cost with each chemistry, by cost group",
        categories=Reference(ws, min_col=1, min_row=header + 1, max_row=comp_last),
        series=[Reference(ws, min_col=c, min_row=header, max_row=comp_last) for c in group_cols],
        y_title=f"Present cost [{fmt['cur']}]", y_format=fmt["money"], anchor=anchor)


def fleet_groups(sites, key: str) -> list[dict]:
    """Per value of ``key`` (region, chemistry): sites, kWh installed, present cost,
    replacements. Sorted by present cost, largest first."""
    groups: dict[str, dict] = {}
    for site in sites:
        name = str(cell_value(site.get(key)) or "(none)")
        g = groups.setdefault(name, {"group": name, "sites": 0, "installed_kwh": 0.0,
                                     "present_cost": 0.0, "replacements": 0})
        g["sites"] += 1
        g["installed_kwh"] += (finite_number(site.get("capacity_wh")) or 0.0) / 1000.0
        g["present_cost"] += finite_number(site.get("present_cost")) or 0.0
        g["replacements"] += len(seq(site.get("replacement_years")))
    return sorted(groups.values(), key=lambda g: (-g["present_cost"], g["group"]))


def _group_table(ws, top: int, label: str, groups, fmt) -> int:
    cols = [Column(label, field_of("group"), width=20),
            Column("Sites", field_of("sites"), styles.INTEGER, width=8),
            Column("Installed [kWh]", field_of("installed_kwh"), styles.ONE_DECIMAL, width=11),
            Column(f"Present cost [{fmt['cur']}]", field_of("present_cost"), fmt["money"], width=14),
            Column("Replacements", field_of("replacements"), styles.INTEGER, width=12)]
    _, last = write_table(ws, top, 1, cols, groups)
    return last


def _overview(ws, plan, fmt, top: int) -> int:
    sites = plan_sites(plan)
    put(ws, top, 1, "Fleet overview").font = styles.SECTION_FONT
    by_chem = fleet_groups(sites, "chemistry")
    chem_top = top + 1
    chem_last = _group_table(ws, chem_top, "Chemistry", by_chem, fmt)
    if chem_last > chem_top:
        charts.bar_chart(ws, title="Present cost by chemistry of the chosen packs",
                         categories=Reference(ws, min_col=1, min_row=chem_top + 1, max_row=chem_last),
                         values=Reference(ws, min_col=4, min_row=chem_top + 1, max_row=chem_last),
                         y_title=f"Present cost [{fmt['cur']}]", y_format=fmt["money"],
                         anchor=f"G{chem_top}")
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
            Column("Chemistry", field_of("chemistry"), width=10),
            Column("Pack size [Wh]", field_of("capacity_wh"), styles.INTEGER, width=9),
            Column("Replacement years", field_of("replacement_years"), width=12),
            Column(f"Present cost [{fmt['cur']}]", field_of("present_cost"), fmt["money"], width=13),
            Column("Share of the total [%]",
                   lambda s: float(s["present_cost"]) / total if total else None, styles.PERCENT,
                   optional=True, width=10)]
    _, last = write_table(ws, top + 1, 1, cols, ranked)
    return last


def _unserved(ws, plan, top: int) -> int:
    unserved = [u for u in seq(plan.get("unserved_sites")) if isinstance(u, Mapping)]
    put(ws, top, 1, "Sites not served").font = styles.SECTION_FONT
    if not unserved:
        put(ws, top + 1, 1, "Every site has a plan.")
        return top + 1
    if len(unserved) > MAX_UNSERVED_LISTED:
        put(ws, top + 1, 1, f"{len(unserved):,} sites cannot be served by any design; each is listed with its "
                            "reason on sheet Cautions.")
        return top + 1
    cols = [Column("Site id", field_of("id"), width=12), Column("Reason", field_of("reason"), width=90)]
    _, last = write_table(ws, top + 1, 1, cols, unserved)
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
    """Rows of the facts table whose value wraps get the height of their lines (LibreOffice
    does not grow rows for wrapped text on load; about one character per width unit)."""
    width = ws.column_dimensions["B"].width or 10
    for row in range(first, last + 1):
        value = ws.cell(row=row, column=2).value
        if isinstance(value, str) and len(value) > 20:
            lines = -(-int(len(value) * 1.1) // max(int(width) - 1, 1))
            ws.row_dimensions[row].height = 15 * min(max(lines, 1), 4)


def summary_sheet(ws, plan, fmt) -> None:
    study = mapping_of(plan.get("study"))
    cur = fmt["cur"]
    title(ws, f"Battery plan: {study.get('name') or 'study'}",
          f"Money in {cur or 'the study currency'}, present value at the study start, real terms; "
          "years count from the start (year 0 = first installation). Year by year: sheet Spending by year.")
    put(ws, 3, 1, "The plan").font = styles.SECTION_FONT
    facts_end = _facts_table(ws, plan, fmt, 4)
    comp_top = max(facts_end, 3 + CHART_ROWS) + 2
    comp_last = _comparison(ws, plan, fmt, comp_top)
    _comparison_chart(ws, plan, fmt, comp_top, comp_last, anchor="D3")
    # Page 2 starts with the fleet overview: no table is cut from its header.
    ws.row_breaks.append(Break(id=comp_last + 1))
    row = _overview(ws, plan, fmt, comp_last + 2) + 2
    row = _top_sites(ws, plan, fmt, row) + 2
    row = _unserved(ws, plan, row) + 2
    last = _safety(ws, plan, row)
    _fit_sentences(ws, 5, facts_end)
    ws.freeze_panes = "A3"
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(ws.max_column)}{last}")
