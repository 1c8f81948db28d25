"""Tests of planner.energy.loads.

Check values: hand arithmetic of duty-cycle energy (burst power x on-time / period),
the Gregorian calendar as computed by pandas (month boundaries of a non-leap year), and
the project's input rules (one-line InputError naming file/row/key).
"""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.energy import loads
from planner.errors import InputError

H = 8760


def test_constant_and_burst_mean_by_hand():
    # radio: 5 W base + 20 W for 30 s every 10 min -> 5 + 20 x 30/600 = 6 W mean (hand)
    p = loads.hourly_load_w(constant_w=5, burst_w=20, burst_duration_s=30,
                            burst_interval_min=10)
    assert p.shape == (H,)
    np.testing.assert_allclose(p, 6.0)
    # the peak keeps the burst on top of the base: 25 W (hand)
    np.testing.assert_allclose(loads.peak_power_w(constant_w=5, burst_w=20,
                                                  burst_duration_s=30,
                                                  burst_interval_min=10), 25.0)
    # annual energy 6 W x 8760 h = 52.56 kWh (hand)
    assert p.sum() == pytest.approx(52560.0)


def test_month_and_hour_mapping_matches_calendar():
    # reference: pandas' calendar for a non-leap year (2023), hour starts
    idx = pd.date_range("2023-01-01", periods=H, freq="h")
    np.testing.assert_array_equal(loads.month_of_hour(), idx.month)
    np.testing.assert_array_equal(loads.hour_of_day(), idx.hour)


def test_schedule_and_monthly_multipliers():
    sched = np.zeros(24)
    sched[8:18] = 10.0                      # 10 W extra in working hours
    mult = np.ones(12)
    mult[0] = 2.0                           # January doubled
    p = loads.hourly_load_w(constant_w=1.0, daily_schedule_w=sched, monthly_multipliers=mult)
    idx = pd.date_range("2023-01-01", periods=H, freq="h")
    expected = (1.0 + sched[idx.hour]) * mult[idx.month - 1]   # pandas calendar reference
    np.testing.assert_allclose(p, expected)
    # January energy by hand: 31 days x (24 x 1 + 10 x 10) Wh x 2 = 7688 Wh
    assert p[:31 * 24].sum() == pytest.approx(7688.0)


@pytest.mark.parametrize("kwargs, key", [
    (dict(constant_w=-1.0), "constant_w"),
    (dict(constant_w=5e6), "constant_w"),            # absurd: megawatts at a remote site
    (dict(constant_w=float("nan")), "constant_w"),
    (dict(burst_w=10, burst_duration_s=700, burst_interval_min=10), "burst_duration_s"),
    (dict(burst_w=10, burst_duration_s=5, burst_interval_min=0), "burst_interval_min"),
    (dict(daily_schedule_w=[1.0] * 23), "daily_schedule_w"),
    (dict(daily_schedule_w=[-1.0] * 24), "daily_schedule_w"),
    (dict(monthly_multipliers=[1.0] * 11), "monthly_multipliers"),
    (dict(hourly_w=np.ones(100)), "hourly_w"),
])
def test_bad_load_raises_one_line_input_error(kwargs, key):
    with pytest.raises(InputError) as err:
        loads.hourly_load_w(**kwargs)
    assert key in str(err.value) and "\n" not in str(err.value)


def _write(path, values, header="time,load_w"):
    lines = [header] + [f"h{i},{v}" for i, v in enumerate(values)]
    path.write_text("\n".join(lines) + "\n")


def test_read_csv_8760_rows(tmp_path):
    f = tmp_path / "load.csv"
    values = np.arange(H) % 7 + 0.5
    _write(f, values)
    np.testing.assert_allclose(loads.read_hourly_load_csv(f), values)


def test_read_csv_leap_year_drops_29_february(tmp_path):
    # calendar fact: in a leap year, 29 Feb occupies hours 1416-1439 (days 1-59 before it)
    idx = pd.date_range("2024-01-01", periods=8784, freq="h")
    values = np.where((idx.month == 2) & (idx.day == 29), 999.0, 1.0)
    f = tmp_path / "leap.csv"
    _write(f, values)
    out = loads.read_hourly_load_csv(f)
    assert out.shape == (H,) and np.all(out == 1.0)


def test_read_csv_wrong_length_names_the_file(tmp_path):
    f = tmp_path / "short.csv"
    _write(f, np.ones(8000))
    with pytest.raises(InputError) as err:
        loads.read_hourly_load_csv(f)
    msg = str(err.value)
    assert "short.csv" in msg and "8000" in msg and "8760" in msg and "\n" not in msg


def test_read_csv_bad_cell_names_line(tmp_path):
    f = tmp_path / "bad.csv"
    values = ["1.0"] * H
    values[9] = "abc"
    _write(f, values)
    with pytest.raises(InputError, match=r"bad.csv: line 11, column 'load_w'"):
        loads.read_hourly_load_csv(f)
    values[9] = "-3"
    _write(f, values)
    # The number as the user wrote it, never numpy's repr "np.float64(-3.0)" (one-line
    # errors name what was found: DEVELOPERS.md).
    with pytest.raises(InputError, match=r"line 11, column 'load_w': found -3 W, expected 0 to"):
        loads.read_hourly_load_csv(f)


def test_read_csv_fifo_is_refused_before_reading(tmp_path):
    # A FIFO would block the reader; refused by type (DEVELOPERS.md; no writer needed).
    import os

    os.mkfifo(tmp_path / "load.csv")
    with pytest.raises(InputError, match=r"named pipe \(FIFO\), not a regular file"):
        loads.read_hourly_load_csv(tmp_path / "load.csv")


def test_read_csv_missing_column_and_file(tmp_path):
    f = tmp_path / "cols.csv"
    _write(f, np.ones(H), header="time,power")
    with pytest.raises(InputError, match="load_w"):
        loads.read_hourly_load_csv(f)
    with pytest.raises(InputError, match="not found"):
        loads.read_hourly_load_csv(tmp_path / "nope.csv")


@settings(max_examples=60, deadline=None)
@given(st.binary(max_size=400))
def test_junk_csv_raises_only_input_error(tmp_path_factory, blob):
    # whatever the bytes, the reader answers with the project's input error only
    f = tmp_path_factory.mktemp("junk") / "junk.csv"
    f.write_bytes(blob)
    with pytest.raises(InputError):
        loads.read_hourly_load_csv(f)
