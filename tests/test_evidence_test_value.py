"""Value of one more capacity test (preposterior analysis, Raiffa & Schlaifer 1961 ch. 4).

Invented packs and costs: a linear predicted loss of 3 %/year and replacement costs that
make the decision easy or hard. Checks: the value of information is never negative, is
zero where no result can change the decision, and does not follow uncertainty alone.
"""

import numpy as np
import pytest

from planner.evidence._kernels import t4_cdf
from planner.evidence.hierarchy import D_GRID, D_LOG_WEIGHT, G_GRID
from planner.evidence.lives import PackCurve
from planner.evidence.sample_information import _predictive_results, _site_value, _t4_quantile

H, RATE, C_FAIL = 10, 0.03, 5000.0
MONTHS = np.arange(12 * 60 + 1)
CURVE = PackCurve(0.03 * MONTHS / 12.0, np.zeros(MONTHS.size), 4.0, 0.8, 20.0)


def belief(g_mean, g_sd):
    """A grid posterior: Normal in the log factor, the prior in the initial capacity."""
    pg = np.exp(-0.5 * ((G_GRID - g_mean) / g_sd) ** 2)
    post = pg[:, None] * np.exp(D_LOG_WEIGHT)[None, :]
    return post / post.sum()


def discounted(amount):
    cont = amount * (1 + RATE) ** -np.arange(H + 1.0)
    cont[H] = 0.0  # keeping the pack to the end of the study costs nothing more
    return cont


def test_no_value_where_no_result_changes_the_decision():
    # replacing now is far cheaper than any later year: whatever the test says, year 0
    cont = np.full(H + 1, 1e7)
    cont[0] = 100.0
    value, now, low, high, change = _site_value(CURVE, belief(0.0, 0.8), 0.0, cont, C_FAIL, H, RATE)
    assert value == 0.0 and now == low == high == 0 and change == 0.0


def test_value_follows_the_decision_not_the_uncertainty():
    """Site A: very uncertain fade, but a decision no result moves (value 0). Site B: a
    fairly well known fade near the point where waiting a year pays (value > 0). Ranking
    by uncertainty would test A first; the value says B (Straub & Faber 2005)."""
    easy = np.full(H + 1, 1e7)
    easy[0] = 100.0
    value_a, *_ = _site_value(CURVE, belief(0.0, 0.8), 0.0, easy, C_FAIL, H, RATE)
    value_b, now, low, high, change = _site_value(CURVE, belief(0.0, 0.15), 0.0, discounted(20000.0),
                                                  C_FAIL, H, RATE)
    assert value_a == 0.0 < value_b
    assert low < high and 0 < change < 1


@pytest.mark.parametrize("seed", range(6))
def test_value_is_never_negative(seed):
    rng = np.random.default_rng(seed)
    cont = np.sort(rng.uniform(0, 30000, H + 1))[::-1].copy()
    cont[H] = rng.uniform(0, 5000)
    value, *_ = _site_value(CURVE, belief(rng.normal(0, 0.5), rng.uniform(0.05, 1.0)), 0.0, cont,
                            rng.uniform(1000, 20000), H, RATE)
    assert value >= 0.0


def test_simulated_results_follow_the_predictive():
    # the 16 results are strata of the predictive: their mean matches its mean
    post = belief(0.0, 0.3).ravel()
    g = np.repeat(G_GRID, D_GRID.size)
    d = np.tile(D_GRID, G_GRID.size)
    mean_now = 1.0 + d - np.exp(g) * 0.12
    results = _predictive_results(mean_now, post)
    assert results.mean() == pytest.approx(float(np.sum(post * mean_now)), abs=0.01)


def test_t4_quantile_inverts_the_cdf():
    p = np.array([0.05, 0.5, 0.95])
    assert t4_cdf(_t4_quantile(p)) == pytest.approx(p, abs=1e-10)
    assert _t4_quantile(np.array([0.95]))[0] == pytest.approx(2.1318, abs=1e-3)  # t table, 4 df
