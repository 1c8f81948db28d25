"""Reading a user's table (CSV or XLSX) with the row numbers the user sees.

Every table a user writes by hand or in a spreadsheet (the sites table, a plain CSV
climate file, an hourly load file, and any later table of measurements) is read here, so
one set of rules holds for all of them:

- **row numbers as the user sees them**: the spreadsheet's row number (blank rows
  counted) and, for a CSV, the first line of the record in a text editor (the two differ
  only after a quoted value that spans lines; messages then give both);
- rows whose cells are all blank are skipped, but counted;
- a byte-order mark at the start of a CSV is not part of the first header;
- the header must name every column once: an empty header cell above data, or a name
  used twice, is an error naming its position, never a made-up name;
- a row with more fields than the header is an error ("a comma inside a value needs
  quotes"), never a silent shift of every column; fewer fields leave the rest blank.

A :class:`Table` holds the cells as text; numbers are read by
:mod:`planner.inputs.numbers` (:meth:`Table.numbers` for a whole column).
"""

from __future__ import annotations

import csv
import functools
import io
import itertools
import math
import operator
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from planner.errors import InputError
from planner.inputs.numbers import parse_number_column


class Row(NamedTuple):
    """One data row: where the user sees it and its cells (text, stripped)."""

    number: int           # spreadsheet row (1 = first row of the file or sheet)
    line: int             # first line of the record in a text editor (CSV); = number for XLSX
    cells: tuple[str, ...]

    def where(self, label: str = "row") -> str:
        """``row 6``, or ``row 6 (line 8)`` when a multi-line value moved the lines;
        ``label="line"``: ``line 8`` (for files read in a text editor)."""
        if label == "line":
            return f"line {self.line}"
        return f"row {self.number}" if self.line == self.number else \
            f"row {self.number} (line {self.line})"


@dataclass
class Table:
    """A table read from a file: header, data rows and where it came from."""

    source: str
    header: tuple[str, ...]
    rows: list[Row]
    header_row: int = 1
    sheets: tuple[str, ...] = ()
    #: Rows left out, each with its one-line error (``read_table(..., strict=False)``).
    problems: list = field(default_factory=list)
    _index: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        self._index = {name: i for i, name in enumerate(self.header) if name}

    def __len__(self) -> int:
        return len(self.rows)

    @property
    def columns(self) -> list[str]:
        """Named columns, in file order."""
        return [name for name in self.header if name]

    def has(self, name: str) -> bool:
        return name in self._index

    def index_of(self, name: str) -> int | None:
        """Position of column ``name`` in each row's cells (None if absent)."""
        return self._index.get(name)

    def cell(self, row: Row, name: str) -> str:
        """The text of ``row`` in column ``name`` ("" when the row is short or the column absent)."""
        i = self._index.get(name)
        return row.cells[i] if i is not None and i < len(row.cells) else ""

    def column(self, name: str) -> list[str]:
        """Every row's text in column ``name``."""
        i = self._index.get(name)
        if i is None:
            return [""] * len(self.rows)
        return [row.cells[i] if i < len(row.cells) else "" for row in self.rows]

    def numbers(self, name: str, *, what: str, exponent: bool = True,
                allow_blank: bool = True, label: str = "row") -> np.ndarray:
        """Column ``name`` as floats (blank cells NaN where ``allow_blank``).

        The first cell that is not a finite number is an InputError naming its row (or
        ``label="line"``: its line) and column; ``what`` says what the column should hold
        (e.g. "a number of watts").
        """
        values, bad = parse_number_column(self.column(name), exponent=exponent)
        if not allow_blank:
            bad |= np.isnan(values) & ~bad
        if bad.any():
            i = int(np.argmax(bad))
            text = self.cell(self.rows[i], name)
            found = f"{text[:40]!r} is not a number" if text else "empty"
            raise InputError(f"{self.rows[i].where(label)}, column '{name}': {found}; expected "
                             f"{what}", source=self.source)
        return values


# ---------------------------------------------------------------- reading


def read_table(data: bytes, *, source: str, kind: str, what: str, delimiter: str = ",",
               skip_lines: int = 0, strict: bool = True) -> Table:
    """Read a CSV (``kind="csv"``) or the first sheet of an XLSX (``kind="xlsx"``).

    Parameters
    ----------
    data : bytes
        The file's content (read with :func:`planner.fileio.read_input_bytes`).
    source : str
        The file name for messages.
    kind : {"csv", "xlsx"}
    what : str
        What the table is, for messages ("the sites table").
    delimiter : str
        CSV field separator.
    skip_lines : int
        Lines before the header that are not part of the table (declarations); they
        still count in row and line numbers.
    strict : bool
        A row with more fields than the header raises; with ``strict=False`` it is left
        out and its error kept in :attr:`Table.problems` (for a checker that reports
        every mistake at once).

    Raises
    ------
    planner.errors.InputError
        Unreadable file, no header, an empty or repeated header name, a row with more
        fields than the header (``strict``).
    """
    if kind == "csv":
        records, sheets = _csv_records(data, source, what, delimiter, skip_lines), ()
    elif kind == "xlsx":
        records, sheets = _xlsx_records(data, source, what)
    else:
        raise ValueError(f"kind must be 'csv' or 'xlsx', not {kind!r}")
    cells_of = operator.itemgetter(2)
    filled = list(itertools.compress(records, map(any, map(cells_of, records))))
    if not filled:
        raise InputError(f"{what} is empty: expected a header row and one row per entry",
                         source=source)
    header_row, rows = filled[0], filled[1:]
    header = _check_header(header_row, rows, source, kind, sheets)
    if max(map(len, map(cells_of, rows)), default=0) <= len(header):
        return Table(source=source, header=header, rows=rows, header_row=header_row.number,
                     sheets=sheets)
    kept, problems = [], []
    for row in rows:
        if len(row.cells) > len(header) and any(row.cells[len(header):]):
            problem = InputError(f"{row.where()}: {len(_trimmed(row.cells))} fields, the header "
                                 f"has {len(header)}; expected at most one value per column (a "
                                 "value holding the separator needs quotes)", source=source)
            if strict:
                raise problem
            problems.append(problem)
            continue
        kept.append(row)
    return Table(source=source, header=header, rows=kept, header_row=header_row.number,
                 sheets=sheets, problems=problems)


