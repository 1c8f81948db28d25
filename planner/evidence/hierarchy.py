"""Partial pooling of fade factors across a fleet: exact posteriors on grids.

Model (one chemistry at a time; Gelman et al. 2013, *Bayesian Data Analysis*, 3rd ed.,
ch. 5, hierarchical normal model; applied to battery fade by Zhou & Howey 2022,
Bayesian hierarchical modelling for battery lifetime early prediction):

* each pack in service loses capacity ``f_cal A_cal(t) + f_cyc A_cyc(t)``, where
  ``A_cal`` and ``A_cyc`` are the laboratory laws' calendar and cycle loss of that pack at
  its site (the plan's own prediction) and ``f = exp(g)`` a factor of the site;
* ``g = μ + u``, ``u ~ Normal(0, τ²)``: a site without records moves with its chemistry's
  fleet mean ``μ``; the spread ``τ`` between sites is learnt from the fleet;
* one factor for both laws (``f_cyc = f_cal``) unless the fleet's tested sites differ
  enough in how much of their predicted loss is cycling (:func:`split_decision`); then
  ``f_cyc = f_cal exp(ρ)`` with one fleet-wide ``ρ``;
* a pack's capacity when new is ``1 + δ`` of rated, ``δ ~ Normal(0, σ_δ²)`` per pack,
  so one test cannot mistake a pack that was low from the start for fast fade (an
  acceptance test fixes ``δ``);
* a measured state of health ``y`` has a Student-t error (``ν = 4``): one odd record
  cannot drag a factor far (Lange, Little & Taylor 1989, JASA 84(408) 881-896);
* a test stopped before its end voltage only says ``capacity >= y`` (censored).

Hyper-parameters ``μ``, ``τ`` (and ``ρ``) get weakly informative priors and are
integrated on a two-pass grid (coarse, then refined around the mass); each site's
``g`` and ``δ`` are exact on a fixed grid. Nothing is sampled.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import gammaln, logsumexp

from planner.evidence import _kernels
from planner.pack.life_risk import life_log_sigma
from planner.pack.structure import SPREAD_PRESETS

#: Student-t degrees of freedom of a measurement's error (heavy tails; ν = 4 is the
#: robust choice of Lange, Little & Taylor 1989; the compiled grid and the censored
#: records' closed-form tail assume it).
NU = 4.0
#: Log-factor grid: factors from exp(-3.5) = 0.03 to exp(3.5) = 33 times the predicted fade.
G_GRID = np.linspace(-3.5, 3.5, 351)
G_STEP = float(G_GRID[1] - G_GRID[0])
#: Spread of a new pack's capacity around its rating (fraction of rated): common
#: practice, new packs deliver within a few percent of rating (from memory).
SIGMA_DELTA_FRAC = 0.03
_D_UNIT = np.linspace(-3.5, 3.5, 21)
D_GRID = SIGMA_DELTA_FRAC * _D_UNIT
D_LOG_WEIGHT = -0.5 * _D_UNIT ** 2 - logsumexp(-0.5 * _D_UNIT ** 2)
#: Priors of the fleet model (modelling choices, weakly informative): the fleet's mean
#: log factor within ±1.4 (a factor 4 either way) with 95 % probability; a half-normal
#: site spread of scale 0.5 (Gelman 2006, Bayesian Analysis 1(3) 515-534, recommends
#: weakly informative half-t family priors for a group-level spread); ρ within ±2.
PRIOR_MU_SD = 0.7
PRIOR_TAU_SCALE = 0.5
PRIOR_RHO_SD = 1.0
TAU_MAX = 1.5
#: Lowest site spread on the grid: two packs at identical sites still differ by their
#: cells' fade-rate spread, the spread the plan already gives a pack in service
#: (planner.pack.life_risk: log-sigma of a rate of coefficient of variation 5 %).
TAU_FLOOR = life_log_sigma(1.0, SPREAD_PRESETS["one-lot"].rate_spread_frac)
#: Separate calendar and cycle factors need this many sites with records and this
#: spread (10th to 90th percentile) of the cycling share of their predicted loss.
SPLIT_MIN_SITES = 8
SPLIT_MIN_SHARE_SPREAD = 0.4
RHO_GRID = np.linspace(-2.0, 2.0, 9)
SPLIT_FIT_SITES = 1000

_T_CONST = gammaln((NU + 1) / 2) - gammaln(NU / 2) - 0.5 * math.log(NU * math.pi)


@dataclass(frozen=True)
class Observations:
    """What one site's records say, as arrays of equal length (one entry per record).

    The predicted value of a record is ``offset_weight (1 + δ) - f_cal loss_cal_frac -
    f_cyc loss_cyc_frac``: for a capacity measurement ``offset_weight = 1`` and the
    losses are the laws' prediction at the record's age; a record of charge drawn from
    a primary cell has ``offset_weight = 0`` and ``soh_frac = -drawn / rated``.
    ``censored`` marks a lower bound (a test stopped early).
    """

    age_years: np.ndarray
    soh_frac: np.ndarray
    sigma_frac: np.ndarray
    censored: np.ndarray
    offset_weight: np.ndarray
    loss_cal_frac: np.ndarray
    loss_cyc_frac: np.ndarray

    @property
    def n(self) -> int:
        return int(self.soh_frac.size)

    @classmethod
    def empty(cls) -> Observations:
        z = np.zeros(0)
        return cls(z, z, z, np.zeros(0, dtype=bool), z, z, z)

    def cycle_share(self) -> float:
        """Share of cycling in the predicted loss of the capacity records (nan if none)."""
        total = self.loss_cal_frac + self.loss_cyc_frac
        keep = (self.offset_weight > 0) & (total > 1e-4)
        return float(np.mean(self.loss_cyc_frac[keep] / total[keep])) if keep.any() else float("nan")


def student_t_logpdf(z):
    """Log density of the standard Student-t with :data:`NU` degrees of freedom."""
    return _T_CONST - 0.5 * (NU + 1) * np.log1p(z * z / NU)


def site_loglik(obs: Observations, rho: float = 0.0) -> np.ndarray:
    """Log-likelihood of one site's records on the (g, δ) grid, shape ``(len(G_GRID),
    len(D_GRID))`` (a site without records gives zeros)."""
    return loglik_batch([obs], rho)[0]


#: Sites per block of :func:`loglik_batch` (bounds the (sites, g, δ) arrays to ~30 MB).
BLOCK_SITES = 512


def _padded(obs_list: list[Observations], rho: float):
    """The records of many sites as (sites, longest list) arrays, and each list's length."""
    n = len(obs_list)
    most = max(1, max((o.n for o in obs_list), default=0))
    counts = np.array([o.n for o in obs_list], dtype=np.int64)

    def stack(attr, fill=0.0):
        a = np.full((n, most), fill)
        for k, o in enumerate(obs_list):  # per site, a handful of records
            a[k, :o.n] = getattr(o, attr)
        return a

    loss = stack("loss_cal_frac") + math.exp(rho) * stack("loss_cyc_frac")
    return (stack("soh_frac"), stack("sigma_frac", 1.0), stack("censored").astype(bool),
            stack("offset_weight"), loss, counts)


