"""Spending by year: the chosen plan as the cash a budget holder sees, year by year.

Every cost part the optimizer prices (:data:`planner.optimize.schedule.COST_PARTS`) is
laid out in the year it falls in, in constant money of the study start (as the optimizer
uses), so that discounting each year's amount with ``SPV(d, year)`` and adding gives the
plan's total present cost exactly (NIST Handbook 135, Fuller & Petersen 1996: constant
money, real rate, end-of-year convention):

* packs, installation labour, the site-visit part of a trip: the year a pack goes in;
* trips: each trip's mobilisation the year it is flown;
* disposal: the year a pack comes out;
* days off air (``downtime``): the yearly cost of each pack's expected days without power,
  in each year of the service the optimizer prices (``min(life, horizon)`` years from
  installation, end-of-year amounts, so a pack put in at year t pays from row t + 1); the
  end year also holds the difference between that price (with its linear share beyond the
  horizon returned, as for pack prices) and the amounts booked up to the horizon, so the
  present values still add up to the optimizer's total (its pricing is unchanged);
* failure risk: ``(F(a) - F(a-1)) x`` the cost of one failure in year ``start + a`` of
  each pack's service;
* residual value: a credit (negative) in the end year ``H`` for the packs still in service;
* thermal measures: a measure's price, the year the site's first new pack goes in
  (:func:`thermal_cash_flows`); its fitting labour is installation labour that year, as the
  optimizer counts it;
* each pack at the price of the year it is bought (its chemistry's price trend), and each
  replacement's own pack when the design changes at a replacement.

Nominal money multiplies a year's constant amount by ``(1 + inflation)^year`` (NIST HB 135
ch. 4, constant versus current money).
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from planner import economics as ec
from planner.optimize.problem import FleetProblem, FleetSolution, SiteOptions, SitePlan
from planner.optimize.schedule import failure_cost

#: Columns of a spending row, in the order a reader sees them.
SPENDING_PARTS = ("packs", "labour", "trips", "disposal", "thermal", "downtime", "risk", "residual")


def _risk_by_year(flows: np.ndarray, start: int, n_years: int, probs, cost: float) -> None:
    """Add the expected failure cost of one pack's service to ``flows`` (in place)."""
    if not probs or n_years <= 0 or cost == 0.0:
        return
    p = np.asarray(probs, dtype=float)
    ages = np.arange(1, n_years + 1)
    cdf = p[np.minimum(ages, p.size) - 1]
    flows[start + ages] += np.diff(np.concatenate(([0.0], cdf))) * cost


def thermal_cash_flows(plan: SitePlan, horizon_years: int, *, labour: bool = True) -> np.ndarray:
    """Money spent on thermal measures (heater, box, shade, vault) by year: the measure
    of the first new pack, paid once the year it goes in (its energy is in the load).
    ``labour=False`` leaves out its fitting labour (booked as installation labour)."""
    out = np.zeros(horizon_years + 1)
    if plan.installations and plan.replacement_years:
        first = plan.installations[0]
        out[int(plan.replacement_years[0])] += first.measure_price + (
            first.measure_labour_cost if labour else 0.0)
    return out


def _measure_labour(plan: SitePlan, horizon_years: int) -> np.ndarray:
    return thermal_cash_flows(plan, horizon_years) - thermal_cash_flows(plan, horizon_years, labour=False)


def _downtime_by_year(out: np.ndarray, candidate, start: int, horizon_years: int, rate: float) -> None:
    """Add one pack's days off air to ``out`` in the years they happen (in place).

    The optimizer prices them as ``downtime_cost``, the present value at installation of a
    uniform yearly cost over ``min(life, horizon)`` years (NIST Handbook 135 UPV): that
    yearly cost is booked at the end of each service year up to the horizon, the part of a
    last, fractional year in proportion.
    """
    priced = float(candidate.downtime_cost)
    if priced == 0.0:
        return
    years = min(float(candidate.life_years), float(horizon_years))
    yearly = priced / float(ec.upv(rate, years))
    whole = int(np.floor(years + 1e-9))
    last = min(start + whole, horizon_years)
    out[start + 1:last + 1] += yearly
    part = years - whole
    if part > 1e-9 and start + whole + 1 <= horizon_years:
        # the fractional year's share of the uniform series, paid at the end of that year
        share = float(ec.upv(rate, years) - ec.upv(rate, whole)) * (1.0 + rate) ** (whole + 1)
        out[start + whole + 1] += yearly * share


