"""Tests of planner.energy.soc and planner.energy.mains.

Check values come from: the energy balance itself (first law: energy in = energy out +
losses + change in stored energy), hand arithmetic of the documented recursion, an
independent pure-Python reference loop written from the module's stated equations,
facts of the trade (float charging holds a pack full; lithium-ion must not be charged
below 0 degC without a heater), and pvlib's clear-sky model for the PV behaviour case.
"""

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.energy import mains, pv, soc, soc_fused, soc_numpy, soc_results
from planner.errors import InputError

H = 8760


def _reference_lane(charge, load, cap, temp, *, usable, eta_c, eta_d, sd, c_max, t_min,
                    heater, soc_min, avail, soc0, t_max=np.inf):
    """One lane, one hour at a time, in plain Python floats (independent of numpy code).

    Written from the recursion stated in the soc module docstring: self-discharge,
    net = charge - load, accept min(surplus, c_max*C, room/eta_c) unless blocked,
    deliver min(deficit, (E - floor)*eta_d)."""
    e = min(soc0, usable) * cap
    e0 = e
    tot_in = tot_out = tot_sd = uns = 0.0
    socs = []
    for t in range(len(charge)):
        loss = e * sd[t]
        e -= loss
        tot_sd += loss
        net = charge[t] - load[t]
        if net > 0:
            ok = (temp[t] >= t_min or heater[t]) and temp[t] <= t_max
            a = min(net, c_max * cap, (usable * cap - e) / eta_c) if ok else 0.0
            a = max(a, 0.0)
            e += a * eta_c
            tot_in += a
        elif net < 0:
            floor = cap * (1.0 - avail[t] * (1.0 - soc_min))
            o = max(min(-net, (e - floor) * eta_d), 0.0)
            e -= o / eta_d
            tot_out += o
            uns += -net - o
        socs.append(e / cap)
    return dict(energy_in_wh=tot_in, energy_out_wh=tot_out, self_discharge_wh=tot_sd,
                unserved_wh=uns, delta_stored_wh=e - e0, soc=np.array(socs))


def _random_case(rng, n_hours, n):
    return dict(
        charge=rng.uniform(0, 80, (n_hours, n)) * (rng.random((n_hours, n)) < 0.5),
        load=rng.uniform(0, 40, (n_hours, n)),
        cap=rng.uniform(100, 2000, n),
        temp=rng.uniform(-15, 30, (n_hours, n)),
        usable=rng.uniform(0.7, 1.0, n),
        eta_c=rng.uniform(0.8, 1.0, n),
        eta_d=rng.uniform(0.8, 1.0, n),
        sd=rng.uniform(0, 1e-3, (n_hours, n)),
        c_max=rng.uniform(0.05, 1.0, n),
        t_min=rng.choice([-np.inf, 0.0, -10.0], n),
        # a maximum inside the drawn temperatures, so the heat block is exercised too
        t_max=rng.choice([np.inf, 25.0], n),
        heater=rng.random((n_hours, n)) < 0.2,
        soc_min=rng.uniform(0.0, 0.5, n),
        avail=rng.uniform(0.6, 1.0, (n_hours, n)),
        soc0=rng.uniform(0.0, 1.0, n),
    )


def _run(c, **kw):
    return soc.simulate_soc(
        c["charge"], c["load"], c["cap"], c["temp"], usable_fraction=c["usable"],
        charge_efficiency_frac=c["eta_c"], discharge_efficiency_frac=c["eta_d"],
        self_discharge_frac_per_h=c["sd"], max_charge_c_rate=c["c_max"],
        charge_temp_min_c=c["t_min"], charge_temp_max_c=c["t_max"], heater_on=c["heater"],
        min_soc_frac=c["soc_min"],
        available_capacity_frac=c["avail"], initial_soc_frac=c["soc0"], **kw)


def test_matches_independent_reference_loop():
    # reference: the recursion in plain Python, lane by lane (independent implementation)
    rng = np.random.default_rng(7)
    c = _random_case(rng, 300, 6)
    r = _run(c, keep_series_for=range(6), chunk_lanes=4)
    for j in range(6):
        ref = _reference_lane(
            c["charge"][:, j], c["load"][:, j], c["cap"][j], c["temp"][:, j],
            usable=c["usable"][j], eta_c=c["eta_c"][j], eta_d=c["eta_d"][j],
            sd=c["sd"][:, j], c_max=c["c_max"][j], t_min=c["t_min"][j],
            heater=c["heater"][:, j], soc_min=c["soc_min"][j], avail=c["avail"][:, j],
            soc0=c["soc0"][j], t_max=c["t_max"][j])
        for key in ("energy_in_wh", "energy_out_wh", "self_discharge_wh", "delta_stored_wh"):
            assert getattr(r, key)[j] == pytest.approx(ref[key], rel=1e-9, abs=1e-7)
        assert r.unserved_wh[j] == pytest.approx(ref["unserved_wh"], rel=1e-9, abs=1e-6)
        # float32 series: agree to single precision
        np.testing.assert_allclose(r.soc_frac_series[:, j], ref["soc"], atol=2e-6)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), n_hours=st.integers(1, 200),
       n=st.integers(1, 7), chunk=st.integers(1, 8))
