"""The Field evidence sheet: what the fleet's own records say, and where a test pays.

Three tables from the plan's ``field_data`` (docs/plan-json.md): the sites ranked by the
value of one more capacity test (net of its cost; worth doing highlighted), the packs in
service with records (posterior fade factor, remaining life and end-of-life year against
the laboratory prediction, failed cells), the fleet fit per chemistry and the rows
skipped. Below, a native chart per site that matters (most valuable test first, then
the sites with most records): measured state of health at 25 °C against the posterior
P10/P50/P90 band and the laboratory prediction, by age.
"""

from __future__ import annotations

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.series import SeriesLabel
from openpyxl.chart.shapes import GraphicalProperties
from openpyxl.styles import Font, PatternFill
from openpyxl.utils import get_column_letter

from planner.report import charts, styles
from planner.report.cells import neutralise_text, put, write_rows
from planner.report.tables import (
    CHART_COLS,
    CHART_ROWS,
    Column,
    field_of,
    mapping_of,
    plan_sites,
    seq,
    title,
    write_table,
)

#: Charts drawn: the sites that matter most (at most this many).
EVIDENCE_CHARTS = 6
WORTH_FILL = PatternFill("solid", fgColor="DDEBD3")
WORTH_FONT = Font(name=styles.FONT_NAME, bold=True, color="2E4A1A")


def _section(ws, row: int, text: str, note: str | None = None) -> int:
    put(ws, row, 1, text).font = styles.SECTION_FONT
    if note:
        put(ws, row + 1, 1, note).font = styles.NOTE_FONT
        return row + 2
    return row + 1


def evidence_sheet(ws, plan, fmt) -> None:
    data = mapping_of(plan.get("field_data"))
    ranked = [r for r in seq(data.get("test_value")) if isinstance(r, dict)]
    with_records = [s for s in seq(data.get("sites")) if isinstance(s, dict)]
    flagged = [s for s in plan_sites(plan) if isinstance(s.get("field_evidence"), dict)]
    worth = sum(1 for r in ranked if (r.get("net_value") or 0) > 0)
    title(ws, f"Field evidence: {len(with_records)} packs in service with records; one more "
              f"capacity test pays at {worth} of {len(ranked)} sites",
          "Capacity tests and battery logs (corrected to 25 °C) update each pack's fade factor over "
          "the laboratory prediction; the plan prices the packs in service by this posterior. Money "
          "in present value at the study start.")
    row = _section(ws, 4, "Where one more capacity test pays",
                   "Expected saving from re-planning the site on the test's result (other sites' trips "
                   "held fixed), less the test's cost; highest net value first. Ranked by value, not by "
                   "uncertainty: the two differ.")
    row = _ranking_table(ws, row, ranked, fmt) + 2
    row = _section(ws, row, "Packs in service with field records",
                   "Factor: measured fade over predicted fade (1 = as the laboratory laws predict). "
                   "Remaining life and end-of-life year are posterior percentiles given the pack serves "
                   "today; the plan replaces it by its median, within the service limit.")
    row = _records_table(ws, row, flagged) + 2
    row = _section(ws, row, "Fleet fit per chemistry")
    row = _chemistry_table(ws, row, [c for c in seq(data.get("chemistries")) if isinstance(c, dict)]) + 2
    skipped = [str(s) for s in seq(data.get("skipped_records"))]
    if skipped:
        row = _section(ws, row, "Records skipped")
        for text in skipped:
            put(ws, row, 1, text)
            row += 1
        row += 1
    last_chart_row = _charts(ws, row + 1, _sites_that_matter(with_records, ranked))
    ws.freeze_panes = "A4"
    # the chart data below stay off the printed page: tables and charts only
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(max(2 * CHART_COLS, 15))}{max(row, last_chart_row)}")


