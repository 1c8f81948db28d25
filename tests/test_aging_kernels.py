"""The aging engine's one-pass kernels (planner.aging.kernels) against the references.

Each kernel is checked through its plain-Python original (``py_func``), so the checks
hold whether or not numba is installed; where numba is installed the compiled kernel is
checked the same way. References: the PyPI ``rainflow`` package (>=3,<4; its own tests
reproduce the ASTM E1049-85 example), ASTM E1049-85 section 5.4.4 and Fig. 6, and the
numpy path of :func:`planner.aging.age_lanes`, which tests/test_rainflow.py and
tests/test_aging_engine.py check against the same package and against published values.
"""

import numpy as np
import pytest
import rainflow
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from planner.aging import age_lanes, kernels
from planner.aging import engine as engine_module
from planner.aging.rainflow import extract_cycles_lanes
from planner.chemistry import get_chemistry

ASTM_SERIES = [-2, 1, -3, 5, -1, 3, -4, 4, -2]  # ASTM E1049-85 Fig. 6 (points A..I)

py = kernels.python_function


def _variants(kernel):
    """The kernel as plain Python, and compiled too when numba is installed."""
    return [py(kernel)] + ([kernel] if kernels.AVAILABLE else [])


def _rows(cycles):
    return [tuple(float(v) for v in row) for row in zip(*cycles)]


@pytest.mark.parametrize("lane_cycles", _variants(kernels.lane_cycles))
def test_astm_example_exactly_as_package_in_order(lane_cycles):
    # rainflow 3.2 extract_cycles on ASTM E1049-85 Fig. 6: same tuples in the same order.
    x = np.array(ASTM_SERIES, dtype=float)
    assert _rows(lane_cycles(x, False)) == [tuple(map(float, c)) for c in
                                            rainflow.extract_cycles(ASTM_SERIES)]
    # ASTM E1049-85 Fig. 6 / research note §4.1: (3, .5), (4, 1.5), (6, .5), (8, 1), (9, .5).
    totals = {}
    for rng, _, count, _, _ in _rows(lane_cycles(x, False)):
        totals[rng] = totals.get(rng, 0.0) + count
    assert sorted(totals.items()) == [(3, 0.5), (4, 1.5), (6, 0.5), (8, 1.0), (9, 0.5)]


@settings(max_examples=80, deadline=None)
@given(arrays(np.float64, st.integers(0, 60),
              elements=st.one_of(st.integers(-3, 3).map(float),
                                 st.floats(-10, 10, allow_nan=False, width=32))))
def test_cycles_equal_package_cycle_for_cycle(series):
    # Reference library: rainflow.extract_cycles (ties and plateaus from the integers).
    expected = [tuple(map(float, c)) for c in rainflow.extract_cycles(series.tolist())]
    for lane_cycles in _variants(kernels.lane_cycles):
        assert _rows(lane_cycles(series, False)) == expected


@settings(max_examples=60, deadline=None)
@given(arrays(np.int64, st.integers(0, 40), elements=st.integers(-2, 2)),
       st.integers(1, 6))
def test_reversals_equal_package_and_count_beyond_capacity(series, capacity):
    # Reference library: rainflow.reversals (index, value), plateaus reported by last index.
    expected = list(rainflow.reversals(series.astype(float).tolist()))
    out_v, out_i = np.zeros(capacity), np.zeros(capacity, np.int64)
    for reversals_into in _variants(kernels.reversals_into):
        count = reversals_into(series.astype(float), series.size, out_v, out_i)
        assert count == len(expected)  # all counted, only the first `capacity` stored
        stored = min(count, capacity)
        assert list(zip(out_i[:stored].tolist(), out_v[:stored].tolist())) == \
            [(i, float(v)) for i, v in expected[:stored]]


@settings(max_examples=60, deadline=None)
@given(arrays(np.float64, st.integers(3, 50),
              elements=st.one_of(st.integers(0, 4).map(float),
                                 st.floats(0, 1, allow_nan=False, width=32))))
