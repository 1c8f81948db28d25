"""Lives of a pack in service under a belief about its fade factor.

The curves are invented (linear loss, so the answers are exact fractions).
"""

import numpy as np
import pytest

from planner.evidence.lives import (
    PackCurve,
    life_belief,
    soh_band,
    systematic_draws,
    total_life_years,
)

MONTHS = np.arange(12 * 60 + 1)


def _linear(rate_per_year=0.024, age=4.0, eol=0.8, limit=12.0, threshold=None):
    return PackCurve(rate_per_year * MONTHS / 12.0, np.zeros(MONTHS.size), age, eol, limit, threshold)


def test_life_is_the_inverse_of_the_scaled_loss():
    # 1 + δ - f x 0.024 t = 0.8  ->  t = (0.2 + δ) / (0.024 f)
    curve = _linear()
    life = total_life_years(curve, np.log([1.0, 2.0, 0.5, 1.0]), [0.0, 0.0, 0.0, 0.024])
    assert life == pytest.approx([0.2 / 0.024, 0.1 / 0.024, 0.4 / 0.024, 0.224 / 0.024], rel=1e-9)


def test_below_threshold_when_new_and_beyond_the_curve():
    curve = _linear(rate_per_year=0.001)
    life = total_life_years(curve, [0.0, 0.0], [-0.25, 0.0])
    assert life[0] == 0.0 and np.isinf(life[1])  # 0.2 loss needs 200 years > 60 simulated


def test_cycle_part_scaled_by_rho():
    curve = PackCurve(0.01 * MONTHS / 12.0, 0.01 * MONTHS / 12.0, 0.0, 0.8, 50.0)
    # calendar 1 %/y, cycle 1 %/y doubled: 3 %/y in all
    assert total_life_years(curve, [0.0], [0.0], rho=np.log(2.0))[0] == pytest.approx(0.2 / 0.03)


def test_rising_threshold_shortens_life():
    # the requirement grows 5 %/year from 4 years after installation (a growing load)
    threshold = np.maximum(0.8, 0.7 * 1.05 ** np.maximum(MONTHS / 12.0 - 4.0, 0.0))
    fixed, rising = _linear(), _linear(threshold=threshold)
    assert total_life_years(rising, [0.0], [0.0])[0] < total_life_years(fixed, [0.0], [0.0])[0]


def test_failure_probability_is_conditioned_on_serving_today():
    """Belief points with lives 2, 6, 10 and 14 years at age 4 (one already dead): the
    pack serves today, so the dead point is dropped: P(fail within 3 y) = 1/3."""
    curve = _linear(age=4.0)
    f = 0.2 / 0.024 / np.array([2.0, 6.0, 10.0, 14.0])
    belief = life_belief(curve, np.log(f), np.zeros(4), np.ones(4))
    assert belief.alive_frac == pytest.approx(0.75)
    probs = belief.failure_prob_by_age(12)
    assert probs[2] == pytest.approx(1 / 3)  # by 3 years from now: the 6-year point
    assert probs[6] == pytest.approx(2 / 3)
    assert probs[11] == pytest.approx(1.0)
    assert all(b >= a for a, b in zip(probs, probs[1:]))


def test_replacement_by_the_median_within_the_service_limit():
    curve = _linear(age=4.0, limit=9.0)
    f = 0.2 / 0.024 / np.array([8.0, 10.0, 30.0])
    belief = life_belief(curve, np.log(f), np.zeros(3), np.ones(3))
    assert belief.quantiles((0.5,))[0] == pytest.approx(6.0)
    assert belief.replace_by_years() == pytest.approx(5.0)  # service limit 9 - age 4


def test_pack_surely_past_its_end_is_replaced_now():
    curve = _linear(age=12.0)
    belief = life_belief(curve, [0.0], [0.0], [1.0])
    assert belief.replace_by_years() == 0.0
    assert belief.failure_prob_by_age(3) == (1.0, 1.0, 1.0)


def test_band_quantiles_and_draws():
    post = np.zeros((5, 3))
    post[1, 1], post[3, 2] = 0.25, 0.75
    k, j = systematic_draws(post, 8)
    assert (k == 1).sum() == 2 and (k == 3).sum() == 6 and set(j) == {1, 2}
    curve = _linear()
    band = soh_band(curve, np.log([1.0, 1.0, 2.0, 2.0]), np.zeros(4), months=[0, 120])
    assert band[:, 0] == pytest.approx([1.0, 1.0, 1.0])
    assert band[0, 1] == pytest.approx(1 - 2 * 0.24) and band[2, 1] == pytest.approx(1 - 0.24)
