"""Failure probability from a nominal life: checked against scipy.stats.lognorm (a
reference library) and the P10 definition."""

import math

import numpy as np
import pytest
from scipy import stats

from planner.pack.life_risk import chemistry_life_log_sigma, failure_prob_by_age, life_log_sigma


def test_matches_the_lognormal_cdf_of_scipy():
    # scipy.stats.lognorm(s, scale=median).cdf is the reference log-normal distribution
    probs = failure_prob_by_age(10.0, 15, 0.1)
    ref = stats.lognorm(0.1, scale=10.0).cdf(np.arange(1, 16))
    assert np.allclose(probs, ref, atol=1e-12)
    assert probs[9] == pytest.approx(0.5)  # the nominal life is the median


def test_pack_in_service_is_conditioned_on_its_age():
    # P(T < a + t | T > a) = (F(a + t) - F(a)) / (1 - F(a)), F from scipy.stats.lognorm
    dist = stats.lognorm(0.2, scale=9.0)
    probs = failure_prob_by_age(5.0, 6, 0.2, age_years=4.0)
    ref = (dist.cdf(4.0 + np.arange(1, 7)) - dist.cdf(4.0)) / dist.sf(4.0)
    assert np.allclose(probs, ref, atol=1e-12)


def test_p10_shorter_than_the_interval_means_ten_percent_or_more():
    # Definition of P10: 10 % of packs have failed by then (quantile from scipy.stats)
    sigma, median = 0.15, 9.0
    p10 = stats.lognorm(sigma, scale=median).ppf(0.10)
    assert p10 < 8.0
    assert failure_prob_by_age(median, 10, sigma)[7] >= 0.10


def test_log_sigma_from_the_fade_law():
    # loss = k t^z reaches a fixed loss at t ~ k^(-1/z): the log-sigma of life is s_k / z,
    # with s_k = sqrt(ln(1 + cv^2)) for a log-normal k of coefficient of variation cv
    assert life_log_sigma(0.5, 0.05) == pytest.approx(math.sqrt(math.log(1.0025)) / 0.5)
    assert life_log_sigma(1.0, 0.05) == pytest.approx(math.sqrt(math.log(1.0025)))
    for chem in ("vrla", "lfp", "nmc", "lto", "lisocl2"):
        assert 0.0 < chemistry_life_log_sigma(chem) < 0.5


def test_edges():
    assert failure_prob_by_age(float("inf"), 3, 0.1) == (0.0, 0.0, 0.0)
    assert failure_prob_by_age(0.0, 2, 0.1) == (1.0, 1.0)
    probs = failure_prob_by_age(3.0, 20, 0.3, age_years=10.0)
    assert all(b >= a for a, b in zip(probs, probs[1:])) and probs[-1] <= 1.0
