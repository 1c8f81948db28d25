"""Trip groups, and the site plans and trips read from the paths a model chose.

Shared by both fleet models (:mod:`planner.optimize.path_model`,
:mod:`planner.optimize.column_plan`): the grouping of a region's sites by access month,
the cost breakdown of each site's plan with its share of the trips, and the money a
plan spends per year.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from planner import economics as ec
from planner.optimize.problem import SiteOptions, SitePlan, Trip
from planner.optimize.schedule import COST_PARTS, SiteGraphs


class TripGroup(NamedTuple):
    """Sites of one region that one trip a year can serve: ``members`` index the site
    list given to :func:`trip_groups`; ``month`` is 0 for sites that need no visit."""

    region: str
    month: int
    members: list[int]


def trip_groups(sites: list[SiteOptions]) -> list[TripGroup]:
    """Split each region's sites into trip groups that can travel in one month.

    Greedy: the month open to most of the region's remaining sites (earliest on ties)
    forms a group; repeat. Sites that need no visit sit in a group of month 0.
    """
    out = []
    regions = sorted({s.region for s in sites})
    for region in regions:
        idx = [i for i, s in enumerate(sites) if s.region == region]
        no_visit = [i for i in idx if not sites[i].access_months]
        left = [i for i in idx if sites[i].access_months]
        while left:
            counts = np.zeros(13, dtype=int)
            for i in left:
                counts[sorted(set(int(m) for m in sites[i].access_months))] += 1
            month = int(np.argmax(counts))
            members = [i for i in left if month in sites[i].access_months]
            out.append(TripGroup(region, month, members))
            left = [i for i in left if month not in sites[i].access_months]
        if no_visit:
            out.append(TripGroup(region, 0, no_visit))
    return out


def plans_and_trips(gr: SiteGraphs, site_idx, paths, y, region, month, trip_cost, rate):
    """Site plans (with cost breakdown and trip shares) and trips of one trip group.

    ``paths[i]`` is ``(pair, years, arcs, existing_arc)`` for site ``site_idx[i]`` of
    ``gr``; ``y[t]`` the number of trips in year t. The mobilisation of a trip is shared
    equally by the sites it serves.
    """
    plans, trips = [], []
    visitors = {}
    for i, (_pair, years, _arcs, _e) in enumerate(paths):
        for t in years:
            visitors.setdefault(t, []).append(i)
    share = {}
    mass_at = [dict(zip(years, gr.arc_mass_kg[list(arcs)])) for _, years, arcs, _ in paths]
    for t, members in sorted(visitors.items()):
        count = max(1, int(round(y[t])))
        mass = float(sum(mass_at[i][t] for i in members))
        cost = trip_cost * count
        trips.append(Trip(region=region, year=int(t), month=int(month),
                          site_ids=tuple(gr.sites[site_idx[i]].site_id for i in members), pack_count=len(members),
                          pack_mass_kg=mass, count=count, cost=float(cost)))
        share[t] = cost * float(ec.spv(rate, t)) / len(members)
    for i, (pair, years, arcs, e) in enumerate(paths):
        parts = {}
        for k in COST_PARTS:
            parts[k] = float(gr.arc_parts[k][list(arcs)].sum()) if arcs else 0.0
            if e is not None:
                parts[k] += float(gr.ex_parts[k][e])
        parts["trips"] += float(sum(share[t] for t in years))
        site = gr.sites[site_idx[i]]
        plans.append(SitePlan(site_id=site.site_id, region=site.region,
                              candidate=gr.pair_cand[pair] if pair >= 0 else None,
                              replacement_years=tuple(years),
                              replacement_months=tuple(int(month) for _ in years),
                              cost=ec.CostBreakdown(**parts),
                              installations=tuple(gr.pair_cand[gr.arc_pair[a]] for a in arcs)))
    return plans, trips


def annual_spend(problem, plans, trips) -> np.ndarray:
    """Undiscounted money spent per year by a plan (packs, labour, visits, disposal, trips)."""
    h = int(problem.horizon_years)
    spend = np.zeros(h)
    sites = {s.site_id: s for s in problem.sites}
    for p in plans:
        s = sites[p.site_id]
        for j, (t, c) in enumerate(zip(p.replacement_years, p.installations)):
            spend[t] += float(c.pack_cost_in(t)) + c.downtime_cost + c.install_cost + s.site_visit_cost
            if j > 0:
                spend[t] += p.installations[j - 1].disposal_cost
            else:
                spend[t] += c.measure_price + c.measure_labour_cost  # thermal measure, once
            if j == 0 and s.existing is not None:
                spend[t] += s.existing.disposal_cost
    for tr in trips:
        spend[tr.year] += tr.cost
    return spend

