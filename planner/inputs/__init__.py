"""Reading what the user typed: one number parser and one table reader for every input.

Public entry: :func:`~planner.inputs.numbers.parse_number` (a finite number in range, or
a one-line error), :func:`~planner.inputs.tables.read_table` -> :class:`Table` (CSV or
XLSX rows numbered as the user's spreadsheet or editor shows them).
"""

from planner.inputs.numbers import parse_number
from planner.inputs.tables import Table, read_table

__all__ = ["Table", "parse_number", "read_table"]
