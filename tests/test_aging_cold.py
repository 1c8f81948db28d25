"""Aging in the cold and under daily cycling: lithium plating over the charging hours,
cold storage, daily LFP cycling, extrapolation flags.

Check values and their sources:
- Schimpe, von Kuepach, Naumann, Hesse, Smith, Jossen 2018, J. Electrochem. Soc. 165 (2),
  A181-A193, Eqs. 15 + 18, Table IV (read in a re-implementation of the table):
  k_cyc,highT = 1.46e-4 Ah^-0.5 with Ea = 32.7 kJ/mol on total throughput, k_cyc,lowT =
  4.01e-4 Ah^-0.5 with Ea = 55.5 kJ/mol and beta = 2.64 h on charge throughput, I_ref =
  1 C, T_ref = 25 °C.
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
from planner.aging.calendar import calendar_rate_parts
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


def _schimpe(temp_c, charge_c_rate):
    """Schimpe 2018 Eqs. 15 + 18 with Table IV: the film (high-temperature) and plating
    (low-temperature) coefficients of full cycles, per sqrt(Ah of charge)."""
    inv = 1.0 / (temp_c + 273.15) - 1.0 / 298.15
    film = 1.46e-4 * math.sqrt(2.0) * math.exp(-32.7e3 / R * inv)
    plating = 4.01e-4 * math.exp(55.5e3 / R * inv) * math.exp(2.64 * (charge_c_rate - 1.0))
    return film, plating


def _split_charge_and_rest(chem_id, charge_temp_c, other_temp_c, c_rate, years=5):
    """One cycle a day at 80 % depth: the charging hours at one temperature, all the other
    hours at another (same cycle, same throughput)."""
    chem = get_chemistry(chem_id)
    volts = chem.default_charge_voltage_v_per_cell
    soc, current = cycling_profile(float(chem.usable_fraction(volts)), 0.8, 1.0, c_rate)
    temp = np.where(current < 0.0, charge_temp_c, other_temp_c)
    return age_lanes(chem, temp[:, None], soc[:, None], current[:, None], volts, years,
                     peak_c_rate=c_rate, charge_c_rate=c_rate)


def test_lfp_daily_cycling_at_25c_lasts_years_and_thousands_of_cycles():
    # common practice: 25 °C, one cycle a day at 80 % depth and C/2 reaches 80 % SOH in
    # about a decade and in at least 2,000 cycles: the set calibrated to the trade's
    # storage figures (15 years stored full at 25 °C) holds it.
    chem = get_chemistry("lfp")
    soc, current = cycling_profile(1.0, 0.8, 1.0, 0.5)
    result = age_lanes(chem, np.full((H, 1), 25.0), soc[:, None], current[:, None], 3.55, 40,
                       peak_c_rate=0.5, charge_c_rate=0.5, aging_set="calibrated")
    years = float(result.years_to_soh(0.8)[0])
    assert 6.0 <= years <= 15.0 and years * 365 >= 2000
    # The set at the level of the 26650 cell behind Naumann et al. 2018 (8.7 years stored
    # full at 25 °C), which sits full most of a daily-cycled day: about 5 years. The band
    # holds both: 4-15 years and at least 1,500 cycles.
    chem = get_chemistry("lfp")
    result = age_lanes(chem, np.full((H, 1), 25.0), soc[:, None], current[:, None], 3.55, 40,
                       peak_c_rate=0.5, charge_c_rate=0.5, aging_set="published")
    published = float(result.years_to_soh(0.8)[0])
    assert 4.0 <= published <= 15.0 and published * 365 >= 1500
    # The default's calendar level is a large-format cell's (Gasper et al. 2023: 1.7 % a
    # year stored full at 25 °C): the life model fitted to that cell gives about 6,500 such
    # cycles (computed, the validation row gasper2023/cycle-models/25C-80dod-c2-daily-lfp);
    # the default, with the cycle law of the 26650 cell, within a factor of 2 of it.
    default = float(_daily("lfp", 25.0, years=60).years_to_soh(0.8)[0]) * 365
    assert 6530 / 2 <= default <= 6530 * 2


def test_charging_in_the_cold_ages_lfp_several_times_faster_than_charging_warm():
    # Schimpe 2018: the plating term follows the temperature of the *charging* hours.
    # The same daily cycle (C/2), charged at 0 °C and discharged/rested at 25 °C, against
    # charged at 25 °C and discharged/rested at 0 °C.
    cold_charge = _split_charge_and_rest("lfp", 0.0, 25.0, 0.5)
    warm_charge = _split_charge_and_rest("lfp", 25.0, 0.0, 0.5)
    # Plating term alone: AF_pl(0 °C) = exp(55.5 kJ/mol / R (1/273.15 - 1/298.15)) = 7.76
    plating_ratio = cold_charge.plating_loss_frac[-1, 0] / warm_charge.plating_loss_frac[-1, 0]
    assert plating_ratio == pytest.approx(math.exp(55.5e3 / R * (1 / 273.15 - 1 / 298.15)),
                                          rel=1e-3)
    # All of cycling: Schimpe's equations give (film + plating at 0 °C) / (film + plating
    # at 25 °C) = 3.79 at C/2, the film term taken over the charge hours at one
    # temperature and the discharge hours at the other (root mean square of AF). The
    # engine puts the film term at each cycle's mean reversal temperature, the plating
    # term at each charging hour's: 4.2, within 15 %.
    film0, plating0 = _schimpe(0.0, 0.5)
    film25, plating25 = _schimpe(25.0, 0.5)
    film_mixed = film25 * math.sqrt(((film0 / film25) ** 2 + 1.0) / 2.0)
    expected = (film_mixed + plating0) / (film_mixed + plating25)
    assert expected == pytest.approx(3.79, abs=0.01)
    total_ratio = cold_charge.cycle_loss_frac[-1, 0] / warm_charge.cycle_loss_frac[-1, 0]
    assert total_ratio == pytest.approx(expected, rel=0.15)
    assert total_ratio >= 3.0                    # several times faster


def test_warm_charging_at_1c_ages_lfp_less_than_at_25c():
    # Schimpe 2018 Table IV: at 1 C the plating term (66 % of the cycle coefficient at
    # 25 °C) shrinks with heat faster than the film term grows, so total cycle aging at
    # 35 °C is 0.34 x 1.53 + 0.66 x 0.48 = 0.84 of that at 25 °C (computed).
    film25, plating25 = _schimpe(25.0, 1.0)
    film35, plating35 = _schimpe(35.0, 1.0)
    expected = (film35 + plating35) / (film25 + plating25)
    assert expected == pytest.approx(0.84, abs=0.01)
    at25 = _daily("lfp", 25.0, dod=1.0, c_rate=1.0, years=5).cycle_loss_frac[-1, 0]
    at35 = _daily("lfp", 35.0, dod=1.0, c_rate=1.0, years=5).cycle_loss_frac[-1, 0]
    assert at35 < at25
    assert at35 / at25 == pytest.approx(expected, rel=0.02)


def test_plating_grows_with_charge_rate_and_is_small_at_slow_pv_charge():
    # Schimpe 2018 Table IV: the plating coefficient scales with exp(2.64 h (C - 1)), so at
    # a C/20 charge it is 0.08 of its 1 C size (computed); its share of the 25 °C
    # coefficient falls from 0.66 at 1 C to 0.14 at C/20 (computed from the same table).
    fast = _split_charge_and_rest("lfp", 5.0, 25.0, 1.0)
    slow = _split_charge_and_rest("lfp", 5.0, 25.0, 0.05)
    fast_share = fast.plating_loss_frac[-1, 0] / fast.cycle_loss_frac[-1, 0]
    slow_share = slow.plating_loss_frac[-1, 0] / slow.cycle_loss_frac[-1, 0]
    assert fast_share > 2 * slow_share
    film, plating = _schimpe(25.0, 0.05)
    assert plating / (film + plating) == pytest.approx(0.14, abs=0.01)


def test_nmc_cold_cycling_is_shorter_and_lto_is_not():
    # Waldmann 2014: below 25 °C graphite/NMC cells age faster as it gets colder; at C/2
    # charge the plating term borrowed from Schimpe 2018 makes cycling at 5 °C at least
    # 1.2 times as harmful and at most the low-temperature branch alone at 1 C,
    # exp(55.5 kJ/mol / R (1/278.15 - 1/298.15)) = 5.0 (from memory).
    cycle_ratio = (_daily("nmc", 5.0, years=3).cycle_loss_frac[-1, 0]
                   / _daily("nmc", 25.0, years=3).cycle_loss_frac[-1, 0])
    assert 1.2 <= cycle_ratio <= 5.0
    # common practice: LTO has no graphite anode, no plating: the cold does not shorten it.
    assert _daily("lto", 5.0).years_to_soh(0.8)[0] >= _daily("lto", 25.0).years_to_soh(0.8)[0]


def _life_json(*args):
    result = CliRunner().invoke(cli, ["life", *args, "--json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


@pytest.mark.parametrize("chem_id", ["lfp", "nmc"])
def test_cold_storage_lasts_longer_and_is_flagged(chem_id):
    # common practice: cold storage lengthens life. The default calendar laws rest on
    # tests of about 1.5 years at 10-45 °C (Gasper et al. 2023; their cold slope from
    # studies down to 0 °C): decades at 5 °C are far beyond the tests, so the life carries
    # the flag.
    warm = _life_json("--chemistry", chem_id, "--temp-c", "25", "--years", "200")
    cold = _life_json("--chemistry", chem_id, "--temp-c", "5", "--years", "200")
    assert cold["years_to_eol"] is None or cold["years_to_eol"] > warm["years_to_eol"]
    assert cold["life_extrapolated"] is True
    assert any("calendar fit spans" in note for note in cold["extrapolation_notes"])


def test_lfp_storage_below_the_fit_uses_the_cold_study_activation_energy():
    # Naumann 2018 (storage study from 0 to 60 °C, Ea = 17,126 J/mol): with sqrt(t) in the
    # coefficient convention the 25 -> 5 °C life ratio is exp(2 Ea/R (1/278.15 - 1/298.15))
    # = 2.70 (computed); the same for the small-cell and the large-format level of that law
    # (the default's large-format law takes this slope below 10 °C only:
    # test_aging_large_format.py).
    expected = math.exp(2 * 17126 / R * (1 / 278.15 - 1 / 298.15))
    life25 = _life_json("--chemistry", "lfp", "--temp-c", "25", "--years", "200",
                        "--aging-set", "published")["years_to_eol"]
    life5 = _life_json("--chemistry", "lfp", "--temp-c", "5", "--years", "200",
                       "--aging-set", "published")["years_to_eol"]
    assert life5 / life25 == pytest.approx(expected, rel=0.01)
    one_point = get_chemistry("lfp").aging_set("large-format")
    temp_part = calendar_rate_parts(one_point.calendar_model, one_point.calendar, None)[0]
    # the state grows as k^2 (square-root law): the life ratio is the rate ratio
    assert float(temp_part(25.0) / temp_part(5.0)) == pytest.approx(expected, rel=1e-9)


def test_nmc_storage_below_its_fit_takes_the_slope_of_a_cold_storage_study():
    # Schmalstieg et al. 2014's 58 kJ/mol rests on storage at 35-50 °C (from memory); below
    # 35 °C the set "large-format" (that law at a large-format level) takes the slope of a
    # 75 Ah NMC cell stored from 0 to 55 °C (Smith et al. 2017: Ea = 35,392 J/mol on
    # sqrt(t), a 25 -> 5 °C life ratio of exp(2 Ea/R (1/278.15 - 1/298.15)) = 7.79,
    # computed), not the extrapolated 58 kJ/mol (9.4, computed:
    # exp(6976 K (1/278.15 - 1/298.15))^(4/3)). The default's large-format law takes
    # Smith's slope below 10 °C only (test_aging_large_format.py).
    smith = math.exp(2 * 35392 / R * (1 / 278.15 - 1 / 298.15))
    one_point = get_chemistry("nmc").aging_set("large-format")
    temp_part = calendar_rate_parts(one_point.calendar_model, one_point.calendar, None)[0]
    # the state grows as k^(1/0.75): the life ratio is the ratio of the state's rates
    assert float(temp_part(25.0) / temp_part(5.0)) == pytest.approx(smith, rel=1e-3)
    published = get_chemistry("nmc").aging_set("published-storage")
    old = calendar_rate_parts(published.calendar_model, published.calendar, None)[0]
    assert float(old(25.0) / old(5.0)) == pytest.approx(
        math.exp(6976 * (1 / 278.15 - 1 / 298.15)) ** (4 / 3), rel=1e-9)
    # above 35 °C the published heat law is unchanged
    assert float(temp_part(50.0) / temp_part(40.0)) == pytest.approx(float(old(50.0) / old(40.0)))


@pytest.mark.parametrize("chem_id", ["lfp", "nmc"])
def test_no_storage_gain_below_the_coldest_storage_test(chem_id):
    # Research note cold-and-scale §2: the Arrhenius gain is not extrapolated below the
    # lowest storage temperature that supports it (0 °C for both defaults: the cold slopes
    # of Naumann et al. 2018, from memory; Smith et al. 2017): the calendar rate at -20 °C is that at 0 °C.
    default = get_chemistry(chem_id).aging
    temp_part = calendar_rate_parts(default.calendar_model, default.calendar, None)[0]
    assert float(temp_part(-20.0)) == pytest.approx(float(temp_part(0.0)), rel=1e-12)
    assert float(temp_part(5.0)) > float(temp_part(0.0))


def test_a_prediction_inside_the_envelope_is_not_flagged():
    # lfp calendar fit: 0-60 °C, tests of about 2 years (from memory): storage at 45 °C is
    # inside, and the small-cell set's life there (about 2 years) is not more than three
    # times the test length; nmc (0-50 °C, 1.4 years): 2.5 years at 45 °C.
    out = _life_json("--chemistry", "lfp", "--temp-c", "45", "--years", "10",
                     "--aging-set", "published")
    assert out["life_extrapolated"] is False and out["extrapolation_notes"] == []
    out = _life_json("--chemistry", "nmc", "--temp-c", "45", "--years", "10")
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
