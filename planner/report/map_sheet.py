"""The Site map sheet: where every site is, what it got and which need attention.

Two native scatter charts of longitude x latitude: one series per chosen chemistry, and
one series per attention status. Below them one row per site: position and where it
comes from (the sites table or the climate), the climate the site got (bundled, file,
nearest station with its distance, or monthly normals), the altitude shift and the UTC
offset. The chart series point at contiguous blocks of rows, so the table is sorted by
chemistry and a small block beside it, sorted by status, feeds the second chart.
"""

from __future__ import annotations

import math

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.series import SeriesLabel
from openpyxl.utils import get_column_letter

from planner.plan.attention import AT_RISK_FRAC, sites_not_served
from planner.report import styles
from planner.report.cells import cell_value, neutralise_text, put
from planner.report.charts import CHART_HEIGHT_CM, CHART_WIDTH_CM
from planner.report.tables import (
    CHART_ROWS,
    Column,
    dig,
    field_of,
    long_table_print_area,
    plan_sites,
    seq,
    title,
    write_table,
)
from planner.report.wording import chemistry_name

#: Marker shapes of the series, in turn (openpyxl marker symbols).
MARKERS = ("circle", "triangle", "diamond", "square", "x", "star", "plus", "dash")
#: Attention statuses derived from the plan when a site carries none, most urgent first.
DERIVED_STATUSES = ("not served", f"risk above {AT_RISK_FRAC:.0%} before the next visit",
                    "warnings", "no flag")


def _number(value):
    value = cell_value(value)
    return float(value) if isinstance(value, int | float) and not isinstance(value, bool) else None


def attention_status(site, unserved_ids) -> str:
    """The site's attention status: the plan's own (``attention_status``) when it has one,
    else the most urgent of: not served, failure risk before the next visit above the
    *Sites at risk* threshold, warnings, no flag."""
    given = site.get("attention_status")
    if isinstance(given, str) and given.strip():
        return given.strip()
    if str(site.get("id")) in unserved_ids:
        return DERIVED_STATUSES[0]
    if (_number(site.get("risk_before_next_visit_frac")) or 0.0) > AT_RISK_FRAC:
        return DERIVED_STATUSES[1]
    if seq(site.get("warnings")):
        return DERIVED_STATUSES[2]
    return DERIVED_STATUSES[3]


def _position(site):
    lat = _number(dig(site, "site_climate", "latitude_deg"))
    lon = _number(dig(site, "site_climate", "longitude_deg"))
    return (lat, lon) if lat is not None and lon is not None else None


def _climate_text(site) -> str | None:
    kind = dig(site, "site_climate", "kind")
    source = dig(site, "site_climate", "source")
    if not kind:
        return None
    words = {"station": "nearest station", "normals": "monthly normals", "file": "weather file",
             "bundled": "bundled climate"}.get(str(kind), str(kind))
    return f"{words}: {source}" if source else words


def _order(keys) -> list:
    """Distinct keys in order: the derived statuses first (most urgent), then the rest sorted."""
    known = [k for k in DERIVED_STATUSES if k in keys]
    return known + sorted(k for k in set(keys) if k not in DERIVED_STATUSES)


def _scatter(ws, *, title_text, groups, x_col, y_col, anchor, bounds, colours=None, labels=None):
    chart = ScatterChart()
    chart.title = neutralise_text(title_text)
    chart.style = 2
    for index, (label, first, last) in enumerate(groups):
        s = Series(Reference(ws, min_col=y_col, min_row=first, max_row=last),
                   Reference(ws, min_col=x_col, min_row=first, max_row=last))
        s.tx = SeriesLabel(v=neutralise_text((labels or {}).get(label, label)))
        s.marker.symbol = MARKERS[index % len(MARKERS)]
        s.marker.size = 6
        colour = (colours(label) if colours else
                  styles.SERIES_COLOURS[index % len(styles.SERIES_COLOURS)])
        s.marker.graphicalProperties.solidFill = colour
        s.marker.graphicalProperties.line.solidFill = colour
        s.graphicalProperties.line.noFill = True   # points only: no line joins the sites
        chart.series.append(s)
    (lon_lo, lon_hi, lon_step), (lat_lo, lat_hi, lat_step) = bounds
    chart.x_axis.title = "Longitude [° E]"
    chart.y_axis.title = "Latitude [° N]"
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = lon_lo, lon_hi
    chart.y_axis.scaling.min, chart.y_axis.scaling.max = lat_lo, lat_hi
    chart.x_axis.majorUnit, chart.y_axis.majorUnit = lon_step, lat_step
    chart.x_axis.numFmt = "0.#" if lon_step < 1 else "0"
    chart.y_axis.numFmt = "0.#" if lat_step < 1 else "0"
    # Axes on the left and bottom edges, wherever 0 degrees lies.
    chart.x_axis.crosses = chart.y_axis.crosses = "min"
    chart.legend.position = "b"
    chart.width, chart.height = CHART_WIDTH_CM, CHART_HEIGHT_CM * 1.4
    chart.x_axis.delete = chart.y_axis.delete = False
    ws.add_chart(chart, anchor)


#: Axis steps in degrees, the smallest giving at most AXIS_TICKS intervals is used.
AXIS_STEPS = (0.5, 1, 2, 5, 10, 15, 30, 45, 60, 90)
AXIS_TICKS = 8


