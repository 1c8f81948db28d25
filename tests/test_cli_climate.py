"""``planner climate`` through click's CliRunner."""

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.climate import load_climate
from planner.climate.summary import summarize_temperatures
from planner.thermal.battery import battery_temperature

FIXED_KEYS = ("air_mean_c", "air_p99_c", "battery_mean_c", "battery_p1_c", "battery_p99_c",
              "hours_above_45c", "hours_below_0c", "effective_temp_c")


def run(*args):
    return CliRunner().invoke(cli, list(args), catch_exceptions=False)


def test_help_has_an_example():
    result = run("climate", "--help")
    assert result.exit_code == 0
    assert "Example" in result.output and "planner climate hot-desert" in result.output


def test_list_names_every_bundled_climate():
    result = run("climate", "--list")
    assert result.exit_code == 0
    lines = result.output.strip().splitlines()
    assert len(lines) >= 11   # three pvlib years + eight archetypes (docs/climate.md)
    assert any(line.startswith("tmy2-miami-fl ") for line in lines)
    assert any(line.startswith("polar-coast ") for line in lines)


def test_json_has_fixed_keys_and_matches_the_library():
    result = run("climate", "hot-desert", "--enclosure", "cabinet-shade", "--json")
    assert result.exit_code == 0
    data = json.loads(result.output)
    for key in FIXED_KEYS:
        assert key in data
    # The command reports what the library computes (same inputs, same functions).
    year = load_climate("hot-desert")
    expected = summarize_temperatures(year.temp_air_c,
                                      battery_temperature(year, "cabinet-shade").temp_battery_c)
    assert data["battery_p99_c"] == pytest.approx(expected.battery_p99_c, abs=1e-3)
    assert data["hours_above_45c"] == expected.hours_above_45c
    # Air statistics straight from numpy on the loaded year.
    assert data["air_mean_c"] == pytest.approx(year.temp_air_c.mean(), abs=1e-3)


def test_warming_shifts_air_mean():
    base = json.loads(run("climate", "alpine", "--json").output)
    warm = json.loads(run("climate", "alpine", "--json", "--warming-k", "2").output)
    assert warm["air_mean_c"] - base["air_mean_c"] == pytest.approx(2.0, abs=2e-3)


def test_text_summary():
    result = run("climate", "tmy3-greensboro-nc", "--enclosure", "vault")
    assert result.exit_code == 0
    assert "Arrhenius-effective battery temperature" in result.output
    assert "Coldest month" in result.output


def test_csv_written_atomically(tmp_path):
    target = tmp_path / "out" / "hourly.csv"
    result = run("climate", "polar-coast", "--csv", str(target), "--heater-setpoint-c", "0")
    assert result.exit_code == 0
    frame = pd.read_csv(target, comment="#")  # declarations sit above the header
    assert len(frame) == 8760
    assert frame["time_start_local"].iloc[0].startswith("2023-01-01T00:00")
    assert {"temp_air_c", "temp_battery_c", "heater_power_w", "hvac_power_w"} <= set(frame.columns)
    assert frame["heater_power_w"].max() > 0       # a polar winter needs the heater
    assert list(target.parent.iterdir()) == [target]   # no temporary file left behind


def test_plain_csv_through_options(tmp_path):
    times = pd.date_range("2023-01-01", periods=8760, freq="h").strftime("%Y-%m-%d %H:%M")
    path = tmp_path / "logger.csv"
    pd.DataFrame({"time": times, "t_f": np.full(8760, 50.0)}).to_csv(path, index=False)
    result = run("climate", str(path), "--json", "--option", "temperature_unit=F",
                 "--option", "timestamp_marks=start", "--option", "utc_offset_h=-7",
                 "--option", "latitude_deg=35", "--option", "longitude_deg=-105",
                 "--option", "temperature_column=t_f")
    assert result.exit_code == 0, result.output
    # 50 F = 10 C ((50 - 32) * 5 / 9).
    assert json.loads(result.output)["air_mean_c"] == pytest.approx(10.0, abs=1e-3)


@pytest.mark.parametrize("args, fragment", [
    (("climate", "no-such-place"), "neither a bundled climate nor an existing file"),
    (("climate",), "missing SOURCE"),
    (("climate", "alpine", "--option", "oops"), "is not KEY=VALUE"),
])
def test_bad_input_exits_2_with_one_line(args, fragment):
    result = CliRunner().invoke(cli, list(args))
    assert result.exit_code == 2
    assert fragment in result.output
    assert "Traceback" not in result.output


def test_unknown_enclosure_is_a_usage_error():
    result = CliRunner().invoke(cli, ["climate", "alpine", "--enclosure", "tent"])
    assert result.exit_code == 2 and "tent" in result.output


