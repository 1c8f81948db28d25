"""A table of monthly temperature normals ([climates.<name>] normals = "file").

One row per site (its id) or per named normal (a name sites give in their
``normals_id`` column); columns in :data:`planner.study.schema.NORMALS_COLUMNS`. Rows
are numbered as the user's spreadsheet or editor shows them (:mod:`planner.inputs.tables`),
numbers go through the one number parser, and every mistake of the table is reported
together.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from types import MappingProxyType
from typing import Any

from planner.errors import InputError, MistakeList
from planner.fileio import read_input_bytes
from planner.inputs.tables import read_table
from planner.study.loading import _shown, row_values
from planner.study.schema import MONTHS, NORMALS_COLUMNS, closest


def read_normals_table(path: Path) -> dict[str, Mapping[str, Any]]:
    """The checked rows of a monthly-normals table (CSV or XLSX): row id -> values,
    defaults filled in, with ``row`` the row number the user sees."""
    source = str(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise InputError(f"normals table must be .csv or .xlsx, found '{path.suffix}'",
                         source=source)
    table = read_table(read_input_bytes(path, what="the normals table"), source=source,
                       kind=suffix[1:], what="the normals table")
    mistakes = MistakeList()
    by_name = {spec.name: spec for spec in NORMALS_COLUMNS}
    for column in table.columns:
        if column not in by_name:
            mistakes.add(InputError(f"unknown column '{_shown(column)[1:-1]}'"
                                    f"{closest(column, by_name)}", source=source))
    for spec in NORMALS_COLUMNS:
        if spec.required and not table.has(spec.name):
            mistakes.add(InputError(f"missing column '{spec.name}': expected "
                                    f"{spec.expectation()}", source=source))
    if len(table) == 0:
        mistakes.add(InputError("the normals table has no rows: expected one row per site or "
                                "named normal", source=source))
    mistakes.raise_if_any()
    out: dict[str, Mapping[str, Any]] = {}
    columns = [(spec, table.index_of(spec.name), spec.required) for spec in NORMALS_COLUMNS]
    for row in table.rows:
        count = len(mistakes)
        values = row_values(row, columns, source, mistakes)
        if len(mistakes) > count:
            continue
        where = row.where()
        _check_row(values, where, source, mistakes)
        if values["id"] in out:
            mistakes.add(InputError(f"{where}, column id: duplicate id '{values['id']}'; "
                                    "expected one row per site or named normal", source=source))
            continue
        out[values["id"]] = MappingProxyType(dict(values, row=row.number))
    mistakes.raise_if_any()
    return out


def _check_row(values, where: str, source: str, mistakes: MistakeList) -> None:
    """Each month's minimum below its maximum; irradiation all twelve months or none, and
    not together with a cloudiness class."""
    for m in MONTHS:
        low, high = values[f"tmin_{m}_c"], values[f"tmax_{m}_c"]
        if low >= high:
            mistakes.add(InputError(f"{where}, column tmin_{m}_c: {low:g} °C is not below "
                                    f"tmax_{m}_c {high:g} °C; expected the mean daily minimum "
                                    "below the mean daily maximum", source=source))
    given = [m for m in MONTHS if values[f"ghi_{m}_kwh_m2_day"] is not None]
    if given and len(given) < 12:
        missing = next(m for m in MONTHS if m not in given)
        mistakes.add(InputError(f"{where}, column ghi_{missing}_kwh_m2_day: empty while other "
                                "months are given; expected all 12 months of irradiation or "
                                "none", source=source))
    if given and values["cloudiness"]:
        mistakes.add(InputError(f"{where}, column cloudiness: {_shown(values['cloudiness'])} "
                                "with monthly irradiation; expected one of the two",
                                source=source))
