"""The workbook's look: a few fonts, one header fill, number formats, page setup.

A restrained style of our own: dark slate text on a pale blue-grey header band, no
colour coding beyond that; numbers carry their unit in the header and a number format.
"""

from __future__ import annotations

from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.worksheet.properties import PageSetupProperties

#: openpyxl's default body font; fonts without a name fall back to a serif in LibreOffice.
FONT_NAME = "Calibri"

HEADER_FONT = Font(name=FONT_NAME, bold=True, color="1F2A36")
HEADER_FILL = PatternFill("solid", fgColor="DCE3EA")
HEADER_BORDER = Border(bottom=Side(style="thin", color="7A8B9C"))
HEADER_ALIGN = Alignment(wrap_text=True, vertical="center")
TITLE_FONT = Font(name=FONT_NAME, bold=True, size=14, color="1F2A36")
SECTION_FONT = Font(name=FONT_NAME, bold=True, size=12, color="1F2A36")
NOTE_FONT = Font(name=FONT_NAME, italic=True, color="4A5866")
HEADER_ALIGN_INDENT = Alignment(horizontal="left", wrap_text=True, vertical="center", indent=1)
INDENT = Alignment(horizontal="left", indent=1)
WRAP_TOP = Alignment(wrap_text=True, vertical="top")
TOP = Alignment(vertical="top")
WRAP_TOP_INDENT = Alignment(horizontal="left", wrap_text=True, vertical="top", indent=1)
YEAR_BORDER = Border(top=Side(style="thin", color="7A8B9C"))

#: Chart series colours: muted, distinguishable, of our own choosing.
SERIES_COLOURS = ("2F5D8A", "B5651D", "5E8C31", "7B4F9D", "8C8C8C", "A23B3B", "C9A227", "3A8C8C")

INTEGER = "#,##0"
ONE_DECIMAL = "0.0"
TWO_DECIMALS = "0.00"
THREE_DECIMALS = "0.000"
PERCENT = "0.0%"
PERCENT_FINE = "0.00%"
TEMPERATURE = "0.0"


def money_format(currency: str) -> str:
    """Number format showing whole currency units with the study's currency label.

    Quotes and backslashes are dropped from the label because they end or escape the
    literal inside an Excel number format (ECMA-376 Part 1, §18.8.31 numFmts).
    """
    label = "".join(ch for ch in str(currency) if ch not in '"\\').strip()
    return f'#,##0 "{label}"' if label else "#,##0"


def money_format_dash_zero(currency: str) -> str:
    """:func:`money_format` with a dash for zero, so tables of mostly empty years stay
    readable (positive;negative;zero sections, ECMA-376 Part 1, §18.8.31 numFmts)."""
    base = money_format(currency)
    return f'{base};-{base};"-"'


def currency_label(currency) -> str:
    """The currency label for headers (e.g. ``[EUR]``); blank when the study gives none."""
    return "".join(ch for ch in str(currency or "") if ch not in '"\\').strip()


def style_header_row(ws, row: int, first_col: int, last_col: int) -> None:
    """Apply the header look to one row of cells."""
    for col in range(first_col, last_col + 1):
        cell = ws.cell(row=row, column=col)
        cell.font = HEADER_FONT
        cell.fill = HEADER_FILL
        cell.border = HEADER_BORDER
        cell.alignment = HEADER_ALIGN


def landscape_fit_width(ws, *, title_rows: str | None = None, title_cols: str | None = None,
                        area: str | None = None, pages_wide: int = 1) -> None:
    """Landscape, fit to one page wide (any number tall), repeated headers, page numbers.

    Without landscape and fit-to-width LibreOffice cuts charts across pages (measured,
    ../shared/notes/ecosystem.md §3).
    """
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = pages_wide
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
    ws.print_options.horizontalCentered = False
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top = ws.page_margins.bottom = 0.5
    ws.oddFooter.center.text = "&A  page &P of &N"
    if title_rows:
        ws.print_title_rows = title_rows
    if title_cols:
        ws.print_title_cols = title_cols
    if area:
        ws.print_area = area
