"""How each candidate pack (:mod:`planner.designs.candidates`) would fare at its site.

Runs the hourly energy balance for all designs at once (lanes = site x design), ages
them over the horizon, and reads off when each can no longer carry its site (the
end-of-life threshold of :mod:`planner.designs.candidates`).

Capacity fade feeds back on cycling (an old pack cycles deeper): the year is
simulated at the rated capacity (what the plan reports for the first year) and again at
the capacity the pack has half-way to its end of life; that second duty drives the
aging. For damage proportional to cycle depth and capacity falling linearly, the mean
of 1/capacity over the life exceeds 1/capacity half-way by ln(1/0.7)/0.3 x 0.85 - 1 =
1.1 % for fade to 70 % (computed): the mid-life year is a close, slightly mild middle.
Lanes are processed per chemistry in chunks, so memory stays bounded by
``(8760, chunk)`` arrays whatever the fleet size. With prices known, each site's
smallest pack of a chemistry is simulated first, and larger packs it already dominates
(it lasts to the service limit with no load unserved) are not simulated at all.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.aging import age_lanes
from planner.aging.measured import health_from_today
from planner.chemistry import get_chemistry
from planner.designs.candidates import (
    WORN_OUT_SOH,
    Outcome,
    SiteDesigns,
    enumerate_site_designs,
    knee_floor_soh_frac,
    requirement_wh,
    usable_fraction,
    window_frac,
)
from planner.designs.screening import mark_dominated, mark_far_from_best
from planner.designs.service import SERVICE_CAUSES, ChunkService
from planner.energy.soc import iter_soc_chunks
from planner.pack.spread import life_distribution
from planner.pack.structure import stress_parameters
from planner.site.model import SiteModel
from planner.study.loading import Study

# Aging runs beyond the horizon so packs still young at its end get a life figure.
EXTRA_AGING_YEARS = 15
CHUNK_LANES = 2048
# Draws of the pack Monte Carlo per design in the plan, and months between its stress
# updates. The plan needs P10 and failure probabilities for costing, not a stable P50
# (planner life uses 1,000-4,000 draws); Latin hypercube draws keep 100 usable, and
# 12-month steps move P10/P50/P90 by under 0.2 % against monthly ones (docs/pack.md).
PLAN_DRAWS = 100
PLAN_STEP_MONTHS = 12
# Skip the pack Monte Carlo when the nominal life is this many times the service limit.
SPREAD_SKIP_FACTOR = 1.5


def evaluate_fleet(study: Study, models: list[SiteModel], progress=None,
                   price_of=None, cost_bounds_of=None) -> list[SiteDesigns]:
    """Enumerate and evaluate every site's designs; one :class:`SiteDesigns` per site.

    ``price_of(chemistry, capacity_wh)`` prices a pack; with it, designs that another
    design of the same site beats on price, mass, life and unserved load are marked
    ``dominated`` and skip the pack Monte Carlo (the optimizer would never pick them),
    and a dearer, heavier pack of a chemistry whose smaller pack already lasts to the
    service limit with no load unserved is left out without being simulated (it would be
    dominated whatever its simulation gave).
    ``cost_bounds_of(model, outcome) -> (low, high)`` bounds a design's present cost at
    its site; with it, designs far dearer than the site's best are marked
    ``far_from_best`` (:func:`mark_far_from_best`) and skip the Monte Carlo too.
    Each site's result depends on that site alone.
    """
    per_site = [enumerate_site_designs(study, i, m) for i, m in enumerate(models)]
    designs = [d for site_designs, _, _ in per_site for d in site_designs]
    outcomes = _evaluate(study, models, designs, progress, price_of, cost_bounds_of)
    by_site: dict[int, list[Outcome]] = {i: [] for i in range(len(per_site))}
    for o in outcomes:  # in design order, as a filter per site would list them
        by_site.setdefault(o.design.site_index, []).append(o)
    results = []
    for i, (_, excluded, references) in enumerate(per_site):
        mine = by_site[i]
        existing = next((o for o in mine if o.design.is_existing), None)
        results.append(SiteDesigns([o for o in mine if not o.design.is_existing], existing,
                                   excluded, references))
    return results


def _evaluate(study, models, designs, progress, price_of, cost_bounds_of) -> list[Outcome]:
    horizon = study.settings["study"]["horizon_years"]
    hourly = _SiteHourly(models)
    outcomes: list[Outcome | None] = [None] * len(designs)
    # Designs come ordered by site; a chunk holds whole sites (so the per-site choices
    # below see all of a site's designs); one SOC run serves every rechargeable
    # chemistry of the chunk (lanes carry their own parameters).
    for lanes in _site_chunks(designs, CHUNK_LANES):
        for k, outcome in _evaluate_chunk(models, hourly, designs, lanes, horizon, price_of,
                                          cost_bounds_of):
            outcomes[k] = outcome
        if progress:
            progress(0, label="Aging candidate packs")
    # designs shown dominated without a simulation have no outcome (_not_beaten_by_capped)
    return [o for o in outcomes if o is not None]


def _site_chunks(designs, max_lanes):
    """Lists of design positions holding whole sites, at most ``max_lanes`` (or one site)."""
    sites = []
    for k, d in enumerate(designs):
        if not sites or designs[sites[-1][0]].site_index != d.site_index:
            sites.append([])
        sites[-1].append(k)
    chunk = []
    for lanes in sites:
        if chunk and len(chunk) + len(lanes) > max_lanes:
            yield chunk
            chunk = []
        chunk += lanes
    if chunk:
        yield chunk


@dataclass
class _SiteHourly:
    """Hourly site inputs as (8760, n_sites) arrays, built once for the fleet."""

    temp_c: np.ndarray
    load_w: np.ndarray
    charge_w: np.ndarray
    heater_on: np.ndarray

    def __init__(self, models):
        self.temp_c = np.column_stack([m.temp_battery_c for m in models])
        self.load_w = np.column_stack([m.load_w for m in models])
        self.charge_w = np.column_stack([m.charge_w for m in models])
        self.heater_on = np.column_stack([m.heater_on for m in models])


def _evaluate_chunk(models, hourly, designs, lanes, horizon, price_of, cost_bounds_of):
    chunk = [designs[k] for k in lanes]
    lanes_of = _ChunkLanes(models, chunk, horizon)
    # With prices known, the smallest pack of every (site, chemistry) goes first: where one
    # of them already lasts to the service limit with no load unserved, every dearer and
    # heavier pack of that chemistry is dominated (mark_dominated) and is not simulated.
    first = _smallest_packs(chunk) if price_of is not None else np.ones(len(chunk), bool)
    results, deferred = _simulate(lanes_of, hourly, np.flatnonzero(first))
    rest = np.flatnonzero(~first)
    if rest.size:
        rest = _not_beaten_by_capped(chunk, rest, [o for _, o in results], price_of,
                                     lanes_of.service)
        more, more_deferred = _simulate(lanes_of, hourly, rest)
        results, deferred = results + more, deferred + more_deferred
    results.sort(key=lambda jo: jo[0])  # design order, as the per-site marks expect
    if price_of is not None:
        mark_dominated([o for _, o in results], price_of)
    if cost_bounds_of is not None:
        mark_far_from_best([o for _, o in results],
                           lambda o: cost_bounds_of(models[o.design.site_index], o))
    for chem, members, members_outcomes, fade in deferred:
        _add_life_spread(models, chem, [chunk[j] for j in members], members_outcomes, fade,
                         lanes_of.eol[members], horizon)
    return [(lanes[j], o) for j, o in results]


class _ChunkLanes:
    """Per-lane figures of a chunk that need no simulation: pack, load requirement, cold
    capacity and end-of-life threshold (computed once for every pass over the chunk)."""

    def __init__(self, models, chunk, horizon):
        self.models, self.chunk, self.horizon = models, chunk, horizon
        self.chems = {c: get_chemistry(c) for c in sorted({d.chemistry for d in chunk})}
        self.site_idx = np.array([d.site_index for d in chunk], dtype=np.intp)
        self.capacity = np.array([d.pack.capacity_wh for d in chunk])
        self.volts = np.array([d.charge_voltage_v_per_cell for d in chunk])
        self.ages = np.array([d.existing_age_years or 0.0 for d in chunk])
        # one aging length for the whole chunk, whichever lanes a pass simulates
        self.years = horizon + EXTRA_AGING_YEARS + int(np.ceil(self.ages.max()))
        self.peak_c = np.array([models[d.site_index].peak_load_w for d in chunk]) / self.capacity
        required = np.array([requirement_wh(models[d.site_index]) for d in chunk])
        cold = {}  # available capacity at the coldest hour, once per (site, chemistry)
        for d in chunk:
            if (d.site_index, d.chemistry) not in cold:
                cold[d.site_index, d.chemistry] = float(
                    self.chems[d.chemistry].available_capacity_fraction(models[d.site_index].design_temp_c))
        self.available = np.array([cold[d.site_index, d.chemistry] for d in chunk])
        window = np.array([window_frac(self.chems[d.chemistry], d.charge_voltage_v_per_cell)
                           for d in chunk])
        need = required / (self.capacity * window * self.available)
        floor = np.array([WORN_OUT_SOH.get(d.chemistry, 0.8) for d in chunk])
        knee = np.array([knee_floor_soh_frac(d.chemistry) for d in chunk])
        self.eol = np.maximum(need, np.maximum(floor, knee))
        # the knee floor, not the load or the worn-out floor, sets the end of life
        self.knee_floor = (knee > np.maximum(need, floor)) & (need < 1.0)
        self.service = ChunkService(models, chunk, self.chems)


def _smallest_packs(chunk) -> np.ndarray:
    """Lanes holding the smallest pack of their (site, chemistry), every charge voltage,
    and every pack in service today."""
    smallest: dict[tuple[int, str], float] = {}
    for d in chunk:
        key = (d.site_index, d.chemistry)
        smallest[key] = min(smallest.get(key, np.inf), d.pack.capacity_wh)
    return np.array([d.is_existing or d.pack.capacity_wh == smallest[d.site_index, d.chemistry]
                     for d in chunk])


def _not_beaten_by_capped(chunk, lanes, simulated: list[Outcome], price_of,
                          service: ChunkService) -> np.ndarray:
    """``lanes`` less those a simulated design of the same site and chemistry dominates
    whatever their own simulation would give: a new pack lasting as long as any pack of
    the chemistry can at that site (the design-independent component lives there and the
    study's ceiling: a bound for every design, whatever its charge voltage) with no load
    unserved, no dearer and no heavier, and cheaper or lighter. :func:`mark_dominated`
    would flag such a lane; it would not be offered, and nothing else reads it."""
    capped: dict[tuple[int, str], list[tuple[float, float]]] = {}
    for o in simulated:
        d = o.design
        bound = service.site_bound(d.site_index, d.chemistry, d.service_life_years)
        if (not d.is_existing and o.eol_soh_frac < 1.0 and o.unserved_wh_per_year <= 0.0
                and o.limiting_cause in SERVICE_CAUSES and o.life_years >= bound - 1e-9):
            capped.setdefault((d.site_index, d.chemistry), []).append(
                (price_of(d.chemistry, d.pack.capacity_wh), d.pack.mass_kg))
    keep = []
    for j in lanes:
        d = chunk[j]
        price, mass = price_of(d.chemistry, d.pack.capacity_wh), d.pack.mass_kg
        beaten = any(p <= price + 1e-9 and m <= mass + 1e-9 and (p < price - 1e-9 or m < mass - 1e-9)
                     for p, m in capped.get((d.site_index, d.chemistry), ()))
        if d.is_existing or not beaten:
            keep.append(j)
    return np.array(keep, dtype=np.intp)


def _simulate(lanes_of: _ChunkLanes, hourly, sel: np.ndarray):
    """Energy balance and aging of the chunk's lanes ``sel``: ``([(lane, Outcome)],
    [(chemistry, lanes, outcomes, fade)])``, the second for the pack Monte Carlo."""
    if sel.size == 0:
        return [], []
    chunk, chems = lanes_of.chunk, lanes_of.chems
    capacity, volts, peak_c, eol = lanes_of.capacity, lanes_of.volts, lanes_of.peak_c, lanes_of.eol
    recharge = np.zeros(len(chunk), dtype=bool)
    recharge[sel] = [chems[chunk[j].chemistry].rechargeable for j in sel]
    primary = np.zeros(len(chunk), dtype=bool)
    primary[sel] = ~recharge[sel]
    duty = _Duty.empty(len(chunk))
    fades = {}
    if recharge.any():
        # Lanes of one chemistry side by side: each aging call then reads a block of
        # columns instead of gathering them (lanes are independent, order is free).
        idx = np.flatnonzero(recharge)
        idx = idx[np.argsort([chunk[j].chemistry for j in idx], kind="stable")]
        inputs = _SocInputs(hourly, chems, [chunk[j] for j in idx],
                            lanes_of.service.floor_thresholds(idx, lanes_of.available))
        # The first year, new pack: what the plan reports (unserved load, cycles).
        duty.put(idx, _duty(inputs, capacity[idx], np.ones(idx.size), series=False))
        # Capacity feedback: an old pack cycles deeper. The aging is driven by the year
        # re-run at the capacity the pack has half-way to its end of life.
        mid_soh = np.clip(0.5 * (1.0 + np.minimum(eol[idx], 1.0)), 0.5, 1.0)
        mid_life = _duty(inputs, capacity[idx], mid_soh)
        fades.update(_age_by_chemistry(chems, chunk, idx, hourly, mid_life, volts, peak_c,
                                       lanes_of.years))
    if primary.any():
        idx = np.flatnonzero(primary)
        # A primary pack is never recharged: the load draws its C-rate hour by hour.
        current = hourly.load_w[:, lanes_of.site_idx[idx]] / capacity[idx]
        drain = _Duty(np.ones_like(current), current, np.zeros(idx.size), np.zeros(idx.size),
                      np.zeros(idx.size), np.ones(idx.size), np.zeros(idx.size),
                      np.zeros(idx.size))
        fades.update(_age_by_chemistry(chems, chunk, idx, hourly, drain, volts, peak_c,
                                       lanes_of.years))
    results, deferred = [], []
    for chem_id, (members, fade) in fades.items():
        outcomes = _outcomes(lanes_of, chems[chem_id], members, fade, duty)
        deferred.append((chems[chem_id], members, outcomes, fade))
        results += list(zip(members.tolist(), outcomes))
    return results, deferred


def _outcomes(lanes_of: _ChunkLanes, chem, members, fade, duty) -> list[Outcome]:
    """One Outcome per lane of ``members`` (one chemistry) from its fade and duty."""
    chunk, eol, ages = lanes_of.chunk, lanes_of.eol, lanes_of.ages
    months = 12 * lanes_of.horizon + 1
    life_fade = _years_to(fade.soh_monthly, eol[members])
    imbalance = lanes_of.service.imbalance[members]
    life_cells = life_fade
    if np.any(imbalance > 0.0):
        # cell imbalance strands capacity on top of fade (planner.pack.components)
        years = np.arange(fade.soh_monthly.shape[0]) / 12.0
        life_cells = _years_to(fade.soh_monthly - imbalance[None, :] * years[:, None],
                               eol[members])
    out = []
    for col, j in enumerate(members):
        d = chunk[j]
        start = int(round(float(ages[j]) * 12))  # a Python float: numpy's round is slow
        soh_col = fade.soh_monthly[:, col]
        service = lanes_of.service.lane(j, float(duty.days_at_floor[j]))
        cause = _cause(eol[j], lanes_of.available[j], fade, life_fade[col], col, chem)
        if life_cells[col] < life_fade[col] - 1e-9 and eol[j] < 1.0:
            cause = "cell imbalance"
        life_from_start = life_cells[col] - start / 12.0
        soh_today = soh_col[start:start + months]
        if d.measured_soh_frac:
            # From the day measured, the pack's health is never above the measurement.
            health = health_from_today(soh_col, age_months=start,
                                       measured_soh_frac=d.measured_soh_frac)
            start, soh_today = health.start_month, health.months(months)
            life_from_start = health.years_to(float(eol[j]))
            if not health.on_model_curve:  # faded beyond the laws: its own end of life
                cause = _cause(eol[j], lanes_of.available[j], fade,
                               life_from_start + start / 12.0, col, chem)
        age = start / 12.0 if not d.measured_soh_frac else float(d.existing_age_years or 0.0)
        if life_from_start > service.years - age and eol[j] < 1.0:
            cause = service.name
        life = min(life_from_start, service.years - age)
        out.append(Outcome(
            design=d, eol_soh_frac=float(eol[j]), life_years=float(max(life, 0.0)),
            limiting_cause=cause, service_limit_years=float(service.years - age),
            component_lives={k: float(v - age) for k, v in service.lives.items()},
            imbalance_frac_per_year=service.imbalance_frac_per_year,
            condensation=service.condensation,
            soh_monthly=soh_today,
            calendar_loss_frac=fade.calendar_loss_frac[start:start + months, col],
            cycle_loss_frac=fade.cycle_loss_frac[start:start + months, col],
            efc_per_year=float(duty.efc[j] if chem.rechargeable else fade.efc_per_year[col]),
            nominal_life_years=float(life_from_start),
            knee_floor=bool(lanes_of.knee_floor[j]),
            unserved_wh_per_year=float(duty.unserved_wh[j]),
            charge_blocked_hours=float(duty.blocked_cold[j] + duty.blocked_hot[j]),
            charge_blocked_cold_hours=float(duty.blocked_cold[j]),
            charge_blocked_hot_hours=float(duty.blocked_hot[j]),
            mean_soc_frac=float(duty.mean_soc[j])))
        if d.is_existing:
            out[-1].install_calendar_loss_frac = fade.calendar_loss_frac[:, col].astype(np.float32)
            out[-1].install_cycle_loss_frac = fade.cycle_loss_frac[:, col].astype(np.float32)
    return out


@dataclass
class _Duty:
    """One typical year of hourly SOC and current per lane, with the energy summaries."""

    soc: np.ndarray
    current: np.ndarray
    unserved_wh: np.ndarray
    blocked_cold: np.ndarray
    blocked_hot: np.ndarray
    mean_soc: np.ndarray
    efc: np.ndarray
    days_at_floor: np.ndarray     # longest run of days at the low-voltage disconnect

    @classmethod
    def empty(cls, n):
        return cls(None, None, np.zeros(n), np.zeros(n), np.zeros(n), np.ones(n), np.zeros(n),
                   np.zeros(n))

    def put(self, idx, other):
        self.unserved_wh[idx] = other.unserved_wh
        self.blocked_cold[idx] = other.blocked_cold
        self.blocked_hot[idx] = other.blocked_hot
        self.mean_soc[idx] = other.mean_soc
        self.efc[idx] = other.efc
        self.days_at_floor[idx] = other.days_at_floor


class _SocInputs:
    """The SOC stage's inputs for a chunk of lanes of mixed chemistries, built once and
    used for both simulated years.

    Each (site, chemistry) pair becomes one column of the hourly inputs, because
    self-discharge and cold derating depend on both; lane parameters come from each
    lane's chemistry and charge voltage.
    """

    def __init__(self, hourly: _SiteHourly, chems, chunk, floor_threshold):
        pairs = sorted({(d.site_index, d.chemistry) for d in chunk})
        column = {pair: i for i, pair in enumerate(pairs)}
        cols_site = np.array([site for site, _ in pairs], dtype=np.intp)
        temps = hourly.temp_c[:, cols_site]
        self_discharge = np.empty_like(temps)
        available = np.empty_like(temps)
        for i, (_, chem_id) in enumerate(pairs):
            self_discharge[:, i] = chems[chem_id].self_discharge_frac_per_h(temps[:, i])
            available[:, i] = chems[chem_id].available_capacity_fraction(temps[:, i])
        lane_chems = [chems[d.chemistry] for d in chunk]

        def per_lane(attribute):
            return np.array([getattr(c, attribute) for c in lane_chems], dtype=float)

        self.hourly = (hourly.charge_w[:, cols_site], hourly.load_w[:, cols_site])
        self.temps = temps
        self.options = dict(
            usable_fraction=np.array([usable_fraction(d.chemistry, float(d.charge_voltage_v_per_cell))
                                      for d in chunk]),
            charge_efficiency_frac=per_lane("charge_efficiency_frac"),
            discharge_efficiency_frac=per_lane("discharge_efficiency_frac"),
            self_discharge_frac_per_h=self_discharge,
            max_charge_c_rate=per_lane("max_charge_c_rate"),
            charge_temp_min_c=per_lane("charge_temp_min_c"),
            charge_temp_max_c=per_lane("charge_temp_max_c"),
            heater_on=hourly.heater_on[:, cols_site], min_soc_frac=1.0 - per_lane("max_dod_frac"),
            # days whose highest state of charge stays at the disconnect: a dark spell at it
            low_soc_threshold_frac=floor_threshold,
            available_capacity_frac=available,
            lane_site_index=np.array([column[(d.site_index, d.chemistry)] for d in chunk],
                                     dtype=np.intp),
            chunk_lanes=len(chunk), series=True)


def _duty(inputs: _SocInputs, capacity, soh, series=True) -> _Duty:
    """One typical year of hourly SOC for the chunk's lanes at ``capacity x soh``
    (summaries only when ``series`` is False)."""
    charge_w, load_w = inputs.hourly
    sim = next(iter_soc_chunks(charge_w, load_w, capacity * soh, inputs.temps,
                               **{**inputs.options, "series": series}))
    s = sim.summary
    if not series:
        return _Duty(None, None, s.unserved_wh, s.charge_blocked_cold_hours,
                     s.charge_blocked_hot_hours, s.mean_soc_frac,
                     s.equivalent_full_cycles_per_year * soh, s.longest_low_soc_days)
    # SOC stays relative to the faded capacity (it sets the voltage, hence calendar stress,
    # and an old pack cycles deeper); current is re-expressed against rated capacity.
    np.multiply(sim.current_c_rate, soh.astype(np.float32), out=sim.current_c_rate)
    return _Duty(sim.soc_frac, sim.current_c_rate, s.unserved_wh,
                 s.charge_blocked_cold_hours, s.charge_blocked_hot_hours, s.mean_soc_frac,
                 s.equivalent_full_cycles_per_year * soh, s.longest_low_soc_days)


def _age_by_chemistry(chems, chunk, idx, hourly, duty, volts, peak_c, years):
    """Age the lanes ``idx`` of the chunk, one engine call per chemistry.

    Returns {chemistry: (chunk positions, FadeResult)}; ``duty`` rows follow ``idx``.
    """
    out = {}
    lane_chem = np.array([chunk[j].chemistry for j in idx])
    for chem_id in sorted(set(lane_chem)):
        sel = np.flatnonzero(lane_chem == chem_id)
        if sel.size and sel[-1] - sel[0] + 1 == sel.size:
            sel = slice(int(sel[0]), int(sel[-1]) + 1)  # a block of columns: no gather
        members = idx[sel]
        sites = np.array([chunk[j].site_index for j in members], dtype=np.intp)
        fade = age_lanes(chems[chem_id], hourly.temp_c, duty.soc[:, sel], duty.current[:, sel],
                         volts[members], years, peak_c_rate=peak_c[members], lane_site=sites)
        out[chem_id] = (members, fade)
    return out


def _years_to(soh: np.ndarray, threshold: np.ndarray) -> np.ndarray:
    """Years until each lane's SOH first falls to its threshold (inf if never, 0 if at once)."""
    below = soh <= threshold[None, :]
    reached = below.any(axis=0)
    first = np.argmax(below, axis=0)
    prev = np.maximum(first - 1, 0)
    lanes = np.arange(soh.shape[1])
    hi, lo = soh[prev, lanes], soh[first, lanes]
    frac = np.where(hi > lo, (hi - threshold) / np.where(hi > lo, hi - lo, 1.0), 0.0)
    months = np.where(first > 0, prev + np.clip(frac, 0.0, 1.0), 0.0)
    return np.where(reached, months / 12.0, np.inf)


