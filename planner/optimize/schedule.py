"""A site's replacement schedule as a path through a small time graph.

Nodes are (design, year): "a pack of this design goes in this year"; when a site may
change its design at a replacement, a node is (site, year): "a new pack goes in this
year", and every design's arcs leave and enter the same nodes. An arc
``(design, t1 -> t2)`` is one pack's service: bought and installed in year ``t1``, taken
out (and disposed of) in year ``t2`` when the next pack goes in, with
``1 <= t2 - t1 <= floor(life)``; a terminal arc ``t2 = H`` carries the site to the horizon
(``H - t1 <= life``) and earns the residual value. A site with a pack in service starts
with an "existing" arc ending at the first replacement year (or a keep arc to the
horizon). One unit of flow from the start to the horizon is one schedule; every cost
sits on an arc, so failure risk (which depends on the service length) and the residual
value (which depends on the last interval) stay exact. With the trip years fixed the
constraint matrix is a network matrix, so the LP relaxation of one site is integral
(the path / set-partitioning form of the periodic maintenance literature, e.g.
Grigoriev, van de Klundert & Spieksma 2006, EJOR 172:1, 80-98).

All arrays are built at once for a group of sites (vectorised over site x design x
year x interval; a group of 1,000 sites x 5 designs x 20 x 20 is 2 million cells).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner import economics as ec
from planner.optimize.candidates import whole_years
from planner.optimize.problem import Candidate, SiteOptions

COST_PARTS = ("packs", "labour", "trips", "disposal", "residual", "failure_risk", "downtime")
_EPS = 1e-9


@dataclass
class SiteGraphs:
    """Arcs of the time graphs of a list of sites (indices are local to the list).

    ``pair_*`` describe (site, design) pairs; ``pair_node[p]`` is the node family of a
    pair (the first pair of its site when designs may change at a replacement, else the
    first pair of its site with the same design id); ``arc_*`` pack-service arcs (``arc_t2 == H``
    is terminal); ``ex_*`` the arcs of existing packs (``ex_pair == -1`` keeps the
    existing pack to the horizon, ``ex_t == H``). ``*_parts`` hold the present cost split
    into :data:`COST_PARTS` (site-visit cost under "trips"); ``*_cost`` is their sum.
    ``arc_spend_t1`` / ``arc_spend_t2`` / ``ex_spend`` are undiscounted money spent in the
    start / end year (for an annual budget).
    """

    horizon_years: int
    sites: list[SiteOptions]
    failure_cost: np.ndarray
    pair_site: np.ndarray
    pair_cand: list[Candidate]
    pair_node: np.ndarray
    arc_pair: np.ndarray
    arc_t1: np.ndarray
    arc_t2: np.ndarray
    arc_parts: dict[str, np.ndarray]
    arc_cost: np.ndarray
    arc_mass_kg: np.ndarray
    arc_spend_t1: np.ndarray
    arc_spend_t2: np.ndarray
    ex_site: np.ndarray
    ex_pair: np.ndarray
    ex_t: np.ndarray
    ex_parts: dict[str, np.ndarray]
    ex_cost: np.ndarray
    ex_spend: np.ndarray

    @property
    def arc_site(self) -> np.ndarray:
        cached = self.__dict__.get("_arc_site")
        if cached is None or cached.size != self.arc_pair.size:
            cached = self.pair_site[self.arc_pair]
            self.__dict__["_arc_site"] = cached
        return cached


def failure_cost(site: SiteOptions) -> float:
    """Cost of one unplanned failure: emergency trip plus downtime until the site can
    be reached (expected wait over a uniformly distributed failure time)."""
    wait = ec.expected_wait_days(site.access_months) if site.access_months else 0.0
    return float(site.unplanned_trip_cost + site.downtime_cost_per_day * wait)


def _cum_discounted_pdf(probs_list, n_ages: int, rate: float) -> np.ndarray:
    """``out[i, l] = sum_{a=1..l} (F_i(a) - F_i(a-1)) * SPV(d, a)``, shape (n, n_ages + 1)."""
    out = np.zeros((len(probs_list), n_ages + 1))
    ages = np.arange(1, n_ages + 1)
    for i, probs in enumerate(probs_list):  # one short tuple per design, not per hour
        if not probs:
            continue
        p = np.asarray(probs, dtype=float)
        cdf = p[np.minimum(ages, p.size) - 1]
        pdf = np.diff(np.concatenate(([0.0], cdf)))
        out[i, 1:] = np.cumsum(pdf * ec.spv(rate, ages))
    return out


def _pair_nodes(cands: list[list[Candidate]], design_changes: bool) -> np.ndarray:
    """Node family of each (site, design) pair: the first pair of its site with the same
    thermal measure when designs may change (a site keeps its measure), else the first
    pair of the site with the same design; a design offered in install windows (a
    growing load) is its chemistry, charge voltage and measure, its pack growing with
    the load."""
    out, base = [], 0
    for cs in cands:  # per site, a few tens of candidates
        first = {}
        for k, c in enumerate(cs):
            windowed = c.first_install_year > 0 or c.last_install_year is not None
            key = (c.thermal_measure if design_changes else
                   (c.chemistry, c.charge_voltage_v_per_cell, c.thermal_measure) if windowed else c.design_id)
            out.append(first.setdefault(key, base + k))
        base += len(cs)
    return np.array(out, dtype=np.int64)


def build_graphs(sites: list[SiteOptions], cands: list[list[Candidate]], *, horizon_years: int,
                 rate: float, residual_value: bool = True, design_changes: bool = False) -> SiteGraphs:
    """Arcs and their costs for every site of ``sites`` with its screened candidates.

    A pack's purchase cost follows its price trend from the year it is bought
    (:meth:`Candidate.pack_cost_in`); arcs start only in its install years.
    """
    h = int(horizon_years)
    c_fail = np.array([failure_cost(s) for s in sites], dtype=float)
    pair_site = np.array([i for i, cs in enumerate(cands) for _ in cs], dtype=np.int64)
    pair_cand = [c for cs in cands for c in cs]
    pair_node = _pair_nodes(cands, design_changes)
    n_pairs = len(pair_cand)

    def col(attr):
        return np.array([getattr(c, attr) for c in pair_cand], dtype=float)

    life = col("life_years")
    life_whole = np.array([whole_years(x) for x in life], dtype=np.int64)
    pack_price, labour, disposal, mass = col("pack_cost"), col("install_cost"), col("disposal_cost"), col("mass_kg")
    downtime, trend = col("downtime_cost"), col("price_trend_frac_per_year")
    first_t = np.array([c.first_install_year for c in pair_cand], dtype=np.int64)
    last_t = np.array([h - 1 if c.last_install_year is None else c.last_install_year for c in pair_cand],
                      dtype=np.int64)
    visit = np.array([s.site_visit_cost for s in sites], dtype=float)[pair_site] if n_pairs else np.zeros(0)
    risk_cum = _cum_discounted_pdf([c.failure_prob_by_age for c in pair_cand], h, rate)

    # a thermal measure is paid once, with the site's first new pack: on the start arcs
    # of a site without a pack in service, on the existing-pack arcs otherwise
    m_price, m_labour = col("measure_price"), col("measure_labour_cost")
    has_ex = np.array([s.existing is not None for s in sites], dtype=bool)

    # first year a new pack may go in: 0 without an existing pack; with one, any year up
    # to its remaining life (the existing arcs below connect to those nodes)
    t1 = np.arange(h)[None, :, None]
    span = np.arange(1, h + 1)[None, None, :]
    t2 = t1 + span
    inner = (span <= life_whole[:, None, None]) & (t2 <= h - 1)
    terminal = (t2 == h) & (span <= life[:, None, None] + _EPS)
    window = (t1 >= first_t[:, None, None]) & (t1 <= last_t[:, None, None])
    p_idx, a_t1, span_i = np.nonzero((inner | terminal) & window)
    a_span = span_i + 1
    a_t2 = a_t1 + a_span
    is_term = a_t2 == h
    f1 = ec.spv(rate, a_t1)
    pack = pack_price[p_idx] * (1.0 + trend[p_idx]) ** a_t1  # bought in year t1
    starts = (a_t1 == 0) & ~has_ex[pair_site[p_idx]] if n_pairs else np.zeros(0, dtype=bool)
    once_price = np.where(starts, m_price[p_idx], 0.0)
    once_labour = np.where(starts, m_labour[p_idx], 0.0)
    # share of the last pack's price (and of its days off air) left at the horizon
    left = (ec.residual_fraction(a_span, life[p_idx]) * ec.spv(rate, h) * is_term
            if residual_value else np.zeros(p_idx.size))
    parts = {
        "packs": (pack + once_price) * f1,
        "labour": (labour[p_idx] + once_labour) * f1,
        "trips": visit[p_idx] * f1,
        "disposal": np.where(is_term, 0.0, disposal[p_idx] * ec.spv(rate, a_t2)),
        "residual": -pack * left,
        "failure_risk": c_fail[pair_site[p_idx]] * f1 * risk_cum[p_idx, a_span],
        "downtime": downtime[p_idx] * (f1 - left),
    }

    # existing packs: taken out in year t (0..min(floor R, H-1)), then design k goes in
    ex_rows = []
    for i, s in enumerate(sites):  # per-site bookkeeping of at most one existing pack
        if s.existing is None:
            continue
        r = max(0.0, float(s.existing.remaining_life_years))
        last = min(whole_years(r), h - 1)
        cum = _cum_discounted_pdf([s.existing.failure_prob_by_age], h, rate)[0]
        for p in np.unique(pair_node[pair_site == i]):  # one start per node family
            for t in range(last + 1):
                ex_rows.append((i, p, t, s.existing.disposal_cost, c_fail[i] * cum[t], m_price[p], m_labour[p]))
        if r >= h - _EPS:
            ex_rows.append((i, -1, h, 0.0, c_fail[i] * cum[h], 0.0, 0.0))
    ex = np.array(ex_rows, dtype=float).reshape(-1, 7)
    ex_t = ex[:, 2].astype(np.int64)
    ex_disp = np.where(ex_t < h, ex[:, 3], 0.0)
    ex_parts = {k: np.zeros(len(ex)) for k in COST_PARTS}
    ex_parts["disposal"] = ex_disp * ec.spv(rate, ex_t)
    ex_parts["failure_risk"] = ex[:, 4]
    ex_parts["packs"] = ex[:, 5] * ec.spv(rate, ex_t)
    ex_parts["labour"] = ex[:, 6] * ec.spv(rate, ex_t)

    return SiteGraphs(
        horizon_years=h, sites=list(sites), failure_cost=c_fail,
        pair_site=pair_site, pair_cand=pair_cand, pair_node=pair_node,
        arc_pair=p_idx.astype(np.int64), arc_t1=a_t1.astype(np.int64), arc_t2=a_t2.astype(np.int64),
        arc_parts=parts, arc_cost=sum(parts.values()), arc_mass_kg=mass[p_idx],
        arc_spend_t1=pack + (downtime + labour + visit)[p_idx] + once_price + once_labour,
        arc_spend_t2=np.where(is_term, 0.0, disposal[p_idx]),
        ex_site=ex[:, 0].astype(np.int64), ex_pair=ex[:, 1].astype(np.int64), ex_t=ex_t,
        ex_parts=ex_parts, ex_cost=sum(ex_parts.values()) if len(ex) else np.zeros(0),
        ex_spend=ex_disp + ex[:, 5] + ex[:, 6],
    )


def trace_paths(g: SiteGraphs, arc_on: np.ndarray, ex_on: np.ndarray):
    """Per site: (pair index or -1, replacement years, arc indices, existing-arc index).

    ``arc_on`` / ``ex_on`` are boolean selections of an integral flow.
    """
    out = []
    arcs_by_site = {}
    for a in np.nonzero(arc_on)[0]:
        arcs_by_site.setdefault(int(g.pair_site[g.arc_pair[a]]), []).append(int(a))
    ex_by_site = {int(g.ex_site[e]): int(e) for e in np.nonzero(ex_on)[0]}
    for i in range(len(g.sites)):
        arcs = sorted(arcs_by_site.get(i, []), key=lambda a: g.arc_t1[a])
        e = ex_by_site.get(i)
        pair = int(g.arc_pair[arcs[0]]) if arcs else (int(g.ex_pair[e]) if e is not None else -1)
        years = tuple(int(g.arc_t1[a]) for a in arcs)
        out.append((pair, years, arcs, e))
    return out
