"""Writing values into worksheet cells safely.

Every string that reaches a cell passes through :func:`put` / :func:`write_rows`, which
force the cell's data type to text (a shared string, never a formula), so a site name,
region or note can never become a live formula. A string that starts like a formula is
also given the text number format (``@``) and the quote-prefix flag, so a spreadsheet
program shows it exactly as typed and keeps it text even when the cell is edited.
Numbers stay numeric.

Reference: OWASP Foundation, "CSV Injection" (community page, owasp.org/www-community/
attacks/CSV_Injection): a field beginning with ``=``, ``+``, ``-``, ``@``, tab or carriage
return may be executed by a spreadsheet program. openpyxl 3.1 turns any assigned str that
starts with ``=`` into a formula and one like ``#N/A`` into an error literal, so the data
type is forced after assignment; a cell typed as a string stays literal in LibreOffice,
whereas a leading apostrophe in the value would show (measured,
../shared/notes/ecosystem.md §4). :func:`neutralise_text` (apostrophe prefix) remains for
text outside cells, such as chart titles.
"""

from __future__ import annotations

import math
from copy import copy
from numbers import Integral, Real

from openpyxl.cell import Cell
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

#: Leading characters a spreadsheet program may read as the start of a formula
#: (OWASP CSV Injection guidance).
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

#: The fast block writer sets openpyxl 3.1 cell internals (``_value``, ``_style``,
#: ``Worksheet._cells``); if a later openpyxl lacks them, the public API is used instead.
_FAST_CELLS = all(hasattr(Cell, name) for name in ("_value", "_style", "data_type"))

#: Longest text a cell may hold (Excel specifications and limits: 32,767 characters).
MAX_CELL_CHARS = 32767

_ILLEGAL_XML = ILLEGAL_CHARACTERS_RE

#: Prefix OWASP recommends to neutralise a triggering string outside a typed cell.
NEUTRALISING_PREFIX = "'"
#: Number format that makes a cell text (ECMA-376 Part 1, §18.8.31, built-in format 49).
TEXT_FORMAT = "@"


def clean_text(text) -> str:
    """``text`` as a str a cell may hold: XML-illegal control characters removed
    (W3C XML 1.0 §2.2) and cut to the cell limit. Nothing is added."""
    if type(text) is not str:
        text = str(text)
    if _ILLEGAL_XML.search(text):
        # A pasted name may carry control characters; they would make the file unreadable.
        text = _ILLEGAL_XML.sub("", text)
    return text[:MAX_CELL_CHARS - 1]


def looks_like_formula(text: str) -> bool:
    """Whether ``text`` starts with a character a spreadsheet may read as a formula."""
    return text.startswith(FORMULA_TRIGGERS)


def neutralise_text(text) -> str:
    """Return ``text`` as a str that no spreadsheet program will evaluate.

    Parameters
    ----------
    text : object
        Any value; it is converted with ``str()``.

    Returns
    -------
    str
        The text, prefixed with a single quote when it starts with ``=``, ``+``, ``-``,
        ``@``, a tab or a carriage return (OWASP CSV Injection guidance). Other text is
        returned unchanged.
    """
    text = clean_text(text)
    if looks_like_formula(text):
        return NEUTRALISING_PREFIX + text
    return text


def cell_value(value):
    """Convert a plan value to what a cell may hold.

    Numbers (not bool) stay numeric; NaN and infinities become blank, because openpyxl
    would write them as text Excel cannot read. ``None`` stays blank. Booleans become
    ``"yes"``/``"no"``. Everything else becomes clean text (:func:`clean_text`), which
    :func:`put` and :func:`write_rows` then type as strings.
    """
    kind = type(value)
    # Fast paths for the plain types that make up almost every cell of a large fleet.
    if kind is float:
        return value if math.isfinite(value) else None
    if kind is int or value is None:
        return value
    if kind is str:
        return clean_text(value)
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, Integral):
        return int(value)
    if isinstance(value, Real):
        value = float(value)
        return value if math.isfinite(value) else None
    if isinstance(value, (list, tuple)):
        return clean_text(", ".join(_list_item_text(v) for v in value))
    return clean_text(value)


def _list_item_text(value) -> str:
    # Lists (replacement years, site ids) are shown as one readable line.
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def put(ws, row: int, col: int, value, number_format: str | None = None):
    """Write one value into ``ws`` at (row, col) safely and return the cell.

    Text cells are forced to data type ``'s'`` after assignment so openpyxl cannot turn
    them into formulas or error literals; formula-like text is also formatted as text.
    """
    value = cell_value(value)
    cell = ws.cell(row=row, column=col)
    cell.value = value
    if isinstance(value, str):
        cell.data_type = "s"
        if looks_like_formula(value):
            cell.number_format = TEXT_FORMAT
            cell.quotePrefix = True
    elif value is not None and number_format:
        cell.number_format = number_format
    return cell


def write_rows(ws, first_row: int, first_col: int, rows, number_formats, looks=None) -> int:
    """Write a block of rows (iterables of values) and return the next free row.

    ``number_formats`` gives one format (or None) per column of the block. Text is
    neutralised and typed ``'s'``; NaN and None leave the cell empty. ``looks`` may give,
    per column, a dict of cell style attributes (``font``, ``alignment``, ``border``,
    ``fill``) applied to every written cell of that column.

    For speed on large fleets each column's style is computed once on a template cell
    and its style array copied to the cells below: setting ``number_format`` cell by
    cell costs a style lookup per cell and dominated the build time for 1,000 sites.
    """
    looks = list(looks) if looks else [None] * len(number_formats)
    if not _FAST_CELLS:
        return _write_rows_public(ws, first_row, first_col, rows, number_formats, looks)
    templates, plain, text_styles = [], [], []
    for fmt, look in zip(number_formats, looks):
        templates.append(_probe_style(ws, fmt, look) if fmt or look else None)
        plain.append(_probe_style(ws, None, look) if look else None)
        text_styles.append(_probe_style(ws, TEXT_FORMAT, look, quote=True))
    cells = ws._cells
    row_idx = first_row
    for values in rows:
        for offset, value in enumerate(values):
            value = cell_value(value)
            if value is None:
                continue
            col = first_col + offset
            cell = Cell(ws, row=row_idx, column=col)
            if isinstance(value, str):
                cell._value = value
                cell.data_type = "s"
                if looks_like_formula(value):
                    cell._style = copy(text_styles[offset])
                elif plain[offset] is not None:
                    cell._style = copy(plain[offset])
            else:
                cell._value = value
                cell.data_type = "n"
                style = templates[offset]
                if style is not None:
                    cell._style = copy(style)
            cells[(row_idx, col)] = cell
        row_idx += 1
    ws._current_row = max(ws._current_row, row_idx - 1)
    return row_idx


def _probe_style(ws, number_format, look, *, quote: bool = False):
    """The style array of a cell with this number format and look (copied to many cells)."""
    probe = Cell(ws, row=1, column=1)
    for name, value in (look or {}).items():
        setattr(probe, name, value)
    if number_format:
        probe.number_format = number_format
    if quote:
        probe.quotePrefix = True
    return probe._style


def _write_rows_public(ws, first_row, first_col, rows, number_formats, looks) -> int:
    """Same as :func:`write_rows` through openpyxl's public cell API (slower)."""
    row_idx = first_row
    for values in rows:
        for offset, (value, fmt, look) in enumerate(zip(values, number_formats, looks)):
            if cell_value(value) is not None:
                cell = put(ws, row_idx, first_col + offset, value, fmt)
                for name, attr in (look or {}).items():
                    setattr(cell, name, attr)
        row_idx += 1
    return row_idx
