"""Tests of the chemistry library (planner.chemistry, planner/data/chemistries.toml)."""

import tomllib
from importlib import resources

import numpy as np
import pytest

from planner.chemistry import CHEMISTRY_IDS, get_chemistry
from planner.errors import InputError


def _raw_library():
    return tomllib.loads(
        resources.files("planner").joinpath("data/chemistries.toml").read_text("utf-8"))


def _walk_numbers(node, path=""):
    """Yield (path, parent table) for every number in the TOML tree."""
    if isinstance(node, dict):
        for key, value in node.items():
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                yield f"{path}.{key}", node
            elif isinstance(value, list):
                if any(isinstance(v, (int, float)) for v in value):
                    yield f"{path}.{key}", node
            else:
                yield from _walk_numbers(value, f"{path}.{key}")


def test_ids_are_the_fixed_list():
    # The ids are fixed: study files, the CLI and the workbook use them (docs/study-file.md).
    assert CHEMISTRY_IDS == ("vrla", "lfp", "nmc", "lto", "lisocl2")
    for chem_id in CHEMISTRY_IDS:
        assert get_chemistry(chem_id).id == chem_id


def test_every_number_has_a_source():
    # Project rule: every model parameter carries its source.
    offenders = [path for path, parent in _walk_numbers(_raw_library())
                 if not str(parent.get("source", "")).strip()]
    assert offenders == []


def test_unknown_id_lists_valid_ids():
    with pytest.raises(InputError) as err:
        get_chemistry("nicd")
    message = str(err.value)
    assert "nicd" in message and all(chem_id in message for chem_id in CHEMISTRY_IDS)
    assert "\n" not in message


def test_round_trip_efficiency_is_the_product():
    # Definition: round trip = charge efficiency x discharge efficiency.
    for chem_id in CHEMISTRY_IDS:
        chem = get_chemistry(chem_id)
        assert chem.round_trip_efficiency_frac == pytest.approx(
            chem.charge_efficiency_frac * chem.discharge_efficiency_frac)
    # common practice: lead-acid round trip about 80 %, lithium-ion about 90-95 %.
    assert 0.75 <= get_chemistry("vrla").round_trip_efficiency_frac <= 0.85
    for chem_id in ("lfp", "nmc", "lto"):
        assert 0.90 <= get_chemistry(chem_id).round_trip_efficiency_frac <= 0.97


def test_usable_fraction_is_one_at_default_and_rises_with_voltage():
    # Definition of rated capacity in chemistries.toml: usable fraction 1.0 at the default.
    for chem_id in CHEMISTRY_IDS:
        chem = get_chemistry(chem_id)
        assert chem.usable_fraction(chem.default_charge_voltage_v_per_cell) == pytest.approx(1.0)
        fracs = chem.usable_fraction(np.array(chem.charge_voltages_v_per_cell))
        assert np.all(np.diff(fracs) >= 0)
    # from memory (charge-voltage table of common practice): NMC at 4.10 V gives about 90 %.
    assert get_chemistry("nmc").usable_fraction(4.10) == pytest.approx(0.9, abs=0.05)


def test_cold_derating_follows_practice():
    # common practice: lead-acid gives about half its capacity near -18 °C (0 °F).
    assert 0.45 <= float(get_chemistry("vrla").available_capacity_fraction(-18.0)) <= 0.65
    # from memory: Li-ion about 0.9 at 0 °C and 0.6-0.7 at -20 °C (LFP at the low end).
    nmc = get_chemistry("nmc")
    assert float(nmc.available_capacity_fraction(0.0)) == pytest.approx(0.9, abs=0.05)
    for chem_id in CHEMISTRY_IDS:
        temps = np.linspace(-50.0, 40.0, 91)
        fracs = get_chemistry(chem_id).available_capacity_fraction(temps)
        assert fracs.shape == temps.shape
        assert np.all(np.diff(fracs) >= 0), chem_id  # colder never gives more capacity


def test_charge_windows():
    # common practice: graphite-anode lithium-ion is not charged below 0 °C; LTO is.
    assert get_chemistry("lfp").charge_temp_min_c == 0.0
    assert get_chemistry("nmc").charge_temp_min_c == 0.0
    assert get_chemistry("lto").charge_temp_min_c < 0.0
    assert not get_chemistry("lisocl2").rechargeable
    assert get_chemistry("lisocl2").max_charge_c_rate == 0.0


def test_self_discharge_doubles_per_10k():
    # Vendor booklet figure for AGM: about 3 %/month at 20 °C and 1.5 %/month at 10 °C.
    vrla = get_chemistry("vrla")
    per_month = vrla.self_discharge_frac_per_h(np.array([20.0, 10.0])) * 730.0
    np.testing.assert_allclose(per_month, [0.03, 0.015], rtol=1e-9)
    # Vendor statements: Li-SOCl2 about 1 %/yr at room temperature.
    per_year = float(get_chemistry("lisocl2").self_discharge_frac_per_h(20.0) * 8760.0)
    assert per_year == pytest.approx(0.01, rel=0.01)


def test_aging_sets_present():
    # Alternative parameter sets per chemistry (LFP published vs calibrated; docs/aging.md).
    lfp = get_chemistry("lfp")
    assert {"calibrated", "naumann"} <= set(lfp.aging_sets)
    assert lfp.aging_set("naumann").calendar["activation_energy_j_mol"] == 17126.0  # Naumann 2018
    with pytest.raises(InputError):
        lfp.aging_set("nope")
    for chem_id in CHEMISTRY_IDS:
        chem = get_chemistry(chem_id)
        for params in chem.aging_sets.values():
            names = {f"calendar.{k}" for k in params.calendar} | {f"cycle.{k}" for k in params.cycle}
            assert names == set(params.sources)
