"""The one number parser (planner/inputs/numbers.py) and every door a number comes in by.

Class: a number that is not finite, is a huge integer or is out of range gives the
one-line InputError naming where it was, never an OverflowError traceback, whether it
comes from a study key, a sites-table cell, a climate declaration or a command-line
option. Each door is tried with a known case and a second variant.
"""

from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.errors import InputError
from planner.inputs.numbers import NumberError, parse_number, parse_number_column
from planner.study.loading import load_study

HUGE = "1" + "0" * 400          # an integer of 401 digits: TOML reads it exactly


@pytest.mark.parametrize("value", [HUGE, int(HUGE), -int(HUGE), "inf", "-inf", "nan", float("inf"),
                                   float("nan"), "1e999", True, "1_0", "0x10", "", " ", "1,5",
                                   "9" * 65])
def test_parser_refuses_what_is_not_a_finite_number(value):
    with pytest.raises(NumberError):
        parse_number(value, exponent=True)


@pytest.mark.parametrize("value, kwargs, expected", [
    (" 2.5 ", {}, 2.5), ("-0", {}, 0.0), (".5", {}, 0.5), ("60.", {}, 60.0),
    ("1e-3", {"exponent": True}, 0.001), (15, {"integer": True}, 15), (15.0, {"integer": True}, 15),
    (np.float32(2.0), {}, 2.0), (np.int64(7), {"integer": True}, 7),
])
def test_parser_accepts_plain_numbers(value, kwargs, expected):
    assert parse_number(value, **kwargs) == expected


@pytest.mark.parametrize("value, kwargs", [
    ("1e-3", {}),                                   # no exponent in a table cell
    (2.5, {"integer": True}),
    (0.0, {"minimum": 0.0, "exclusive_minimum": True}),
    (61, {"maximum": 60}),
    (10 ** 400, {"maximum": 60, "integer": True}),
])
def test_parser_checks_syntax_and_range(value, kwargs):
    with pytest.raises(NumberError):
        parse_number(value, **kwargs)


def test_column_parser_follows_the_same_rules():
    values, bad = parse_number_column(["1", "", "2.5e1", "inf", "nan", "1_0", HUGE, "-3"])
    assert bad.tolist() == [False, False, False, True, True, True, True, False]
    assert values[0] == 1.0 and np.isnan(values[1]) and values[2] == 25.0 and values[7] == -3.0


# ---------------------------------------------------------------- the doors

SITES = "id,region,climate,load_w,charging,pv_wp,autonomy_days\nA,hills,alpine,2,pv,60,5\n"


def _study(tmp_path, extra="", sites=SITES):
    (tmp_path / "sites.csv").write_text(sites)
    path = tmp_path / "study.toml"
    path.write_text('[study]\nsites_file = "sites.csv"\n' + extra)
    return path


def _error(path) -> str:
    with pytest.raises(InputError) as info:
        load_study(path)
    assert all(line.strip() for line in info.value.lines())
    return str(info.value)


@pytest.mark.parametrize("extra, expected", [
    # hundreds of digits in a whole-number key
    (f"horizon_years = {HUGE}\n", "[study].horizon_years = an integer of 401 digits"),
    # our variant: a huge negative integer in a float key of another section
    (f"[limits]\npayload_kg_per_trip = -{HUGE}\n", "[limits].payload_kg_per_trip = an integer"),
    ("warming_k = inf\n", "[study].warming_k = inf"),
    ("[candidates]\noversize_factors = [1.0, nan]\n", "[candidates].oversize_factors"),
])
def test_study_keys(tmp_path, extra, expected):
    assert expected in _error(_study(tmp_path, extra))


@pytest.mark.parametrize("column, cell", [("load_w", HUGE), ("pv_wp", "1e999"), ("autonomy_days", "inf")])
def test_sites_cells(tmp_path, column, cell):
    row = {"load_w": "2", "pv_wp": "60", "autonomy_days": "5", column: cell}
    sites = ("id,region,climate,load_w,charging,pv_wp,autonomy_days\n"
             f"A,hills,alpine,{row['load_w']},pv,{row['pv_wp']},{row['autonomy_days']}\n")
    message = _error(_study(tmp_path, sites=sites))
    assert f"row 2, column {column}: found" in message and "expected a number" in message


@pytest.mark.parametrize("line, expected", [
    ("latitude_deg = 1e999", "option 'latitude_deg' is '1e999'; expected a number >= -90"),
    ("utc_offset_h = " + HUGE, "option 'utc_offset_h' is '1000"),
])
def test_climate_declarations_in_a_used_climate_table(tmp_path, line, expected):
    source = tmp_path / "logger.csv"
    result = CliRunner().invoke(cli, ["climate", "alpine", "--csv", str(source)])
    assert result.exit_code == 0, result.output
    key = line.split(" = ")[0]
    rows = source.read_text().splitlines(keepends=True)
    source.write_text("".join(f"# {line}\n" if row.startswith(f"# {key} =") else row for row in rows))
    sites = SITES.replace("alpine", "logger")
    message = _error(_study(tmp_path, '[climates.logger]\nfile = "logger.csv"\n', sites=sites))
    assert "[climates.logger]" in message and expected in message


@pytest.mark.parametrize("args, expected", [
    (["life", "--chemistry", "lfp", "--temp-c", "nan"], "life: --temp-c is 'nan'"),
    (["life", "--chemistry", "lfp", "--temp-c", "25", "--years", HUGE], "life: --years is"),
    (["life", "--chemistry", "lfp", "--temp-c", "25", "--c-rate", "inf"], "life: --c-rate is 'inf'"),
    (["climate", "alpine", "--warming-k", "-inf"], "climate: --warming-k is '-inf'"),
    (["plan", "x.toml", "--workers", HUGE], "plan: --workers is"),
])
def test_command_line_options(args, expected):
    result = CliRunner().invoke(cli, args)
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert result.exit_code == 2 and len(lines) == 1 and expected in lines[0], result.output
    assert "Traceback" not in result.output


def test_a_declaration_given_as_an_option_is_parsed_too(tmp_path):
    source = tmp_path / "a.csv"
    assert CliRunner().invoke(cli, ["climate", "alpine", "--csv", str(source)]).exit_code == 0
    result = CliRunner().invoke(cli, ["climate", str(source), "--option", "altitude_m=1e999"])
    assert result.exit_code == 2 and "option 'altitude_m' is '1e999'" in result.output
    result = CliRunner().invoke(cli, ["climate", str(source), "--option", "altitude_m=2100"])
    assert result.exit_code == 0 and "2100 m" in result.output


def test_real_numbers_still_pass(tmp_path):
    study = load_study(_study(tmp_path, "horizon_years = 12\n[limits]\npayload_kg_per_trip = 800\n"))
    assert study.settings["study"]["horizon_years"] == 12 and isinstance(
        study.settings["study"]["horizon_years"], int)
    assert study.settings["limits"]["payload_kg_per_trip"] == 800.0
    assert Path(study.sites_path).name == "sites.csv"
