"""Equivalent-time superposition of power-law fade and its repetition over many years.

A fade law fitted at constant conditions, ``Q = k * x**z`` (x = time or charge
throughput, k = k(T, SOC, ...)), is carried through changing conditions with the
equivalent-time ("virtual time") update: convert the loss reached so far into the
time that would have produced it at the new condition, ``x_eq = (Q / k_new)**(1/z)``,
then advance by the step, ``Q_new = k_new * (x_eq + dx)**z``.

Raising both sides to ``1/z`` shows that this update is exactly

    S_new = S + k_new**(1/z) * dx,      with the state S = Q**(1/z),

so the state is a plain sum over steps: it is path-independent, vectorises over hours
and lanes, and a period of constant conditions split into pieces gives the same result
as the whole. For ``z = 0.5`` the squares of the loss add. For ``z = 1`` (linear laws,
Palmgren-Miner damage) the state is the loss itself.

Temperature conventions (state in code which one a law uses): with the Arrhenius
factor AF(T) in the coefficient, ``Q = k_ref AF t**z`` (*coefficient* convention, how
Naumann 2018 and Schmalstieg 2014 were fitted), the state grows by
``k_ref**(1/z) AF**(1/z) dt``: the reference-equivalent time is ``sum(AF**(1/z) dt)``.
With temperature scaling the *clock*, ``Q = k_ref (sum AF dt)**z``, it is
``sum(AF dt)``. Both agree at constant temperature; they differ under varying
temperature (see tests/test_aging_superposition.py).

A typical year repeats over the horizon: the state grows by the same amount every
year, so after y whole years and m months ``S = S0 + y * dS_year + dS_months[m]``,
exact for every law above, without simulating each year hour by hour.
"""

from __future__ import annotations

import numpy as np


def state_from_loss(loss_frac, exponent):
    """Superposition state of a loss: ``S = Q**(1/z)``."""
    return np.asarray(loss_frac, dtype=float) ** (1.0 / exponent)


def loss_from_state(state, exponent):
    """Loss of a superposition state: ``Q = S**z``."""
    return np.maximum(np.asarray(state, dtype=float), 0.0) ** exponent


def equivalent_time_step(loss_frac, coefficient, duration, exponent):
    """One textbook equivalent-time update of a law ``Q = k * x**z`` (loss fraction).

    ``x_eq = (Q / k)**(1/z)``; ``Q_new = k * (x_eq + dx)**z``. Kept as the reference
    the vectorised state sum is tested against.
    """
    equivalent = (np.asarray(loss_frac, dtype=float) / coefficient) ** (1.0 / exponent)
    return coefficient * (equivalent + duration) ** exponent


def reference_equivalent_time(acceleration, duration, exponent, convention):
    """Time at reference conditions equivalent to steps at acceleration factors ``AF_i``.

    Parameters
    ----------
    acceleration : array_like
        Arrhenius (or other) factor of each step relative to the reference.
    duration : array_like
        Step durations (any time unit).
    exponent : float
        Time exponent z of the law.
    convention : {"clock", "coefficient"}
        ``"clock"``: ``sum(AF * dt)``; ``"coefficient"``: ``sum(AF**(1/z) * dt)``.

    Returns
    -------
    float or ndarray
        Equivalent duration at the reference condition (same unit as ``duration``).
    """
    af = np.asarray(acceleration, dtype=float)
    dt = np.asarray(duration, dtype=float)
    if convention == "clock":
        return np.sum(af * dt, axis=0)
    if convention == "coefficient":
        return np.sum(af ** (1.0 / exponent) * dt, axis=0)
    raise ValueError(f"convention must be 'clock' or 'coefficient', got {convention!r}")


