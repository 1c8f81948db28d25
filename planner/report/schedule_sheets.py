"""Sheets about visits: Visit schedule (a site x year grid) and Trip list."""

from __future__ import annotations

import math
from collections.abc import Mapping

from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from planner.plan.attention import attention_of
from planner.plan.cautions import LITHIUM_IDS
from planner.plan.numbers import finite_number
from planner.report import styles
from planner.report.cells import cell_value
from planner.report.tables import (
    PRINT_ALL_ROWS_MAX,
    Column,
    field_of,
    install_text,
    measure_text,
    month_text,
    plan_sites,
    seq,
    study_start_year,
    write_table,
)
from planner.report.wording import chemistry_code, chemistry_name

#: Characters of 11 pt text per unit of column width: a unit prints about 7 pt wide
#: (styles.PT_PER_WIDTH), 11 pt text averages about 5.7 pt a character, so 1.23; 1.15
#: leaves room for word wrapping.
CHARS_PER_WIDTH_11PT = 1.15
#: Width of a year column of the visit grid, and the print scale of the grid [%]: 11 pt
#: text prints at 8.25 pt.
GRID_YEAR_WIDTH = 12
GRID_SCALE = 75
#: Widths of the id, name and region columns, repeated on every printed band of years.
GRID_FIXED_WIDTHS = (9, 16, 12)
#: Sites of the visit grid printed when there are more than tables.PRINT_ALL_ROWS_MAX
#: (a page tall at GRID_SCALE on every band of years).
GRID_PRINT_SITES = 30
#: Year columns per printed band: as many as fit a landscape page at GRID_SCALE (the table
#: writer adds one unit to every width).
YEARS_PER_BAND = int((styles.PRINT_WIDTH_CHARS * 100 / GRID_SCALE - sum(GRID_FIXED_WIDTHS) - 3)
                     // (GRID_YEAR_WIDTH + 1))


# ---------------------------------------------------------------- Visits
def installs_by_visit(plan) -> dict:
    """(site id, year) -> (the new pack a visit installs, whether it is the site's first)."""
    out = {}
    for site in plan_sites(plan):
        for k, rep in enumerate(r for r in seq(site.get("replacements")) if isinstance(r, Mapping)):
            out[(str(site.get("id")), rep.get("year"))] = (rep, k == 0)
    return out


def chemistry_legend(plan, names) -> str:
    """'LFP = Lithium iron phosphate (...); ...' for the codes used in dense cells."""
    used = sorted({str(r.get("chemistry")) for s in plan_sites(plan) for r in seq(s.get("replacements"))
                   if isinstance(r, Mapping) and r.get("chemistry")})
    return "; ".join(f"{chemistry_code(c)} = {chemistry_name(c, names)}" for c in used)


def _bands(horizon_years: int) -> list[tuple[int, int]]:
    n = max(1, math.ceil(horizon_years / YEARS_PER_BAND))
    size = math.ceil(horizon_years / n)
    return [(y, min(y + size, horizon_years)) for y in range(0, horizon_years, size)]


def visit_grid_sheet(ws, plan, fmt) -> None:
    horizon_years = fmt["horizon"]
    sites = plan_sites(plan)
    installs = installs_by_visit(plan)
    visits = {}
    for site in sites:
        years = seq(site.get("replacement_years"))
        months = seq(site.get("replacement_months"))
        for k, year in enumerate(years):
            month = months[k] if k < len(months) else None
            rep, first = installs.get((str(site.get("id")), year), (None, False))
            what = install_text(rep, new_measure=first, unit=False)
            visits[(str(site.get("id")), year)] = " ".join(x for x in (month_text(month) or "visit", what) if x)
    for trip in (t for t in seq(plan.get("trips")) if isinstance(t, Mapping)):
        for site_id in seq(trip.get("site_ids")):
            visits.setdefault((str(site_id), trip.get("year")), month_text(trip.get("month")) or "visit")
    id_w, name_w, region_w = GRID_FIXED_WIDTHS
    cols = [Column("Site id", field_of("id"), width=id_w), Column("Site name", field_of("name"), width=name_w),
            Column("Region", field_of("region"), optional=True, width=region_w)]
    start = study_start_year(plan)
    cols += [Column(f"Year {y}" + (f" ({start + y})" if start else ""),
                    (lambda s, y=y: visits.get((str(s.get("id")), y))), width=GRID_YEAR_WIDTH)
             for y in range(horizon_years)]
    kept, last = write_table(ws, 1, 1, cols, sites, drop_empty=True)
    n_fixed = len(kept) - horizon_years
    for row in range(2, last + 1):
        for col in range(1, n_fixed + 1):
            ws.cell(row=row, column=col).alignment = styles.TOP
    row_of = {str(site.get("id")): 2 + k for k, site in enumerate(sites)}
    lines: dict[int, int] = {}
    for (site_id, year), text in visits.items():
        row = row_of.get(site_id)
        if row is None or not isinstance(year, int) or not 0 <= year < horizon_years:
            continue
        ws.cell(row=row, column=n_fixed + 1 + year).alignment = styles.WRAP_TOP
        lines[row] = max(lines.get(row, 1), math.ceil(len(text) / (CHARS_PER_WIDTH_11PT * GRID_YEAR_WIDTH)))
    for row, n in lines.items():
        if n > 1:
            ws.row_dimensions[row].height = 15 * n
    ws.freeze_panes = f"{get_column_letter(n_fixed + 1)}2"
    # Printed by bands of years, the id columns repeated: a band of YEARS_PER_BAND years fits
    # a landscape page at GRID_SCALE, so the text prints at about 9 pt.
    for _, end in _bands(horizon_years)[:-1]:
        ws.col_breaks.append(Break(id=n_fixed + end))
    styles.landscape_at_scale(ws, scale=GRID_SCALE)
    ws.print_title_rows = "1:1"
    ws.print_title_cols = f"A:{get_column_letter(n_fixed)}"
    legend = chemistry_legend(plan, fmt["chemistry_names"])
    end = last if last - 1 <= PRINT_ALL_ROWS_MAX else 1 + GRID_PRINT_SITES
    header = f"Pack sizes in kWh. Codes: {legend}" if legend else ""
    if end < last:
        header = (f"The first {GRID_PRINT_SITES} of {last - 1:,} sites print (filter, then print the "
                  "selection). " + header)
    if header:
        ws.oddHeader.left.text = header[:250]
    ws.print_area = f"A1:{get_column_letter(len(kept))}{max(end, 1)}"
    if last >= 2:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(kept))}{last}"


