"""Checks of planner.economics against NIST Handbook 135 formulas.

Sources: NIST HB 135 = Fuller & Petersen (1996), Life-Cycle Costing Manual for the
Federal Energy Management Program, NIST Handbook 135, App. D (SPV eq. D.2.1.1, UPV,
CRF) and ch. 5 (linear residual value). Values marked "computed" were computed from
those formulas outside the project (research note sizing-economics.md §3.3-3.5).
"""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from planner import economics as ec


def test_present_value_factors():
    # NIST HB 135 eq. D.2.1.1, computed: SPV(3 %, 10) = 0.744094
    assert ec.spv(0.03, 10) == pytest.approx(0.744094, abs=5e-7)
    # NIST HB 135 App. D, computed: SPV(3 %, 5/15/20) = 0.862609 / 0.641862 / 0.553676
    assert np.allclose(ec.spv(0.03, [5, 15, 20]), [0.862609, 0.641862, 0.553676], atol=5e-7)
    # NIST HB 135 App. D uniform present value, computed: UPV(3 %, 20) = 14.877475
    assert ec.upv(0.03, 20) == pytest.approx(14.877475, abs=5e-7)
    # computed: UPV(3 %, 10) = 8.530203
    assert ec.upv(0.03, 10) == pytest.approx(8.530203, abs=5e-7)
    # NIST HB 135 App. D capital recovery factor, computed: CRF(3 %, 20) = 0.067216
    assert ec.crf(0.03, 20) == pytest.approx(0.067216, abs=5e-7)
    # NIST HB 135 modified UPV, computed: UPV*(3 %, e = 1 %, 10) = 8.991899
    assert ec.upv_escalating(0.03, 0.01, 10) == pytest.approx(8.991899, abs=5e-7)


def test_ashrae_espwf_table_rows():
    # ASHRAE Pocket Guide (2013) ESPWF table as restated in research note §3.3 (2 decimals)
    rates = [0.025, 0.03, 0.035, 0.04, 0.045, 0.07, 0.15]
    row10 = [8.75, 8.53, 8.32, 8.11, 7.91, 7.02, 5.02]
    assert np.allclose(ec.upv(np.array(rates), 10), row10, atol=0.006)


def test_zero_rate_limits():
    # limit of the HB 135 annuity factor as d -> 0 is n (from the formula)
    assert ec.upv(0.0, 12) == pytest.approx(12.0)
    assert ec.spv(0.0, 7) == pytest.approx(1.0)


def test_real_and_nominal_rates():
    # NIST HB 135 ch. 4, d = (1+D)/(1+I) - 1; computed: D = 5 %, I = 2 % -> 0.029412
    assert ec.real_rate(0.05, 0.02) == pytest.approx(0.029412, abs=5e-7)
    # computed: real 3 %, I = 2 % -> nominal 0.050600
    assert ec.nominal_rate(0.03, 0.02) == pytest.approx(0.0506, abs=1e-9)
    # research note §3.3 equivalence: 5000 constant at year 10 = 3720.4696 either way
    nominal_flow = 5000 * 1.02**10
    assert nominal_flow * ec.spv(ec.nominal_rate(0.03, 0.02), 10) == pytest.approx(3720.4696, abs=1e-4)
    assert 5000 * ec.spv(0.03, 10) == pytest.approx(3720.4696, abs=1e-4)


def test_uniform_series_example():
    # research note §3.5 (HB 135 UPV), computed: 250/yr for 20 years at 3 % -> 3,719.37
    assert 250 * ec.upv(0.03, 20) == pytest.approx(3719.37, abs=0.005)


def _worked(pack, life, years):
    # research note §3.4 inputs: 3 %, 20 years, trip 3,000 per replacement incl. year 0,
    # disposal 100 per removed pack, no disposal at the initial install
    return ec.schedule_present_cost(
        years, horizon_years=20, rate=0.03, pack_cost=pack, life_years=life,
        disposal_cost=100.0, trip_cost=3000.0,
    )