def loglik_batch(obs_list: list[Observations], rho: float = 0.0, engine: str = "auto") -> np.ndarray:
    """:func:`site_loglik` of many sites at once, shape ``(n_sites, len(G_GRID), len(D_GRID))``.

    ``engine="auto"`` runs the compiled loops of :mod:`planner.evidence._kernels` when
    numba is installed; ``"numpy"`` adds one record of every site per step, vectorised
    over sites and the grid (the same numbers)."""
    n = len(obs_list)
    out = np.zeros((n, G_GRID.size, D_GRID.size))
    if n == 0 or all(o.n == 0 for o in obs_list):
        return out
    y, sigma, censored, weight, loss, counts = _padded(obs_list, rho)
    if _kernels.JOINT is not None and engine != "numpy":
        _kernels.JOINT(y / sigma, weight / sigma, loss / sigma, np.log(sigma), censored, counts,
                       np.exp(G_GRID), 1.0 + D_GRID, out)
        return out
    factor = np.exp(G_GRID)[None, :, None]
    one_plus_d = (1.0 + D_GRID)[None, None, :]
    for i in range(int(counts.max())):  # record by record: each step is every site's grid
        rows = np.flatnonzero(counts > i)
        mean = weight[rows, i, None, None] * one_plus_d - factor * loss[rows, i, None, None]
        z = (y[rows, i, None, None] - mean) / sigma[rows, i, None, None]
        dens = student_t_logpdf(z) - np.log(sigma[rows, i])[:, None, None]
        cens = censored[rows, i]
        if cens.any():
            tail = np.log(np.maximum(_kernels.t4_cdf(-z), 1e-300))
            dens = np.where(cens[:, None, None], tail, dens)
        out[rows] += dens
    return out