def test_energy_conservation_per_lane(seed, n_hours, n, chunk):
    # first law per lane: energy in = energy out + losses + change in stored energy
    # (to 1e-9 relative: docs/energy.md, energy conservation)
    rng = np.random.default_rng(seed)
    c = _random_case(rng, n_hours, n)
    r = _run(c, chunk_lanes=chunk)
    scale = np.maximum.reduce([r.energy_in_wh, r.energy_out_wh, np.abs(r.delta_stored_wh),
                               r.losses_wh, c["cap"]])
    residual = r.energy_in_wh - r.energy_out_wh - r.losses_wh - r.delta_stored_wh
    assert np.all(np.abs(residual) <= 1e-9 * scale)
    # physical bounds: SOC never above the charge-voltage cap, never negative
    assert np.all(r.min_soc_frac >= -1e-7)
    assert np.all(r.final_soc_frac <= c["usable"] + 1e-12)
    # delivered + unserved equals the deficit offered (energy of the load side)
    deficit = np.maximum(c["load"] - c["charge"], 0).sum(axis=0)
    np.testing.assert_allclose(r.energy_out_wh + r.unserved_wh, deficit, rtol=1e-9, atol=1e-6)


def test_conservation_full_year_many_lanes_with_site_mapping():
    # first law again over a full 8,760 h year, lanes reading per-site columns
    rng = np.random.default_rng(3)
    n_sites, per_site = 3, 8
    hours = np.arange(H)
    sun = np.clip(np.sin((hours % 24 - 6) / 12 * np.pi), 0, None)
    charge = sun[:, None] * rng.uniform(20, 200, n_sites)
    load = np.full((H, n_sites), 8.0)
    temp = 10 + 15 * np.sin(2 * np.pi * hours / H)[:, None] + rng.normal(0, 3, (H, n_sites))
    site = np.repeat(np.arange(n_sites), per_site)
    cap = np.tile(np.linspace(200, 3000, per_site), n_sites)
    r = soc.simulate_soc(charge, load, cap, temp, usable_fraction=0.95,
                         charge_efficiency_frac=0.95, discharge_efficiency_frac=0.96,
                         self_discharge_frac_per_h=2e-5, max_charge_c_rate=0.3,
                         charge_temp_min_c=0.0, min_soc_frac=0.2, lane_site_index=site,
                         chunk_lanes=12)
    residual = r.energy_in_wh - r.energy_out_wh - r.losses_wh - r.delta_stored_wh
    assert np.all(np.abs(residual) <= 1e-9 * r.energy_in_wh)
    # the same lanes with expanded per-lane arrays give identical results
    r2 = soc.simulate_soc(charge[:, site], load[:, site], cap, temp[:, site],
                          usable_fraction=0.95, charge_efficiency_frac=0.95,
                          discharge_efficiency_frac=0.96, self_discharge_frac_per_h=2e-5,
                          max_charge_c_rate=0.3, charge_temp_min_c=0.0, min_soc_frac=0.2,
                          chunk_lanes=1000)
    for key in ("energy_in_wh", "energy_out_wh", "unserved_wh", "mean_soc_frac",
                "longest_low_soc_days", "charge_blocked_hours"):
        np.testing.assert_allclose(getattr(r, key), getattr(r2, key), rtol=1e-12, atol=1e-9)


def test_zero_load_on_float_stays_full():
    # common practice: a float charger holds an idle pack full; self-discharge is made up
    up = mains.mains_available(H)
    charge = mains.float_charge_power_w(up, 50.0)
    r = soc.simulate_soc(charge, 0.0, np.array([1200.0, 4800.0]), 20.0,
                         usable_fraction=np.array([1.0, 0.9]), charge_efficiency_frac=0.9,
                         discharge_efficiency_frac=0.95, self_discharge_frac_per_h=1e-4,
                         min_soc_frac=0.2)
    np.testing.assert_allclose(r.min_soc_frac, [1.0, 0.9], rtol=1e-6)  # float32 series
    np.testing.assert_allclose(r.mean_soc_frac, [1.0, 0.9], rtol=1e-6)
    assert np.all(r.unserved_wh == 0) and np.all(r.energy_out_wh == 0)
    # what it accepted is exactly the self-discharge / charge efficiency (energy balance)
    np.testing.assert_allclose(r.energy_in_wh * 0.9, r.self_discharge_wh, rtol=1e-9)


