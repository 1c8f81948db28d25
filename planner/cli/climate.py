"""``planner climate``: look at a site's typical year and its battery temperature."""

from __future__ import annotations

import json
import os
from pathlib import Path

import click

from planner.cli.params import Number
from planner.cli.terminal import emit_json
from planner.errors import InputError, OutputError


def _enclosure_choices():
    # The ids are fixed by the thermal model; listed here so --help shows them
    # without importing pvlib.
    return ("cabinet-sun", "cabinet-shade", "vault", "shelter")


@click.command("climate", context_settings={"help_option_names": ["-h", "--help"]})
@click.argument("source", required=False)
@click.option("--enclosure", "enclosure", default="cabinet-sun", show_default=True,
              type=click.Choice(_enclosure_choices()), help="Enclosure kind around the battery.")
@click.option("--warming-k", "warming_k", default=0.0, show_default=True,
              type=Number(minimum=-20.0, maximum=20.0),
              help="Kelvin added to every hourly air temperature.")
@click.option("--heater-setpoint-c", "heater_setpoint_c", default=None,
              type=Number(minimum=-40.0, maximum=40.0),
              help="Battery heater thermostat setpoint, °C (default: no heater).")
@click.option("--csv", "csv_path", default=None, type=click.Path(dir_okay=False),
              help="Write the hourly series (air, irradiance, battery, heater, HVAC) to this CSV.")
@click.option("--json", "as_json", is_flag=True, help="Print the summary as JSON on stdout.")
@click.option("--json-out", "json_out", type=str, default=None, metavar="PATH",
              help="Write the summary as JSON to PATH ('-' for standard output), as in "
                   "'planner plan --json-out'.")
@click.option("--option", "option_pairs", multiple=True, metavar="KEY=VALUE",
              help="A declaration for a plain CSV file, e.g. temperature_unit=C (repeat).")
@click.option("--list", "list_only", is_flag=True, help="List the bundled climates and exit.")
@click.option("--study", "study_path", default=None, type=click.Path(dir_okay=False),
              help="A study file: with --site, show that site's climate as the plan resolves it.")
@click.option("--site", "site_id", default=None, metavar="ID",
              help="Site id of --study: its station or normals, position, shift and month table.")
def climate_command(source, enclosure, warming_k, heater_setpoint_c, csv_path, as_json,
                    json_out, option_pairs, list_only, study_path, site_id):
    """Show the typical year at SOURCE and the battery temperature in an enclosure.

    SOURCE is a bundled climate name (see --list) or an EPW, TMY3, TMY2 or CSV
    file. A plain CSV file needs its declarations (see docs/climate.md): as
    '# key = value' lines at its top (the CSV written by --csv carries them) or as
    repeated --option KEY=VALUE, which take precedence.

    With --study and --site instead of SOURCE: one site's climate as the plan resolves
    it (its nearest station and the distance, or its monthly normals; its position, UTC
    offset and altitude shift; a table of monthly values) in the site's own enclosure.

    \b
    Examples:
      planner climate --list
      planner climate hot-desert --enclosure cabinet-sun
      planner climate alpine --enclosure vault --warming-k 2 --json
      planner climate alpine --csv output/alpine-hourly.csv
      planner climate output/alpine-hourly.csv --enclosure vault
      planner climate output/alpine-hourly.csv --option name=alpine-copy --option altitude_m=2100
      planner climate --study scenarios/corvale.toml --site UV-01
    """
    from planner.climate import list_bundled, load_climate

    if study_path or site_id:
        from planner.cli.site_climate import show_site_climate

        if source or not (study_path and site_id):
            raise InputError("--study and --site go together, without SOURCE; expected e.g. "
                             "'planner climate --study study.toml --site S-01'", source="climate")
        show_site_climate(study_path, site_id, as_json=as_json, csv_path=csv_path,
                          writer=_write_csv, json_out=json_out)
        return
    if list_only:
        for name, text in list_bundled():
            click.echo(f"{name:24s} {text}")
        return
    if not source:
        raise InputError("missing SOURCE; expected a bundled climate name (see "
                         "'planner climate --list') or a weather file", source="climate")
    from planner.climate.summary import summarize_temperatures
    from planner.fileio import same_file
    from planner.thermal.battery import battery_temperature

    if csv_path and os.path.isfile(source) and same_file(csv_path, source):
        raise InputError(f"--csv {csv_path} is the weather file read; expected another file "
                         "for the hourly series", source="climate")

    year = load_climate(source, warming_k=warming_k, options=_parse_options(option_pairs))
    thermal = battery_temperature(year, enclosure, heater_setpoint_c=heater_setpoint_c)
    summary = summarize_temperatures(year.temp_air_c, thermal.temp_battery_c)
    if csv_path:
        _write_csv(Path(csv_path), year, thermal)
    data = summary.to_dict()
    if as_json or json_out:
        full = {"climate": year.name, "source": year.source, "enclosure": enclosure,
                "warming_k": warming_k, "latitude_deg": year.latitude_deg,
                "longitude_deg": year.longitude_deg, "altitude_m": year.altitude_m,
                "heater_energy_kwh": round(float(thermal.heater_power_w.sum()) / 1000, 3),
                "hvac_energy_kwh": round(float(thermal.hvac_power_w.sum()) / 1000, 3), **data}
        text = json.dumps(full, indent=2, sort_keys=False)
        if emit_json(text, as_json=as_json, json_out=json_out, what="climate JSON"):
            return
    _print_summary(year, enclosure, warming_k, thermal, data)


