"""Benchmark: an invented fleet of N sites through the whole plan, as `planner plan` runs it.

Speed target of the project (figures in docs/scaling.md): 1,000 sites <= 60 s wall and
<= 4 GiB peak RSS (parent plus workers) on 2 cores, chemistry comparison and sensitivity
included; 10,000 sites <= 12 min and <= 8 GiB; 10x the sites <= 11x the time. Prints
figures; asserts nothing.

Usage: python benchmarks/bench_plan.py [--sites N] [--workers N] [--keep DIR]
                                      [--without-design-space]
                                      [--climates bundled|stations|normals] [--stations N]

``--climates stations``: every site has its own coordinates and altitude and takes the
nearest of N invented station files (EPW and plain CSV, written by fleet_gen.py);
``--climates normals``: every site has its own coordinates and its own monthly normals.
Target: both within 30 % of the bundled fleet run side by side on the commit before
(docs/scaling.md).

The fleet comes from benchmarks/fleet_gen.py (seeded, invented). The study is loaded,
planned, and written as workbook and JSON by the same functions `planner plan` calls.
CPU and peak RSS are summed over the parent and every worker process.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))

from fleet_gen import write_fleet  # noqa: E402

from planner.parallel import StageLog, default_workers  # noqa: E402
from planner.pipeline import run_study  # noqa: E402
from planner.report import write_json, write_workbook  # noqa: E402
from planner.study.loading import load_study  # noqa: E402

GIB = 1024 ** 3


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sites", type=int, default=1000)
    ap.add_argument("--workers", type=int, default=default_workers())
    ap.add_argument("--keep", type=Path, default=None, help="write the study and outputs here")
    ap.add_argument("--without-design-space", action="store_true",
                    help="switch off thermal measures and design changes (what they cost)")
    ap.add_argument("--climates", choices=("bundled", "stations", "normals"), default="bundled",
                    help="bundled climates, own coordinates + nearest station, or own normals")
    ap.add_argument("--stations", type=int, default=50, help="station files with --climates stations")
    args = ap.parse_args()

    folder = args.keep or Path(tempfile.mkdtemp(prefix="bench_plan_"))
    t0 = time.perf_counter()
    study_path = write_fleet(folder, args.sites, design_space=not args.without_design_space,
                             climates=args.climates, n_stations=args.stations)
    load = os.getloadavg()[0]
    print(f"sites={args.sites} workers={args.workers} cores={os.cpu_count()} "
          f"climates={args.climates} (inputs written in {time.perf_counter() - t0:.1f} s) "
          f"design_space={'off' if args.without_design_space else 'on'} "
          f"load_average_1min_at_start={load:.2f} (other jobs may share the machine)")

    log = StageLog()
    wall0, cpu0 = time.perf_counter(), time.process_time()
    with log.stage("load study"):
        study = load_study(study_path)
    plan = run_study(study, workers=args.workers, log=log)
    with log.stage("workbook and JSON"):
        write_workbook(plan, folder / "plan.xlsx")
        write_json(plan, folder / "plan.json")
    wall = time.perf_counter() - wall0
    cpu = sum(r.cpu_s for r in log.stages.values())

    print(f"{'stage':36s} {'wall s':>8s} {'share':>6s} {'CPU s':>8s} {'peak RSS GiB':>13s}")
    for name, rec in log.stages.items():
        print(f"{name:36s} {rec.wall_s:8.1f} {rec.wall_s / wall:6.1%} {rec.cpu_s:8.1f} "
              f"{rec.peak_rss_bytes / GIB:13.2f}")
    print(f"{'total':36s} {wall:8.1f} {1:6.0%} {cpu:8.1f} {log.peak_rss_bytes() / GIB:13.2f}")
    print(f"parent CPU s={time.process_time() - cpu0:.1f}; load_average_1min_at_end="
          f"{os.getloadavg()[0]:.2f}")
    solver = plan["solver"]
    print(f"total present cost={plan['total_present_cost']:.1f} status={solver['status']} "
          f"gap={solver['gap_frac']:.3%}")
    print(f"outputs in {folder}")


if __name__ == "__main__":
    main()
