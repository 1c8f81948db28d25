"""Tests of planner.energy.sizing (1x reference size).

Check values: the IEEE 1013 / IEEE 1562 sizing chain worked by hand (research note
sizing-economics.md section 1.6, computed: 893.75 Ah); IEEE 485 Table 1 rows at 60, 50
and 40 degF, confirmed by two practitioner tables (1.11, 1.19, 1.30) although the
standard's own table values are from memory; linear interpolation computed by hand.
"""

import numpy as np
import pytest

from planner.energy import sizing
from planner.errors import InputError


def test_worked_example_893_75_ah():
    # IEEE 1013 chain, computed: 960/12 = 80 Ah/day; x5 = 400; /0.8 = 500; x1.30 = 650;
    # x1.25 = 812.5; x1.10 = 893.75 Ah
    ref = sizing.reference_capacity(daily_load_wh=960, system_voltage_v=12, autonomy_days=5,
                                    max_dod_frac=0.8, temperature_factor=1.30,
                                    aging_factor=1.25, design_margin=1.10)
    assert ref.daily_load_ah == pytest.approx(80.0, abs=1e-12)
    assert ref.unadjusted_capacity_ah == pytest.approx(400.0, abs=1e-12)
    assert ref.capacity_ah == pytest.approx(893.75, abs=1e-9)
    assert ref.capacity_wh == pytest.approx(893.75 * 12, abs=1e-8)
    # every factor is carried so the planner can redo it by hand
    d = ref.to_dict()
    for key in ("max_dod_frac", "temperature_factor", "aging_factor", "design_margin",
                "autonomy_days", "daily_load_ah"):
        assert key in d
    assert "893.8 Ah" in ref.steps()[-1]


def test_conversion_efficiency_enters_the_daily_ah():
    # hand: 960 Wh / (12 V x 0.9) = 88.89 Ah/day
    ref = sizing.reference_capacity(daily_load_wh=960, system_voltage_v=12, autonomy_days=1,
                                    max_dod_frac=1.0, temperature_factor=1.0,
                                    aging_factor=1.0, design_margin=1.0,
                                    conversion_efficiency_frac=0.9)
    assert ref.capacity_ah == pytest.approx(960 / 12 / 0.9)


@pytest.mark.parametrize("temp_f, factor", [
    (60.0, 1.11),   # practitioner tables (worksheet; inverter manual app. B) = IEEE 485 T1
    (50.0, 1.19),   # same
    (40.0, 1.30),   # same
])
def test_lead_acid_temperature_factor_confirmed_rows(temp_f, factor):
    temp_c = (temp_f - 32) * 5 / 9
    assert sizing.lead_acid_temperature_factor(temp_c) == pytest.approx(factor, abs=1e-9)


def test_lead_acid_temperature_factor_interpolation_and_no_credit():
    # trust: the 30/35 degF rows (1.43, 1.35) are from memory (IEEE 485 Table 1);
    # linear interpolation at 0 degC computed by hand: 1.43 - 0.08 x (1.111/2.778) = 1.398
    assert sizing.lead_acid_temperature_factor(0.0) == pytest.approx(1.398, abs=1e-9)
    # IEEE 485: no credit above 25 degC (factor held at 1), from memory
    assert sizing.lead_acid_temperature_factor(40.0) == 1.0
    assert sizing.lead_acid_temperature_factor(40.0, allow_credit_above_25c=True) < 1.0
    # practitioner row at 20 degF (-6.7 degC) = 1.59, read in two tables
    assert sizing.lead_acid_temperature_factor((20 - 32) * 5 / 9) == pytest.approx(1.59)
    # colder is never easier (monotonic, physical fact)
    t = np.linspace(-30, 25, 200)
    assert np.all(np.diff(sizing.lead_acid_temperature_factor(t)) <= 1e-12)


def test_temperature_factor_from_derating():
    # K_T = 1 / available fraction (IEEE 485 factors are the reciprocal of capacity)
    assert sizing.temperature_factor_from_derating(0.8) == pytest.approx(1.25)
    assert sizing.temperature_factor_from_derating(1.05) == 1.0
    with pytest.raises(InputError, match="available_fraction"):
        sizing.temperature_factor_from_derating(0.0)


@pytest.mark.parametrize("kwargs, key", [
    (dict(daily_load_wh=-5), "daily_load_wh"),
    (dict(system_voltage_v=0), "system_voltage_v"),
    (dict(autonomy_days=0), "autonomy_days"),
    (dict(max_dod_frac=1.5), "max_dod_frac"),
    (dict(temperature_factor="x"), "temperature_factor"),
    (dict(aging_factor=0.5), "aging_factor"),
])
def test_bad_sizing_input(kwargs, key):
    args = dict(daily_load_wh=960, system_voltage_v=12, autonomy_days=5, max_dod_frac=0.8,
                temperature_factor=1.3)
    args.update(kwargs)
    with pytest.raises(InputError, match=key):
        sizing.reference_capacity(**args)


def test_lead_acid_methods_at_0c():
    # IEEE 485 Table 1 (from memory): about 1.40 at 0 degC (interpolated 1.398 above);
    # datasheet-style VRLA curve (from memory): 0.85 available at 0 degC -> 1/0.85 = 1.176.
    assert sizing.lead_acid_sizing_temperature_factor(0.0, 0.85, "ieee485") == pytest.approx(1.398, abs=1e-9)
    assert sizing.lead_acid_sizing_temperature_factor(0.0, 0.85) == pytest.approx(1 / 0.85)
    with pytest.raises(InputError):
        sizing.lead_acid_sizing_temperature_factor(0.0, 0.85, "other")
