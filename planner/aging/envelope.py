"""Where a life prediction leaves the conditions its aging set was fitted on.

Every aging set in ``chemistries.toml`` records its envelope (``AgingEnvelope``): the
temperatures of the calendar and cycle tests behind the fit, the state of charge and
C-rate ranges, and the longest test. A prediction outside it is an extrapolation: the
law is carried beyond its data (e.g. a calendar fit on 25 and 45 °C used at 5 °C, or
a two-year test used for a 40-year life). Such lives are flagged, not suppressed: the
law may still be the best available, but a planner should know it leans on it.

The rule for "too long": more than :data:`TEST_LENGTH_FACTOR` times the longest test
(a common engineering rule for extrapolating accelerated tests; from memory).
"""

from __future__ import annotations

import math

TEST_LENGTH_FACTOR = 3.0
"""A life longer than this many times the longest test behind the fit is an extrapolation."""

CYCLING_EFC_PER_YEAR = 20.0
"""Below this many equivalent full cycles a year the cycle law hardly matters (storage):
its envelope is not checked."""


def _range_text(pair, unit):
    low, high = pair
    return f"{low:g} {unit}" if low == high else f"{low:g}-{high:g} {unit}"


def extrapolation_notes(envelope, *, mean_temp_c, life_years=None, efc_per_year=0.0,
                        c_rate=None, soc_frac=None) -> list[str]:
    """Reasons (one line each) why a prediction lies outside ``envelope``; empty if none.

    Parameters
    ----------
    envelope : planner.chemistry.AgingEnvelope or None
        The aging set's fitted envelope (None: nothing to check).
    mean_temp_c : float
        Mean battery temperature over the year, °C.
    life_years : float, optional
        Predicted life (``inf`` when the pack never reaches its end of life).
    efc_per_year : float
        Equivalent full cycles a year; the cycle envelope is checked from
        :data:`CYCLING_EFC_PER_YEAR` up.
    c_rate : float, optional
        Cycling C-rate.
    soc_frac : float, optional
        Storage state of charge.
    """
    if envelope is None:
        return []
    notes = []
    low, high = envelope.calendar_temp_c
    too_long = life_years is not None and life_years > TEST_LENGTH_FACTOR * envelope.test_years
    if not low <= mean_temp_c <= high or too_long:
        if life_years is None:
            over = ""
        elif math.isfinite(life_years):
            over = f" over {life_years:.1f} years"
        else:
            over = " over more than the horizon"
        notes.append(f"calendar fit spans {_range_text(envelope.calendar_temp_c, '°C')} and "
                     f"{envelope.test_years:g} years; this is {mean_temp_c:.1f} °C{over}")
    if efc_per_year >= CYCLING_EFC_PER_YEAR:
        low, high = envelope.cycle_temp_c
        c_low, c_high = envelope.c_rate
        rate_out = c_rate is not None and not c_low - 1e-9 <= c_rate <= c_high + 1e-9
        if not low <= mean_temp_c <= high or rate_out:
            rate = f" at {c_rate:.2g} C" if c_rate is not None else ""
            notes.append(f"cycle fit spans {_range_text(envelope.cycle_temp_c, '°C')} at "
                         f"{_range_text(envelope.c_rate, 'C')}; this is {mean_temp_c:.1f} °C{rate}")
    if soc_frac is not None:
        low, high = envelope.soc_frac
        if not low - 1e-9 <= soc_frac <= high + 1e-9:
            notes.append(f"fit spans a state of charge of {low:g}-{high:g}; this is {soc_frac:.2f}")
    return notes
