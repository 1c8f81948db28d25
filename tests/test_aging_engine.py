"""The aging engine (planner.aging.age_lanes) against facts of the trade and properties."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.aging import AgingState, age_lanes, years_to_soh
from planner.aging.calendar import primary_remaining_fraction
from planner.chemistry import get_chemistry

H = 8760


def _storage_years(chem_id, temp_c, soc=1.0, years=60, **kw):
    chem = get_chemistry(chem_id)
    result = age_lanes(chem, np.full((H, 1), temp_c), np.full((H, 1), soc), None,
                       chem.default_charge_voltage_v_per_cell, years, **kw)
    return float(result.years_to_soh(0.8)[0])


def _continuous_cycles(chem_id, charge_v=None, temp_c=25.0, years=1, c_rate=1.0, aging_set=None):
    """Cycles to 80 % for back-to-back full cycles (1 h down, 1 h up) at the charge voltage."""
    chem = get_chemistry(chem_id)
    volts = chem.default_charge_voltage_v_per_cell if charge_v is None else charge_v
    top = float(chem.usable_fraction(volts))
    even = np.arange(H) % 2 == 0
    soc = np.where(even, top, 0.0)[:, None]
    current = np.where(even, top, -top)[:, None]
    result = age_lanes(chem, np.full((H, 1), temp_c), soc, current, volts, years,
                       peak_c_rate=c_rate, aging_set=aging_set)
    return float(result.years_to_soh(0.8)[0]) * H / 2.0


# --- facts of the trade (common practice) ------------------------------------------------

@pytest.mark.parametrize("aging_set", ["published", "calibrated"])
def test_lfp_stored_full_life_at_25_and_45_c(aging_set):
    # common practice: LFP stored full reaches 80 % in ~15 y at 25 °C and ~3 y at 45 °C,
    # each within a factor of 2. The 25->45 °C life ratio of the trade figures is 5; the
    # published storage data of the default (Naumann et al. 2018) give 2.4: the band,
    # 2-8, holds both (it was 3-8 when the default was fitted to the trade figures).
    life25 = _storage_years("lfp", 25.0, aging_set=aging_set)
    life45 = _storage_years("lfp", 45.0, aging_set=aging_set)
    assert 7.5 <= life25 <= 30.0
    assert 1.5 <= life45 <= 6.0
    assert 2.0 <= life25 / life45 <= 8.0


def test_lfp_sets_at_one_level_keep_the_small_cells_shape():
    # The default is the large-format cell's own law (tests/test_aging_large_format.py).
    # The set "large-format" keeps the shape of Naumann et al. 2018 at the level Gasper et
    # al. 2023's model of a 250 Ah LFP cell has at one point: 1.712 % lost in a year stored
    # full at 25 °C (computed); Naumann's own level (a 26650 cell) is 6.78 % (the set
    # "published": 8.7 years to 80 %). Above 25 °C both take the heat sensitivity of Wang
    # et al. 2011 (Eq. 5 at C/2: a 25->45 °C life ratio of 4.28, computed), which
    # Swierczynski et al. 2015 supports (4.55); the "naumann" set alone gives AF(45)^2 =
    # exp(2 Ea/R (1/298.15 - 1/318.15)) = 2.38.
    chem = get_chemistry("lfp")
    assert chem.default_aging_set == "large-format-fitted"
    year = age_lanes(chem, np.full((H, 1), 25.0), np.ones((H, 1)), None, 3.55, 1,
                     aging_set="large-format")
    assert float(year.calendar_loss_frac[-1, 0]) == pytest.approx(0.01712, rel=0.01)
    default = _storage_years("lfp", 25.0, years=300, aging_set="large-format") / _storage_years(
        "lfp", 45.0, years=300, aging_set="large-format")
    assert default == pytest.approx(4.28, rel=0.01)
    published = _storage_years("lfp", 25.0, aging_set="published") / _storage_years(
        "lfp", 45.0, aging_set="published")
    assert published == pytest.approx(default, rel=1e-3)
    assert _storage_years("lfp", 25.0, aging_set="published") == pytest.approx(
        _storage_years("lfp", 25.0, aging_set="naumann"))
    naumann = _storage_years("lfp", 25.0, aging_set="naumann") / _storage_years(
        "lfp", 45.0, aging_set="naumann")
    expected = math.exp(2 * 17126.0 / 8.314462618 * (1 / 298.15 - 1 / 318.15))
    assert naumann == pytest.approx(expected, rel=2e-3)
    calibrated = _storage_years("lfp", 25.0, aging_set="calibrated") / _storage_years(
        "lfp", 45.0, aging_set="calibrated")
    assert calibrated == pytest.approx(5.0, rel=0.02)


def test_vrla_float_life_halving():
    # common practice (8 °C halving rule): a 10-year battery at 25 °C lasts about 5 years at 33 °C.
    life25 = _storage_years("vrla", 25.0)
    life33 = _storage_years("vrla", 33.0)
    assert life25 == pytest.approx(10.0, rel=1e-6)
    assert life33 == pytest.approx(5.0, rel=0.05)  # default 8.3 K step (conservative)
    # With the step set to 8 K the rule gives exactly 5 years (configurable step).
    life33_8k = _storage_years("vrla", 33.0, overrides={"calendar.halving_step_k": 8.0})
    assert life33_8k == pytest.approx(5.0, rel=1e-6)


def test_nmc_consumer_set_full_cycle_life():
    # common practice for consumer NMC cells (the "schmalstieg" set, kept selectable): at
    # 4.20 V, full 1 C cycles at 25 °C reach 80 % after 300-500 cycles; a lower charge
    # voltage buys cycles (the rule of practice the set carries; no cited figures for
    # its size, so only the direction is checked).
    n420 = _continuous_cycles("nmc", 4.20, aging_set="schmalstieg")
    n410 = _continuous_cycles("nmc", 4.10, aging_set="schmalstieg")
    assert 300 <= n420 <= 500
    assert n410 > n420


def test_nmc_default_is_stationary_grade():
    # common practice for stationary NMC (modules rated for thousands of cycles): at one
    # cycle a day, 80 % depth, 25 °C and C/2, with calendar fade at full charge included,
    # at least 1,500 cycles to 80 %; the consumer set lasts a fraction of that. The
    # default's calendar law is that of large-format NMC cells (Gasper et al. 2023: 2.45 %
    # a year stored full at 25 °C, geometric mean of two cells' models, held at its
    # end-of-test rate past 1.5 years) and its cycle term is calibrated to 5,000 rated
    # cycles alone (datasheets, from memory): it meets the 1,500, as does the earlier set
    # at the same level on Schmalstieg's t^0.75 ("large-format"). The set at the level of
    # Schmalstieg et al. 2014's consumer cell ("published-storage", 4.4 % a year) does not
    # (about 1,200).
    chem = get_chemistry("nmc")
    assert chem.default_aging_set == "large-format-fitted"
    from planner.aging.profiles import cycling_profile
    soc, current = cycling_profile(1.0, 0.8, 1.0, 0.5)
    cycles = {}
    for aging_set, overrides in (("large-format-fitted", None), ("large-format", None),
                                 ("stationary", None), ("schmalstieg", None),
                                 ("published-storage", None),
                                 ("large-format-fitted", {"calendar.loss_frac_year_ref": 0.0})):
        result = age_lanes(chem, np.full((H, 1), 25.0), soc[:, None], current[:, None], 4.20,
                           30, peak_c_rate=0.5, charge_c_rate=0.5, aging_set=aging_set,
                           overrides=overrides)
        cycles[aging_set, overrides is None] = float(result.years_to_soh(0.8)[0]) * 365
    assert cycles["large-format-fitted", True] >= 1500
    assert cycles["large-format", True] >= 1500
    assert cycles["stationary", True] >= 1500
    assert cycles["published-storage", True] < 1500
    assert cycles["schmalstieg", True] < 0.5 * cycles["large-format-fitted", True]
    assert 4900 <= cycles["large-format-fitted", False] <= 5100


def test_full_depth_cycle_life_by_chemistry():
    # common practice, full-depth cycle life at 25 °C: LFP 1,000-3,000 at least (the
    # published Naumann 2020 cycle fit of a long-lived cell gives several thousand);
    # LTO about 20,000 (checked within x1.5); from memory, AGM datasheets: 250-400.
    assert _continuous_cycles("lfp", years=5) >= 1000
    assert 20000 / 1.5 <= _continuous_cycles("lto", years=10) <= 20000 * 1.5
    assert 250 <= _continuous_cycles("vrla") <= 400


def test_lower_charge_voltage_buys_life_and_costs_capacity():
    # common practice: lower charge voltage, longer life, less usable capacity (NMC).
    chem = get_chemistry("nmc")
    assert chem.usable_fraction(4.1) < chem.usable_fraction(4.2)
    assert _continuous_cycles("nmc", 4.1) > _continuous_cycles("nmc", 4.2)
    # Calendar side: storage at the full SOC of 4.1 V ages slower than at 4.2 V
    # (Schmalstieg 2014: alpha_cap linear in storage voltage).
    slow = _storage_years("nmc", 25.0, soc=chem.usable_fraction(4.1))
    fast = _storage_years("nmc", 25.0, soc=1.0)
    assert slow > fast


def test_higher_c_rate_shortens_cycle_life():
    # common practice: higher discharge rates shorten the cycle life of energy-type cells.
    assert (_continuous_cycles("nmc", c_rate=2.0, aging_set="schmalstieg")
            < _continuous_cycles("nmc", c_rate=1.0, aging_set="schmalstieg"))
    assert _continuous_cycles("lfp", c_rate=2.0) < _continuous_cycles("lfp", c_rate=1.0)


def test_primary_cell_through_the_engine_matches_closed_form():
    # Definition: remaining = initial - load charge - temperature self-discharge.
    chem = get_chemistry("lisocl2")
    load = 2e-5  # C-rate of the load
    result = age_lanes(chem, np.full((H, 1), 30.0), np.ones((H, 1)), np.full((H, 1), load),
                       3.6, 5, rate_bin_k=None)
    months = np.arange(61)
    hours = np.concatenate([[0], np.cumsum(np.tile([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], 5))]) * 24
    closed = primary_remaining_fraction(hours, load, 30.0, **chem.aging.calendar)
    np.testing.assert_allclose(result.soh_monthly[:, 0], closed, rtol=1e-12)
    assert months.size == result.soh_monthly.shape[0]


# --- structure -------------------------------------------------------------------------

def test_shapes_and_additivity():
    rng = np.random.default_rng(1)
    n = 5
    temp = 20 + 10 * rng.random((H, n))
    soc = 0.5 + 0.4 * np.sin(np.arange(H) / 24 * 2 * np.pi)[:, None] * rng.random(n)
    current = np.vstack([np.diff(soc, axis=0), soc[:1] - soc[-1:]]) * -1.0
    result = age_lanes("lfp", temp, soc, current, 3.55, 20)
    assert result.soh_monthly.shape == (241, n)
    assert result.calendar_loss_frac.shape == result.cycle_loss_frac.shape == (241, n)
    assert result.efc_per_year.shape == (n,)
    # Issue 4: calendar and cycle losses add.
    np.testing.assert_allclose(result.soh_monthly,
                               1 - result.calendar_loss_frac - result.cycle_loss_frac)
    np.testing.assert_allclose(result.soh_monthly[0], 1.0)


def test_state_carries_over():
    # Aging 2 years then 3 more from the carried state equals 5 years at once
    # (path independence of equivalent time, research note §6.1).
    rng = np.random.default_rng(2)
    temp = 15 + 20 * rng.random((H, 3))
    soc = np.clip(0.6 + 0.3 * np.sin(np.arange(H) / 3.0)[:, None] + 0.05 * rng.random((H, 3)), 0, 1)
    current = 0.05 * rng.standard_normal((H, 3))
    for chem_id in ("lfp", "nmc", "vrla", "lto"):
        whole = age_lanes(chem_id, temp, soc, current, get_chemistry(chem_id).default_charge_voltage_v_per_cell, 5)
        v = get_chemistry(chem_id).default_charge_voltage_v_per_cell
        first = age_lanes(chem_id, temp, soc, current, v, 2)
        second = age_lanes(chem_id, temp, soc, current, v, 3, initial_state=first.state)
        np.testing.assert_allclose(second.soh_monthly, whole.soh_monthly[24:], rtol=1e-10)
        np.testing.assert_allclose(second.state.age_years, 5.0)


def test_existing_pack_from_losses():
    # A pack with 10 % calendar loss continues from an equivalent time (research note §6.1):
    # for sqrt(t) at constant conditions, t_eq = (0.1 / k)^2, so the remaining life to 80 %
    # is the fresh life minus t_eq (a square-root law kept to the end: the set
    # "large-format"; the default's held law in test_aging_large_format.py).
    fresh = age_lanes("lfp", np.full((H, 1), 25.0), np.ones((H, 1)), None, 3.55, 200,
                      aging_set="large-format")
    life = float(fresh.years_to_soh(0.8)[0])
    t_eq = life * (0.1 / 0.2) ** 2
    old = age_lanes("lfp", np.full((H, 1), 25.0), np.ones((H, 1)), None, 3.55, 200,
                    initial_state=AgingState.from_losses(0.1, 0.0, age_years=t_eq),
                    aging_set="large-format")
    assert float(old.years_to_soh(0.8)[0]) == pytest.approx(life - t_eq, rel=1e-6)


def test_lane_site_sharing_and_chunking_change_nothing():
    rng = np.random.default_rng(4)
    site_temp = 10 + 25 * rng.random((H, 2))
    lane_site = np.array([0, 1, 1, 0, 1])
    soc = np.clip(0.7 + 0.25 * np.sin(np.arange(H)[:, None] / (3.0 + np.arange(5))), 0, 1)
    current = 0.1 * rng.standard_normal((H, 5))
    shared = age_lanes("nmc", site_temp, soc, current, 4.1, 10, lane_site=lane_site, chunk_lanes=2)
    explicit = age_lanes("nmc", site_temp[:, lane_site], soc, current, 4.1, 10, chunk_lanes=1000)
    np.testing.assert_allclose(shared.soh_monthly, explicit.soh_monthly, rtol=1e-12)


def test_years_to_soh_interpolates_and_reports_never():
    # Arithmetic on the calendar: SOH falling 1 % per month crosses 0.8 after 20 months,
    # i.e. one year plus January..August (243 days of 365).
    soh = 1.0 - 0.01 * np.arange(37)[:, None] * np.array([1.0, 0.1, 30.0])
    years = years_to_soh(soh, 0.8)
    assert years[0] == pytest.approx(1 + 243 / 365)
    assert years[1] == np.inf
    assert years[2] == pytest.approx(2 / 3 * 31 / 365)  # two thirds of January


# --- properties (hypothesis) -------------------------------------------------------------

_CHEMS = st.sampled_from(["vrla", "lfp", "nmc", "lto"])


def _profile(seed, depth):
    rng = np.random.default_rng(seed)
    daily = 0.5 * (1 + np.cos(np.arange(H) / 24.0 * 2 * np.pi))
    soc = 1.0 - depth * daily[:, None] * (0.5 + 0.5 * rng.random((H, 1)))
    current = -np.diff(np.vstack([soc, soc[:1]]), axis=0)
    temp = 10.0 + 15.0 * rng.random((H, 1))
    return temp, soc, current


@settings(max_examples=15, deadline=None)
@given(_CHEMS, st.integers(0, 10_000), st.floats(0.0, 1.0), st.floats(0.1, 15.0))
def test_hotter_never_lasts_longer(chem_id, seed, depth, warming_k):
    # common practice: heat shortens battery life; property: SOH at each month no higher.
    # Graphite-anode lithium-ion plates less when it charges warmer (Schimpe et al. 2018:
    # at 1 C total cycle aging is smallest between 35 and 45 °C), so for lfp and nmc the
    # property is checked from 45 °C up; lead-acid and LTO have no plating term.
    temp, soc, current = _profile(seed, depth)
    if chem_id in ("lfp", "nmc"):
        temp = temp + 35.0
    v = get_chemistry(chem_id).default_charge_voltage_v_per_cell
    cool = age_lanes(chem_id, temp, soc, current, v, 15)
    hot = age_lanes(chem_id, temp + warming_k, soc, current, v, 15)
    assert np.all(hot.soh_monthly <= cool.soh_monthly + 1e-12)


@settings(max_examples=15, deadline=None)
@given(_CHEMS, st.integers(0, 10_000), st.floats(0.05, 0.5), st.floats(1.1, 2.0))
def test_deeper_cycles_never_last_longer(chem_id, seed, depth, factor):
    # common practice: deeper cycles wear a battery faster (same top SOC, same temperature).
    temp, soc_shallow, cur_shallow = _profile(seed, depth)
    _, soc_deep, cur_deep = _profile(seed, min(depth * factor, 0.95))
    v = get_chemistry(chem_id).default_charge_voltage_v_per_cell
    shallow = age_lanes(chem_id, temp, soc_shallow, cur_shallow, v, 15)
    deep = age_lanes(chem_id, temp, soc_deep, cur_deep, v, 15)
    assert np.all(deep.cycle_loss_frac >= shallow.cycle_loss_frac - 1e-12)


@settings(max_examples=15, deadline=None)
@given(st.sampled_from(["vrla", "lfp", "nmc", "lto", "lisocl2"]), st.integers(0, 10_000),
       st.floats(0.0, 1.0))
def test_soh_never_increases(chem_id, seed, depth):
    # Definition: capacity fade is irreversible in these laws; SOH is non-increasing.
    temp, soc, current = _profile(seed, depth)
    v = get_chemistry(chem_id).default_charge_voltage_v_per_cell
    result = age_lanes(chem_id, temp - 20.0, soc, np.abs(current) * 1e-3 if chem_id == "lisocl2" else current, v, 25)
    assert np.all(np.diff(result.soh_monthly, axis=0) <= 1e-15)
    assert np.all(result.soh_monthly >= 0.0)


def test_engine_equals_plain_hourly_loop_with_reference_rainflow():
    # Independent reference: hour-by-hour textbook equivalent-time update (research note
    # §6.1) with math.exp, and cycles from the reference `rainflow` package on the year
    # started and closed at its maximum (ASTM E1049 practice for repeated histories). On
    # the set with Naumann et al. 2018's square-root calendar law (the default's
    # large-format law is checked against its closed form in test_aging_large_format.py).
    import rainflow

    chem = get_chemistry("lfp")
    params = chem.aging_set("large-format")
    cal_p, cyc_p = params.calendar, params.cycle
    rng = np.random.default_rng(11)
    hours = np.arange(H)
    temp = 18.0 + 8.0 * np.sin(2 * np.pi * hours / H) + rng.normal(0.0, 2.0, H)
    soc = 0.75 + 0.2 * np.sin(2 * np.pi * hours / 24.0) + rng.normal(0.0, 0.01, H)
    current = soc - np.roll(soc, -1)
    years = 3
    result = age_lanes(chem, temp[:, None], soc[:, None], current[:, None], 3.55, years,
                       rate_bin_k=None, soc_bin_frac=None, aging_set="large-format")

    def arrhenius(temp_c, ea, ref_c):
        return math.exp(-ea / 8.314462618 * (1 / (temp_c + 273.15) - 1 / (ref_c + 273.15)))

    def calendar_af(temp_c):
        # Below 25 °C the storage study's own activation energy takes over.
        below = cal_p["low_temp_below_c"]
        if temp_c >= below:
            return arrhenius(temp_c, cal_p["activation_energy_j_mol"], cal_p["temp_ref_c"])
        return (arrhenius(below, cal_p["activation_energy_j_mol"], cal_p["temp_ref_c"])
                * arrhenius(temp_c, cal_p["low_temp_activation_energy_j_mol"], below))

    charge = np.maximum(-current, 0.0)
    charge_rate = charge.sum() / np.count_nonzero(charge)
    share, beta = cyc_p["plating_share_ref"], cyc_p["plating_c_rate_beta"]

    def plating_share(rate):
        # Schimpe et al. 2018, Table IV: share of the low-temperature term at 25 °C
        w = share * math.exp(beta * (rate - 1.0))
        return w / ((1 - share) + w)

    loss = 0.0
    for _ in range(years):
        for h in range(H):
            k = (cal_p["k_ref_per_sqrt_s"] * calendar_af(temp[h])
                 * (cal_p["soc_c"] * (soc[h] - 0.5) ** 3 + cal_p["soc_d"]))
            loss = k * math.sqrt((loss / k) ** 2 + 3600.0)
    assert result.calendar_loss_frac[-1, 0] == pytest.approx(loss, rel=1e-9)

    discharge = np.maximum(current, 0.0)
    c_rate = discharge.sum() / np.count_nonzero(discharge)
    top = int(np.argmax(soc))
    closed = np.concatenate([soc[top:], soc[:top], soc[top:top + 1]]).tolist()
    film = reference = cycles = 0.0
    for depth, _, count, i0, i1 in rainflow.extract_cycles(closed):
        t_cycle = 0.5 * (temp[(i0 + top) % H] + temp[(i1 + top) % H])
        k = ((cyc_p["a"] * c_rate + cyc_p["b"]) * (cyc_p["doc_c"] * (depth - 0.6) ** 3 + cyc_p["doc_d"])
             / 100.0)  # Naumann 2020: loss = k sqrt(FEC), FEC = count x depth
        reference += k * k * count * depth
        cycles += count * depth
        film_k = k * (1 - plating_share(charge_rate)) * arrhenius(
            t_cycle, cyc_p["activation_energy_j_mol"], cyc_p["temp_ref_c"])
        film += film_k * film_k * count * depth
    # plating: each charging hour at its own temperature and charge current, scaled so
    # that at 25 °C and the lane's mean charge rate it is that share of Naumann's law
    kappa = math.sqrt(reference / cycles) * share / ((1 - share) + share * math.exp(
        beta * (charge_rate - 1.0)))
    plating = 0.0
    for h in np.flatnonzero(charge > 0):
        k_h = kappa * arrhenius(temp[h], -cyc_p["plating_activation_energy_j_mol"],
                                cyc_p["plating_temp_ref_c"]) * math.exp(beta * (charge[h] - 1.0))
        plating += k_h * k_h * charge[h]
    expected = math.sqrt(years * film) + math.sqrt(years * plating)
    assert result.cycle_loss_frac[-1, 0] == pytest.approx(expected, rel=1e-9)
    assert result.plating_loss_frac[-1, 0] == pytest.approx(math.sqrt(years * plating), rel=1e-9)
    assert result.efc_per_year[0] == pytest.approx(discharge.sum(), rel=1e-12)


def test_alternative_sets_follow_their_sources():
    # Schmalstieg et al. 2014 as published: full cycles at 4.20 V, 25 °C; beta(3.72 V, 1.0)
    # with Q counting both directions of a 2.05 Ah cell: cycles to a 20 % cycle loss are
    # (0.2 / beta)^2 / (2 x 2.05 Ah) ~ 415 (computed from the paper's equation; calendar
    # fade runs alongside, so the engine's figure is a little lower).
    n_published = _continuous_cycles_set("nmc", "schmalstieg-published")
    assert 330 <= n_published <= 415
    # H2020 GHOST figure: 10 % after 9,000 cycles at 80 % DOD -> 14,400 full cycles to 20 %
    # if linear (computed); calendar fade runs alongside.
    assert 12000 <= _continuous_cycles_set("lto", "ghost-figure", years=10) <= 14400
    # Vendor statement: 0.5 %/yr self-discharge -> 0.995 after a year at 20 °C, no load.
    chem = get_chemistry("lisocl2")
    result = age_lanes(chem, np.full((H, 1), 20.0), np.ones((H, 1)), None, 3.6, 1,
                       aging_set="low-self-discharge")
    assert result.soh_monthly[-1, 0] == pytest.approx(0.995, rel=1e-6)


def _continuous_cycles_set(chem_id, aging_set, years=1):
    chem = get_chemistry(chem_id)
    volts = chem.default_charge_voltage_v_per_cell
    even = np.arange(H) % 2 == 0
    soc = np.where(even, 1.0, 0.0)[:, None]
    current = np.where(even, 1.0, -1.0)[:, None]
    result = age_lanes(chem, np.full((H, 1), 25.0), soc, current, volts, years, aging_set=aging_set)
    return float(result.years_to_soh(0.8)[0]) * H / 2.0


def test_column_block_is_read_in_place_with_the_same_result():
    # One chemistry's lanes are a block of columns of the SOC run's arrays; the hour sweep
    # reads them from the parent array. Same inputs must age the same as a contiguous copy,
    # to the bit, including with chunks of lanes (calendar and cycle laws of research note
    # §6.1; this checks the reading of the inputs, not the laws).
    rng = np.random.default_rng(4)
    n = 9
    temp = 15 + 20 * rng.random((H, 3))
    soc = np.clip(0.6 + 0.3 * np.sin(np.arange(H) / 5.0)[:, None]
                  + 0.05 * rng.random((H, n)), 0, 1).astype(np.float32)
    current = (0.05 * rng.standard_normal((H, n))).astype(np.float32)
    lanes = slice(3, 8)
    sites = np.array([0, 1, 2, 1, 0])
    block = age_lanes("lfp", temp, soc[:, lanes], current[:, lanes], 3.55, 4, lane_site=sites,
                      chunk_lanes=2)
    copied = age_lanes("lfp", temp, np.ascontiguousarray(soc[:, lanes]),
                       np.ascontiguousarray(current[:, lanes]), 3.55, 4, lane_site=sites,
                       chunk_lanes=2)
    np.testing.assert_array_equal(block.soh_monthly, copied.soh_monthly)
    np.testing.assert_array_equal(block.cycle_loss_frac, copied.cycle_loss_frac)
    assert np.all(block.cycle_loss_frac[-1] > 0)
