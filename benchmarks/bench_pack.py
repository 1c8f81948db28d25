"""Benchmark of planner.pack.spread.life_distribution (prints figures, asserts nothing).

Speed target of the project (figures in docs/pack.md): 1,000 sites x 1,000 draws in
<= 30 s on the project machine.

    python benchmarks/bench_pack.py            # 1000 sites x 1000 draws, 4s1p + smaller extras
    python benchmarks/bench_pack.py --sites 200 --series 16
"""

import argparse
import time

import numpy as np

from planner.pack.spread import life_distribution


def invented_fleet(n_sites, horizon_years=20, seed=0):
    """Invented square-root fade curves, one per site (demo values only)."""
    rng = np.random.default_rng(seed)
    t_y = np.arange(12 * horizon_years + 1) / 12.0
    k_cal = rng.uniform(0.02, 0.045, n_sites)
    k_cyc = rng.uniform(0.005, 0.03, n_sites)
    return np.sqrt(t_y)[:, None] * k_cal, np.sqrt(t_y)[:, None] * k_cyc


def run(n_sites, draws, series, parallel, balancing, model_sets=1):
    cal, cyc = invented_fleet(n_sites)
    sets = None
    if model_sets > 1:
        sets = [(cal * f, cyc * f) for f in np.linspace(0.85, 1.15, model_sets)]
    t0, c0 = time.perf_counter(), time.process_time()
    d = life_distribution(calendar_loss_frac=cal, cycle_loss_frac=cyc, eol_soh_frac=0.8,
                          series_cells=series, parallel_strings=parallel, balancing=balancing,
                          draws=draws, seed=0, model_sets=sets)
    sec, cpu = time.perf_counter() - t0, time.process_time() - c0
    cells = n_sites * draws * series * parallel
    print(f"{n_sites:5d} sites x {draws:5d} draws  {series:2d}s{parallel}p {balancing:8s} sets={model_sets}: "
          f"{sec:7.2f} s wall, {cpu:7.2f} s CPU  ({cells / sec / 1e6:5.2f} M cell-lives/s)  "
          f"median P10/P50/P90 = {np.median(d.p10_years):.2f}/{np.median(d.p50_years):.2f}/"
          f"{np.median(d.p90_years):.2f} y")
    return sec


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sites", type=int, default=1000)
    ap.add_argument("--draws", type=int, default=1000)
    ap.add_argument("--series", type=int, default=4)
    ap.add_argument("--parallel", type=int, default=1)
    ap.add_argument("--balancing", default="passive")
    ap.add_argument("--extras", action="store_true", help="also time 16s, 8s2p active, none, model sets")
    a = ap.parse_args()
    sec = run(a.sites, a.draws, a.series, a.parallel, a.balancing)
    print(f"target <= 30 s for 1000 x 1000: {'met' if sec <= 30 else 'NOT met'} ({sec:.1f} s wall; "
          "the machine is shared, so compare the CPU seconds too)")
    if a.extras:
        n = max(1, a.sites // 10)
        for series, parallel, bal, sets in ((16, 1, "passive", 1), (8, 2, "active", 1),
                                            (8, 1, "none", 1), (4, 1, "passive", 3)):
            s = run(n, a.draws, series, parallel, bal, sets)
            print(f"    -> scaled to {a.sites} sites: {s * a.sites / n:.1f} s")


if __name__ == "__main__":
    main()
