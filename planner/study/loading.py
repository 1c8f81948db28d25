"""Load and validate a study: the TOML settings file and its sites table.

Everything is checked before any computation. Each problem is an
:class:`~planner.errors.InputError` naming the file, the key path or the row and
column, what was found and what was expected.
"""

from __future__ import annotations

import io
import math
import os
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from planner.errors import InputError
from planner.fileio import check_input_file, read_input_bytes
from planner.study.field_records import FieldData, load_field_data
from planner.study.schema import (
    NAMED_SECTIONS,
    SECTIONS,
    SITE_COLUMNS,
    Field,
    closest,
)

ALL_MONTHS = tuple(range(1, 13))


@dataclass(frozen=True)
class Site:
    """One row of the sites table, validated, with defaults filled in."""

    row: int
    values: Mapping[str, Any]

    def __getattr__(self, name):
        # "values" itself is not there yet while a copy is being unpickled (worker processes)
        if name == "values":
            raise AttributeError(name)
        try:
            return self.values[name]
        except KeyError:
            raise AttributeError(name) from None

    @property
    def has_existing_pack(self) -> bool:
        return bool(self.values["existing_chemistry"])


@dataclass(frozen=True)
class Study:
    """A validated study: settings by section, user-named sub-tables and the sites."""

    path: Path
    settings: Mapping[str, Mapping[str, Any]]
    prices: Mapping[str, Mapping[str, Any]]
    regions: Mapping[str, Mapping[str, Any]]
    climates: Mapping[str, Mapping[str, Any]]
    sites: tuple[Site, ...]
    sites_path: Path
    # capacity tests and battery logs of the packs in service ([field_data]); None: none
    field_data: FieldData | None = None

    @property
    def name(self) -> str:
        return self.settings["study"]["name"] or self.path.stem

    @property
    def stem(self) -> str:
        return self.path.stem

    @property
    def discount_rate_frac(self) -> float:
        s = self.settings["study"]
        if s["nominal_rate_frac"] is not None:
            return (1 + s["nominal_rate_frac"]) / (1 + s["inflation_frac"]) - 1
        return s["discount_rate_frac"]

    def region(self, name: str) -> Mapping[str, Any]:
        """Region settings with the study-wide cost defaults filled in."""
        costs = self.settings["costs"]
        given = self.regions.get(name, {})
        trip = given.get("trip_cost")
        visit = given.get("site_visit_cost")
        return {
            "trip_cost": costs["trip_cost"] if trip is None else trip,
            "site_visit_cost": costs["site_visit_cost"] if visit is None else visit,
            "access_months": tuple(given.get("access_months", ALL_MONTHS)),
        }

    def access_months(self, site: Site) -> tuple[int, ...]:
        return site.access_months or self.region(site.region)["access_months"]

    def input_files(self) -> dict[Path, str]:
        """Every file the study reads, with words saying what it is (for output checks)."""
        base = self.path.parent
        files = {self.path: "the study file", self.sites_path: "the study's sites table"}
        if self.field_data is not None:
            for path, what in ((self.field_data.tests_path, "the study's capacity-test table"),
                               (self.field_data.logs_path, "the study's battery log")):
                if path is not None:
                    files.setdefault(path, what)
        for name, options in self.climates.items():
            files.setdefault((base / str(options["file"])).resolve(), f"climate file of [climates.{name}]")
        for site in self.sites:
            if site.load_file:
                files.setdefault((base / site.load_file).resolve(), f"load file of site {site.id}")
            if site.climate not in self.climates and _exists(base / site.climate):
                files.setdefault((base / site.climate).resolve(), f"climate file of site {site.id}")
        return files


# ---------------------------------------------------------------- value parsing

_MONTH_RANGE = re.compile(r"^\s*([0-9]{1,2})\s*-\s*([0-9]{1,2})\s*$")
_PLAIN_INTEGER = re.compile(r"^[0-9]{1,2}$")
#: The one number syntax of a sites-table cell: optional sign, digits, optional decimals
#: ("2", "-1.5", ".5", "60."). No exponent, digit separators, inf or nan.
_PLAIN_DECIMAL = re.compile(r"^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)$")


