"""A pack in service: its simulated health read from today, and a measured SOH.

The fade laws give a new pack's state of health month by month, ``S(t)``. A pack
installed ``a`` months ago is, without a measurement, at ``S(a)`` today. A capacity
test (measured capacity / rated capacity, ``m``) says more, and from the day it is
measured the pack's health is never above it:

- if the simulated curve reaches ``m`` (first at month ``k``), the pack behaves like a
  simulated pack of *equivalent age* ``k``: ``soh(t) = min(S(k + t), m)``. ``k`` may be
  below ``a`` (healthier than the laws predict) or above it (more worn);
- if ``m`` is below everything the simulation reaches (a pack failing far faster than
  the laws predict, e.g. a damaged one), it fades from ``m`` at the laws' relative pace
  from its age: ``soh(t) = m S(a + t) / S(a)``.

Placing a tested pack on the model's curve by its measured capacity, rather than by its
calendar age, is common practice (capacity tests under IEEE 450 / IEEE 1188 are read
against the battery's expected life). The measurement is taken at the study's start; a
dated measurement (field data) passes the pack's age at the test as ``age_months``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class PackHealth:
    """A pack's health from the day read (month 0) to the end of the simulation.

    Attributes
    ----------
    start_month : int
        Month of the simulated new-pack curve that stands for the pack today (its age,
        or its equivalent age after a measurement).
    soh_monthly : numpy.ndarray
        State of health month by month from today, fraction of rated capacity.
    measured : bool
        Whether a measured SOH set it.
    on_model_curve : bool
        False when the measurement lies below everything the laws reach (the pack fades
        from it at the laws' relative pace instead).
    """

    start_month: int
    soh_monthly: np.ndarray
    measured: bool = False
    on_model_curve: bool = True

    def years_to(self, soh_frac: float) -> float:
        """Years from today until the health first falls to ``soh_frac`` (linear between
        months; 0 if already there, inf if never within the simulation)."""
        soh = self.soh_monthly
        below = soh <= soh_frac
        if not below.any():
            return float("inf")
        first = int(np.argmax(below))
        if first == 0:
            return 0.0
        hi, lo = float(soh[first - 1]), float(soh[first])
        frac = (hi - soh_frac) / (hi - lo) if hi > lo else 0.0
        return (first - 1 + min(max(frac, 0.0), 1.0)) / 12.0

    def months(self, count: int) -> np.ndarray:
        """The first ``count`` months from today (the last value held if the simulation
        ends sooner)."""
        head = self.soh_monthly[:count]
        if head.size < count:
            head = np.pad(head, (0, count - head.size), mode="edge")
        return head


def health_from_today(soh_monthly, *, age_months: int,
                      measured_soh_frac: float | None = None) -> PackHealth:
    """The health of a pack in service from today (module notes give the rule).

    Parameters
    ----------
    soh_monthly : array of shape (months,)
        Simulated SOH of a new pack of the design in this site's duty, month 0 = new.
    age_months : int
        The pack's age today, in months.
    measured_soh_frac : float, optional
        Measured capacity / rated capacity today (None or 0: no measurement).

    Examples
    --------
    >>> curve = 1.0 - 0.01 * np.arange(60)        # 1 % a month, invented
    >>> float(health_from_today(curve, age_months=10).soh_monthly[0])
    0.9
    >>> health_from_today(curve, age_months=10, measured_soh_frac=0.8).start_month
    20
    >>> h = health_from_today(curve, age_months=10, measured_soh_frac=0.01)
    >>> round(float(h.soh_monthly[0]), 4), h.years_to(0.7)
    (0.01, 0.0)
    """
    soh = np.asarray(soh_monthly, dtype=float)
    age = int(min(max(age_months, 0), soh.size - 1))
    if not measured_soh_frac:
        return PackHealth(age, soh[age:])
    m = float(measured_soh_frac)
    reached = soh <= m
    if reached.any():
        start = int(np.argmax(reached))
        return PackHealth(start, np.minimum(soh[start:], m), measured=True)
    pace = soh[age:] / soh[age] if soh[age] > 0 else np.ones(soh.size - age)
    return PackHealth(age, np.minimum(m * pace, m), measured=True, on_model_curve=False)
