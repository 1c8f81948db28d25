"""The plan workbook: one sheet per question a planner asks.

Sheets: Summary, Sites, Capacity fade, Fade by year, Visit schedule, Trip list, Cost
comparison, Climate, Assumptions and sources, Cautions. The input is the plan dict laid
out in ``docs/plan-json.md``; optional parts that are missing are left out, never faked.
The layout is described in ``docs/workbook.md``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from openpyxl import Workbook
from openpyxl.chart import Reference
from openpyxl.worksheet.pagebreak import Break
from openpyxl.utils import get_column_letter

from planner.report import charts, styles
from planner.fileio import write_atomically
from planner.report.cautions import (
    DEFER_INSTRUCTION,
    LITHIUM_IDS,
    STANDARD_CAUTIONS,
    derived_site_warnings,
)
from planner.report.cells import cell_value, put, write_rows

#: Sheet names, in order (plain words of our own).
SHEET_NAMES = ("Summary", "Sites", "Capacity fade", "Fade by year", "Visit schedule", "Trip list",
               "Cost comparison", "Climate", "Assumptions and sources", "Cautions")
#: How many sites get a capacity-fade chart (the most expensive ones).
FADE_CHART_SITES = 20
#: Largest fleet whose Fade by year table also lists every alternative design year by year.
FADE_TABLE_ALTERNATIVES_MAX_SITES = 200
#: How many representative sites get a climate chart.
CLIMATE_CHART_SITES = 4
MONTH_ABBR = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
#: Rows a chart of charts.CHART_HEIGHT_CM occupies at the default row height (0.53 cm).
CHART_ROWS = 16
#: Columns a chart of charts.CHART_WIDTH_CM occupies at width 10 (about 1.9 cm each).
CHART_COLS = 9


@dataclass(frozen=True)
class Column:
    """One table column: header (with unit), value getter, number format, options."""

    header: str
    get: Callable[[Mapping], object]
    fmt: str | None = None
    optional: bool = False  # dropped when no row has a value
    width: float | None = None


def _dig(mapping, *keys):
    """Nested lookup that tolerates missing keys and non-dict levels (returns None)."""
    value = mapping
    for key in keys:
        if not isinstance(value, Mapping):
            return None
        value = value.get(key)
    return value


def _key(*keys):
    return lambda record: _dig(record, *keys)


def _month_text(month) -> str | None:
    try:
        return MONTH_ABBR[int(month) - 1] if 1 <= int(month) <= 12 else None
    except (TypeError, ValueError):
        return None


def _write_table(ws, top: int, left: int, columns: list[Column], records, *, drop_empty: bool = True):
    """Write a header row and one row per record; return (columns kept, last row written).

    Optional columns with no value in any record are dropped, so a plan without e.g.
    P10 life shows no empty P10 column.
    """
    records = list(records)
    matrix = [[col.get(rec) for col in columns] for rec in records]
    keep = [i for i, col in enumerate(columns)
            if not (drop_empty and col.optional and all(cell_value(row[i]) is None for row in matrix))]
    kept = [columns[i] for i in keep]
    for offset, col in enumerate(kept):
        put(ws, top, left + offset, col.header)
    styles.style_header_row(ws, top, left, left + len(kept) - 1)
    rows = ([row[i] for i in keep] for row in matrix)
    next_row = write_rows(ws, top + 1, left, rows, [col.fmt for col in kept])
    _set_widths(ws, left, kept, matrix, keep)
    _fit_header_height(ws, top, left, kept)
    _indent_text_after_numbers(ws, top, left, kept, next_row - 1)
    return kept, next_row - 1


def _indent_text_after_numbers(ws, top, left, kept, last) -> None:
    # Right-aligned numbers run into left-aligned text in the next column; a one-character
    # indent keeps them apart.
    for offset in range(1, len(kept)):
        if kept[offset - 1].fmt and not kept[offset].fmt:
            for row in range(top, last + 1):
                ws.cell(row=row, column=left + offset).alignment = (
                    styles.HEADER_ALIGN_INDENT if row == top else styles.INDENT)


def _fit_header_height(ws, row, left, kept) -> None:
    # Headers wrap; give the row enough lines (15 points each) for the longest one.
    lines = 1
    for offset, col in enumerate(kept):
        width = ws.column_dimensions[get_column_letter(left + offset)].width or 10
        lines = max(lines, math.ceil(len(col.header) * 1.1 / max(width - 1, 1)))
    current = ws.row_dimensions[row].height or 15
    ws.row_dimensions[row].height = max(current, 15 * min(lines, 4))


def _set_widths(ws, left, kept, matrix, keep) -> None:
    # Width from the longest header word and a sample of values: headers wrap, values do not.
    sample = matrix[:200]
    for offset, (col, src) in enumerate(zip(kept, keep)):
        letter = get_column_letter(left + offset)
        if col.width:
            width = col.width
        else:
            longest_word = max((len(w) for w in col.header.split()), default=6)
            longest_value = max((_display_len(row[src]) for row in sample), default=0)
            width = min(max(longest_word + 2, longest_value + 2, 8), 48)
        # Two tables may share a column (Summary): keep the wider of the two.
        current = ws.column_dimensions[letter].width if letter in ws.column_dimensions else 0
        ws.column_dimensions[letter].width = max(current or 0, width + 1)


def _display_len(value) -> int:
    value = cell_value(value)
    if value is None:
        return 0
    if isinstance(value, float):
        return len(f"{value:,.1f}") + 4
    if isinstance(value, int):
        return len(f"{value:,}") + 4
    return len(value)


def _title(ws, text: str, note: str | None = None) -> None:
    put(ws, 1, 1, text).font = styles.TITLE_FONT
    if note:
        put(ws, 2, 1, note).font = styles.NOTE_FONT


def _sites(plan) -> list[dict]:
    return [s for s in _seq(plan.get("sites")) if isinstance(s, Mapping)]


def _seq(value) -> list:
    """The value if it is a list or tuple, else an empty list (a plan part may be missing)."""
    return list(value) if isinstance(value, list | tuple) else []


def _map(value) -> Mapping:
    """The value if it is a mapping, else an empty dict."""
    return value if isinstance(value, Mapping) else {}


# ---------------------------------------------------------------- Summary
def _summary_sheet(ws, plan, fmt) -> None:
    study = _map(plan.get("study"))
    cur = fmt["cur"]
    name = study.get("name") or "study"
    _title(ws, f"Battery plan: {name}",
           f"Money in {cur or 'the study currency'}, present value at the study start, real terms; "
           "years count from the start (year 0 = first installation).")
    solver = _map(plan.get("solver"))
    unserved = _seq(plan.get("unserved_sites"))
    facts = [
        (f"Total present cost [{cur}]", plan.get("total_present_cost"), fmt["money"]),
        ("Sites planned", len(_sites(plan)), styles.INTEGER),
        ("Sites without a feasible design", len(unserved), styles.INTEGER),
        ("Sites whose life the service-life limit decides", plan.get("service_life_limited_sites"),
         styles.INTEGER),
        ("Horizon [years]", study.get("horizon_years"), styles.INTEGER),
        ("Real discount rate [%]", study.get("discount_rate_frac"), styles.PERCENT_FINE),
        ("Solver", solver.get("name"), None),
        ("Solver status", solver.get("status"), None),
        ("Optimality gap [%]", solver.get("gap_frac"), styles.PERCENT_FINE),
        (f"Best bound [{cur}]", solver.get("best_bound"), fmt["money"]),
        ("Solve time [s]", solver.get("seconds"), styles.ONE_DECIMAL),
        ("Decomposition", solver.get("decomposition"), None),
        ("Sites file", study.get("sites_file"), None),
    ]
    put(ws, 3, 1, "The plan").font = styles.SECTION_FONT
    kept_facts = [f for f in facts if cell_value(f[1]) is not None or f[0] in
                  ("Sites planned", f"Total present cost [{cur}]")]
    fact_cols = [Column("Item", lambda f: f[0]), Column("Value", lambda f: f[1])]
    _, facts_end = _write_table(ws, 4, 1, fact_cols, kept_facts, drop_empty=False)
    for offset, (_, value, number_format) in enumerate(kept_facts):
        if number_format and isinstance(cell_value(value), float | int):
            ws.cell(row=5 + offset, column=2).number_format = number_format
    ws.cell(row=5, column=1).font = ws.cell(row=5, column=2).font = styles.HEADER_FONT  # the total

    comparison = [c for c in _seq(plan.get("chemistry_comparison")) if isinstance(c, Mapping)]
    comp_end = 3
    if comparison:
        put(ws, 3, 4, "Whole fleet forced to one chemistry").font = styles.SECTION_FONT
        cols = [Column("Chemistry", _key("chemistry")),
                Column(f"Fleet present cost, others keep their best [{cur}]",
                       _key("total_with_others_present_cost"), fmt["money"]),
                Column(f"Present cost of the sites it serves [{cur}]", _key("total_present_cost"),
                       fmt["money"]),
                Column("Sites served", _key("sites_served"), styles.INTEGER, optional=True),
                Column("Sites not served", _key("sites_unserved"), optional=True),  # a count or the ids
                Column("Solver status", _key("status"), optional=True)]
        _, comp_end = _write_table(ws, 4, 4, cols, comparison)
        if comp_end >= 5:
            charts.bar_chart(
                ws, title="Fleet present cost, each chemistry wherever it can serve",
                categories=Reference(ws, min_col=4, min_row=5, max_row=comp_end),
                values=Reference(ws, min_col=5, min_row=5, max_row=comp_end),
                y_title=f"Present cost [{cur}]", y_format=fmt["money"],
                anchor=f"{get_column_letter(4 + len(cols) + 1)}3")

    row = max(facts_end, comp_end, 3 + CHART_ROWS) + 2
    put(ws, row, 1, "Safety").font = styles.SECTION_FONT
    cell = put(ws, row + 1, 1, DEFER_INSTRUCTION)
    cell.alignment = styles.WRAP_TOP
    ws.merge_cells(start_row=row + 1, start_column=1, end_row=row + 1, end_column=8)
    ws.row_dimensions[row + 1].height = 32
    topics = "; ".join(c.topic for c in STANDARD_CAUTIONS)
    put(ws, row + 2, 1, f"Cautions that apply to this work: {topics}. Details and per-site warnings: "
                        "sheet Cautions.")
    n_warn = sum(len(derived_site_warnings(s)) for s in _sites(plan))
    put(ws, row + 3, 1, f"Per-site warnings raised: {n_warn}; sites without a feasible design: {len(unserved)}.")
    row += 5

    put(ws, row, 1, "Recommendation per site").font = styles.SECTION_FONT
    header_row = row + 1
    cols = [
        Column("Site id", _key("id")),
        Column("Site name", _key("name")),
        Column("Region", _key("region"), optional=True),
        Column("Chemistry", _key("chemistry")),
        Column("Pack size [Wh]", _key("capacity_wh"), styles.INTEGER),
        Column("Capacity [Ah]", _key("capacity_ah"), styles.ONE_DECIMAL, optional=True),
        Column("Charge voltage [V]", _key("charge_voltage_v"), styles.TWO_DECIMALS),
        Column("Thermal measure", _key("thermal_measure"), optional=True),
        Column("Replacement years", _key("replacement_years")),
        Column("Later packs", lambda s: "; ".join(f"{r.get('year')}: {_install_text(r)}"
                                                  for r in _seq(s.get("replacements"))[1:]
                                                  if isinstance(r, Mapping)) or None, optional=True),
        Column("Life [years]", _key("life_years"), styles.ONE_DECIMAL),
        Column("Life P10 [years]", _key("life_p10_years"), styles.ONE_DECIMAL, optional=True),
        Column(f"Present cost [{cur}]", _key("present_cost"), fmt["money"]),
    ]
    _, last = _write_table(ws, header_row, 1, cols, _sites(plan))
    ws.column_dimensions["A"].width = max(ws.column_dimensions["A"].width or 0, 30)
    ws.freeze_panes = "A3"
    styles.landscape_fit_width(ws, title_rows=f"{header_row}:{header_row}")


# ---------------------------------------------------------------- Sites
def _site_columns(fmt) -> list[Column]:
    cur, money, t = fmt["cur"], fmt["money"], styles.TEMPERATURE
    return [
        Column("Site id", _key("id")),
        Column("Site name", _key("name")),
        Column("Region", _key("region"), optional=True),
        Column("Climate", _key("climate"), optional=True),
        Column("Enclosure", _key("enclosure"), optional=True),
        Column("Charging source", _key("charging"), optional=True),
        Column("Daily load [Wh/day]", _key("daily_load_wh"), styles.ONE_DECIMAL, optional=True),
        Column("Peak load [W]", _key("load_peak_w"), styles.ONE_DECIMAL, optional=True),
        Column("Air mean [°C]", _key("temperature", "air_mean_c"), t, optional=True),
        Column("Air P99 [°C]", _key("temperature", "air_p99_c"), t, optional=True),
        Column("Battery mean [°C]", _key("temperature", "battery_mean_c"), t, optional=True),
        Column("Battery P1 [°C]", _key("temperature", "battery_p1_c"), t, optional=True),
        Column("Battery P99 [°C]", _key("temperature", "battery_p99_c"), t, optional=True),
        Column("Hours above 45 °C [h/year]", _key("temperature", "hours_above_45c"), styles.INTEGER, optional=True),
        Column("Hours below 0 °C [h/year]", _key("temperature", "hours_below_0c"), styles.INTEGER, optional=True),
        Column("Effective temperature [°C]", _key("temperature", "effective_temp_c"), t, optional=True),
        Column("Reference size 1x [Wh]", _key("reference_capacity_wh"), styles.INTEGER),
        Column("Autonomy [days]", _key("reference_factors", "autonomy_days"), styles.ONE_DECIMAL, optional=True),
        Column("Max depth of discharge [%]", _key("reference_factors", "max_dod_frac"), styles.PERCENT, optional=True),
        Column("Temperature factor [-]", _key("reference_factors", "temperature_factor"), styles.TWO_DECIMALS,
               optional=True),
        Column("Aging factor [-]", _key("reference_factors", "aging_factor"), styles.TWO_DECIMALS, optional=True),
        Column("Design margin [-]", _key("reference_factors", "design_margin"), styles.TWO_DECIMALS, optional=True),
        Column("Design temperature [°C]", _key("reference_factors", "design_temp_c"), t, optional=True),
        Column("Chemistry", _key("chemistry")),
        Column("Oversize factor [x]", _key("oversize_factor"), styles.TWO_DECIMALS),
        Column("Charge voltage [V]", _key("charge_voltage_v"), styles.TWO_DECIMALS),
        Column("Charge voltage per cell [V]", _key("charge_voltage_v_per_cell"), styles.THREE_DECIMALS, optional=True),
        Column("System voltage [V]", _key("system_voltage_v"), styles.ONE_DECIMAL, optional=True),
        Column("Pack size [Wh]", _key("capacity_wh"), styles.INTEGER),
        Column("Capacity [Ah]", _key("capacity_ah"), styles.ONE_DECIMAL, optional=True),
        Column("Pack structure", _key("pack_structure"), optional=True),
        Column("Pack mass [kg]", _key("pack_mass_kg"), styles.ONE_DECIMAL, optional=True),
        Column("Thermal measure", _key("thermal_measure"), optional=True),
        Column("Heater energy [Wh/year]", _key("heater_energy_wh_per_year"), styles.INTEGER, optional=True),
        Column("Replacement years", _key("replacement_years")),
        Column("Later packs", lambda s: "; ".join(f"{r.get('year')}: {_install_text(r)}"
                                                  for r in _seq(s.get("replacements"))[1:]
                                                  if isinstance(r, Mapping)) or None, optional=True),
        Column("Replacement months", lambda s: [_month_text(m) or m for m in _seq(s.get("replacement_months"))]
               or None, optional=True),
        Column("Life [years]", _key("life_years"), styles.ONE_DECIMAL),
        Column("Life P10 [years]", _key("life_p10_years"), styles.ONE_DECIMAL, optional=True),
        Column("Life P50 [years]", _key("life_p50_years"), styles.ONE_DECIMAL, optional=True),
        Column("Life P90 [years]", _key("life_p90_years"), styles.ONE_DECIMAL, optional=True),
        Column("Limiting cause", _key("limiting_cause"), optional=True),
        Column("Life extrapolated", _extrapolated_text, optional=True),
        Column("Unserved load [Wh/year]", _key("unserved_wh_per_year"), styles.ONE_DECIMAL),
        Column("Equivalent full cycles [1/year]", _key("equivalent_full_cycles_per_year"), styles.ONE_DECIMAL),
        Column(f"Present cost [{cur}]", _key("present_cost"), money),
        Column(f"Packs [{cur}]", _key("cost_breakdown", "packs"), money, optional=True),
        Column(f"Labour [{cur}]", _key("cost_breakdown", "labour"), money, optional=True),
        Column(f"Trips share [{cur}]", _key("cost_breakdown", "trips"), money, optional=True),
        Column(f"Disposal [{cur}]", _key("cost_breakdown", "disposal"), money, optional=True),
        Column(f"Residual value [{cur}]", _key("cost_breakdown", "residual"), money, optional=True),
        Column(f"Failure risk [{cur}]", _key("cost_breakdown", "failure_risk"), money, optional=True),
    ]


def _extrapolated_text(site):
    """'yes: why' when the life leans on an aging law outside its fitted envelope."""
    if "life_extrapolated" not in site:
        return None
    return f"yes: {site.get('life_extrapolation_note', '')}" if site["life_extrapolated"] else "no"


def _sites_sheet(ws, plan, fmt) -> None:
    kept, last = _write_table(ws, 1, 1, _site_columns(fmt), _sites(plan))
    ws.freeze_panes = "C2"
    if last >= 2:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(kept))}{last}"
    # 48 columns on one A4 width print at about 4 points; two pages wide stay legible.
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B", pages_wide=2)


# ---------------------------------------------------------------- Capacity fade
def _fade_series(site) -> list[tuple[str, list, int, bool]]:
    """(label, monthly SOH, colour index, dashed) for the chosen design, band, alternatives.

    The P10/P90 band shares the chosen design's colour, dashed; alternatives follow.
    """
    out = []
    chosen = _seq(site.get("soh_by_month"))
    if chosen:
        out.append((f"chosen: {site.get('chemistry', '')}", chosen, 0, False))
    p10, p90 = _seq(site.get("soh_p10_by_month")), _seq(site.get("soh_p90_by_month"))
    if chosen and p10 and p90:
        out.append(("chosen P10", p10, 0, True))
        out.append(("chosen P90", p90, 0, True))
    colour = 1
    for alt in _seq(site.get("alternatives")):
        if isinstance(alt, Mapping) and _seq(alt.get("soh_by_month")):
            out.append((f"best {alt.get('chemistry', '')}", _seq(alt["soh_by_month"]), colour, False))
            colour += 1
    return out


def _most_expensive(sites, n):
    costed = [s for s in sites if isinstance(cell_value(s.get("present_cost")), float | int)]
    return sorted(costed, key=lambda s: (-float(s["present_cost"]), str(s.get("id"))))[:n]


def _fade_sheet(ws, plan) -> None:
    chosen = [s for s in _most_expensive(_sites(plan), FADE_CHART_SITES) if _fade_series(s)]
    _title(ws, f"State of health over the horizon: the {len(chosen)} most expensive sites",
           "Chosen design (saw-tooth at each replacement), its P10/P90 band where known, and the best design "
           "of each other chemistry. Every site year by year: sheet Fade by year.")
    if not chosen:
        put(ws, 4, 1, "The plan holds no state-of-health series.")
        styles.landscape_fit_width(ws)
        return
    chart_rows = ((len(chosen) + 1) // 2) * CHART_ROWS
    data_top = 3 + chart_rows + 2
    put(ws, data_top - 1, 1, "Chart data: state of health by month [fraction of rated capacity]").font = \
        styles.SECTION_FONT
    n_months = max(len(series) for s in chosen for _, series, _, _ in _fade_series(s))
    put(ws, data_top, 1, "Years from start")
    years = np.arange(n_months) / 12.0
    write_rows(ws, data_top + 1, 1, ([y] for y in years.tolist()), [styles.TWO_DECIMALS])
    col = 2
    x_ref = Reference(ws, min_col=1, min_row=data_top + 1, max_row=data_top + n_months)
    y_floor = 1.0
    for index, site in enumerate(chosen):
        refs = []
        for label, series, colour, dashed in _fade_series(site):
            values = [cell_value(v) for v in series]
            put(ws, data_top, col, f"{site.get('id', '')} {label}")
            write_rows(ws, data_top + 1, col, ([v] for v in values), [styles.PERCENT])
            refs.append((label, Reference(ws, min_col=col, min_row=data_top + 1, max_row=data_top + len(values)),
                         colour, dashed))
            finite = [v for v in values if v is not None]
            y_floor = min(y_floor, min(finite, default=1.0))
            col += 1
        anchor = f"{get_column_letter(1 + (index % 2) * CHART_COLS)}{3 + (index // 2) * CHART_ROWS}"
        mark = " (life extrapolated)" if site.get("life_extrapolated") else ""
        charts.soh_chart(ws, title=f"{site.get('id', '')} {site.get('name', '')}{mark}", x_values=x_ref,
                         series=refs, anchor=anchor, horizon_years=(n_months - 1) / 12.0,
                         y_min=max(0.0, np.floor(y_floor * 10) / 10 - 0.1))
        y_floor = 1.0
    styles.style_header_row(ws, data_top, 1, col - 1)
    for c in range(1, max(col, 2 * CHART_COLS + 1)):
        ws.column_dimensions[get_column_letter(c)].width = 10
    ws.freeze_panes = "A3"
    _chart_page_breaks(ws, chart_rows)
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(2 * CHART_COLS)}{2 + chart_rows}")


def _chart_page_breaks(ws, chart_rows: int, per_page: int = 3) -> None:
    # Break pages between chart rows so that no chart is cut across two pages.
    for row in range(2 + per_page * CHART_ROWS, 2 + chart_rows, per_page * CHART_ROWS):
        ws.row_breaks.append(Break(id=row))


def _fade_table_sheet(ws, plan, horizon_years) -> None:
    # Alternatives' rows quadruple this, the largest table; above the cap they stay in the
    # charts, on Cost comparison and in the JSON, and the write stays within its time budget.
    with_alternatives = len(_sites(plan)) <= FADE_TABLE_ALTERNATIVES_MAX_SITES
    records = []
    for site in _sites(plan):
        designs = [("chosen", site)]
        if with_alternatives:
            designs += [("alternative", a) for a in _seq(site.get("alternatives")) if isinstance(a, Mapping)]
        for role, design in designs:
            soh = _as_float_array(design.get("soh_by_month"))
            yearly = soh[: 12 * horizon_years + 1 : 12].tolist()
            finite = soh[np.isfinite(soh)]
            records.append({"site": site, "role": role, "design": design, "yearly": yearly,
                            "lowest": float(finite.min()) if finite.size else None})
    cols = [Column("Site id", lambda r: r["site"].get("id")),
            Column("Design", lambda r: r["role"]),
            Column("Chemistry", lambda r: r["design"].get("chemistry")),
            Column("Pack size [Wh]", lambda r: r["design"].get("capacity_wh"), styles.INTEGER),
            Column("Life [years]", lambda r: r["design"].get("life_years"), styles.ONE_DECIMAL)]
    cols += [Column(f"SOH year {y} [%]", (lambda r, y=y: r["yearly"][y] if y < len(r["yearly"]) else None),
                    styles.PERCENT, width=7)
             for y in range(horizon_years + 1)]
    cols.append(Column("Lowest SOH [%]", lambda r: r["lowest"], styles.PERCENT))
    _write_table(ws, 1, 1, cols, records, drop_empty=False)
    ws.freeze_panes = "C2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B")


# ---------------------------------------------------------------- Visits
def _installs(plan) -> dict:
    """(site id, year) -> the new pack a visit installs (a ``replacements`` entry)."""
    out = {}
    for site in _sites(plan):
        for rep in (r for r in _seq(site.get("replacements")) if isinstance(r, Mapping)):
            out[(str(site.get("id")), rep.get("year"))] = rep
    return out


def _install_text(rep) -> str:
    """What a visit installs, short: 'LFP 1.2 kWh + heater'."""
    if not rep:
        return ""
    kwh = cell_value(rep.get("capacity_wh"))
    text = str(rep.get("chemistry") or "").upper()
    if isinstance(kwh, (int, float)):
        text += f" {kwh / 1000.0:.2g} kWh"
    measure = rep.get("thermal_measure")
    if measure and measure != "none":
        text += f" + {measure}"
    return text


def _visit_grid_sheet(ws, plan, horizon_years) -> None:
    sites = _sites(plan)
    installs = _installs(plan)
    visits = {}
    for site in sites:
        years = _seq(site.get("replacement_years"))
        months = _seq(site.get("replacement_months"))
        for k, year in enumerate(years):
            month = months[k] if k < len(months) else None
            what = _install_text(installs.get((str(site.get("id")), year)))
            visits[(str(site.get("id")), year)] = " ".join(
                x for x in (_month_text(month) or "visit", what) if x)
    for trip in (t for t in _seq(plan.get("trips")) if isinstance(t, Mapping)):
        for site_id in _seq(trip.get("site_ids")):
            visits.setdefault((str(site_id), trip.get("year")), _month_text(trip.get("month")) or "visit")
    cols = [Column("Site id", _key("id")), Column("Site name", _key("name")),
            Column("Region", _key("region"), optional=True)]
    start = _start_year(plan)
    cols += [Column(f"Year {y}" + (f" ({start + y})" if start else ""),
                    (lambda s, y=y: visits.get((str(s.get("id")), y))), width=12)
             for y in range(horizon_years)]
    kept, last = _write_table(ws, 1, 1, cols, sites, drop_empty=True)
    cols_letter = get_column_letter(len(kept))
    n_fixed = len(kept) - horizon_years
    ws.freeze_panes = f"{get_column_letter(n_fixed + 1)}2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols=f"A:{get_column_letter(n_fixed)}",
                               area=f"A1:{cols_letter}{max(last, 1)}")


def _trip_sheet(ws, plan, fmt) -> None:
    chem_by_site = {str(s.get("id")): s.get("chemistry") for s in _sites(plan)}
    trips = sorted((t for t in _seq(plan.get("trips")) if isinstance(t, Mapping)),
                   key=lambda t: (cell_value(t.get("year")) or 0, cell_value(t.get("month")) or 0,
                                  str(t.get("region"))))

    installs = _installs(plan)

    def installed(trip):
        return [(str(i), installs.get((str(i), trip.get("year")))) for i in _seq(trip.get("site_ids"))]

    def lithium(trip):
        chems = {(rep or {}).get("chemistry") or chem_by_site.get(i) for i, rep in installed(trip)}
        return "yes: UN 38.3 dangerous goods" if chems & LITHIUM_IDS else "no"

    def installs_text(trip):
        return "; ".join(f"{i}: {_install_text(rep)}" for i, rep in installed(trip) if rep) or None

    start = _start_year(plan)
    cols = [Column("Year", _key("year"), styles.INTEGER, width=7),
            Column("Calendar year", lambda t: start + t["year"] if start and isinstance(t.get("year"), int)
                   else None, "0", optional=True, width=9),
            Column("Month", lambda t: _month_text(t.get("month")), width=7),
            Column("Region", _key("region")),
            Column("Sites visited", lambda t: len(_seq(t.get("site_ids"))), styles.INTEGER, width=9),
            Column("Site ids", _key("site_ids"), width=40),
            Column("Installs", installs_text, optional=True, width=48),
            Column("Packs to carry", _key("pack_count"), styles.INTEGER, optional=True, width=9),
            Column("Pack mass [kg]", _key("pack_mass_kg"), styles.ONE_DECIMAL, optional=True, width=10),
            Column(f"Trip cost [{fmt['cur']}]", _key("cost"), fmt["money"], optional=True, width=14),
            Column("Lithium aboard", lithium, width=28)]
    kept, last = _write_table(ws, 1, 1, cols, trips)
    for row in range(3, last + 1):
        # A rule above the first trip of each year: the list reads year by year.
        if ws.cell(row=row, column=1).value != ws.cell(row=row - 1, column=1).value:
            for c in range(1, len(kept) + 1):
                ws.cell(row=row, column=c).border = styles.YEAR_BORDER
    ids_col = [i for i, c in enumerate(kept) if c.header in ("Site ids", "Installs")]
    for i in ids_col:
        for row in range(2, last + 1):
            ws.cell(row=row, column=i + 1).alignment = styles.WRAP_TOP
    ws.freeze_panes = "A2"
    styles.landscape_fit_width(ws, title_rows="1:1", area=f"A1:{get_column_letter(len(kept))}{max(last, 1)}")


# ---------------------------------------------------------------- Cost comparison
def _cost_sheet(ws, plan, fmt) -> None:
    order = [str(c.get("chemistry")) for c in _seq(plan.get("chemistry_comparison")) if isinstance(c, Mapping)]
    for site in _sites(plan):
        for design in [site] + [a for a in _seq(site.get("alternatives")) if isinstance(a, Mapping)]:
            if str(design.get("chemistry")) not in order:
                order.append(str(design.get("chemistry")))

    def best(site, chem, key):
        designs = [site] + [a for a in _seq(site.get("alternatives")) if isinstance(a, Mapping)]
        found = [d for d in designs if str(d.get("chemistry")) == chem
                 and isinstance(cell_value(d.get("present_cost")), float | int)]
        if not found:
            return None
        return min(found, key=lambda d: float(d["present_cost"])).get(key)

    cur = fmt["cur"]
    cols = [Column("Site id", _key("id")), Column("Site name", _key("name")),
            Column("Chosen chemistry", _key("chemistry")),
            Column(f"Chosen present cost [{cur}]", _key("present_cost"), fmt["money"])]
    for chem in order:
        cols.append(Column(f"{chem} present cost [{cur}]", (lambda s, c=chem: best(s, c, "present_cost")),
                           fmt["money"], optional=True))
        cols.append(Column(f"{chem} life [years]", (lambda s, c=chem: best(s, c, "life_years")),
                           styles.ONE_DECIMAL, optional=True))
    kept, last = _write_table(ws, 1, 1, cols, _sites(plan))
    sens = [s for s in _seq(plan.get("sensitivity")) if isinstance(s, Mapping)]
    if sens:
        left = len(kept) + 2
        base = {"case": "plan as chosen", "total_present_cost": plan.get("total_present_cost"),
                "change_frac": 0.0, "designs_changed": 0}
        scols = [Column("Sensitivity case", _key("case"), width=24),
                 Column(f"Total present cost [{cur}]", _key("total_present_cost"), fmt["money"]),
                 Column("Change [%]", _key("change_frac"), styles.PERCENT),
                 Column("Designs changed", _key("designs_changed"), styles.INTEGER)]
        _write_table(ws, 1, left, scols, [base, *sens])
    ws.freeze_panes = "C2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B")


# ---------------------------------------------------------------- Climate
def _representative(sites, n):
    """Coldest, hottest and median site by mean battery temperature, and the one with the hottest month."""
    have = [s for s in sites if _monthly(s, "battery_mean_c") and _monthly(s, "air_mean_c")]
    if not have:
        return []
    by_mean = sorted(have, key=lambda s: (float(np.mean(_monthly(s, "battery_mean_c"))), str(s.get("id"))))
    by_peak = sorted(have, key=lambda s: (-float(np.max(_monthly(s, "battery_mean_c"))), str(s.get("id"))))
    picks = []
    for site in (by_mean[0], by_mean[-1], by_mean[len(by_mean) // 2], by_peak[0]):
        if site not in picks:
            picks.append(site)
    return picks[:n]


def _monthly(site, key):
    values = _dig(site, "climate_monthly", key)
    if not isinstance(values, list | tuple) or len(values) != 12:
        return None
    values = [cell_value(v) for v in values]
    return values if all(isinstance(v, float | int) for v in values) else None


def _climate_sheet(ws, plan) -> None:
    sites = _sites(plan)
    reps = _representative(sites, CLIMATE_CHART_SITES)
    _title(ws, "Monthly mean air and battery temperature per site",
           "Charts: the coldest, the hottest, a median and the most peaked site by battery temperature.")
    chart_rows = ((len(reps) + 1) // 2) * CHART_ROWS
    top = 3 + chart_rows + 1
    cols = [Column("Site id", _key("id")), Column("Site name", _key("name")),
            Column("Climate", _key("climate"), optional=True), Column("Enclosure", _key("enclosure"), optional=True)]
    monthly = {id(s): (_monthly(s, "air_mean_c") or [None] * 12) + (_monthly(s, "battery_mean_c") or [None] * 12)
               for s in sites}
    cols += [Column(f"Air {m} [°C]", (lambda s, i=i: monthly[id(s)][i]),
                    styles.TEMPERATURE, width=7) for i, m in enumerate(MONTH_ABBR)]
    cols += [Column(f"Battery {m} [°C]", (lambda s, i=i: monthly[id(s)][12 + i]),
                    styles.TEMPERATURE, width=8) for i, m in enumerate(MONTH_ABBR)]
    kept, last = _write_table(ws, top, 1, cols, sites, drop_empty=False)
    first_air = len(kept) - 23
    # Month labels for the chart categories, one row above the table header.
    for i, m in enumerate(MONTH_ABBR):
        put(ws, top - 1, first_air + i, m).font = styles.NOTE_FONT
    categories = Reference(ws, min_col=first_air, max_col=first_air + 11, min_row=top - 1)
    row_of = {id(s): top + 1 + k for k, s in enumerate(sites)}
    for index, site in enumerate(reps):
        r = row_of[id(site)]
        series = [("air", Reference(ws, min_col=first_air, max_col=first_air + 11, min_row=r)),
                  ("battery", Reference(ws, min_col=first_air + 12, max_col=first_air + 23, min_row=r))]
        anchor = f"{get_column_letter(1 + (index % 2) * 8)}{3 + (index // 2) * CHART_ROWS}"
        charts.monthly_temperature_chart(ws, title=f"{site.get('id', '')} {site.get('name', '')}",
                                         categories=categories, series=series, anchor=anchor)
    ws.freeze_panes = f"C{top + 1}" if not reps else "A3"
    _chart_page_breaks(ws, chart_rows, per_page=2)
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}")


# ---------------------------------------------------------------- Assumptions
def _assumptions_sheet(ws, plan) -> None:
    _title(ws, "Assumptions and sources",
           "Every study input with its unit, and every model parameter with its source. Rows marked "
           "illustrative are demo figures, not prices to budget with.")
    study = _map(plan.get("study"))
    units = {"horizon_years": "years", "discount_rate_frac": "fraction", "currency": "", "name": "",
             "sites_file": ""}
    records = [{"group": "study", "name": k, "value": v, "unit": units.get(k, ""), "source": "study file"}
               for k, v in study.items()]
    records += [a for a in _seq(plan.get("assumptions")) if isinstance(a, Mapping)]

    def illustrative(rec):
        return "illustrative" if "illustrative" in str(rec.get("source", "")).lower() else None

    cols = [Column("Group", _key("group"), width=14), Column("Name", _key("name"), width=36),
            Column("Value", _key("value"), "General", width=16), Column("Unit", _key("unit"), width=16),
            Column("Source", _key("source"), width=60), Column("Illustrative", illustrative, width=12)]
    kept, last = _write_table(ws, 4, 1, cols, records, drop_empty=False)
    for row in range(5, last + 1):
        if ws.cell(row=row, column=6).value:
            for c in range(1, 7):
                ws.cell(row=row, column=c).font = styles.NOTE_FONT
    ws.freeze_panes = "A5"
    styles.landscape_fit_width(ws, title_rows="4:4")


# ---------------------------------------------------------------- Cautions
def _cautions_sheet(ws, plan) -> None:
    _title(ws, "Safety cautions")
    cell = put(ws, 2, 1, DEFER_INSTRUCTION)
    cell.alignment = styles.WRAP_TOP
    cell.font = styles.SECTION_FONT
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=3)
    ws.row_dimensions[2].height = 48
    records = [{"topic": c.topic, "text": c.text, "defer": c.defer_to} for c in STANDARD_CAUTIONS]
    # The pipeline may copy the standard cautions into the plan; list only the others.
    standard = tuple(f"{c.topic}:" for c in STANDARD_CAUTIONS)
    records += [{"topic": "From the plan", "text": str(t), "defer": "local codes and licensed practice"}
                for t in _seq(plan.get("cautions")) if not str(t).startswith(standard)]
    cols = [Column("Topic", _key("topic"), width=30), Column("Caution", _key("text"), width=90),
            Column("Defer to", _key("defer"), width=50)]
    _, last = _write_table(ws, 4, 1, cols, records)
    _wrap_rows(ws, 5, last, 3)
    row = last + 2
    put(ws, row, 1, "Per-site warnings").font = styles.SECTION_FONT
    warn = [{"id": s.get("id"), "name": s.get("name"), "text": w}
            for s in _sites(plan) for w in derived_site_warnings(s)]
    warn += [{"id": u.get("id"), "name": None, "text": f"no feasible design: {u.get('reason', '')}"}
             for u in _seq(plan.get("unserved_sites")) if isinstance(u, Mapping)]
    if warn:
        wcols = [Column("Site id", _key("id"), width=30), Column("Warning", _key("text"), width=90),
                 Column("Site name", _key("name"), width=50)]
        _, wlast = _write_table(ws, row + 1, 1, wcols, warn)
        _wrap_rows(ws, row + 2, wlast, 3)
    else:
        put(ws, row + 1, 1, "No per-site warnings were raised.")
    ws.freeze_panes = "A2"
    styles.landscape_fit_width(ws, title_rows="4:4")


def _wrap_rows(ws, first: int, last: int, n_cols: int) -> None:
    """Wrap text in rows first..last and size each row for its longest cell.

    LibreOffice does not grow rows for wrapped text on load, so the height is set here
    from the text length and the column width (about one character per width unit).
    """
    for row in range(first, last + 1):
        lines = 1
        for col in range(1, n_cols + 1):
            cell = ws.cell(row=row, column=col)
            cell.alignment = styles.WRAP_TOP
            width = ws.column_dimensions[get_column_letter(col)].width or 10
            lines = max(lines, math.ceil(len(str(cell.value or "")) * 1.1 / max(width - 1, 1)))
        ws.row_dimensions[row].height = 15 * lines


# ---------------------------------------------------------------- entry point
def build_workbook(plan: Mapping) -> Workbook:
    """Build the plan workbook in memory (see module docstring for the sheets)."""
    if not isinstance(plan, Mapping):
        raise TypeError(f"plan must be a mapping, got {type(plan).__name__}")
    study = _map(plan.get("study"))
    cur = styles.currency_label(study.get("currency"))
    fmt = {"cur": cur, "money": styles.money_format(cur)}
    horizon = _horizon_years(plan)
    wb = Workbook()
    sheets = [wb.active] + [wb.create_sheet() for _ in SHEET_NAMES[1:]]
    for ws, name in zip(sheets, SHEET_NAMES):
        ws.title = name
    summary, sites, fade, fade_table, grid, trips, cost, climate, assumptions, cautions = sheets
    _summary_sheet(summary, plan, fmt)
    _sites_sheet(sites, plan, fmt)
    _fade_sheet(fade, plan)
    _fade_table_sheet(fade_table, plan, horizon)
    _visit_grid_sheet(grid, plan, horizon)
    _trip_sheet(trips, plan, fmt)
    _cost_sheet(cost, plan, fmt)
    _climate_sheet(climate, plan)
    _assumptions_sheet(assumptions, plan)
    _cautions_sheet(cautions, plan)
    return wb


def _start_year(plan) -> int | None:
    """Calendar year of study year 0, when the study gives one."""
    start = cell_value(_dig(plan, "study", "start_year"))
    return start if isinstance(start, int) and 1900 <= start <= 2200 else None


def _as_float_array(values) -> np.ndarray:
    """A 1-D float array from a plan list; non-numbers become NaN (shown blank)."""
    if not isinstance(values, list | tuple | np.ndarray):
        return np.zeros(0)
    try:
        return np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        return np.array([v if isinstance(cell_value(v), float | int) else np.nan for v in values], dtype=float)


def _horizon_years(plan) -> int:
    horizon = cell_value(_dig(plan, "study", "horizon_years"))
    if isinstance(horizon, int | float) and horizon >= 1:
        return int(horizon)
    # Fall back to the longest fade curve or the last replacement year.
    lengths = [len(s.get("soh_by_month") or []) for s in _sites(plan)]
    years = [y for s in _sites(plan) for y in _seq(s.get("replacement_years")) if isinstance(y, int | float)]
    return max([(max(lengths, default=1) - 1) // 12, int(max(years, default=0)) + 1, 1])


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
