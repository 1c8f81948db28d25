"""Tests for planner.plan.cautions: standard cautions and per-site warning helpers."""

from __future__ import annotations

from planner.plan.cautions import (
    DEFER_INSTRUCTION,
    STANDARD_CAUTIONS,
    cold_charge_warning,
    derived_site_warnings,
    heavy_pack_warning,
    hot_battery_warning,
    lithium_transport_warning,
)


def test_standard_cautions_cover_the_usual_hazards():
    # The hazards practitioners name for battery work (../shared/notes/sizing-economics.md §7.1;
    # README, safety): hydrogen from lead-acid, Li-ion thermal runaway, no cold charging,
    # lithium transport (UN 38.3), heavy lifting, DC arc.
    text = " ".join(f"{c.topic} {c.text} {c.defer_to}" for c in STANDARD_CAUTIONS).lower()
    for needle in ("hydrogen", "thermal runaway", "0 °c", "un 38.3", "lift", "arc"):
        assert needle in text, needle
    # Each caution names what it defers to.
    assert all(c.defer_to.strip() for c in STANDARD_CAUTIONS)


def test_defer_instruction_names_codes_and_licensed_practice():
    # README, safety: defer to local codes, standards (e.g. NFPA 855, IEC 62485-2, IEC 62619),
    # licensed practice.
    for needle in ("local codes", "NFPA 855", "IEC 62485-2", "IEC 62619", "licensed practice"):
        assert needle in DEFER_INSTRUCTION


def test_cold_charge_warning_lithium_ion_below_zero():
    # Graphite-anode Li-ion must not be charged below about 0 °C (common practice; cell datasheets).
    assert "blocked" in cold_charge_warning("S1", "lfp", -5.0)
    assert cold_charge_warning("S1", "nmc", 0.5) is None
    assert cold_charge_warning("S1", "lfp", -5.0, heated=True) is None
    # Lead-acid and LTO (titanate anode, no plating at 0 °C; common practice) are not flagged.
    assert cold_charge_warning("S1", "vrla", -30.0) is None
    assert cold_charge_warning("S1", "lto", -20.0) is None


def test_heavy_pack_warning_at_niosh_load_constant():
    # Revised NIOSH lifting equation load constant LC = 23 kg (Waters et al. 1993,
    # Ergonomics 36(7) 749-776; from memory).
    assert heavy_pack_warning("S1", 23.0) is None
    assert "23 kg" in heavy_pack_warning("S1", 23.5)
    assert heavy_pack_warning("S1", None) is None


def test_hot_battery_warning_above_typical_limit():
    # Typical 45 °C maximum charge temperature of Li-ion cells (common practice).
    assert hot_battery_warning("S1", "lfp", 44.9) is None
    assert "52.0 °C" in hot_battery_warning("S1", "lfp", 52.0)


def test_lithium_transport_warning_only_for_lithium():
    # UN 38.3 applies to lithium cells and batteries (UN Manual of Tests and Criteria §38.3).
    assert lithium_transport_warning("North", 3, 7, ["vrla"]) is None
    assert "UN 38.3" in lithium_transport_warning("North", 3, 7, ["vrla", "lisocl2"])


def test_derived_site_warnings_tolerant_and_deduplicated():
    assert derived_site_warnings({}) == []
    site = {"id": "S9", "chemistry": "lfp", "pack_mass_kg": 40.0,
            "temperature": {"battery_p1_c": -12.0, "battery_p99_c": 30.0},
            "warnings": ["model warning", "model warning"]}
    out = derived_site_warnings(site)
    assert out[0] == "model warning" and out.count("model warning") == 1
    assert any("blocked" in w for w in out) and any("NIOSH" in w for w in out)
    assert len(out) == 3


def test_model_warnings_are_not_repeated_in_other_words():
    # The energy stage reports blocked charging itself; the report must not add a second
    # cold-charging line, nor a second heat line when the models already gave one.
    site = {"id": "S1", "chemistry": "nmc", "charge_blocked_hours_per_year": 569.0,
            "temperature": {"battery_p1_c": -12.0, "battery_p99_c": 50.0},
            "warnings": ["charging blocked by cold for 569 h a year (below 0 °C)",
                         "battery above 45 °C for 761 h of a typical year"]}
    assert derived_site_warnings(site) == site["warnings"]