def repeat_year(state0, monthly_increment, horizon_years: int):
    """States at every month end of a typical year repeated ``horizon_years`` times.

    Parameters
    ----------
    state0 : ndarray, shape (n_lanes,)
        State at the start.
    monthly_increment : ndarray, shape (12, n_lanes)
        State added in each month of the typical year.
    horizon_years : int

    Returns
    -------
    ndarray, shape (12 * horizon_years + 1, n_lanes)
        Row 0 is ``state0``; row ``12 y + m + 1`` is ``state0 + y * year + cum[m]``.
    """
    inc = np.asarray(monthly_increment, dtype=float)
    within = np.cumsum(inc, axis=0)
    year = within[-1]
    years = np.arange(horizon_years, dtype=float)
    grid = years[:, None, None] * year[None, None, :] + within[None, :, :]
    out = np.empty((12 * horizon_years + 1, inc.shape[1]))
    out[0] = state0
    out[1:] = np.asarray(state0, dtype=float)[None, :] + grid.reshape(12 * horizon_years, -1)
    return out


def held_loss_from_state(state, exponent, held_state):
    r"""Loss of a state when the law keeps, past ``held_state``, the rate it has there.

    .. math::

        Q = \begin{cases} S^z & S \le S_h \\ S_h^z + z\,S_h^{z-1}\,(S - S_h) & S > S_h \end{cases}

    with :math:`S` = ``state``, :math:`z` = ``exponent`` and :math:`S_h` =
    ``held_state`` (the state a lane reached at the end of the longest test behind its
    law; None: the plain power law, :func:`loss_from_state`). Linear in the state past
    the hold, so at constant conditions the loss grows at the slope of the end of the
    test (:func:`planner.aging.large_format.held_loss`).
    """
    power = loss_from_state(state, exponent)
    if held_state is None:
        return power
    s = np.maximum(np.asarray(state, dtype=float), 0.0)
    h = np.asarray(held_state, dtype=float)  # (n_lanes,) broadcasts over rows of months
    past = (s > h) & (h > 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        linear = h ** exponent + exponent * h ** (exponent - 1.0) * (s - h)
    return np.where(past, linear, power)


def held_state_from_loss(loss_frac, exponent, held_state):
    """State of a loss under :func:`held_loss_from_state` (its inverse)."""
    power = state_from_loss(np.maximum(np.asarray(loss_frac, dtype=float), 0.0), exponent)
    if held_state is None:
        return power
    q = np.asarray(loss_frac, dtype=float)
    h = np.asarray(held_state, dtype=float)
    at_hold = np.where(h > 0.0, h, 0.0) ** exponent
    past = (q > at_hold) & (h > 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        linear = h + (q - at_hold) / (exponent * h ** (exponent - 1.0))
    return np.where(past, linear, power)


def state_after(state0, monthly_increment, elapsed_years, month_start_year_frac):
    """State of each lane ``elapsed_years`` into the repeated year, linear within a month.

    Parameters
    ----------
    state0 : ndarray, shape (n_lanes,)
    monthly_increment : ndarray, shape (12, n_lanes)
    elapsed_years : float or ndarray, shape (n_lanes,)
        Years from the start (>= 0).
    month_start_year_frac : ndarray, shape (12,)
        Year fraction at which each month starts (0 for January).
    """
    inc = np.asarray(monthly_increment, dtype=float)
    elapsed = np.maximum(np.asarray(elapsed_years, dtype=float), 0.0)
    whole = np.floor(elapsed)
    part = elapsed - whole
    bounds = np.append(np.asarray(month_start_year_frac, dtype=float), 1.0)
    cum = np.vstack([np.zeros((1, inc.shape[1])), np.cumsum(inc, axis=0)])
    month = np.clip(np.searchsorted(bounds, part, side="right") - 1, 0, 11)
    within = (part - bounds[month]) / (bounds[month + 1] - bounds[month])
    lanes = np.arange(inc.shape[1])
    partial = cum[month, lanes] + within * inc[month, lanes]
    return np.asarray(state0, dtype=float) + whole * cum[-1] + partial