def _bounds(points):
    """(low, high, step) of the longitude and latitude axes: a margin around the sites,
    on multiples of a round step."""
    def span(values, floor, ceil):
        lo, hi = min(values), max(values)
        pad = max(0.25, 0.05 * (hi - lo))
        lo, hi = max(floor, lo - pad), min(ceil, hi + pad)
        step = next((s for s in AXIS_STEPS if (hi - lo) / s <= AXIS_TICKS), AXIS_STEPS[-1])
        return (max(floor, math.floor(lo / step) * step), min(ceil, math.ceil(hi / step) * step),
                step)

    return span([p[1] for p in points], -180, 180), span([p[0] for p in points], -90, 90)


def _blocks(keys, top):
    """(label, first row, last row) of each run of equal keys starting at row ``top``."""
    out, start = [], 0
    for i in range(1, len(keys) + 1):
        if i == len(keys) or keys[i] != keys[start]:
            out.append((keys[start], top + start, top + i - 1))
            start = i
    return out


def map_sheet(ws, plan, fmt) -> None:
    sites = plan_sites(plan)
    names = fmt["chemistry_names"]
    # not served as on Needs attention: no design serves it, or it loses too much of its load
    unserved = {str(u.get("id")) for u in seq(plan.get("unserved_sites")) if isinstance(u, dict)}
    unserved |= set(sites_not_served(plan))
    located = [s for s in sites if _position(s) is not None]
    title(ws, "Where the sites are",
          "Longitude x latitude of every site: by chosen chemistry and by attention status. "
          "Position from the sites table, or the climate's own where the table gives none.")
    if not located:
        put(ws, 3, 1, "The plan holds no site positions.").font = styles.NOTE_FONT
        ws.freeze_panes = "A3"
        styles.landscape_fit_width(ws)
        return
    chart_rows = int(CHART_ROWS * 1.4) + 1
    top = 3 + chart_rows + 1
    chem = {id(s): str(s.get("chemistry") or "none") for s in located}
    status = {id(s): attention_status(s, unserved) for s in located}
    rank = {k: i for i, k in enumerate(_order(list(chem.values())))}
    by_chem = sorted(located, key=lambda s: (rank[chem[id(s)]], str(s.get("id"))))
    cols = [Column("Site id", field_of("id"), width=12),
            Column("Site name", field_of("name")),
            Column("Region", field_of("region"), optional=True),
            Column("Chemistry", lambda s: chemistry_name(chem[id(s)], names), width=24),
            Column("Attention", lambda s: status[id(s)], width=18),
            Column("Longitude [° E]", lambda s: _position(s)[1], styles.THREE_DECIMALS, width=10),
            Column("Latitude [° N]", lambda s: _position(s)[0], styles.THREE_DECIMALS, width=10),
            Column("Altitude [m]", field_of("site_climate", "altitude_m"), styles.INTEGER,
                   optional=True, width=9),
            Column("Position from", field_of("site_climate", "position_from"), width=11),
            Column("Climate", _climate_text, optional=True),
            Column("Station distance [km]", field_of("site_climate", "station_distance_km"),
                   styles.INTEGER, optional=True, width=10),
            Column("Air temperature shift [K]", field_of("site_climate", "altitude_shift_k"),
                   styles.TWO_DECIMALS, optional=True, width=10),
            Column("UTC offset [h]", field_of("site_climate", "utc_offset_h"), "0.0#", width=8),
            Column("UTC offset from", field_of("site_climate", "utc_offset_from"), width=11)]
    kept, last = write_table(ws, top, 1, cols, by_chem, drop_empty=True)
    header = [c.header for c in kept]
    lon_col, lat_col = header.index("Longitude [° E]") + 1, header.index("Latitude [° N]") + 1
    bounds = _bounds([_position(s) for s in located])
    _scatter(ws, title_text="Sites by chosen chemistry",
             groups=_blocks([chem[id(s)] for s in by_chem], top + 1),
             x_col=lon_col, y_col=lat_col, anchor="A3", bounds=bounds, colours=styles.chemistry_colour,
             labels={c: chemistry_name(c, names) for c in set(chem.values())})
    # The attention chart reads a block sorted by status, two columns right of the table.
    left = len(kept) + 2
    rank = {k: i for i, k in enumerate(_order(list(status.values())))}
    by_status = sorted(located, key=lambda s: (rank[status[id(s)]], str(s.get("id"))))
    side = [Column("Site id", field_of("id"), width=12),
            Column("Attention", lambda s: status[id(s)], width=18),
            Column("Longitude [° E]", lambda s: _position(s)[1], styles.THREE_DECIMALS, width=10),
            Column("Latitude [° N]", lambda s: _position(s)[0], styles.THREE_DECIMALS, width=10)]
    write_table(ws, top, left, side, by_status, drop_empty=False)
    put(ws, top - 1, left, "Chart data: sites by attention status").font = styles.NOTE_FONT
    _scatter(ws, title_text="Sites by attention status",
             groups=_blocks([status[id(s)] for s in by_status], top + 1),
             x_col=left + 2, y_col=left + 3, anchor=f"{get_column_letter(10)}3", bounds=bounds)
    ws.freeze_panes = f"B{top + 1}"
    if last > top:
        ws.auto_filter.ref = f"A{top}:{get_column_letter(len(kept))}{last}"
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}")
    long_table_print_area(ws, 1, top, last, len(kept), "sites")
