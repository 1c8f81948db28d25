"""Solver selection and honest reporting for the fleet MILP (PuLP front end).

HiGHS runs in-process through PuLP (``pulp.HiGHS``, via highspy) when available, the
CBC bundled with PuLP otherwise. Traps measured on this machine (research note
ecosystem.md §1) and handled here:

* HiGHS prints a banner to stdout even with ``msg=False``: file descriptor 1 is
  redirected to /dev/null at the OS level around the solve, so ``--json -`` stays clean;
* after a time-limited solve ``LpStatus`` still says "Optimal": the status is read from
  ``prob.sol_status`` and the solver's own model status / gap;
* after an infeasible CBC solve the objective still has a value: the status is checked
  before any value is read;
* a non-finite cost (an overflowed money amount) makes HiGHS spin past its time limit:
  the objective is checked finite before solving, and scaled so its largest coefficient
  is at most :data:`MAX_SCALED_COST` (HiGHS treats costs from 1e20 as infinite).
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import sys
import tempfile
import time
import warnings
from dataclasses import dataclass

import numpy as np
import pulp


@dataclass
class SolveReport:
    """What one MILP solve achieved. ``status``: "optimal" (within the relative gap),
    "feasible" (a plan, limit reached), "infeasible" or "no_solution"."""

    status: str
    objective: float
    best_bound: float
    gap_frac: float
    solver_name: str
    seconds: float
    values: np.ndarray | None
    build_seconds: float = 0.0


def highs_available() -> bool:
    """True when PuLP can run HiGHS in-process (highspy importable)."""
    try:
        return bool(pulp.HiGHS(msg=False).available())
    except Exception:  # a broken highspy install must not stop the planner: fall back to CBC
        return False


def pick_solver(name: str) -> str:
    """"highs" or "cbc" for ``name`` in {"auto", "highs", "cbc"}; auto prefers HiGHS."""
    key = (name or "auto").lower()
    if key == "auto":
        return "highs" if highs_available() else "cbc"
    if key == "highs" and not highs_available():
        return "cbc"
    if key not in ("highs", "cbc"):
        raise ValueError(f"solver must be 'auto', 'highs' or 'cbc', found {name!r}")
    return key


@contextlib.contextmanager
def quiet_stdout():
    """Send anything written to file descriptor 1 (C libraries included) to /dev/null."""
    sys.stdout.flush()
    try:
        saved = os.dup(1)
    except OSError:  # no real fd 1 (embedded interpreter): nothing to protect
        yield
        return
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        yield
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


#: Largest objective coefficient handed to the solver; larger objectives are divided down.
MAX_SCALED_COST = 1e6


def objective_scale(c: np.ndarray, offset: float = 0.0) -> float:
    """The divisor that brings the largest |cost| to at most MAX_SCALED_COST (>= 1).

    Raises :class:`planner.errors.InputError` when a cost or the offset is not finite:
    the solver would otherwise search without end (money fields are bounded in
    ``planner.study.schema``; this guards every other way in).
    """
    from planner.errors import InputError

    if not (np.all(np.isfinite(c)) and math.isfinite(offset)):
        raise InputError("the cost model holds an amount too large to be a finite number; "
                         "expected money fields within their documented bounds "
                         "(docs/study-file.md)", source="optimizer")
    largest = float(np.max(np.abs(c))) if c.size else 0.0
    return max(1.0, largest / MAX_SCALED_COST)


def gap(objective: float, bound: float) -> float:
    """Relative gap ``(objective - bound) / max(|objective|, 1e-9)``, never negative."""
    if not (math.isfinite(objective) and math.isfinite(bound)):
        return float("inf")
    return max(0.0, (objective - bound) / max(abs(objective), 1e-9))


def _build_pulp(c, rows, cols, vals, row_lo, row_hi, col_ub, integer):
    prob = pulp.LpProblem("fleet", pulp.LpMinimize)
    xs = [
        prob.add_variable(f"x{i}", 0.0, None if not math.isfinite(u) else float(u),
                          cat=pulp.LpInteger if integer[i] else pulp.LpContinuous)
        for i, u in enumerate(col_ub)
    ]
    nz = np.nonzero(c)[0]
    prob.setObjective(pulp.LpAffineExpression([(xs[i], float(c[i])) for i in nz]))
    order = np.argsort(rows, kind="stable")
    rows, cols, vals = rows[order], cols[order], vals[order]
    starts = np.searchsorted(rows, np.arange(len(row_lo) + 1))
    for j in range(len(row_lo)):  # one PuLP constraint object per row: PuLP's own API
        expr = pulp.LpAffineExpression(
            [(xs[k], float(v)) for k, v in zip(cols[starts[j]:starts[j + 1]], vals[starts[j]:starts[j + 1]])])
        lo, hi = row_lo[j], row_hi[j]
        if lo == hi:
            prob += (expr == float(lo)), f"r{j}"
        elif math.isfinite(hi):
            prob += (expr <= float(hi)), f"r{j}"
        else:
            prob += (expr >= float(lo)), f"r{j}"
    return prob, xs


_CBC_BOUND = re.compile(r"^(?:Lower bound|Best possible):\s*([-+0-9.eE]+)", re.M)


def solve_milp(c, rows, cols, vals, row_lo, row_hi, col_ub, integer, *, solver: str = "auto",
               time_limit_s: float = 60.0, gap_rel_frac: float = 0.005, offset: float = 0.0) -> SolveReport:
    """Minimise ``c @ x + offset`` subject to ``row_lo <= A x <= row_hi``, ``0 <= x <= col_ub``.

    ``A`` is given as coordinates (``rows``, ``cols``, ``vals``); ``integer`` marks integer
    columns. The model is built in PuLP and solved by HiGHS or CBC with the time limit and
    relative gap given.
    """
    name = pick_solver(solver)
    t0 = time.perf_counter()
    c = np.asarray(c, dtype=float)
    scale = objective_scale(c, offset)
    has_int = bool(np.any(integer))
    prob, xs = _build_pulp(c / scale, np.asarray(rows), np.asarray(cols), np.asarray(vals, dtype=float),
                           np.asarray(row_lo, dtype=float), np.asarray(row_hi, dtype=float),
                           np.asarray(col_ub, dtype=float), np.asarray(integer, dtype=bool))
    build_seconds = time.perf_counter() - t0
    limit = max(1.0, float(time_limit_s))
    bound = float("nan")
    text = ""
    with quiet_stdout():
        if name == "highs":
            prob.solve(pulp.HiGHS(msg=False, timeLimit=limit, gapRel=gap_rel_frac, threads=1))
            h = prob.solverModel
            info = h.getInfo()
            if has_int:
                bound = float(info.mip_dual_bound) * scale
        else:
            with tempfile.TemporaryDirectory() as tmp:
                log = os.path.join(tmp, "cbc.log")
                with warnings.catch_warnings():
                    # PuLP 3.3 flags its bundled CBC as deprecated for 4.0; it is what ships today
                    warnings.simplefilter("ignore", DeprecationWarning)
                    cmd = pulp.PULP_CBC_CMD(msg=False, timeLimit=limit, gapRel=gap_rel_frac,
                                            threads=1, logPath=log)
                prob.solve(cmd)
                text = open(log, encoding="utf-8", errors="replace").read() if os.path.exists(log) else ""
            found = _CBC_BOUND.findall(text)
            if found:
                bound = float(found[-1]) * scale
    seconds = time.perf_counter() - t0
    sol = prob.sol_status
    if sol in (pulp.LpSolutionInfeasible, pulp.LpSolutionUnbounded) or prob.status == pulp.LpStatusInfeasible:
        return SolveReport("infeasible", float("nan"), float("nan"), float("inf"), name, seconds, None,
                           build_seconds)
    if sol not in (pulp.LpSolutionOptimal, pulp.LpSolutionIntegerFeasible):
        return SolveReport("no_solution", float("nan"), float("nan"), float("inf"), name, seconds, None,
                           build_seconds)
    values = np.array([x.varValue if x.varValue is not None else 0.0 for x in xs])
    objective = float(c @ values) + offset
    if not has_int:
        bound_total = objective  # an LP solved to optimality
    elif not math.isfinite(bound) and sol == pulp.LpSolutionOptimal:
        # CBC writes no bound line when it stops optimal: a completed search proves the
        # objective, a stop on the gap tolerance only proves objective minus that gap
        proved = "Search completed" in text and "gap" not in text.split("Search completed")[-1][:80].lower()
        bound_total = objective if proved else objective - gap_rel_frac * abs(objective)
    else:
        bound_total = (bound + offset) if math.isfinite(bound) else float("-inf")
    bound_total = min(bound_total, objective)
    status = "optimal" if sol == pulp.LpSolutionOptimal else "feasible"
    return SolveReport(status, objective, bound_total, gap(objective, bound_total), name, seconds, values,
                       build_seconds)
