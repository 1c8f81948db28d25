"""The pricing problem of column generation: for every site at once, its cheapest
schedules (paths through its time graph, :mod:`planner.optimize.schedule`) with dual
prices added to the arcs.

The shortest path runs as one vectorised step per year over every design of every site
(compiled with numba in :mod:`planner.optimize._path_kernels` when it is installed);
:func:`planner.optimize.colgen.generate_columns` calls it every pricing round, and the
plans are read with it once the trip years are fixed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.optimize import _path_kernels as _paths
from planner.optimize.schedule import SiteGraphs


@dataclass
class Column:
    site: int
    pair: int
    arcs: tuple[int, ...]
    ex: int | None
    years: tuple[int, ...]
    cost: float


class Pricer:
    """Shortest paths with dual prices for every site of a :class:`SiteGraphs`.

    ``engine``: "auto" runs the year sweep compiled with numba when it is installed;
    "numpy" forces the numpy sweep (both give the same values and paths)."""

    def __init__(self, g: SiteGraphs, single_design: bool = False, engine: str = "auto"):
        self.g = g
        self.engine = engine
        h = g.horizon_years
        self.h = h
        n_pairs = len(g.pair_cand)
        self.n_pairs = n_pairs
        self.has_ex = np.array([s.existing is not None for s in g.sites], dtype=bool)
        # dense (design, start year, service years - 1) layout of the arcs: the shortest
        # path then runs as H vectorised steps over every design of every site
        span = g.arc_t2 - g.arc_t1
        self.dense = (g.arc_pair * h + g.arc_t1) * h + (span - 1)
        self.arc_id = np.full(n_pairs * h * h, -1, dtype=np.int64)
        self.arc_id[self.dense] = np.arange(g.arc_pair.size)
        self.arc_id = self.arc_id.reshape(n_pairs, h, h)
        ex_new = g.ex_pair >= 0
        self.ex_new = np.nonzero(ex_new)[0]
        self.ex_keep = np.nonzero(~ex_new)[0]
        self.node = g.pair_node
        # node families shared by several designs (a site that may change design): the
        # best arc into a node is then the cheapest over its designs
        self.shared = bool(n_pairs) and np.unique(self.node).size < n_pairs
        # existing-pack arcs that start each family's paths: (row of best, existing arc)
        self.ex_rows, self.ex_arcs = g.ex_pair[self.ex_new], self.ex_new
        self.single = None
        if single_design:
            # every design its own family (paths that keep one design: still paths of
            # the shared graph); an existing arc into a family starts each of its designs
            self.node = np.arange(n_pairs)
            self.shared = False
            order = np.argsort(g.ex_pair[self.ex_new], kind="stable")
            fam = g.ex_pair[self.ex_new][order]
            lo = np.searchsorted(fam, g.pair_node, side="left")
            hi = np.searchsorted(fam, g.pair_node, side="right")
            counts = hi - lo
            self.ex_rows = np.repeat(np.arange(n_pairs), counts)
            self.ex_arcs = self.ex_new[order][np.concatenate(
                [np.arange(a, b) for a, b in zip(lo, hi)]) if counts.sum() else np.zeros(0, dtype=np.int64)]
        elif self.shared:
            # one-design paths as extra columns: pricing one path per site and round
            # converges slowly; the best path of each design adds variety cheaply
            self.single = Pricer(g, single_design=True, engine=engine)
            # families laid out contiguously, so a family's cheapest design is a segment
            # minimum (np.minimum.reduceat) instead of a sort per year
            self.perm = np.argsort(self.node, kind="stable")
            fam_sorted = self.node[self.perm]
            self.seg_start = np.flatnonzero(np.r_[True, fam_sorted[1:] != fam_sorted[:-1]])
            self.seg_fam = fam_sorted[self.seg_start]
            self.seg_len = np.diff(np.r_[self.seg_start, n_pairs])
        self.new_nodes = np.unique(self.node[~self.has_ex[g.pair_site]])

    def values(self, arc_extra: np.ndarray, ex_extra: np.ndarray):
        """Shortest-path value per node family (and per site's keep arc) with ``arc_extra``
        / ``ex_extra`` added to the arc costs; remembers predecessors for :meth:`column`.

        The returned per-pair array holds each node family's value on its first pair and
        +inf on the other pairs of a shared family."""
        g, h, n = self.g, self.h, self.n_pairs
        cost = np.full(n * h * h, np.inf)
        cost[self.dense] = g.arc_cost + arc_extra
        cost = cost.reshape(n, h, h)
        best = np.full((n, h + 1), np.inf)
        pred = np.full((n, h + 1), -1, dtype=np.int64)
        best[self.new_nodes, 0] = 0.0
        if self.ex_arcs.size:
            e, r = self.ex_arcs, self.ex_rows
            best[r, g.ex_t[e]] = g.ex_cost[e] + ex_extra[e]
            pred[r, g.ex_t[e]] = -2 - e  # existing arc e encoded as -2 - e
        if _paths.SWEEP is not None and self.engine != "numpy":
            _paths.SWEEP(cost, self.arc_id, self.node, self.shared, best, pred, np.empty(n),
                         np.empty(n, dtype=np.int64))
        else:
            self._numpy_sweep(cost, best, pred)
        n_sites = len(g.sites)
        keep_val = np.full(n_sites, np.inf)
        keep_arc = np.full(n_sites, -1, dtype=np.int64)
        if self.ex_keep.size:
            e = self.ex_keep
            keep_val[g.ex_site[e]] = g.ex_cost[e] + ex_extra[e]
            keep_arc[g.ex_site[e]] = e
        self._last = (pred, pred[:, h])
        return best[:, h], keep_val, keep_arc

    def _numpy_sweep(self, cost, best, pred):
        """The year-by-year sweep of :meth:`values` in numpy (the compiled
        :func:`planner.optimize._path_kernels.year_sweep` does the same operations)."""
        n, h = self.n_pairs, self.h
        rows = np.arange(n)
        node = self.node
        for t2 in range(1, h + 1):  # years of the horizon (about 20), each step over all designs
            t1 = np.arange(t2)
            cand = best[node, :t2] + cost[:, t1, t2 - t1 - 1]
            j = np.argmin(cand, axis=1)
            v = cand[rows, j]
            arc = self.arc_id[rows, j, t2 - j - 1]
            if self.shared:
                # cheapest design per node family (first pair in family order on ties)
                vp = v[self.perm]
                low = np.minimum.reduceat(vp, self.seg_start)
                at = np.where(vp <= np.repeat(low, self.seg_len), np.arange(n), n)
                win = self.perm[np.minimum.reduceat(at, self.seg_start)]
                fam, v, arc = self.seg_fam, low, arc[win]
            else:
                fam = rows
            better = v < best[fam, t2]
            best[fam[better], t2] = v[better]
            pred[fam[better], t2] = arc[better]

    def column(self, pair: int, site: int, keep_arc: int = -1) -> Column:
        """Backtrack the cheapest path of node family ``pair`` (or the keep arc) found by
        :meth:`values`; the column's ``pair`` is the design of its first new pack."""
        g = self.g
        if pair < 0:
            return Column(site, -1, (), keep_arc, (), float(g.ex_cost[keep_arc]))
        pred, final_arc = self._last
        arcs = [int(final_arc[pair])]
        ex = None
        while True:  # at most H steps back through the years
            prev = int(pred[pair, int(g.arc_t1[arcs[-1]])])
            if prev >= 0:
                arcs.append(prev)
            else:
                if prev <= -2:
                    ex = -2 - prev
                break
        arcs.reverse()
        real = float(g.arc_cost[arcs].sum() + (g.ex_cost[ex] if ex is not None else 0.0))
        return Column(site, int(g.arc_pair[arcs[0]]), tuple(arcs), ex, tuple(int(g.arc_t1[a]) for a in arcs),
                      real)

    def price(self, arc_extra, ex_extra, sigma=None, per_site: int = 1, tol: float = 0.0):
        """Up to ``per_site`` columns per site (distinct designs), cheapest first, whose
        priced cost minus ``sigma`` is below ``-tol`` (all sites' best when sigma is None).

        Returns ``(best priced value per site, columns)``.
        """
        g = self.g
        final, keep_val, keep_arc = self.values(arc_extra, ex_extra)
        n_sites = len(g.sites)
        site_val = np.minimum(keep_val, np.inf)
        if self.n_pairs:
            np.minimum.at(site_val, g.pair_site, final)
        limit = np.full(n_sites, np.inf) if sigma is None else sigma - tol
        cols = []
        # candidates: (site, value, pair) for every design path and keep arc under the limit
        pair_ok = np.isfinite(final) & (final < limit[g.pair_site]) if self.n_pairs else np.zeros(0, bool)
        pairs = np.nonzero(pair_ok)[0]
        order = np.lexsort((final[pairs], g.pair_site[pairs]))
        pairs = pairs[order]
        taken = np.zeros(n_sites, dtype=np.int64)
        keep_ok = np.isfinite(keep_val) & (keep_val < limit)
        for s_ in np.nonzero(keep_ok)[0]:
            cols.append(self.column(-1, int(s_), int(keep_arc[s_])))
            taken[s_] += 1
        for p in pairs:  # a few per site
            s_ = int(g.pair_site[p])
            if taken[s_] >= per_site:
                continue
            taken[s_] += 1
            cols.append(self.column(int(p), s_))
        if self.single is not None and per_site > 1:
            _, more = self.single.price(arc_extra, ex_extra, sigma, per_site=per_site, tol=tol)
            cols += [c for c in more if c.pair >= 0]
        return site_val, cols
