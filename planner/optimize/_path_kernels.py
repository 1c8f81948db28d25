"""Compiled shortest paths over years for the column-generation pricer
(:meth:`planner.optimize.pricing.Pricer.values`).

:func:`year_sweep` is the pricer's dynamic programme written as plain loops: for every
year ``t2`` and design pair, the cheapest arc into ``t2`` from any earlier year, then
(where designs share a node family) the cheapest design of each family, ties to the
lowest pair index. It compares and adds exactly what the numpy sweep does (one
addition per candidate, first minimum kept), so both give the same values and paths;
the numpy sweep builds an ``(n_pairs, t2)`` temporary and an argmin per year instead.
With numba missing, :data:`SWEEP` is ``None`` and the numpy sweep runs.
"""

from __future__ import annotations

import numpy as np

try:
    import numba as _numba
except ImportError:  # numba is optional: the numpy sweep gives the same numbers
    _numba = None


def year_sweep(cost, arc_id, node, shared, best, pred, pair_value, pair_arc):
    """Fill ``best`` (families x H+1) and ``pred`` in place, year by year.

    ``cost[p, t1, span - 1]`` is the priced cost of pair ``p``'s arc from ``t1`` lasting
    ``span`` years (+inf where none); ``arc_id`` the arc's index; ``node[p]`` the row of
    ``best`` that pair ``p`` continues from (its family). With ``shared`` the value of a
    year reaches the family through its cheapest pair; otherwise each pair writes its own
    row. ``pair_value`` and ``pair_arc`` are scratch arrays of one entry per pair.
    """
    n = cost.shape[0]
    h = best.shape[1] - 1
    for t2 in range(1, h + 1):
        for p in range(n):
            row = node[p]
            v = np.inf
            j = 0
            for t1 in range(t2):
                c = best[row, t1] + cost[p, t1, t2 - t1 - 1]
                if c < v:
                    v = c
                    j = t1
            pair_value[p] = v
            pair_arc[p] = arc_id[p, j, t2 - j - 1]
        if shared:
            # the family's cheapest pair, the first (lowest index) on ties; written only
            # where it beats what the family's row holds
            for p in range(n):
                f = node[p]
                if pair_value[p] < best[f, t2]:
                    best[f, t2] = pair_value[p]
                    pred[f, t2] = pair_arc[p]
        else:
            for p in range(n):
                if pair_value[p] < best[p, t2]:
                    best[p, t2] = pair_value[p]
                    pred[p, t2] = pair_arc[p]


SWEEP = None
if _numba is not None:
    SWEEP = _numba.njit(cache=True, nogil=True)(year_sweep)
