"""Benchmark: what thermal measures and design changes cost on a generated fleet.

Writes an invented study of N sites over the bundled climates (random enclosures, loads,
PV sizes; all numbers invented for the benchmark), then times the design stage with the
default thermal measures and with them switched off, and the fleet solve with and without
design changes at a replacement. Prints figures; asserts nothing.
Usage: python benchmarks/bench_design_dimensions.py [n_sites]
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from planner import pipeline
from planner.climate import list_bundled
from planner.optimize import solve_fleet
from planner.plan.costing import build_problem
from planner.site.model import model_sites
from planner.study.loading import load_study


def write_study(folder: Path, n_sites: int, measures: str, seed: int = 11) -> Path:
    rng = np.random.default_rng(seed)
    climates = [name for name, _ in list_bundled()]
    rows = ["id,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days"]
    for i in range(n_sites):
        load = float(rng.uniform(0.5, 8.0))
        rows.append(f"S{i:04d},R{i % max(1, n_sites // 20)},{rng.choice(climates)},"
                    f"{rng.choice(['cabinet-sun', 'cabinet-shade', 'vault'], p=[0.6, 0.25, 0.15])},"
                    f"{load:.2f},pv,{load * rng.uniform(15, 40):.0f},{rng.integers(3, 10)}")
    (folder / "sites.csv").write_text("\n".join(rows) + "\n")
    study = folder / f"study-{measures}.toml"
    study.write_text(
        '[study]\nsites_file = "sites.csv"\nhorizon_years = 20\n'
        '[candidates]\nchemistries = ["vrla", "lfp", "nmc", "lto"]\n'
        f'[thermal]\nmeasures = {measures}\n[output]\nsensitivity = false\n')
    return study


def main(n_sites: int = 100) -> None:
    print(f"sites={n_sites} load_average_1min_at_start={os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        problems = {}
        for label, measures in (("off", '["none"]'), ("default", '["insulated-box", "heater-box", '
                                                                   '"sun-shield", "vault"]')):
            study = load_study(write_study(folder, n_sites, measures))
            models = model_sites(study)
            t0 = time.perf_counter()
            designs, hints = pipeline._evaluate_with_measures(study, models)
            seconds = time.perf_counter() - t0
            n_variants = sum(len(d.measure_models) for d in designs)
            n_outcomes = sum(len(d.outcomes) for d in designs)
            print(f"thermal measures {label}: design stage {seconds:.1f} s, {n_variants} site variants, "
                  f"{n_outcomes} designs evaluated")
            problems[label] = build_problem(study, models, designs, hints)
        for label, prob in problems.items():
            for changes in (False, True):
                sol = solve_fleet(replace(prob, design_changes=changes))
                chosen = sum(1 for p in sol.sites for c in p.installations
                             if c.thermal_measure not in ("none", "site-heater", ""))
                changed = sum(1 for p in sol.sites if len({c.design_id for c in p.installations}) > 1)
                print(f"measures {label}, design changes {changes}: solve {sol.seconds:.1f} s, "
                      f"objective {sol.objective:,.0f}, gap {100 * sol.gap_frac:.3f} %, status {sol.status}, "
                      f"packs with a measure {chosen}, sites changing design {changed}, "
                      f"sites not served {len(sol.unserved)}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100)
