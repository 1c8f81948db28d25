"""A seeded invented fleet of N sites, written as a study file and sites table.

The mix: 8 bundled climates, 5 enclosures (four kinds, plus a sunny cabinet with a
battery heater), PV / mains / no charging, about 20 % of sites with a pack installed
today, one region per about 40 sites, 5 chemistries x 5 oversize factors, 20 years,
sensitivity on. Every number here is invented for benchmarks and tests only.

Two variants give every site its own place (``write_fleet(..., climates=...)``):
``"stations"`` writes a folder of invented station files (EPW, and every tenth one the
project's plain CSV) spread around the bundled climates' places, and puts each site near
a station of its climate with its own coordinates and altitude; ``"normals"`` gives each
site its own row of monthly normals (the climate's monthly values, perturbed) and its own
coordinates. The sites are otherwise the same rows as the bundled fleet.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from planner.climate import load_climate

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


MONTHS = ("jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec")
DAYS_IN_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
EPW_HEADER = ("DESIGN CONDITIONS,0", "TYPICAL/EXTREME PERIODS,0", "GROUND TEMPERATURES,0",
              "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0", "COMMENTS 1,invented benchmark station",
              "COMMENTS 2,invented", "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31")


def write_epw(path: Path, year, *, latitude_deg, longitude_deg, altitude_m, temp_air_c=None,
              name: str = "Invented") -> Path:
    """Write a typical year as an EPW file (EnergyPlus weather format; hour 1 = 00:00-01:00)."""
    times = year.times()
    temp = year.temp_air_c if temp_air_c is None else temp_air_c
    cols = {
        "year": np.full(8760, 2023), "month": times.month, "day": times.day,
        "hour": times.hour + 1, "minute": np.full(8760, 60), "flags": np.full(8760, "?"),
        "temp": np.round(temp, 1), "dew": np.round(temp - 5.0, 1), "rh": np.full(8760, 60),
        "p": np.full(8760, 101325), "etr": np.zeros(8760, int), "etrn": np.zeros(8760, int),
        "ir": np.full(8760, 300), "ghi": np.round(year.ghi_w_m2).astype(int),
        "dni": np.round(year.dni_w_m2).astype(int), "dhi": np.round(year.dhi_w_m2).astype(int)}
    rest = "0,0,0,0,180,{wind},5,5,20,77777,9,999999999,10,0.1,0,88,0.2,0,1"
    first = (f"LOCATION,{name},XX,XXX,invented,000000,{latitude_deg:.4f},{longitude_deg:.4f},"
             f"{year.utc_offset_h:.1f},{altitude_m:.1f}")
    rows = [",".join(str(v[i]) for v in cols.values()) + "," + rest.format(
        wind=f"{year.wind_speed_m_s[i]:.1f}") for i in range(8760)]
    Path(path).write_text("\n".join((first, *EPW_HEADER, *rows)) + "\n", encoding="utf-8")
    return Path(path)


def write_plain_csv(path: Path, year, *, latitude_deg, longitude_deg, altitude_m, temp_air_c) -> Path:
    """Write a typical year as the project's plain CSV with its '# key = value' declarations."""
    lines = ["# invented benchmark station", "# temperature_unit = C", "# timestamp_marks = start",
             f"# utc_offset_h = {year.utc_offset_h:g}", f"# latitude_deg = {latitude_deg:.4f}",
             f"# longitude_deg = {longitude_deg:.4f}", f"# altitude_m = {altitude_m:.1f}",
             "# ghi_column = ghi_w_m2", "# dni_column = dni_w_m2", "# dhi_column = dhi_w_m2",
             "# wind_column = wind_speed_m_s", "time,temp_air_c,ghi_w_m2,dni_w_m2,dhi_w_m2,wind_speed_m_s"]
    stamps = year.times().strftime("%Y-%m-%dT%H:%M")
    lines += [f"{t},{a:.2f},{g:.1f},{d:.1f},{h:.1f},{w:.2f}" for t, a, g, d, h, w in
              zip(stamps, temp_air_c, year.ghi_w_m2, year.dni_w_m2, year.dhi_w_m2,
                  year.wind_speed_m_s)]
    Path(path).write_text("\n".join(lines) + "\n", encoding="utf-8")
    return Path(path)


def station_places(n_stations: int, seed: int = 5) -> list[dict]:
    """Invented stations around the bundled climates' places: climate, position, altitude."""
    rng = np.random.default_rng(seed)
    out = []
    for i in range(n_stations):
        climate = CLIMATES[i % len(CLIMATES)]
        base = load_climate(climate)
        out.append(dict(
            climate=climate, latitude_deg=float(np.clip(base.latitude_deg + rng.uniform(-2, 2), -80, 80)),
            longitude_deg=float(base.longitude_deg + rng.uniform(-3, 3)),
            altitude_m=float(max(0.0, base.altitude_m + rng.uniform(-300, 300))),
            offset_k=float(rng.normal(0.0, 0.7))))
    return out