def marginal_loglik(joint: np.ndarray, engine: str = "auto") -> np.ndarray:
    """Log-likelihood of ``g`` alone (``δ`` integrated against its prior): the last axis
    of ``joint`` is δ."""
    if joint.ndim == 3 and _kernels.MARGINAL is not None and engine != "numpy":
        out = np.empty(joint.shape[:2])
        _kernels.MARGINAL(joint, D_LOG_WEIGHT, out)
        return out
    return logsumexp(joint + D_LOG_WEIGHT, axis=-1)


# ---------------------------------------------------------------- fleet hyper-parameters


@dataclass(frozen=True)
class HyperPosterior:
    """Posterior of the fleet's ``μ`` and ``τ`` on a grid (weights sum to 1), with the
    ratio ``ρ`` of cycle to calendar log-factor (0 when one factor serves both)."""

    mu: np.ndarray
    tau: np.ndarray
    weight: np.ndarray
    rho: float = 0.0
    split: bool = False
    split_reason: str = ""
    n_sites: int = 0

    def density_matrix(self) -> np.ndarray:
        """``N(g_k; μ_h, τ_h) Δg``, shape (len(G_GRID), n_hyper)."""
        return _normal_matrix(self.mu, self.tau)

    def predictive_g(self) -> np.ndarray:
        """Probability of each ``g`` grid point for a site without records."""
        p = self.density_matrix() @ self.weight
        return p / p.sum()

    def summary(self) -> dict:
        """Fleet factor and spread percentiles (P10, P50, P90)."""
        mu = _weighted_quantiles(self.mu, self.weight, (0.1, 0.5, 0.9))
        tau = _weighted_quantiles(self.tau, self.weight, (0.1, 0.5, 0.9))
        return {"fleet_factor_p10": math.exp(mu[0]), "fleet_factor_p50": math.exp(mu[1]),
                "fleet_factor_p90": math.exp(mu[2]),
                "site_spread_log_sd_p10": tau[0], "site_spread_log_sd_p50": tau[1],
                "site_spread_log_sd_p90": tau[2],
                "calendar_cycle_split": self.split, "split_reason": self.split_reason,
                "cycle_to_calendar_factor_ratio": math.exp(self.rho), "sites_with_records": self.n_sites}


def prior_hyper() -> HyperPosterior:
    """The fleet model before any record: the priors alone, on a grid."""
    mu = np.linspace(-4 * PRIOR_MU_SD, 4 * PRIOR_MU_SD, 33)
    log_tau = np.linspace(math.log(TAU_FLOOR), math.log(TAU_MAX), 17)
    m, lt = (a.ravel() for a in np.meshgrid(mu, log_tau, indexing="ij"))
    logw = _log_prior(m, lt)
    w = np.exp(logw - logw.max())
    return HyperPosterior(m, np.exp(lt), w / w.sum())