def test_periodic_count_equals_package_on_the_closed_period(series):
    # At least 3 points: the package's reversals give a 2-point series only its first
    # point (no period to close); the engine's series are 8,760 hours.
    # A repeating history counted from its largest value and closed by it again (ASTM
    # E1049 practice for repeated blocks): reference = rainflow.extract_cycles on the raw
    # series rotated to its first maximum and closed, indices mapped back.
    k = int(np.argmax(series))
    closed = np.concatenate([series[k:], series[:k], series[k:k + 1]])
    # Zero-range half cycles (a flat series closed on itself) carry no depth, hence no
    # damage; the seam handling may drop them, so they are left out on both sides.
    expected = sorted((rng, mean, count) for rng, mean, count, _, _ in
                      rainflow.extract_cycles(closed.tolist()) if rng > 0)
    for lane_cycles in _variants(kernels.lane_cycles):
        got = lane_cycles(series, True)
        assert sorted(c for c in zip(*(a.tolist() for a in got[:3])) if c[0] > 0) == expected
    # And the numpy path, cycle for cycle including the hour indices.
    numpy_path = extract_cycles_lanes(series, periodic=True).per_lane(0)
    assert sorted(_rows(py(kernels.lane_cycles)(series, True))) == \
        [tuple(float(v) for v in row) for row in numpy_path]


def _sweep_inputs(rng, n_hours, n_lanes, n_sites):
    soc = rng.uniform(0.0, 1.0, (n_hours, n_lanes))
    soc[5:9, ::2] = 0.5  # plateaus
    current = rng.normal(0.0, 0.1, (n_hours, n_lanes))
    lane_row = rng.integers(0, n_sites, n_lanes)
    rate = rng.uniform(0.0, 2.0, (n_hours, n_sites))
    table = rng.uniform(0.0, 1.0, 15001)
    month_start = np.linspace(0, n_hours, 13).astype(np.int64)
    month_of_hour = np.repeat(np.arange(12), np.diff(month_start))
    return soc, current, lane_row, rate, table, month_start, month_of_hour


def _sweep_reference(soc, current, lane_row, rate, table, month_of_hour, step=0.0001):
    """Plain numpy: the engine's own lookup (_tabulated arithmetic), then monthly sums."""
    scaled = (np.clip(soc, 0.0, 1.5) - (0.0 - 0.5 * step)) * (1.0 / step)
    hourly = table[scaled.astype(np.intp)] * rate[:, lane_row]
    onehot = np.eye(12)[month_of_hour]
    positive = np.maximum(current, 0.0)
    return onehot.T @ hourly, onehot.T @ positive, (current > 0).sum(axis=0)


def _outputs(n_lanes, capacity):
    return dict(cal=np.zeros((n_lanes, 12)), efc=np.zeros(n_lanes),
                on=np.zeros(n_lanes, np.int64), dis=np.zeros((n_lanes, 12)),
                rev_v=np.zeros((n_lanes, capacity)), rev_i=np.zeros((n_lanes, capacity), np.int64),
                n_rev=np.zeros(n_lanes, np.int64), chg=np.zeros(n_lanes),
                chg_on=np.zeros(n_lanes, np.int64), pl=np.zeros((n_lanes, 12)))