def test_worked_lcc_comparison():
    # NIST HB 135 formulas, computed in research note §3.4:
    # A: 2,000 pack lasting 5 y, replaced at 5, 10, 15 -> 16,467.68
    a = _worked(2000.0, 5.0, [0, 5, 10, 15])
    assert a.total == pytest.approx(16467.68, abs=0.01)
    assert a.residual == pytest.approx(0.0, abs=1e-9)  # last pack fully used at year 20
    # B: 4,500 pack lasting 8 y, at 0, 8, 16, linear residual 2,250 at year 20 -> 16,989.81
    b = _worked(4500.0, 8.0, [0, 8, 16])
    assert b.total == pytest.approx(16989.81, abs=0.01)
    assert b.residual == pytest.approx(-1245.77, abs=0.01)  # 2250 * SPV(3 %, 20), note §3.4
    # C: 4,500 pack lasting 10 y, at 0 and 10 -> 13,155.11
    c = _worked(4500.0, 10.0, [0, 10])
    assert c.total == pytest.approx(13155.11, abs=0.01)
    # expected ranking C < A < B (note §3.4)
    assert c.total < a.total < b.total
    # EAC = LCC * CRF (HB 135): A -> 1,106.89/yr (note §3.4)
    assert a.total * ec.crf(0.03, 20) == pytest.approx(1106.89, abs=0.01)


def test_existing_pack_disposal_at_first_replacement():
    # HB 135 end-of-year discounting: the removed existing pack's disposal (80) is paid in
    # the first replacement year 3 -> 80 * 1.03**-3 (computed from eq. D.2.1.1)
    cost = ec.schedule_present_cost(
        [3], horizon_years=5, rate=0.03, pack_cost=0.0, life_years=10.0,
        disposal_cost=999.0, existing_disposal_cost=80.0, residual_value=False,
    )
    assert cost.disposal == pytest.approx(80 * 1.03**-3, rel=1e-12)


def test_residual_fraction_linear():
    # HB 135 ch. 5: linear prorating; 4 of 8 years left -> one half (note §3.4)
    assert ec.residual_fraction(4.0, 8.0) == pytest.approx(0.5)
    assert ec.residual_fraction(12.0, 8.0) == pytest.approx(0.0)


def test_failure_risk_cost():
    # expected value by hand (probability of first failure in each year times the cost at
    # SPV of that year's end, HB 135 end-of-year convention): ages 1..3 cdf 0.1, 0.1, 0.4
    # -> 1000 * (0.1/1.05**3 + 0.3/1.05**5) for a pack installed in year 2 (computed)
    got = ec.failure_risk_cost(2, 3, (0.1, 0.1, 0.4, 0.9), 1000.0, 0.05)
    assert got == pytest.approx(1000 * (0.1 / 1.05**3 + 0.3 / 1.05**5), rel=1e-12)
    assert ec.failure_risk_cost(2, 3, None, 1000.0, 0.05) == 0.0


def test_expected_wait_days():
    # common practice arithmetic on a 365-day year: open all year -> no wait
    assert ec.expected_wait_days(range(1, 13)) == 0.0
    # only July open: failure in a closed month waits on average half of that month plus
    # all closed months up to July; computed by hand for February (28 d): 14 + 31*3 + 30*2
    # ... checked through the average over the whole year below (independent numeric
    # integration over days)
    days = np.concatenate([[m] * int(n) for m, n in enumerate(ec.DAYS_PER_MONTH, start=1)])
    start_of_july = int(ec.DAYS_PER_MONTH[:6].sum())
    waits = []
    for d, m in enumerate(days):
        if m == 7:
            waits.append(0.0)
        else:
            waits.append((start_of_july - d - 0.5) % 365)
    assert ec.expected_wait_days([7]) == pytest.approx(np.mean(waits), abs=1e-9)


@given(
    rate=st.floats(0.0, 0.2),
    years=st.integers(1, 40),
)
def test_upv_is_sum_of_spv(rate, years):
    # definition in HB 135 App. D: UPV(d, n) = sum_{t=1..n} SPV(d, t)
    assert ec.upv(rate, years) == pytest.approx(float(np.sum(ec.spv(rate, np.arange(1, years + 1)))), rel=1e-9)
    assert ec.crf(rate, years) * ec.upv(rate, years) == pytest.approx(1.0)


def test_nominal_amount_equivalence_vector():
    # research note §3.3 (computed, NIST HB 135 ch. 4): 5,000 constant at year 10 with
    # I = 2 % is 6,094.9721 nominal; its PV at D = 5.06 % equals 5000/1.03^10 = 3,720.4696
    nominal = float(ec.nominal_amount(5000.0, 0.02, 10))
    assert nominal == pytest.approx(6094.9721, abs=1e-4)
    assert nominal * float(ec.spv(float(ec.nominal_rate(0.03, 0.02)), 10)) == pytest.approx(3720.4696, abs=1e-4)
    assert float(ec.spv(0.03, 10)) * 5000.0 == pytest.approx(3720.4696, abs=1e-4)
