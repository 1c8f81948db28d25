"""Published calendar and cycle laws (planner.aging.calendar, planner.aging.cycle).

Check values are computed from each paper's equation and parameters at the paper's
conditions, as tabulated in the research note aging-models.md §0 (computed there
independently), or are facts of the trade.
"""

import math

import numpy as np
import pytest

from planner.aging import calendar as cal
from planner.aging import cycle as cyc
from planner.chemistry import get_chemistry

NMC = get_chemistry("nmc").aging_set("schmalstieg")
LFP_NAUMANN = get_chemistry("lfp").aging_set("naumann")
YEAR_S = 365 * 86400.0


def test_schmalstieg_calendar_at_paper_conditions():
    # Schmalstieg et al. 2014, alpha_cap equation: 4.1 V, 25 °C -> alpha = 4.95e-4 d^-0.75;
    # C_rel after 365 d = 0.959 (research note §0, computed from the equation).
    alpha = cal.schmalstieg2014_alpha_cap(4.1, 25.0, **NMC.calendar)
    assert float(alpha) == pytest.approx(4.95e-4, rel=5e-3)
    c_rel = 1.0 - cal.schmalstieg2014_calendar_loss(4.1, 25.0, 365.0, **NMC.calendar)
    assert float(c_rel) == pytest.approx(0.959, abs=1e-3)
    # 3.6 V, 25 °C -> 0.980; 4.1 V, 35 °C -> 0.912 (research note §0).
    assert 1.0 - float(cal.schmalstieg2014_calendar_loss(3.6, 25.0, 365.0, **NMC.calendar)) == \
        pytest.approx(0.980, abs=1e-3)
    assert 1.0 - float(cal.schmalstieg2014_calendar_loss(4.1, 35.0, 365.0, **NMC.calendar)) == \
        pytest.approx(0.912, abs=1e-3)
    # Activation energy of the capacity term: 6976 K x R = 58.0 kJ/mol (Schmalstieg 2014).
    assert NMC.calendar["temp_coefficient_k"] * cal.R_GAS_J_MOL_K == pytest.approx(58.0e3, rel=2e-3)


def test_naumann2018_calendar_at_paper_conditions():
    # Naumann et al. 2018 capacity model (parameters from memory): 25 °C, 1 year:
    # SOC 0.5 -> 4.25 %, SOC 1.0 -> 6.78 % (research note §0, computed from the equation).
    loss_half = cal.naumann2018_calendar_loss(25.0, 0.5, YEAR_S, **LFP_NAUMANN.calendar)
    loss_full = cal.naumann2018_calendar_loss(25.0, 1.0, YEAR_S, **LFP_NAUMANN.calendar)
    assert float(loss_half) == pytest.approx(0.0425, abs=5e-4)
    assert float(loss_full) == pytest.approx(0.0678, abs=5e-4)


def test_halving_rule_worked_examples():
    # common practice, worked example of the 8 °C rule (research note §4.1): 10 years at 25 °C ->
    # 5 years at 33 °C, 30 months at 41 °C
    # with 8 K halving (common practice).
    life = cal.arrhenius_halving_life_years(np.array([25.0, 33.0, 41.0]), life_years_ref=10.0,
                                            temp_ref_c=25.0, halving_step_k=8.0)
    np.testing.assert_allclose(life, [10.0, 5.0, 2.5], rtol=1e-12)
    # 10 K rule: 7.07 years at 30 °C (research note §0, vendor tables).
    assert float(cal.arrhenius_halving_life_years(30.0, life_years_ref=10.0, temp_ref_c=25.0,
                                                  halving_step_k=10.0)) == pytest.approx(7.07, abs=0.01)
    # Below the reference the life is not extended (stationary practice caps it).
    assert float(cal.arrhenius_halving_life_years(5.0, life_years_ref=10.0, temp_ref_c=25.0,
                                                  halving_step_k=8.3)) == 10.0


def test_arrhenius_factor_matches_halving_equivalent():
    # Research note §4.1: halving per 10 K near 298 K corresponds to Ea = R T^2 ln2 / dT ~ 51 kJ/mol.
    ea = cal.R_GAS_J_MOL_K * 298.15 ** 2 * math.log(2.0) / 10.0
    assert ea == pytest.approx(51.0e3, rel=0.02)
    assert float(cal.arrhenius_factor(35.0, ea, 25.0)) == pytest.approx(2.0, rel=0.04)
    assert float(cal.arrhenius_factor(25.0, ea, 25.0)) == 1.0