def split_decision(shares: np.ndarray) -> tuple[bool, str]:
    """Whether the fleet can tell calendar fade from cycle fade, and why (see the module
    docstring): enough sites with records, spread widely enough in cycling share."""
    shares = shares[np.isfinite(shares)]
    if shares.size < SPLIT_MIN_SITES:
        return False, (f"one factor for calendar and cycle fade: {shares.size} sites with records, "
                       f"fewer than the {SPLIT_MIN_SITES} needed to tell them apart")
    p10, p90 = np.percentile(shares, [10, 90])
    if p90 - p10 < SPLIT_MIN_SHARE_SPREAD:
        return False, (f"one factor for calendar and cycle fade: the sites' cycling share of "
                       f"predicted loss spans {p10:.2f}-{p90:.2f} (10th-90th percentile), narrower "
                       f"than the {SPLIT_MIN_SHARE_SPREAD:g} needed to tell them apart")
    return True, (f"separate calendar and cycle factors: {shares.size} sites with records whose "
                  f"cycling share of predicted loss spans {p10:.2f}-{p90:.2f}")


def fit_fleet(site_obs: list[Observations]) -> HyperPosterior:
    """Posterior of the fleet hyper-parameters from every site's records (one chemistry).

    Sites without records carry no information on ``μ`` or ``τ`` and may be left out.
    """
    with_records = [o for o in site_obs if o.n > 0]
    if not with_records:
        return prior_hyper()
    shares = np.array([o.cycle_share() for o in with_records])
    split, reason = split_decision(shares)
    rho = 0.0
    if split:
        # ρ from its marginal posterior (μ, τ integrated on the coarse grid) over an even
        # sample of at most SPLIT_FIT_SITES sites, then held at its posterior mean: one
        # fleet-wide ratio is well determined by that many sites, and another grid
        # dimension per site is not worth the time at fleet size.
        sample = with_records[::max(1, -(-len(with_records) // SPLIT_FIT_SITES))]
        totals = np.array([logsumexp(_grid_logpost(_marginal_block(sample, r), *_coarse_grid()))
                           for r in RHO_GRID]) - 0.5 * (RHO_GRID / PRIOR_RHO_SD) ** 2
        w = np.exp(totals - totals.max())
        rho = float(np.sum(RHO_GRID * w) / w.sum())
    lik = _marginal_block(with_records, rho)
    mu, log_tau = _coarse_grid()
    for _ in range(2):  # coarse, then refined around the posterior mass
        logpost = _grid_logpost(lik, mu, log_tau)
        w = np.exp(logpost - logpost.max())
        w /= w.sum()
        mu, log_tau = _refined_grid(mu, log_tau, w)
    logpost = _grid_logpost(lik, mu, log_tau)
    w = np.exp(logpost - logpost.max())
    m, lt = (a.ravel() for a in np.meshgrid(mu, log_tau, indexing="ij"))
    return HyperPosterior(m, np.exp(lt), w / w.sum(), rho=rho, split=split, split_reason=reason,
                          n_sites=len(with_records))


def site_posteriors(hyper: HyperPosterior, obs_list: list[Observations]):
    """Joint posterior of each site's ``(g, δ)`` on the grid, block by block.

    Yields ``(index, posterior)`` with ``posterior`` of shape ``(len(G_GRID), len(D_GRID))``
    summing to 1. The site's posterior is its likelihood times the effective prior
    ``Σ_h w_h N(g; μ_h, τ_h) / m_s(h)``: each fleet state ``h`` weighed by its posterior
    ``w_h`` and divided by the evidence ``m_s(h)`` of the site's own records, so they are
    not counted twice (Gelman et al. 2013, eq. 5.4-5.5 in grid form).
    """
    dens = hyper.density_matrix()
    for start in range(0, len(obs_list), BLOCK_SITES):
        block = obs_list[start:start + BLOCK_SITES]
        joint = loglik_batch(block, hyper.rho)
        lik = marginal_loglik(joint)
        top = lik.max(axis=1, keepdims=True)
        m = np.maximum(np.exp(lik - top) @ dens, 1e-300)  # (sites, hyper)
        prior = (hyper.weight / m) @ dens.T  # (sites, g)
        # in place on the block's grid: log posterior, then its exponential normalised
        log_prior = np.log(np.maximum(prior / prior.max(axis=1, keepdims=True), 1e-300))
        joint += D_LOG_WEIGHT
        joint += log_prior[:, :, None]
        joint -= joint.max(axis=(1, 2), keepdims=True)
        np.exp(joint, out=joint)
        joint /= joint.sum(axis=(1, 2), keepdims=True)
        for k in range(len(block)):
            yield start + k, joint[k]


def site_posterior_grid(hyper: HyperPosterior, obs: Observations) -> np.ndarray:
    """Joint posterior of one site's ``(g, δ)`` on the grid (sums to 1)."""
    return next(site_posteriors(hyper, [obs]))[1]


def _marginal_block(obs_list, rho) -> np.ndarray:
    return np.concatenate([marginal_loglik(loglik_batch(obs_list[i:i + BLOCK_SITES], rho))
                           for i in range(0, len(obs_list), BLOCK_SITES)])


# ---------------------------------------------------------------- grid helpers


def _normal_matrix(mu, tau) -> np.ndarray:
    z = (G_GRID[:, None] - mu[None, :]) / tau[None, :]
    return np.exp(-0.5 * z * z) / (math.sqrt(2 * math.pi) * tau[None, :]) * G_STEP


def _log_prior(mu, log_tau):
    tau = np.exp(log_tau)
    # half-normal on τ, expressed per unit of log τ (Jacobian τ)
    return -0.5 * (mu / PRIOR_MU_SD) ** 2 - 0.5 * (tau / PRIOR_TAU_SCALE) ** 2 + log_tau


def _coarse_grid():
    return np.linspace(-3.0, 3.0, 49), np.linspace(math.log(TAU_FLOOR), math.log(TAU_MAX), 21)


def _grid_logpost(lik: np.ndarray, mu_axis: np.ndarray, log_tau_axis: np.ndarray) -> np.ndarray:
    """Log posterior of every (μ, log τ) grid pair given the sites' log-likelihoods of g
    ``lik`` (n_sites, len(G_GRID)); flattened in ``meshgrid(..., indexing="ij")`` order."""
    m, lt = (a.ravel() for a in np.meshgrid(mu_axis, log_tau_axis, indexing="ij"))
    dens = _normal_matrix(m, np.exp(lt))
    top = lik.max(axis=1, keepdims=True)
    marg = np.exp(lik - top) @ dens  # (n_sites, n_hyper)
    return np.log(np.maximum(marg, 1e-300)).sum(axis=0) + top.sum() + _log_prior(m, lt)


def _refined_grid(mu_axis, log_tau_axis, w):
    """A grid around the posterior mass of the previous one (± 5 sd, at least two cells)."""
    m, lt = (a.ravel() for a in np.meshgrid(mu_axis, log_tau_axis, indexing="ij"))

    def around(values, axis, lo, hi, n):
        mean = float(np.sum(w * values))
        sd = math.sqrt(max(float(np.sum(w * (values - mean) ** 2)), 0.0))
        step = float(axis[1] - axis[0]) if axis.size > 1 else 0.1
        half = max(5.0 * sd, 2.0 * step)
        return np.linspace(max(lo, mean - half), min(hi, mean + half), n)

    return (around(m, mu_axis, -3.4, 3.4, 41),
            around(lt, log_tau_axis, math.log(TAU_FLOOR), math.log(TAU_MAX), 25))


def _weighted_quantiles(values, weights, qs) -> list[float]:
    order = np.argsort(values)
    v, c = values[order], np.cumsum(weights[order])
    c = c / c[-1]
    return [float(np.interp(q, c, v)) for q in qs]