def column_label(index: int, kind: str) -> str:
    """Column position as the user sees it: ``column 12 (L)`` in a sheet, ``field 12`` in a CSV."""
    if kind != "xlsx":
        return f"field {index + 1}"
    letters, n = "", index + 1
    while n:
        n, rem = divmod(n - 1, 26)
        letters = chr(65 + rem) + letters
    return f"column {index + 1} ({letters})"


def _check_header(header_row: Row, rows: list[Row], source: str, kind: str,
                  sheets: tuple[str, ...]) -> tuple[str, ...]:
    header = _trimmed(header_row.cells)
    first: dict[str, int] = {}
    for i, name in enumerate(header):
        if not name:
            if any(i < len(r.cells) and r.cells[i] for r in rows):
                raise InputError(f"header ({header_row.where()}): {column_label(i, kind)} has no "
                                 "name but holds values; expected a column name", source=source)
            continue
        if name in first:
            raise InputError(f"header ({header_row.where()}): column '{name[:40]}' appears twice "
                             f"({column_label(first[name], kind)} and {column_label(i, kind)}); "
                             "expected each column once", source=source)
        first[name] = i
    return header


def _trimmed(cells) -> tuple[str, ...]:
    """Cells without the blank ones at the end of the row."""
    end = len(cells)
    while end and not cells[end - 1]:
        end -= 1
    return tuple(cells[:end])


def _csv_records(data: bytes, source: str, what: str, delimiter: str, skip_lines: int):
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise InputError(f"cannot read {what} ({err.reason} at byte {err.start}); expected a "
                         "UTF-8 text file", source=source) from None
    if "\x00" in text:
        raise InputError(f"holds a NUL character; expected {what} as a UTF-8 text file",
                         source=source)
    handle = io.StringIO(text, newline="")
    for _ in range(skip_lines):
        handle.readline()
    reader = csv.reader(handle, delimiter=delimiter, skipinitialspace=True)
    end = skip_lines  # last line read so far
    try:
        if '"' not in text:
            # No quoting, so one record per line: built without a Python step per line
            # (a minute-by-minute climate file has half a million rows).
            numbers = itertools.count(skip_lines + 1)
            cells = map(tuple, map(functools.partial(map, str.strip), reader))
            numbered = zip(numbers, itertools.count(skip_lines + 1), cells)
            return list(map(functools.partial(tuple.__new__, Row), numbered))
        records = []
        for number, fields in enumerate(reader, start=skip_lines + 1):
            start = end + 1
            end = skip_lines + reader.line_num
            # A spreadsheet shows one row per record: a quoted newline stays in its cell.
            records.append(Row(number, start, tuple(map(str.strip, fields))))
    except csv.Error as err:
        raise InputError(f"line {skip_lines + reader.line_num}: cannot be read as CSV ({err}); "
                         f"expected {what} with quotes closed on every value",
                         source=source) from None
    return records


def _xlsx_records(data: bytes, source: str, what: str):
    import openpyxl

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as err:  # noqa: BLE001 - any reader failure is a user-file problem
        message = str(err).splitlines()[0] if str(err) else type(err).__name__
        raise InputError(f"cannot read {what} as XLSX ({message[:120]}); expected an Excel "
                         "workbook", source=source) from None
    try:
        sheets = tuple(book.sheetnames)
        if not sheets:
            raise InputError(f"the workbook has no sheet; expected {what} on its first sheet",
                             source=source)
        sheet = book.worksheets[0]
        # The dimension a file declares may be wrong (hand-made files): read what is there.
        sheet.reset_dimensions()
        records = []
        for number, values in enumerate(sheet.iter_rows(min_row=1, min_col=1, values_only=True),
                                        start=1):
            records.append(Row(number=number, line=number,
                               cells=tuple(_cell_text(v) for v in values)))
    except InputError:
        raise
    except Exception as err:  # noqa: BLE001 - a damaged sheet is a user-file problem
        message = str(err).splitlines()[0] if str(err) else type(err).__name__
        raise InputError(f"cannot read {what} as XLSX ({message[:120]}); expected an Excel "
                         "workbook", source=source) from None
    finally:
        book.close()
    if not any(any(r.cells) for r in records) and len(sheets) > 1:
        raise InputError(f"the first sheet ('{sheets[0]}') is empty; expected {what} on the "
                         "first sheet", source=source)
    return records, sheets


def _cell_text(value) -> str:
    """A spreadsheet cell as the text a CSV would hold; numbers in plain decimals."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return np.format_float_positional(value, trim="-") if math.isfinite(value) else str(value)
    return str(value).strip()
