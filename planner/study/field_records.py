"""Field records of the packs in service: the capacity-test table and the battery log.

Both are checked against the study before any computation, in the study's usual form
(one line naming the file, the row as an editor shows it and the column, what was found
and what was expected). Dates count from the study, never from the clock: a record on
or after 1 January of ``start_year`` is an error, so a plan stays reproducible.

A record of a pack replaced since (a test whose ``tested_pack_installed_year`` is
earlier than the site's pack in service, log samples from before that pack's
installation year) is skipped with a warning; a test of a site with no pack in service
likewise. The columns are in :mod:`planner.study.schema` (``TEST_COLUMNS``, ``LOG_COLUMNS``).
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

import numpy as np
import pandas as pd

from planner.errors import InputError
from planner.fileio import read_input_bytes
from planner.inputs.numbers import shown
from planner.inputs.tables import Table, read_table
from planner.study.schema import LOG_COLUMNS, TEST_COLUMNS, Field, closest

#: A test may report at most this share of its pack's rated capacity.
MAX_CAPACITY_FRAC = 1.5
_DATE = re.compile(r"^(\d{4})-(\d{2})-(\d{2})(?:[ T]00:00(?::00)?)?$")


@dataclass(frozen=True)
class CapacityTest:
    """One checked row of the capacity-test table (units as in ``TEST_COLUMNS``)."""

    row: int
    site_id: str
    test_date: dt.date
    kind: str
    duration_h: float
    capacity_ah: float | None
    capacity_pct: float | None
    start_temp_c: float | None
    corrected_to_25c: bool
    rate_h: float | None
    discharge_current_a: float | None
    discharge_power_w: float | None
    end_voltage_v_per_cell: float | None
    stopped_early: bool
    lowest_cell_v: float | None
    lowest_cell_id: str
    tested_pack_installed_year: int | None
    notes: str

    @property
    def censored(self) -> bool:
        """The test ended before its end voltage: capacity at least what was delivered."""
        return self.kind == "partial" or self.stopped_early


@dataclass(frozen=True)
class SiteLog:
    """One site's logged samples, in time order; ``time_h`` counts hours from 1 January
    of the study's start year (negative: before the study)."""

    site_id: str
    first_row: int
    time_h: np.ndarray
    pack_voltage_v: np.ndarray
    current_a: np.ndarray
    battery_temp_c: np.ndarray


@dataclass(frozen=True)
class FieldData:
    """The study's field records: capacity tests, logs by site id, and the warnings of
    rows skipped (packs replaced since, sites with no pack in service)."""

    tests_path: Path | None = None
    logs_path: Path | None = None
    tests: tuple[CapacityTest, ...] = ()
    logs: Mapping[str, SiteLog] = field(default_factory=lambda: MappingProxyType({}))
    skipped: tuple[str, ...] = ()

    @property
    def empty(self) -> bool:
        return not self.tests and not self.logs

    def tests_of(self, site_id: str) -> list[CapacityTest]:
        return [t for t in self.tests if t.site_id == site_id]


def study_epoch(start_year: int) -> dt.date:
    """Day 0 of the study: 1 January of its start year."""
    return dt.date(int(start_year), 1, 1)


def years_between(earlier: dt.date, later: dt.date) -> float:
    """Years from ``earlier`` to ``later`` (days / 365.25)."""
    return (later - earlier).days / 365.25


# ---------------------------------------------------------------- reading tables


def read_records_table(path: Path, *, what: str, csv_only: bool = False) -> Table:
    """A CSV (or XLSX) table of records through the planner's one table reader
    (:mod:`planner.inputs.tables`: rows numbered as an editor or spreadsheet shows them,
    blank rows skipped but counted, headers checked)."""
    source = str(path)
    suffix = path.suffix.lower()
    allowed = (".csv",) if csv_only else (".csv", ".xlsx")
    if suffix not in allowed:
        raise InputError(f"{what} must be {' or '.join(allowed)}, found '{path.suffix}'", source=source)
    return read_table(read_input_bytes(path, what=what), source=source, kind=suffix[1:], what=what)


def _check_columns(table: Table, specs: tuple[Field, ...], what: str) -> None:
    by_name = {s.name: s for s in specs}
    for column in table.columns:
        if column not in by_name:
            raise InputError(f"unknown column '{column}'{closest(column, by_name)}", source=table.source)
    for spec in specs:
        if spec.required and not table.has(spec.name):
            raise InputError(f"missing column '{spec.name}': expected {spec.expectation()}",
                             source=table.source)
    if len(table) == 0:
        raise InputError(f"{what} has no rows: expected one row per record", source=table.source)


def _parse_date(text: str) -> dt.date:
    match = _DATE.match(text.strip())
    if not match:
        raise ValueError
    return dt.date(int(match.group(1)), int(match.group(2)), int(match.group(3)))


