"""Hourly site load: constant, duty-cycled bursts, daily schedule, monthly multipliers,
or an hourly file.

The energy balance works on hourly MEAN power (W averaged over the hour = Wh in that
hour). A radio that transmits a burst for a few seconds every few minutes barely moves
the hourly mean but sets the peak current the pack must deliver, so
:func:`peak_power_w` keeps the burst for the aging stage's C-rate.

Index 0 of every hourly array is 1 January 00:00-01:00 local standard time of a
non-leap typical year (8,760 hours).
"""

from __future__ import annotations

import math
import os

import numpy as np

from planner import HOURS_PER_YEAR
from planner.errors import InputError
from planner.fileio import read_input_bytes
from planner.inputs.tables import read_table

#: Upper bound accepted for any load power (W). Remote unattended sites (telemetry,
#: repeaters, monitors) draw from about a watt to a few kilowatts; a value above this
#: is almost certainly a unit mistake (mW or kW typed as W). Source: common practice.
MAX_LOAD_W = 100_000.0

#: Days per month of a non-leap year (the typical-year convention drops 29 February).
_DAYS_PER_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])

#: Hour index of 29 February 00:00 in a leap year (59 days after 1 January).
_LEAP_DAY_START_H = 59 * 24


def hour_of_day(n_hours: int = HOURS_PER_YEAR) -> np.ndarray:
    """Local standard hour of day (0-23) of each hour of the typical year."""
    return np.arange(n_hours) % 24


def month_of_hour(n_hours: int = HOURS_PER_YEAR) -> np.ndarray:
    """Calendar month (1-12) of each hour of a non-leap typical year."""
    months = np.repeat(np.arange(1, 13), _DAYS_PER_MONTH * 24)
    return months[:n_hours]