def parse_months(text) -> tuple[int, ...]:
    """Months from ``6-9``, ``11-3`` (wraps), ``5;6;7``, ``5 6 7``, ``all`` or a list."""
    if isinstance(text, (list, tuple)):
        items = list(text)
    else:
        text = str(text).strip().lower()
        if text in ("", "all"):
            return ALL_MONTHS if text == "all" else ()
        match = _MONTH_RANGE.match(text)
        if match:
            first, last = int(match.group(1)), int(match.group(2))
            if not (1 <= first <= 12 and 1 <= last <= 12):
                raise ValueError
            span = (last - first) % 12
            return tuple(sorted((first - 1 + k) % 12 + 1 for k in range(span + 1)))
        items = [t for t in re.split(r"[;\s]+", text) if t]
    months = []
    for item in items:
        if isinstance(item, str):
            if not _PLAIN_INTEGER.match(item):  # "1e1" is not October
                raise ValueError
            item = int(item)
        if isinstance(item, bool) or float(item) != int(float(item)):
            raise ValueError
        months.append(int(float(item)))
    if not months or any(not 1 <= m <= 12 for m in months):
        raise ValueError
    return tuple(sorted(set(months)))


def _parse(spec: Field, value, *, from_text: bool):
    """Convert one raw value to the field's kind and check its range; ValueError if bad."""
    kind = spec.kind
    if kind == "months":
        return parse_months(value)
    if kind == "floats" and from_text:
        value = [item for item in re.split(r"[;\s]+", str(value).strip()) if item]
    if kind in ("floats", "strs"):
        if not isinstance(value, (list, tuple)) or not value:
            raise ValueError
        if kind == "strs":
            if not all(isinstance(v, str) and v for v in value):
                raise ValueError
            return tuple(value)
        return tuple(_check_range(spec, _number(v, from_text)) for v in value)
    if kind == "str":
        if from_text:
            value = str(value).strip()
        if not isinstance(value, str):
            raise ValueError
        if spec.choices and value not in spec.choices:
            raise ValueError
        return value
    if kind == "bool":
        if from_text:
            lowered = str(value).strip().lower()
            if lowered in ("true", "yes", "1"):
                return True
            if lowered in ("false", "no", "0"):
                return False
            raise ValueError
        if not isinstance(value, bool):
            raise ValueError
        return value
    number = _number(value, from_text)
    if kind == "int":
        if number != int(number):
            raise ValueError
        number = int(number)
    return _check_range(spec, number)


def _number(value, from_text: bool) -> float:
    if isinstance(value, bool):
        raise ValueError
    if from_text:
        text = str(value).strip()
        if not _PLAIN_DECIMAL.match(text):  # "1_0" is not 10, "1e1" not 10
            raise ValueError
        value = float(text)
    if not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ValueError
    return float(value)


def _check_range(spec: Field, number: float) -> float:
    if spec.minimum is not None:
        if number < spec.minimum or (spec.exclusive_minimum and number == spec.minimum):
            raise ValueError
    if spec.maximum is not None and number > spec.maximum:
        raise ValueError
    return number


def _shown(value) -> str:
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= 40 else text[:37] + "..."


def _validate_table(table, specs, *, where: str, source: str) -> dict[str, Any]:
    """Check one TOML table against its field specs; fill defaults."""
    if not isinstance(table, dict):
        raise InputError(f"[{where}] must be a table of keys", source=source)
    by_name = {s.name: s for s in specs}
    for key in table:
        if key not in by_name:
            raise InputError(
                f"unknown key [{where}].{key}{closest(key, by_name)}", source=source
            )
    out = {}
    for spec in specs:
        if spec.name not in table:
            if spec.required:
                raise InputError(f"missing key [{where}].{spec.name}: expected {spec.expectation()}",
                                 source=source)
            out[spec.name] = spec.default
            continue
        value = table[spec.name]
        try:
            out[spec.name] = _parse(spec, value, from_text=False)
        except (ValueError, TypeError):
            raise InputError(
                f"[{where}].{spec.name} = {_shown(value)}: expected {spec.expectation()}"
                + (f" [{spec.unit}]" if spec.unit else ""),
                source=source,
            ) from None
    return out


