"""``planner new DIR``: a starter study that validates and runs as it is."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import click

from planner.errors import InputError, OutputError
from planner.fileio import OutputBatch
from planner.study.schema import NAMED_SECTIONS, SECTIONS, SITE_COLUMNS, Field

# Two invented example sites: a river gauge in the mountains and a desert pipeline monitor.
EXAMPLE_SITES = [
    {"id": "gauge-01", "name": "Upper weir gauge", "region": "mountains", "climate": "alpine",
     "enclosure": "cabinet-sun", "load_w": "2.5", "burst_w": "20", "burst_s": "6",
     "burst_every_min": "15", "charging": "pv", "pv_wp": "60", "autonomy_days": "7",
     "system_voltage_v": "12"},
    {"id": "pipe-01", "name": "Valve station monitor", "region": "desert", "climate": "hot-desert",
     "enclosure": "cabinet-sun", "load_w": "4", "charging": "pv", "pv_wp": "80",
     "autonomy_days": "4", "system_voltage_v": "12", "existing_chemistry": "vrla",
     "existing_capacity_wh": "1200", "existing_installed_year": "2024"},
]

# Invented capacity tests of the pack in service at pipe-01 (the starter's field records).
EXAMPLE_TESTS = [
    {"site_id": "pipe-01", "test_date": "2024-03-05", "kind": "acceptance", "duration_h": "10.1",
     "capacity_pct": "99", "start_temp_c": "22", "rate_h": "10", "end_voltage_v_per_cell": "1.80",
     "notes": "commissioning test"},
    {"site_id": "pipe-01", "test_date": "2026-06-18", "kind": "performance", "duration_h": "9.4",
     "capacity_pct": "95", "start_temp_c": "33", "rate_h": "10", "end_voltage_v_per_cell": "1.80",
     "lowest_cell_v": "1.76", "lowest_cell_id": "block 2", "notes": "not corrected on site"},
]
TESTS_FILE = "capacity_tests.csv"

EXAMPLE_REGIONS = {
    "mountains": {"trip_cost": 6000.0, "access_months": (6, 7, 8, 9, 10)},
    "desert": {"trip_cost": 1200.0},
}


@click.command("new")
@click.argument("directory", type=click.Path(file_okay=False, path_type=Path))
@click.option("--force", is_flag=True, help="Overwrite study.toml and sites.csv if they exist.")
def new_command(directory, force):
    """Write a starter study into DIRECTORY: a commented study.toml, a sites.csv
    with every column and two example rows, and capacity_tests.csv with every column of
    the field records and two example tests. It validates and runs as it is.

    \b
    Example:
      planner new my-network && planner plan my-network/study.toml
    """
    study_path, sites_path = directory / "study.toml", directory / "sites.csv"
    tests_path = directory / TESTS_FILE
    for path in (study_path, sites_path, tests_path):
        if path.exists() and not force:
            raise InputError("already exists; expected a new folder (or use --force)",
                             source=str(path))
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(f"could not create the folder: {err.strerror}; expected a folder "
                          "you may write in", source=str(directory)) from None
    with OutputBatch() as batch:  # both files or neither
        for path, text in ((sites_path, starter_sites_csv()), (tests_path, starter_tests_csv()),
                           (study_path, starter_study_toml())):
            batch.add(path, lambda tmp, text=text: Path(tmp).write_text(text, encoding="utf-8"),
                      what="starter study")
        batch.commit()
    click.echo(f"wrote {study_path}, {sites_path} and {tests_path}", err=True)


def _toml_value(spec: Field, value) -> str:
    if spec.kind in ("floats", "strs", "months"):
        return "[" + ", ".join(_scalar(v) for v in value) + "]"
    return _scalar(value)


def _scalar(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, float) and value.is_integer():
        return f"{value:.1f}"
    return str(value)


def _comment(spec: Field) -> str:
    parts = [spec.doc] if spec.doc else []
    if spec.unit:
        parts.append(f"[{spec.unit}]")
    parts.append(f"({spec.expectation()})")
    return "  # " + " ".join(parts)


def sites_guide() -> list[str]:
    """Comment lines naming what the sites table's climate, enclosure and charging
    columns accept (the bundled climates with their one-line descriptions)."""
    from planner.climate import list_bundled

    columns = {spec.name: spec for spec in SITE_COLUMNS}
    out = ["# The sites table (sites.csv), one row per site; its columns are described in",
           "# docs/study-file.md. What three of them accept:",
           "#   climate: a bundled climate, a [climates.<name>] entry (end of this file) or an",
           "#            EPW/TMY3/TMY2/CSV weather file beside this study. Bundled climates:"]
    for name, text in list_bundled():
        out.append(f"#     {name}: {' '.join(text.split())}")
    for column in ("enclosure", "charging"):
        spec = columns[column]
        out.append(f"#   {column}: {', '.join(spec.choices)} (default {spec.default}); {spec.doc}")
    return out + [""]


def starter_study_toml() -> str:
    """A commented study file listing every key with its default."""
    out = ["# Starter study written by `planner new`. Every key is shown with its default;",
           "# delete what you do not need. Costs are illustrative placeholders.", "",
           *sites_guide()]
    for section, specs in SECTIONS.items():
        out.append(f"[{section}]")
        if section == "field_data":
            out += ["# Field records of the packs in service: capacity tests (every column in",
                    f"# {TESTS_FILE}) and an optional battery log (CSV: timestamp, site_id,",
                    "# pack_voltage_v, current_a, battery_temp_c). docs/study-file.md lists the columns."]
        for spec in specs:
            value = "sites.csv" if spec.name == "sites_file" else spec.default
            if spec.name == "capacity_tests_file":
                value = TESTS_FILE
            if value is None:
                out.append(f"# {spec.name} =" + _comment(spec))
                continue
            line = f"{spec.name} = {_toml_value(spec, value)}"
            if spec.name == "name" and section == "study":
                line = 'name = "Starter network"'
            out.append(line + _comment(spec))
        out.append("")
    out.append("# Per-chemistry prices (optional): [prices.<chemistry id>]")
    out.append("[prices.lfp]")
    out.append("price_per_kwh = 450.0" + _comment(NAMED_SECTIONS["prices"][0]))
    out.append("fixed_price = 60.0" + _comment(NAMED_SECTIONS["prices"][1]))
    out.append("price_trend_frac_per_year = 0.0" + _comment(NAMED_SECTIONS["prices"][2]))
    out.append("")
    out.append("# Per-region trip costs and access months (optional): [regions.<region>]")
    for region, values in EXAMPLE_REGIONS.items():
        out.append(f"[regions.{region}]")
        for spec in NAMED_SECTIONS["regions"]:
            if spec.name in values:
                out.append(f"{spec.name} = {_toml_value(spec, values[spec.name])}" + _comment(spec))
        out.append("")
    out.append("# A user climate file (optional): [climates.<name>], then name it in the sites'")
    out.append("# climate column. See docs/climate.md for the options, for example:")
    out.append('# [climates.my-logger]\n# file = "logger.csv"\n# temperature_unit = "C"')
    return "\n".join(out) + "\n"


def starter_tests_csv() -> str:
    """The capacity-test table header with every column and the example tests."""
    from planner.study.schema import TEST_COLUMNS

    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=[s.name for s in TEST_COLUMNS], lineterminator="\n")
    writer.writeheader()
    for row in EXAMPLE_TESTS:
        writer.writerow(row)
    return buffer.getvalue()


def starter_sites_csv() -> str:
    """The sites table header with every column and two example rows."""
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=[s.name for s in SITE_COLUMNS], lineterminator="\n")
    writer.writeheader()
    for row in EXAMPLE_SITES:
        writer.writerow(row)
    return buffer.getvalue()
