"""Probability that a pack reaches end of life before a given age, without a Monte Carlo.

The pack Monte Carlo (:mod:`planner.pack.structure`) gives the failure probability of the new
rechargeable designs it simulates. Packs it skips (the pack in service today, primary
cells) get the same kind of answer from their nominal life and the spread of their
chemistry's fade rate:

* a fade law ``loss = k t^z`` reaches a fixed loss at ``t = (loss / k)^(1/z)``, so a
  log-normal rate coefficient ``k`` (coefficient of variation ``cv``, log-sigma
  ``s = sqrt(ln(1 + cv^2))``) gives a log-normal life with log-sigma ``s / z`` and the
  nominal life as its median;
* ``cv`` is the fade-rate spread of cells of one lot (``SPREAD_PRESETS["one-lot"]`` of
  :mod:`planner.pack.structure`, with its source there) and ``z`` the calendar time exponent of the
  chemistry's default aging set;
* a pack already ``age_years`` old that still serves today is conditioned on having
  survived so far: ``P(T < age + a | T > age)``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import ndtr

from planner.chemistry import get_chemistry
from planner.pack.structure import SPREAD_PRESETS, stress_parameters


def life_log_sigma(time_exponent: float, rate_spread_frac: float) -> float:
    """Log-sigma of the life of a pack whose fade law is ``k t^z`` with a spread rate.

    Parameters
    ----------
    time_exponent : float
        ``z`` of the calendar law (0.5 square root, 0.75 Schmalstieg, 1 linear).
    rate_spread_frac : float
        Coefficient of variation of the rate coefficient ``k``.
    """
    return math.sqrt(math.log1p(rate_spread_frac ** 2)) / max(float(time_exponent), 1e-6)


def chemistry_life_log_sigma(chemistry: str) -> float:
    """:func:`life_log_sigma` of a chemistry's default aging set and the one-lot spread."""
    chem = get_chemistry(chemistry)
    z = stress_parameters(chem.aging_sets[chem.default_aging_set])["calendar_time_exponent"]
    return life_log_sigma(z, SPREAD_PRESETS["one-lot"].rate_spread_frac)


def failure_prob_by_age(nominal_life_years: float, n_ages: int, log_sigma: float, *,
                        age_years: float = 0.0) -> tuple[float, ...]:
    """Cumulative probability of reaching end of life before ages 1..n_ages years.

    Parameters
    ----------
    nominal_life_years : float
        Median remaining life, years from now (from installation for a new pack).
    n_ages : int
        Number of whole years to give.
    log_sigma : float
        Log-sigma of the total life (:func:`chemistry_life_log_sigma`).
    age_years : float
        Age of the pack today; the probability is conditioned on it still serving.

    Returns
    -------
    tuple of float
        ``F(1), ..., F(n_ages)``, non-decreasing, in [0, 1]. An infinite or non-positive
        life gives zeros (never fails) and ones (already failed) respectively.
    """
    if not math.isfinite(nominal_life_years):
        return (0.0,) * n_ages
    if nominal_life_years <= 0.0:
        return (1.0,) * n_ages
    age = max(float(age_years), 0.0)
    median = age + float(nominal_life_years)
    ages = age + np.arange(1, n_ages + 1, dtype=float)
    sigma = max(float(log_sigma), 1e-9)
    cdf = ndtr(np.log(ages / median) / sigma)
    alive_now = 1.0 - (ndtr(math.log(age / median) / sigma) if age > 0 else 0.0)
    base = 1.0 - alive_now
    prob = np.clip((cdf - base) / max(alive_now, 1e-12), 0.0, 1.0)
    return tuple(float(p) for p in np.maximum.accumulate(prob))
