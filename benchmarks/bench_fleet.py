"""Benchmark: a generated fleet of 1,000 sites x 20 years through solve_fleet.

Speed target of the project (figures in docs/optimizer.md): <= 0.5 % gap within 60 s on
this machine, model build included. Prints figures; asserts nothing.
Usage: python benchmarks/bench_fleet.py [n_sites] [solver] [method]
All numbers below are invented inputs for the benchmark only.
"""

import os
import sys
import time
from dataclasses import replace

import numpy as np

from planner.optimize import Candidate, ExistingPack, FleetProblem, SiteOptions, solve_fleet

CHEMS = {  # id: (price per kWh, life at 1x, life gain per doubling of size, kg per kWh)
    "lfp": (450.0, 6.0, 2.0, 9.0),
    "vrla": (250.0, 3.5, 1.0, 30.0),
    "nmc": (520.0, 5.0, 1.5, 7.0),
}
OVERSIZE = (1.0, 1.5, 2.0, 3.0)
VOLTS = {"lfp": (3.45, 3.55), "vrla": (2.25, 2.30), "nmc": (4.0, 4.1)}


def make_fleet(n_sites: int, horizon: int = 20, seed: int = 7) -> FleetProblem:
    rng = np.random.default_rng(seed)
    n_regions = max(1, n_sites // 20)
    sites = []
    for i in range(n_sites):
        region = f"R{rng.integers(n_regions):03d}"
        start = int(rng.integers(1, 7))
        access = tuple(range(start, start + int(rng.integers(4, 7))))
        ref_kwh = float(rng.uniform(0.5, 3.0))
        heat = float(rng.uniform(0.6, 1.2))  # site climate shortens or lengthens life
        cands = []
        for chem, (price, life1, gain, kg) in CHEMS.items():
            for k in OVERSIZE:
                for j, v in enumerate(VOLTS[chem]):
                    life = heat * (life1 + gain * np.log2(k)) * (1.0 if j == 0 else 0.85)
                    kwh = ref_kwh * k
                    probs = tuple(np.clip(1 - np.exp(-(np.arange(1, 16) / (1.3 * life)) ** 4), 0, 1).round(4))
                    cands.append(Candidate(f"{chem}-{k}x-{v}", chem, k, v, kwh * 1000, kwh * kg,
                                           kwh * price * (1.0 if j == 0 else 0.97) + 150.0, 300.0, 40.0,
                                           float(life), probs, "calendar"))
        existing = ExistingPack(float(rng.uniform(0, 8)), "vrla", disposal_cost=40.0) if rng.random() < 0.7 else None
        sites.append(SiteOptions(f"S{i:04d}", region, access, cands, existing=existing,
                                 site_visit_cost=float(rng.uniform(100, 400)),
                                 downtime_cost_per_day=float(rng.uniform(20, 200)),
                                 unplanned_trip_cost=float(rng.uniform(3000, 12000))))
    trips = {f"R{r:03d}": float(rng.uniform(2000, 15000)) for r in range(n_regions)}
    return FleetProblem(sites, horizon, 0.03, trips, time_limit_s=60.0, gap_rel_frac=0.005)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    solver = sys.argv[2] if len(sys.argv) > 2 else "auto"
    method = sys.argv[3] if len(sys.argv) > 3 else "auto"
    t0 = time.perf_counter()
    prob = replace(make_fleet(n), solver=solver, method=method)
    t_gen = time.perf_counter() - t0
    load = os.getloadavg()[0]
    sol = solve_fleet(prob)
    print(f"sites={n} horizon=20 candidates/site=24 solver={sol.solver_name} method={method}")
    print(f"load_average_1min_at_start={load:.2f} on {os.cpu_count()} cores (other jobs share the machine)")
    print(f"generate_s={t_gen:.2f}")
    print(f"build_s={sol.build_seconds:.2f} (graphs, matrices, PuLP model)")
    print(f"solve_s={sol.seconds - sol.build_seconds:.2f}")
    print(f"total_s={sol.seconds:.2f}")
    print(f"status={sol.status} objective={sol.objective:.2f} best_bound={sol.best_bound:.2f} gap={100 * sol.gap_frac:.4f} %")
    print(f"trips={len(sol.trips)} decomposition: {sol.decomposition}")


if __name__ == "__main__":
    main()