def site_cash_flows(plan: SitePlan, site: SiteOptions, *, horizon_years: int,
                    residual_value: bool = True, rate: float = 0.0) -> dict[str, np.ndarray]:
    """Constant money by year (index 0..H) of one site's plan, one array per part.

    The site's share of trip mobilisation is not included (see :func:`spending_by_year`,
    which books each trip once in the year it is flown). ``rate`` is the real discount
    rate the optimizer priced days off air with: they are laid out by year with it.
    """
    h = int(horizon_years)
    out = {k: np.zeros(h + 1) for k in SPENDING_PARTS}
    c = plan.candidate
    years = [int(t) for t in plan.replacement_years]
    fail = failure_cost(site)
    existing = site.existing
    first = years[0] if years else h
    if existing is not None:
        if years:
            out["disposal"][first] += existing.disposal_cost
        _risk_by_year(out["risk"], 0, first, existing.failure_prob_by_age, fail)
    out["thermal"] += thermal_cash_flows(plan, h, labour=False)
    out["labour"] += _measure_labour(plan, h)
    if c is None or not years:
        return out
    ends = years[1:] + [h]
    packs = plan.installations or (c,) * len(years)
    priced_downtime = 0.0  # present value the optimizer priced, to balance in the end year
    for t1, t2, c in zip(years, ends, packs):
        out["packs"][t1] += float(c.pack_cost_in(t1))
        out["labour"][t1] += c.install_cost
        out["trips"][t1] += site.site_visit_cost
        _downtime_by_year(out["downtime"], c, t1, h, rate)
        priced_downtime += c.downtime_cost * float(ec.spv(rate, t1))
        if t2 < h:
            out["disposal"][t2] += c.disposal_cost
        _risk_by_year(out["risk"], t1, t2 - t1, c.failure_prob_by_age, fail)
    last = packs[-1]
    if residual_value:
        left = float(ec.residual_fraction(h - years[-1], last.life_years))
        out["residual"][h] -= float(last.pack_cost_in(years[-1])) * left
        priced_downtime -= last.downtime_cost * left * float(ec.spv(rate, h))
    if priced_downtime:
        booked = float(np.dot(out["downtime"], ec.spv(rate, np.arange(h + 1))))
        out["downtime"][h] += (priced_downtime - booked) / float(ec.spv(rate, h))
    return out


def spending_by_year(problem: FleetProblem, solution: FleetSolution, *, start_year: int,
                     inflation_frac: float = 0.0, regions: Iterable[str] | None = None) -> list[dict]:
    """Rows ``{year, calendar_year, <parts>, total, total_nominal, present_value}``.

    One row per year 0..H (year H is the end of the study: residual value and the last
    failure risk). ``regions`` keeps only the sites and trips of those regions.
    """
    wanted = None if regions is None else set(regions)
    totals = _part_totals(problem, solution,
                          lambda region: "fleet" if wanted is None or region in wanted else None)
    parts = totals.get("fleet") or {k: np.zeros(int(problem.horizon_years) + 1) for k in SPENDING_PARTS}
    return spending_rows(parts, rate=problem.discount_rate_frac, start_year=start_year,
                         inflation_frac=inflation_frac)


def spending_by_region(problem: FleetProblem, solution: FleetSolution, *, start_year: int,
                       inflation_frac: float = 0.0) -> list[dict]:
    """``[{region, rows}]`` for every region of the problem, sorted: the rows of
    :func:`spending_by_year` restricted to each region, from one pass over the plan
    (each site's cash flows computed once, not once per region)."""
    h = int(problem.horizon_years)
    totals = _part_totals(problem, solution, lambda region: region)
    return [{"region": r, "rows": spending_rows(
                totals.get(r) or {k: np.zeros(h + 1) for k in SPENDING_PARTS},
                rate=problem.discount_rate_frac, start_year=start_year, inflation_frac=inflation_frac)}
            for r in sorted({s.region for s in problem.sites})]


def _part_totals(problem: FleetProblem, solution: FleetSolution, bucket_of) -> dict:
    """Yearly money per part, summed into the bucket ``bucket_of(region)`` of each site and
    trip (``None``: left out), in plan order."""
    h = int(problem.horizon_years)
    sites = {s.site_id: s for s in problem.sites}
    totals: dict = {}

    def parts(region):
        key = bucket_of(region)
        if key is None:
            return None
        return totals.setdefault(key, {k: np.zeros(h + 1) for k in SPENDING_PARTS})

    for plan in solution.sites:
        mine = parts(plan.region)
        if mine is None:
            continue
        flows = site_cash_flows(plan, sites[plan.site_id], horizon_years=h,
                                residual_value=problem.residual_value, rate=problem.discount_rate_frac)
        for k in SPENDING_PARTS:
            mine[k] += flows[k]
    for trip in solution.trips:
        mine = parts(trip.region)
        if mine is not None:
            mine["trips"][trip.year] += trip.cost
    return totals


def spending_rows(parts: dict[str, np.ndarray], *, rate: float, start_year: int,
                  inflation_frac: float) -> list[dict]:
    """Rows of :func:`spending_by_year` from yearly arrays of each part (constant money)."""
    n = len(next(iter(parts.values())))
    years = np.arange(n)
    total = sum(parts[k] for k in SPENDING_PARTS)
    nominal = ec.nominal_amount(total, inflation_frac, years)
    present = total * ec.spv(rate, years)
    rows = []
    for y in range(n):
        row = {"year": int(y), "calendar_year": int(start_year) + int(y)}
        row.update({k: float(parts[k][y]) for k in SPENDING_PARTS})
        # the same expected failure cost under the name cost_breakdown and the chemistry
        # comparison use (docs/plan-json.md); not a part of its own
        row["failure_risk"] = row["risk"]
        row.update({"total": float(total[y]), "total_nominal": float(nominal[y]),
                    "present_value": float(present[y])})
        rows.append(row)
    return rows