# ---------------------------------------------------------------- study file


def load_study(path) -> Study:
    """Read, validate and return the study at ``path`` (TOML) with its sites table."""
    path = Path(path)
    source = str(path)
    data = read_input_bytes(path, what="a study file (TOML)")
    try:
        # A byte-order mark, as some Windows editors write, is not part of the TOML.
        text = data.decode("utf-8").removeprefix("\ufeff")
    except UnicodeDecodeError as err:
        raise InputError(f"cannot read the file ({err.__class__.__name__}): expected UTF-8 TOML",
                         source=source) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", source=source) from None
    except RecursionError:
        raise InputError("not valid TOML for a study: arrays or tables nested too deeply",
                         source=source) from None

    known = set(SECTIONS) | set(NAMED_SECTIONS)
    for key in doc:
        if key not in known:
            raise InputError(f"unknown section [{key}]{closest(key, known)}", source=source)
    if "study" not in doc:
        raise InputError("missing section [study]: expected at least [study].sites_file",
                         source=source)

    settings = {
        name: _validate_table(doc.get(name, {}), specs, where=name, source=source)
        for name, specs in SECTIONS.items()
    }
    named = {}
    for name, specs in NAMED_SECTIONS.items():
        table = doc.get(name, {})
        if not isinstance(table, dict):
            raise InputError(f"[{name}] must hold sub-tables like [{name}.<name>]", source=source)
        named[name] = {}
        for sub, sub_table in table.items():
            where = f"{name}.{sub}"
            if specs is None:
                if not isinstance(sub_table, dict):
                    raise InputError(f"[{where}] must be a table of keys", source=source)
                named[name][sub] = MappingProxyType(dict(sub_table))
            else:
                named[name][sub] = MappingProxyType(
                    _validate_table(sub_table, specs, where=where, source=source))

    _check_chemistries(settings["candidates"]["chemistries"], named["prices"], source)

    base = path.parent
    sites_path = (base / settings["study"]["sites_file"]).resolve()
    raw = read_sites_table(sites_path)
    sites = tuple(_validate_sites(raw, sites_path, settings, named))
    _check_regions(sites, named["regions"], source)
    _check_climates(sites, named["climates"], base, sites_path, source)
    field_data = load_field_data(settings, base, sites)
    return Study(
        path=path.resolve(),
        settings=MappingProxyType({k: MappingProxyType(v) for k, v in settings.items()}),
        prices=MappingProxyType(named["prices"]),
        regions=MappingProxyType(named["regions"]),
        climates=MappingProxyType(named["climates"]),
        sites=sites,
        sites_path=sites_path,
        field_data=field_data,
    )


def _check_chemistries(chosen, prices, source):
    from planner.chemistry import CHEMISTRY_IDS

    for chem in chosen:
        if chem not in CHEMISTRY_IDS:
            raise InputError(
                f"[candidates].chemistries: unknown chemistry '{chem}'{closest(chem, CHEMISTRY_IDS)};"
                f" expected some of {', '.join(CHEMISTRY_IDS)}", source=source)
    if len(set(chosen)) != len(chosen):
        raise InputError("[candidates].chemistries lists a chemistry twice", source=source)
    for chem in prices:
        if chem not in CHEMISTRY_IDS:
            raise InputError(
                f"[prices.{chem}]: unknown chemistry{closest(chem, CHEMISTRY_IDS)};"
                f" expected one of {', '.join(CHEMISTRY_IDS)}", source=source)


def _exists(path: Path) -> bool:
    """Whether anything exists at ``path``; a name the OS cannot even look up is not there."""
    try:
        os.stat(path)
    except (OSError, ValueError):
        return False
    return True