@pytest.mark.parametrize("layout", ["hours", "lanes"])
@pytest.mark.parametrize("capacity", [200, 7])
def test_sweeps_match_numpy_sums_and_package_reversals(layout, capacity):
    rng = np.random.default_rng(7)
    n_hours, n_lanes = 240, 5
    soc, current, lane_row, rate, table, month_start, month_of_hour = _sweep_inputs(
        rng, n_hours, n_lanes, 3)
    lo, hi = 1, 5  # a chunk that does not start at lane 0
    for dtype in (np.float64, np.float32):
        s, c = soc.astype(dtype), current.astype(dtype)
        cal_ref, dis_ref, on_ref = _sweep_reference(s.astype(float), c.astype(float), lane_row,
                                                    rate, table, month_of_hour)
        o = _outputs(hi - lo, capacity)
        lookup = (table, 0.0, 1.5, 0.0 - 0.5 * 0.0001, 1.0 / 0.0001)  # as sweep._kernel_sweep
        # plating: a charge-rate table over 0-10 C at 0.0001 C bins, a temperature part per
        # site and hour; lane 2 of the chunk has a given charge rate (the others NaN)
        rate_table = rng.uniform(0.5, 2.0, 100001)
        pl_lookup = (rate_table, 0.0, 10.0, 0.0 - 0.5 * 0.0001, 1.0 / 0.0001)
        pl_temp = rng.uniform(0.1, 3.0, (n_hours, 3))
        given = np.array([np.nan, np.nan, 0.37, np.nan])
        plating = (True, pl_temp if layout == "hours" else np.ascontiguousarray(pl_temp.T),
                   *pl_lookup, given, o["pl"])
        if layout == "hours":
            py(kernels.hour_sweep)(s, c, lo, hi, 2, True, True, True, lane_row, rate, *lookup,
                                   month_of_hour, o["cal"], o["efc"], o["on"], o["dis"],
                                   o["rev_v"], o["rev_i"], o["n_rev"], o["chg"], o["chg_on"],
                                   *plating)
        else:
            py(kernels.lane_sweep)(np.ascontiguousarray(s.T), np.ascontiguousarray(c.T), lo, hi,
                                   True, True, True, lane_row, np.ascontiguousarray(rate.T),
                                   *lookup, month_start, o["cal"], o["efc"], o["on"], o["dis"],
                                   o["rev_v"], o["rev_i"], o["n_rev"], o["chg"], o["chg_on"],
                                   *plating)
        # Same bins (same arithmetic), sums in another order: rounding only.
        np.testing.assert_allclose(o["cal"], cal_ref[:, lo:hi].T, rtol=1e-12)
        np.testing.assert_allclose(o["dis"], dis_ref[:, lo:hi].T, rtol=1e-12)
        np.testing.assert_allclose(o["efc"], dis_ref[:, lo:hi].sum(axis=0), rtol=1e-12)
        assert o["on"].tolist() == on_ref[lo:hi].tolist()
        charge = np.maximum(-c.astype(float), 0.0)
        np.testing.assert_allclose(o["chg"], charge[:, lo:hi].sum(axis=0), rtol=1e-12)
        assert o["chg_on"].tolist() == (charge[:, lo:hi] > 0).sum(axis=0).tolist()
        # plating sums: table[bin(rate)] * charge * temperature part over charging hours,
        # the bin found as the engine's tabulated() finds it
        rate_used = np.where(np.isnan(given)[None, :], charge[:, lo:hi], given[None, :])
        bins = ((np.clip(rate_used, 0.0, 10.0) - (0.0 - 0.5 * 0.0001)) * (1.0 / 0.0001)).astype(np.intp)
        hourly = rate_table[bins] * charge[:, lo:hi] * pl_temp[:, lane_row[lo:hi]]
        np.testing.assert_allclose(o["pl"], (np.eye(12)[month_of_hour].T @ hourly).T,
                                   rtol=1e-12)
        for r, lane in enumerate(range(lo, hi)):
            # Reference library: rainflow.reversals on the lane's (widened) series.
            expected = list(rainflow.reversals(s[:, lane].astype(float).tolist()))
            assert o["n_rev"][r] == len(expected)
            stored = min(len(expected), capacity)
            assert list(zip(o["rev_i"][r, :stored].tolist(), o["rev_v"][r, :stored].tolist())) \
                == [(i, float(v)) for i, v in expected[:stored]]


def _year_inputs(seed, n_lanes):
    rng = np.random.default_rng(seed)
    hours = np.arange(8760)
    temp = (15 + 10 * np.sin(2 * np.pi * hours / 8760) + 5 * np.sin(2 * np.pi * hours / 24)
            )[:, None] + rng.normal(0, 1, (8760, 2))
    night = np.clip(np.cos(2 * np.pi * ((hours % 24) - 3) / 24), 0, None)
    depth = rng.uniform(0.1, 0.6, n_lanes)
    soc = 0.95 - night[:, None] * depth * np.repeat(rng.uniform(0.4, 1, (365, 1)), 24, axis=0)
    soc[:, -1] += rng.normal(0, 0.02, 8760)  # one irregular lane
    current = soc - np.roll(soc, -1, axis=0)
    lane_site = np.arange(n_lanes) % 2
    return temp, soc, current, lane_site