def test_backup_pack_carries_outages_then_recharges():
    # a 100 Wh/h load through a 24 h outage from a 4 kWh pack: hand arithmetic
    up = np.ones(200, dtype=bool)
    up[50:74] = False
    charge = mains.float_charge_power_w(up, 500.0)
    r = soc.simulate_soc(charge, 100.0, np.array([4000.0]), 20.0, usable_fraction=1.0,
                         charge_efficiency_frac=1.0, discharge_efficiency_frac=1.0,
                         min_soc_frac=0.0, keep_series_for=[0])
    assert r.energy_out_wh[0] == pytest.approx(2400.0)     # 24 h x 100 W
    assert r.min_soc_frac[0] == pytest.approx(1 - 2400 / 4000, abs=1e-6)
    assert r.final_soc_frac[0] == pytest.approx(1.0)       # 400 W surplus refills it
    assert r.unserved_wh[0] == 0.0


def test_lithium_below_zero_without_heater_gets_no_charge():
    # common practice (BMS rule): no lithium-ion charging below 0 degC without heating
    charge = np.full(48, 200.0)
    kw = dict(usable_fraction=1.0, charge_efficiency_frac=0.98, discharge_efficiency_frac=0.98,
              charge_temp_min_c=0.0, initial_soc_frac=0.3)
    cold = soc.simulate_soc(charge, 0.0, np.array([1000.0]), -5.0, **kw)
    assert cold.energy_in_wh[0] == 0.0
    assert cold.charge_blocked_hours[0] == 48
    assert cold.final_soc_frac[0] == pytest.approx(0.3)
    heated = soc.simulate_soc(charge, 0.0, np.array([1000.0]), -5.0,
                              heater_on=np.ones(48, dtype=bool), **kw)
    assert heated.energy_in_wh[0] > 0 and heated.final_soc_frac[0] == pytest.approx(1.0)
    # a lead-acid lane (no charge-temperature limit) in the same hours does charge
    lead = soc.simulate_soc(charge, 0.0, np.array([1000.0]), -5.0,
                            **{**kw, "charge_temp_min_c": -np.inf})
    assert lead.energy_in_wh[0] > 0


def test_hot_pack_gets_no_charge_and_hours_are_counted_apart():
    # common practice (BMS rule): lithium-ion is not charged above its maximum charge
    # temperature (45 degC for LFP/NMC in chemistries.toml); a heater does not help
    temp = np.r_[np.full(10, -5.0), np.full(20, 50.0), np.full(18, 25.0)]
    charge = np.full(48, 100.0)
    kw = dict(usable_fraction=1.0, charge_efficiency_frac=1.0, discharge_efficiency_frac=1.0,
              charge_temp_min_c=0.0, charge_temp_max_c=45.0, initial_soc_frac=0.0)
    for engine in ("auto", "numpy"):
        r = soc.simulate_soc(charge, 0.0, np.array([10000.0]), temp, engine=engine,
                             heater_on=np.r_[np.zeros(10), np.ones(20), np.zeros(18)] > 0,
                             **kw)
        assert r.charge_blocked_cold_hours[0] == 10
        assert r.charge_blocked_hot_hours[0] == 20     # the heater in those hours changes nothing
        assert r.charge_blocked_hours[0] == 30         # the total, as before
        assert r.energy_in_wh[0] == pytest.approx(18 * 100.0)


def test_charge_acceptance_limit_and_efficiency_by_hand():
    # empty 1000 Wh pack, C/10 acceptance, eta_c 0.9, 2 kW offered: 100 Wh/h accepted,
    # 90 Wh/h stored, full (1000 Wh) after 1000/90 = 11.1 h -> 11 full hours + 10 Wh
    r = soc.simulate_soc(np.full(24, 2000.0), 0.0, np.array([1000.0]), 20.0,
                         usable_fraction=1.0, charge_efficiency_frac=0.9,
                         discharge_efficiency_frac=1.0, max_charge_c_rate=0.1,
                         initial_soc_frac=0.0, keep_series_for=[0])
    assert r.max_c_rate[0] == pytest.approx(0.1, rel=1e-6)
    assert r.soc_frac_series[0, 0] == pytest.approx(0.09, rel=1e-6)
    assert r.energy_in_wh[0] == pytest.approx(1000.0 / 0.9)
    assert r.curtailed_wh[0] == pytest.approx(24 * 2000.0 - 1000.0 / 0.9)
    # sign convention of the C-rate series: negative while charging
    assert r.current_c_rate_series[0, 0] == pytest.approx(-0.1, rel=1e-6)


