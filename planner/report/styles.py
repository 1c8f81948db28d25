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
#: One colour per chemistry in every chart (fade lines, bars by chemistry); a chemistry
#: id not listed takes the next of SERIES_COLOURS.
CHEMISTRY_COLOURS = {"vrla": "6B4F2F", "lfp": "2F5D8A", "nmc": "A23B3B", "lto": "4F8A2E", "lisocl2": "7B4F9D"}
#: One colour per cost part in every chart (Spending by year, the Summary's cost groups);
#: none of them is a chemistry's colour.
COST_COLOURS = {"packs": "5B7083", "equipment": "5B7083", "labour": "9FB3C8", "trips": "C9A227",
                "trips_and_labour": "C9A227", "disposal": "7A7A7A", "thermal": "3A8C8C",
                "downtime": "D98C3F", "risk": "B0B0B0", "failure_risk": "B0B0B0", "residual": "D9D2C3"}
#: Line of the state of health at which a pack is replaced, in every fade chart.
REPLACE_AT_COLOUR = "7A7A7A"


def chemistry_colour(chemistry, order=()) -> str:
    """The chart colour of a chemistry id (stable across every chart of a workbook)."""
    key = str(chemistry or "")
    if key in CHEMISTRY_COLOURS:
        return CHEMISTRY_COLOURS[key]
    others = [c for c in SERIES_COLOURS if c not in CHEMISTRY_COLOURS.values()]
    index = list(order).index(key) if key in order else sum(map(ord, key))
    return others[index % len(others)]

#: Crew pages: body text size [pt]; they print at 100 % (no fit-to-page), so this is the
#: printed size, the 8 pt a printed work instruction should not go below: the smallest
#: readable size keeps a 1,000-site rollout to about 20 sites a page.
CREW_FONT_PT = 8
CREW_FONT = Font(name=FONT_NAME, size=CREW_FONT_PT, color="1F2A36")
CREW_BOLD = Font(name=FONT_NAME, size=CREW_FONT_PT, bold=True, color="1F2A36")
CREW_TRIP_FONT = Font(name=FONT_NAME, size=10, bold=True, color="1F2A36")
CREW_FLAG_FONT = Font(name=FONT_NAME, size=CREW_FONT_PT, bold=True, color="7A2E0E")
FLAG_FILL = PatternFill("solid", fgColor="F6DDCC")
TOTAL_BORDER = Border(top=Side(style="thin", color="1F2A36"), bottom=Side(style="double", color="1F2A36"))

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


def money_format_cents(currency: str) -> str:
    """:func:`money_format` with cents, for the reconciliation's differences."""
    base = money_format(currency)
    return base.replace("#,##0", "#,##0.00", 1)


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


def landscape_at_scale(ws, *, scale: int = 100, area: str | None = None, top_in: float = 0.5,
                       bottom_in: float = 0.5) -> None:
    """Landscape A4 at a fixed print scale (no fit-to-page), side margins as
    :func:`landscape_fit_width`: the cell styles print at ``scale`` percent of their size.
    The columns must fit the narrower of A4 and Letter (see :data:`PRINT_WIDTH_CHARS`)."""
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.scale = scale
    ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=False)
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top, ws.page_margins.bottom = top_in, bottom_in
    ws.oddFooter.center.text = "&A  page &P of &N"
    if area:
        ws.print_area = area


#: Sum of column widths (character units) that prints on one landscape page of both A4
#: and Letter at 100 % with 0.4 in side margins. Letter is the narrower: 11 in - 0.8 in =
#: 734 pt. LibreOffice prints a column of width w about 7.0 w pt wide (measured on its PDF
#: of these workbooks; Excel prints narrower, about 5.25 w + 4 pt after ECMA-376 Part 1,
#: §18.3.1.13), so 100 units take about 700 pt.
PRINT_WIDTH_CHARS = 100
#: Printed width of one unit of column width [pt] in LibreOffice (measured, see above).
PT_PER_WIDTH = 7.0
#: Printable height of a landscape page at 100 % [pt] with 0.5 in margins: A4 is the
#: shorter, 210 mm = 595 pt, less the margins and the footer; LibreOffice fills about
#: 490 pt of it (measured on its PDF), and 485 keeps a manual page break ahead of its own.
PRINT_HEIGHT_PT = 485


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