def _check_power(value, key: str, *, source: str | None = None) -> np.ndarray:
    """Return ``value`` as a float array; non-finite, negative or absurd -> InputError."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{key}: found {value!r}, expected a number of watts",
                         source=source) from None
    bad = ~np.isfinite(arr) | (arr < 0) | (arr > MAX_LOAD_W)
    if np.any(bad):
        where = np.flatnonzero(np.atleast_1d(bad))[0]
        found = np.atleast_1d(arr)[where]
        pos = f"[{where}]" if arr.ndim else ""
        raise InputError(f"{key}{pos}: found {found!r} W, expected a power between 0 and "
                         f"{MAX_LOAD_W:g} W", source=source)
    return arr


def _check_length(arr: np.ndarray, n: int, key: str) -> None:
    if arr.shape != (n,):
        raise InputError(f"{key}: found {arr.size} values, expected {n}")


def _base_profile_w(constant_w, daily_schedule_w, hourly_w) -> np.ndarray:
    """Sum of the non-burst parts of the load (W, hourly mean), before monthly multipliers."""
    base = np.full(HOURS_PER_YEAR, float(_check_power(constant_w, "constant_w")))
    if daily_schedule_w is not None:
        sched = _check_power(daily_schedule_w, "daily_schedule_w")
        _check_length(sched, 24, "daily_schedule_w")
        base = base + sched[hour_of_day()]
    if hourly_w is not None:
        hourly = _check_power(hourly_w, "hourly_w")
        _check_length(hourly, HOURS_PER_YEAR, "hourly_w")
        base = base + hourly
    return base


def _burst_duty_frac(burst_w, burst_duration_s, burst_interval_min) -> float:
    """Fraction of time the burst is on; validates the three burst parameters."""
    burst_w = float(_check_power(burst_w, "burst_w"))
    if burst_w == 0.0:
        return 0.0
    if not (math.isfinite(burst_duration_s) and burst_duration_s > 0):
        raise InputError(f"burst_duration_s: found {burst_duration_s!r}, expected > 0 s "
                         "when burst_w > 0")
    if not (math.isfinite(burst_interval_min) and burst_interval_min > 0):
        raise InputError(f"burst_interval_min: found {burst_interval_min!r}, expected > 0 min "
                         "when burst_w > 0")
    interval_s = 60.0 * burst_interval_min
    if burst_duration_s > interval_s:
        raise InputError(f"burst_duration_s: found {burst_duration_s!r} s, expected at most the "
                         f"burst interval ({interval_s:g} s)")
    return burst_duration_s / interval_s


def _multipliers(monthly_multipliers) -> np.ndarray:
    """Hourly multiplier array from 12 monthly values (1.0 when None)."""
    if monthly_multipliers is None:
        return np.ones(HOURS_PER_YEAR)
    try:
        mult = np.asarray(monthly_multipliers, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"monthly_multipliers: found {monthly_multipliers!r}, "
                         "expected 12 numbers") from None
    _check_length(mult, 12, "monthly_multipliers")
    bad = ~np.isfinite(mult) | (mult < 0) | (mult > 100)
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"monthly_multipliers[{i}]: found {mult[i]!r}, expected 0 to 100")
    return mult[month_of_hour() - 1]


def hourly_load_w(*, constant_w: float = 0.0, burst_w: float = 0.0,
                  burst_duration_s: float = 0.0, burst_interval_min: float = 0.0,
                  daily_schedule_w=None, monthly_multipliers=None,
                  hourly_w=None) -> np.ndarray:
    """Hourly mean load power of a site over a typical year.

    ``P[h] = m[month(h)] * (constant_w + schedule[hour(h)] + hourly_w[h]
    + burst_w * burst_duration_s / (60 * burst_interval_min))``

    The burst (e.g. a radio transmitting) is power added on top of the base load for
    ``burst_duration_s`` seconds every ``burst_interval_min`` minutes; over an hour its
    energy is its duty fraction times its power.

    Parameters
    ----------
    constant_w : float
        Continuous base load (W).
    burst_w : float
        Extra power during a burst (W).
    burst_duration_s : float
        Length of one burst (s). Must not exceed the interval.
    burst_interval_min : float
        Time from one burst start to the next (min).
    daily_schedule_w : array-like of 24, optional
        Extra load by local standard hour of day 0-23 (W), added every day.
    monthly_multipliers : array-like of 12, optional
        Factor applied to the whole load in each month January-December (0-100).
    hourly_w : array-like of 8760, optional
        Extra hourly mean load (W), e.g. from :func:`read_hourly_load_csv`.

    Returns
    -------
    numpy.ndarray of shape (8760,)
        Hourly mean load power (W); numerically the energy (Wh) drawn in each hour.

    Raises
    ------
    planner.errors.InputError
        Negative, non-finite or absurd (> ``MAX_LOAD_W``) power, wrong array length,
        burst longer than its interval.
    """
    base = _base_profile_w(constant_w, daily_schedule_w, hourly_w)
    duty = _burst_duty_frac(burst_w, burst_duration_s, burst_interval_min)
    return _multipliers(monthly_multipliers) * (base + float(burst_w) * duty)


def peak_power_w(*, constant_w: float = 0.0, burst_w: float = 0.0,
                 burst_duration_s: float = 0.0, burst_interval_min: float = 0.0,
                 daily_schedule_w=None, monthly_multipliers=None,
                 hourly_w=None) -> np.ndarray:
    """Highest instantaneous load power in each hour (W), keeping the burst.

    ``P_peak[h] = m[month(h)] * (constant_w + schedule[hour(h)] + hourly_w[h] + burst_w)``
    when a burst is defined, so that the aging stage sees the real peak C-rate
    (``P_peak / capacity_wh``) rather than the hourly mean. ``hourly_w`` is taken as
    flat within its hour (its peak is not known from an hourly file).

    Parameters and validation are those of :func:`hourly_load_w`.

    Returns
    -------
    numpy.ndarray of shape (8760,)
        Peak load power within each hour (W).
    """
    base = _base_profile_w(constant_w, daily_schedule_w, hourly_w)
    duty = _burst_duty_frac(burst_w, burst_duration_s, burst_interval_min)
    burst = float(burst_w) if duty > 0 else 0.0
    return _multipliers(monthly_multipliers) * (base + burst)


def read_hourly_load_csv(path, *, column: str = "load_w") -> np.ndarray:
    """Read an hourly mean load (W) from a CSV file with a header row.

    Rules (those of the project's hourly climate files): one header row; the column
    named ``column`` holds the hourly mean power in W; one data row per hour starting
    1 January 00:00 local standard time; exactly 8,760 data rows, or 8,784 for a leap
    year, in which case the 24 rows of 29 February (data rows 1,417-1,440) are dropped.
    Blank lines are skipped (and counted in the line numbers of messages). Every value
    must be a finite number (:mod:`planner.inputs.numbers`) from 0 to
    ``MAX_LOAD_W``.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    column : str, default "load_w"
        Header of the load column.

    Returns
    -------
    numpy.ndarray of shape (8760,)
        Hourly mean load (W).

    Raises
    ------
    planner.errors.InputError
        Missing/unreadable file, missing column, non-numeric or out-of-range cell (naming
        its line), or a row count other than 8,760/8,784.
    """
    src = os.fspath(path)
    data = read_input_bytes(src, what="a CSV of hourly load")
    # Lines are numbered as an editor shows them, blank lines counted (planner.inputs.tables).
    table = read_table(data, source=src, kind="csv", what="a CSV of hourly load")
    if not table.has(column):
        raise InputError(f"header: found columns {list(table.columns)}, expected a column "
                         f"'{column}'", source=src)
    if len(table) not in (HOURS_PER_YEAR, HOURS_PER_YEAR + 24):
        raise InputError(f"found {len(table)} data rows, expected 8760 (or 8784 for a leap "
                         "year)", source=src)
    values = table.numbers(column, what="a number of watts", allow_blank=False, label="line")
    bad = (values < 0) | (values > MAX_LOAD_W)
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        where = table.rows[i].where("line")
        raise InputError(f"{where}, column '{column}': found {values[i]:g} W, expected "
                         f"0 to {MAX_LOAD_W:g} W", source=src)
    if values.size == HOURS_PER_YEAR + 24:
        values = np.delete(values, np.s_[_LEAP_DAY_START_H:_LEAP_DAY_START_H + 24])
    return values