def test_discharge_to_floor_then_unserved_by_hand():
    # 1000 Wh full, floor at 20 % (max DOD 0.8), eta_d 0.9, 10 W for 200 h:
    # deliverable = 800 Wh stored x 0.9 = 720 Wh; unserved = 2000 - 720 = 1280 Wh
    r = soc.simulate_soc(0.0, np.full(200, 10.0), np.array([1000.0]), 20.0,
                         usable_fraction=1.0, charge_efficiency_frac=1.0,
                         discharge_efficiency_frac=0.9, min_soc_frac=0.2, keep_series_for=[0])
    assert r.energy_out_wh[0] == pytest.approx(720.0)
    assert r.unserved_wh[0] == pytest.approx(1280.0)
    assert r.unserved_hours[0] == 200 - 72       # 72 full hours served, then short
    assert r.min_soc_frac[0] == pytest.approx(0.2, abs=1e-6)
    assert r.equivalent_full_cycles_per_year[0] == pytest.approx(720 / 1000 * 8760 / 200)
    assert r.current_c_rate_series[0, 0] == pytest.approx(0.01, rel=1e-6)   # 10 W / 1000 Wh


def test_cold_derating_raises_the_floor():
    # half the capacity available: floor = C (1 - 0.5 (1 - 0.2)) = 0.6 C; delivered 400 Wh
    r = soc.simulate_soc(0.0, np.full(100, 10.0), np.array([1000.0]), -10.0,
                         usable_fraction=1.0, charge_efficiency_frac=1.0,
                         discharge_efficiency_frac=1.0, min_soc_frac=0.2,
                         available_capacity_frac=0.5)
    assert r.energy_out_wh[0] == pytest.approx(400.0)
    assert r.min_soc_frac[0] == pytest.approx(0.6, abs=1e-6)


def test_longest_low_soc_days_by_hand():
    # 1000 Wh, 100 Wh/day load, no charging: SOC after hour t is 1 - (t+1)/240; a day's
    # highest SOC is at its first hour; below 0.5 from day 5 on: days 5..29 = 25 days
    r = soc.simulate_soc(0.0, np.full(30 * 24, 100 / 24), np.array([1000.0]), 20.0,
                         usable_fraction=1.0, charge_efficiency_frac=1.0,
                         discharge_efficiency_frac=1.0, low_soc_threshold_frac=0.5)
    assert r.longest_low_soc_days[0] == 25


def test_undersized_pv_unserved_in_winter_not_in_summer():
    # clear-sky year at 62 N from pvlib's Ineichen model (offline Linke turbidity);
    # 30 Wp serving 4 W (96 Wh/day) is short in the dark months and ample in summer
    import pvlib

    lat, lon = 62.0, 25.0
    times = pd.date_range("2023-01-01", periods=H, freq="h", tz="Etc/GMT-2")
    loc = pvlib.location.Location(lat, lon, tz="Etc/GMT-2", altitude=100)
    cs = loc.get_clearsky(times + pd.Timedelta(minutes=30), model="ineichen")
    power = pv.pv_dc_power_w(times, cs["ghi"].to_numpy(), cs["dni"].to_numpy(),
                             cs["dhi"].to_numpy(), np.full(H, 5.0), np.full(H, 2.0),
                             latitude_deg=lat, longitude_deg=lon, altitude_m=100,
                             array_wp=30, tilt_deg=60, azimuth_deg=180)
    r = soc.simulate_soc(power, 4.0, np.array([600.0]), 15.0, usable_fraction=1.0,
                         charge_efficiency_frac=0.95, discharge_efficiency_frac=0.95,
                         min_soc_frac=0.2)
    month = r.unserved_wh_by_month[0]
    assert month[11] > 0 and month[0] > 0            # December, January
    assert month[5] == 0 and month[6] == 0           # June, July
    assert month.sum() == pytest.approx(r.unserved_wh[0], rel=1e-9)


def test_streaming_chunks_equal_whole_run():
    rng = np.random.default_rng(11)
    c = _random_case(rng, 120, 9)
    whole = _run(c, keep_series_for=range(9), chunk_lanes=9)
    kw = dict(usable_fraction=c["usable"], charge_efficiency_frac=c["eta_c"],
              discharge_efficiency_frac=c["eta_d"], self_discharge_frac_per_h=c["sd"],
              max_charge_c_rate=c["c_max"], charge_temp_min_c=c["t_min"],
              charge_temp_max_c=c["t_max"], heater_on=c["heater"], min_soc_frac=c["soc_min"],
              available_capacity_frac=c["avail"], initial_soc_frac=c["soc0"])
    chunks = list(soc.iter_soc_chunks(c["charge"], c["load"], c["cap"], c["temp"],
                                      chunk_lanes=4, **kw))
    assert [(ch.start, ch.stop) for ch in chunks] == [(0, 4), (4, 8), (8, 9)]
    soc_all = np.concatenate([ch.soc_frac for ch in chunks], axis=1)
    np.testing.assert_array_equal(soc_all, whole.soc_frac_series)
    np.testing.assert_array_equal(
        np.concatenate([ch.summary.energy_in_wh for ch in chunks]), whole.energy_in_wh)
    picked = list(soc.iter_soc_chunks(c["charge"], c["load"], c["cap"], c["temp"],
                                      chunk_lanes=4, series=[1, 8], **kw))
    assert picked[1].soc_frac is None
    np.testing.assert_array_equal(picked[0].soc_frac[:, 0], whole.soc_frac_series[:, 1])
    np.testing.assert_array_equal(picked[2].current_c_rate[:, 0],
                                  whole.current_c_rate_series[:, 8])


