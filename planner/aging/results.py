"""What the aging engine returns: each lane's fade month by month, and where a pack stands.

:class:`FadeResult` holds the monthly state of health of every lane with its calendar,
cycle and plating parts and finds the end of life inside the month that brackets a
threshold; :class:`AgingState` carries a pack from one run to the next (equivalent time,
:mod:`planner.aging.superposition`). :func:`planner.aging.age_lanes` builds both.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging.superposition import (
    held_loss_from_state,
    held_state_from_loss,
    loss_from_state,
    state_from_loss,
)
from planner.aging.sweep import MONTH_START_H

MONTH_START_YEAR_FRAC = MONTH_START_H / HOURS_PER_YEAR
"""Year fraction at which each month of the typical year starts."""
PLATING_EXPONENT = 0.5
"""The plating term is a square-root law in charge throughput (Schimpe et al. 2018)."""


def row_years(rows):
    """Elapsed years at rows of a monthly table (row 0 = start, row 12 y + m = y years + m months).

    Months have their calendar lengths (31, 28, 31, ... days), as in the hourly year.
    """
    rows = np.asarray(rows)
    return rows // 12 + MONTH_START_YEAR_FRAC[rows % 12]


@dataclass(frozen=True)
class AgingState:
    """Where a pack stands, to continue aging it later (existing pack, next year's re-run).

    Attributes
    ----------
    calendar_state, cycle_state : ndarray, shape (n_lanes,)
        Superposition states (loss = state ** exponent).
    calendar_exponent, cycle_exponent : float
        Exponents of the laws that produced the states.
    age_years : ndarray, shape (n_lanes,)
        Years aged so far.
    plating_state : ndarray, shape (n_lanes,), or None
        State of the plating term (square-root law in charge throughput,
        :mod:`planner.aging.plating`); None: no plating loss.
    calendar_held_state : ndarray, shape (n_lanes,), or None
        Calendar state at the end of the longest test behind the law, past which the
        law keeps the rate it has there (``hold_after_years`` of the set,
        :func:`planner.aging.superposition.held_loss_from_state`); None: a plain power law.
    """

    calendar_state: np.ndarray
    cycle_state: np.ndarray
    calendar_exponent: float
    cycle_exponent: float
    age_years: np.ndarray
    plating_state: np.ndarray | None = None
    calendar_held_state: np.ndarray | None = None

    @property
    def calendar_loss_frac(self) -> np.ndarray:
        return held_loss_from_state(self.calendar_state, self.calendar_exponent,
                                    self.calendar_held_state)

    @property
    def cycle_loss_frac(self) -> np.ndarray:
        """Loss of the counted cycles (the plating term apart: :attr:`plating_loss_frac`)."""
        return loss_from_state(self.cycle_state, self.cycle_exponent)

    @property
    def plating_loss_frac(self) -> np.ndarray:
        if self.plating_state is None:
            return np.zeros_like(np.asarray(self.cycle_state, dtype=float))
        return loss_from_state(self.plating_state, PLATING_EXPONENT)

    @property
    def soh_frac(self) -> np.ndarray:
        return np.maximum(1.0 - self.calendar_loss_frac - self.cycle_loss_frac
                          - self.plating_loss_frac, 0.0)

    @classmethod
    def from_losses(cls, calendar_loss_frac, cycle_loss_frac, *, age_years=0.0,
                    calendar_exponent=1.0, cycle_exponent=1.0) -> AgingState:
        """A state holding given losses (e.g. a measured capacity split by the caller).

        The exponents only set the internal representation; :func:`age_lanes` converts a
        state to its own laws through the losses (equivalent time across laws).
        """
        cal = np.atleast_1d(np.asarray(calendar_loss_frac, dtype=float))
        cyc = np.broadcast_to(np.asarray(cycle_loss_frac, dtype=float), cal.shape).copy()
        age = np.broadcast_to(np.asarray(age_years, dtype=float), cal.shape).copy()
        return cls(state_from_loss(cal, calendar_exponent), state_from_loss(cyc, cycle_exponent),
                   float(calendar_exponent), float(cycle_exponent), age)


@dataclass(frozen=True)
class FadeResult:
    """Capacity fade of every lane over the horizon, month by month.

    Attributes
    ----------
    soh_monthly : ndarray, shape (12 * horizon_years + 1, n_lanes)
        State of health (remaining / rated capacity); row 0 is the start.
    calendar_loss_frac, cycle_loss_frac : ndarray, same shape
        The two parts of the loss (they add). ``cycle_loss_frac`` holds all of cycling,
        the plating term included. For primary lithium: self-discharge and load charge
        drawn.
    efc_per_year : ndarray, shape (n_lanes,)
        Equivalent full cycles per year (discharged charge / rated capacity).
    state : AgingState
        State at the end of the horizon, to continue from.
    chemistry_id, aging_set : str
        Chemistry and aging parameter set used.
    plating_loss_frac : ndarray, same shape as ``soh_monthly``, or None
        The part of ``cycle_loss_frac`` lost to lithium plating while charging
        (:mod:`planner.aging.plating`); None for a set without that term.
    """

    soh_monthly: np.ndarray
    calendar_loss_frac: np.ndarray
    cycle_loss_frac: np.ndarray
    efc_per_year: np.ndarray
    state: AgingState
    chemistry_id: str
    aging_set: str
    plating_loss_frac: np.ndarray | None = None

    def end_of_life(self, threshold_frac: float):
        """Years until SOH reaches ``threshold_frac`` and the loss parts at that moment.

        More precise than :func:`years_to_soh` on the monthly table: within the month
        that brackets the threshold each superposition state grows linearly in time
        (the rates of that month), so the crossing is solved on the states (bisection)
        instead of interpolating SOH linearly. Lanes that never reach the threshold
        give ``np.inf`` and the losses at the horizon end.

        Returns
        -------
        years, calendar_loss_frac, cycle_loss_frac : ndarray, shape (n_lanes,)
        """
        soh = self.soh_monthly
        lanes = np.arange(soh.shape[1])
        below = soh <= threshold_frac
        reached = below.any(axis=0)
        first = np.where(reached, np.argmax(below, axis=0), soh.shape[0] - 1)
        prev = np.maximum(first - 1, 0)
        z_cal, z_cyc = self.state.calendar_exponent, self.state.cycle_exponent
        held = self.state.calendar_held_state
        plating = (np.zeros_like(self.cycle_loss_frac) if self.plating_loss_frac is None
                   else self.plating_loss_frac)
        film = self.cycle_loss_frac - plating
        cal0 = held_state_from_loss(self.calendar_loss_frac[prev, lanes], z_cal, held)
        cal1 = held_state_from_loss(self.calendar_loss_frac[first, lanes], z_cal, held)
        cyc0 = state_from_loss(np.maximum(film[prev, lanes], 0.0), z_cyc)
        cyc1 = state_from_loss(np.maximum(film[first, lanes], 0.0), z_cyc)
        pl0 = state_from_loss(plating[prev, lanes], PLATING_EXPONENT)
        pl1 = state_from_loss(plating[first, lanes], PLATING_EXPONENT)

        def cycling_at(theta):
            return (loss_from_state(cyc0 + theta * (cyc1 - cyc0), z_cyc)
                    + loss_from_state(pl0 + theta * (pl1 - pl0), PLATING_EXPONENT))

        def soh_at(theta):
            return (1.0 - held_loss_from_state(cal0 + theta * (cal1 - cal0), z_cal, held)
                    - cycling_at(theta))

        lo, hi = np.zeros(lanes.size), np.ones(lanes.size)
        for _ in range(60):  # SOH falls monotonically in theta: bisection to ~1e-18 of a month
            mid = 0.5 * (lo + hi)
            above = soh_at(mid) > threshold_frac
            lo, hi = np.where(above, mid, lo), np.where(above, hi, mid)
        theta = np.where(reached & (first > 0), hi, np.where(reached, 0.0, 1.0))
        t_prev, t_first = row_years(prev), row_years(first)
        years = np.where(reached, t_prev + theta * (t_first - t_prev), np.inf)
        cal = held_loss_from_state(cal0 + theta * (cal1 - cal0), z_cal, held)
        return years, cal, cycling_at(theta)

    def years_to_soh(self, threshold_frac: float) -> np.ndarray:
        """Years until SOH first reaches ``threshold_frac`` (np.inf if never), see end_of_life."""
        return self.end_of_life(threshold_frac)[0]


def years_to_soh(soh_monthly, threshold_frac: float) -> np.ndarray:
    """Years until the monthly SOH first reaches ``threshold_frac``, per lane.

    Linear interpolation between the two month ends that bracket the threshold (months
    of calendar length, see :func:`row_years`);
    0 if the start is already at or below it; ``np.inf`` if never within the horizon.

    Parameters
    ----------
    soh_monthly : ndarray, shape (n_months + 1, n_lanes) or (n_months + 1,)
    threshold_frac : float

    Returns
    -------
    ndarray, shape (n_lanes,) (a float for 1-D input)
    """
    soh = np.asarray(soh_monthly, dtype=float)
    one_d = soh.ndim == 1
    if one_d:
        soh = soh[:, None]
    below = soh <= threshold_frac
    reached = below.any(axis=0)
    first = np.argmax(below, axis=0)
    lanes = np.arange(soh.shape[1])
    prev = np.maximum(first - 1, 0)
    hi, lo = soh[prev, lanes], soh[first, lanes]
    span = hi - lo
    frac = np.where(span > 0, (hi - threshold_frac) / np.where(span > 0, span, 1.0), 0.0)
    t_prev = row_years(prev)
    years = np.where(first == 0, 0.0, t_prev + frac * (row_years(first) - t_prev))
    out = np.where(reached, years, np.inf)
    return float(out[0]) if one_d else out