def _ranking_table(ws, top: int, ranked, fmt) -> int:
    cur, money = fmt["cur"], fmt["money"]
    if not ranked:
        put(ws, top, 1, "No pack in service to test (primary packs are never tested).")
        return top
    cols = [Column("Site id", field_of("site_id"), width=12),
            Column("Region", field_of("region")),
            Column("Chemistry", field_of("chemistry"), width=10),
            Column(f"Value of one more test [{cur}]", field_of("value"), money, width=13),
            Column(f"Cost of the test [{cur}]", field_of("test_cost"), money, width=12),
            Column(f"Net value [{cur}]", field_of("net_value"), money, width=12),
            Column("Replacement year now", field_of("replacement_year_now"), styles.INTEGER, width=10),
            Column("After the test: earliest year", field_of("replacement_year_after_test_low"),
                   styles.INTEGER, width=10),
            Column("After the test: latest year", field_of("replacement_year_after_test_high"),
                   styles.INTEGER, width=10),
            Column("Results that move the replacement [%]", field_of("replacement_changes_frac"),
                   styles.PERCENT, width=12),
            Column("Spread of the log factor [sd]", field_of("factor_log_sd"), styles.TWO_DECIMALS, width=10),
            Column("The test pays for", field_of("test_cost_basis"), width=22)]
    kept, last = write_table(ws, top, 1, cols, ranked)
    for offset, rec in enumerate(ranked):
        if (rec.get("net_value") or 0) > 0:
            for c in range(1, len(kept) + 1):
                cell = ws.cell(row=top + 1 + offset, column=c)
                cell.fill, cell.font = WORTH_FILL, WORTH_FONT
    return last


def _records_table(ws, top: int, sites) -> int:
    if not sites:
        put(ws, top, 1, "The study gives no capacity test or battery log ([field_data], docs/study-file.md).")
        return top

    def ev(*keys):
        return field_of("field_evidence", *keys)

    def last_test(site):
        tests = [t for t in seq(ev("tests")(site)) if isinstance(t, dict) and t.get("used")]
        return tests[-1].get("soh_at_25c_frac") if tests else None

    cols = [Column("Site id", field_of("id"), width=12),
            Column("Pack chemistry", field_of("existing_pack", "chemistry"), width=10),
            Column("Records used", ev("records_used"), styles.INTEGER, width=8),
            Column("Last test at 25 °C [% of rated]", last_test, styles.PERCENT, width=11),
            Column("Factor P10", ev("factor_p10"), styles.TWO_DECIMALS, width=8),
            Column("Factor P50", ev("factor_p50"), styles.TWO_DECIMALS, width=8),
            Column("Factor P90", ev("factor_p90"), styles.TWO_DECIMALS, width=8),
            Column("Remaining life P10 [years]", ev("remaining_life_p10_years"), styles.ONE_DECIMAL, width=9),
            Column("Remaining life P50 [years]", ev("remaining_life_p50_years"), styles.ONE_DECIMAL, width=9),
            Column("Remaining life P90 [years]", ev("remaining_life_p90_years"), styles.ONE_DECIMAL, width=9),
            Column("End of life P50 [calendar year]", ev("end_of_life_year_p50"), styles.ONE_DECIMAL, width=10),
            Column("Replace by [years]", ev("replace_by_years"), styles.ONE_DECIMAL, width=9),
            Column("Predicted without records [years]", ev("remaining_life_years_predicted"),
                   styles.ONE_DECIMAL, width=11),
            Column("Failed cell (visit recommended)", ev("failed_cell"), optional=True),
            Column("Battery log", ev("log_note"), optional=True)]
    _, last = write_table(ws, top, 1, cols, sites)
    return last


def _chemistry_table(ws, top: int, chems) -> int:
    if not chems:
        put(ws, top, 1, "No chemistry has a usable record: every pack keeps its predicted life.")
        return top
    cols = [Column("Chemistry", field_of("chemistry"), width=10),
            Column("Sites with records", field_of("sites_with_records"), styles.INTEGER, width=9),
            Column("Fleet factor P10", field_of("fleet_factor_p10"), styles.TWO_DECIMALS, width=9),
            Column("Fleet factor P50", field_of("fleet_factor_p50"), styles.TWO_DECIMALS, width=9),
            Column("Fleet factor P90", field_of("fleet_factor_p90"), styles.TWO_DECIMALS, width=9),
            Column("Spread between sites P50 [log sd]", field_of("site_spread_log_sd_p50"),
                   styles.TWO_DECIMALS, width=11)]
    _, last = write_table(ws, top, 1, cols, chems)
    for chem in chems:  # one line each, under the table: long text would widen a column
        last += 1
        put(ws, last, 1, f"{chem.get('chemistry', '')}: {chem.get('split_reason', '')}").font = styles.NOTE_FONT
    return last