@pytest.mark.parametrize("kwargs, word", [
    (dict(charge_power_w=-1.0), "charge_power_w"),
    (dict(load_power_w=np.full(10, 1.0)), "load_power_w"),
    (dict(capacity_wh=np.array([0.0])), "capacity_wh"),
    (dict(min_soc_frac=0.95), "min_soc_frac"),
    (dict(charge_efficiency_frac=1.2), "charge_efficiency_frac"),
    (dict(self_discharge_frac_per_h=1.5), "self_discharge_frac_per_h"),
    (dict(temp_battery_c=np.full((H, 3), 5.0)), "temp_battery_c"),
    (dict(keep_series_for=[5]), "keep_series_for"),
])
def test_bad_input_is_one_line_input_error(kwargs, word):
    args = dict(charge_power_w=np.zeros(H), load_power_w=np.zeros(H),
                capacity_wh=np.array([100.0]), temp_battery_c=20.0, usable_fraction=0.9,
                charge_efficiency_frac=0.9, discharge_efficiency_frac=0.9)
    args.update(kwargs)
    with pytest.raises(InputError) as err:
        soc.simulate_soc(args.pop("charge_power_w"), args.pop("load_power_w"),
                         args.pop("capacity_wh"), args.pop("temp_battery_c"), **args)
    assert word in str(err.value) and "\n" not in str(err.value)


def test_compensated_charge_voltage():
    # V(T) = V_set + k (T - 25) inside the band, held outside (the stated compensation law;
    # -5 mV/K/cell is within the -3..-5 mV/K/cell range of lead-acid practice, from memory)
    v = soc.compensated_charge_voltage_v_per_cell(2.40, np.array([25.0, 5.0, -20.0, 60.0]),
                                                  -0.005)
    np.testing.assert_allclose(v, [2.40, 2.50, 2.525, 2.275])


def test_mains_outages_seeded_and_expected_fraction():
    a = mains.mains_available(outages_per_year=12, mean_outage_h=6, seed=4)
    b = mains.mains_available(outages_per_year=12, mean_outage_h=6, seed=4)
    np.testing.assert_array_equal(a, b)
    assert mains.mains_available().all()
    # renewal-process fact: expected unavailability ~ rate x mean duration
    # (12 x 6 / 8760 = 0.82 %); averaged over 200 seeds, within 15 %
    frac = np.mean([1 - mains.mains_available(outages_per_year=12, mean_outage_h=6,
                                              seed=s).mean() for s in range(200)])
    assert frac == pytest.approx(12 * 6 / 8760, rel=0.15)
    with pytest.raises(InputError, match="mean_outage_h"):
        mains.mains_available(outages_per_year=3, mean_outage_h=0)
    with pytest.raises(InputError, match="outages_per_year"):
        mains.mains_available(outages_per_year=-1)
    with pytest.raises(InputError, match="charger_power_w"):
        mains.float_charge_power_w(a, -5.0)


def test_compiled_kernel_logic_equals_numpy_loop():
    # the lane-by-lane kernel (compiled with numba when installed) must reproduce the
    # numpy recursion; run here un-compiled on a tiny case, so it is checked with or
    # without numba. Reference: the numpy recursion, itself checked above.
    rng = np.random.default_rng(5)
    n_hours, n = 24 * 4, 5
    for with_avail, mapping, same in ((True, False, False), (False, True, False),
                                      (False, True, True)):
        c = _random_case(rng, n_hours, n)
        if same:   # one chemistry: efficiencies and charge limit shared by all lanes
            c.update(eta_c=np.full(n, 0.95), eta_d=np.full(n, 0.97), t_min=np.zeros(n),
                     t_max=np.full(n, 25.0))
        site = np.array([0, 1, 1, 2, 0]) if mapping else None
        cols = 3 if mapping else n
        p = soc._prepare(c["charge"][:, :cols], c["load"][:, :cols], c["cap"],
                         c["temp"][:, :cols], c["usable"], c["eta_c"], c["eta_d"],
                         c["sd"][:, :cols], c["c_max"], c["t_min"], c["t_max"], c["heater"][:, :cols],
                         c["soc_min"], c["avail"][:, :cols] if with_avail else None,
                         c["soc0"], 0.5, site)
        fused = soc_fused.run_chunk(p, 0, n, slice(None), soc_fused._fused_hours)
        p["engine"] = "numpy"
        ref = soc._run_chunk(p, 0, n, slice(None))
        for name in soc_results.SUMMARY_FIELDS:
            # mean/min SOC and max C-rate: the numpy path takes them from float32 series
            single = name in ("mean_soc_frac", "min_soc_frac", "max_c_rate")
            np.testing.assert_allclose(getattr(fused.summary, name),
                                       getattr(ref.summary, name),
                                       rtol=1e-6 if single else 1e-12,
                                       atol=1e-6 if single else 1e-9, err_msg=name)
        np.testing.assert_allclose(fused.soc_frac, ref.soc_frac, rtol=1e-6, atol=1e-7)
        np.testing.assert_allclose(fused.current_c_rate, ref.current_c_rate, rtol=1e-6,
                                   atol=1e-7)


