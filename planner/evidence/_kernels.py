"""Compiled likelihood grids for :mod:`planner.evidence.hierarchy`.

:func:`joint_loglik` fills, for every site of a block, the log-likelihood of its records
on the whole ``(g, δ)`` grid; :func:`marginal_over_delta` integrates ``δ`` out against
its prior weights. Both are plain loops compiled with numba when it is installed; the
numpy path of :func:`planner.evidence.hierarchy.loglik_batch` computes the same numbers
(tests compare them). With numba missing, :data:`JOINT` and :data:`MARGINAL` are None.
"""

from __future__ import annotations

import math

import numpy as np

try:
    import numba as _numba
except ImportError:  # numba is optional: the numpy grids give the same numbers
    _numba = None

#: log Γ(5/2) - log Γ(2) - ½ log(4π): the constant of the Student-t density at ν = 4.
T4_LOG_CONST = math.lgamma(2.5) - math.lgamma(2.0) - 0.5 * math.log(4.0 * math.pi)


def t4_cdf(t):
    """CDF of the Student-t with 4 degrees of freedom, in closed form.

    For even ν the CDF is a finite series in ``sin θ`` and ``cos² θ`` with
    ``θ = atan(t / √ν)`` (Abramowitz & Stegun 1964, 26.7.3); at ν = 4 it is
    ``½ + ½ sin θ (1 + ½ cos² θ)`` with ``sin θ = t / √(4 + t²)``, ``cos² θ = 4 / (4 + t²)``.

    Examples
    --------
    >>> round(float(t4_cdf(2.132)), 4)  # the 95 % point of t with 4 degrees of freedom
    0.95
    """
    q = 4.0 + t * t
    return 0.5 + 0.5 * t / np.sqrt(q) * (1.0 + 2.0 / q)


def joint_loglik(scaled_y, scaled_weight, scaled_loss, log_sigma, censored, n_records, g_factor,
                 one_plus_d, out):
    """``out[s, k, j]`` = Σ over site s's records of the log-likelihood at ``g_factor[k]``
    (= exp(g_k)) and ``one_plus_d[j]`` (= 1 + δ_j).

    Records are rows of the (sites, records) arrays, the first ``n_records[s]`` of each
    row used, already divided by their error scale σ: ``scaled_y = y / σ``,
    ``scaled_weight = offset weight / σ``, ``scaled_loss = predicted loss / σ``; the
    standardised error is then ``z = y/σ - w(1 + δ)/σ + f loss/σ``."""
    n_sites = out.shape[0]
    n_g = out.shape[1]
    n_d = out.shape[2]
    for s in range(n_sites):
        for k in range(n_g):
            f = g_factor[k]
            for j in range(n_d):
                acc = 0.0
                for i in range(n_records[s]):
                    z = scaled_y[s, i] - scaled_weight[s, i] * one_plus_d[j] + f * scaled_loss[s, i]
                    if censored[s, i]:
                        # P(true capacity >= y) = P(T >= z) = F(-z)
                        q = 4.0 + z * z
                        p = 0.5 - 0.5 * z / math.sqrt(q) * (1.0 + 2.0 / q)
                        acc += math.log(max(p, 1e-300))
                    else:
                        acc += T4_LOG_CONST - 2.5 * math.log1p(0.25 * z * z) - log_sigma[s, i]
                out[s, k, j] = acc


def marginal_over_delta(joint, log_weight, out):
    """``out[s, k] = log Σ_j exp(joint[s, k, j] + log_weight[j])`` (stable)."""
    n_sites, n_g, n_d = joint.shape
    for s in range(n_sites):
        for k in range(n_g):
            top = -np.inf
            for j in range(n_d):
                v = joint[s, k, j] + log_weight[j]
                if v > top:
                    top = v
            acc = 0.0
            for j in range(n_d):
                acc += math.exp(joint[s, k, j] + log_weight[j] - top)
            out[s, k] = top + math.log(acc)


JOINT = None
MARGINAL = None
if _numba is not None:
    JOINT = _numba.njit(cache=True, nogil=True)(joint_loglik)
    MARGINAL = _numba.njit(cache=True, nogil=True)(marginal_over_delta)
