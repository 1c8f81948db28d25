"""Aging in the cold and under daily cycling (docs/aging.md): lithium plating, cold storage,
daily LFP cycling, extrapolation flags.

Check values and their sources:
- Schimpe, von Kuepach, Naumann, Hesse, Smith, Jossen 2018, J. Electrochem. Soc. 165 (2),
  A181-A193, Table IV (read in a re-implementation of the table): k_cyc,highT = 1.46e-4
  Ah^-0.5 with Ea = 32.7 kJ/mol on total throughput, k_cyc,lowT = 4.01e-4 Ah^-0.5 with
  Ea = 55.5 kJ/mol and beta = 2.64 h on charge throughput, I_ref = 1 C, T_ref = 25 °C.
- Waldmann et al. 2014, J. Power Sources 262, 129-135: below 25 °C ageing speeds up as the
  temperature falls (read); low-temperature branch about 55.5 kJ/mol (from memory).
- common practice: LFP cycled once a day lasts close to a decade; 1,000-3,000 full cycles
  at least; cold storage lengthens life; LTO has no graphite anode and no plating.
"""

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner

from planner.aging import age_lanes
from planner.aging.cycle import cycle_state_increment, schmalstieg2014_beta_cap
from planner.aging.profiles import cycling_profile
from planner.chemistry import get_chemistry
from planner.cli import cli

H = 8760
R = 8.314462618


def _daily(chem_id, temp_c, *, dod=0.8, c_rate=0.5, years=40):
    chem = get_chemistry(chem_id)
    volts = chem.default_charge_voltage_v_per_cell
    soc, current = cycling_profile(float(chem.usable_fraction(volts)), dod, 1.0, c_rate)
    return age_lanes(chem, np.full((H, 1), temp_c), soc[:, None], current[:, None], volts, years,
                     peak_c_rate=c_rate, charge_c_rate=c_rate)


def _schimpe_cycle_coefficient(temp_c, charge_c_rate):
    """Schimpe 2018 Eqs. 15 + 18 with Table IV, per sqrt(Ah of charge), full cycles."""
    inv = 1.0 / (temp_c + 273.15) - 1.0 / 298.15
    high = 1.46e-4 * math.sqrt(2.0) * math.exp(-32.7e3 / R * inv)
    low = 4.01e-4 * math.exp(55.5e3 / R * inv) * math.exp(2.64 * (charge_c_rate - 1.0))
    return high + low


def test_lfp_daily_cycling_at_25c_lasts_years_and_thousands_of_cycles():
    # common practice: 25 °C, one cycle a day at 80 % depth and C/2 reaches 80 % SOH in
    # 6-15 years and in at least 2,000 cycles.
    years = float(_daily("lfp", 25.0).years_to_soh(0.8)[0])
    assert 6.0 <= years <= 15.0
    assert years * 365 >= 2000


def test_lfp_cold_cycling_penalty_follows_schimpe_2018():
    # Schimpe 2018 Table IV: the cycle coefficient at 5 °C and C/2 charge is
    # S(5)/S(25) = 1.96 times the 25 °C one (computed here from the table); the engine's
    # cycle loss after the same throughput must match within 5 %.
    expected = _schimpe_cycle_coefficient(5.0, 0.5) / _schimpe_cycle_coefficient(25.0, 0.5)
    assert expected == pytest.approx(1.96, abs=0.01)
    warm, cold = _daily("lfp", 25.0, years=5), _daily("lfp", 5.0, years=5)
    ratio = cold.cycle_loss_frac[-1, 0] / warm.cycle_loss_frac[-1, 0]
    assert ratio == pytest.approx(expected, rel=0.05)
    # And the whole life (calendar included) is shorter in the cold, not longer.
    assert _daily("lfp", 5.0).years_to_soh(0.8)[0] < _daily("lfp", 25.0).years_to_soh(0.8)[0]


def test_plating_grows_with_charge_rate_and_vanishes_at_slow_pv_charge():
    # Schimpe 2018 Table IV: at C/20 charge the plating term is exp(2.64 x -0.95) = 0.08 of
    # its 1 C size, so the 5 °C / 25 °C coefficient ratio falls to about 1.0 (computed).
    slow = _schimpe_cycle_coefficient(5.0, 0.05) / _schimpe_cycle_coefficient(25.0, 0.05)
    assert slow == pytest.approx(1.0, abs=0.05)
    chem = get_chemistry("lfp")
    depth, soc, count = np.array([0.8]), np.array([0.6]), np.array([1.0])
    def increment(temp_c, charge_rate):
        return cycle_state_increment(chem.aging.cycle_model, chem.aging.cycle, chem, depth, soc,
                                     count, np.array([temp_c]), np.array([0.5]),
                                     np.array([3.55]), charge_c_rate=np.array([charge_rate]))[0][0]
    assert increment(5.0, 1.0) > increment(5.0, 0.5) > increment(5.0, 0.05)
    assert math.sqrt(increment(5.0, 0.05) / increment(25.0, 0.05)) == pytest.approx(slow, rel=0.02)