# --- the compiled kernel of planner.energy._soc_kernels and the numpy loop ----------------

from planner.energy import _soc_kernels  # noqa: E402


def _kernel_py():
    """The kernel's Python function (``py_func`` of the numba dispatcher when installed)."""
    return soc_fused._FUSED.py_func if soc_fused._FUSED is not None else soc_fused._fused_hours


def _mixed_case(rng, n_hours, n_lanes, n_cols):
    """Lanes of mixed chemistries reading shared per-(site, chemistry) columns, as
    planner.designs.evaluation._duty calls the SOC stage (invented inputs)."""
    c = _random_case(rng, n_hours, n_cols)
    lane = dict(cap=rng.uniform(100, 2000, n_lanes), usable=rng.uniform(0.7, 1.0, n_lanes),
                eta_c=rng.choice([0.9, 0.98], n_lanes), eta_d=rng.choice([0.92, 0.97], n_lanes),
                c_max=rng.choice([0.2, np.inf], n_lanes), t_min=rng.choice([-np.inf, 0.0], n_lanes),
                t_max=rng.choice([np.inf, 25.0], n_lanes),
                soc_min=rng.uniform(0.0, 0.5, n_lanes), soc0=rng.uniform(0.0, 1.0, n_lanes))
    c.update(lane)
    c["site"] = rng.integers(0, n_cols, n_lanes)
    return c


def _prepare_mixed(c, with_avail=True, with_sd=True):
    return soc._prepare(c["charge"], c["load"], c["cap"], c["temp"], c["usable"], c["eta_c"],
                        c["eta_d"], c["sd"] if with_sd else 0.0, c["c_max"], c["t_min"],
                        c["t_max"], c["heater"], c["soc_min"], c["avail"] if with_avail else None,
                        c["soc0"], 0.5, c["site"])


def _assert_same(fused, ref):
    for name in soc_results.SUMMARY_FIELDS:
        # mean/min SOC and max C-rate: the numpy loop takes them from float32 series
        single = name in ("mean_soc_frac", "min_soc_frac", "max_c_rate")
        np.testing.assert_allclose(getattr(fused.summary, name), getattr(ref.summary, name),
                                   rtol=1e-6 if single else 1e-12,
                                   atol=1e-6 if single else 1e-9, err_msg=name)
    if ref.soc_frac is None:
        assert fused.soc_frac is None
        return
    np.testing.assert_allclose(fused.soc_frac, ref.soc_frac, rtol=1e-6, atol=1e-7)
    np.testing.assert_allclose(fused.current_c_rate, ref.current_c_rate, rtol=1e-6, atol=1e-7)


@pytest.mark.parametrize("n_hours, n_lanes, with_avail, with_sd, keep", [
    (100, 7, True, True, slice(None)),          # hours not a whole tile, lanes not 4k
    (24 * 40, 13, False, True, np.array([0, 5, 6, 12])),   # month end inside, some series
    (24 * 5, 9, True, False, None),             # no self-discharge, no series
])
def test_kernel_python_function_equals_numpy_loop(n_hours, n_lanes, with_avail, with_sd,
                                                  keep):
    # reference: the numpy recursion (checked above against the independent plain-Python
    # loop); the kernel's own Python function runs here, so its logic is checked with or
    # without numba. Mixed chemistries share site columns, as in planner.designs.evaluation._duty.
    rng = np.random.default_rng(n_hours + n_lanes)
    c = _mixed_case(rng, n_hours, n_lanes, 3)
    p = _prepare_mixed(c, with_avail, with_sd)
    fused = soc_fused.run_chunk(p, 0, n_lanes, keep, _kernel_py())
    p["engine"] = "numpy"
    _assert_same(fused, soc._run_chunk(p, 0, n_lanes, keep))


