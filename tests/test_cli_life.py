"""``planner life`` (planner.cli.life) through click's CliRunner."""

import json

import numpy as np
import pytest
import rainflow
from click.testing import CliRunner

from planner.aging.profiles import cycling_profile
from planner.cli import cli


def _run(*args):
    return CliRunner().invoke(cli, ["life", *args])


def _json(*args):
    result = _run(*args, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


@pytest.mark.parametrize("aging_set", ["published", None])
def test_storage_json_keys_and_lfp_fact(aging_set):
    out = _json("--chemistry", "lfp", "--temp-c", "25", "--years", "40",
                *(["--aging-set", aging_set] if aging_set else []))
    # Keys of `planner life --json` that scripts read (kept fixed).
    assert {"years_to_eol", "calendar_loss_frac", "cycle_loss_frac", "soh_by_year"} <= set(out)
    assert "cycles_to_eol" not in out  # only when cycling
    # common practice: LFP stored full at 25 °C reaches 80 % in about 15 years (x2): the
    # set at the small cell's level (8.7 years) and the default, the large-format cell's
    # law held at its end-of-test rate (about 26 years), both hold it.
    assert 7.5 <= out["years_to_eol"] <= 30
    # End of life is at the requested SOH: the two parts add to 20 % (definition).
    assert out["calendar_loss_frac"] + out["cycle_loss_frac"] == pytest.approx(0.2, abs=1e-9)
    assert len(out["soh_by_year"]) == 41 and out["soh_by_year"][0] == 1.0  # --years default 40


def test_not_reached_gives_null():
    # A 25 °C LFP pack does not reach 80 % within 2 years (common practice: ~15 years).
    out = _json("--chemistry", "lfp", "--temp-c", "25", "--years", "2")
    assert out["years_to_eol"] is None
    assert len(out["soh_by_year"]) == 3


def test_cycling_reports_cycles_to_eol():
    out = _json("--chemistry", "vrla", "--temp-c", "25", "--dod-frac", "0.5",
                "--cycles-per-day", "1", "--years", "10")
    # Definition: cycles = years x 365 x cycles per day.
    assert out["cycles_to_eol"] == pytest.approx(out["years_to_eol"] * 365, rel=1e-12)
    # from memory (AGM datasheets): 500-700 cycles at 50 % DOD; float aging runs alongside,
    # so the cycle count to 80 % can only be lower.
    assert 300 <= out["cycles_to_eol"] <= 700


def test_vrla_hot_storage_halves_life():
    # common practice (8 °C rule, default 8.3 K step): 10 years at 25 °C, about 5 at 33 °C.
    at25 = _json("--chemistry", "vrla", "--temp-c", "25")["years_to_eol"]
    at33 = _json("--chemistry", "vrla", "--temp-c", "33")["years_to_eol"]
    assert at25 == pytest.approx(10.0, rel=1e-6)
    assert at33 == pytest.approx(5.0, rel=0.05)


def test_lower_charge_voltage_lasts_longer():
    # common practice (NMC): lower charge voltage buys cycle life.
    base = ["--chemistry", "nmc", "--temp-c", "25", "--dod-frac", "0.7", "--cycles-per-day", "2",
            "--years", "15"]
    low = _json(*base, "--charge-voltage-v", "4.0")["years_to_eol"]
    high = _json(*base, "--charge-voltage-v", "4.2")["years_to_eol"]
    assert low > high


def test_cycling_profile_counts_as_requested():
    # Reference library: rainflow.count_cycles on the synthetic profile gives the requested
    # number of cycles of the requested depth (2 per day x 365 days).
    soc, current = cycling_profile(1.0, 0.6, 2.0, 0.2)
    counts = rainflow.count_cycles(soc.tolist())
    deep = sum(c for r, c in counts if abs(r - 0.6) < 1e-9)
    assert deep == pytest.approx(730, abs=1)
    assert sum(c for r, c in counts if abs(r - 0.6) >= 1e-9) == 0
    # Charge balance of each cycle (definition): discharged charge equals charged charge.
    assert current.sum() == pytest.approx(0.0, abs=1e-9)
    assert np.max(soc) == 1.0 and np.min(soc) == pytest.approx(0.4)


def test_list_shows_chemistries_and_sources():
    result = _run("--list")
    assert result.exit_code == 0
    for chem_id in ("vrla", "lfp", "nmc", "lto", "lisocl2"):
        assert chem_id in result.output
    assert "Schmalstieg" in result.output and "common practice" in result.output


@pytest.mark.parametrize("args, fragment", [
    (["--chemistry", "nicd", "--temp-c", "25"], "expected one of vrla, lfp, nmc, lto, lisocl2"),
    (["--chemistry", "lfp"], "exactly one of --temp-c"),
    (["--chemistry", "lfp", "--temp-c", "25", "--climate", "hot-desert"], "exactly one of --temp-c"),
    (["--chemistry", "lfp", "--temp-c", "25", "--dod-frac", "0.5"], "go together"),
    (["--chemistry", "nmc", "--temp-c", "25", "--charge-voltage-v", "12"], "per cell"),
    (["--chemistry", "lfp", "--temp-c", "25", "--eol-soh", "80"], "--eol-soh"),
    (["--chemistry", "lfp", "--temp-c", "25", "--dod-frac", "0.5", "--cycles-per-day", "50"],
     "--cycles-per-day"),
    (["--temp-c", "25"], "missing --chemistry"),
])
def test_bad_input_is_one_line_and_exit_2(args, fragment):
    # Project rule: bad input -> one line naming the option, what was found and expected; exit 2.
    result = _run(*args)
    assert result.exit_code == 2
    assert fragment in result.output
    assert "Traceback" not in result.output


def test_climate_source_runs_and_heat_shortens_life():
    # Hot desert in a sun-exposed cabinet vs a constant 20 °C: heat shortens VRLA life
    # (common practice: Arrhenius halving above 25 °C).
    hot = _json("--chemistry", "vrla", "--climate", "hot-desert", "--enclosure", "cabinet-sun")
    mild = _json("--chemistry", "vrla", "--temp-c", "20")
    assert hot["years_to_eol"] < mild["years_to_eol"]
    assert hot["battery_mean_temp_c"] > 20.0


def test_plan_names_beside_the_life_names():
    # One name for one thing: the plan's life_years / eol_soh_frac / life_pNN_years sit beside
    # years_to_eol / eol_soh / years_to_eol_pNN (kept for scripts), with equal values.
    out = _json("--chemistry", "lfp", "--temp-c", "25", "--eol-soh-frac", "0.75", "--series-cells", "4",
                "--draws", "200")
    assert out["life_years"] == out["years_to_eol"] and out["eol_soh_frac"] == out["eol_soh"] == 0.75
    for p in ("p10", "p50", "p90"):
        assert out[f"life_{p}_years"] == out[f"years_to_eol_{p}"]
    old = _json("--chemistry", "lfp", "--temp-c", "25", "--eol-soh", "0.75")
    assert old["years_to_eol"] == out["years_to_eol"]  # --eol-soh is the same option


def test_per_cell_charge_voltage_option_and_its_older_name():
    # --charge-voltage-v was always per cell; --charge-voltage-v-per-cell says so (the plan's
    # charge_voltage_v is the whole pack). Both names give the same answer.
    new = _json("--chemistry", "nmc", "--temp-c", "25", "--charge-voltage-v-per-cell", "4.0")
    old = _json("--chemistry", "nmc", "--temp-c", "25", "--charge-voltage-v", "4.0")
    assert new == old and new["charge_voltage_v_per_cell"] == 4.0


def test_primary_cells_show_no_charge_voltage_or_cycling():
    # A primary cell is not charged and does not cycle: its text says so.
    result = _run("--chemistry", "lisocl2", "--temp-c", "20", "--c-rate", "0.0001")
    assert result.exit_code == 0, result.output
    assert "not charged" in result.output and "charge voltage" not in result.output
    assert "cycling" not in result.output and "drawn by the load" in result.output
    refused = _run("--chemistry", "lisocl2", "--temp-c", "20", "--charge-voltage-v-per-cell", "3.6")
    assert refused.exit_code == 2 and "not rechargeable" in refused.output
    assert _json("--chemistry", "lisocl2", "--temp-c", "20")["rechargeable"] is False


def test_json_out_writes_the_same_json(tmp_path):
    # --json-out PATH, as in 'planner plan --json-out': the file holds what --json prints.
    target = tmp_path / "life.json"
    result = _run("--chemistry", "vrla", "--temp-c", "25", "--json-out", str(target))
    assert result.exit_code == 0, result.output
    assert json.loads(target.read_text()) == _json("--chemistry", "vrla", "--temp-c", "25")
    printed = _run("--chemistry", "vrla", "--temp-c", "25", "--json-out", "-")
    assert json.loads(printed.output) == json.loads(target.read_text())


def test_cycling_below_the_charge_limit_is_refused_with_the_reason():
    # common practice: graphite-anode lithium-ion is not charged below 0 °C (lithium
    # plating); plans block it, so planner life must not report a charged cycling life there
    result = _run("--chemistry", "lfp", "--temp-c", "-10", "--dod-frac", "0.8",
                  "--cycles-per-day", "1", "--c-rate", "0.1")
    assert result.exit_code == 2
    assert "blocked below 0 °C" in result.output and "never recharged" in result.output
    assert len(result.output.strip().splitlines()) == 1
    # above the maximum charge temperature (45 °C in chemistries.toml) as well
    hot = _run("--chemistry", "lfp", "--temp-c", "50", "--dod-frac", "0.8",
               "--cycles-per-day", "1")
    assert hot.exit_code == 2 and "above 45 °C" in hot.output
    # storing (no cycling) at -10 °C is fine: nothing is charged
    assert _run("--chemistry", "lfp", "--temp-c", "-10").exit_code == 0
    # LTO is charged down to -20 °C (chemistries.toml): cycling at -10 °C is allowed
    assert _run("--chemistry", "lto", "--temp-c", "-10", "--dod-frac", "0.8",
                "--cycles-per-day", "1").exit_code == 0


def test_cycling_in_a_climate_says_how_many_charging_hours_are_blocked():
    # The alpine archetype in a sun cabinet freezes in winter: the profile's charging hours
    # below 0 °C are counted and said (the plan blocks them).
    out = _json("--chemistry", "lfp", "--climate", "alpine", "--enclosure", "cabinet-sun",
                "--dod-frac", "0.8", "--cycles-per-day", "1")
    assert out["charge_blocked_cold_hours_per_year"] > 0
    assert out["charge_blocked_hours_per_year"] == (out["charge_blocked_cold_hours_per_year"]
                                                    + out["charge_blocked_hot_hours_per_year"])
    text = _run("--chemistry", "lfp", "--climate", "alpine", "--enclosure", "cabinet-sun",
                "--dod-frac", "0.8", "--cycles-per-day", "1")
    assert "charging blocked:" in text.output


def test_end_of_life_below_the_tested_range_is_raised_to_it_and_said():
    # Published lithium-ion trajectories show a knee, typically between 80 and 70 % SOH
    # (Attia et al. 2022, J. Electrochem. Soc. 169, 060517); the tests behind the LFP laws
    # end near 80 % (chemistries.toml, from memory): a 70 % end of life is not computed
    # on the knee-free law, it is raised to 80 % and flagged.
    low = _json("--chemistry", "lfp", "--temp-c", "25", "--eol-soh", "0.7")
    at80 = _json("--chemistry", "lfp", "--temp-c", "25", "--eol-soh", "0.8")
    assert low["eol_soh_applied"] == 0.8 and low["life_knee_floor"] is True
    assert low["years_to_eol"] == pytest.approx(at80["years_to_eol"])
    assert at80["life_knee_floor"] is False
    text = _run("--chemistry", "lfp", "--temp-c", "25", "--eol-soh", "0.7").output
    assert "raised from 70% to 80% SOH" in text
    # lead-acid has no such envelope floor (its worn-out floor is the 80 % criterion)
    vrla = _json("--chemistry", "vrla", "--temp-c", "25", "--eol-soh", "0.7")
    assert vrla["life_knee_floor"] is False
