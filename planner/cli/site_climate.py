"""``planner climate --study S --site ID``: one site's climate as the plan resolves it."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import click
import numpy as np

from planner.cli.terminal import emit_json
from planner.errors import InputError

MONTHS = "Jan Feb Mar Apr May Jun Jul Aug Sep Oct Nov Dec".split()


def monthly_table(model) -> dict:
    """Per month: mean daily minimum and maximum and mean of the air, mean daily global
    horizontal irradiation, and the battery's mean temperature (12 values each)."""
    from planner.climate.normals import daily_extremes, monthly_mean_of_days

    year = model.year
    high, low = daily_extremes(year.temp_air_c)
    day_mean = year.temp_air_c.reshape(365, 24).mean(axis=1)
    irradiation = year.ghi_w_m2.reshape(365, 24).sum(axis=1) / 1000.0
    battery = model.temp_battery_c.reshape(365, 24).mean(axis=1)

    def rounded(values, digits):
        return [round(float(v), digits) for v in monthly_mean_of_days(values)]

    return {"air_min_c": rounded(low, 2), "air_max_c": rounded(high, 2),
            "air_mean_c": rounded(day_mean, 2), "ghi_kwh_m2_day": rounded(irradiation, 3),
            "battery_mean_c": rounded(battery, 2)}


def show_site_climate(study_path, site_id, *, as_json: bool, csv_path, writer, json_out=None) -> None:
    from planner.site.model import model_sites
    from planner.study.loading import load_study

    study = load_study(study_path)
    site = next((s for s in study.sites if s.id == site_id), None)
    if site is None:
        from planner.study.schema import closest
        raise InputError(f"no site '{site_id}'{closest(site_id, [s.id for s in study.sites])}; "
                         "expected a site id of the sites table", source=str(study.sites_path))
    model = model_sites(dataclasses.replace(study, sites=(site,)))[0]
    described = model.site_climate.to_dict() if model.site_climate else {}
    table = monthly_table(model)
    if csv_path:
        from planner.thermal.battery import BatteryThermal

        writer(Path(csv_path), model.year, BatteryThermal(model.temp_battery_c, model.heater_power_w,
                                                          model.hvac_power_w, model.enclosure,
                                                          np.zeros_like(model.temp_battery_c)))
    if as_json or json_out:
        text = json.dumps({"site": site.id, "climate": model.year.name,
                           "source": model.year.source, "enclosure": site.enclosure,
                           "site_climate": described, "monthly": table,
                           **model.temperatures.to_dict()}, indent=2)
        if emit_json(text, as_json=as_json, json_out=json_out, what="climate JSON"):
            return
    click.echo("\n".join(_lines(site, model, described, table)))


def _lines(site, model, d, table) -> list[str]:
    from planner.cli.climate import position_text

    year = model.year
    kind = d.get("kind")
    if kind == "station":
        what = f"nearest station {d['source']}, {d['station_distance_km']:,.0f} km away"
    elif kind == "normals":
        what = f"monthly normals {d['source']}, generated at the site's position"
    else:
        what = f"{'weather file' if kind == 'file' else 'bundled climate'} {d.get('source')}"
    shift = d.get("altitude_shift_k") or 0.0
    lines = [
        f"Site      {site.id} {site.name} (region {site.region})",
        f"Climate   {what}",
        f"Position  {position_text(year.latitude_deg, year.longitude_deg, 4)} "
        f"(from the {d.get('position_from', 'climate')}); UTC{year.utc_offset_h:+g} "
        f"(from the {d.get('utc_offset_from', 'climate')})",
    ]
    if d.get("altitude_m") is not None:
        lines.append(f"Altitude  {d['altitude_m']:,.0f} m; climate at "
                     f"{d.get('reference_altitude_m') or 0:,.0f} m: air temperature {shift:+.2f} K")
    lines.append(f"Source    {year.source}")
    for text in d.get("warnings") or []:
        lines.append(f"WARNING   {text}")
    lines += ["", f"Enclosure {site.enclosure}: battery mean {model.temperatures.battery_mean_c:.1f} "
              f"°C, P1 {model.temperatures.battery_p1_c:.1f} °C, P99 "
              f"{model.temperatures.battery_p99_c:.1f} °C", "",
              f"{'Monthly':22s}" + " ".join(f"{m:>6s}" for m in MONTHS)]
    for key, label, fmt in (("air_min_c", "air daily min [°C]", "6.1f"),
                            ("air_max_c", "air daily max [°C]", "6.1f"),
                            ("air_mean_c", "air mean [°C]", "6.1f"),
                            ("ghi_kwh_m2_day", "GHI [kWh/m²/day]", "6.2f"),
                            ("battery_mean_c", "battery mean [°C]", "6.1f")):
        lines.append(f"  {label:20s}" + " ".join(format(v, fmt) for v in table[key]))
    return lines
