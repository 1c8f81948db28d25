"""Mains (grid or generator) float charging with a seeded outage pattern.

A backup pack on mains float is held full by its charger while mains is present and
carries the load alone during outages. Outages arrive as a Poisson process (exponential
times between outages) with exponentially distributed durations, the usual two-state
model of supply reliability (Billinton & Allan 1996, Reliability Evaluation of Power
Systems, 2nd ed., ch. 9; from memory). The pattern is drawn once from a seeded generator
so every run of a study gives the same year.
"""

from __future__ import annotations

import math

import numpy as np

from planner import HOURS_PER_YEAR
from planner.errors import InputError


def mains_available(n_hours: int = HOURS_PER_YEAR, *, outages_per_year: float = 0.0,
                    mean_outage_h: float = 0.0, seed: int = 0) -> np.ndarray:
    """Hourly mains availability (True = mains present) with seeded random outages.

    The number of outages in ``n_hours`` is Poisson with mean
    ``outages_per_year * n_hours / 8760``; each starts at a uniformly drawn hour and
    lasts an exponentially distributed time of mean ``mean_outage_h``, rounded to whole
    hours (at least one). Outages running past the last hour are cut there. The
    expected fraction of hours without mains is therefore close to
    ``outages_per_year * mean_outage_h / 8760`` (less where outages overlap).

    Parameters
    ----------
    n_hours : int
        Length of the series (h).
    outages_per_year : float
        Mean number of outages per 8,760 h (0-8760).
    mean_outage_h : float
        Mean outage duration (h, > 0 when outages_per_year > 0).
    seed : int
        Seed of the random generator (same seed, same pattern).

    Returns
    -------
    numpy.ndarray of bool, shape (n_hours,)
    """
    if not isinstance(n_hours, (int, np.integer)) or n_hours < 1:
        raise InputError(f"n_hours: found {n_hours!r}, expected a positive integer")
    for key, value, hi in (("outages_per_year", outages_per_year, 8760.0),
                           ("mean_outage_h", mean_outage_h, 8760.0)):
        if not (isinstance(value, (int, float, np.number)) and math.isfinite(value)
                and 0 <= value <= hi):
            raise InputError(f"{key}: found {value!r}, expected a number from 0 to {hi:g}")
    available = np.ones(n_hours, dtype=bool)
    if outages_per_year == 0:
        return available
    if mean_outage_h <= 0:
        raise InputError(f"mean_outage_h: found {mean_outage_h!r}, expected > 0 h when "
                         "outages_per_year > 0")
    rng = np.random.default_rng(seed)
    count = rng.poisson(outages_per_year * n_hours / HOURS_PER_YEAR)
    starts = rng.integers(0, n_hours, size=count)
    lengths = np.maximum(np.rint(rng.exponential(mean_outage_h, size=count)), 1).astype(int)
    # mark each outage with +1/-1 at its edges; a running sum > 0 means "in an outage"
    edges = np.zeros(n_hours + 1, dtype=np.int64)
    np.add.at(edges, starts, 1)
    np.add.at(edges, np.minimum(starts + lengths, n_hours), -1)
    available[np.cumsum(edges[:-1]) > 0] = False
    return available


def float_charge_power_w(available, charger_power_w: float) -> np.ndarray:
    """Power a float charger offers to the battery bus (W): its rating while mains is up.

    The charger carries the load first and floats the pack with the rest (the SOC
    recursion nets load against it), so ``charger_power_w`` should exceed the peak load.
    During outages it offers nothing and the pack carries the load.

    Parameters
    ----------
    available : array of bool
        Mains availability, e.g. from :func:`mains_available`.
    charger_power_w : float
        Charger output rating (W), >= 0.

    Returns
    -------
    numpy.ndarray of float, same shape as ``available``.
    """
    if not (isinstance(charger_power_w, (int, float, np.number))
            and math.isfinite(charger_power_w) and charger_power_w >= 0):
        raise InputError(f"charger_power_w: found {charger_power_w!r}, expected >= 0 W")
    return np.where(np.asarray(available, dtype=bool), float(charger_power_w), 0.0)
