"""Tests of planner.pack.structure: pack structure, weakest link, gradients, balancing, life spread.

Every expected value is computed from a published law or a definition, or is a fact
of the trade; the source is named beside each check. Invented numbers appear only
as inputs (curve coefficients, spreads).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import norm

from planner.errors import InputError
from planner.pack.spread import DEFAULT_DRAWS, life_distribution, life_fields, life_summary
from planner.pack.structure import (
    BALANCING_KINDS,
    SPREAD_PRESETS,
    arrhenius_factor,
    inner_temperature_offsets_k,
    pack_structure,
    row_years,
    scaled_loss_curve,
    stress_parameters,
    string_current_shares,
    usable_string_capacity_frac,
    years_to_threshold,
)

R = 8.314462618  # J/mol/K, CODATA 2018 (exact)

# Input curves (invented coefficients): square-root laws, as in the calendar law of
# Naumann et al. 2018 and the sqrt(FEC) cycle law of Naumann et al. 2020 (notes 1.2, 1.3).
HORIZON_Y = 20
MONTHS = np.arange(12 * HORIZON_Y + 1)
T_Y = MONTHS / 12.0
K_CAL, K_CYC = 0.03, 0.02  # loss per sqrt(year)
CAL = K_CAL * np.sqrt(T_Y)
CYC = K_CYC * np.sqrt(T_Y)


def sqrt_law_life_y(margin_frac, k_per_sqrt_y):
    """Years for k*sqrt(t) to reach a margin: t = (margin/k)**2 (closed form)."""
    return (margin_frac / k_per_sqrt_y) ** 2


NO_SPREAD = dict(cell_spread_frac=0.0, resistance_spread_frac=0.0, rate_spread_frac=0.0,
                 inner_delta_k=0.0, parallel_imbalance_frac=0.0)


# --- Arrhenius -----------------------------------------------------------------------


def test_arrhenius_plus_10k_at_25c_for_50kj():
    # Arrhenius law AF = exp(Ea/R (1/T1 - 1/T2)); computed here: 50 kJ/mol, 298.15 -> 308.15 K.
    expected = math.exp(50e3 / R * (1 / 298.15 - 1 / 308.15))
    got = arrhenius_factor(10.0, reference_temp_c=25.0, activation_energy_j_mol=50e3)
    assert got == pytest.approx(expected, rel=1e-12)
    assert round(float(got), 2) == 1.92  # the task's stated value, computed from the law


def test_arrhenius_halving_rule_is_reproduced():
    # Lead-acid "life halves per 10 K" (notes 4.1, BU-806a / vendor tables [SRC]) is the
    # Arrhenius law with Ea = R*T1*T2*ln2/dT (algebra of the law): factor exactly 2.
    ea = R * 298.15 * 308.15 * math.log(2) / 10.0
    assert arrhenius_factor(10.0, reference_temp_c=25.0, activation_energy_j_mol=ea) == pytest.approx(2.0)
    # and no offset means no change (definition)
    assert arrhenius_factor(0.0, activation_energy_j_mol=ea) == 1.0


# --- pack structure ------------------------------------------------------------------


def test_pack_structure_12v_lfp():
    # common practice: a 12 V LFP battery is 4 cells of 3.2 V in series (12.8 V nominal).
    p = pack_structure(system_voltage_v=12, required_capacity_wh=2400, cell_voltage_v=3.2,
                       cell_capacity_ah=100, mass_kg_per_kwh=10.0, volume_l_per_kwh=5.0)
    assert (p.series_cells, p.parallel_strings, p.label) == (4, 2, "4s2p")
    # definition: Wh = V x Ah; 12.8 V x 200 Ah = 2560 Wh; mass = kWh x kg/kWh
    assert p.nominal_voltage_v == pytest.approx(12.8)
    assert p.capacity_ah == pytest.approx(200.0)
    assert p.capacity_wh == pytest.approx(2560.0)
    assert p.mass_kg == pytest.approx(25.6)
    assert p.volume_l == pytest.approx(12.8)


@pytest.mark.parametrize("system_v, cell_v, charge_v, series", [
    (48, 3.2, 3.6, 16),   # common practice: 48 V LFP = 16s (51.2 V nominal, 57.6 V charge)
    (24, 3.2, 3.6, 8),    # common practice: 24 V LFP = 8s
    (12, 3.7, 4.2, 3),    # common practice: 12 V NMC = 3s (12.6 V full)
    (24, 3.7, 4.2, 7),    # common practice: 24 V NMC = 7s (29.4 V full)
    (24, 2.0, 2.4, 12),   # common practice: 24 V lead-acid bank = 12 cells of 2 V
    (12, 1.2, 1.45, 10),  # common practice: 12 V NiMH = 10 cells of 1.2 V
    (12, 2.0, None, 6),   # common practice: 12 V lead-acid = 6 cells (nominal rule)
    (12, 3.2, None, 4),   # common practice: 12 V LFP = 4s (nominal rule)
    (12, 12.0, None, 1),  # a 12 V module is one series element (definition)
])
def test_pack_structure_series_counts(system_v, cell_v, charge_v, series):
    p = pack_structure(system_voltage_v=system_v, required_capacity_wh=100, cell_voltage_v=cell_v,
                       cell_capacity_ah=10, charge_voltage_v_per_cell=charge_v)
    assert p.series_cells == series
    assert p.parallel_strings == 1


def test_pack_structure_exact_requirement_needs_no_extra_string():
    # definition: ceil(2560 / 1280) = 2 strings; float noise must not add a third.
    p = pack_structure(system_voltage_v=12, required_capacity_wh=2560.0000000001, cell_voltage_v=3.2,
                       cell_capacity_ah=100)
    assert p.parallel_strings == 2
    # never smaller than required (common practice)
    p = pack_structure(system_voltage_v=12, required_capacity_wh=2561, cell_voltage_v=3.2,
                       cell_capacity_ah=100)
    assert p.parallel_strings == 3 and p.capacity_wh >= 2561


@pytest.mark.parametrize("kwargs", [
    dict(system_voltage_v=0, required_capacity_wh=100, cell_voltage_v=3.2, cell_capacity_ah=10),
    dict(system_voltage_v=12, required_capacity_wh=-5, cell_voltage_v=3.2, cell_capacity_ah=10),
    dict(system_voltage_v=12, required_capacity_wh=100, cell_voltage_v="x", cell_capacity_ah=10),
    dict(system_voltage_v=12, required_capacity_wh=100, cell_voltage_v=3.2, cell_capacity_ah=10,
         series_cells=2.5),
    dict(system_voltage_v=12, required_capacity_wh=100, cell_voltage_v=3.2, cell_capacity_ah=10,
         mass_kg_per_kwh="heavy"),
])
def test_pack_structure_bad_input_is_one_line_input_error(kwargs):
    with pytest.raises(InputError) as err:
        pack_structure(**kwargs)
    assert "\n" not in str(err.value) and "expected" in str(err.value)


# --- geometry, currents, weakest link ------------------------------------------------


def test_inner_offsets_follow_conduction_parabola():
    # Incropera & DeWitt 2007 eq. 3.40 (number from memory): uniform generation -> parabolic T(x), peak in the
    # middle. Cell centres of 5 cells at x = 0.1..0.9; normalising so the end cells are 0
    # and the centre 1 gives (1-(2x-1)^2 - 0.36)/0.64 -> 0, 0.75, 1, 0.75, 0 (computed).
    np.testing.assert_allclose(inner_temperature_offsets_k(5, 4.0), 4.0 * np.array([0, 0.75, 1, 0.75, 0]),
                               atol=1e-12)
    # rows of one or two cells have no inner cell (definition)
    assert not inner_temperature_offsets_k(1, 5.0).any()
    assert not inner_temperature_offsets_k(2, 5.0).any()


@given(st.integers(1, 8), st.floats(0, 0.9))
def test_string_shares_obey_kirchhoff(m, imb):
    imb = min(imb, m - 1.0)
    s = string_current_shares(m, imb)
    # Kirchhoff's current law: the shares add to the whole pack current (m even shares)
    assert s.sum() == pytest.approx(m)
    assert s[0] == pytest.approx(1.0 + imb if m > 1 else 1.0)
    assert (s >= -1e-12).all()


caps = st.lists(st.floats(0.5, 1.2, allow_nan=False), min_size=1, max_size=24)


@given(caps)
def test_series_string_usable_capacity_is_weakest_cell(c):
    # Definition of a series string: one current through every cell, so it stops with
    # the first empty cell: usable capacity = the weakest cell's.
    c = np.array(c)
    assert usable_string_capacity_frac(c, balancing="passive") == c.min()


@given(caps, st.floats(0.0, 1.0), st.data())
def test_balancing_bounds_follow_definitions(c, eta, data):
    c = np.array(c)
    u = np.array(data.draw(st.lists(st.floats(0, 0.2), min_size=c.size, max_size=c.size)))
    none = usable_string_capacity_frac(c, u, balancing="none")
    passive = usable_string_capacity_frac(c, u, balancing="passive")
    active = usable_string_capacity_frac(c, balancing="active", active_recovery_frac=eta)
    # charge offsets can only narrow the window (definition of the SOC window)
    assert none <= passive + 1e-12
    # equal offsets shift every cell alike and change nothing (definition)
    assert usable_string_capacity_frac(c, np.full(c.size, 0.1), balancing="none") == pytest.approx(c.min())
    # active balancing lies between the weakest cell and the cell mean (charge conservation)
    assert c.min() - 1e-12 <= active <= c.mean() + 1e-12


def test_active_balancing_extremes():
    c = np.array([0.9, 1.0, 1.1])
    # eta = 0 recovers nothing; eta = 1 makes the string deliver the mean (charge conservation)
    assert usable_string_capacity_frac(c, balancing="active", active_recovery_frac=0.0) == pytest.approx(0.9)
    assert usable_string_capacity_frac(c, balancing="active", active_recovery_frac=1.0) == pytest.approx(1.0)


# --- curve scaling and threshold -------------------------------------------------------


@pytest.mark.parametrize("z", [0.5, 0.75, 1.0])
@pytest.mark.parametrize("m", [0.7, 1.0, 1.92, 3.0])
def test_coefficient_multiplier_equals_equivalent_time(z, m):
    # Notes 6.1 convention B: for L = k t**z a coefficient multiplier m is the clock
    # m**(1/z): L(m**(1/z) t) = m L(t) (algebra), also beyond the curve's horizon.
    curve = 0.01 * (MONTHS / 12.0) ** z
    got = scaled_loss_curve(curve, m ** (1 / z) * MONTHS, time_exponent=z)
    np.testing.assert_allclose(got[12::12], m * curve[12::12], rtol=2e-3)


def test_row_years_calendar_months():
    # Gregorian month lengths (31, 28, 31 ... days; leap day dropped as in DEVELOPERS.md)
    assert row_years(12) == 1.0
    assert row_years(1) == pytest.approx(31 / 365)
    assert row_years(2.5) == pytest.approx((31 + 28 + 15.5) / 365)  # January, February, half of March
    assert row_years(25) == pytest.approx(2 + 31 / 365)


def test_years_to_threshold_agrees_with_aging_engine():
    # The aging engine's public years_to_soh is the reference for the single-cell life.
    from planner.aging import years_to_soh

    soh = 1.0 - CAL - CYC
    for thr in (0.9, 0.85, 0.8, 0.78):
        assert years_to_threshold(soh, thr) == pytest.approx(years_to_soh(soh, thr), abs=1e-9)


def test_years_to_threshold_linear_curve():
    # closed form: 1 - 0.02 t = 0.8 at t = 10 years; never reached -> inf; starts below -> 0
    soh = 1 - 0.02 * T_Y
    assert years_to_threshold(soh, 0.8) == pytest.approx(10.0)
    assert years_to_threshold(soh, 0.5) == np.inf
    assert years_to_threshold(soh, 1.1) == 0.0


# --- Monte Carlo: identity and closed forms --------------------------------------------


def test_one_cell_without_spread_is_the_single_cell_curve():
    # Limit check: zero spread, zero gradient, one cell -> the single-cell result.
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.8,
                          series_cells=1, draws=20, **NO_SPREAD)
    single = 1.0 - CAL - CYC
    for band in (d.soh_p10_by_month, d.soh_p50_by_month, d.soh_p90_by_month):
        np.testing.assert_allclose(band[:, 0], single, atol=1e-6)
    from planner.aging import years_to_soh  # the single-cell engine's own reading

    yrs = years_to_soh(single, 0.8)
    assert d.p10_years[0] == pytest.approx(yrs, rel=1e-5)
    assert d.p90_years[0] == pytest.approx(yrs, rel=1e-5)
    # and the single-cell curve itself crosses where the sqrt law says: (0.2/0.05)^2 = 16 y
    assert yrs == pytest.approx(sqrt_law_life_y(0.2, K_CAL + K_CYC), rel=1e-3)
    # a certain life: probability of failing before age y is 0 then 1 (definition)
    assert d.prob_fail_before_year[:16, 0].max() == 0.0 and d.prob_fail_before_year[16:, 0].min() == 1.0


@pytest.mark.parametrize("balancing", BALANCING_KINDS)
def test_identical_parallel_strings_are_one_cell(balancing):
    # Strings in parallel add capacity (definition), so identical cells with even current
    # give the single-cell SOH; no SOC offsets either.
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, series_cells=1,
                          parallel_strings=3, balancing=balancing, draws=20,
                          soc_offset_spread_frac=0, soc_drift_spread_frac_per_year=0, **NO_SPREAD)
    np.testing.assert_allclose(d.soh_p50_by_month[:, 0], 1.0 - CAL - CYC, atol=1e-6)


def test_weakest_link_order_statistics():
    # Capacity spread only, identical aging (no gradient, heat, depth effect): each draw's
    # pack SOH is min(c0) x nominal SOH. The median of the minimum of n iid N(1, s) is
    # 1 + s * Phi^-1(1 - 0.5**(1/n)) (order statistics of the minimum; Phi from scipy).
    n, s = 4, 0.02
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.8,
                          series_cells=n, cell_spread_frac=s, resistance_spread_frac=0,
                          rate_spread_frac=0, inner_delta_k=0, self_heating_k=0,
                          depth_stress_exponent=0, draws=4000, seed=3)
    single = 1.0 - CAL - CYC
    median_min = 1 + s * norm.ppf(1 - 0.5 ** (1 / n))
    np.testing.assert_allclose(d.soh_p50_by_month[:, 0] / single, median_min, atol=0.1 * s)
    # P10 life: 10 % quantile of the minimum, then the sqrt law c*(1 - k sqrt t) = 0.8
    c10 = 1 + s * norm.ppf(1 - 0.9 ** (1 / n))
    expected = sqrt_law_life_y(1 - 0.8 / c10, K_CAL + K_CYC)
    assert d.p10_years[0] == pytest.approx(expected, rel=0.02)


def test_hot_centre_cell_ages_by_arrhenius_coefficient():
    # Three cells, no spread: the centre cell runs dT warmer (parabolic profile), its
    # coefficient is x AF (notes 6.1 convention B), so the string (weakest cell) reaches
    # 0.8 when AF*(k_cal+k_cyc)*sqrt(t) = 0.2 (closed form of the sqrt law).
    ea, dt = 50e3, 10.0
    af = math.exp(ea / R * (1 / 298.15 - 1 / 308.15))
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.8,
                          series_cells=3, cell_spread_frac=0, resistance_spread_frac=0,
                          rate_spread_frac=0, inner_delta_k=dt, activation_energy_j_mol=ea,
                          reference_temp_c=25.0, self_heating_k=0, depth_stress_exponent=0,
                          draws=10)
    assert d.p50_years[0] == pytest.approx(sqrt_law_life_y(0.2, af * (K_CAL + K_CYC)), rel=2e-3)


def test_cycle_activation_energy_applies_to_cycle_part_only():
    # Separate Ea per mechanism (e.g. Naumann 2020 cycle fit has no temperature term):
    # the hot centre cell's loss is AF*k_cal*sqrt(t) + k_cyc*sqrt(t), so the string
    # reaches 0.8 at (0.2/(AF*k_cal + k_cyc))**2 (closed form of the sqrt laws).
    af = math.exp(50e3 / R * (1 / 298.15 - 1 / 308.15))
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.8,
                          series_cells=3, cell_spread_frac=0, resistance_spread_frac=0,
                          rate_spread_frac=0, inner_delta_k=10.0, activation_energy_j_mol=50e3,
                          cycle_activation_energy_j_mol=0.0, self_heating_k=0,
                          depth_stress_exponent=0, draws=10)
    assert d.p50_years[0] == pytest.approx(sqrt_law_life_y(0.2, af * K_CAL + K_CYC), rel=2e-3)


def test_parallel_imbalance_splits_throughput():
    # Two strings, the first carrying 1 + f of an even share and the second 1 - f
    # (Kirchhoff), no spread, heat or depth effect: each string's cycle clock runs at
    # its share, so with sqrt laws pack SOH = 1 - k_cal sqrt(t) - k_cyc sqrt(t) *
    # (sqrt(1+f) + sqrt(1-f)) / 2 and the life is the closed form below.
    f = 0.2
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.8,
                          series_cells=1, parallel_strings=2, parallel_imbalance_frac=f,
                          cell_spread_frac=0, resistance_spread_frac=0, rate_spread_frac=0,
                          inner_delta_k=0, self_heating_k=0, depth_stress_exponent=0, draws=10)
    k_eff = K_CAL + K_CYC * (math.sqrt(1 + f) + math.sqrt(1 - f)) / 2
    assert d.p50_years[0] == pytest.approx(sqrt_law_life_y(0.2, k_eff), rel=2e-3)


def test_linear_law_halves_life_per_halving_step():
    # Laws linear in time (z = 1), e.g. lead-acid float life: +10 K with the halving-rule
    # Ea halves the life: 10 y at 25 degC -> 5 y at 35 degC (notes 4.1, BU-806a [SRC]).
    ea = R * 298.15 * 308.15 * math.log(2) / 10.0
    lin = 0.02 * T_Y  # reaches 0.8 in 10 years
    d = life_distribution(calendar_loss_frac=lin, cycle_loss_frac=np.zeros_like(lin), eol_soh_frac=0.8,
                          series_cells=3, cell_spread_frac=0, resistance_spread_frac=0,
                          rate_spread_frac=0, inner_delta_k=10.0, activation_energy_j_mol=ea,
                          calendar_time_exponent=1.0, self_heating_k=0, depth_stress_exponent=0,
                          draws=10)
    assert d.p50_years[0] == pytest.approx(5.0, rel=1e-3)


# --- Monte Carlo: facts of the trade ----------------------------------------------------

FLEET_CAL = CAL[:, None] * np.array([0.8, 1.0, 1.3])  # three invented sites
FLEET_CYC = CYC[:, None] * np.array([1.0, 1.5, 0.5])


def run(**kw):
    args = dict(calendar_loss_frac=FLEET_CAL, cycle_loss_frac=FLEET_CYC, eol_soh_frac=0.8,
                series_cells=4, draws=600, seed=1)
    args.update(kw)
    return life_distribution(**args)


def test_more_series_cells_never_lengthen_p10():
    # common practice: more cells in series, more chances of a weak cell (equal spread)
    p10 = [run(series_cells=n).p10_years for n in (1, 2, 4, 8, 16)]
    for shorter, longer in zip(p10[1:], p10[:-1]):
        assert (shorter <= longer + 1e-9).all()


@pytest.mark.parametrize("n", [2, 6])
def test_balancing_never_shortens_life(n):
    # common practice: balancing never shortens life; active recovers most
    res = {b: run(series_cells=n, parallel_strings=2, balancing=b) for b in BALANCING_KINDS}
    for q in ("p10_years", "p50_years", "p90_years"):
        assert (getattr(res["none"], q) <= getattr(res["passive"], q) + 1e-9).all()
        assert (getattr(res["passive"], q) <= getattr(res["active"], q) + 1e-9).all()


def test_one_lot_never_shortens_life():
    # common practice: cells from one production lot (smaller spread) never shorten life
    one = SPREAD_PRESETS["one-lot"]
    mixed = SPREAD_PRESETS["mixed-lots"]
    a = run(series_cells=8, cell_spread_frac=one.cell_spread_frac,
            resistance_spread_frac=one.resistance_spread_frac, rate_spread_frac=one.rate_spread_frac)
    b = run(series_cells=8, cell_spread_frac=mixed.cell_spread_frac,
            resistance_spread_frac=mixed.resistance_spread_frac, rate_spread_frac=mixed.rate_spread_frac)
    assert (a.p10_years >= b.p10_years).all() and (a.p50_years >= b.p50_years).all()


@settings(max_examples=20, deadline=None)
@given(n=st.integers(3, 10), dt1=st.floats(0, 5), extra=st.floats(0.1, 5),
       spread=st.floats(0, 0.05), bal=st.sampled_from(BALANCING_KINDS), seed=st.integers(0, 100))
def test_hotter_inner_cell_never_lengthens_life(n, dt1, extra, spread, bal, seed):
    # common practice: a hotter inner cell never lengthens life (property over inputs)
    kw = dict(series_cells=n, cell_spread_frac=spread, rate_spread_frac=spread, balancing=bal,
              draws=64, seed=seed)
    cool = run(inner_delta_k=dt1, **kw)
    hot = run(inner_delta_k=dt1 + extra, **kw)
    for q in ("p10_years", "p50_years", "p90_years"):
        assert (getattr(hot, q) <= getattr(cool, q) * (1 + 1e-6)).all()


def test_feedback_widens_the_spread_over_time():
    # The premise of the pack model (common practice; Baumhoefer et al. 2014, J. Power Sources 247,
    # 332-338, lifetime differences among equal cells): a weak cell cycles deeper and ages
    # faster, so the P10-P90 SOH band is wider with the depth feedback than without.
    kw = dict(series_cells=8, cell_spread_frac=0.03, self_heating_k=0)
    with_fb = run(depth_stress_exponent=1.0, **kw)
    without = run(depth_stress_exponent=0.0, **kw)
    m = 12 * 12
    width = lambda d: d.soh_p90_by_month[m] - d.soh_p10_by_month[m]  # noqa: E731
    assert (width(with_fb) > width(without)).all()


MIXED = {k: getattr(SPREAD_PRESETS["mixed-lots"], k)
         for k in ("cell_spread_frac", "resistance_spread_frac", "rate_spread_frac")}


@pytest.mark.parametrize("cfg, draws", [
    (dict(series_cells=4), DEFAULT_DRAWS),
    (dict(series_cells=16), DEFAULT_DRAWS),
    (dict(series_cells=8, parallel_strings=2, balancing="active"), DEFAULT_DRAWS),
    # wide life distributions (mixed lots) need more draws (docs/pack.md)
    (dict(series_cells=4, parallel_strings=2, **MIXED), 4000),
])
def test_p50_stable_between_seeds(cfg, draws):
    # Monte Carlo check: P50 within 2 % between seeds (docs/pack.md); the default count
    # is 1000 draws (one lot; passive or active balancing).
    assert DEFAULT_DRAWS == 1000
    p50 = [run(draws=draws, seed=seed, **cfg).p50_years for seed in (11, 12, 13)]
    for a in p50:
        for b in p50:
            assert np.all(np.abs(a / b - 1) < 0.02)


def test_failure_probability_matches_percentiles():
    # definition of a percentile: P(life < P10) ~ 0.1, P(life < P90) ~ 0.9; the
    # probability is a CDF: non-decreasing in age and within [0, 1]
    d = run(series_cells=8, draws=2000, cell_spread_frac=0.03)
    prob = d.prob_fail_before_year
    assert prob.shape == (HORIZON_Y, 3)
    assert (np.diff(prob, axis=0) >= 0).all() and prob.min() >= 0 and prob.max() <= 1
    ages = np.arange(1, HORIZON_Y + 1)
    for s in range(3):
        assert np.interp(d.p10_years[s], ages, prob[:, s]) == pytest.approx(0.1, abs=0.06)
        assert np.interp(d.p90_years[s], ages, prob[:, s]) == pytest.approx(0.9, abs=0.06)


def test_model_sets_spread_across_published_models():
    # Two parameter sets whose single-cell lives are 16 y and (0.2/0.065)^2 = 9.47 y
    # (closed form of the sqrt law). Draws split evenly, so with no cell spread P10 is
    # the short life and P90 the long one (definition of the percentiles).
    fast = (1.3 * CAL, 1.3 * CYC)
    d = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, series_cells=1, draws=100,
                          model_sets=[(CAL, CYC), fast], **NO_SPREAD)
    assert d.p10_years[0] == pytest.approx(sqrt_law_life_y(0.2, 1.3 * 0.05), rel=1e-3)
    assert d.p90_years[0] == pytest.approx(sqrt_law_life_y(0.2, 0.05), rel=1e-3)
    assert any("model uncertainty" in n.lower() for n in d.notes)


# --- reproducibility, inputs, JSON fields ---------------------------------------------


def test_chunking_does_not_change_results():
    # a seeded run is reproducible whatever the memory chunking (streams per cell)
    a = run(series_cells=5, draws=200, chunk_elements=1000)
    b = run(series_cells=5, draws=200, chunk_elements=10_000_000)
    np.testing.assert_array_equal(a.p50_years, b.p50_years)
    np.testing.assert_array_equal(a.soh_p10_by_month, b.soh_p10_by_month)


@pytest.mark.parametrize("kw, key", [
    (dict(balancing="smart"), "balancing"),
    (dict(cell_spread_frac=-0.1), "cell_spread_frac"),
    (dict(draws=0), "draws"),
    (dict(series_cells=0), "series_cells"),
    (dict(eol_soh_frac=[0.8, 0.7]), "site count"),
    (dict(cycle_loss_frac=CYC[:100]), "cycle_loss_frac"),
    (dict(model_sets=[]), "model_sets"),
])
def test_bad_life_input_is_one_line_input_error(kw, key):
    with pytest.raises(InputError) as err:
        run(**kw)
    msg = str(err.value)
    assert key in msg and "expected" in msg and "\n" not in msg


def test_life_fields_fixed_names_and_beyond_horizon():
    # fixed JSON names (docs/plan-json.md); a life beyond the horizon is null
    d = run(series_cells=2, draws=50)
    rows = life_fields(d, prefix="life")
    assert len(rows) == 3 and set(rows[0]) == {"life_p10_years", "life_p50_years", "life_p90_years"}
    rows = life_fields(d, prefix="years_to_eol")
    assert set(rows[0]) == {"years_to_eol_p10", "years_to_eol_p50", "years_to_eol_p90"}
    never = life_distribution(calendar_loss_frac=CAL, cycle_loss_frac=CYC, eol_soh_frac=0.1,
                              series_cells=1, draws=10, **NO_SPREAD)
    assert life_fields(never)[0]["life_p50_years"] is None
    assert never.p50_years[0] == np.inf


def test_life_summary_from_fade_result_is_one_call():
    # wiring helper: a FadeResult-like object in, fixed JSON fields out (docs/plan-json.md names)
    class Fade:
        calendar_loss_frac = CAL
        cycle_loss_frac = CYC

    rows, dist = life_summary(Fade(), prefix="years_to_eol", series_cells=1, draws=10, **NO_SPREAD)
    # one cell without spread: the single-cell life, (0.2/0.05)^2 = 16 y (sqrt law)
    assert rows[0]["years_to_eol_p50"] == pytest.approx(16.0, abs=1e-3)
    assert dist.draws == 10
    # FadeResult-like objects are accepted as model sets too
    _, d2 = life_summary(Fade(), series_cells=1, draws=10, model_sets=[Fade(), Fade()], **NO_SPREAD)
    assert d2.p50_years[0] == pytest.approx(16.0, abs=1e-3)
    with pytest.raises(InputError):
        life_summary(series_cells=1)


def test_stress_parameters_of_the_chemistry_library():
    from planner.chemistry import get_chemistry

    vrla = stress_parameters(get_chemistry("vrla").aging_set("halving-8.3k"))
    # halving rule: life halves per 8.3 K (notes 4.1, IEEE 1188 practice) -> the
    # Arrhenius factor over 8.3 K from 25 degC is exactly 2; both laws linear in time
    af = arrhenius_factor(8.3, reference_temp_c=25.0, activation_energy_j_mol=vrla["activation_energy_j_mol"])
    assert af == pytest.approx(2.0)
    assert vrla["calendar_time_exponent"] == 1.0 and vrla["cycle_time_exponent"] == 1.0
    # notes 6.3: halving per 8.3 K is about 62 kJ/mol (R T^2 ln2 / dT)
    assert vrla["activation_energy_j_mol"] == pytest.approx(62e3, rel=0.03)
    nmc = stress_parameters(get_chemistry("nmc").aging_set("schmalstieg"))
    # Schmalstieg et al. 2014: t**0.75 calendar law, sqrt(Q) cycle law, exp(-6976/T) = 58.0 kJ/mol (notes 2.1)
    assert nmc["calendar_time_exponent"] == 0.75 and nmc["cycle_time_exponent"] == 0.5
    assert nmc["activation_energy_j_mol"] == pytest.approx(58.0e3, rel=1e-3)
    lfp = stress_parameters(get_chemistry("lfp").aging_set("naumann"))
    # Naumann 2018 sqrt(t) calendar law with Ea 17 126 J/mol; the 2020 cycle fit has no
    # temperature term (notes 1.2, 1.3)
    assert lfp["calendar_time_exponent"] == 0.5 and lfp["cycle_time_exponent"] == 0.5
    assert lfp["activation_energy_j_mol"] == pytest.approx(17126.0)
    assert lfp["cycle_activation_energy_j_mol"] == 0.0


ZERO = np.zeros_like(CAL)  # no aging: isolates the string arithmetic


def test_unbalanced_string_loses_the_charge_offset_spread():
    # No balancing, two equal cells whose charge offsets start N(0, s0) and drift
    # N(0, sd) per year: usable = 1 - |u1 - u2| with u1 - u2 ~ N(0, 2 (s0^2 + (sd t)^2)),
    # so the median usable capacity is 1 - Phi^-1(0.75) sqrt(2 (s0^2 + (sd t)^2))
    # (median of a half-normal; Phi^-1 from scipy).
    s0, sd = 0.01, 0.005
    d = life_distribution(calendar_loss_frac=ZERO, cycle_loss_frac=ZERO, series_cells=2,
                          balancing="none", soc_offset_spread_frac=s0,
                          soc_drift_spread_frac_per_year=sd, draws=4000, **NO_SPREAD)
    for years in (0, 5, 10, 20):
        expected = 1 - norm.ppf(0.75) * math.sqrt(2 * (s0 ** 2 + (sd * years) ** 2))
        assert d.soh_p50_by_month[12 * years, 0] == pytest.approx(expected, abs=0.03 * (1 - expected))


def test_active_balancing_recovers_its_share_of_the_gap():
    # Two cells N(1, s), active recovery eta: usable = min + eta (mean - min)
    # = M - (1 - eta) |D| / 2 with M = mean ~ N(1, s^2/2) and D = c1 - c2 ~ N(0, 2 s^2)
    # independent (sum and difference of iid normals). Its median solves
    # P(M <= x + a|D|) = 0.5, integrated over |D| with scipy (quad + brentq).
    from scipy.integrate import quad
    from scipy.optimize import brentq

    s, eta = 0.03, 0.8
    a, sd_d, sd_m = (1 - eta) / 2, math.sqrt(2) * s, s / math.sqrt(2)

    def cdf(x):
        dens = lambda dd: 2 * norm.pdf(dd, scale=sd_d) * norm.cdf(x + a * dd, loc=1, scale=sd_m)  # noqa: E731
        return quad(dens, 0, 10 * sd_d)[0]

    expected = brentq(lambda x: cdf(x) - 0.5, 0.9, 1.05)
    d = life_distribution(calendar_loss_frac=ZERO, cycle_loss_frac=ZERO, series_cells=2,
                          balancing="active", active_recovery_frac=eta, draws=4000,
                          **{**NO_SPREAD, "cell_spread_frac": s})
    assert d.soh_p50_by_month[0, 0] == pytest.approx(expected, abs=0.02 * s)
    # and passive keeps only the weakest cell: eta = 0 in the same formula
    a = 0.5
    expected_passive = brentq(lambda x: cdf(x) - 0.5, 0.9, 1.05)
    d = life_distribution(calendar_loss_frac=ZERO, cycle_loss_frac=ZERO, series_cells=2,
                          balancing="passive", draws=4000, **{**NO_SPREAD, "cell_spread_frac": s})
    assert d.soh_p50_by_month[0, 0] == pytest.approx(expected_passive, abs=0.02 * s)
