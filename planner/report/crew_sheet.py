"""The Crew trips sheet: one printable block per trip of the next few years.

For each trip of the first :data:`CREW_YEARS` years of the plan: region, month, the
sites in the order the trip lists them, and per site what to install (the chemistry's
full name, pack size and structure, mass), the charge voltage to program (per cell and
for the pack), the thermal kit only when it is new, the pack to remove and carry out,
and how the site is reached (access months, the month's mean air temperature, the
site's notes). A trip heavier than the payload is flagged.

The sheet prints at 100 % on landscape A4 and Letter (no fit-to-page), so its
:data:`planner.report.styles.CREW_FONT_PT` text prints at that size; the columns add up
to :data:`planner.report.styles.PRINT_WIDTH_CHARS`, every cell wraps and each row is as
tall as its longest cell, and a page break never separates a trip's heading from its
first sites.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from openpyxl.cell.rich_text import CellRichText, TextBlock
from openpyxl.cell.text import InlineFont
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from planner.plan.attention import attention_of
from planner.plan.cautions import LITHIUM_IDS
from planner.plan.numbers import finite_number
from planner.report import styles
from planner.report.cells import cell_value, clean_text, put, write_rows
from planner.report.tables import (
    MONTH_ABBR,
    dig,
    kwh_text,
    measure_text,
    plan_sites,
    seq,
    study_start_year,
)
from planner.report.wording import chemistry_name

#: Years of trips the crew pages cover, from the study start (year 0 = the first
#: installations). Later trips are on sheet Trip list; a plan re-run before then gives
#: the next crew pages with up-to-date packs.
CREW_YEARS = 3
#: (header, width) of the crew columns; the widths add up to styles.PRINT_WIDTH_CHARS.
COLUMNS = (("#", 3), ("Site", 10), ("Install", 27), ("Charger setting", 12),
           ("Thermal kit", 9), ("Remove and carry out", 25), ("Access and notes", 14))
#: Characters of CREW_FONT_PT text per unit of column width: a unit prints about 7 pt
#: wide (styles.PT_PER_WIDTH) and 8 pt text averages about 4.2 pt a character (9 pt text
#: measured 4.7 pt on the rendered PDF), so about 1.65; 1.45 leaves room for word wrapping.
CHARS_PER_WIDTH = 1.45
#: Height of one line of CREW_FONT_PT text [pt] (8 pt text draws 9.8 pt tall, ascent plus
#: descent, on the rendered PDF) and the padding of a row.
LINE_PT = 10.0
PAD_PT = 1.0
#: Text runs of a trip's heading cell: the heading, then what the trip carries.
_TRIP_RUN = InlineFont(rFont=styles.FONT_NAME, sz=styles.CREW_TRIP_FONT.size, b=True, color="1F2A36")
_BODY_RUN = InlineFont(rFont=styles.FONT_NAME, sz=styles.CREW_FONT_PT, color="1F2A36")
_FLAG_RUN = InlineFont(rFont=styles.FONT_NAME, sz=styles.CREW_FONT_PT, b=True, color="7A2E0E")
#: Height of the gap between two trips [pt].
GAP_PT = 8.0
#: Top and bottom margins of the crew pages [in]: narrower than the other sheets' 0.5 in,
#: so a page holds two more sites; the footer still fits.
TOP_IN, BOTTOM_IN = 0.3, 0.45
#: Height the crew pages fill [pt]: styles.PRINT_HEIGHT_PT plus the margin given back.
PAGE_PT = styles.PRINT_HEIGHT_PT + 72 * (1.0 - TOP_IN - BOTTOM_IN)


def _lines(text, width) -> int:
    per_line = max(int(width * CHARS_PER_WIDTH), 1)
    return sum(max(1, math.ceil(len(part) / per_line)) for part in str(text or "").split("\n"))


def row_height_pt(values, widths=None) -> float:
    """Height a crew row needs for its longest wrapped cell [pt]."""
    widths = widths or [w for _, w in COLUMNS]
    return LINE_PT * max(_lines(v, w) for v, w in zip(values, widths)) + PAD_PT


def _months_text(months) -> str:
    months = sorted({int(m) for m in months if isinstance(m, int) and 1 <= m <= 12})
    if not months or len(months) == 12:
        return "any month"
    runs, start = [], months[0]
    for prev, cur in zip(months, months[1:] + [None]):
        if cur != prev + 1:
            runs.append(MONTH_ABBR[start - 1] + ("" if prev == start else f"-{MONTH_ABBR[prev - 1]}"))
            start = cur
    return ", ".join(runs)


def _pack_text(pack, names, structure: bool = True) -> str:
    """'Lithium iron phosphate (graphite/LiFePO4), 1.2 kWh (4s2p), 14.2 kg'."""
    parts = [chemistry_name(pack.get("chemistry"), names) or "pack"]
    size = kwh_text(pack.get("capacity_wh"))
    cells = pack.get("pack_structure") if structure else None
    if size:
        parts.append(size + (f" ({cells})" if cells else ""))
    mass = finite_number(pack.get("pack_mass_kg"))
    if mass is not None:
        parts.append(f"{mass:.1f} kg")
    return ", ".join(parts)


def _charge_text(pack, rechargeable) -> str:
    if not rechargeable:
        return "nothing: primary cells"
    per_cell = finite_number(pack.get("charge_voltage_v_per_cell"))
    whole = finite_number(pack.get("charge_voltage_v"))
    if per_cell is None:
        return ""
    return f"{per_cell:.2f} V per cell" + (f"\n{whole:.2f} V per pack" if whole is not None else "")


def _rechargeable(chemistry) -> bool:
    try:
        from planner.chemistry import get_chemistry
        return bool(get_chemistry(str(chemistry)).rechargeable)
    except Exception:
        return str(chemistry) != "lisocl2"


def _visits(plan) -> dict:
    """(site id, year) -> (site, index of the pack, the pack, the pack it replaces)."""
    out = {}
    for site in plan_sites(plan):
        packs = [r for r in seq(site.get("replacements")) if isinstance(r, Mapping)]
        for k, pack in enumerate(packs):
            before = packs[k - 1] if k else site.get("existing_pack")
            out[(str(site.get("id")), pack.get("year"))] = (site, k, pack, before)
    return out


def _remove_text(k, before, names, start) -> str:
    if not isinstance(before, Mapping):
        return "nothing (first pack)"
    text = _pack_text(before, names, structure=False)
    if k == 0:
        age = finite_number(before.get("age_years"))
        return text + (f"; {age:.0f} years old" if age is not None else "")
    year = before.get("year")
    if isinstance(year, int):
        text += f"; put in {start + year}" if start else f"; put in year {year}"
    return text


def _kit_text(k, pack, site) -> str:
    measure = pack.get("thermal_measure") or site.get("thermal_measure")
    if k == 0 and measure not in (None, "", "none", "site-heater"):
        return f"NEW {measure_text(measure)}"
    return ""


def _access_text(site, month) -> str:
    parts = [_months_text(seq(site.get("access_months")))]
    air = dig(site, "climate_monthly", "air_mean_c")
    if isinstance(month, int) and 1 <= month <= 12 and isinstance(air, list | tuple) and len(air) == 12:
        temp = finite_number(air[month - 1])
        if temp is not None:
            parts.append(f"{MONTH_ABBR[month - 1]} air {temp:.0f} °C" + (", cold work" if temp < 0 else ""))
    return "; ".join(parts)


def _site_rows(stop, site, k, pack, before, month, names, start) -> list[list]:
    """The site's row and, when the sites table has notes for it, a notes row under it
    (spanning the columns after the stop number)."""
    name = cell_value(site.get("name"))
    label = str(site.get("id")) + (f" {name}" if name else "")
    rows = [[stop, label, _pack_text(pack, names), _charge_text(pack, _rechargeable(pack.get("chemistry"))),
             _kit_text(k, pack, site), _remove_text(k, before, names, start), _access_text(site, month)]]
    notes = cell_value(site.get("notes"))
    if isinstance(notes, str) and notes.strip():
        rows.append([None, f"Notes: {' '.join(notes.split())}"] + [None] * (len(COLUMNS) - 2))
    return rows


def _trip_lines(trip, stops, visits, payload_kg, start, currency) -> tuple[str, str, str | None]:
    year, month = trip.get("year"), trip.get("month")
    when = (f"{MONTH_ABBR[month - 1] if isinstance(month, int) and 1 <= month <= 12 else 'month ?'} "
            f"{start + year if start and isinstance(year, int) else ''}").strip()
    n = len(stops)
    heading = f"{when} (year {year}) · {trip.get('region')} · {n} site{'s' if n != 1 else ''}, in this order"
    ids = [str(i) for i in seq(trip.get("site_ids"))]
    packs = [visits[(i, year)] for i in ids if (i, year) in visits]
    chems = {str(p[2].get("chemistry")) for p in packs}
    mass = finite_number(trip.get("pack_mass_kg"))
    count = finite_number(trip.get("trip_count")) or 1
    out_mass = sum(finite_number(p[3].get("pack_mass_kg")) or 0.0 for p in packs if isinstance(p[3], Mapping))
    n_out = sum(1 for p in packs if isinstance(p[3], Mapping))
    n_in = trip.get("pack_count") or len(packs)
    load = [f"carry {n_in} pack{'s' if n_in != 1 else ''}" + (f", {mass:,.0f} kg in" if mass is not None else ""),
            f"{n_out} old pack{'s' if n_out != 1 else ''} out" + (f", {out_mass:,.0f} kg" if n_out else "")]
    if count > 1:
        load.append(f"split over {count:.0f} trips")
    load.append("lithium aboard: UN 38.3 dangerous goods, packed and declared" if chems & LITHIUM_IDS
                else "no lithium aboard")
    cost = finite_number(trip.get("cost"))
    if cost is not None:
        load.append(f"trip {cost:,.0f} {currency}".rstrip())
    flag = None
    if mass is not None and payload_kg and mass / count > payload_kg:
        flag = (f"OVER PAYLOAD: {mass / count:,.0f} kg of packs per trip against {payload_kg:,.0f} kg; "
                "split the load or the trip")
    return heading, "; ".join(load), flag


def crew_trips(plan) -> list[Mapping]:
    """Trips of the first :data:`CREW_YEARS` years, in date order."""
    trips = [t for t in seq(plan.get("trips")) if isinstance(t, Mapping)
             and isinstance(cell_value(t.get("year")), int) and 0 <= t["year"] < CREW_YEARS]
    return sorted(trips, key=lambda t: (t["year"], cell_value(t.get("month")) or 0, str(t.get("region"))))


def _height(values, widths) -> float:
    """Height of a site row, or of a notes row (its text spans every column but the first)."""
    if values[0] is None:
        return row_height_pt([values[1]], [sum(widths[1:])])
    return row_height_pt(values, widths)


def _heading_height(heading: str, load: str, width: float) -> float:
    """Height of a trip's heading cell [pt]: its bold run counts about 1.4 characters of
    body text per character (10 pt bold against 8 pt), and its first line is taller."""
    per_line = width * CHARS_PER_WIDTH
    lines = max(1, math.ceil((1.4 * len(heading) + len(load) + 3) / per_line))
    return lines * LINE_PT + 4.0


class _Pages:
    """Row heights and the manual page breaks that keep a trip's heading on its page."""

    def __init__(self, ws):
        self.ws, self.used = ws, 0.0

    def add(self, row: int, height: float, keep_with: float = 0.0) -> None:
        if self.used + height + keep_with > PAGE_PT and self.used > 0:
            self.ws.row_breaks.append(Break(id=row - 1))
            self.used = 0.0
        self.used += height
        self.ws.row_dimensions[row].height = height


