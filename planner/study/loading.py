"""Load and validate a study: the TOML settings file and its sites table.

Everything is checked before any computation, and every mistake found is reported
together (:class:`~planner.errors.MistakeList`): each is one line naming the file, the
key path or the row and column, what was found and what was expected. Numbers go
through the one number parser (:mod:`planner.inputs.numbers`), paths through the one resolver
(:func:`planner.fileio.resolve_path`), tables through :mod:`planner.inputs.tables`.

Paths in a study are relative to the study file's real folder: a study opened through a
symbolic link reads its sites table, climate and load files, and writes its
``[output]`` files, beside the file the link points to, so a study means the same
whatever name it is opened by.
"""

from __future__ import annotations

import os
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

from planner.errors import InputError, MistakeList
from planner.fileio import read_input_bytes, resolve_path
from planner.inputs.numbers import NumberError, parse_number, shown
from planner.study.field_records import FieldData, load_field_data
from planner.study.schema import (
    NAMED_SECTIONS,
    SECTIONS,
    THERMAL_MEASURE_IDS,
    Field,
    closest,
)

ALL_MONTHS = tuple(range(1, 13))
#: What a [climates.<name>] table may point at (exactly one): key -> words for messages.
CLIMATE_KINDS = {"file": "climate file", "stations": "station folder", "normals": "normals table"}


@dataclass(frozen=True)
class Site:
    """One row of the sites table, validated, with defaults filled in."""

    row: int
    values: Mapping[str, Any]
    line: int | None = None   # first line in a text editor, where it differs from the row

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

    def where(self) -> str:
        """``row 6`` as the spreadsheet shows it (``row 6 (line 8)`` after a multi-line cell)."""
        return f"row {self.row}" if self.line in (None, self.row) else \
            f"row {self.row} (line {self.line})"


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
    #: Rows of each normals climate's table: climate name -> row id -> checked values.
    normals: Mapping[str, Mapping[str, Mapping[str, Any]]] = field(
        default_factory=lambda: MappingProxyType({}))
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
            for key, what in CLIMATE_KINDS.items():
                if key in options:
                    files.setdefault(_real(base / str(options[key])), f"{what} of [climates.{name}]")
            if "stations" in options:
                from planner.climate.stations import scan_station_folder

                for station in scan_station_folder(base / str(options["stations"])).stations:
                    files.setdefault(_real(station.path), f"station file of [climates.{name}]")
        for site in self.sites:
            if site.load_file:
                files.setdefault(_real(base / site.load_file), f"load file of site {site.id}")
            if site.climate not in self.climates and _exists(base / site.climate):
                files.setdefault(_real(base / site.climate), f"climate file of site {site.id}")
        return files


def _real(path: Path) -> Path:
    return Path(os.path.realpath(path))


# ---------------------------------------------------------------- value parsing

_MONTH_RANGE = re.compile(r"^\s*([0-9]{1,2})\s*-\s*([0-9]{1,2})\s*$")
_PLAIN_INTEGER = re.compile(r"^[0-9]{1,2}$")


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
        if isinstance(item, str) and not _PLAIN_INTEGER.match(item):  # "1e1" is not October
            raise ValueError
        months.append(parse_number(item, minimum=1, maximum=12, integer=True))
    if not months:
        raise ValueError
    return tuple(sorted(set(months)))


def parse_field(spec: Field, value, *, from_text: bool):
    """Convert one raw value to the field's kind and check its range; ValueError if bad.

    ``from_text``: a sites-table cell (plain decimals, lists separated by ';'); otherwise
    a TOML value of its own type.
    """
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
        return tuple(_number(spec, v) for v in value)
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
    number = _number(spec, value)
    return int(number) if kind == "int" else number


def _number(spec: Field, value) -> float:
    # One parser for every number (planner.inputs.numbers): no exponent in a table cell's text.
    return float(parse_number(value, minimum=spec.minimum, maximum=spec.maximum,
                              exclusive_minimum=spec.exclusive_minimum,
                              integer=spec.kind == "int", exponent=False))


def _shown(value) -> str:
    return shown(value)


def row_values(row, columns, source: str, mistakes: MistakeList) -> dict[str, Any]:
    """One table row's cells parsed against ``columns`` (``(spec, index, required)``:
    the field and where it sits in the row); an empty cell takes the field's default, a
    bad or missing required cell goes to ``mistakes`` with the row the user sees."""
    where = row.where()
    values = {}
    cells, n_cells = row.cells, len(row.cells)
    for spec, index, required in columns:
        cell = cells[index] if index is not None and index < n_cells else ""
        if cell == "":
            if required:
                mistakes.add(InputError(f"{where}, column {spec.name}: empty; expected "
                                        f"{spec.expectation()}", source=source))
            values[spec.name] = spec.default
            continue
        try:
            values[spec.name] = parse_field(spec, cell, from_text=True)
        except (ValueError, TypeError):
            unit = f" [{spec.unit}]" if spec.unit else ""
            mistakes.add(InputError(f"{where}, column {spec.name}: found {_shown(cell)}; "
                                    f"expected {spec.expectation()}{unit}", source=source))
    return values