def test_primary_cell_remaining_fraction():
    # Vendor statements: Li-SOCl2 self-discharge about 1 %/yr at room temperature.
    p = get_chemistry("lisocl2").aging.calendar
    assert float(cal.primary_remaining_fraction(8760.0, 0.0, 20.0, **p)) == pytest.approx(0.99)
    # Definition: remaining = 1 - load charge - self-discharge; a C/10,000 load for a year
    # draws 0.876 of the capacity (arithmetic).
    assert float(cal.primary_remaining_fraction(8760.0, 1e-4, 20.0, **p)) == pytest.approx(
        1.0 - 0.876 - 0.01)



@pytest.mark.parametrize("temp_c, low, high", [
    (20.0, 0.009, 0.011),   # vendor statements: about 1 %/yr at room temperature (read)
    (55.0, 0.015, 0.05),    # vendor figures at 55-70 °C: a few %/yr (from memory)
    (70.0, 0.015, 0.05),
])
def test_primary_self_discharge_at_heat_stays_a_few_percent(temp_c, low, high):
    # A doubling per 10 K would give 2^5 = 32 %/yr at 70 °C, far above what bobbin cells
    # lose there; the sourced curve keeps it at a few %/yr, rising with heat.
    p = get_chemistry("lisocl2").aging.calendar
    lost = 1.0 - float(cal.primary_remaining_fraction(8760.0, 0.0, temp_c, **p))
    assert low <= lost <= high
    assert lost > 1.0 - float(cal.primary_remaining_fraction(8760.0, 0.0, temp_c - 10.0, **p))


def test_wang2011_cycle_law_at_paper_conditions():
    # Wang et al. 2011 Eq. 5 with B = 31630 at C/2 (B table from memory): research note §0:
    # 25 °C, 1000 Ah -> 4.25 %; 45 °C -> 9.46 %; 20 % loss after 16,690 Ah.
    assert float(cyc.wang2011_cycle_loss_pct(0.5, 25.0, 1000.0)) == pytest.approx(4.25, abs=0.02)
    assert float(cyc.wang2011_cycle_loss_pct(0.5, 45.0, 1000.0)) == pytest.approx(9.46, abs=0.03)
    assert float(cyc.wang2011_cycle_loss_pct(0.5, 25.0, 16690.0)) == pytest.approx(20.0, abs=0.05)


def test_schmalstieg_cycle_law_at_paper_conditions():
    # Schmalstieg et al. 2014 beta_cap: V = 3.667 V, DOD 1.0 -> beta = 4.841e-3;
    # Q = 1000 Ah -> C_rel = 0.847 (research note §0).
    beta = cyc.schmalstieg2014_beta_cap(3.667, 1.0, **NMC.cycle)
    assert float(beta) == pytest.approx(4.841e-3, rel=1e-3)
    c_rel = 1.0 - cyc.schmalstieg2014_cycle_loss(3.667, 1.0, 1000.0, **NMC.cycle)
    assert float(c_rel) == pytest.approx(0.847, abs=1e-3)


def test_naumann2020_cycle_law_at_paper_conditions():
    # Naumann et al. 2020 (parameters from memory): 1 C, DOC 1.0, 1000 FEC -> 6.83 %
    # (research note §0).
    loss = cyc.naumann2020_cycle_loss(1.0, 1.0, 1000.0, **LFP_NAUMANN.cycle)
    assert float(loss) == pytest.approx(0.0683, abs=2e-4)


def test_woehler_and_miner():
    p = get_chemistry("vrla").aging.cycle
    n = cyc.woehler_cycles_to_failure(np.array([1.0, 0.5, 0.3]), **p)
    # from memory, AGM datasheets: 250-400 cycles at 100 % DOD, 500-700 at 50 %, 1200-1500 at 30 %.
    assert 250 <= n[0] <= 400 and 500 <= n[1] <= 700 and 1200 <= n[2] <= 1500
    # Miner 1945: damage is the sum of cycle fractions; N cycles at one depth give D = 1.
    assert cyc.palmgren_miner_damage([n[1]], [n[1]]) == pytest.approx(1.0)
    assert cyc.palmgren_miner_damage([100, 200], [400, 800]) == pytest.approx(0.5)


def test_charge_voltage_rule():
    # common practice: each 0.1 V per cell below 4.20 V roughly doubles cycle life.
    factors = cyc.charge_voltage_life_factor(np.array([4.2, 4.1, 4.0, 4.3]), 4.2, 0.1)
    np.testing.assert_allclose(factors, [1.0, 2.0, 4.0, 0.5])