def _trip_block(ws, row: int, number: int, rows, texts, pages: _Pages) -> int:
    """One trip: its heading cell, the column headers and its site rows; the next free row."""
    heading, load, flag = texts
    widths = [w for _, w in COLUMNS]
    n_cols, last_letter = len(COLUMNS), get_column_letter(len(COLUMNS))
    first_rows = sum(_height(r, widths) for r in rows[:1])
    # the heading in bold, what the trip carries and a payload flag after it, in one cell
    head = ws.cell(row=row, column=1)
    runs = [TextBlock(_TRIP_RUN, clean_text(f"Trip {number}: {heading}")),
            TextBlock(_BODY_RUN, clean_text(f".  {load[0].upper()}{load[1:]}"))]
    if flag:
        runs.append(TextBlock(_FLAG_RUN, clean_text(f".  {flag}")))
    head.value = CellRichText(runs)
    head.fill, head.alignment = styles.HEADER_FILL, styles.WRAP_TOP
    ws.merge_cells(f"A{row}:{last_letter}{row}")
    pages.add(row, _heading_height(f"Trip {number}: {heading}", load + (flag or ""), sum(widths)),
              keep_with=first_rows + 20)
    row += 1
    for col, (header, _) in enumerate(COLUMNS, start=1):
        cell = put(ws, row, col, header)
        cell.font, cell.fill, cell.border, cell.alignment = (styles.CREW_BOLD, styles.HEADER_FILL,
                                                             styles.HEADER_BORDER, styles.WRAP_TOP)
    pages.add(row, row_height_pt([h for h, _ in COLUMNS], widths), keep_with=first_rows)
    row += 1
    body = {"font": styles.CREW_FONT, "alignment": styles.WRAP_TOP}
    write_rows(ws, row, 1, rows, [styles.INTEGER] + [None] * (n_cols - 1), [body] * n_cols)
    for values in rows:
        if values[0] is None:  # a notes row spans the columns after the stop number
            ws.merge_cells(start_row=row, start_column=2, end_row=row, end_column=n_cols)
        pages.add(row, _height(values, widths))
        row += 1
    pages.add(row, GAP_PT)
    return row + 1


