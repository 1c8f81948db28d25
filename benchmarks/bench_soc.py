"""Benchmark: hourly SOC recursion over 8,760 h for a fleet of lanes (sites x designs).

Prints wall time, lanes per second and peak memory; asserts nothing. Target of issue 5:
100,000 lanes in <= 10 s on the project machine (2 shared cores).

    python benchmarks/bench_soc.py [n_sites] [designs_per_site] [chunk_lanes]
"""

from __future__ import annotations

import resource
import sys
import time

import numpy as np

from planner.energy import soc

H = 8760


def fleet(n_sites: int, designs: int, seed: int = 0):
    """Invented fleet: per-site PV-like charge, load and temperature; lanes = designs."""
    rng = np.random.default_rng(seed)
    hours = np.arange(H)
    day = np.clip(np.sin((hours % 24 - 6) / 12 * np.pi), 0, None)
    season = 0.6 + 0.4 * np.cos(2 * np.pi * (hours / H - 0.47))
    charge = (day * season)[:, None] * rng.uniform(40, 400, n_sites)
    load = np.repeat(rng.uniform(3, 30, n_sites)[None, :], H, axis=0)
    temp = (10 + 15 * np.sin(2 * np.pi * (hours / H - 0.3)))[:, None] \
        + rng.normal(0, 4, (H, n_sites))
    sd = 1e-5 * 2.0 ** ((temp - 25) / 10)           # doubling per 10 K (illustrative input)
    site = np.repeat(np.arange(n_sites), designs)
    cap = np.tile(np.geomspace(300, 6000, designs), n_sites)
    return charge, load, temp, sd, site, cap


def main(argv):
    n_sites = int(argv[1]) if len(argv) > 1 else 1000
    designs = int(argv[2]) if len(argv) > 2 else 100
    chunk = int(argv[3]) if len(argv) > 3 else soc.DEFAULT_CHUNK_LANES
    charge, load, temp, sd, site, cap = fleet(n_sites, designs)
    n = cap.size
    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    t0, c0 = time.perf_counter(), time.process_time()
    total_unserved = 0.0
    n_chunks = 0
    for chunk_res in soc.iter_soc_chunks(
            charge, load, cap, temp, usable_fraction=0.95, charge_efficiency_frac=0.95,
            discharge_efficiency_frac=0.96, self_discharge_frac_per_h=sd,
            max_charge_c_rate=0.5, charge_temp_min_c=0.0, min_soc_frac=0.2,
            lane_site_index=site, chunk_lanes=chunk, series=True):
        # a consumer (the aging stage) would read chunk_res.soc_frac here and drop it
        total_unserved += chunk_res.summary.unserved_wh.sum()
        n_chunks += 1
    dt, cpu = time.perf_counter() - t0, time.process_time() - c0
    rss1 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    engine = "numba-compiled" if soc._FUSED is not None else "numpy"
    print(f"lanes {n:,} ({n_sites} sites x {designs} designs), chunk {chunk}, "
          f"{n_chunks} chunks, {engine} hour loop")
    print(f"SOC recursion 8,760 h: {dt:.2f} s  ({n / dt:,.0f} lanes/s, "
          f"{dt / n * 1e6:.1f} us/lane)")
    print(f"peak RSS {rss1:,.0f} MiB (inputs and imports {rss0:,.0f} MiB)")
    print(f"fleet unserved {total_unserved / 1000:,.1f} kWh/yr (sanity)")
    print(f"CPU time {cpu:.2f} s (wall time above includes waiting for shared cores)")

    if soc._FUSED is None:
        print("numba not installed: the numpy hour loop was timed")
        return
    # with numba installed the run above used the compiled loop; time the numpy loop on
    # one chunk for the ratio (the first compiled call also paid the JIT/cache load)
    k = min(n, chunk)
    t0, c0 = time.perf_counter(), time.process_time()
    for _ in soc.iter_soc_chunks(
            charge, load, cap[:k], temp, usable_fraction=0.95, charge_efficiency_frac=0.95,
            discharge_efficiency_frac=0.96, self_discharge_frac_per_h=sd,
            max_charge_c_rate=0.5, charge_temp_min_c=0.0, min_soc_frac=0.2,
            lane_site_index=site[:k], chunk_lanes=k, series=True, engine="numpy"):
        pass
    dt_np, cpu_np = time.perf_counter() - t0, time.process_time() - c0
    print(f"numpy loop on {k:,} lanes: {dt_np:.2f} s wall / {cpu_np:.2f} s CPU "
          f"-> {cpu_np / k * n:.1f} s CPU for all {n:,} lanes "
          f"(numpy/compiled CPU ratio {cpu_np / k * n / cpu:.1f}x)")


if __name__ == "__main__":
    main(sys.argv)
