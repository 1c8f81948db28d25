"""What a belief about a site's fade factor means for its pack: lives and health.

A pack in service whose capacity is ``(1 + δ) - f_cal A_cal(t) - f_cyc A_cyc(t)`` of
rated (the laws' calendar and cycle loss ``A`` at its site, scaled by the site's factors)
reaches its end-of-life state of health ``s_eol`` at the first age ``t`` where
``A_cal(t) + ρ' A_cyc(t) = (1 + δ - s_eol) / f_cal`` (``ρ' = f_cyc / f_cal``). The loss
curve only grows, so each belief point gives its life by one interpolation on the
site's monthly curve. A belief is a set of weighted points ``(g = ln f_cal, δ)``: a grid
posterior, or draws from one.

The plan prices a pack in service by (a) the age at which it must be replaced at the
latest (the median remaining life, capped by the service limit, as the plan does for
every pack) and (b) the probability that it fails before each age, conditioned on it
still serving today (as :mod:`planner.pack.life_risk` does for the nominal life).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

MONTHS_PER_YEAR = 12


@dataclass(frozen=True)
class PackCurve:
    """The laws' prediction for one pack in service, from its installation.

    ``calendar_loss_frac`` and ``cycle_loss_frac`` are monthly (row 0 = installation);
    ``age_years`` its age at the start of the study; ``eol_soh_frac`` the state of health
    at which it can no longer carry the site; ``service_limit_years`` the longest service
    planned whatever the fade (total years from installation).
    """

    calendar_loss_frac: np.ndarray
    cycle_loss_frac: np.ndarray
    age_years: float
    eol_soh_frac: float
    service_limit_years: float
    eol_soh_by_month: np.ndarray | None = None

    def loss_frac(self, rho: float = 0.0) -> np.ndarray:
        """Monthly predicted loss with the cycle part scaled by ``exp(rho)``, never falling."""
        loss = self.calendar_loss_frac + math.exp(rho) * self.cycle_loss_frac
        return np.maximum.accumulate(loss)

    def loss_at(self, age_years, rho: float = 0.0):
        """Calendar and cycle loss at ages (years from installation), interpolated monthly:
        ``(calendar, cycle)``."""
        months = np.asarray(age_years, dtype=float) * MONTHS_PER_YEAR
        grid = np.arange(self.calendar_loss_frac.size)
        return (np.interp(months, grid, self.calendar_loss_frac),
                np.interp(months, grid, self.cycle_loss_frac))


def total_life_years(curve: PackCurve, g, delta, rho: float = 0.0) -> np.ndarray:
    """Age (years from installation) at which each belief point reaches end of life;
    0 when the pack was already below it new, inf beyond the curve's end."""
    loss = curve.loss_frac(rho)
    if curve.eol_soh_by_month is not None:
        return _life_rising_threshold(curve, loss, g, delta)
    # a strictly growing copy for the inverse interpolation (flat stretches are months
    # of no fade: the first month reaching a level is the answer)
    ramp = loss + 1e-12 * np.arange(loss.size)
    need = (1.0 + np.asarray(delta, dtype=float) - curve.eol_soh_frac) * np.exp(-np.asarray(g, dtype=float))
    months = np.interp(need, ramp, np.arange(loss.size, dtype=float))
    years = months / MONTHS_PER_YEAR
    years = np.where(need <= 0.0, 0.0, years)
    return np.where(need > ramp[-1], np.inf, years)


def _life_rising_threshold(curve: PackCurve, loss, g, delta) -> np.ndarray:
    """:func:`total_life_years` against a threshold that changes month by month: the first
    month each point's state of health is at or below it (linear between months)."""
    g = np.asarray(g, dtype=float)
    shape = np.broadcast(g, np.asarray(delta)).shape
    g, d = np.broadcast_to(g, shape).ravel(), np.broadcast_to(np.asarray(delta, dtype=float), shape).ravel()
    gap = (1.0 + d)[:, None] - np.exp(g)[:, None] * loss[None, :] - curve.eol_soh_by_month[None, :]
    below = gap <= 0.0
    first = np.argmax(below, axis=1)
    rows = np.arange(g.size)
    prev = np.maximum(first - 1, 0)
    hi, lo = gap[rows, prev], gap[rows, first]
    frac = np.where(hi > lo, hi / np.where(hi > lo, hi - lo, 1.0), 0.0)
    months = np.where(first > 0, prev + np.clip(frac, 0.0, 1.0), 0.0)
    years = np.where(below.any(axis=1), months / MONTHS_PER_YEAR, np.inf)
    return years.reshape(shape)