def _what_goes_in(trip, installs) -> str | None:
    """'LFP x3, VRLA x1, new insulated box x2' for one trip (codes defined in the page
    header; sizes per site on sheet Crew trips and Visit schedule)."""
    counts: dict[str, int] = {}
    for site_id in seq(trip.get("site_ids")):
        rep, first = installs.get((str(site_id), trip.get("year")), (None, False))
        if not rep:
            continue
        code = chemistry_code(rep.get("chemistry"))
        counts[code] = counts.get(code, 0) + 1
        measure = rep.get("thermal_measure")
        if first and measure not in (None, "", "none", "site-heater"):
            kit = f"new {measure_text(measure)}"
            counts[kit] = counts.get(kit, 0) + 1
    return ", ".join(f"{t} x{n}" for t, n in sorted(counts.items(), key=lambda kv: (kv[0].startswith("new"),
                                                                                     -kv[1], kv[0]))) or None


def trip_sheet(ws, plan, fmt) -> None:
    chem_by_site = {str(s.get("id")): s.get("chemistry") for s in plan_sites(plan)}
    trips = sorted((t for t in seq(plan.get("trips")) if isinstance(t, Mapping)),
                   key=lambda t: (cell_value(t.get("year")) or 0, cell_value(t.get("month")) or 0,
                                  str(t.get("region"))))
    installs = installs_by_visit(plan)
    payload = finite_number(attention_of(plan).get("payload_flag_kg"))

    def lithium(trip):
        chems = {(installs.get((str(i), trip.get("year")), ({},))[0] or {}).get("chemistry") or chem_by_site.get(str(i))
                 for i in seq(trip.get("site_ids"))}
        return "yes: UN 38.3 dangerous goods" if chems & LITHIUM_IDS else "no"

    def over(trip):
        mass = finite_number(trip.get("pack_mass_kg"))
        count = finite_number(trip.get("trip_count")) or 1
        if mass is None or not payload or mass / count <= payload:
            return None
        return f"yes: {mass / count:,.0f} kg per trip"

    def total(trip):
        parts = [finite_number(trip.get(k)) for k in ("cost", "site_visits_cost")]
        return sum(p for p in parts if p is not None) if any(p is not None for p in parts) else None

    cols = _trip_columns(fmt, study_start_year(plan), payload, installs, over, total, lithium)
    kept, last = write_table(ws, 1, 1, cols, trips)
    _trip_rows_look(ws, kept, last)
    ws.freeze_panes = "A2"
    legend = chemistry_legend(plan, fmt["chemistry_names"])
    if legend:
        ws.oddHeader.left.text = f"Codes: {legend}"[:250]
    styles.landscape_fit_width(ws, title_rows="1:1", area=f"A1:{get_column_letter(len(kept))}{max(last, 1)}")
    if last >= 2:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(kept))}{last}"