def _check_regions(sites, regions, source: str):
    """A [regions.<name>] table no site uses is a mistake (most often a misspelling): its
    trip costs would silently not apply. Sites of a region without a table use [costs]."""
    used = sorted({site.region for site in sites})
    for name in regions:
        if name not in used:
            hint = closest(name, used) or f"; the sites' regions are {', '.join(used)}"
            raise InputError(f"[regions.{name}] is used by no site{hint}; expected a region "
                             "named in the sites table's region column", source=source)


def _check_climates(sites, climates, base: Path, sites_path: Path, source: str):
    """Every site's climate must be bundled, a [climates.<name>] entry or an existing file."""
    from planner.climate import list_bundled

    bundled = [name for name, _ in list_bundled()]
    for name, options in climates.items():
        if "file" not in options:
            raise InputError(f"[climates.{name}] has no key 'file': expected the climate file's path",
                             source=source)
        if _exists(base / str(options["file"])):
            check_input_file(base / str(options["file"]), what="a climate file")
        else:
            raise InputError(f"[climates.{name}].file = {_shown(options['file'])}: file not found; "
                             "expected an EPW, TMY3, TMY2 or CSV file beside the study", source=source)
    for site in sites:
        if site.load_file and _exists(base / site.load_file):
            check_input_file(base / site.load_file, what="an hourly load CSV")
        elif site.load_file:
            raise InputError(f"row {site.row}, column load_file: {_shown(site.load_file)} not found; "
                             "expected an hourly load CSV beside the study", source=str(sites_path))
        name = site.climate
        if name in bundled or name in climates:
            continue
        if _exists(base / name):
            check_input_file(base / name, what="a climate file")
            continue
        raise InputError(
            f"row {site.row}, column climate: found {_shown(name)}{closest(name, bundled)}; expected a "
            f"bundled climate ({', '.join(bundled)}), a [climates.<name>] entry or a climate file",
            source=str(sites_path))


# ---------------------------------------------------------------- sites table