def crew_sheet(ws, plan, fmt) -> None:
    names = fmt["chemistry_names"]
    start = study_start_year(plan)
    payload = finite_number(attention_of(plan).get("payload_flag_kg"))
    widths = [w for _, w in COLUMNS]
    last_letter = get_column_letter(len(COLUMNS))
    for index, width in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(index)].width = width
    trips = crew_trips(plan)
    years = f"{start}-{start + CREW_YEARS - 1}" if start else f"years 0-{CREW_YEARS - 1}"
    pages = _Pages(ws)
    put(ws, 1, 1, f"Crew pages: the {len(trips)} trips of {years}").font = styles.TITLE_FONT
    pages.add(1, 22)
    intro = ("One block per trip, sites in the order the trip lists them. Set the charger to the voltage "
             "given; bring a thermal kit only where it says NEW. Follow local codes, the standards named on "
             "sheet Cautions and licensed practice for every step.")
    cell = put(ws, 2, 1, intro)
    cell.font, cell.alignment = styles.CREW_FONT, styles.WRAP_TOP
    ws.merge_cells(f"A2:{last_letter}2")
    pages.add(2, row_height_pt([intro], [sum(widths)]))
    visits = _visits(plan)
    row = 4
    for number, trip in enumerate(trips, start=1):
        year = trip.get("year")
        stops = [str(i) for i in seq(trip.get("site_ids")) if (str(i), year) in visits]
        rows = [r for stop, i in enumerate(stops, start=1)
                for r in _site_rows(stop, *visits[(i, year)], trip.get("month"), names, start)]
        texts = _trip_lines(trip, stops, visits, payload, start, fmt["cur"])
        row = _trip_block(ws, row, number, rows, texts, pages)
    later = [t for t in seq(plan.get("trips")) if isinstance(t, Mapping)
             and isinstance(cell_value(t.get("year")), int) and t["year"] >= CREW_YEARS]
    tail = (f"Later trips ({len(later):,}) are on sheet Trip list; print their crew pages from a plan "
            "re-run nearer the time." if later else "No later trips.")
    if not trips:
        tail = "No trips in these years. " + tail
    cell = put(ws, row, 1, tail)
    cell.font = styles.CREW_FONT
    ws.merge_cells(f"A{row}:{last_letter}{row}")
    pages.add(row, LINE_PT + PAD_PT)
    ws.freeze_panes = "A2"
    styles.landscape_at_scale(ws, area=f"A1:{last_letter}{row}", top_in=TOP_IN, bottom_in=BOTTOM_IN)