def _trip_columns(fmt, start, payload, installs, over, total, lithium) -> list[Column]:
    cur, money = fmt["cur"], fmt["money"]
    return [Column("Year", field_of("year"), styles.INTEGER, width=6),
            Column("Calendar year", lambda t: start + t["year"] if start and isinstance(t.get("year"), int)
                   else None, "0", optional=True, width=9),
            Column("Month", lambda t: month_text(t.get("month")), width=7),
            Column("Region", field_of("region"), width=16),
            Column("Sites visited", lambda t: len(seq(t.get("site_ids"))), styles.INTEGER, width=8),
            Column("Site ids", field_of("site_ids"), width=60),
            Column("What goes in", lambda t: _what_goes_in(t, installs), optional=True, width=24),
            Column("Packs to carry", field_of("pack_count"), styles.INTEGER, optional=True, width=8),
            Column("Pack mass [kg]", field_of("pack_mass_kg"), styles.ONE_DECIMAL, optional=True, width=9),
            Column(f"Over the {payload:,.0f} kg payload" if payload else "Over the payload", over,
                   optional=True, width=18),
            Column(f"Trip cost [{cur}]", field_of("cost"), money, optional=True, width=12),
            Column(f"Site visits [{cur}]", field_of("site_visits_cost"), money, optional=True, width=12),
            Column(f"Trip total [{cur}]", total, money, optional=True, width=12),
            Column("Lithium aboard", lithium, width=16)]


def _trip_rows_look(ws, kept, last) -> None:
    """Wrapped text with the height of its lines, a rule above each new year, the rest
    aligned to the top."""
    wrapped = [i + 1 for i, c in enumerate(kept) if c.header in ("Site ids", "What goes in", "Lithium aboard")]
    for row in range(2, last + 1):
        lines = 1
        for col in wrapped:
            cell = ws.cell(row=row, column=col)
            cell.alignment = styles.WRAP_TOP
            width = ws.column_dimensions[get_column_letter(col)].width or 10
            lines = max(lines, math.ceil(len(str(cell.value or "")) / (CHARS_PER_WIDTH_11PT * width)))
        ws.row_dimensions[row].height = 15 * lines
        # A rule above the first trip of each year: the list reads year by year.
        if row > 2 and ws.cell(row=row, column=1).value != ws.cell(row=row - 1, column=1).value:
            for c in range(1, len(kept) + 1):
                ws.cell(row=row, column=c).border = styles.YEAR_BORDER
    for row in range(2, last + 1):
        for c in range(1, len(kept) + 1):
            cell = ws.cell(row=row, column=c)
            if c not in wrapped:
                cell.alignment = styles.TOP