def test_compiled_engine_equals_numpy_engine_full_year():
    # the engine used by default ("auto": compiled when numba is installed) against the
    # numpy loop over a full 8,760 h year: several lane blocks, chunks not a multiple of 4,
    # lanes of mixed chemistries on shared columns (reference: the numpy recursion)
    rng = np.random.default_rng(11)
    n = 530
    c = _mixed_case(rng, H, n, 6)
    kw = dict(usable_fraction=c["usable"], charge_efficiency_frac=c["eta_c"],
              discharge_efficiency_frac=c["eta_d"], self_discharge_frac_per_h=c["sd"],
              max_charge_c_rate=c["c_max"], charge_temp_min_c=c["t_min"],
              charge_temp_max_c=c["t_max"], heater_on=c["heater"], min_soc_frac=c["soc_min"],
              available_capacity_frac=c["avail"], initial_soc_frac=c["soc0"],
              lane_site_index=c["site"], chunk_lanes=263, series=True)
    auto = list(soc.iter_soc_chunks(c["charge"], c["load"], c["cap"], c["temp"], **kw))
    ref = list(soc.iter_soc_chunks(c["charge"], c["load"], c["cap"], c["temp"],
                                   engine="numpy", **kw))
    assert [(a.start, a.stop) for a in auto] == [(0, 263), (263, 526), (526, 530)]
    for a, r in zip(auto, ref):
        _assert_same(a, r)


def test_each_lane_matches_reference_loop_with_shared_columns():
    # reference: the plain-Python recursion, lane by lane, on the lane's own column
    # (independent implementation); both engines, mixed chemistries on shared columns
    rng = np.random.default_rng(21)
    c = _mixed_case(rng, 200, 9, 3)
    for engine in ("auto", "numpy"):
        r = soc.simulate_soc(
            c["charge"], c["load"], c["cap"], c["temp"], usable_fraction=c["usable"],
            charge_efficiency_frac=c["eta_c"], discharge_efficiency_frac=c["eta_d"],
            self_discharge_frac_per_h=c["sd"], max_charge_c_rate=c["c_max"],
            charge_temp_min_c=c["t_min"], charge_temp_max_c=c["t_max"], heater_on=c["heater"],
        min_soc_frac=c["soc_min"],
            available_capacity_frac=c["avail"], initial_soc_frac=c["soc0"],
            lane_site_index=c["site"], keep_series_for=range(9), engine=engine)
        for j in range(9):
            s = c["site"][j]
            ref = _reference_lane(
                c["charge"][:, s], c["load"][:, s], c["cap"][j], c["temp"][:, s],
                usable=c["usable"][j], eta_c=c["eta_c"][j], eta_d=c["eta_d"][j],
                sd=c["sd"][:, s], c_max=c["c_max"][j], t_min=c["t_min"][j],
                heater=c["heater"][:, s], soc_min=c["soc_min"][j], avail=c["avail"][:, s],
                soc0=c["soc0"][j], t_max=c["t_max"][j])
            for key in ("energy_in_wh", "energy_out_wh", "self_discharge_wh",
                        "delta_stored_wh"):
                assert getattr(r, key)[j] == pytest.approx(ref[key], rel=1e-9, abs=1e-7)
            assert r.unserved_wh[j] == pytest.approx(ref["unserved_wh"], rel=1e-9, abs=1e-6)
            np.testing.assert_allclose(r.soc_frac_series[:, j], ref["soc"], atol=2e-6)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), n_hours=st.integers(1, 150), n=st.integers(1, 11),
       n_cols=st.integers(1, 4), engine=st.sampled_from(["auto", "numpy"]))
def test_energy_conservation_both_engines_shared_columns(seed, n_hours, n, n_cols, engine):
    # first law per lane (energy in = out + losses + change in stored energy), 1e-9
    # relative, for both engines with lanes of mixed chemistries on shared columns
    rng = np.random.default_rng(seed)
    c = _mixed_case(rng, n_hours, n, n_cols)
    r = soc.simulate_soc(
        c["charge"], c["load"], c["cap"], c["temp"], usable_fraction=c["usable"],
        charge_efficiency_frac=c["eta_c"], discharge_efficiency_frac=c["eta_d"],
        self_discharge_frac_per_h=c["sd"], max_charge_c_rate=c["c_max"],
        charge_temp_min_c=c["t_min"], charge_temp_max_c=c["t_max"], heater_on=c["heater"],
        min_soc_frac=c["soc_min"],
        available_capacity_frac=c["avail"], initial_soc_frac=c["soc0"],
        lane_site_index=c["site"], chunk_lanes=5, engine=engine)
    scale = np.maximum.reduce([r.energy_in_wh, r.energy_out_wh, np.abs(r.delta_stored_wh),
                               r.losses_wh, c["cap"]])
    residual = r.energy_in_wh - r.energy_out_wh - r.losses_wh - r.delta_stored_wh
    assert np.all(np.abs(residual) <= 1e-9 * scale)
    # load side: delivered + unserved = deficit offered at the lane's column
    deficit = np.maximum(c["load"] - c["charge"], 0).sum(axis=0)[c["site"]]
    np.testing.assert_allclose(r.energy_out_wh + r.unserved_wh, deficit, rtol=1e-9, atol=1e-6)
    # monthly unserved sums to the year's (one column for runs shorter than a year)
    np.testing.assert_allclose(r.unserved_wh_by_month.sum(axis=1), r.unserved_wh, rtol=1e-9,
                               atol=1e-6)


