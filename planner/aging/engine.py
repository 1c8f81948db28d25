"""Aging engine: calendar + cycle fade of many lanes (site x design) over a horizon.

``age_lanes`` takes one typical year of hourly battery temperature, state of charge
and current per lane and returns the state of health month by month over the horizon,
with the calendar and cycle parts kept apart.

How it works (see docs/aging.md), one named step each:

* :func:`_check_lanes`: the inputs checked and shaped (:class:`_Lanes`).
* :func:`_calendar_rates`: each calendar law ``Q = k(T, SOC) t**z`` is superposed hour
  by hour by equivalent time (:mod:`planner.aging.superposition`). The hourly increment
  is a temperature part times a SOC part; the temperature part is evaluated once per
  *site* (lanes of one site share its temperature column, ``lane_site``), both parts
  through lookup tables at fine bins (0.01 K, 0.0001 SOC by default): exact to the bin
  and far cheaper than an ``exp`` per hour and lane.
* :func:`_one_year`: the hourly year of each chunk of lanes is swept once
  (:func:`planner.aging.sweep.sweep_chunk`): monthly calendar sums, throughput, and
  the rainflow count of the SOC (ASTM E1049, one period of a repeating year); then
  :func:`_cycle_increments` adds each cycle to the cycle state by its depth, mean SOC,
  temperature (mean of the two reversal hours), C-rate and charge voltage
  (:func:`planner.aging.cycle.cycle_state_increment`).
* :func:`_over_horizon`: the year repeats; both states grow by the same amount each
  year, so month ``m`` of year ``y`` is ``S0 + y * dS_year + dS[m]`` (exact for the
  laws used). A calendar law held past its longest test (``hold_after_years``) is
  linear in its state from the state reached there (:func:`_calendar_hold`). Calendar
  and cycle losses add; ``SOH = 1 - calendar - cycle`` (>= 0); the result types are in
  :mod:`planner.aging.results`.

Lanes are processed in chunks so no temporary exceeds ``(8760, chunk_lanes)``; the
engine never builds an hours x sites x designs array.

Two engines compute the same thing (``engine=``): the numpy path (array passes over
each chunk), and one-pass kernels (:mod:`planner.aging.kernels`) compiled with numba
when it is installed, about five times less CPU (docs/aging.md, "Speed"). They count
the same cycles and put every hour in the same lookup bin; sums differ by rounding.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from types import MappingProxyType

import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging import kernels
from planner.aging.calendar import calendar_rate_parts
from planner.aging.cycle import cycle_exponent, cycle_increments
from planner.aging.plating import (
    has_plating,
    plating_rate_factor,
    plating_state_scale,
    plating_temperature_factor,
)
from planner.aging.results import (  # noqa: F401  (row_years, years_to_soh re-exported)
    MONTH_START_YEAR_FRAC,
    PLATING_EXPONENT,
    AgingState,
    FadeResult,
    row_years,
    years_to_soh,
)
from planner.aging.superposition import (
    held_loss_from_state,
    held_state_from_loss,
    loss_from_state,
    repeat_year,
    state_after,
    state_from_loss,
)
from planner.aging.sweep import (
    CHARGE_RATE_TABLE,
    MONTH_MATRIX,
    MONTH_OF_HOUR,  # noqa: F401  (re-exported: month of each hour of the typical year)
    SOC_TABLE,
    TEMP_TABLE_C,
    CalendarRates,
    ChunkSweep,
    PlatingRates,
    block_in_parent,
    lookup_table,
    sweep_chunk,
    tabulated,
)
from planner.chemistry import AgingParams, Chemistry, get_chemistry

CHARGE_RATE_BIN = 0.0001
"""Bin of the charge C-rate lookup of the plating term, 1/h (exp(2 beta C) moves by
2.6e-4 relative per bin at beta = 2.64 h)."""


def _params(chem: Chemistry, aging_set, overrides) -> AgingParams:
    params = chem.aging_set(aging_set)
    if not overrides:
        return params
    parts = {"calendar": dict(params.calendar), "cycle": dict(params.cycle)}
    for key, value in overrides.items():
        part, _, name = key.partition(".")
        if part not in parts or name not in parts[part]:
            raise ValueError(f"unknown aging parameter {key!r} for {chem.id}/{params.name}; "
                             f"expected one of {sorted(params.sources)}")
        parts[part][name] = float(value)
    return replace(params, calendar=MappingProxyType(parts["calendar"]),
                   cycle=MappingProxyType(parts["cycle"]))


ENGINES = ("auto", "numba", "numpy", "python")
"""Engines of :func:`age_lanes`: "auto" (numba when installed, else numpy), "numba",
"numpy" (vectorised array passes) and "python" (the numba kernels run uncompiled, for
tests: slow)."""


def _use_kernel(engine):
    if engine not in ENGINES:
        raise ValueError(f"engine must be one of {ENGINES}, got {engine!r}")
    if engine == "numba" and not kernels.AVAILABLE:
        raise ValueError("engine 'numba' needs the numba package (pip install '.[fast]')")
    return engine in ("numba", "python") or (engine == "auto" and kernels.AVAILABLE)


@dataclass(frozen=True)
class _Lanes:
    """The checked inputs of one :func:`age_lanes` call.

    ``soc`` and ``current`` are (8760, n_lanes) (``current`` None or one shared column),
    ``temp`` is (8760, n_sites) with ``lane_site`` each lane's column; the per-lane
    settings are (n_lanes,) arrays (``peak`` and ``charge_rate`` None when not given).
    """

    chem: Chemistry
    params: AgingParams
    horizon: int
    use_kernel: bool
    compiled: bool
    soc: np.ndarray
    current: np.ndarray | None
    temp: np.ndarray
    lane_site: np.ndarray
    charge_v: np.ndarray
    peak: np.ndarray | None
    charge_rate: np.ndarray | None

    @property
    def n_lanes(self) -> int:
        return self.soc.shape[1]

    @property
    def primary(self) -> bool:
        """A primary cell: the load draws charge, nothing is recharged or cycled."""
        return self.params.cycle_model == "primary_load_charge"


def _as_lanes(name, values, n_hours, n_lanes=None, keep_float32=False):
    arr = np.asarray(values)
    # The kernels read float32 as is (widening each value exactly): no float64 copy.
    if not (keep_float32 and arr.dtype == np.float32):
        arr = np.asarray(arr, dtype=float)
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2 or arr.shape[0] != n_hours:
        raise ValueError(f"{name} must be shaped ({n_hours}, n_lanes), got {arr.shape}")
    if n_lanes is not None and arr.shape[1] not in (1, n_lanes):
        raise ValueError(f"{name} has {arr.shape[1]} lanes, expected {n_lanes}")
    return arr


def age_lanes(chemistry, temp_battery_c, soc_frac, current_c_rate, charge_voltage_v_per_cell,
              horizon_years, *, initial_state: AgingState | None = None, peak_c_rate=None,
              charge_c_rate=None, lane_site=None, aging_set: str | None = None, overrides=None,
              rate_bin_k: float | None = 0.01, soc_bin_frac: float | None = 0.0001,
              chunk_lanes: int = 1024, engine: str = "auto") -> FadeResult:
    """Calendar and cycle fade of each lane over ``horizon_years`` repetitions of a typical year.

    Parameters
    ----------
    chemistry : Chemistry or str
        Chemistry (or its id).
    temp_battery_c : array_like, shape (8760, n_lanes) or (8760, n_sites) with ``lane_site``
        Hourly battery temperature, °C.
    soc_frac : array_like, shape (8760, n_lanes)
        Hourly state of charge, fraction of rated capacity.
    current_c_rate : array_like, shape (8760, n_lanes), or None
        Hourly mean current as a C-rate, + discharge, - charge (None: no current).
    charge_voltage_v_per_cell : float or array_like, shape (n_lanes,)
        Charge voltage setting per cell, V (for the charge-voltage cycle-life rule).
    horizon_years : int
        Number of repetitions of the typical year (>= 1).
    initial_state : AgingState, optional
        Start from this state (an existing pack, or the previous year of a re-run).
    peak_c_rate : array_like, shape (n_lanes,), optional
        Burst C-rate; the cycle C-rate is ``max(mean discharge C-rate, peak_c_rate)``
        (conservative: bursts are charged to the whole cycle).
    charge_c_rate : array_like, shape (n_lanes,), optional
        Charge C-rate of the cycles for the lithium-plating term (default: the mean
        charge current over the hours that charge, from ``current_c_rate``).
    lane_site : array_like of int, shape (n_lanes,), optional
        Column of ``temp_battery_c`` for each lane (lanes of one site share a column).
    aging_set : str, optional
        Named aging parameter set of the chemistry (default: the chemistry's default).
    overrides : Mapping[str, float], optional
        Parameter overrides, e.g. ``{"calendar.halving_step_k": 10.0}``.
    rate_bin_k, soc_bin_frac : float or None
        Bin widths of the rate lookup tables (None: evaluate exactly per hour).
    chunk_lanes : int
        Lanes processed together (bounds the temporaries).
    engine : {"auto", "numba", "numpy", "python"}
        "auto": the compiled kernels of :mod:`planner.aging.kernels` when numba is
        installed, else the numpy path; both give the same cycles and the same bins
        (sums agree to rounding). "python" runs the kernels uncompiled (tests only).

    Returns
    -------
    FadeResult
    """
    lanes = _check_lanes(chemistry, temp_battery_c, soc_frac, current_c_rate,
                         charge_voltage_v_per_cell, horizon_years, peak_c_rate=peak_c_rate,
                         charge_c_rate=charge_c_rate, lane_site=lane_site, aging_set=aging_set,
                         overrides=overrides, engine=engine)
    rates = _calendar_rates(lanes, rate_bin_k, soc_bin_frac)
    plating = _plating_rates(lanes, rates, rate_bin_k)
    year = _one_year(lanes, rates, plating, max(int(chunk_lanes), 1))
    return _over_horizon(lanes, year, initial_state)


def _check_lanes(chemistry, temp_battery_c, soc_frac, current_c_rate, charge_voltage_v_per_cell,
                 horizon_years, *, peak_c_rate, charge_c_rate, lane_site, aging_set, overrides,
                 engine) -> _Lanes:
    """The inputs of :func:`age_lanes` checked and shaped (:class:`_Lanes`)."""
    chem = chemistry if isinstance(chemistry, Chemistry) else get_chemistry(chemistry)
    params = _params(chem, aging_set, overrides)
    horizon = int(horizon_years)
    if horizon < 1:
        raise ValueError(f"horizon_years must be >= 1, got {horizon_years}")
    use_kernel = _use_kernel(engine)
    soc = _as_lanes("soc_frac", soc_frac, HOURS_PER_YEAR, keep_float32=use_kernel)
    n_lanes = soc.shape[1]
    temp = _as_lanes("temp_battery_c", temp_battery_c, HOURS_PER_YEAR)
    lane_site = _lane_sites(lane_site, temp.shape[1], n_lanes)
    current = None if current_c_rate is None else _as_lanes(
        "current_c_rate", current_c_rate, HOURS_PER_YEAR, n_lanes, keep_float32=use_kernel)
    if use_kernel and not (soc.flags.f_contiguous and not soc.flags.c_contiguous) and \
            block_in_parent(soc, np.zeros((1, 1)) if current is None else current,
                            np.zeros(0, np.intp)) is None:
        # The hour sweep reads contiguous hour rows (a block of columns in place from its
        # parent, see block_in_parent): copy anything else once here, not once per chunk.
        soc = np.ascontiguousarray(soc)
        current = None if current is None else np.ascontiguousarray(current)

    def per_lane(values):
        return None if values is None else np.broadcast_to(
            np.asarray(values, dtype=float), (n_lanes,))

    return _Lanes(chem=chem, params=params, horizon=horizon, use_kernel=use_kernel,
                  compiled=engine != "python", soc=soc, current=current, temp=temp,
                  lane_site=lane_site, charge_v=per_lane(charge_voltage_v_per_cell),
                  peak=per_lane(peak_c_rate), charge_rate=per_lane(charge_c_rate))


def _lane_sites(lane_site, n_columns, n_lanes) -> np.ndarray:
    """Each lane's column of the temperature array, checked."""
    if lane_site is None:
        if n_columns not in (1, n_lanes):
            raise ValueError("temp_battery_c needs one column per lane, one column, or lane_site")
        lane_site = np.zeros(n_lanes, np.intp) if n_columns == 1 else np.arange(n_lanes)
    lane_site = np.asarray(lane_site, dtype=np.intp)
    if lane_site.shape != (n_lanes,) or lane_site.min() < 0 or lane_site.max() >= n_columns:
        raise ValueError("lane_site must hold one valid temperature column per lane")
    return lane_site


def _calendar_rates(lanes: _Lanes, rate_bin_k, soc_bin_frac) -> CalendarRates:
    """The calendar law split into its temperature part (once per site that has lanes,
    as rows: sites x hours) and its state-of-charge part, binned as asked."""
    temp_part, soc_part, exponent = calendar_rate_parts(
        lanes.params.calendar_model, lanes.params.calendar, lanes.chem)
    used_sites, rate_row = np.unique(lanes.lane_site, return_inverse=True)
    temp_rate_site = np.ascontiguousarray(
        tabulated(temp_part, lanes.temp[:, used_sites], TEMP_TABLE_C, rate_bin_k).T)
    soc_table = None
    if lanes.use_kernel and soc_part is not None and soc_bin_frac is not None:
        soc_table = lookup_table(soc_part, SOC_TABLE, soc_bin_frac)
    return CalendarRates(temp_rate_site=temp_rate_site, rate_row=rate_row.astype(np.intp),
                         soc_part=soc_part, soc_table=soc_table, soc_bin_frac=soc_bin_frac,
                         exponent=exponent)


def _plating_rates(lanes: _Lanes, rates: CalendarRates, rate_bin_k) -> PlatingRates | None:
    """The plating term's temperature part per site and hour (``AF_pl**2``) and its
    charge-rate part (``exp(2 beta (C - 1))``), binned as the calendar parts are; None
    for a set without the term (:mod:`planner.aging.plating`)."""
    p = lanes.params.cycle
    if lanes.primary or lanes.current is None or not has_plating(p):
        return None

    def temp_part(temp_c):
        af = plating_temperature_factor(temp_c, **p)
        return af * af

    def rate_part(charge_c_rate):
        f = plating_rate_factor(charge_c_rate, **p)
        return f * f

    used_sites = np.unique(lanes.lane_site)
    temp_site = np.ascontiguousarray(
        tabulated(temp_part, lanes.temp[:, used_sites], TEMP_TABLE_C, rate_bin_k).T)
    # binned with the temperature part (exact evaluation runs the numpy path)
    rate_bin = CHARGE_RATE_BIN if rate_bin_k is not None else None
    table = lookup_table(rate_part, CHARGE_RATE_TABLE, CHARGE_RATE_BIN) if rate_bin else None
    return PlatingRates(temp_site=temp_site, rate_part=rate_part, rate_table=table,
                        rate_bin=rate_bin, charge_rate=lanes.charge_rate)


@dataclass(frozen=True)
class _Year:
    """One typical year of every lane: monthly state increments (12, n_lanes) of the
    calendar law, the counted cycles and the plating term, and the discharged charge per
    year (n_lanes,)."""

    cal_monthly: np.ndarray
    cyc_monthly: np.ndarray
    plating_monthly: np.ndarray
    efc: np.ndarray


def _one_year(lanes: _Lanes, rates: CalendarRates, plating: PlatingRates | None,
              step: int) -> _Year:
    """Sweep every chunk of ``step`` lanes once and turn its year into state increments."""
    n_lanes = lanes.n_lanes
    cal_monthly = np.empty((12, n_lanes))
    cyc_monthly = np.zeros((12, n_lanes))
    plating_monthly = np.zeros((12, n_lanes))
    efc = np.zeros(n_lanes)
    if rates.soc_part is None:
        cal_monthly[:] = (rates.temp_rate_site @ MONTH_MATRIX)[rates.rate_row].T
    for start in range(0, n_lanes, step):
        ch = slice(start, min(start + step, n_lanes))
        sweep = sweep_chunk(lanes.soc, lanes.current, lanes.temp, lanes.lane_site, ch, rates,
                            plating, do_cycles=not lanes.primary, use_kernel=lanes.use_kernel,
                            compiled=lanes.compiled)
        if sweep.cal_monthly is not None:
            cal_monthly[:, ch] = sweep.cal_monthly.T
        efc[ch] = sweep.efc
        if lanes.primary:
            # Primary cell: the load draws charge hour by hour; nothing is recharged.
            if lanes.current is not None:
                cyc_monthly[:, ch] = sweep.discharge_monthly.T
            continue
        cyc_monthly[:, ch], plating_monthly[:, ch] = _cycle_increments(lanes, ch, sweep)
    return _Year(cal_monthly, cyc_monthly, plating_monthly, efc)


def _cycle_increments(lanes: _Lanes, ch: slice, sweep: ChunkSweep):
    """Monthly state increments ``(12, n_chunk)`` of the chunk's counted cycles and of its
    plating term.

    Each cycle takes its lane's mean discharge C-rate (or the burst rate when larger,
    which is conservative: bursts are charged to the whole cycle) and mean charge C-rate
    over the hours that charge (or the given charge rate); it is booked in the month it
    closes. The plating term scales the lane's hourly plating sums by its cycle law at the
    reference temperature per full equivalent cycle (:mod:`planner.aging.plating`).
    """
    n_chunk = ch.stop - ch.start
    if lanes.current is not None:
        c_rate = sweep.efc / np.maximum(sweep.hours_on, 1)
        charge_rate = sweep.charged / np.maximum(sweep.hours_charging, 1)
    else:
        c_rate = np.zeros(n_chunk)
        charge_rate = np.zeros(n_chunk)
    if lanes.peak is not None:
        c_rate = np.maximum(c_rate, lanes.peak[ch])
    if lanes.charge_rate is not None:
        charge_rate = lanes.charge_rate[ch]
    cycles = sweep.cycles
    if cycles.lane.size == 0:
        return np.zeros((12, n_chunk)), np.zeros((12, n_chunk))
    inc = cycle_increments(
        lanes.params.cycle_model, lanes.params.cycle, lanes.chem, cycles.range_, cycles.mean,
        cycles.count, sweep.cycle_temp_c, c_rate[cycles.lane], lanes.charge_v[ch][cycles.lane],
        charge_c_rate=charge_rate[cycles.lane])
    key = cycles.lane * 12 + sweep.cycle_month
    film = np.bincount(key, weights=inc.total, minlength=12 * n_chunk).reshape(n_chunk, 12).T
    if sweep.plating_monthly is None:
        return film, np.zeros((12, n_chunk))
    cycles_done = np.bincount(cycles.lane, weights=cycles.range_ * cycles.count,
                              minlength=n_chunk)
    reference = np.bincount(cycles.lane, weights=inc.reference, minlength=n_chunk)
    per_cycle = np.divide(reference, cycles_done, out=np.zeros(n_chunk), where=cycles_done > 0)
    z = cycle_exponent(lanes.params.cycle_model, lanes.params.cycle)
    if z != 0.5:   # the reference is k**(1/z) per cycle; the plating law is in k**2
        per_cycle = per_cycle ** (2.0 * z)
    scale = plating_state_scale(per_cycle, charge_rate, **lanes.params.cycle)
    return film, (sweep.plating_monthly * scale[:, None]).T


def _over_horizon(lanes: _Lanes, year: _Year, initial_state: AgingState | None) -> FadeResult:
    """The typical year repeated over the horizon from the initial state (exact for every
    law here: each year adds the same state increment)."""
    n_lanes = lanes.n_lanes
    cal_exp = calendar_rate_parts(lanes.params.calendar_model, lanes.params.calendar,
                                  lanes.chem)[2]
    cyc_exp = cycle_exponent(lanes.params.cycle_model, lanes.params.cycle)
    if initial_state is None:
        cal0, cyc0, age0 = np.zeros(n_lanes), np.zeros(n_lanes), np.zeros(n_lanes)
    else:
        # Equivalent time across laws: carry the *losses*, re-expressed in this law's state.
        cal0 = np.broadcast_to(state_from_loss(initial_state.calendar_loss_frac, cal_exp), (n_lanes,))
        cyc0 = np.broadcast_to(state_from_loss(initial_state.cycle_loss_frac, cyc_exp), (n_lanes,))
        age0 = np.broadcast_to(initial_state.age_years, (n_lanes,))
    held = None
    hold_years = lanes.params.calendar.get("hold_after_years")
    if hold_years:
        cal0, held = _calendar_hold(cal_exp, float(hold_years), year.cal_monthly, initial_state,
                                    np.asarray(age0, dtype=float))
    pl0 = np.zeros(n_lanes) if initial_state is None else np.broadcast_to(
        state_from_loss(initial_state.plating_loss_frac, PLATING_EXPONENT), (n_lanes,))
    cal_states = repeat_year(cal0, year.cal_monthly, lanes.horizon)
    cyc_states = repeat_year(cyc0, year.cyc_monthly, lanes.horizon)
    pl_states = repeat_year(pl0, year.plating_monthly, lanes.horizon)
    cal_loss = held_loss_from_state(cal_states, cal_exp, held)
    pl_loss = loss_from_state(pl_states, PLATING_EXPONENT)
    cyc_loss = loss_from_state(cyc_states, cyc_exp) + pl_loss
    soh = np.maximum(1.0 - cal_loss - cyc_loss, 0.0)
    state = AgingState(cal_states[-1].copy(), cyc_states[-1].copy(), cal_exp, cyc_exp,
                       np.asarray(age0, dtype=float) + lanes.horizon, pl_states[-1].copy(),
                       None if held is None else held.copy())
    return FadeResult(soh_monthly=soh, calendar_loss_frac=cal_loss, cycle_loss_frac=cyc_loss,
                      efc_per_year=year.efc, state=state, chemistry_id=lanes.chem.id,
                      aging_set=lanes.params.name,
                      plating_loss_frac=pl_loss if has_plating(lanes.params.cycle) else None)


def _calendar_hold(z, hold_years, cal_monthly, initial_state, age0):
    """Start state and hold state of a calendar law kept at its end-of-test rate.

    A lane younger than the hold reaches it ``hold_years - age`` into this run's repeated
    year. An older one keeps the hold state it carries (same law), or, carried from
    another law or from bare losses, is given the history of constant conditions that
    ends at its loss and age: ``Q = S_h**z (1 - z + z a/t_h)``, so
    ``S_h = (Q / (1 - z + z a/t_h))**(1/z)`` and ``S = S_h a/t_h``. One without any
    calendar loss yet starts its calendar clock now.
    """
    n_lanes = cal_monthly.shape[1]
    if initial_state is None:
        cal0 = np.zeros(n_lanes)
        return cal0, state_after(cal0, cal_monthly, hold_years, MONTH_START_YEAR_FRAC)
    loss0 = np.broadcast_to(initial_state.calendar_loss_frac, (n_lanes,)).astype(float)
    before = age0 < hold_years
    carried = initial_state.calendar_held_state
    if carried is not None and initial_state.calendar_exponent == z:
        held_past = np.broadcast_to(np.asarray(carried, dtype=float), (n_lanes,))
        cal_past = held_state_from_loss(loss0, z, held_past)
    else:
        ratio = np.maximum(age0, hold_years) / hold_years
        held_past = state_from_loss(loss0 / (1.0 - z + z * ratio), z)
        cal_past = held_past * ratio
    fresh = ~before & (held_past <= 0.0)
    cal0 = np.where(before, state_from_loss(loss0, z), np.where(fresh, 0.0, cal_past))
    to_go = np.where(before, hold_years - age0, np.where(fresh, hold_years, 0.0))
    ahead = state_after(cal0, cal_monthly, to_go, MONTH_START_YEAR_FRAC)
    return cal0, np.where(before | fresh, ahead, held_past)