def _validate_table(table, specs, *, where: str, source: str, mistakes: MistakeList,
                    bad: set) -> dict[str, Any]:
    """Check one TOML table against its field specs; fill defaults.

    Every mistake goes to ``mistakes``; a key that failed gets its default (``None`` if it
    has none) and its ``(where, key)`` goes to ``bad``, so later checks can skip it.
    """
    out = {spec.name: (None if spec.required else spec.default) for spec in specs}
    if not isinstance(table, dict):
        mistakes.add(InputError(f"[{where}] must be a table of keys", source=source))
        bad.update((where, spec.name) for spec in specs)
        return out
    by_name = {s.name: s for s in specs}
    for key in table:
        if key not in by_name:
            mistakes.add(InputError(f"unknown key [{where}].{key}{closest(key, by_name)}",
                                    source=source))
    for spec in specs:
        if spec.name not in table:
            if spec.required:
                mistakes.add(InputError(f"missing key [{where}].{spec.name}: expected "
                                        f"{spec.expectation()}", source=source))
                bad.add((where, spec.name))
            continue
        value = table[spec.name]
        try:
            out[spec.name] = parse_field(spec, value, from_text=False)
        except (ValueError, TypeError):
            bad.add((where, spec.name))
            mistakes.add(InputError(
                f"[{where}].{spec.name} = {_shown(value)}: expected {spec.expectation()}"
                + (f" [{spec.unit}]" if spec.unit else ""), source=source))
    return out


# ---------------------------------------------------------------- study file


def load_study(path) -> Study:
    """Read, validate and return the study at ``path`` (TOML) with its sites table.

    Raises
    ------
    planner.errors.InputError
        One mistake; :class:`planner.errors.InputErrors` (a subclass) for several, each
        on a line of its own.
    """
    source = os.fspath(path) if not isinstance(path, bytes) else os.fsdecode(path)
    real = resolve_path(path, what="a study file (TOML)")
    doc = _read_toml(path, source)
    mistakes, bad = MistakeList(), set()

    known = set(SECTIONS) | set(NAMED_SECTIONS)
    for key in doc:
        if key not in known:
            mistakes.add(InputError(f"unknown section [{key}]{closest(key, known)}", source=source))
    if "study" not in doc:
        mistakes.add(InputError("missing section [study]: expected at least [study].sites_file",
                                source=source))
    settings = {}
    for name, specs in SECTIONS.items():
        if name not in doc and any(spec.required for spec in specs):  # said once, above
            settings[name] = {spec.name: None if spec.required else spec.default for spec in specs}
            continue
        settings[name] = _validate_table(doc.get(name, {}), specs, where=name, source=source,
                                         mistakes=mistakes, bad=bad)
    named = _named_sections(doc, source, mistakes, bad)

    _check_chemistries(settings["candidates"]["chemistries"], named["prices"], source, mistakes)
    _check_rates(settings["study"], bad, source, mistakes)
    if ("thermal", "measures") not in bad:
        with mistakes.catch():
            check_measure_ids(settings["thermal"]["measures"], "[thermal].measures", source)

    from planner.study.sites import check_study_files, read_sites_table, validate_sites

    base = real.parent
    sites, sites_path, normals = (), None, {}
    if settings["study"]["sites_file"]:
        with mistakes.catch():
            sites_path = resolve_path(base / settings["study"]["sites_file"], what="the sites table")
            table = read_sites_table(sites_path)
            start_year = None if ("study", "start_year") in bad else settings["study"]["start_year"]
            chemistries = () if ("candidates", "chemistries") in bad else \
                settings["candidates"]["chemistries"]
            sites = tuple(validate_sites(table, mistakes, start_year=start_year,
                                         chemistries=chemistries))
            if len(table) and all(table.has(c) for c in ("region", "climate")):
                normals = check_study_files(sites, table, named, base, sites_path, source,
                                            mistakes)
    mistakes.raise_if_any()
    # field records are checked against valid sites only: after every other mistake
    field_data = load_field_data(settings, base, sites)
    return Study(
        path=real,
        settings=MappingProxyType({k: MappingProxyType(v) for k, v in settings.items()}),
        prices=MappingProxyType(named["prices"]),
        regions=MappingProxyType(named["regions"]),
        climates=MappingProxyType(named["climates"]),
        sites=sites,
        sites_path=sites_path,
        normals=MappingProxyType(normals),
        field_data=field_data,
    )