@pytest.mark.parametrize("chem_id", ["lfp", "nmc", "vrla", "lisocl2"])
def test_age_lanes_kernels_agree_with_numpy_path(chem_id):
    # The kernels run as plain Python (engine="python") against the vectorised numpy path:
    # both count the same cycles and bin the same hours, so only summation order differs.
    temp, soc, current, lane_site = _year_inputs(3, 3)
    volts = get_chemistry(chem_id).charge_voltages_v_per_cell[0]
    ref = age_lanes(chem_id, temp, soc, current, volts, 15, lane_site=lane_site, engine="numpy")
    for s, c in [(np.ascontiguousarray(soc, dtype=np.float32), np.ascontiguousarray(current)),
                 (np.asfortranarray(soc), np.asfortranarray(current))]:
        reference = ref
        if s.dtype == np.float32:  # the numpy path on the same (widened) float32 values
            reference = age_lanes(chem_id, temp, s.astype(float), c, volts, 15,
                                  lane_site=lane_site, engine="numpy")
        got = age_lanes(chem_id, temp, s, c, volts, 15, lane_site=lane_site, engine="python",
                        chunk_lanes=2)
        for field in ("soh_monthly", "calendar_loss_frac", "cycle_loss_frac", "efc_per_year"):
            np.testing.assert_allclose(getattr(got, field), getattr(reference, field),
                                       rtol=1e-10, atol=1e-13)


def test_lane_with_more_reversals_than_the_sweep_stores(monkeypatch):
    # The irregular lane has thousands of reversals; with a small capacity it is counted
    # again on its own column, and the result still equals the numpy path.
    monkeypatch.setattr(kernels, "REVERSAL_CAPACITY", 64)
    temp, soc, current, lane_site = _year_inputs(5, 2)
    ref = age_lanes("lfp", temp, soc, current, 3.45, 10, lane_site=lane_site, engine="numpy")
    got = age_lanes("lfp", temp, soc, current, 3.45, 10, lane_site=lane_site, engine="python")
    np.testing.assert_allclose(got.soh_monthly, ref.soh_monthly, rtol=1e-10, atol=1e-13)
    np.testing.assert_allclose(got.cycle_loss_frac, ref.cycle_loss_frac, rtol=1e-10, atol=1e-13)


def test_compiled_engine_agrees_with_numpy_path_when_installed():
    # engine="auto" is the compiled kernels when numba is importable, else the numpy path.
    temp, soc, current, lane_site = _year_inputs(11, 6)
    ref = age_lanes("lfp", temp, soc, current, 3.45, 20, lane_site=lane_site, engine="numpy")
    got = age_lanes("lfp", temp, soc.astype(np.float32), current.astype(np.float32), 3.45, 20,
                    lane_site=lane_site, engine="auto", chunk_lanes=4)
    ref32 = age_lanes("lfp", temp, soc.astype(np.float32).astype(float),
                      current.astype(np.float32).astype(float), 3.45, 20,
                      lane_site=lane_site, engine="numpy")
    np.testing.assert_allclose(got.soh_monthly, ref32.soh_monthly, rtol=1e-10, atol=1e-13)
    # float32 SOC (as the SOC simulation stores it) moves life by far less than a month.
    np.testing.assert_allclose(got.years_to_soh(0.8), ref.years_to_soh(0.8), rtol=1e-3)


def test_engine_choice_is_checked(monkeypatch):
    temp, soc, current, lane_site = _year_inputs(1, 2)
    with pytest.raises(ValueError, match="engine must be one of"):
        age_lanes("lfp", temp, soc, current, 3.45, 2, lane_site=lane_site, engine="fortran")
    monkeypatch.setattr(kernels, "AVAILABLE", False)
    with pytest.raises(ValueError, match="needs the numba package"):
        age_lanes("lfp", temp, soc, current, 3.45, 2, lane_site=lane_site, engine="numba")
    assert engine_module._use_kernel("auto") is False  # falls back to the numpy path