def _cell(spec: Field, text: str, where: str, source: str):
    """One cell parsed by the study's own rules (:func:`planner.study.loading.parse_field`,
    the planner's one number parser)."""
    from planner.study.loading import parse_field

    if text == "":
        if spec.required:
            raise InputError(f"{where}, column {spec.name}: empty; expected {spec.expectation()}",
                             source=source)
        return spec.default
    try:
        if spec.kind == "date":
            return _parse_date(text)
        return parse_field(spec, text, from_text=True)
    except (ValueError, TypeError, OverflowError):
        unit = f" [{spec.unit}]" if spec.unit else ""
        raise InputError(f"{where}, column {spec.name}: found {shown(text)}; expected "
                         f"{spec.expectation()}{unit}", source=source) from None


# ---------------------------------------------------------------- capacity tests


def read_capacity_tests(path: Path, sites, start_year: int) -> tuple[list[CapacityTest], list[str]]:
    """Checked capacity tests of ``path`` and the warnings of rows skipped.

    ``sites`` are the study's site rows (``Site``), ``start_year`` its first year.
    """
    table = read_records_table(path, what="the capacity-test table")
    source = table.source
    _check_columns(table, TEST_COLUMNS, "the capacity-test table")
    by_id = {s.id: s for s in sites}
    epoch = study_epoch(start_year)
    tests, skipped = [], []
    for row in table.rows:
        where = row.where()
        values = {spec.name: _cell(spec, table.cell(row, spec.name), where, source)
                  for spec in TEST_COLUMNS}
        test = CapacityTest(row=row.number, **values)
        site = by_id.get(test.site_id)
        if site is None:
            raise InputError(f"{where}, column site_id: unknown site '{test.site_id}'"
                             f"{closest(test.site_id, by_id)}; expected an id of the sites table",
                             source=source)
        why = _check_test(test, site, epoch, where, source)
        if why:
            skipped.append(f"{path.name} {where}: {why}; row skipped")
            continue
        tests.append(test)
    return tests, skipped


def _check_test(test: CapacityTest, site, epoch: dt.date, where: str, source: str) -> str:
    """Raise for an impossible row; return why a possible one is skipped ('' to keep)."""
    def fail(column, message):
        raise InputError(f"{where}, column {column}: {message}", source=source)

    if test.test_date >= epoch:
        fail("test_date", f"{test.test_date.isoformat()} is not before the study's start "
                          f"({epoch.isoformat()}); expected an earlier date")
    if test.capacity_ah is None and test.capacity_pct is None:
        fail("capacity_ah", "empty, and capacity_pct too; expected the capacity delivered in "
                            "one of them")
    if test.start_temp_c is None and not test.corrected_to_25c:
        fail("start_temp_c", "empty for a figure not corrected to 25 °C; expected the battery "
                             "temperature at the start (or corrected_to_25c = yes)")
    if not site.has_existing_pack:
        return f"site {site.id} has no pack in service in the sites table (existing_chemistry blank)"
    installed = int(site.existing_installed_year)
    tested = test.tested_pack_installed_year
    if tested is not None and tested < installed:
        return (f"it tested the pack installed in {tested}, replaced since by the pack of "
                f"{installed} (existing_installed_year)")
    if tested is not None and tested > installed:
        fail("tested_pack_installed_year", f"{tested} is after the installation of the pack in "
                                           f"service ({installed}); expected {installed} or earlier")
    if test.test_date < dt.date(installed, 1, 1):
        fail("test_date", f"{test.test_date.isoformat()} is before the pack in service was "
                          f"installed ({installed}); expected a later date, or the tested pack's "
                          "installation year in tested_pack_installed_year")
    rated_ah = site.existing_capacity_wh / site.system_voltage_v
    if test.capacity_ah is not None and test.capacity_ah > MAX_CAPACITY_FRAC * rated_ah:
        fail("capacity_ah", f"{test.capacity_ah:g} Ah is above {MAX_CAPACITY_FRAC:.0%} of the pack's "
                            f"rated {rated_ah:.4g} Ah (existing_capacity_wh / system_voltage_v); "
                            "expected at most that")
    return ""


# ---------------------------------------------------------------- battery logs