def _cause(eol, available, fade, life, j, chem) -> str:
    if eol >= 1.0:
        return "too small when new" if available > 0.95 else "cold capacity"
    if not chem.rechargeable:
        return "energy drawn" if fade.cycle_loss_frac[-1, j] >= fade.calendar_loss_frac[-1, j] \
            else "self-discharge"
    if not np.isfinite(life):
        return "none within the horizon"
    month = min(int(life * 12), fade.soh_monthly.shape[0] - 1)
    cal, cyc = fade.calendar_loss_frac[month, j], fade.cycle_loss_frac[month, j]
    cause = "calendar" if cal >= cyc else "cycling"
    if available < 0.8:
        cause += " (cold derating)"
    return cause


def _add_life_spread(models, chem, designs, outcomes, fade, eol, horizon):
    """Pack Monte Carlo (cell spread, gradients, balancing): P10/P50/P90 and the
    probability of failing before each age, for the failure-risk cost."""
    laws = stress_parameters(chem.aging_sets[chem.default_aging_set])
    groups: dict[int, list[int]] = {}
    for j, d in enumerate(designs):
        if eol[j] >= 1.0 or d.is_existing or not chem.rechargeable or outcomes[j].dominated \
                or outcomes[j].far_from_best:
            continue
        cap = outcomes[j].service_limit_years   # this design's components and ceiling
        if outcomes[j].life_years >= cap and outcomes[j].nominal_life_years >= SPREAD_SKIP_FACTOR * cap:
            # Nominal life far beyond the service limit: cell spread cannot bring the
            # end of life before the planned replacement (the spreads move P10 by well
            # under 40 %, docs/pack.md), so the Monte Carlo is skipped for speed.
            o = outcomes[j]
            o.life_p10_years = o.life_p50_years = o.life_p90_years = cap
            o.failure_prob_by_age = (0.0,) * (horizon + 1)
            continue
        groups.setdefault(d.pack.series_cells, []).append(j)
    months = 12 * horizon + 1
    # The failure risk matters up to the horizon: curves a little past it are enough.
    rows = slice(0, min(fade.calendar_loss_frac.shape[0], 12 * (horizon + 3) + 1))
    # One call per series count: string counts vary per lane (strings as units).
    for series, lanes in groups.items():
        ref_temp = [models[designs[j].site_index].temperatures.effective_temp_c for j in lanes]
        # cell imbalance strands capacity linearly in time: carried with the calendar part
        stranded = (np.array([outcomes[j].imbalance_frac_per_year for j in lanes])[None, :]
                    * (np.arange(rows.stop) / 12.0)[:, None])
        dist = life_distribution(
            calendar_loss_frac=fade.calendar_loss_frac[rows, lanes] + stranded,
            cycle_loss_frac=fade.cycle_loss_frac[rows, lanes], eol_soh_frac=eol[lanes],
            series_cells=series, parallel_strings=[designs[j].pack.parallel_strings for j in lanes],
            draws=PLAN_DRAWS, seed=0, step_months=PLAN_STEP_MONTHS,
            reference_temp_c=np.array(ref_temp), **laws)
        for k, j in enumerate(lanes):
            o = outcomes[j]
            cap = o.service_limit_years
            o.life_p10_years = float(min(dist.p10_years[k], cap))
            o.life_p50_years = float(min(dist.p50_years[k], cap))
            o.life_p90_years = float(min(dist.p90_years[k], cap))
            o.failure_prob_by_age = tuple(float(p) for p in dist.prob_fail_before_year[:, k])
            o.soh_p10_monthly = dist.soh_p10_by_month[:months, k]
            o.soh_p90_monthly = dist.soh_p90_by_month[:months, k]
