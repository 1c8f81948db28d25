"""Invented field records: capacity tests and battery logs drawn from the planner's own
fade model (synthetic data, for the demo, the tests and the benchmarks; never real).

* :func:`synthetic_log` simulates a PV-charged pack hour by hour (a known capacity, a
  daily load, sunny and cloudy days, rest voltage from the chemistry's rest-voltage
  curve) and writes the samples a site logger would record.
* :func:`tests_table_rows` draws capacity tests of a fleet's packs in service from the
  model itself: a known factor per site, Student-t errors and start temperatures far
  from 25 °C (un-corrected with the IEC 60896-21 rule or the chemistry's derating curve).
"""

from __future__ import annotations

import csv
import datetime as dt
from pathlib import Path

import numpy as np


def synthetic_log(*, chemistry: str, capacity_ah: float, series_cells: int, load_a: float,
                  pv_peak_a: float, days: int, end: dt.datetime, temp_mean_c: float = 25.0,
                  seed: int = 0, soc0: float = 0.9) -> dict[str, np.ndarray]:
    """Hourly samples of one PV-charged pack ending at ``end`` (exclusive).

    Returns arrays ``time`` (datetime64[s]), ``pack_voltage_v``, ``current_a`` (+ charge)
    and ``battery_temp_c``; the capacity is ``capacity_ah`` throughout.
    """
    from planner.chemistry import get_chemistry
    from planner.evidence.battery_logs import LEAD_ACID_OCV_V

    rng = np.random.default_rng(seed)
    hours = days * 24
    start = np.datetime64(end - dt.timedelta(hours=hours), "s")
    time = start + np.arange(hours).astype("timedelta64[h]")
    hour = np.arange(hours) % 24
    sun = np.clip(np.sin(np.pi * (hour - 6.0) / 13.0), 0.0, None)
    day_factor = np.repeat(np.where(rng.random(days) < 0.35, rng.uniform(0.05, 0.3, days),
                                    rng.uniform(0.7, 1.0, days)), 24)
    pv = pv_peak_a * sun * day_factor
    eff = get_chemistry(chemistry).charge_efficiency_frac
    soc = np.empty(hours)
    current = np.empty(hours)
    s = soc0
    for k in range(hours):  # a tiny simulator: one pack, hour by hour
        net = pv[k] - load_a
        if net > 0:  # near full the controller lets in only what the pack can still store
            net = min(net, (1.0 - s) * capacity_ah / eff)
        else:  # the low-voltage disconnect holds a reserve of 5 %
            net = max(net, (0.05 - s) * capacity_ah)
        s = s + (eff * net if net > 0 else net) / capacity_ah
        soc[k], current[k] = s, net
    if chemistry == "vrla":
        lo, hi = LEAD_ACID_OCV_V
        ocv = lo + (hi - lo) * soc
    else:
        ocv = get_chemistry(chemistry).open_circuit_voltage_v(soc)
    resistance_ohm_per_cell = 0.002
    voltage = series_cells * (ocv + current * resistance_ohm_per_cell + rng.normal(0.0, 0.002, hours))
    temp = temp_mean_c + 4.0 * np.sin(2 * np.pi * (hour - 9.0) / 24.0) + rng.normal(0.0, 0.3, hours)
    return {"time": time, "pack_voltage_v": np.round(voltage, 3),
            "current_a": np.round(current + rng.normal(0.0, 0.002, hours), 4),
            "battery_temp_c": np.round(temp, 2)}


def write_log_csv(path: Path, logs: dict[str, dict[str, np.ndarray]]) -> Path:
    """Write several sites' samples as the battery-log CSV (docs/study-file.md)."""
    with open(path, "w", newline="", encoding="utf-8") as handle:
        out = csv.writer(handle, lineterminator="\n")
        out.writerow(["timestamp", "site_id", "pack_voltage_v", "current_a", "battery_temp_c"])
        for site_id, log in logs.items():
            for t, v, i, c in zip(log["time"], log["pack_voltage_v"], log["current_a"], log["battery_temp_c"]):
                stamp = str(t).replace("T", " ")
                out.writerow([stamp, site_id, f"{v:.3f}", f"{i:.4f}", f"{c:.2f}"])
    return path


TEST_COLUMNS = ("site_id", "test_date", "kind", "duration_h", "capacity_pct", "start_temp_c",
                "corrected_to_25c", "rate_h")


def tests_table_rows(packs, *, start_year: int, tests_per_site: int, seed: int = 0,
                     log_factor_mean: float = 0.2, log_factor_sd: float = 0.3,
                     sigma_frac: float = 0.02) -> tuple[list[dict], dict[str, float]]:
    """Capacity tests of packs in service drawn from the fade model (synthetic).

    ``packs`` are ``(site_id, chemistry, installed_year, PackCurve)``. Each site gets a
    true log factor ``g ~ Normal(mean, sd)`` and an initial capacity offset; its tests
    fall on random days of its service before the study, read 25 °C capacity
    ``1 + δ - exp(g) A(t)`` plus a Student-t error (4 degrees of freedom), and are
    reported at a start temperature between 5 and 40 °C, un-corrected by the rule the
    planner applies (IEC 60896-21 at the 10 h rate for lead-acid, the derating curve for
    lithium). Returns the rows and each site's true factor.
    """
    from planner.evidence.correction import capacity_at_25c
    from planner.evidence.hierarchy import SIGMA_DELTA_FRAC

    rng = np.random.default_rng(seed)
    rows, truth = [], {}
    epoch = dt.date(start_year, 1, 1)
    for site_id, chemistry, installed_year, curve in packs:
        g = log_factor_mean + log_factor_sd * rng.standard_normal()
        delta = SIGMA_DELTA_FRAC * rng.standard_normal()
        truth[site_id] = float(np.exp(g))
        first = dt.date(int(installed_year), 1, 1)
        span = (epoch - first).days
        if span < 30:
            continue
        days = np.sort(rng.integers(15, span, tests_per_site))
        for d in days:
            day = first + dt.timedelta(days=int(d))
            age = (day - first).days / 365.25
            cal, cyc = curve.loss_at(np.array([age]))
            at25 = 1.0 + delta - np.exp(g) * float(cal[0] + cyc[0]) + sigma_frac * rng.standard_t(4.0)
            temp = float(np.round(rng.uniform(5.0, 40.0), 1))
            # the reading at temp: invert the correction the planner applies
            scale = float(capacity_at_25c(1.0, temp, 10.0, chemistry))
            measured = at25 / scale
            rows.append({"site_id": site_id, "test_date": day.isoformat(), "kind": "performance",
                         "duration_h": f"{max(0.5, 10.0 * measured):.2f}",
                         "capacity_pct": f"{100.0 * max(measured, 0.0):.2f}", "start_temp_c": f"{temp:.1f}",
                         "corrected_to_25c": "no", "rate_h": "10"})
    return rows, truth


def write_tests_csv(path: Path, rows: list[dict]) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as handle:
        out = csv.DictWriter(handle, fieldnames=TEST_COLUMNS, lineterminator="\n")
        out.writeheader()
        out.writerows(rows)
    return path