def read_sites_table(path: Path) -> pd.DataFrame:
    """The sites table as text cells (CSV or XLSX), headers stripped."""
    source = str(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise InputError(f"sites table must be .csv or .xlsx, found '{path.suffix}'", source=source)
    data = io.BytesIO(read_input_bytes(path, what="the sites table"))
    try:
        if suffix == ".csv":
            frame = pd.read_csv(data, dtype=str, keep_default_na=False, skipinitialspace=True,
                                comment=None, encoding="utf-8-sig")
        else:
            frame = _read_first_sheet(data, source)
    except pd.errors.EmptyDataError:
        raise InputError("the sites table is empty: expected a header row and one row per site",
                         source=source) from None
    except Exception as err:  # noqa: BLE001 - any parser failure is a user-file problem
        message = str(err).splitlines()[0] if str(err) else err.__class__.__name__
        raise InputError(f"cannot read the sites table: {message}", source=source) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame


def _read_first_sheet(data, source: str) -> pd.DataFrame:
    """The first sheet as text; numbers written in plain decimals (never ``1e-05``)."""
    book = pd.ExcelFile(data, engine="openpyxl")
    frame = pd.read_excel(book, sheet_name=book.sheet_names[0], dtype=object,
                          keep_default_na=False)
    if frame.columns.empty and len(book.sheet_names) > 1:
        raise InputError(f"the first sheet ('{book.sheet_names[0]}') is empty; expected the "
                         "sites table on the first sheet", source=source)
    frame.attrs["sheets"] = list(book.sheet_names)
    return frame.apply(lambda column: column.map(_cell_text))


def _cell_text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return np.format_float_positional(value, trim="-") if math.isfinite(value) else str(value)
    return str(value)


def _table_hint(frame: pd.DataFrame, column: str) -> str:
    """Why a header may look unknown: a ';'-separated CSV, or the table on another sheet."""
    if len(frame.columns) == 1 and (";" in column or "\t" in column):
        return "; the header looks separated by ';' or tabs: expected a comma-separated CSV"
    sheets = frame.attrs.get("sheets") or []
    if len(sheets) > 1:
        return (f"; the table is read from the first sheet ('{sheets[0]}') of "
                f"{', '.join(repr(s) for s in sheets)}")
    return ""


def _validate_sites(frame: pd.DataFrame, path: Path, settings, named) -> list[Site]:
    source = str(path)
    by_name = {s.name: s for s in SITE_COLUMNS}
    for column in frame.columns:
        if column not in by_name:
            hint = closest(column, by_name) + _table_hint(frame, column)
            raise InputError(f"unknown column '{_shown(column)[1:-1]}'{hint}", source=source)
    for spec in SITE_COLUMNS:
        if spec.required and spec.name not in frame.columns:
            raise InputError(f"missing column '{spec.name}': expected {spec.expectation()}",
                             source=source)
    if frame.empty:
        raise InputError("the sites table has no rows: expected one row per site", source=source)

    sites, seen = [], {}
    for index, record in enumerate(frame.to_dict("records")):
        row = index + 2  # spreadsheet row number: the header is row 1
        values = {}
        for spec in SITE_COLUMNS:
            cell = str(record.get(spec.name, "")).strip()
            if cell == "":
                if spec.required:
                    raise InputError(f"row {row}, column {spec.name}: empty; expected "
                                     f"{spec.expectation()}", source=source)
                values[spec.name] = spec.default
                continue
            try:
                values[spec.name] = _parse(spec, cell, from_text=True)
            except (ValueError, TypeError, OverflowError):
                unit = f" [{spec.unit}]" if spec.unit else ""
                raise InputError(f"row {row}, column {spec.name}: found {_shown(cell)}; expected "
                                 f"{spec.expectation()}{unit}", source=source) from None
        site_id = values["id"]
        if site_id in seen:
            raise InputError(f"row {row}, column id: duplicate site id '{site_id}' "
                             f"(first on row {seen[site_id]}); expected unique ids", source=source)
        seen[site_id] = row
        values["name"] = values["name"] or site_id
        _check_site_rules(values, row, source, settings["study"]["start_year"])
        sites.append(Site(row=row, values=MappingProxyType(values)))
    return sites


def _check_site_rules(values, row, source, start_year):
    """Rules that involve more than one column."""
    def fail(column, message):
        raise InputError(f"row {row}, column {column}: {message}", source=source)

    if values["charging"] == "pv" and values["pv_wp"] <= 0:
        fail("pv_wp", "empty or 0 with charging = pv; expected the PV array size in Wp (> 0)")
    bursts = [values["burst_w"] > 0, values["burst_s"] > 0, values["burst_every_min"] > 0]
    if any(bursts) and not all(bursts):
        fail("burst_w", "burst_w, burst_s and burst_every_min go together; expected all three > 0")
    if all(bursts) and values["burst_s"] > values["burst_every_min"] * 60:
        fail("burst_s", "a burst longer than the time between bursts; expected burst_s <= "
                        "60 x burst_every_min")
    for column, count in (("load_schedule_w", 24), ("load_monthly_factors", 12)):
        if values[column] and len(values[column]) != count:
            fail(column, f"{len(values[column])} values; expected {count} separated by ';'")
    existing = values["existing_chemistry"]
    if existing:
        from planner.chemistry import CHEMISTRY_IDS

        if existing not in CHEMISTRY_IDS:
            fail("existing_chemistry", f"unknown chemistry '{existing}'"
                 f"{closest(existing, CHEMISTRY_IDS)}; expected one of {', '.join(CHEMISTRY_IDS)}")
        if values["existing_capacity_wh"] <= 0:
            fail("existing_capacity_wh", "empty with an existing pack; expected its capacity in Wh")
        if values["existing_installed_year"] <= 0:
            fail("existing_installed_year", "empty with an existing pack; expected the year it was "
                                            "installed")
        if values["existing_installed_year"] > start_year:
            fail("existing_installed_year", f"{values['existing_installed_year']} is after the study's "
                                            f"start_year {start_year}; expected an earlier year")