@dataclass(frozen=True)
class LifeBelief:
    """Remaining life of a pack in service under a belief (years from the study start).

    ``remaining_years`` and ``weight`` are the belief's points (weights sum to 1);
    ``service_left_years`` the service limit left (the plan never keeps the pack longer).
    """

    remaining_years: np.ndarray
    weight: np.ndarray
    service_left_years: float

    @property
    def alive_frac(self) -> float:
        """Probability the pack still carries its site today (> 0 remaining years)."""
        return float(self.weight[self.remaining_years > 0.0].sum())

    def _alive(self):
        keep = self.remaining_years > 0.0
        w = self.weight[keep]
        return self.remaining_years[keep], w / w.sum() if w.sum() > 0 else w

    def quantiles(self, qs=(0.1, 0.5, 0.9)) -> list[float]:
        """Remaining-life quantiles given the pack serves today (inf past the curve)."""
        r, w = self._alive()
        if r.size == 0:
            return [0.0 for _ in qs]
        order = np.argsort(r)
        r, c = r[order], np.cumsum(w[order])
        idx = np.minimum(np.searchsorted(c, np.asarray(qs) - 1e-12), r.size - 1)
        return [float(r[i]) for i in idx]

    def replace_by_years(self) -> float:
        """Latest planned replacement: the median remaining life, capped by the service
        limit (0 when the pack has almost surely passed its end of life already)."""
        if self.alive_frac < 1e-6:
            return 0.0
        return float(max(0.0, min(self.quantiles((0.5,))[0], self.service_left_years)))

    def failure_prob_by_age(self, n_ages: int) -> tuple[float, ...]:
        """``P(remaining < a | serving today)`` for a = 1..n_ages years (non-decreasing).

        Like :func:`planner.pack.life_risk.failure_prob_by_age`, not capped by the service
        limit (a planning rule, not a failure)."""
        if self.alive_frac < 1e-6:
            return (1.0,) * n_ages
        r, w = self._alive()
        ages = np.arange(1, n_ages + 1, dtype=float)
        order = np.argsort(r)
        c = np.concatenate(([0.0], np.cumsum(w[order])))
        prob = c[np.searchsorted(r[order], ages, side="left")]
        return tuple(float(p) for p in np.minimum(np.maximum.accumulate(prob), 1.0))


def life_belief(curve: PackCurve, g, delta, weight, rho: float = 0.0) -> LifeBelief:
    """:class:`LifeBelief` of a pack from belief points ``(g, δ)`` with ``weight``."""
    total = total_life_years(curve, g, delta, rho)
    w = np.asarray(weight, dtype=float).ravel()
    return LifeBelief(remaining_years=(total - curve.age_years).ravel(), weight=w / w.sum(),
                      service_left_years=max(0.0, curve.service_limit_years - curve.age_years))


def soh_band(curve: PackCurve, g, delta, rho: float = 0.0, *, months, qs=(0.1, 0.5, 0.9)) -> np.ndarray:
    """State-of-health quantiles at ``months`` (from installation) over equally weighted
    belief draws ``(g, δ)``, shape ``(len(qs), len(months))``."""
    loss = curve.loss_frac(rho)[np.minimum(np.asarray(months), curve.calendar_loss_frac.size - 1)]
    g = np.asarray(g, dtype=float).ravel()
    soh = (1.0 + np.asarray(delta, dtype=float).ravel())[:, None] - np.exp(g)[:, None] * loss[None, :]
    return np.quantile(np.maximum(soh, 0.0), qs, axis=0, method="inverted_cdf")


def soh_curve(curve: PackCurve, g: float, delta: float, rho: float = 0.0) -> np.ndarray:
    """Monthly state of health from installation at one belief point."""
    return np.maximum(1.0 + delta - math.exp(g) * curve.loss_frac(rho), 0.0)


def systematic_draws(posterior: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """``n`` equally weighted grid indices ``(k, j)`` drawn from a 2-D posterior grid by
    systematic resampling at ``(i + ½)/n`` (deterministic: Kitagawa 1996, J. Comput.
    Graph. Stat. 5(1) 1-25)."""
    flat = posterior.ravel()
    c = np.cumsum(flat)
    c /= c[-1]
    idx = np.minimum(np.searchsorted(c, (np.arange(n) + 0.5) / n), flat.size - 1)
    return np.unravel_index(idx, posterior.shape)