def _read_toml(path, source: str) -> dict:
    data = read_input_bytes(path, what="a study file (TOML)")
    try:
        # A byte-order mark, as some Windows editors write, is not part of the TOML.
        text = data.decode("utf-8").removeprefix("\ufeff")
    except UnicodeDecodeError as err:
        raise InputError(f"cannot read the file ({err.__class__.__name__}): expected UTF-8 TOML",
                         source=source) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", source=source) from None
    except RecursionError:
        raise InputError("not valid TOML for a study: arrays or tables nested too deeply",
                         source=source) from None


def _named_sections(doc, source: str, mistakes: MistakeList, bad: set) -> dict:
    """[prices.<chemistry>], [regions.<name>], [climates.<name>]: each sub-table checked."""
    named = {}
    for name, specs in NAMED_SECTIONS.items():
        table = doc.get(name, {})
        named[name] = {}
        if not isinstance(table, dict):
            mistakes.add(InputError(f"[{name}] must hold sub-tables like [{name}.<name>]",
                                    source=source))
            continue
        for sub, sub_table in table.items():
            where = f"{name}.{sub}"
            if specs is None:
                if not isinstance(sub_table, dict):
                    mistakes.add(InputError(f"[{where}] must be a table of keys", source=source))
                    continue
                named[name][sub] = MappingProxyType(dict(sub_table))
            else:
                named[name][sub] = MappingProxyType(_validate_table(
                    sub_table, specs, where=where, source=source, mistakes=mistakes, bad=bad))
    return named


def _check_chemistries(chosen, prices, source, mistakes: MistakeList):
    from planner.chemistry import CHEMISTRY_IDS

    for chem in chosen:
        if chem not in CHEMISTRY_IDS:
            mistakes.add(InputError(
                f"[candidates].chemistries: unknown chemistry '{chem}'{closest(chem, CHEMISTRY_IDS)};"
                f" expected some of {', '.join(CHEMISTRY_IDS)}", source=source))
    if len(set(chosen)) != len(chosen):
        mistakes.add(InputError("[candidates].chemistries lists a chemistry twice", source=source))
    for chem in prices:
        if chem not in CHEMISTRY_IDS:
            mistakes.add(InputError(
                f"[prices.{chem}]: unknown chemistry{closest(chem, CHEMISTRY_IDS)};"
                f" expected one of {', '.join(CHEMISTRY_IDS)}", source=source))


def _check_rates(study: Mapping, bad: set, source: str, mistakes: MistakeList):
    """The real rate a nominal rate and inflation give must lie where present values keep
    their meaning (:data:`planner.economics.MIN_REAL_RATE_FRAC` says why)."""
    from planner.economics import MAX_REAL_RATE_FRAC, MIN_REAL_RATE_FRAC, real_rate

    nominal, inflation = study["nominal_rate_frac"], study["inflation_frac"]
    if nominal is None or {("study", "nominal_rate_frac"), ("study", "inflation_frac")} & bad:
        return
    real = float(real_rate(nominal, inflation))
    if not MIN_REAL_RATE_FRAC <= real <= MAX_REAL_RATE_FRAC:
        mistakes.add(InputError(
            f"[study].nominal_rate_frac = {nominal:g} with inflation_frac = {inflation:g} gives a "
            f"real discount rate of {real:+.1%} a year; expected a real rate from "
            f"{MIN_REAL_RATE_FRAC:+.1%} to {MAX_REAL_RATE_FRAC:+.0%} (below it a pack's residual "
            "value at the horizon could be worth more today than its price)", source=source))


def check_measure_ids(ids, where: str, source: str) -> tuple[str, ...]:
    """Thermal measure ids of ``[thermal].measures`` or a site's column: known ids, or
    ``none`` alone."""
    ids = tuple(ids)
    if "none" in ids:
        if len(ids) > 1:
            raise InputError(f"{where}: 'none' together with {', '.join(i for i in ids if i != 'none')};"
                             " expected 'none' alone (no measure) or some of "
                             f"{', '.join(THERMAL_MEASURE_IDS)}", source=source)
        return ()
    for i in ids:
        if i not in THERMAL_MEASURE_IDS:
            raise InputError(f"{where}: unknown thermal measure {_shown(i)}"
                             f"{closest(i, THERMAL_MEASURE_IDS)}; expected 'none' or some of "
                             f"{', '.join(THERMAL_MEASURE_IDS)}", source=source)
    return ids


def _exists(path: Path) -> bool:
    """Whether anything exists at ``path``; a name the OS cannot even look up is not there."""
    try:
        os.stat(path)
    except (OSError, ValueError):
        return False
    return True


__all__ = ["Site", "Study", "load_study", "parse_months", "parse_field", "NumberError"]
