"""Tests of planner.energy.freezing.

Check values: US Army TM 5-1185 Table II (specific gravity by state of charge) and
Table III (freezing point by specific gravity), read; degF -> degC by (F - 32) x 5/9;
the Rolls specific-gravity note (fully discharged electrolyte freezes just below 0 degC),
read, for the qualitative end point.
"""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from planner.energy import freezing
from planner.errors import InputError


@pytest.mark.parametrize("soc, freeze_f", [
    (1.00, -90.0),   # TM 5-1185: 1.280 full charge (Table II) -> -90 degF (Table III)
    (0.75, -62.0),   # 1.250 at 75 % -> -62 degF
])
def test_table_rows(soc, freeze_f):
    assert freezing.lead_acid_freezing_point_c(soc) == pytest.approx((freeze_f - 32) * 5 / 9)


def test_discharged_end_point():
    # TM 5-1185: discharged 1.130; Table III between 1.100 (+19 F) and 1.150 (+5 F):
    # 19 - 14 x 0.6 = 10.6 degF = -11.9 degC (computed)
    t = freezing.lead_acid_freezing_point_c(0.0)
    assert t == pytest.approx((10.6 - 32) * 5 / 9)
    # Rolls: a fully discharged battery freezes "just below 0 degC" (order of magnitude)
    assert -15.0 < t < 0.0


@given(st.floats(0, 1), st.floats(0, 1))
def test_fuller_freezes_lower(a, b):
    # physical fact: more acid in the electrolyte, lower freezing point
    lo, hi = min(a, b), max(a, b)
    assert freezing.lead_acid_freezing_point_c(hi) <= freezing.lead_acid_freezing_point_c(lo)


def test_risk_hours_per_lane():
    temp = np.array([[-20.0, -20.0], [-5.0, -5.0], [10.0, 10.0]])
    soc = np.array([[1.0, 0.0], [0.0, 1.0], [0.0, 0.0]])
    # lane 0: -20 vs -67.8+5 no; -5 vs -11.9+5 = -6.9 no; 10 no -> 0
    # lane 1: -20 vs -6.9 yes; -5 vs -62.8 no; 10 no -> 1
    np.testing.assert_array_equal(freezing.freezing_risk_hours(temp, soc), [0, 1])
    # the margin widens the band: with 10 K, lane 0 hour 1 (-5 < -1.9) counts
    np.testing.assert_array_equal(freezing.freezing_risk_hours(temp, soc, margin_k=10), [1, 1])


def test_bad_inputs():
    with pytest.raises(InputError, match="soc_frac"):
        freezing.lead_acid_freezing_point_c(1.5)
    with pytest.raises(InputError, match="margin_k"):
        freezing.freezing_risk_hours(np.zeros(3), np.ones(3), margin_k=-1)
    with pytest.raises(InputError, match="soc_frac"):
        freezing.freezing_risk_hours(np.zeros(3), np.ones(4))
