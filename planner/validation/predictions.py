"""The planner's predictions at the conditions of each reference row of the report.

Every function ages a pack through :func:`planner.aging.age_lanes` (or evaluates the
planner's own law) with the parameters of the chemistry ``chem_of`` returns, so a
perturbed parameter set moves the prediction (the mutation coverage of the report).
"""

from __future__ import annotations

import numpy as np

H = 8760
YEAR_S = 365 * 24 * 3600.0
LONG_YEARS = 600
"""Horizon for ratios of storage lives of sets that last centuries in storage (the
small cells' laws at a large-format level: LFP at half charge and 25 °C lasts about 350
years)."""


def storage_years(chem, temp_c, soc=None, years=80):
    """Years to 80 % SOH stored at a constant temperature (full at the default voltage)."""
    from planner.aging import age_lanes

    soc = 1.0 if soc is None else soc
    result = age_lanes(chem, np.full((H, 1), temp_c), np.full((H, 1), soc), None,
                       chem.default_charge_voltage_v_per_cell, years)
    return float(result.years_to_soh(0.8)[0])


def storage_loss(chem, temp_c, soc, years=1):
    """Calendar loss after ``years`` stored at a temperature and state of charge."""
    from planner.aging import age_lanes

    result = age_lanes(chem, np.full((H, 1), temp_c), np.full((H, 1), soc), None,
                       chem.default_charge_voltage_v_per_cell, years)
    return float(result.calendar_loss_frac[-1, 0])


def storage_loss_at(chem, temp_c, soc, years):
    """Calendar loss after ``years`` (a whole number of months) stored at a temperature and
    state of charge."""
    months = int(round(12 * years))
    result = storage_result(chem, temp_c, soc, -(-months // 12))
    return float(result.calendar_loss_frac[months, 0])


def storage_result(chem, temp_c, soc, years):
    """The FadeResult of storage at a temperature and state of charge."""
    from planner.aging import age_lanes

    return age_lanes(chem, np.full((H, 1), temp_c), np.full((H, 1), soc), None,
                     chem.default_charge_voltage_v_per_cell, years)


def cycling(chem, temp_c, *, dod=0.8, per_day=1.0, c_rate=0.5, charge_c_rate=None, years=40,
            aging_set=None):
    """Regular cycling from full (the profile of ``planner life``): the FadeResult.

    ``aging_set`` picks a set other than the chemistry's default."""
    from planner.aging import age_lanes
    from planner.aging.profiles import cycling_profile

    volts = chem.default_charge_voltage_v_per_cell
    soc, current = cycling_profile(float(chem.usable_fraction(volts)), dod, per_day, c_rate)
    rate = c_rate if charge_c_rate is None else charge_c_rate
    return age_lanes(chem, np.full((H, 1), temp_c), soc[:, None], current[:, None], volts, years,
                     peak_c_rate=c_rate, charge_c_rate=rate, aging_set=aging_set)


def cycles_to_80(chem, temp_c, *, dod, per_day, c_rate, years=40, aging_set=None):
    """Cycles to 80 % SOH of :func:`cycling`."""
    result = cycling(chem, temp_c, dod=dod, per_day=per_day, c_rate=c_rate, years=years,
                     aging_set=aging_set)
    return float(result.years_to_soh(0.8)[0]) * 365.0 * per_day


def loss_after_hours(result, hours):
    """Total loss (calendar + cycling) of a FadeResult after ``hours``, interpolated on
    its monthly rows."""
    from planner.aging.engine import row_years

    rows = np.arange(result.soh_monthly.shape[0])
    loss = 1.0 - result.soh_monthly[:, 0]
    return float(np.interp(hours / H, row_years(rows), loss))


def continuous_cycles(chem, volts=None, years=1, dod=None, temp_c=25.0):
    """Back-to-back full 1 C cycles (1 h down, 1 h up): cycles to 80 % and the FadeResult."""
    from planner.aging import age_lanes

    volts = chem.default_charge_voltage_v_per_cell if volts is None else volts
    top = float(chem.usable_fraction(volts))
    depth = top if dod is None else dod
    even = np.arange(H) % 2 == 0
    result = age_lanes(chem, np.full((H, 1), temp_c), np.where(even, top, top - depth)[:, None],
                       np.where(even, depth, -depth)[:, None], volts, years, peak_c_rate=1.0)
    return float(result.years_to_soh(0.8)[0]) * H / 2.0, result
