"""Synthetic hourly duty profiles for aging a pack outside a site's energy balance.

Used by ``planner life`` and by the validation report to age a pack that cycles
regularly, the way published cycle-aging tests do.
"""

from __future__ import annotations

import math

import numpy as np

from planner import HOURS_PER_YEAR


def cycling_profile(top_soc_frac: float, dod_frac: float, cycles_per_day: float,
                    c_rate: float):
    """Synthetic hourly SOC and current of regular cycling from a full pack.

    Each cycle starts from ``top_soc_frac``, discharges ``dod_frac`` at a steady current
    over ``d = ceil(dod / c_rate)`` whole hours, charges it back over the next ``d`` hours
    and rests full until the next cycle; cycles start every ``24 / cycles_per_day`` hours
    (rounded down to whole hours). Values are the SOC at the start of each hour and the
    hour's mean current (+ discharge, - charge) as a C-rate. Hourly samples cannot show
    a cycle faster than two hours, so the nominal ``c_rate`` is passed to the aging
    engine as the cycle C-rate separately.

    Returns
    -------
    soc_frac, current_c_rate : ndarray, shape (8760,)
    """
    ramp_h = max(1, math.ceil(dod_frac / c_rate - 1e-9))
    period_h = 24.0 / cycles_per_day
    hours = np.arange(HOURS_PER_YEAR)
    starts = np.floor(np.arange(0.0, HOURS_PER_YEAR, period_h)).astype(int)
    cycle_of_hour = np.searchsorted(starts, hours, side="right") - 1
    phase = hours - starts[cycle_of_hour]
    step = dod_frac / ramp_h
    down = phase < ramp_h
    up = (phase >= ramp_h) & (phase < 2 * ramp_h)
    soc = np.full(HOURS_PER_YEAR, top_soc_frac)
    soc[down] = top_soc_frac - step * phase[down]
    soc[up] = top_soc_frac - dod_frac + step * (phase[up] - ramp_h)
    current = np.where(down, step, np.where(up, -step, 0.0))
    return soc, current
