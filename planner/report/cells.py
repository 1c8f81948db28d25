"""Writing values into worksheet cells safely.

Every string that reaches a cell passes through :func:`neutralise_text`, so a site name,
region or note can never become a live formula, and through :func:`put` /
:func:`write_rows`, which force the cell's data type to text. Numbers stay numeric.

Reference: OWASP Foundation, "CSV Injection" (community page, owasp.org/www-community/
attacks/CSV_Injection): a field beginning with ``=``, ``+``, ``-``, ``@``, tab or carriage
return may be executed by a spreadsheet program; prefix it with a single quote and keep
the cell typed as text. openpyxl 3.1 turns any assigned str that starts with ``=`` into a
formula and one like ``#N/A`` into an error literal, so the data type is forced after
assignment as well (measured, ../shared/notes/ecosystem.md §4).
"""

from __future__ import annotations

import math
from numbers import Integral, Real

#: Leading characters a spreadsheet program may read as the start of a formula
#: (OWASP CSV Injection guidance).
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

#: Prefix OWASP recommends to neutralise a triggering string.
NEUTRALISING_PREFIX = "'"


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
    text = str(text)
    if text.startswith(FORMULA_TRIGGERS):
        return NEUTRALISING_PREFIX + text
    return text


def cell_value(value):
    """Convert a plan value to what a cell may hold.

    Numbers (not bool) stay numeric; NaN and infinities become blank, because openpyxl
    would write them as text Excel cannot read. ``None`` stays blank. Booleans become
    ``"yes"``/``"no"``. Everything else becomes neutralised text.
    """
    if value is None:
        return None
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, Integral):
        return int(value)
    if isinstance(value, Real):
        value = float(value)
        return value if math.isfinite(value) else None
    if isinstance(value, (list, tuple)):
        return neutralise_text(", ".join(_list_item_text(v) for v in value))
    return neutralise_text(value)


def _list_item_text(value) -> str:
    # Lists (replacement years, site ids) are shown as one readable line.
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def put(ws, row: int, col: int, value, number_format: str | None = None, style=None):
    """Write one value into ``ws`` at (row, col) safely and return the cell.

    Text cells are forced to data type ``'s'`` after assignment so openpyxl cannot turn
    them into formulas or error literals.
    """
    value = cell_value(value)
    cell = ws.cell(row=row, column=col)
    cell.value = value
    if isinstance(value, str):
        cell.data_type = "s"
    elif value is not None and number_format:
        cell.number_format = number_format
    if style is not None:
        cell.style = style
        if isinstance(value, (int, float)) and number_format:
            cell.number_format = number_format
    return cell


def write_rows(ws, first_row: int, first_col: int, rows, number_formats) -> int:
    """Write a block of rows (iterables of values) and return the next free row.

    ``number_formats`` gives one format (or None) per column of the block.
    """
    row_idx = first_row
    for values in rows:
        for offset, (value, fmt) in enumerate(zip(values, number_formats)):
            value = cell_value(value)
            if value is None:
                continue
            cell = ws.cell(row=row_idx, column=first_col + offset)
            cell.value = value
            if isinstance(value, str):
                cell.data_type = "s"
            elif fmt:
                cell.number_format = fmt
        row_idx += 1
    return row_idx
