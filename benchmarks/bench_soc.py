"""Benchmark: hourly SOC recursion over 8,760 h for a fleet of lanes (sites x designs).

Prints wall time, CPU time and peak memory of each hour loop; asserts nothing. Speed target
of the project (figures in docs/energy.md): 100,000 lanes in <= 10 s on the project
machine (2 shared cores).

    python benchmarks/bench_soc.py [n_sites] [designs_per_site] [chunk_lanes] [--numpy-all]

Each hour loop runs in its own child process, so each peak RSS (resident memory, inputs
and imports included) is that loop's alone. With numba installed the compiled loop runs the
whole fleet; the numpy loop runs one chunk and is scaled to the fleet (``--numpy-all`` runs
it on the whole fleet: about half a minute of CPU or more).
"""

from __future__ import annotations

import resource
import subprocess
import sys
import time

import numpy as np

from planner.energy import _soc_kernels, soc, soc_fused

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


def run(charge, load, temp, sd, site, cap, chunk, engine):
    """Stream every chunk like the aging stage would; returns (wall s, CPU s, sums)."""
    t0, c0 = time.perf_counter(), time.process_time()
    unserved = energy_out = 0.0
    for chunk_res in soc.iter_soc_chunks(
            charge, load, cap, temp, usable_fraction=0.95, charge_efficiency_frac=0.95,
            discharge_efficiency_frac=0.96, self_discharge_frac_per_h=sd,
            max_charge_c_rate=0.5, charge_temp_min_c=0.0, min_soc_frac=0.2,
            lane_site_index=site, chunk_lanes=chunk, series=True, engine=engine):
        # a consumer (the aging stage) would read chunk_res.soc_frac here and drop it
        unserved += chunk_res.summary.unserved_wh.sum()
        energy_out += chunk_res.summary.energy_out_wh.sum()
    return time.perf_counter() - t0, time.process_time() - c0, unserved, energy_out


def child(path: str, n_sites: int, designs: int, chunk: int, numpy_all: bool) -> None:
    """One hour loop, timed, in this (child) process."""
    charge, load, temp, sd, site, cap = fleet(n_sites, designs)
    n = cap.size
    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    if path == "compiled":
        import numba
        t0 = time.perf_counter()
        _soc_kernels.compiled_kernel()
        print(f"numba {numba.__version__}, {numba.get_num_threads()} threads: kernel "
              f"compiled or loaded from cache in {time.perf_counter() - t0:.1f} s "
              f"(once per process)")
        wall, cpu, uns, out = run(charge, load, temp, sd, site, cap, chunk, "auto")
        label, k = "compiled loop", n
    else:
        k = n if numpy_all else min(n, chunk)
        wall, cpu, uns, out = run(charge, load, temp, sd, site[:k], cap[:k], chunk, "numpy")
        label = "numpy loop"
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    line = (f"{label} on {k:,} lanes: {wall:.2f} s wall, {cpu:.2f} s CPU "
            f"({k / wall:,.0f} lanes/s); peak RSS {rss:,.0f} MiB (inputs and imports "
            f"{rss0:,.0f} MiB)")
    if k < n:
        line += (f"\n  -> about {wall * n / k:.1f} s wall / {cpu * n / k:.1f} s CPU for all "
                 f"{n:,} lanes")
    print(line)
    print(f"  unserved {uns / 1000:,.1f} kWh/yr, delivered {out / 1000:,.1f} kWh/yr (sanity)",
          flush=True)


def main(argv):
    if len(argv) > 1 and argv[1] == "--child":
        child(argv[2], int(argv[3]), int(argv[4]), int(argv[5]), argv[6] == "1")
        return
    numpy_all = "--numpy-all" in argv
    argv = [a for a in argv if a != "--numpy-all"]
    n_sites = int(argv[1]) if len(argv) > 1 else 1000
    designs = int(argv[2]) if len(argv) > 2 else 100
    chunk = int(argv[3]) if len(argv) > 3 else soc.DEFAULT_CHUNK_LANES
    n = n_sites * designs
    print(f"lanes {n:,} ({n_sites} sites x {designs} designs), chunk {chunk}, "
          f"{-(-n // chunk)} chunks, SOC and C-rate series streamed")
    paths = (["compiled"] if soc_fused._FUSED is not None else []) + ["numpy"]
    if soc_fused._FUSED is None:
        print("numba not installed: only the numpy loop runs")
    for path in paths:
        subprocess.run([sys.executable, __file__, "--child", path, str(n_sites),
                        str(designs), str(chunk), "1" if numpy_all else "0"], check=True)
    print("CPU time counts every core; wall time includes waiting for cores shared with "
          "other jobs")


if __name__ == "__main__":
    main(sys.argv)
