"""Benchmark: plan workbook and plan JSON for a fleet of 1,000 sites (target: workbook <= 10 s).

Run: python benchmarks/bench_workbook.py [n_sites]
Prints build, save and total times; nothing is asserted. The plan is the synthetic
demo plan of tests/plan_fixture.py (20-year horizon, monthly fade curves for the chosen
design and three alternatives per site).
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from plan_fixture import make_plan  # noqa: E402

from planner.report import build_workbook, plan_to_json_text, write_json, write_workbook  # noqa: E402


def main(n_sites: int = 1000) -> None:
    plan = make_plan(n_sites, horizon_years=20, seed=0)
    with tempfile.TemporaryDirectory() as folder:
        start = time.perf_counter()
        wb = build_workbook(plan)
        built = time.perf_counter()
        wb.save(Path(folder) / "probe.xlsx")
        saved = time.perf_counter()
        cpu = time.process_time()
        path = write_workbook(plan, Path(folder) / "plan.xlsx")
        total = time.perf_counter() - saved
        total_cpu = time.process_time() - cpu
        size_mb = path.stat().st_size / 1e6
        start_json, cpu_json = time.perf_counter(), time.process_time()
        text = plan_to_json_text(plan)
        json_s, json_cpu = time.perf_counter() - start_json, time.process_time() - cpu_json
        write_json(plan, Path(folder) / "plan.json")
    print(f"sites: {n_sites}")
    print(f"workbook build (in memory): {built - start:.2f} s")
    print(f"workbook save:              {saved - built:.2f} s")
    print(f"write_workbook end to end:  {total:.2f} s wall, {total_cpu:.2f} s CPU (target <= 10 s)"
          f"  size {size_mb:.1f} MB")
    print(f"load average while running: {os.getloadavg()[0]:.1f} (2 cores; wall time stretches with it)")
    print(f"plan JSON text:             {json_s:.2f} s wall, {json_cpu:.2f} s CPU  size {len(text) / 1e6:.1f} MB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
