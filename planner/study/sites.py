"""The sites table: one row per site, checked cell by cell and rule by rule.

The table is read by :mod:`planner.inputs.tables` (rows numbered as the user's spreadsheet or
editor shows them; repeated or empty headers and rows longer than the header refused),
numbers by :mod:`planner.inputs.numbers`. Every mistake goes to the study's
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
from planner.inputs.tables import Table, read_table
from planner.study.loading import (
    CLIMATE_KINDS,
    Site,
    _exists,
    _shown,
    check_measure_ids,
    row_values,
)
from planner.study.normals import read_normals_table
from planner.study.schema import SITE_COLUMNS, closest

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
        values = row_values(row, columns, source, mistakes)
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
                      mistakes: MistakeList) -> dict:
    """Regions, climates, load files and site positions the sites name, against the
    study's tables; returns the checked rows of each normals table (climate name -> row
    id -> values).

    "Used" is read from the table's cells, so a row with a mistake elsewhere does not
    make its region or climate look unused."""
    from planner.climate.readers import DEPRECATED_IDS

    regions = sorted({r for r in table.column("region") if r})
    climates = sorted({DEPRECATED_IDS.get(c, c) for c in table.column("climate") if c})
    _check_regions(regions, named["regions"], source, mistakes)
    normals = _check_climates(sites, climates, named["climates"], base, sites_path, source,
                              mistakes)
    _check_locations(sites, named["climates"], normals, str(sites_path), mistakes)
    return normals


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
    normals = {}
    for name, options in climates.items():
        where = f"{source}: [climates.{name}]"
        if name not in used:
            hint = closest(name, used) or f"; the sites' climates are {', '.join(used)}"
            mistakes.add(InputError(f"[climates.{name}] is used by no site{hint}; expected a "
                                    "climate named in the sites table's climate column",
                                    source=source))
        kinds = [key for key in CLIMATE_KINDS if key in options]
        if len(kinds) != 1:
            found = " and ".join(f"'{k}'" for k in kinds) or "none of them"
            mistakes.add(InputError(f"[climates.{name}] has {found}; expected exactly one of "
                                    "'file' (a weather file), 'stations' (a folder of weather "
                                    "files) or 'normals' (a table of monthly normals)",
                                    source=source))
            continue
        kind = kinds[0]
        if kind != "file" and len(options) > 1:
            extra = sorted(k for k in options if k != kind)
            mistakes.add(InputError(f"[climates.{name}] with '{kind}' takes no other key; found "
                                    f"{', '.join(extra)}", source=source))
            continue
        path = base / str(options[kind])
        if not _exists(path):
            expected = ("an EPW, TMY3, TMY2 or CSV file" if kind == "file"
                        else f"a {CLIMATE_KINDS[kind]}")
            mistakes.add(InputError(f"[climates.{name}].{kind} = {_shown(options[kind])}: not "
                                    f"found; expected {expected} beside the study", source=source))
            continue
        with mistakes.catch():
            if kind == "stations":
                _check_station_folder(path, name, options[kind], source)
            elif kind == "normals":
                normals[name] = read_normals_table(path)
            else:
                rest = {k: v for k, v in options.items() if k != "file"}
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
    return normals


def _check_station_folder(path: Path, name: str, given, source: str) -> None:
    """A station folder must be a folder with at least one readable weather file."""
    from planner.climate.stations import scan_station_folder

    if not path.is_dir():
        raise InputError(f"[climates.{name}].stations = {_shown(given)} is not a folder; "
                         "expected a folder of weather files", source=source)
    scan_station_folder(path)   # a folder without one readable file fails here


def _check_locations(sites, climates, normals, source: str, mistakes: MistakeList):
    """Coordinates go together; station and normals climates need them for every site."""
    for site in sites:
        def fail(column, message, site=site):
            mistakes.add(InputError(f"{site.where()}, column {column}: {message}", source=source))

        lat, lon = site.latitude_deg, site.longitude_deg
        if (lat is None) != (lon is None):
            fail("longitude_deg" if lon is None else "latitude_deg",
                 "empty while the other coordinate is given; expected both latitude_deg and "
                 "longitude_deg, or neither")
        if site.utc_offset_h is not None and lat is None:
            fail("utc_offset_h", "a UTC offset without coordinates; expected latitude_deg and "
                 "longitude_deg too (the offset places the site's own sun)")
        options = climates.get(site.climate, {})
        kind = next((k for k in ("stations", "normals") if k in options), None)
        if site.normals_id and kind != "normals":
            fail("normals_id", f"{_shown(site.normals_id)} with climate {_shown(site.climate)}, "
                 "which has no normals table; expected a climate of [climates.<name>] with "
                 "normals, or an empty cell")
        if kind and lat is None:
            located = [s.row for s in sites if s.climate == site.climate and s.latitude_deg is not None]
            given = (f" (given on row{'s' if len(located) > 1 else ''} {_rows_text(located)})"
                     if located else "")
            why = ("picks each site's nearest station" if kind == "stations" else
                   "generates each site's year at its own position")
            fail("latitude_deg", f"empty, but climate {_shown(site.climate)} {why}{given}; "
                 "expected latitude_deg and longitude_deg for every site of that climate")
        if kind == "normals" and site.climate in normals:
            row_id = site.normals_id or site.id
            if row_id not in normals[site.climate]:
                table = Path(str(options["normals"])).name
                fail("normals_id" if site.normals_id else "id",
                     f"no row {_shown(row_id)} in the normals table {table} of climate "
                     f"{_shown(site.climate)}{closest(row_id, normals[site.climate])}; expected a "
                     "row whose id is the site's normals_id or, when that is empty, its id")


def _rows_text(rows) -> str:
    shown_rows = ", ".join(str(r) for r in rows[:5])
    return shown_rows + (f" and {len(rows) - 5} more" if len(rows) > 5 else "")