def test_kernel_result_does_not_depend_on_block_size():
    # lanes are independent: cutting them into blocks of 4 or 12 (or spreading the blocks
    # over threads) must not change any lane's numbers (reference: the same lanes in one
    # block)
    rng = np.random.default_rng(4)
    c = _mixed_case(rng, 72 * 2 + 5, 10, 2)
    p = _prepare_mixed(c)
    kernel = _kernel_py()
    runs = []
    for block in (4, 12):
        orig = _soc_kernels.block_lanes
        _soc_kernels.block_lanes = lambda k, n_threads=2, b=block: b
        try:
            runs.append(soc_fused.run_chunk(p, 0, 10, slice(None), kernel))
        finally:
            _soc_kernels.block_lanes = orig
    for name in soc_results.SUMMARY_FIELDS:
        np.testing.assert_array_equal(getattr(runs[0].summary, name),
                                      getattr(runs[1].summary, name), err_msg=name)
    np.testing.assert_array_equal(runs[0].soc_frac, runs[1].soc_frac)
    assert 4 <= _soc_kernels.block_lanes(3) <= _soc_kernels.block_lanes(10**6) == 256
    assert all(_soc_kernels.block_lanes(k) % 4 == 0 for k in (1, 5, 100, 2048, 8192))


def test_kernel_in_pieces_of_groups_equals_numpy_loop(monkeypatch):
    # a chunk whose lanes form more groups than one kernel call takes is run in pieces of
    # lanes; the pieces must give the numpy loop's numbers (reference: the numpy recursion)
    monkeypatch.setattr(soc_fused, "_KERNEL_GROUPS", 2)
    rng = np.random.default_rng(8)
    c = _mixed_case(rng, 24 * 35, 11, 4)
    p = _prepare_mixed(c)
    keep = np.array([1, 2, 3, 9])
    fused = soc_fused.run_chunk(p, 0, 11, keep, _kernel_py())
    p["engine"] = "numpy"
    _assert_same(fused, soc._run_chunk(p, 0, 11, keep))


@pytest.mark.parametrize("with_avail", [True, False])
def test_numpy_loop_hourly_gather_equals_block_gather(monkeypatch, with_avail):
    # wide chunks gather the group offers hour by hour, narrow ones a block of hours at a
    # time; both must give the same numbers, and the kernel's Python function agrees
    # (reference: the block-gather numpy loop, itself checked against the plain loop)
    rng = np.random.default_rng(13)
    c = _mixed_case(rng, 24 * 33, 10, 3)
    p = _prepare_mixed(c, with_avail=with_avail)
    p["engine"] = "numpy"
    block = soc._run_chunk(p, 0, 10, slice(None))
    monkeypatch.setattr(soc_numpy, "_PER_HOUR_GATHER_LANES", 1)
    hourly = soc._run_chunk(p, 0, 10, slice(None))
    for name in soc_results.SUMMARY_FIELDS:
        np.testing.assert_array_equal(getattr(hourly.summary, name),
                                      getattr(block.summary, name), err_msg=name)
    np.testing.assert_array_equal(hourly.soc_frac, block.soc_frac)
    _assert_same(soc_fused.run_chunk(p, 0, 10, slice(None), _kernel_py()), hourly)


def test_failed_compilation_falls_back_to_numpy_loop(monkeypatch):
    # an optional accelerator must never stop a plan: if numba cannot compile the kernel
    # the numpy loop runs, with a warning (reference: the numpy engine's own numbers)
    class Broken:
        signatures = []

        def compile(self, sig):
            raise TypeError("unsupported")

    monkeypatch.setattr(_soc_kernels, "BLOCK_KERNEL", Broken())
    monkeypatch.setattr(_soc_kernels, "_COMPILE_FAILED", False)
    rng = np.random.default_rng(2)
    c = _random_case(rng, 48, 3)
    with pytest.warns(RuntimeWarning, match="numpy hour loop"):
        auto = _run(c)
    ref = _run(c, engine="numpy")
    for name in soc_results.SUMMARY_FIELDS:
        np.testing.assert_array_equal(getattr(auto, name), getattr(ref, name), err_msg=name)


def test_prefault_writes_zeros():
    # definition: the page-touching pass leaves every element 0, for contiguous arrays
    # (split over threads) and for strided views (plain fill)
    a = np.full((37, 5), 7.0, dtype=np.float32)
    _soc_kernels.prefault(a)
    assert not a.any()
    b = np.full((20, 6), 3.0, dtype=np.float32)
    _soc_kernels.prefault(b[:, ::2])
    assert not b[:, ::2].any() and np.all(b[:, 1::2] == 3.0)
