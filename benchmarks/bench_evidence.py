"""Benchmark: what field records cost a plan (side by side in one run).

Targets: updating 10,000 sites with two capacity tests each adds at most 10 % to the
plan's time; the ranked list of where a test pays, over 1,000 sites, takes at most 50 % of
the 1,000-site plan's time. Prints figures; asserts nothing.

Usage: python benchmarks/bench_evidence.py [--update-sites N] [--rank-sites N]
                                            [--workers N] [--keep DIR]

* update: the invented fleet of benchmarks/fleet_gen.py with a pack in service at every
  site that has a charging source, planned twice one after the other: without records, then
  with two invented capacity tests per pack (readings drawn around a plain linear fade:
  for timing only, their values matter little to the time). Same fleet, same machine.
* rank: the standard 1,000-site fleet (about a fifth of its sites have a pack in service)
  planned once; the stage "value of a capacity test" against the whole plan.

Machines differ 2x and other jobs may share the cores: only the ratios mean anything.
"""

from __future__ import annotations

import argparse
import csv
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))

from fleet_gen import write_fleet  # noqa: E402

from planner.parallel import StageLog, default_workers  # noqa: E402
from planner.pipeline import run_study  # noqa: E402
from planner.study.loading import load_study  # noqa: E402

TEST_HEADER = ("site_id", "test_date", "kind", "duration_h", "capacity_pct", "start_temp_c", "rate_h")


def packs_everywhere(folder: Path, seed: int = 5) -> list[dict]:
    """Give every site with a charging source a pack in service (invented); return rows."""
    path = folder / "sites.csv"
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    rng = np.random.default_rng(seed)
    for row in rows:
        if row["charging"] != "none" and not row["existing_chemistry"]:
            row["existing_chemistry"] = ("vrla", "lfp")[rng.integers(2)]
            row["existing_capacity_wh"] = str(round(float(row["load_w"]) * 24 * float(row["autonomy_days"]) * 1.5))
            row["existing_installed_year"] = str(int(rng.integers(2018, 2026)))
    with open(path, "w", newline="", encoding="utf-8") as f:
        writer = csv.DictWriter(f, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    return rows


def write_tests(folder: Path, rows: list[dict], per_site: int = 2, seed: int = 6) -> int:
    """Two invented tests per pack in service: readings around a linear fade (3 %/year for
    lead-acid, 1.5 % for LFP) with 2 % noise, at 15-35 °C, 10 h rate."""
    rng = np.random.default_rng(seed)
    n = 0
    with open(folder / "tests.csv", "w", newline="", encoding="utf-8") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(TEST_HEADER)
        for row in rows:
            if not row["existing_chemistry"]:
                continue
            first = np.datetime64(f"{row['existing_installed_year']}-01-01")
            span = int((np.datetime64("2027-01-01") - first).astype(int))
            rate = 0.03 if row["existing_chemistry"] == "vrla" else 0.015
            for day in np.sort(rng.integers(20, max(span - 1, 21), per_site)):
                age = day / 365.25
                pct = 100.0 * (1.0 - rate * age) + 2.0 * rng.standard_normal()
                out.writerow([row["id"], str(first + int(day)), "performance", "9.5", f"{pct:.1f}",
                              f"{rng.uniform(15, 35):.1f}", "10"])
                n += 1
    with open(folder / "study.toml", "a", encoding="utf-8") as f:
        f.write('\n[field_data]\ncapacity_tests_file = "tests.csv"\n')
    return n


def timed_plan(study_path: Path, workers: int):
    log = StageLog()
    t0 = time.perf_counter()
    plan = run_study(load_study(study_path), workers=workers, log=log)
    return time.perf_counter() - t0, log, plan


def stage(log: StageLog, name: str) -> float:
    rec = log.stages.get(name)
    return rec.wall_s if rec is not None else 0.0


def update_case(folder: Path, n_sites: int, workers: int) -> None:
    base_dir, tests_dir = folder / "update-without", folder / "update-with"
    for d in (base_dir, tests_dir):
        write_fleet(d, n_sites)
        rows = packs_everywhere(d)
    n_packs = sum(1 for r in rows if r["existing_chemistry"])
    n_tests = write_tests(tests_dir, rows)
    print(f"update: {n_sites} sites, {n_packs} packs in service, {n_tests} tests in the second plan")
    wall_a, log_a, _ = timed_plan(base_dir / "study.toml", workers)
    wall_b, log_b, plan_b = timed_plan(tests_dir / "study.toml", workers)
    moved = sum(1 for s in plan_b["sites"] if (s.get("field_evidence") or {}).get("records_used"))
    print(f"  plan without records: {wall_a:8.1f} s (value of a test {stage(log_a, 'value of a capacity test'):.1f} s)")
    print(f"  plan with records:    {wall_b:8.1f} s (field evidence {stage(log_b, 'field evidence'):.1f} s, "
          f"value of a test {stage(log_b, 'value of a capacity test'):.1f} s, plan assembly "
          f"{stage(log_b, 'plan assembly'):.1f} s vs {stage(log_a, 'plan assembly'):.1f} s)")
    print(f"  added by the records: {wall_b - wall_a:+.1f} s = {(wall_b - wall_a) / wall_a:+.1%} "
          f"(target <= +10 %); {moved} packs priced by their posterior")


def rank_case(folder: Path, n_sites: int, workers: int) -> None:
    path = write_fleet(folder / "rank", n_sites)
    wall, log, plan = timed_plan(path, workers)
    ranked = plan["field_data"]["test_value"]
    rank_s = stage(log, "value of a capacity test")
    worth = sum(1 for r in ranked if r["net_value"] > 0)
    print(f"rank: {n_sites} sites, {len(ranked)} packs ranked ({worth} where a test pays)")
    print(f"  plan {wall:.1f} s; ranked list {rank_s:.2f} s = {rank_s / wall:.1%} of the plan "
          "(target <= 50 %)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--update-sites", type=int, default=10_000)
    ap.add_argument("--rank-sites", type=int, default=1_000)
    ap.add_argument("--workers", type=int, default=default_workers())
    ap.add_argument("--keep", type=Path, default=None, help="write the studies here")
    args = ap.parse_args()
    folder = args.keep or Path(tempfile.mkdtemp(prefix="bench_evidence_"))
    print(f"workers={args.workers} cores={os.cpu_count()} load_average_1min_at_start="
          f"{os.getloadavg()[0]:.2f} (other jobs may share the machine)")
    rank_case(folder, args.rank_sites, args.workers)
    if args.update_sites:
        update_case(folder, args.update_sites, args.workers)
    print(f"load_average_1min_at_end={os.getloadavg()[0]:.2f}; studies in {folder}")


if __name__ == "__main__":
    main()
