"""Extrapolation notes (planner.aging.envelope) against their definition (docs/aging.md,
"Fitted envelopes and extrapolation flags").

A prediction is an extrapolation outside the fitted temperature range, or for a life
longer than about three times the longest test behind the fit (engineering rule for
accelerated tests, from memory); the note reads like "calendar fit spans 10-55 °C and
3 years; this is 2 °C over 20 years" (an invented envelope, worked by hand).
"""

import math

from planner.aging.envelope import extrapolation_notes
from planner.chemistry import AgingEnvelope

EXAMPLE = AgingEnvelope(calendar_temp_c=(10.0, 55.0), cycle_temp_c=(25.0, 45.0),
                        soc_frac=(0.0, 1.0), c_rate=(0.5, 1.0), test_years=3.0,
                        source="an invented example envelope")


def test_the_example_reads_as_written():
    notes = extrapolation_notes(EXAMPLE, mean_temp_c=2.0, life_years=20.0)
    assert notes == ["calendar fit spans 10-55 °C and 3 years; this is 2.0 °C over 20.0 years"]


def test_inside_the_envelope_gives_no_note():
    assert extrapolation_notes(EXAMPLE, mean_temp_c=30.0, life_years=9.0,
                               efc_per_year=300.0, c_rate=0.5, soc_frac=0.5) == []
    assert extrapolation_notes(None, mean_temp_c=-30.0, life_years=math.inf) == []


def test_each_rule_flags_on_its_own():
    # Temperature inside, life beyond three times the 3-year test.
    assert extrapolation_notes(EXAMPLE, mean_temp_c=30.0, life_years=9.1)
    assert extrapolation_notes(EXAMPLE, mean_temp_c=30.0, life_years=math.inf)
    # Cycling at a C-rate or temperature outside the cycle tests (storage is not checked).
    cyc = extrapolation_notes(EXAMPLE, mean_temp_c=30.0, efc_per_year=365.0, c_rate=0.1)
    assert cyc == ["cycle fit spans 25-45 °C at 0.5-1 C; this is 30.0 °C at 0.1 C"]
    assert extrapolation_notes(EXAMPLE, mean_temp_c=15.0, efc_per_year=365.0, c_rate=0.5)
    assert not extrapolation_notes(EXAMPLE, mean_temp_c=15.0, efc_per_year=5.0, c_rate=0.1)