def test_nmc_cold_cycling_is_shorter_and_lto_is_not():
    # Waldmann 2014: below 25 °C graphite/NMC cells age faster as it gets colder; the
    # factor at 5 °C is at most the low-temperature branch alone at 1 C,
    # exp(55.5 kJ/mol / R (1/278.15 - 1/298.15)) = 5.0 (from memory), and at C/2 at least
    # 1.5 (Schimpe 2018 Table IV on the same graphite anode gives 1.96 on the coefficient).
    nmc_warm = _daily("nmc", 25.0, years=3).years_to_soh(0.8)[0]
    nmc_cold = _daily("nmc", 5.0, years=3).years_to_soh(0.8)[0]
    assert 1.2 <= nmc_warm / nmc_cold <= 5.0
    cycle_ratio = (_daily("nmc", 5.0, years=1).cycle_loss_frac[-1, 0]
                   / _daily("nmc", 25.0, years=1).cycle_loss_frac[-1, 0]) ** 2  # rate ratio
    assert 1.5 <= cycle_ratio <= 5.0
    # common practice: LTO has no graphite anode, no plating: the cold does not shorten it.
    assert _daily("lto", 5.0).years_to_soh(0.8)[0] >= _daily("lto", 25.0).years_to_soh(0.8)[0]


def _life_json(*args):
    result = CliRunner().invoke(cli, ["life", *args, "--json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


@pytest.mark.parametrize("chem_id", ["lfp", "nmc"])
def test_cold_storage_lasts_longer_and_is_flagged(chem_id):
    # common practice: cold storage lengthens life. The calendar fits rest on 25-45 °C
    # (lfp) and 35-50 °C (nmc) storage: 5 °C is outside, so the life carries the flag.
    warm = _life_json("--chemistry", chem_id, "--temp-c", "25", "--years", "200")
    cold = _life_json("--chemistry", chem_id, "--temp-c", "5", "--years", "200")
    assert cold["years_to_eol"] is None or cold["years_to_eol"] > warm["years_to_eol"]
    assert cold["life_extrapolated"] is True
    assert any("calendar fit spans" in note for note in cold["extrapolation_notes"])


def test_lfp_storage_below_the_fit_uses_the_cold_study_activation_energy():
    # Naumann 2018 (cold storage study, Ea = 17,126 J/mol): with sqrt(t) in the coefficient
    # convention the 25 -> 5 °C life ratio is exp(2 Ea/R (1/278.15 - 1/298.15)) = 2.70
    # (computed), not the 94-year figure of the warm-fit activation energy.
    life25 = _life_json("--chemistry", "lfp", "--temp-c", "25", "--years", "200")["years_to_eol"]
    life5 = _life_json("--chemistry", "lfp", "--temp-c", "5", "--years", "200")["years_to_eol"]
    assert life5 / life25 == pytest.approx(math.exp(2 * 17126 / R * (1 / 278.15 - 1 / 298.15)), rel=0.01)


def test_a_prediction_inside_the_envelope_is_not_flagged():
    # lfp calibrated calendar fit: 25-45 °C, tests of about 2 years (from memory): storage
    # at 45 °C is inside, and its life (about 3 years, common practice) is not more than
    # three times the test length.
    out = _life_json("--chemistry", "lfp", "--temp-c", "45", "--years", "10")
    assert out["life_extrapolated"] is False and out["extrapolation_notes"] == []


def test_aging_set_option_and_list():
    out = _life_json("--chemistry", "lfp", "--temp-c", "25", "--aging-set", "naumann")
    assert out["aging_set"] == "naumann"
    bad = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "25",
                                   "--aging-set", "nope"])
    assert bad.exit_code == 2 and "naumann" in bad.output
    listing = CliRunner().invoke(cli, ["life", "--list"])
    assert "aging set schmalstieg-published (alternative)" in listing.output
    assert "fitted on: calendar" in listing.output


def test_schmalstieg_published_counts_depth_on_rated_capacity():
    # Schmalstieg et al. 2014: beta_cap(V_mean, DOD) sqrt(Q) with DOD on the cell's rated
    # capacity; the published set must not divide by the usable fraction.
    chem = get_chemistry("nmc")
    params = chem.aging_set("schmalstieg-published")
    depth, soc, count = np.array([0.9]), np.array([0.45]), np.array([1.0])
    inc, _ = cycle_state_increment(params.cycle_model, params.cycle, chem, depth, soc, count,
                                   np.array([25.0]), np.array([1.0]), np.array([4.10]))
    volts = chem.open_circuit_voltage_v(soc)
    beta = schmalstieg2014_beta_cap(volts, depth, **params.cycle)
    throughput_ah = 0.9 * 2.05 * 2  # both directions of the 2.05 Ah cell
    assert inc[0] == pytest.approx(float(beta[0] ** 2 * throughput_ah), rel=1e-12)
