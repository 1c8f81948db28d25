"""Benchmark two commits side by side: the same invented fleet through the whole plan,
on another commit and on the working tree, in one run.

Machines of one kind differ about 2x in speed and a shared machine drifts, so a figure
means something only beside the other commit's figure from the same run. Each commit
runs its own ``benchmarks/bench_plan.py`` and fleet generator (modules move between
commits) in a process of its own, the other commit checked out as a git worktree in a
temporary folder. The runs alternate (other, this, other, this, ...) and the table
gives the median of each figure and the median of the per-pair ratios.

Usage: python benchmarks/bench_compare.py --rev REV [--sites N ...] [--workers N]
                                          [--repeat K] [--no-warmup]

Prints figures; asserts nothing. Both sides use the Python that runs this script; the
other commit's code is put first on the module path.
"""

from __future__ import annotations

import argparse
import os
import re
import statistics
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
TOTAL_LINE = re.compile(r"^total\s+([\d.]+)\s+\S+\s+([\d.]+)\s+([\d.]+)\s*$", re.M)
COST_LINE = re.compile(r"total present cost=([-\d.]+|nan|None)")


@dataclass(frozen=True)
class Run:
    """Whole-plan figures of one bench_plan run (CPU and peak RSS summed over processes)."""

    wall_s: float
    cpu_s: float
    peak_rss_gib: float
    total_present_cost: str


def run_bench(tree: Path, n_sites: int, workers: int) -> Run:
    """Run ``tree``'s own bench_plan.py on ``n_sites`` with ``tree``'s code first on the path."""
    env = dict(os.environ, PYTHONPATH=str(tree), PYTHONDONTWRITEBYTECODE="1")
    cmd = [sys.executable, str(tree / "benchmarks" / "bench_plan.py"), "--sites", str(n_sites),
           "--workers", str(workers)]
    done = subprocess.run(cmd, cwd=tree, env=env, capture_output=True, text=True)
    if done.returncode != 0:
        raise SystemExit(f"bench_plan failed in {tree} ({n_sites} sites):\n{done.stderr[-2000:]}")
    total = TOTAL_LINE.search(done.stdout)
    cost = COST_LINE.search(done.stdout)
    if total is None:
        raise SystemExit(f"no total line in the output of {tree}:\n{done.stdout[-2000:]}")
    return Run(float(total.group(1)), float(total.group(2)), float(total.group(3)),
               cost.group(1) if cost else "?")


def checkout(rev: str, folder: Path) -> Path:
    """A detached worktree of ``rev`` in ``folder``."""
    tree = folder / "other"
    subprocess.run(["git", "worktree", "add", "--detach", "-q", str(tree), rev], cwd=REPO,
                   check=True)
    return tree


def median_ratio(a: list[float], b: list[float]) -> float:
    return statistics.median(x / y for x, y in zip(a, b) if y > 0)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rev", required=True, help="the other commit (hash, branch or tag)")
    ap.add_argument("--sites", type=int, nargs="+", default=[1000])
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--repeat", type=int, default=1, help="pairs of runs per fleet size")
    ap.add_argument("--no-warmup", action="store_true",
                    help="skip the 20-site run of each side that fills the compiled-code caches")
    args = ap.parse_args()

    rev = subprocess.run(["git", "rev-parse", "--short", args.rev], cwd=REPO, check=True,
                         capture_output=True, text=True).stdout.strip()
    with tempfile.TemporaryDirectory(prefix="bench_compare_") as tmp:
        other = checkout(rev, Path(tmp))
        try:
            sides = {f"commit {rev}": other, "working tree": REPO}
            if not args.no_warmup:
                for tree in sides.values():
                    run_bench(tree, 20, args.workers)
            print(f"python {sys.version.split()[0]}, {os.cpu_count()} cores, workers={args.workers}, "
                  f"load average at start {os.getloadavg()[0]:.2f}")
            header = (f"{'sites':>7s} {'side':>16s} {'wall s':>8s} {'CPU s':>8s} "
                      f"{'peak GiB':>9s}  total present cost")
            print(header)
            for n in args.sites:
                runs: dict[str, list[Run]] = {name: [] for name in sides}
                for _ in range(args.repeat):
                    for name, tree in sides.items():
                        runs[name].append(run_bench(tree, n, args.workers))
                for name, rs in runs.items():
                    print(f"{n:7d} {name:>16s} {statistics.median(r.wall_s for r in rs):8.1f} "
                          f"{statistics.median(r.cpu_s for r in rs):8.1f} "
                          f"{statistics.median(r.peak_rss_gib for r in rs):9.2f}  "
                          f"{', '.join(sorted({r.total_present_cost for r in rs}))}")
                a, b = runs[f"commit {rev}"], runs["working tree"]
                print(f"{n:7d} {'other / this':>16s} "
                      f"{median_ratio([r.wall_s for r in a], [r.wall_s for r in b]):7.2f}x "
                      f"{median_ratio([r.cpu_s for r in a], [r.cpu_s for r in b]):7.2f}x "
                      f"{median_ratio([r.peak_rss_gib for r in a], [r.peak_rss_gib for r in b]):8.2f}x")
        finally:
            subprocess.run(["git", "worktree", "remove", "--force", str(other)], cwd=REPO,
                           check=False)


if __name__ == "__main__":
    main()
