"""Sheets about visits: Visit schedule (a site x year grid) and Trip list."""

from __future__ import annotations

from collections.abc import Mapping

from openpyxl.utils import get_column_letter

from planner.plan.cautions import LITHIUM_IDS
from planner.report import styles
from planner.report.cells import cell_value
from planner.report.tables import (
    Column,
    field_of,
    install_text,
    month_text,
    plan_sites,
    seq,
    study_start_year,
    write_table,
)


# ---------------------------------------------------------------- Visits
def installs_by_visit(plan) -> dict:
    """(site id, year) -> the new pack a visit installs (a ``replacements`` entry)."""
    out = {}
    for site in plan_sites(plan):
        for rep in (r for r in seq(site.get("replacements")) if isinstance(r, Mapping)):
            out[(str(site.get("id")), rep.get("year"))] = rep
    return out


def visit_grid_sheet(ws, plan, horizon_years) -> None:
    sites = plan_sites(plan)
    installs = installs_by_visit(plan)
    visits = {}
    for site in sites:
        years = seq(site.get("replacement_years"))
        months = seq(site.get("replacement_months"))
        for k, year in enumerate(years):
            month = months[k] if k < len(months) else None
            what = install_text(installs.get((str(site.get("id")), year)))
            visits[(str(site.get("id")), year)] = " ".join(x for x in (month_text(month) or "visit", what) if x)
    for trip in (t for t in seq(plan.get("trips")) if isinstance(t, Mapping)):
        for site_id in seq(trip.get("site_ids")):
            visits.setdefault((str(site_id), trip.get("year")), month_text(trip.get("month")) or "visit")
    cols = [Column("Site id", field_of("id")), Column("Site name", field_of("name")),
            Column("Region", field_of("region"), optional=True)]
    start = study_start_year(plan)
    cols += [Column(f"Year {y}" + (f" ({start + y})" if start else ""),
                    (lambda s, y=y: visits.get((str(s.get("id")), y))), width=12)
             for y in range(horizon_years)]
    kept, last = write_table(ws, 1, 1, cols, sites, drop_empty=True)
    cols_letter = get_column_letter(len(kept))
    n_fixed = len(kept) - horizon_years
    ws.freeze_panes = f"{get_column_letter(n_fixed + 1)}2"
    styles.landscape_fit_width(ws, title_rows="1:1", title_cols=f"A:{get_column_letter(n_fixed)}",
                               area=f"A1:{cols_letter}{max(last, 1)}")


def trip_sheet(ws, plan, fmt) -> None:
    chem_by_site = {str(s.get("id")): s.get("chemistry") for s in plan_sites(plan)}
    trips = sorted((t for t in seq(plan.get("trips")) if isinstance(t, Mapping)),
                   key=lambda t: (cell_value(t.get("year")) or 0, cell_value(t.get("month")) or 0,
                                  str(t.get("region"))))

    installs = installs_by_visit(plan)

    def installed(trip):
        return [(str(i), installs.get((str(i), trip.get("year")))) for i in seq(trip.get("site_ids"))]

    def lithium(trip):
        chems = {(rep or {}).get("chemistry") or chem_by_site.get(i) for i, rep in installed(trip)}
        return "yes: UN 38.3 dangerous goods" if chems & LITHIUM_IDS else "no"

    def installs_text(trip):
        return "; ".join(f"{i}: {install_text(rep)}" for i, rep in installed(trip) if rep) or None

    start = study_start_year(plan)
    cols = [Column("Year", field_of("year"), styles.INTEGER, width=7),
            Column("Calendar year", lambda t: start + t["year"] if start and isinstance(t.get("year"), int)
                   else None, "0", optional=True, width=9),
            Column("Month", lambda t: month_text(t.get("month")), width=7),
            Column("Region", field_of("region")),
            Column("Sites visited", lambda t: len(seq(t.get("site_ids"))), styles.INTEGER, width=9),
            Column("Site ids", field_of("site_ids"), width=40),
            Column("Installs", installs_text, optional=True, width=48),
            Column("Packs to carry", field_of("pack_count"), styles.INTEGER, optional=True, width=9),
            Column("Pack mass [kg]", field_of("pack_mass_kg"), styles.ONE_DECIMAL, optional=True, width=10),
            Column(f"Trip cost [{fmt['cur']}]", field_of("cost"), fmt["money"], optional=True, width=14),
            Column("Lithium aboard", lithium, width=28)]
    kept, last = write_table(ws, 1, 1, cols, trips)
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
