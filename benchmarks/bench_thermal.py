"""Benchmark: hourly battery temperature for 1,000 sites (target <= 2 s on 2 cores).

Prints figures; asserts nothing. Run: python benchmarks/bench_thermal.py [n_sites]

A fleet repeats climates, so climates are loaded once (cached) and the solar parts
of each (climate, enclosure geometry) are cached; the per-site drive assembly and
the exact-step solver (a loop over 8,760 hours, vectorised across sites) are timed.
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

from planner.climate import list_bundled, load_climate
from planner.thermal.battery import battery_temperature_fleet
from planner.thermal.enclosures import ENCLOSURE_KINDS
from planner.thermal.lumped import simulate_lumped


def main(n_sites: int = 1000) -> None:
    rng = np.random.default_rng(42)
    names = [name for name, _ in list_bundled()]
    t0 = time.perf_counter()
    climates = {name: load_climate(name) for name in names}
    t_load = time.perf_counter() - t0

    site_climate = rng.choice(names, n_sites)
    site_kind = rng.choice(list(ENCLOSURE_KINDS), n_sites, p=[0.5, 0.2, 0.15, 0.15])
    years = [climates[c] for c in site_climate]
    internal_w = rng.uniform(0.0, 30.0, n_sites)
    heater = np.where(rng.random(n_sites) < 0.3, 5.0, np.nan)

    # First call fills the solar caches (a fleet pays this once per climate x geometry).
    t0 = time.perf_counter()
    battery_temperature_fleet(years[:50], list(site_kind[:50]))
    cold = time.perf_counter() - t0
    for kind in ENCLOSURE_KINDS:                 # warm every climate x kind combination
        battery_temperature_fleet([climates[n] for n in names], [kind] * len(names))

    t0, c0 = time.perf_counter(), time.process_time()
    fleet = battery_temperature_fleet(years, list(site_kind), internal_heat_w=internal_w,
                                      heater_setpoint_c=heater)
    t_fleet, c_fleet = time.perf_counter() - t0, time.process_time() - c0
    t0 = time.perf_counter()
    simulate_lumped(fleet.temp_battery_c, np.full(n_sites, 2.0))
    t_linear = time.perf_counter() - t0
    t0 = time.perf_counter()
    simulate_lumped(fleet.temp_battery_c, np.full(n_sites, 2.0), ua_w_k=15.0,
                    heater_setpoint_c=np.full(n_sites, 5.0), heater_max_w=50.0)
    t_loop = time.perf_counter() - t0
    a = np.random.default_rng(0).random(1000)
    t0 = time.perf_counter()
    for _ in range(10000):
        a * a
    t_op = (time.perf_counter() - t0) / 10000 * 1e6
    print(f"machine load average (1 min): {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs; "
          f"one numpy multiply of 1,000 floats: {t_op:.1f} us")
    print(f"sites: {n_sites}, climates: {len(names)}, enclosure kinds: {len(ENCLOSURE_KINDS)}")
    print(f"load {len(names)} bundled climates (cold, incl. generation): {t_load:.2f} s")
    print(f"first 50 sites with cold solar caches: {cold:.2f} s")
    print(f"hourly battery temperature, {n_sites} sites (warm caches): {t_fleet:.2f} s wall, "
          f"{c_fleet:.2f} s CPU (target <= 2 s)")
    print(f"solver only, {n_sites} linear lanes (exact periodic closed form): {t_linear:.2f} s")
    print(f"solver only, {n_sites} lanes with a heater thermostat (hour loop): {t_loop:.2f} s")
    print(f"output shape: {fleet.temp_battery_c.shape}, mean battery temperature "
          f"{fleet.temp_battery_c.mean():.2f} degC, heater energy "
          f"{fleet.heater_power_w.sum() / 1e3:.0f} kWh/yr fleet-wide")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