def read_battery_log(path: Path, sites, start_year: int) -> tuple[dict[str, SiteLog], list[str]]:
    """Checked battery log of ``path`` by site id, and the warnings of samples skipped."""
    table = read_records_table(path, what="the battery log", csv_only=True)
    source = table.source
    _check_columns(table, LOG_COLUMNS, "the battery log")
    rows = table.rows
    stamps = table.column("timestamp")
    for spec in LOG_COLUMNS:
        for row, text in zip(rows, table.column(spec.name)):
            if text == "":
                raise InputError(f"{row.where()}, column {spec.name}: empty; expected "
                                 f"{spec.expectation()}", source=source)
            break  # the first row only here: the number columns check every cell below
    epoch = pd.Timestamp(study_epoch(start_year))
    hours = _timestamps_h(stamps, rows, epoch, source)
    numbers = {c.name: _numbers(table, c) for c in LOG_COLUMNS if c.kind == "float"}
    ids = np.array(table.column("site_id"), dtype=object)
    by_id = {s.id: s for s in sites}
    logs, skipped = {}, []
    for site_id in pd.unique(ids):
        sel = np.flatnonzero(ids == site_id)
        site = by_id.get(site_id)
        if site is None:
            where = rows[sel[0]].where() if site_id else rows[sel[0]].where()
            found = f"unknown site '{site_id}'{closest(site_id, by_id)}" if site_id else "empty"
            raise InputError(f"{where}, column site_id: {found}; expected an id of the sites table",
                             source=source)
        t = hours[sel]
        step = np.diff(t)
        if (step <= 0).any():
            bad = int(np.argmax(step <= 0)) + 1
            what = "repeats the time of" if step[bad - 1] == 0 else "is earlier than"
            raise InputError(f"{rows[sel[bad]].where()}, column timestamp: {stamps[sel[bad]]} "
                             f"{what} {rows[sel[bad - 1]].where()} of site {site_id}; expected the "
                             "site's samples in time order, each time once", source=source)
        if not site.has_existing_pack:
            skipped.append(f"{path.name}: site {site_id} has no pack in service; its samples skipped")
            continue
        installed_h = (pd.Timestamp(dt.date(int(site.existing_installed_year), 1, 1)) - epoch) \
            / pd.Timedelta(hours=1)
        keep = t >= installed_h
        if not keep.all():
            skipped.append(f"{path.name}: {int((~keep).sum())} samples of site {site_id} are older "
                           f"than its pack in service ({int(site.existing_installed_year)}); skipped")
        sel = sel[keep]
        if sel.size:
            logs[site_id] = SiteLog(site_id, int(rows[sel[0]].number), hours[sel],
                                    numbers["pack_voltage_v"][sel], numbers["current_a"][sel],
                                    numbers["battery_temp_c"][sel])
    return logs, skipped


def _timestamps_h(column: list[str], rows, epoch: pd.Timestamp, source: str) -> np.ndarray:
    """Hours from ``epoch`` of every timestamp; checked form and before the study."""
    text = pd.Series(column, dtype=object)
    norm = text.str.replace("T", " ", n=1, regex=False)
    norm = norm.where(norm.str.len() != 16, norm + ":00")
    parsed = pd.to_datetime(norm, format="%Y-%m-%d %H:%M:%S", errors="coerce")
    bad = parsed.isna().to_numpy()
    if bad.any():
        k = int(np.argmax(bad))
        found = shown(column[k]) if column[k] else "empty"
        raise InputError(f"{rows[k].where()}, column timestamp: found {found}; expected "
                         "a date and time YYYY-MM-DD HH:MM or YYYY-MM-DD HH:MM:SS", source=source)
    hours = ((parsed - epoch) / pd.Timedelta(hours=1)).to_numpy(dtype=float)
    late = hours >= 0
    if late.any():
        k = int(np.argmax(late))
        raise InputError(f"{rows[k].where()}, column timestamp: {column[k]} is not before the "
                         f"study's start ({epoch.date().isoformat()}); expected an earlier time",
                         source=source)
    return hours


def _numbers(table: Table, spec: Field) -> np.ndarray:
    """A column of plain decimals (the planner's one number parser), range-checked."""
    unit = f" [{spec.unit}]" if spec.unit else ""
    values = table.numbers(spec.name, what=spec.expectation() + unit, exponent=False,
                           allow_blank=False)
    ok = np.ones(values.size, dtype=bool)
    if spec.minimum is not None:
        ok &= values >= spec.minimum
    if spec.maximum is not None:
        ok &= values <= spec.maximum
    if not ok.all():
        k = int(np.argmax(~ok))
        raise InputError(f"{table.rows[k].where()}, column {spec.name}: found "
                         f"{shown(table.cell(table.rows[k], spec.name))}; expected "
                         f"{spec.expectation()}{unit}", source=table.source)
    return values


def load_field_data(settings, base: Path, sites) -> FieldData | None:
    """The study's field records ([field_data]), or None when it names no file."""
    section = settings.get("field_data", {})
    tests_name, logs_name = section.get("capacity_tests_file", ""), section.get("battery_log_file", "")
    if not tests_name and not logs_name:
        return None
    start_year = settings["study"]["start_year"]
    tests, logs, skipped = [], {}, []
    tests_path = logs_path = None
    if tests_name:
        tests_path = (base / tests_name).resolve()
        tests, skipped_tests = read_capacity_tests(tests_path, sites, start_year)
        skipped += skipped_tests
    if logs_name:
        logs_path = (base / logs_name).resolve()
        logs, skipped_logs = read_battery_log(logs_path, sites, start_year)
        skipped += skipped_logs
    return FieldData(tests_path=tests_path, logs_path=logs_path, tests=tuple(tests),
                     logs=MappingProxyType(logs), skipped=tuple(skipped))
