"""One site's field records as observations of its fade: tests, logs, a measured SOH.

Each capacity test is corrected to 25 °C (:mod:`planner.evidence.correction`), expressed
as a fraction of the pack's rated capacity (``existing_capacity_wh / system_voltage_v``
in Ah) and paired with the laws' predicted calendar and cycle loss at the pack's age on
the test day. A test whose lowest cell read far below the string's mean measured a
failed cell, not fade: it is left out of the fade and raises a flag and a visit
recommendation instead. A battery log gives capacity records of its own
(:mod:`planner.evidence.battery_logs`), or says why it cannot.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from planner.chemistry import get_chemistry
from planner.evidence.battery_logs import capacity_from_log, charge_drawn
from planner.evidence.correction import capacity_at_25c, lithium_test_warning
from planner.evidence.hierarchy import Observations
from planner.evidence.lives import PackCurve
from planner.study.field_records import CapacityTest, SiteLog, study_epoch, years_between

#: Standard error of a field discharge test after correction to 25 °C, fraction of
#: rated capacity: meter accuracy, temperature reading and end-voltage timing (common
#: practice, from memory: about 2 %).
TEST_SIGMA_FRAC = 0.02
#: A measured state of health of the sites table (existing_soh_frac) has no date or
#: method: taken at the study start with a wider error (from memory).
SITES_TABLE_SOH_SIGMA_FRAC = 0.04
#: A cell whose end-of-test voltage is this share of its nominal voltage below the
#: string's mean is weak or failed (common practice, from memory: about 0.2 V on a 2 V
#: lead-acid cell, 0.3 V on a 3.2 V LFP cell).
FAILED_CELL_DROP_OF_NOMINAL = 0.10
#: Rate assumed for a test that gives neither a rate, a current, a power nor a full
#: duration (IEC 60896-21 rates capacity at 10 h; from memory).
DEFAULT_RATE_H = 10.0


@dataclass(frozen=True)
class TestReading:
    """How one capacity test was read: its age, measured and corrected state of health,
    whether it was used for the fade and why not."""

    row: int
    test_date: dt.date
    kind: str
    age_years: float
    measured_frac: float
    corrected_frac: float
    censored: bool
    used: bool
    note: str = ""
    failed_cell: bool = False


@dataclass
class SiteRecords:
    """A site's observations and what was made of each record."""

    observations: Observations
    tests: list[TestReading] = field(default_factory=list)
    log_note: str = ""
    log_records: int = 0
    failed_cell: str = ""
    warnings: list[str] = field(default_factory=list)


def rated_ah(site) -> float:
    """Rated capacity of the pack in service, Ah, from the sites table."""
    return float(site.existing_capacity_wh) / float(site.system_voltage_v)


def test_rate_h(test: CapacityTest, site) -> tuple[float, str]:
    """The test's discharge rate in hours of rated capacity, and how it was found."""
    if test.rate_h is not None:
        return float(test.rate_h), ""
    if test.discharge_current_a is not None:
        return rated_ah(site) / test.discharge_current_a, ""
    if test.discharge_power_w is not None:
        return float(site.existing_capacity_wh) / test.discharge_power_w, ""
    if not test.censored:
        return float(test.duration_h), ""
    return DEFAULT_RATE_H, f"rate taken as {DEFAULT_RATE_H:g} h (none given)"


def failed_cell_text(test: CapacityTest, chemistry: str) -> str:
    """Why a test's lowest cell marks a failed cell, or ''."""
    if test.lowest_cell_v is None or test.end_voltage_v_per_cell is None:
        return ""
    nominal = get_chemistry(chemistry).cell_voltage_v
    drop = test.end_voltage_v_per_cell - test.lowest_cell_v
    if drop < FAILED_CELL_DROP_OF_NOMINAL * nominal:
        return ""
    cell = f" ({test.lowest_cell_id})" if test.lowest_cell_id else ""
    return (f"cell{cell} at {test.lowest_cell_v:.2f} V against a string mean of "
            f"{test.end_voltage_v_per_cell:.2f} V per cell on {test.test_date.isoformat()}")


def read_test(test: CapacityTest, site, chemistry: str, curve: PackCurve, epoch: dt.date,
              installed: dt.date, lead_acid_rule: str) -> TestReading:
    """One test as a reading (not yet an observation)."""
    measured = (test.capacity_pct / 100.0 if test.capacity_pct is not None
                else test.capacity_ah / rated_ah(site))
    notes = []
    rate, how = test_rate_h(test, site)
    if how:
        notes.append(how)
    if test.corrected_to_25c:
        corrected = measured
    else:
        corrected = float(capacity_at_25c(measured, test.start_temp_c, rate, chemistry, lead_acid_rule))
        warn = lithium_test_warning(test.start_temp_c, chemistry)
        if warn:
            notes.append(warn)
    age = years_between(installed, test.test_date)
    cell = failed_cell_text(test, chemistry)
    if cell:
        notes.insert(0, "failed cell, not fade: left out of the fade factor")
    return TestReading(row=test.row, test_date=test.test_date, kind=test.kind, age_years=age,
                       measured_frac=measured, corrected_frac=corrected, censored=test.censored,
                       used=not cell, note="; ".join(notes), failed_cell=bool(cell))