def _sites_that_matter(with_records, ranked) -> list[dict]:
    """Sites with records, most valuable test first, then by number of records."""
    order = {r.get("site_id"): k for k, r in enumerate(ranked)}
    return sorted(with_records, key=lambda s: (order.get(s.get("site_id"), len(order)),
                                              -(s.get("records_used") or 0)))[:EVIDENCE_CHARTS]


def _charts(ws, top: int, sites) -> int:
    """Charts from row ``top`` with their data below; returns the last row of the charts."""
    if not sites:
        return top
    chart_rows = ((len(sites) + 1) // 2) * CHART_ROWS
    data_top = top + chart_rows + 2
    put(ws, data_top - 1, 1, "Chart data: state of health by age [fraction of rated capacity]").font = \
        styles.SECTION_FONT
    col = 1
    for index, site in enumerate(sites):
        band = mapping_of(site.get("band"))
        ages = [a for a in seq(band.get("age_years"))]
        headers = ["Age [years]", "P10", "P50", "P90", "Predicted", "Measured age [years]", "Measured"]
        for k, h in enumerate(headers):
            put(ws, data_top, col + k, f"{site.get('site_id', '')} {h}")
        rows = zip(ages, seq(band.get("soh_p10")), seq(band.get("soh_p50")), seq(band.get("soh_p90")),
                   seq(band.get("soh_predicted")))
        write_rows(ws, data_top + 1, col, ([*r] for r in rows),
                   [styles.TWO_DECIMALS, styles.PERCENT, styles.PERCENT, styles.PERCENT, styles.PERCENT])
        measured = [m for m in seq(site.get("measured")) if isinstance(m, dict)]
        write_rows(ws, data_top + 1, col + 5, ([m.get("age_years"), m.get("soh_frac")] for m in measured),
                   [styles.TWO_DECIMALS, styles.PERCENT])
        n, m = len(ages), len(measured)
        x = Reference(ws, min_col=col, min_row=data_top + 1, max_row=data_top + max(n, 1))
        chart = ScatterChart()
        chart.title = neutralise_text(f"{site.get('site_id', '')} ({site.get('chemistry', '')}): records and band")
        chart.style = 2
        for k, (label, dashed) in enumerate((("P10", True), ("P50", False), ("P90", True),
                                             ("Predicted without records", True))):
            s = Series(Reference(ws, min_col=col + 1 + k, min_row=data_top + 1, max_row=data_top + max(n, 1)), x)
            s.tx = SeriesLabel(v=label)
            s.marker.symbol = "none"
            s.smooth = False
            charts.colour_series(s, 4 if k == 3 else 0, dashed=dashed)
            chart.series.append(s)
        if m:
            s = Series(Reference(ws, min_col=col + 6, min_row=data_top + 1, max_row=data_top + m),
                       Reference(ws, min_col=col + 5, min_row=data_top + 1, max_row=data_top + m))
            s.tx = SeriesLabel(v="Measured at 25 °C")
            s.marker.symbol = "circle"
            s.marker.size = 7
            s.marker.graphicalProperties = GraphicalProperties(solidFill=styles.SERIES_COLOURS[1])
            s.marker.graphicalProperties.line.solidFill = styles.SERIES_COLOURS[1]
            s.graphicalProperties.line.noFill = True
            chart.series.append(s)
        chart.x_axis.title = "Age of the pack [years]"
        chart.x_axis.numFmt = "0"
        chart.x_axis.scaling.min = 0
        chart.y_axis.title = "State of health"
        chart.y_axis.numFmt = "0%"
        chart.y_axis.scaling.max = 1.1
        lows = [v for v in (*seq(band.get("soh_p10")), *(m.get("soh_frac") for m in measured))
                if isinstance(v, int | float)]
        chart.y_axis.scaling.min = max(0.0, round(min(lows, default=0.5) - 0.1, 1))
        chart.legend.position = "b"
        chart.width, chart.height = charts.CHART_WIDTH_CM, charts.CHART_HEIGHT_CM
        charts.show_axes(chart)
        anchor = f"{get_column_letter(1 + (index % 2) * CHART_COLS)}{top + (index // 2) * CHART_ROWS}"
        ws.add_chart(chart, anchor)
        col += len(headers) + 1
    styles.style_header_row(ws, data_top, 1, col - 2)
    return top + chart_rows - 1
