"""The sites table: one row per site, checked cell by cell and rule by rule.

The table is read by :mod:`planner.tables` (rows numbered as the user's spreadsheet or
editor shows them; repeated or empty headers and rows longer than the header refused),
numbers by :mod:`planner.numbers`. Every mistake goes to the study's
:class:`~planner.errors.MistakeList`, so a table with ten bad cells gives ten lines in
one run. A row with a bad cell skips the rules that join several columns (they would
only repeat the mistake).
"""

from __future__ import annotations

import functools
from pathlib import Path
from types import MappingProxyType

from planner.errors import InputError, MistakeList
from planner.fileio import check_input_file, read_input_bytes
from planner.study.loading import Site, _exists, _shown, check_measure_ids, parse_field
from planner.study.schema import SITE_COLUMNS, closest
from planner.tables import Table, read_table

#: Columns that describe the pack in service; filled in, they need its chemistry.
EXISTING_PACK_COLUMNS = ("existing_capacity_wh", "existing_installed_year", "existing_soh_frac")


def read_sites_table(path: Path) -> Table:
    """The sites table as text cells (CSV or XLSX)."""
    source = str(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise InputError(f"sites table must be .csv or .xlsx, found '{path.suffix}'", source=source)
    data = read_input_bytes(path, what="the sites table")
    return read_table(data, source=source, kind=suffix[1:], what="the sites table", strict=False)


def _table_hint(table: Table, column: str) -> str:
    """Why a header may look unknown: a ';'-separated CSV, or the table on another sheet."""
    if len(table.columns) == 1 and (";" in column or "\t" in column):
        return "; the header looks separated by ';' or tabs: expected a comma-separated CSV"
    if len(table.sheets) > 1:
        return (f"; the table is read from the first sheet ('{table.sheets[0]}') of "
                f"{', '.join(repr(s) for s in table.sheets)}")
    return ""


def validate_sites(table: Table, mistakes: MistakeList, *, start_year: int | None,
                   chemistries=()) -> list[Site]:
    """Every row as a :class:`~planner.study.loading.Site`; mistakes go to ``mistakes``.

    ``start_year`` (None when the study's own value was bad) and the candidate
    ``chemistries`` feed the rules that compare a row with the study.
    """
    source = table.source
    for problem in table.problems:  # rows longer than the header
        mistakes.add(problem)
    by_name = {s.name: s for s in SITE_COLUMNS}
    for column in table.columns:
        if column not in by_name:
            hint = closest(column, by_name) + _table_hint(table, column)
            mistakes.add(InputError(f"unknown column '{_shown(column)[1:-1]}'{hint}", source=source))
    missing = [spec for spec in SITE_COLUMNS if spec.required and not table.has(spec.name)]
    for spec in missing:
        mistakes.add(InputError(f"missing column '{spec.name}': expected {spec.expectation()}",
                                source=source))
    if len(table) == 0 and not table.problems:
        mistakes.add(InputError("the sites table has no rows: expected one row per site",
                                source=source))
    if missing:
        return []
    # Where each column sits, looked up once: a fleet table has 100,000 rows x 30 columns.
    columns = [(spec, table.index_of(spec.name), spec.required) for spec in SITE_COLUMNS]
    cells_v = _cell_voltages(chemistries)
    sites, seen = [], {}
    for row in table.rows:
        where = row.where()
        count = len(mistakes)
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
        site_id = values["id"]
        if site_id in seen:
            mistakes.add(InputError(f"{where}, column id: duplicate site id '{site_id}' (first "
                                    f"on row {seen[site_id]}); expected unique ids", source=source))
        elif site_id:
            seen[site_id] = row.number
        if len(mistakes) > count:
            continue
        values["name"] = values["name"] or site_id
        values["climate"] = _current_climate_id(values["climate"])
        _check_site_rules(values, where, source, start_year, cells_v, mistakes)
        if len(mistakes) == count:
            sites.append(Site(row=row.number, values=MappingProxyType(values), line=row.line))
    return sites


def _cell_voltages(chemistries) -> dict[str, float]:
    """Nominal cell voltage of each known candidate chemistry."""
    from planner.chemistry import CHEMISTRY_IDS, get_chemistry

    return {c: get_chemistry(c).cell_voltage_v for c in chemistries if c in CHEMISTRY_IDS}


def _current_climate_id(name: str) -> str:
    if name not in _deprecated_ids():
        return name
    from planner.climate.readers import canonical_id

    # The same warning as `planner climate`, once per old id (Python's warning filter).
    return canonical_id(name)


@functools.lru_cache(maxsize=1)
def _deprecated_ids() -> frozenset:
    from planner.climate.readers import DEPRECATED_IDS

    return frozenset(DEPRECATED_IDS)


def _check_site_rules(values, where, source, start_year, cell_voltages, mistakes: MistakeList):
    """Rules that involve more than one column (or a column and the study)."""
    def fail(column, message):
        mistakes.add(InputError(f"{where}, column {column}: {message}", source=source))

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
    if values["thermal_measures"]:
        ids = [x.strip() for x in values["thermal_measures"].replace(",", ";").split(";") if x.strip()]
        try:
            check_measure_ids(ids, f"{where}, column thermal_measures", source)
        except InputError as err:
            mistakes.add(err)
    _check_voltage(values, cell_voltages, fail)
    _check_existing_pack(values, start_year, fail)


def _check_voltage(values, cells, fail):
    """A pack needs at least one whole cell: a system voltage below one cell of every
    candidate chemistry (``cells``: id -> nominal cell voltage) builds nothing (a chemistry
    whose cell alone is above it is left out at the site, with the reason, by
    planner.designs)."""
    volts = values["system_voltage_v"]
    if cells and volts < min(cells.values()):
        listed = ", ".join(f"{c} {v:g} V" for c, v in cells.items())
        fail("system_voltage_v", f"{volts:g} V is below one cell of every candidate chemistry "
                                 f"({listed}); expected at least {min(cells.values()):g} V")


def _check_existing_pack(values, start_year, fail):
    existing = values["existing_chemistry"]
    if not existing and not any(values[c] for c in EXISTING_PACK_COLUMNS):
        return
    from planner.chemistry import CHEMISTRY_IDS, get_chemistry

    filled = [c for c in EXISTING_PACK_COLUMNS if values[c]]
    if not existing:
        if filled:
            fail("existing_chemistry", f"empty while {', '.join(filled)} "
                 f"{'is' if len(filled) == 1 else 'are'} filled in; expected the chemistry of the "
                 f"pack in service ({', '.join(CHEMISTRY_IDS)}), or those columns left blank")
        return
    if existing not in CHEMISTRY_IDS:
        fail("existing_chemistry", f"unknown chemistry '{existing}'"
             f"{closest(existing, CHEMISTRY_IDS)}; expected one of {', '.join(CHEMISTRY_IDS)}")
        return
    if values["existing_capacity_wh"] <= 0:
        fail("existing_capacity_wh", "empty with an existing pack; expected its capacity in Wh")
    if values["existing_installed_year"] <= 0:
        fail("existing_installed_year", "empty with an existing pack; expected the year it was "
                                        "installed")
    elif start_year is not None and values["existing_installed_year"] > start_year:
        fail("existing_installed_year", f"{values['existing_installed_year']} is after the study's "
                                        f"start_year {start_year}; expected an earlier year")
    cell_v = get_chemistry(existing).cell_voltage_v
    if values["system_voltage_v"] < cell_v:
        fail("system_voltage_v", f"{values['system_voltage_v']:g} V is below one {existing} cell "
                                 f"({cell_v:g} V) of the pack in service; expected at least "
                                 f"{cell_v:g} V")


# ---------------------------------------------------------------- files and names


def check_study_files(sites, table: Table, named, base: Path, sites_path: Path, source: str,
                      mistakes: MistakeList) -> None:
    """Regions, climates and load files the sites name, against the study's tables.

    "Used" is read from the table's cells, so a row with a mistake elsewhere does not
    make its region or climate look unused."""
    from planner.climate.readers import DEPRECATED_IDS

    regions = sorted({r for r in table.column("region") if r})
    climates = sorted({DEPRECATED_IDS.get(c, c) for c in table.column("climate") if c})
    _check_regions(regions, named["regions"], source, mistakes)
    _check_climates(sites, climates, named["climates"], base, sites_path, source, mistakes)


def _check_regions(used, regions, source: str, mistakes: MistakeList):
    """A [regions.<name>] table no site uses is a mistake (most often a misspelling): its
    trip costs would silently not apply. Sites of a region without a table use [costs]."""
    for name in regions:
        if name not in used:
            hint = closest(name, used) or f"; the sites' regions are {', '.join(used)}"
            mistakes.add(InputError(f"[regions.{name}] is used by no site{hint}; expected a "
                                    "region named in the sites table's region column",
                                    source=source))


def _check_climates(sites, used, climates, base: Path, sites_path: Path, source: str,
                    mistakes: MistakeList):
    """Every site's climate is bundled, a [climates.<name>] entry or an existing file;
    every [climates.<name>] entry is used, names an existing file and gives only the
    options that file takes (checked like `planner climate` would, before any work)."""
    from planner.climate import list_bundled
    from planner.climate.readers import check_climate_options

    bundled = [name for name, _ in list_bundled()]
    for name, options in climates.items():
        where = f"{source}: [climates.{name}]"
        if name not in used:
            hint = closest(name, used) or f"; the sites' climates are {', '.join(used)}"
            mistakes.add(InputError(f"[climates.{name}] is used by no site{hint}; expected a "
                                    "climate named in the sites table's climate column",
                                    source=source))
        if "file" not in options:
            mistakes.add(InputError(f"[climates.{name}] has no key 'file': expected the climate "
                                    "file's path", source=source))
            continue
        path = base / str(options["file"])
        if not _exists(path):
            mistakes.add(InputError(f"[climates.{name}].file = {_shown(options['file'])}: file not "
                                    "found; expected an EPW, TMY3, TMY2 or CSV file beside the "
                                    "study", source=source))
            continue
        rest = {k: v for k, v in options.items() if k != "file"}
        with mistakes.catch():
            check_climate_options(path, rest, where)
    checked = set()
    for site in sites:
        if site.load_file:
            with mistakes.catch():
                if _exists(base / site.load_file):
                    check_input_file(base / site.load_file, what="an hourly load CSV")
                else:
                    raise InputError(f"{site.where()}, column load_file: {_shown(site.load_file)} "
                                     "not found; expected an hourly load CSV beside the study",
                                     source=str(sites_path))
        name = site.climate
        if name in bundled or name in climates or name in checked:
            continue
        checked.add(name)
        if _exists(base / name):
            with mistakes.catch():
                check_climate_options(base / name, None)
            continue
        mistakes.add(InputError(
            f"{site.where()}, column climate: found {_shown(name)}{closest(name, bundled)}; "
            f"expected a bundled climate ({', '.join(bundled)}), a [climates.<name>] entry or "
            "a climate file", source=str(sites_path)))
