"""Building blocks of the plan workbook's sheets: table columns, safe table writing,
column widths, titles, page breaks and tolerant lookups into the plan dict.

The plan dict is laid out in ``docs/plan-json.md``; every lookup here tolerates a missing
or malformed part (it reads as blank), because a workbook is still worth writing.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break

from planner.report import styles
from planner.report.cells import cell_value, put, write_rows

MONTH_ABBR = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
#: Rows a chart of charts.CHART_HEIGHT_CM occupies at the default row height (0.53 cm).
CHART_ROWS = 16
#: Columns a chart of charts.CHART_WIDTH_CM occupies at width 10 (about 1.9 cm each).
CHART_COLS = 9
#: A table with one row per site (or per warning) prints whole up to this many rows; a
#: longer one prints its first PRINT_FIRST_ROWS rows and says so in the page header, so
#: a 1,000-site workbook prints in a few dozen pages. Every row stays in the file, with a
#: filter on the header: filter, then print the selection.
PRINT_ALL_ROWS_MAX = 120
PRINT_FIRST_ROWS = 30


@dataclass(frozen=True)
class Column:
    """One table column: header (with unit), value getter, number format, options."""

    header: str
    get: Callable[[Mapping], object]
    fmt: str | None = None
    optional: bool = False  # dropped when no row has a value
    width: float | None = None


def dig(mapping, *keys):
    """Nested lookup that tolerates missing keys and non-dict levels (returns None)."""
    value = mapping
    for key in keys:
        if not isinstance(value, Mapping):
            return None
        value = value.get(key)
    return value


def field_of(*keys):
    """A column getter reading ``record[keys[0]][keys[1]]...`` (None when missing)."""
    return lambda record: dig(record, *keys)


def month_text(month) -> str | None:
    try:
        return MONTH_ABBR[int(month) - 1] if 1 <= int(month) <= 12 else None
    except (TypeError, ValueError):
        return None


def write_table(ws, top: int, left: int, columns: list[Column], records, *, drop_empty: bool = True):
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
    # Headers wrap; give the row enough lines (15 points each) for the longest one (a header
    # naming a chemistry in full runs to five or six lines in a money column).
    lines = 1
    for offset, col in enumerate(kept):
        width = ws.column_dimensions[get_column_letter(left + offset)].width or 10
        lines = max(lines, math.ceil(len(col.header) * 1.1 / max(width - 1, 1)))
    current = ws.row_dimensions[row].height or 15
    ws.row_dimensions[row].height = max(current, 15 * min(lines, 6))


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


def title(ws, text: str, note: str | None = None, note_width: float | None = None) -> None:
    """Sheet title in row 1 and a note in row 2; with ``note_width`` (character units) the
    note wraps within that width (merged over the columns it spans) and row 2 is sized."""
    put(ws, 1, 1, text).font = styles.TITLE_FONT
    if note:
        cell = put(ws, 2, 1, note)
        cell.font = styles.NOTE_FONT
        if note_width:
            cell.alignment = styles.WRAP_TOP
            edge, col = 0.0, 1
            while edge < note_width and col < 100:
                letter = get_column_letter(col)
                edge += (ws.column_dimensions[letter].width if letter in ws.column_dimensions else None) or 8.43
                col += 1
            ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=max(col - 1, 1))
            lines = math.ceil(len(note) * 1.1 / max(note_width, 1))
            ws.row_dimensions[2].height = 15 * max(lines, 1)


def plan_sites(plan) -> list[dict]:
    return [s for s in seq(plan.get("sites")) if isinstance(s, Mapping)]


def seq(value) -> list:
    """The value if it is a list or tuple, else an empty list (a plan part may be missing)."""
    return list(value) if isinstance(value, list | tuple) else []


def mapping_of(value) -> Mapping:
    """The value if it is a mapping, else an empty dict."""
    return value if isinstance(value, Mapping) else {}


def chart_page_breaks(ws, chart_rows: int, per_page: int = 3, rows_each: int = CHART_ROWS) -> None:
    # Break pages between chart rows so that no chart is cut across two pages.
    for row in range(2 + per_page * rows_each, 2 + chart_rows, per_page * rows_each):
        ws.row_breaks.append(Break(id=row))


def wrap_rows(ws, first: int, last: int, n_cols: int) -> None:
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


def column_at(ws, offset_cm: float) -> str:
    """Letter of the first column that starts at least ``offset_cm`` from the sheet's left
    edge (columns of the default width 8.43 count 1.7 cm, about 0.2 cm per unit)."""
    edge, col = 0.0, 1
    while edge < offset_cm and col < 200:
        width = ws.column_dimensions[get_column_letter(col)].width if get_column_letter(col) in \
            ws.column_dimensions else None
        edge += 0.2 * (width or 8.43)
        col += 1
    return get_column_letter(col)


def long_table_print_area(ws, first_row: int, header_row: int, last_row: int, last_col: int,
                          what: str = "rows", first_rows: int = PRINT_FIRST_ROWS) -> str:
    """Set the print area of a sheet ending in a long table; return the area.

    Rows ``first_row`` to ``last_row`` print whole up to :data:`PRINT_ALL_ROWS_MAX` table
    rows; beyond, the area ends after :data:`PRINT_FIRST_ROWS` rows and the page header
    says how many of how many print.
    """
    n_rows = max(last_row - header_row, 0)
    end = last_row
    if n_rows > max(PRINT_ALL_ROWS_MAX, first_rows):
        end = header_row + first_rows
        ws.oddHeader.center.text = (f"&A: the first {first_rows:,} of {n_rows:,} {what} print; "
                                    "every row is in the file (filter, then print the selection)")
    area = f"A{first_row}:{get_column_letter(max(last_col, 1))}{max(end, first_row)}"
    ws.print_area = area
    return area


def study_start_year(plan) -> int | None:
    """Calendar year of study year 0, when the study gives one."""
    start = cell_value(dig(plan, "study", "start_year"))
    return start if isinstance(start, int) and 1900 <= start <= 2200 else None


def as_float_array(values) -> np.ndarray:
    """A 1-D float array from a plan list; non-numbers become NaN (shown blank)."""
    if not isinstance(values, list | tuple | np.ndarray):
        return np.zeros(0)
    try:
        return np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        return np.array([v if isinstance(cell_value(v), float | int) else np.nan for v in values], dtype=float)


def plan_horizon_years(plan) -> int:
    horizon = cell_value(dig(plan, "study", "horizon_years"))
    if isinstance(horizon, int | float) and horizon >= 1:
        return int(horizon)
    # Fall back to the longest fade curve or the last replacement year.
    lengths = [len(s.get("soh_by_month") or []) for s in plan_sites(plan)]
    years = [y for s in plan_sites(plan) for y in seq(s.get("replacement_years")) if isinstance(y, int | float)]
    return max([(max(lengths, default=1) - 1) // 12, int(max(years, default=0)) + 1, 1])


def kwh_text(capacity_wh) -> str:
    """A pack size in kWh, to two significant figures up to 10 kWh ('1.2 kWh', '110 kWh')."""
    wh = cell_value(capacity_wh)
    if not isinstance(wh, int | float):
        return ""
    kwh = wh / 1000.0
    return f"{kwh:.2g} kWh" if kwh < 10 else f"{kwh:,.0f} kWh"


def measure_text(measure) -> str:
    """A thermal measure id in words ('insulated box'); empty for none."""
    if not measure or measure == "none":
        return ""
    return str(measure).replace("-", " ")


def install_text(rep, *, new_measure: bool = True, unit: bool = True) -> str:
    """What a visit installs, short: 'LFP 1.2 kWh + heater box' (the measure only when
    ``new_measure``: a kit already in place is not carried again; ``unit=False`` leaves
    out 'kWh' where the header says it)."""
    if not rep:
        return ""
    from planner.report.wording import chemistry_code

    text = chemistry_code(rep.get("chemistry"))
    size = kwh_text(rep.get("capacity_wh"))
    if size:
        text += f" {size if unit else size.replace(' kWh', '')}"
    measure = measure_text(rep.get("thermal_measure"))
    if measure and new_measure and rep.get("thermal_measure") != "site-heater":
        text += f" + {measure if unit else measure.split()[-1]}"
    return text