def _parse_options(pairs) -> dict | None:
    options = {}
    for pair in pairs:
        key, sep, value = pair.partition("=")
        if not sep or not key.strip():
            raise InputError(f"--option '{pair}' is not KEY=VALUE; expected e.g. "
                             "temperature_unit=C", source="climate")
        # kept as text: the declaration checks read numbers with the one parser
        options[key.strip()] = value.strip()
    return options or None


def position_text(latitude_deg: float, longitude_deg: float, decimals: int = 2) -> str:
    """A position in hemisphere letters, never a signed 'E': '35.10 N, 111.70 W'."""
    lat = f"{abs(latitude_deg):.{decimals}f} {'S' if latitude_deg < 0 else 'N'}"
    lon = f"{abs(longitude_deg):.{decimals}f} {'W' if longitude_deg < 0 else 'E'}"
    return f"{lat}, {lon}"


def _print_summary(year, enclosure, warming_k, thermal, s):
    months = "Jan Feb Mar Apr May Jun Jul Aug Sep Oct Nov Dec".split()
    lines = [
        f"Climate   {year.name}: {year.source}",
        f"Location  {position_text(year.latitude_deg, year.longitude_deg)}, {year.altitude_m:.0f} m, "
        f"UTC{year.utc_offset_h:+g}",
        f"Enclosure {enclosure} (time constant {thermal.enclosure.tau_h:.1f} h)"
        + (f", warming {warming_k:+g} K" if warming_k else ""),
        "",
        f"{'':22s}{'air':>8s}{'battery':>10s}",
        f"{'mean [°C]':22s}{s['air_mean_c']:8.1f}{s['battery_mean_c']:10.1f}",
        f"{'P1 [°C]':22s}{s['air_p1_c']:8.1f}{s['battery_p1_c']:10.1f}",
        f"{'P99 [°C]':22s}{s['air_p99_c']:8.1f}{s['battery_p99_c']:10.1f}",
        "",
        "Battery hours  >35: {hours_above_35c}  >45: {hours_above_45c}  >55: {hours_above_55c}"
        "  <0: {hours_below_0c}  <-20: {hours_below_minus20c}".format(**s),
        f"Arrhenius-effective battery temperature: {s['effective_temp_c']:.1f} °C "
        f"(Ea = {s['activation_energy_j_mol'] / 1000:g} kJ/mol)",
        f"Coldest month: {months[s['coldest_month'] - 1]}   hottest month: "
        f"{months[s['hottest_month'] - 1]}",
        f"Heater energy: {thermal.heater_power_w.sum() / 1000:.1f} kWh/yr   "
        f"HVAC energy: {thermal.hvac_power_w.sum() / 1000:.1f} kWh/yr",
        "",
        "Monthly mean [°C]    " + " ".join(f"{m:>5s}" for m in months),
        "  air               " + " ".join(f"{v:5.1f}" for v in s["air_monthly_mean_c"]),
        "  battery           " + " ".join(f"{v:5.1f}" for v in s["battery_monthly_mean_c"]),
    ]
    click.echo("\n".join(lines))


def csv_declarations(year) -> str:
    """The ``# key = value`` lines that let the plain-CSV reader read the hourly CSV back
    with no option (docs/climate.md): unit, timestamp convention, UTC offset, position
    and the columns written below."""
    declared = {
        "name": year.name, "temperature_unit": "C", "timestamp_marks": "start",
        "utc_offset_h": f"{year.utc_offset_h:g}", "latitude_deg": f"{year.latitude_deg:.6g}",
        "longitude_deg": f"{year.longitude_deg:.6g}", "altitude_m": f"{year.altitude_m:g}",
        "time_column": "time_start_local", "temperature_column": "temp_air_c",
        "ghi_column": "ghi_w_m2", "dni_column": "dni_w_m2", "dhi_column": "dhi_w_m2",
        "wind_column": "wind_speed_m_s"}
    # one line each; a name cannot break the line it sits on
    lines = [f"# {k} = {' '.join(str(v).split())}" for k, v in declared.items()]
    return "# planner climate hourly series (declarations for 'planner climate FILE')\n" + \
        "\n".join(lines) + "\n"


def _write_csv(path: Path, year, thermal) -> None:
    import pandas as pd

    from planner.fileio import atomic_path

    frame = pd.DataFrame({
        "time_start_local": year.times().strftime("%Y-%m-%dT%H:%M%z"),
        "temp_air_c": year.temp_air_c, "ghi_w_m2": year.ghi_w_m2, "dni_w_m2": year.dni_w_m2,
        "dhi_w_m2": year.dhi_w_m2, "wind_speed_m_s": year.wind_speed_m_s,
        "temp_battery_c": thermal.temp_battery_c, "heater_power_w": thermal.heater_power_w,
        "hvac_power_w": thermal.hvac_power_w})
    try:
        with atomic_path(path) as tmp:
            Path(tmp).write_text(csv_declarations(year), encoding="utf-8")
            frame.to_csv(tmp, mode="a", index=False, float_format="%.3f")
    except OutputError:
        raise
    except OSError as err:
        raise OutputError(f"could not write the hourly CSV ({err.strerror}); expected a "
                          "writable folder", source=str(path)) from None
