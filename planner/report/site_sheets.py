"""Sheets about each site: Sites (every fact per site), Capacity fade (charts of the most
expensive sites), Fade by year (every site's state of health year by year) and Climate."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
from openpyxl.chart import Reference
from openpyxl.utils import get_column_letter

from planner.plan.numbers import finite_number
from planner.report import charts, styles
from planner.report.cells import cell_value, put, write_rows
from planner.report.tables import (
    CHART_COLS,
    CHART_ROWS,
    MONTH_ABBR,
    Column,
    as_float_array,
    chart_page_breaks,
    dig,
    field_of,
    kwh_text,
    long_table_print_area,
    month_text,
    plan_sites,
    seq,
    title,
    write_table,
)
from planner.report.wording import chemistry_name

#: How many sites get a capacity-fade chart (the most expensive ones).
FADE_CHART_SITES = 16  # two printed pages of eight
#: Largest fleet whose Fade by year table also lists every alternative design year by year.
FADE_TABLE_ALTERNATIVES_MAX_SITES = 200
#: How many representative sites get a climate chart.
CLIMATE_CHART_SITES = 4


# ---------------------------------------------------------------- Sites
def _charge_voltage(key):
    """A charge-voltage getter that leaves primary (not rechargeable) cells blank."""
    def get(site):
        if site.get("chemistry") == "lisocl2" or site.get("rechargeable") is False:
            return None
        return site.get(key)
    return get


def _packs_over_horizon(site, names) -> str | None:
    """Every new pack of the plan, in order: '2027: Lithium iron phosphate 1.2 kWh; 2047: ...'."""
    packs = [r for r in seq(site.get("replacements")) if isinstance(r, Mapping)]
    if not packs:
        return None
    return "; ".join(f"year {r.get('year')}: {chemistry_name(r.get('chemistry'), names)} "
                     f"{kwh_text(r.get('capacity_wh'))}".rstrip() for r in packs)


def _site_columns(fmt, report_soh) -> list[Column]:
    cur, money, t = fmt["cur"], fmt["money"], styles.TEMPERATURE
    names = fmt["chemistry_names"]
    soh_words = f"{report_soh:.0%}" if isinstance(report_soh, float) else "the report"
    return [
        Column("Site id", field_of("id")),
        Column("Site name", field_of("name")),
        Column("Region", field_of("region"), optional=True),
        Column("Climate", field_of("climate"), optional=True),
        Column("Enclosure", field_of("enclosure"), optional=True),
        Column("Charging source", field_of("charging"), optional=True),
        Column("Daily load [Wh/day]", field_of("daily_load_wh"), styles.ONE_DECIMAL, optional=True),
        Column("Peak load [W]", field_of("load_peak_w"), styles.ONE_DECIMAL, optional=True),
        Column("Air mean [°C]", field_of("temperature", "air_mean_c"), t, optional=True),
        Column("Air P99 [°C]", field_of("temperature", "air_p99_c"), t, optional=True),
        Column("Battery mean [°C]", field_of("temperature", "battery_mean_c"), t, optional=True),
        Column("Battery P1 [°C]", field_of("temperature", "battery_p1_c"), t, optional=True),
        Column("Battery P99 [°C]", field_of("temperature", "battery_p99_c"), t, optional=True),
        Column("Hours above 45 °C [h/year]", field_of("temperature", "hours_above_45c"), styles.INTEGER, optional=True),
        Column("Hours below 0 °C [h/year]", field_of("temperature", "hours_below_0c"), styles.INTEGER, optional=True),
        Column("Effective temperature [°C]", field_of("temperature", "effective_temp_c"), t, optional=True),
        Column("Reference size 1x [Wh]", field_of("reference_capacity_wh"), styles.INTEGER),
        Column("Autonomy [days]", field_of("reference_factors", "autonomy_days"), styles.ONE_DECIMAL, optional=True),
        Column("Max depth of discharge [%]", field_of("reference_factors", "max_dod_frac"), styles.PERCENT, optional=True),
        Column("Temperature factor [-]", field_of("reference_factors", "temperature_factor"), styles.TWO_DECIMALS,
               optional=True),
        Column("Aging factor [-]", field_of("reference_factors", "aging_factor"), styles.TWO_DECIMALS, optional=True),
        Column("Design margin [-]", field_of("reference_factors", "design_margin"), styles.TWO_DECIMALS, optional=True),
        Column("Design temperature [°C]", field_of("reference_factors", "design_temp_c"), t, optional=True),
        Column("Chemistry of the first new pack", lambda s: chemistry_name(s.get("chemistry"), names)),
        Column("Every new pack", lambda s: _packs_over_horizon(s, names), optional=True),
        Column("Oversize step of the study [x]", field_of("oversize_factor_step"), styles.TWO_DECIMALS,
               optional=True),
        Column("Pack over the 1x size [x]", field_of("oversize_factor"), styles.TWO_DECIMALS),
        Column("Charge voltage per cell [V]", _charge_voltage("charge_voltage_v_per_cell"),
               styles.THREE_DECIMALS, optional=True),
        Column("Charge voltage of the pack [V]", _charge_voltage("charge_voltage_v"), styles.TWO_DECIMALS),
        Column("System voltage [V]", field_of("system_voltage_v"), styles.ONE_DECIMAL, optional=True),
        Column("Pack size [Wh]", field_of("capacity_wh"), styles.INTEGER),
        Column("Capacity [Ah]", field_of("capacity_ah"), styles.ONE_DECIMAL, optional=True),
        Column("Pack structure", field_of("pack_structure"), optional=True),
        Column("Pack mass [kg]", field_of("pack_mass_kg"), styles.ONE_DECIMAL, optional=True),
        Column("Thermal measure", field_of("thermal_measure"), optional=True),
        Column("Heater energy [Wh/year]", field_of("heater_energy_wh_per_year"), styles.INTEGER, optional=True),
        Column("Replacement years", field_of("replacement_years")),
        Column("Replacement months", lambda s: [month_text(m) or m for m in seq(s.get("replacement_months"))]
               or None, optional=True),
        Column("End of life at SOH [%]", field_of("eol_soh_frac"), styles.PERCENT, optional=True),
        Column("Life [years]", field_of("life_years"), styles.ONE_DECIMAL),
        Column(f"Years to {soh_words} SOH [years]", field_of("years_to_report_soh"), styles.ONE_DECIMAL,
               optional=True),
        Column("Life P10 [years]", field_of("life_p10_years"), styles.ONE_DECIMAL, optional=True),
        Column("Life P50 [years]", field_of("life_p50_years"), styles.ONE_DECIMAL, optional=True),
        Column("Life P90 [years]", field_of("life_p90_years"), styles.ONE_DECIMAL, optional=True),
        Column("Limiting cause", field_of("limiting_cause"), optional=True),
        Column("Life extrapolated", _extrapolated_text, optional=True),
        Column("Unserved load [Wh/year]", field_of("unserved_wh_per_year"), styles.ONE_DECIMAL),
        Column("Equivalent full cycles [1/year]", field_of("equivalent_full_cycles_per_year"), styles.ONE_DECIMAL),
        Column(f"Present cost [{cur}]", field_of("present_cost"), money),
        Column(f"Packs [{cur}]", field_of("cost_breakdown", "packs"), money, optional=True),
        Column(f"Labour [{cur}]", field_of("cost_breakdown", "labour"), money, optional=True),
        Column(f"Trips share [{cur}]", field_of("cost_breakdown", "trips"), money, optional=True),
        Column(f"Disposal [{cur}]", field_of("cost_breakdown", "disposal"), money, optional=True),
        Column(f"Residual value [{cur}]", field_of("cost_breakdown", "residual"), money, optional=True),
        Column(f"Expected failure cost [{cur}]", field_of("cost_breakdown", "failure_risk"), money, optional=True),
        Column(f"Days off air [{cur}]", field_of("cost_breakdown", "downtime"), money, optional=True),
        Column("Risk before the next visit [%]", field_of("risk_before_next_visit_frac"), styles.PERCENT,
               optional=True),
    ]


def _extrapolated_text(site):
    """'yes: why' when the life leans on an aging law outside its fitted envelope."""
    if "life_extrapolated" not in site:
        return None
    return f"yes: {site.get('life_extrapolation_note', '')}" if site["life_extrapolated"] else "no"


def sites_sheet(ws, plan, fmt) -> None:
    report_soh = cell_value(dig(plan, "study", "report_soh_frac"))
    kept, last = write_table(ws, 1, 1, _site_columns(fmt, report_soh), plan_sites(plan))
    ws.freeze_panes = "C2"
    if last >= 2:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(kept))}{last}"
    # 50 columns on one A4 width print at about 4 points; two pages wide stay legible.
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B", pages_wide=2)
    long_table_print_area(ws, 1, 1, last, len(kept), "sites")


# ---------------------------------------------------------------- Capacity fade
#: Mark after a chart title whose chosen life leans on an aging law outside its fit;
#: explained once in the sheet's note.
EXTRAPOLATED_MARK = " *"
#: Lowest y of every fade chart: one range for the family, so charts compare at a glance.
FADE_Y_STEP = 0.1
#: Fade charts: height [cm], sheet rows each takes (0.53 cm a row) and chart rows per
#: printed page; four rows of two fit a landscape page at the sheet's fit-to-width scale.
FADE_CHART_HEIGHT_CM = 6.2
FADE_CHART_ROWS = 12
FADE_ROWS_PER_PAGE = 4
#: Width of a fade chart [cm]: the CHART_COLS columns of width 10 it sits on print about
#: 9 x 70 pt = 22 cm wide in LibreOffice (styles.PT_PER_WIDTH), so the chart fills them.
FADE_CHART_WIDTH_CM = 21.5


def _fade_series(site, names) -> list[tuple]:
    """(label, monthly SOH, colour, dashed, width) for the chosen design, its band, the
    replace-at line and the best design of each other chemistry (one colour per chemistry)."""
    out = []
    chosen = seq(site.get("soh_by_month"))
    chem = site.get("chemistry")
    colour = styles.chemistry_colour(chem)
    if chosen:
        out.append((f"chosen: {chemistry_name(chem, names)}", chosen, colour, False, 2.25))
    p10, p90 = seq(site.get("soh_p10_by_month")), seq(site.get("soh_p90_by_month"))
    if chosen and p10 and p90:
        out.append(("pack P10", p10, colour, True, 1.0))
        out.append(("pack P90", p90, colour, True, 1.0))
    eol = finite_number(site.get("eol_soh_frac"))
    if chosen and eol is not None and 0 < eol < 1:
        out.append((f"replace at {eol:.0%}", [eol] * len(chosen), styles.REPLACE_AT_COLOUR, True, 1.0))
    for alt in seq(site.get("alternatives")):
        if isinstance(alt, Mapping) and seq(alt.get("soh_by_month")):
            out.append((f"best {chemistry_name(alt.get('chemistry'), names)}", seq(alt["soh_by_month"]),
                        styles.chemistry_colour(alt.get("chemistry")), False, 1.0))
    return out


def _most_expensive(sites, n):
    costed = [s for s in sites if isinstance(cell_value(s.get("present_cost")), float | int)]
    return sorted(costed, key=lambda s: (-float(s["present_cost"]), str(s.get("id"))))[:n]


def _fade_floor(chosen, names) -> float:
    """The common lowest y of the family: a step below the lowest value any chart draws."""
    low = 1.0
    for site in chosen:
        for _, series, *_ in _fade_series(site, names):
            finite = [v for v in (cell_value(x) for x in series) if isinstance(v, float | int)]
            low = min(low, min(finite, default=1.0))
    return max(0.0, np.floor(low / FADE_Y_STEP) * FADE_Y_STEP - FADE_Y_STEP)


def fade_sheet(ws, plan, fmt) -> None:
    names = fmt["chemistry_names"]
    chosen = [s for s in _most_expensive(plan_sites(plan), FADE_CHART_SITES) if _fade_series(s, names)]
    marked = any(s.get("life_extrapolated") for s in chosen)
    title(ws, f"State of health over the horizon: the {len(chosen)} most expensive sites",
          "Thick line: the chosen design (saw-tooth at each replacement), one colour per chemistry in every "
          "chart; dashed, same colour: P10 and P90 of the pack from the cell-spread Monte Carlo; a series "
          "pack is held back by its weakest cells, so the band sits below the line of a typical cell, which "
          "the nominal life uses. Grey dashed: the state of health at which the pack is replaced. Thin lines: "
          "the best design of each other chemistry."
          + (f" A title ending in{EXTRAPOLATED_MARK} marks a life that leans on an aging law outside the "
             "conditions it was fitted on (why: sheet Sites, column Life extrapolated)." if marked else "")
          + " Every site year by year: sheet Fade by year.")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=2 * CHART_COLS)
    ws.cell(row=2, column=1).alignment = styles.WRAP_TOP
    ws.row_dimensions[2].height = 45
    if not chosen:
        put(ws, 4, 1, "The plan holds no state-of-health series.")
        styles.landscape_fit_width(ws)
        return
    chart_rows = ((len(chosen) + 1) // 2) * FADE_CHART_ROWS
    data_top = 3 + chart_rows + 2
    put(ws, data_top - 1, 1, "Chart data: state of health by month [fraction of rated capacity]").font = \
        styles.SECTION_FONT
    n_months = max(len(series) for s in chosen for _, series, *_ in _fade_series(s, names))
    put(ws, data_top, 1, "Years from start")
    years = np.arange(n_months) / 12.0
    write_rows(ws, data_top + 1, 1, ([y] for y in years.tolist()), [styles.TWO_DECIMALS])
    col = 2
    x_ref = Reference(ws, min_col=1, min_row=data_top + 1, max_row=data_top + n_months)
    y_min = _fade_floor(chosen, names)
    for index, site in enumerate(chosen):
        refs = []
        for label, series, colour, dashed, width in _fade_series(site, names):
            values = [cell_value(v) for v in series]
            put(ws, data_top, col, f"{site.get('id', '')} {label}")
            write_rows(ws, data_top + 1, col, ([v] for v in values), [styles.PERCENT])
            refs.append((label, Reference(ws, min_col=col, min_row=data_top + 1, max_row=data_top + len(values)),
                         colour, dashed, width))
            col += 1
        anchor = f"{get_column_letter(1 + (index % 2) * CHART_COLS)}{3 + (index // 2) * FADE_CHART_ROWS}"
        mark = EXTRAPOLATED_MARK if site.get("life_extrapolated") else ""
        charts.soh_chart(ws, title=f"{site.get('id', '')} {site.get('name', '')}{mark}", x_values=x_ref,
                         series=refs, anchor=anchor, horizon_years=(n_months - 1) / 12.0, y_min=y_min,
                         height_cm=FADE_CHART_HEIGHT_CM, width_cm=FADE_CHART_WIDTH_CM)
    styles.style_header_row(ws, data_top, 1, col - 1)
    for c in range(1, max(col, 2 * CHART_COLS + 1)):
        ws.column_dimensions[get_column_letter(c)].width = 10
    ws.freeze_panes = "A3"
    chart_page_breaks(ws, chart_rows, per_page=FADE_ROWS_PER_PAGE, rows_each=FADE_CHART_ROWS)
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(2 * CHART_COLS)}{2 + chart_rows}")


def fade_table_sheet(ws, plan, fmt) -> None:
    horizon_years = fmt["horizon"]
    names = fmt["chemistry_names"]
    # Alternatives' rows quadruple this, the largest table; above the cap they stay in the
    # charts, on Cost comparison and in the JSON, and the write stays within its time budget.
    with_alternatives = len(plan_sites(plan)) <= FADE_TABLE_ALTERNATIVES_MAX_SITES
    records = []
    for site in plan_sites(plan):
        designs = [("chosen", site)]
        if with_alternatives:
            designs += [("alternative", a) for a in seq(site.get("alternatives")) if isinstance(a, Mapping)]
        for role, design in designs:
            soh = as_float_array(design.get("soh_by_month"))
            yearly = soh[: 12 * horizon_years + 1 : 12].tolist()
            finite = soh[np.isfinite(soh)]
            records.append({"site": site, "role": role, "design": design, "yearly": yearly,
                            "lowest": float(finite.min()) if finite.size else None})
    cols = [Column("Site id", lambda r: r["site"].get("id")),
            Column("Design", lambda r: r["role"]),
            Column("Chemistry", lambda r: chemistry_name(r["design"].get("chemistry"), names)),
            Column("Pack size [Wh]", lambda r: r["design"].get("capacity_wh"), styles.INTEGER),
            Column("Life [years]", lambda r: r["design"].get("life_years"), styles.ONE_DECIMAL)]
    cols += [Column(f"SOH year {y} [%]", (lambda r, y=y: r["yearly"][y] if y < len(r["yearly"]) else None),
                    styles.PERCENT, width=7)
             for y in range(horizon_years + 1)]
    cols.append(Column("Lowest SOH [%]", lambda r: r["lowest"], styles.PERCENT))
    kept, last = write_table(ws, 1, 1, cols, records, drop_empty=False)
    ws.freeze_panes = "C2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols="A:B")
    long_table_print_area(ws, 1, 1, last, len(kept), "rows")


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
    values = dig(site, "climate_monthly", key)
    if not isinstance(values, list | tuple) or len(values) != 12:
        return None
    values = [cell_value(v) for v in values]
    return values if all(isinstance(v, float | int) for v in values) else None


def _temperature_range(reps) -> tuple[float, float] | None:
    """One y range [°C] for every climate chart: 5 °C steps around all charted values."""
    values = [v for s in reps for key in ("air_mean_c", "battery_mean_c") for v in (_monthly(s, key) or [])]
    if not values:
        return None
    return float(np.floor(min(values) / 5.0) * 5.0 - 5.0), float(np.ceil(max(values) / 5.0) * 5.0 + 5.0)


def climate_sheet(ws, plan, fmt) -> None:
    sites = plan_sites(plan)
    reps = _representative(sites, CLIMATE_CHART_SITES)
    title(ws, "Monthly mean air and battery temperature per site",
           "Charts: the coldest, the hottest, a median and the most peaked site by battery temperature.")
    chart_rows = ((len(reps) + 1) // 2) * CHART_ROWS
    top = 3 + chart_rows + 1
    cols = [Column("Site id", field_of("id")), Column("Site name", field_of("name")),
            Column("Climate", field_of("climate"), optional=True), Column("Enclosure", field_of("enclosure"), optional=True)]
    monthly = {id(s): (_monthly(s, "air_mean_c") or [None] * 12) + (_monthly(s, "battery_mean_c") or [None] * 12)
               for s in sites}
    cols += [Column(f"Air {m} [°C]", (lambda s, i=i: monthly[id(s)][i]),
                    styles.TEMPERATURE, width=7) for i, m in enumerate(MONTH_ABBR)]
    cols += [Column(f"Battery {m} [°C]", (lambda s, i=i: monthly[id(s)][12 + i]),
                    styles.TEMPERATURE, width=8) for i, m in enumerate(MONTH_ABBR)]
    kept, last = write_table(ws, top, 1, cols, sites, drop_empty=False)
    first_air = len(kept) - 23
    # Month labels for the chart categories, one row above the table header.
    for i, m in enumerate(MONTH_ABBR):
        put(ws, top - 1, first_air + i, m).font = styles.NOTE_FONT
    categories = Reference(ws, min_col=first_air, max_col=first_air + 11, min_row=top - 1)
    row_of = {id(s): top + 1 + k for k, s in enumerate(sites)}
    y_range = _temperature_range(reps)
    for index, site in enumerate(reps):
        r = row_of[id(site)]
        series = [("air", Reference(ws, min_col=first_air, max_col=first_air + 11, min_row=r)),
                  ("battery", Reference(ws, min_col=first_air + 12, max_col=first_air + 23, min_row=r))]
        anchor = f"{get_column_letter(1 + (index % 2) * 8)}{3 + (index // 2) * CHART_ROWS}"
        charts.monthly_temperature_chart(ws, title=f"{site.get('id', '')} {site.get('name', '')}",
                                         categories=categories, series=series, anchor=anchor, y_range=y_range)
    ws.freeze_panes = f"C{top + 1}" if not reps else "A3"
    chart_page_breaks(ws, chart_rows, per_page=2)
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}")
    long_table_print_area(ws, 1, top, last, len(kept), "sites")
