"""Plain data passed into and out of the fleet optimizer.

The pipeline builds a :class:`FleetProblem` (sites, each with its candidate designs and
their predicted lives) and :func:`planner.optimize.solve_fleet` answers a
:class:`FleetSolution`. Money is in the study's currency; years count from the start of
the study (year 0 = start); present values are at year 0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.economics import CostBreakdown


@dataclass(frozen=True)
class Candidate:
    """One pack design for one site, with its predicted life there.

    ``pack_cost`` is the purchase price including the fixed part, ``install_cost`` the
    installation labour and ``disposal_cost`` the cost of taking the pack out (per pack).
    ``downtime_cost`` is the present value, at installation, of the pack's expected days
    off air over its service; it is paid with the pack and its share beyond the horizon
    is credited like the residual value.
    ``life_years`` is how long the pack can carry the site; a replacement is planned at
    or before it. ``failure_prob_by_age[i]`` is the probability that the pack can no
    longer carry the site before age ``i + 1`` years (cumulative), or None when life is
    treated as certain.

    ``price_trend_frac_per_year`` is the real yearly change of the purchase price (for
    example -0.03): a pack bought in year t costs ``pack_cost * (1 + trend)^t`` (days off
    air do not follow the market). A candidate may go in only in
    years ``first_install_year`` .. ``last_install_year`` (None: to the end of the study),
    so a design sized for a grown load can be offered from the year it applies.
    ``thermal_measure`` names the heat or cold measure the pack is installed with ("" or
    "none": none); its ``measure_price`` and ``measure_labour_cost`` are paid once, with
    the site's first new pack, and a site keeps its measure to the end of the study.
    """

    design_id: str
    chemistry: str
    oversize_factor: float
    charge_voltage_v_per_cell: float
    capacity_wh: float
    mass_kg: float
    pack_cost: float
    install_cost: float
    disposal_cost: float
    life_years: float
    failure_prob_by_age: tuple[float, ...] | None = None
    limiting_cause: str = ""
    downtime_cost: float = 0.0
    price_trend_frac_per_year: float = 0.0
    first_install_year: int = 0
    last_install_year: int | None = None
    thermal_measure: str = ""
    measure_price: float = 0.0
    measure_labour_cost: float = 0.0

    def pack_cost_in(self, years):
        """Purchase cost of this pack bought in year(s) ``years`` (0 = start), real money."""
        return self.pack_cost * (1.0 + self.price_trend_frac_per_year) ** np.asarray(years, dtype=float)


@dataclass(frozen=True)
class ExistingPack:
    """The pack in service at the start of the study.

    ``remaining_life_years`` comes from the aging engine run from the pack's age (or
    calibrated to a measured capacity); ``failure_prob_by_age[i]`` is the probability it
    fails to carry the site within ``i + 1`` years from now.
    """

    remaining_life_years: float
    chemistry: str = ""
    capacity_wh: float = 0.0
    mass_kg: float = 0.0
    disposal_cost: float = 0.0
    failure_prob_by_age: tuple[float, ...] | None = None


@dataclass(frozen=True)
class SiteOptions:
    """One site as the optimizer sees it.

    ``access_months`` are the months (1-12) a crew can reach the site. ``site_visit_cost``
    is the per-site part of a trip (the trip's mobilisation is per region, in
    :attr:`FleetProblem.trip_cost_by_region`). ``unplanned_trip_cost`` and
    ``downtime_cost_per_day`` price an unplanned failure. ``unserved_reason`` lets the
    pipeline say why ``candidates`` is empty (for example "no candidate carries the site
    through -35 °C without a heater").
    """

    site_id: str
    region: str
    access_months: tuple[int, ...]
    candidates: tuple[Candidate, ...] | list[Candidate]
    existing: ExistingPack | None = None
    site_visit_cost: float = 0.0
    downtime_cost_per_day: float = 0.0
    unplanned_trip_cost: float = 0.0
    unserved_reason: str = ""


@dataclass(frozen=True)
class FleetProblem:
    """The whole decision: every site, the study settings, fleet limits and solver options.

    ``horizon_years`` H: replacements happen in whole years 0..H-1; the residual value of
    the packs in service is credited at year H. ``discount_rate_frac`` is the real rate.
    ``crew_site_visits_per_year`` and ``annual_budget`` (undiscounted spending per year)
    are fleet-wide limits; ``payload_kg_per_trip`` caps the pack mass one trip carries
    (a region may fly several trips in a year). ``solver`` is "highs", "cbc" or "auto".
    ``method``: "path" (the full path model per trip group; exact), "columns" (column
    generation then an integer problem over the generated schedules; for large fleets,
    needs highspy) or "auto" (path while the model is small, columns above).
    ``design_changes``: each replacement may install any candidate of the site (True), or
    a site keeps one design across its replacements (False).
    """

    sites: tuple[SiteOptions, ...] | list[SiteOptions]
    horizon_years: int
    discount_rate_frac: float
    trip_cost_by_region: dict[str, float]
    crew_site_visits_per_year: int | None = None
    annual_budget: float | None = None
    payload_kg_per_trip: float | None = None
    residual_value: bool = True
    time_limit_s: float = 60.0
    gap_rel_frac: float = 0.005
    solver: str = "auto"
    method: str = "auto"
    design_changes: bool = True


@dataclass(frozen=True)
class SitePlan:
    """The chosen plan for one site. ``candidate`` is the first pack bought (None when
    the existing pack carries the site to the horizon and nothing is bought);
    ``installations[i]`` is the pack that goes in at ``replacement_years[i]``."""

    site_id: str
    region: str
    candidate: Candidate | None
    replacement_years: tuple[int, ...]
    replacement_months: tuple[int, ...]
    cost: CostBreakdown
    installations: tuple[Candidate, ...] = ()

    @property
    def present_cost(self) -> float:
        return self.cost.total


@dataclass(frozen=True)
class Trip:
    """Trips of one trip group in one year: ``count`` trips (more than one only when
    the payload limit needs it), all in ``month``. ``cost`` is undiscounted."""

    region: str
    year: int
    month: int
    site_ids: tuple[str, ...]
    pack_count: int
    pack_mass_kg: float
    count: int
    cost: float


@dataclass(frozen=True)
class Unserved:
    """A site that no plan can serve, the reason in one line, and the limit that binds
    ("candidates", "life", "access", "payload_kg_per_trip", "crew_site_visits_per_year",
    "annual_budget", "time_limit": no plan was found in time)."""

    site_id: str
    reason: str
    limit: str


@dataclass
class FleetSolution:
    """Answer of :func:`planner.optimize.solve_fleet`.

    ``status`` is "optimal" (proved within ``gap_rel_frac``), "feasible" (stopped by the
    time limit with a plan) or "infeasible" (some site or fleet limit cannot be met:
    see ``unserved`` and ``binding_limits``; the plan then covers the servable sites).
    ``objective`` is the total present cost of the plan, ``best_bound`` a proven lower
    bound, ``gap_frac = (objective - best_bound) / |objective|``.
    """

    status: str
    objective: float
    best_bound: float
    gap_frac: float
    solver_name: str
    seconds: float
    decomposition: str
    sites: list[SitePlan] = field(default_factory=list)
    trips: list[Trip] = field(default_factory=list)
    unserved: list[Unserved] = field(default_factory=list)
    binding_limits: list[str] = field(default_factory=list)
    build_seconds: float = 0.0

    @property
    def total_present_cost(self) -> float:
        return self.objective

    def site(self, site_id: str) -> SitePlan:
        for plan in self.sites:
            if plan.site_id == site_id:
                return plan
        raise KeyError(site_id)

    def to_dict(self) -> dict:
        """Plain dict with the key names of docs/plan-json.md (solver, sites, trips,
        unserved_sites); the pipeline merges it into the plan."""
        sites = []
        for p in self.sites:
            c = p.candidate
            sites.append({
                "id": p.site_id,
                "region": p.region,
                "design_id": c.design_id if c else None,
                "chemistry": c.chemistry if c else None,
                "oversize_factor": c.oversize_factor if c else None,
                "charge_voltage_v_per_cell": c.charge_voltage_v_per_cell if c else None,
                "capacity_wh": c.capacity_wh if c else None,
                "pack_mass_kg": c.mass_kg if c else None,
                "life_years": c.life_years if c else None,
                "limiting_cause": c.limiting_cause if c else None,
                "replacement_years": list(p.replacement_years),
                "replacement_months": list(p.replacement_months),
                "present_cost": p.present_cost,
                "cost_breakdown": p.cost.to_dict(),
            })
        def num(x):  # JSON has no NaN / inf: an unknown value is null
            return float(x) if x is not None and math.isfinite(x) else None

        return {
            "total_present_cost": num(self.objective),
            "solver": {
                "name": self.solver_name,
                "status": self.status,
                "gap_frac": num(self.gap_frac),
                "seconds": self.seconds,
                "objective": num(self.objective),
                "best_bound": num(self.best_bound),
                "decomposition": self.decomposition,
            },
            "sites": sites,
            "trips": [
                {"region": t.region, "year": t.year, "month": t.month,
                 "site_ids": list(t.site_ids), "pack_count": t.pack_count,
                 "pack_mass_kg": t.pack_mass_kg, "trip_count": t.count, "cost": t.cost}
                for t in self.trips
            ],
            "unserved_sites": [
                {"id": u.site_id, "reason": u.reason, "limit": u.limit} for u in self.unserved
            ],
            "binding_limits": list(self.binding_limits),
        }


@dataclass(frozen=True)
class MethodAnswer:
    """What a solution method (the path model or column generation) gives the fleet solve.

    ``objective`` is the plans' present cost (NaN where a method found no plan to price),
    ``bound`` the best bound proved; ``binding`` words the fleet-wide limits no plan
    meets; ``unserved`` holds the sites of trip groups left without a plan in time.
    """

    status: str
    objective: float
    bound: float
    plans: list
    trips: list
    decomposition: str
    binding: list[str]
    unserved: list
    build_seconds: float