def test_csv_missing_declaration(tmp_path):
    path = tmp_path / "x.csv"
    path.write_text("time,temp_air\n2023-01-01 00:00,1\n")
    result = CliRunner().invoke(cli, ["climate", str(path)])
    assert result.exit_code == 2
    assert "option 'temperature_unit' is missing" in result.output


def test_failed_csv_write_leaves_the_old_file_intact(tmp_path, monkeypatch):
    target = tmp_path / "hourly.csv"
    target.write_text("an earlier export\n")

    def broken(self, path, *args, **kwargs):
        with open(path, "w") as fh:      # half a file, then the disk "fills up"
            fh.write("time_start_local,temp")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_csv", broken)
    result = CliRunner().invoke(cli, ["climate", "alpine", "--csv", str(target)])
    # "could not write the output" has its own exit code, 4 (README).
    assert result.exit_code == 4 and "could not write the hourly CSV" in result.output
    assert target.read_text() == "an earlier export\n"
    assert list(tmp_path.iterdir()) == [target]      # the temporary file was removed


def test_hourly_csv_reads_back_with_no_option(tmp_path):
    # The CSV written by --csv carries its declarations: reading it back gives the same
    # hourly air temperature (written with 3 decimals, so within 0.0005 K) and position.
    from planner.climate import load_climate

    out = tmp_path / "alpine-hourly.csv"
    assert CliRunner().invoke(cli, ["climate", "alpine", "--csv", str(out)]).exit_code == 0
    result = CliRunner().invoke(cli, ["climate", str(out), "--json"])
    assert result.exit_code == 0, result.output
    back, original = load_climate(str(out)), load_climate("alpine")
    assert abs(back.temp_air_c - original.temp_air_c).max() <= 0.0005 + 1e-9
    assert abs(back.ghi_w_m2 - original.ghi_w_m2).max() <= 0.0005 + 1e-9
    assert (back.latitude_deg, back.longitude_deg, back.utc_offset_h) == (
        original.latitude_deg, original.longitude_deg, original.utc_offset_h)


def test_climate_warning_is_one_line_without_python_source(tmp_path):
    # A repaired gap is reported as "warning: ..." on one line (docs/climate.md);
    # Python's default warning format adds "file:line: ClimateWarning" and the source line
    # that issued it. A fresh process: pytest records warnings itself.
    import os
    import subprocess
    import sys

    from test_climate_readers import write_epw

    path = write_epw(tmp_path / "m.epw", np.full(8760, 10.0), missing_at={101, 102})
    repo = Path(__file__).resolve().parents[1]
    done = subprocess.run([sys.executable, "-c", "import sys; from planner.cli import main; sys.exit(main())",
                           "climate", str(path)], capture_output=True, text=True, timeout=120,
                          env={**os.environ, "PYTHONPATH": str(repo)})
    assert done.returncode == 0, done.stderr
    lines = [line for line in done.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("warning: ") and "interpolated 1 short gap" in lines[0]
    assert "ClimateWarning" not in done.stderr and ".py:" not in done.stderr


def test_overlong_source_name_is_a_one_line_error():
    # A name past NAME_MAX (255 bytes, POSIX limits.h) makes the OS raise ENAMETOOLONG;
    # the user sees one line, never a traceback.
    for name in ("x" * 5000, "x" * 5000 + ".epw"):
        result = CliRunner().invoke(cli, ["climate", name])
        assert result.exit_code == 2 and "Traceback" not in result.output
        assert len([line for line in result.output.splitlines() if line.strip()]) == 1


def test_csv_output_onto_the_weather_file_is_refused(tmp_path):
    # An output never replaces an input (docs/workbook.md, "Safe writing").
    from test_climate_readers import write_epw

    path = write_epw(tmp_path / "site.epw", np.full(8760, 10.0))
    before = path.read_bytes()
    result = CliRunner().invoke(cli, ["climate", str(path), "--csv", str(path)])
    assert result.exit_code == 2 and "is the weather file read" in result.output
    assert path.read_bytes() == before


def test_text_uses_degree_signs_and_hemispheres():
    # One notation: °C as in every other output, and a west longitude written as W, never
    # as a negative east ("-79.95 E"). The bundled Greensboro TMY3 year lies at 36.10 N,
    # 79.95 W (pvlib's 723170TYA.CSV header).
    result = run("climate", "tmy3-greensboro-nc")
    assert result.exit_code == 0, result.output
    assert "degC" not in result.output and "[°C]" in result.output
    assert "36.10 N, 79.95 W" in result.output and "-79.95" not in result.output


def test_json_out_writes_the_same_json(tmp_path):
    target = tmp_path / "c.json"
    result = run("climate", "alpine", "--json-out", str(target))
    assert result.exit_code == 0, result.output
    assert json.loads(target.read_text()) == json.loads(run("climate", "alpine", "--json").output)
