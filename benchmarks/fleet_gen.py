"""A seeded invented fleet of N sites, written as a study file and sites table.

The mix: 8 bundled climates, 5 enclosures (four kinds, plus a sunny cabinet with a
battery heater), PV / mains / no charging, about 20 % of sites with a pack installed
today, one region per about 40 sites, 5 chemistries x 5 oversize factors, 20 years,
sensitivity on. Every number here is invented for benchmarks and tests only.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

CLIMATES = ("alpine", "hot-desert", "humid-continental", "mediterranean", "temperate-maritime",
            "subarctic-continental", "tmy3-greensboro-nc", "tropical-humid")
COLD = ("alpine", "subarctic-continental")
ENCLOSURES = ("cabinet-sun", "cabinet-shade", "vault", "shelter", "cabinet-sun+heater")
COLUMNS = ("id", "region", "climate", "enclosure", "load_w", "burst_w", "burst_s",
           "burst_every_min", "charging", "pv_wp", "outages_per_year", "outage_mean_h",
           "autonomy_days", "system_voltage_v", "heater_setpoint_c", "existing_chemistry",
           "existing_capacity_wh", "existing_installed_year")


def site_rows(n_sites: int, seed: int = 11) -> list[dict]:
    """The sites table of an invented fleet of ``n_sites`` (one dict per row)."""
    rng = np.random.default_rng(seed)
    n_regions = max(1, round(n_sites / 40))
    rows = []
    for i in range(n_sites):
        enclosure = ENCLOSURES[rng.integers(len(ENCLOSURES))]
        charging = ("pv", "pv", "pv", "mains", "none")[rng.integers(5)]
        climate = CLIMATES[rng.integers(len(CLIMATES))]
        if enclosure == "shelter":
            charging = "mains"  # a heated, cooled shelter is never left on a battery alone
        if charging == "none":
            enclosure = "vault"  # a logger on primary cells, buried
        elif climate in COLD and enclosure.startswith("cabinet"):
            enclosure = "cabinet-sun+heater"  # cabinets in cold climates keep a heater
        load_w = float(np.round(rng.uniform(0.5, 15.0), 2))
        if charging == "none":
            load_w = float(np.round(rng.uniform(0.01, 0.09), 3))
        volts = 24.0 if load_w > 8.0 else 12.0
        row = dict(
            id=f"S{i:05d}", region=f"R{rng.integers(n_regions):03d}",
            climate=climate,
            enclosure=enclosure.split("+")[0], load_w=load_w,
            burst_w="", burst_s="", burst_every_min="", charging=charging,
            pv_wp="", outages_per_year="", outage_mean_h="",
            autonomy_days=float(rng.choice([3, 5, 7, 10])) if charging != "none" else 30.0,
            system_voltage_v=volts, heater_setpoint_c=2.0 if enclosure.endswith("heater") else "",
            existing_chemistry="", existing_capacity_wh="", existing_installed_year="")
        if rng.random() < 0.5 and charging != "none":
            row.update(burst_w=float(rng.choice([10, 20, 40])), burst_s=8.0, burst_every_min=15.0)
        if charging == "pv":
            row["pv_wp"] = float(np.round(load_w * rng.uniform(15.0, 30.0) + 20.0))
        elif charging == "mains":
            row.update(outages_per_year=float(rng.integers(2, 12)),
                       outage_mean_h=float(rng.choice([4, 8, 24])))
        if charging != "none" and rng.random() < 0.2:
            chem = ("vrla", "lfp")[rng.integers(2)]
            row.update(existing_chemistry=chem,
                       existing_capacity_wh=float(np.round(load_w * 24 * row["autonomy_days"] * 1.5)),
                       existing_installed_year=int(rng.integers(2018, 2026)))
        rows.append(row)
    return rows


STUDY_TOML = """\
# Invented benchmark fleet of {n} sites (benchmarks/fleet_gen.py, seed {seed}).
[study]
name = "Invented fleet of {n} sites"
sites_file = "sites.csv"
horizon_years = 20
discount_rate_frac = 0.03
currency = "EUR"
start_year = 2027

[candidates]
chemistries = ["vrla", "lfp", "nmc", "lto", "lisocl2"]
oversize_factors = [1.0, 1.25, 1.5, 2.0, 3.0]
{design_space}
[costs]
trip_cost = 2000.0
site_visit_cost = 150.0
labour_hours_per_replacement = 3.0
labour_rate_per_h = 85.0
disposal_per_kg = 1.5
downtime_cost_per_day = 250.0
illustrative = true

[solver]
time_limit_s = 60.0
gap_rel_frac = 0.005

[output]
sensitivity = {sensitivity}
"""


# What switches off the design space (thermal measures, design changes at a replacement),
# to measure what it costs (docs/scaling.md).
WITHOUT_DESIGN_SPACE = 'design_changes = false\n\n[thermal]\nmeasures = ["none"]\n'


def write_fleet(folder: Path, n_sites: int, *, seed: int = 11, sensitivity: bool = True,
                design_space: bool = True) -> Path:
    """Write ``study.toml`` and ``sites.csv`` of an invented fleet; returns the study path.

    ``design_space=False`` switches off thermal measures and design changes."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    with open(folder / "sites.csv", "w", newline="", encoding="utf-8") as f:
        writer = csv.DictWriter(f, fieldnames=COLUMNS)
        writer.writeheader()
        writer.writerows(site_rows(n_sites, seed))
    study = folder / "study.toml"
    study.write_text(STUDY_TOML.format(n=n_sites, seed=seed,
                                       sensitivity="true" if sensitivity else "false",
                                       design_space="" if design_space else WITHOUT_DESIGN_SPACE),
                     encoding="utf-8")
    return study