def site_records(site, chemistry: str, curve: PackCurve, tests: list[CapacityTest],
                 log: SiteLog | None, *, start_year: int, series_cells: int,
                 lead_acid_rule: str = "iec60896-21", with_table_soh: bool = True) -> SiteRecords:
    """Every record of one site turned into :class:`Observations` against ``curve``."""
    epoch = study_epoch(start_year)
    installed = dt.date(int(site.existing_installed_year), 1, 1)
    readings = [read_test(t, site, chemistry, curve, epoch, installed, lead_acid_rule)
                for t in sorted(tests, key=lambda t: (t.test_date, t.row))]
    rows = [(r.age_years, r.corrected_frac, TEST_SIGMA_FRAC, r.censored, 1.0) for r in readings if r.used]
    out = SiteRecords(Observations.empty(), tests=readings)
    failed = [r for r in readings if r.failed_cell]
    if failed and readings[-1].failed_cell:
        test = next(t for t in tests if t.row == failed[-1].row)
        out.failed_cell = failed_cell_text(test, chemistry)
    out.warnings += [f"test of {r.test_date.isoformat()} (row {r.row}): {r.note}" for r in readings
                     if r.note and not r.failed_cell]
    if with_table_soh and site.existing_soh_frac:
        rows.append((curve.age_years, float(site.existing_soh_frac), SITES_TABLE_SOH_SIGMA_FRAC, False, 1.0))
    drawn_rows = []
    if log is not None:
        drawn_rows = _log_rows(out, site, chemistry, curve, log, series_cells, lead_acid_rule, rows)
    ages = np.array([r[0] for r in rows] + [r[0] for r in drawn_rows])
    if ages.size == 0:
        return out
    cal, cyc = curve.loss_at(ages[:len(rows)])
    loss_cal = np.concatenate([cal, np.zeros(len(drawn_rows))])
    loss_cyc = np.concatenate([cyc, [r[5] for r in drawn_rows]])
    every = rows + [r[:5] for r in drawn_rows]
    out.observations = Observations(
        age_years=ages, soh_frac=np.array([r[1] for r in every]),
        sigma_frac=np.array([r[2] for r in every]), censored=np.array([r[3] for r in every], dtype=bool),
        offset_weight=np.array([r[4] for r in every]), loss_cal_frac=loss_cal, loss_cyc_frac=loss_cyc)
    return out


def _log_rows(out: SiteRecords, site, chemistry, curve, log, series_cells, lead_acid_rule, rows):
    """Add the log's capacity records to ``rows``; return charge-drawn records of a primary
    pack as ``(age, -drawn/rated, sigma, False, 0.0, predicted drawn share)``."""
    if chemistry == "lisocl2":
        first, last, ah = charge_drawn(log.time_h, log.current_a, rated_ah=rated_ah(site))
        if last - first < 24.0 * 30:
            out.log_note = "a primary pack's log shorter than 30 days: too short to count charge drawn"
            return []
        a0, a1 = curve.age_years + first / 8760.0, curve.age_years + last / 8760.0
        _, cyc = curve.loss_at(np.array([a0, a1]))
        share = ah / rated_ah(site)
        out.log_note = f"primary pack: {ah:.3g} Ah drawn over {(last - first) / 24:.0f} days counted"
        out.log_records = 1
        # a current sensor's gain error on the charge drawn (1 %) and a floor (0.5 % of rated)
        sigma = 0.01 * share + 0.005
        return [(0.5 * (a0 + a1), -share, sigma, False, 0.0, float(cyc[1] - cyc[0]))]
    found = capacity_from_log(chemistry, site.charging, log.time_h, log.pack_voltage_v, log.current_a,
                              log.battery_temp_c, series_cells=series_cells, rated_ah=rated_ah(site),
                              age_now_years=curve.age_years, lead_acid_rule=lead_acid_rule)
    if not found.usable:
        out.log_note = f"log not usable: {found.reason}"
        return []
    out.log_records = int(found.capacity_frac.size)
    out.log_note = (f"log gave {found.capacity_frac.size} capacity record(s) from "
                    f"{int(found.pairs.sum())} rest-to-rest swings")
    rows += [(float(a), float(c), float(s), False, 1.0)
             for a, c, s in zip(found.age_years, found.capacity_frac, found.sigma_frac)]
    return []