def write_station_folder(folder: Path, n_stations: int = 50, seed: int = 5) -> list[dict]:
    """A folder of invented station files (EPW; every tenth the plain CSV); returns the places."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    places = station_places(n_stations, seed)
    for i, place in enumerate(places):
        base = load_climate(place["climate"])
        # the base climate moved to the station's altitude, plus a station's own offset
        temp = base.temp_air_c - 0.0065 * (place["altitude_m"] - base.altitude_m) + place["offset_k"]
        args = dict(latitude_deg=place["latitude_deg"], longitude_deg=place["longitude_deg"],
                    altitude_m=place["altitude_m"], temp_air_c=temp)
        if i % 10 == 9:
            write_plain_csv(folder / f"station-{i:03d}.csv", base, **args)
        else:
            write_epw(folder / f"station-{i:03d}.epw", base, **args)
    return places


def monthly_normals(year) -> dict:
    """Monthly means of daily minimum and maximum air temperature and of daily GHI of a year."""
    days = year.temp_air_c.reshape(365, 24)
    ghi = year.ghi_w_m2.reshape(365, 24).sum(axis=1) / 1000.0
    starts = np.r_[0, np.cumsum(DAYS_IN_MONTH)[:-1]]
    mean = lambda values: np.add.reduceat(values, starts) / DAYS_IN_MONTH  # noqa: E731
    return {"tmin": mean(days.min(axis=1)), "tmax": mean(days.max(axis=1)), "ghi": mean(ghi)}


def locate_rows(rows: list[dict], climates: str, seed: int = 11, stations=None) -> list[dict]:
    """Give every row its own place: near a station of its climate, or near its climate."""
    rng = np.random.default_rng(seed + 1)
    out = []
    for row in rows:
        row = dict(row)
        if climates == "stations":
            mine = [p for p in stations if p["climate"] == row["climate"]]
            near = mine[rng.integers(len(mine))]
            lat, lon = near["latitude_deg"], near["longitude_deg"]
            alt = near["altitude_m"]
            row["climate"] = "stations"
        else:
            base = load_climate(row["climate"])
            lat, lon, alt = base.latitude_deg, base.longitude_deg, base.altitude_m
            row["climate"] = "normals"
        row.update(latitude_deg=round(float(np.clip(lat + rng.uniform(-0.5, 0.5), -85, 85)), 4),
                   longitude_deg=round(float(lon + rng.uniform(-0.5, 0.5)), 4),
                   altitude_m=round(float(max(0.0, alt + rng.uniform(-300, 300)))))
        out.append(row)
    return out


def write_normals_table(path: Path, rows: list[dict], original: list[dict], seed: int = 11) -> None:
    """One row of monthly normals per site: its climate's normals, perturbed (+-1 K, +-5 %)."""
    rng = np.random.default_rng(seed + 2)
    cache = {}
    header = ["id", *(f"tmin_{m}_c" for m in MONTHS), *(f"tmax_{m}_c" for m in MONTHS),
              *(f"ghi_{m}_kwh_m2_day" for m in MONTHS), "altitude_m"]
    with open(path, "w", newline="", encoding="utf-8") as f:
        writer = csv.writer(f)
        writer.writerow(header)
        for row, first in zip(rows, original):
            climate = first["climate"]
            if climate not in cache:
                cache[climate] = monthly_normals(load_climate(climate))
            n = cache[climate]
            shift = rng.normal(0.0, 1.0)
            writer.writerow([row["id"], *np.round(n["tmin"] + shift, 2),
                             *np.round(n["tmax"] + shift, 2),
                             *np.round(n["ghi"] * rng.uniform(0.95, 1.05), 3), row["altitude_m"]])


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
{climates}"""


# What switches off the design space (thermal measures, design changes at a replacement),
# to measure what it costs (docs/scaling.md).
WITHOUT_DESIGN_SPACE = 'design_changes = false\n\n[thermal]\nmeasures = ["none"]\n'


def write_fleet(folder: Path, n_sites: int, *, seed: int = 11, sensitivity: bool = True,
                design_space: bool = True, climates: str = "bundled", n_stations: int = 50) -> Path:
    """Write ``study.toml`` and ``sites.csv`` of an invented fleet; returns the study path.

    ``design_space=False`` switches off thermal measures and design changes.
    ``climates``: ``"bundled"`` (the sites name bundled climates), ``"stations"`` (own
    coordinates, nearest of ``n_stations`` invented station files in ``stations/``) or
    ``"normals"`` (own coordinates and own monthly normals in ``normals.csv``)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rows = site_rows(n_sites, seed)
    columns = list(COLUMNS)
    extra = ""
    if climates == "stations":
        places = write_station_folder(folder / "stations", n_stations, seed=seed)
        located = locate_rows(rows, "stations", seed, places)
        extra = '\n[climates.stations]\nstations = "stations"\n'
    elif climates == "normals":
        located = locate_rows(rows, "normals", seed)
        write_normals_table(folder / "normals.csv", located, rows, seed)
        extra = '\n[climates.normals]\nnormals = "normals.csv"\n'
    elif climates != "bundled":
        raise ValueError(f"climates must be bundled, stations or normals, not {climates!r}")
    if climates != "bundled":
        rows = located
        columns += ["latitude_deg", "longitude_deg", "altitude_m"]
    with open(folder / "sites.csv", "w", newline="", encoding="utf-8") as f:
        writer = csv.DictWriter(f, fieldnames=columns)
        writer.writeheader()
        writer.writerows(rows)
    study = folder / "study.toml"
    study.write_text(STUDY_TOML.format(n=n_sites, seed=seed,
                                       sensitivity="true" if sensitivity else "false",
                                       design_space="" if design_space else WITHOUT_DESIGN_SPACE,
                                       climates=extra),
                     encoding="utf-8")
    return study
