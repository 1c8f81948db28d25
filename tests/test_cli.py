"""Command-line behaviour: help, version, exit codes, starter study.

The exit codes are the README's: 0 plan written, 2 bad input or usage
(the convention of click and of POSIX utilities for usage errors: common practice), 3 no
feasible plan.
"""

from pathlib import Path

import pytest
from click.testing import CliRunner

from planner import __version__
from planner.cli import cli
from planner.study.loading import load_study

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture
def runner():
    return CliRunner()


def test_version(runner):
    result = runner.invoke(cli, ["--version"])
    assert result.exit_code == 0 and __version__ in result.output


@pytest.mark.parametrize("command", [[], ["plan"], ["new"], ["climate"], ["life"]])
def test_every_command_has_help_with_an_example(runner, command):
    result = runner.invoke(cli, [*command, "--help"])
    assert result.exit_code == 0, result.output
    assert "Example" in result.output


def test_unknown_command_is_a_usage_error(runner):
    result = runner.invoke(cli, ["planify"])
    assert result.exit_code == 2


def test_bad_study_exits_2_with_one_line_and_no_traceback(runner, tmp_path):
    study = tmp_path / "s.toml"
    study.write_text('[study]\nsites_file = "x.csv"\nhorizon_yaers = 3\n')
    result = runner.invoke(cli, ["plan", str(study), "--workers", "1"])
    assert result.exit_code == 2
    assert "s.toml: unknown key [study].horizon_yaers; did you mean 'horizon_years'?" in result.output
    assert "Traceback" not in result.output


def test_debug_flag_shows_traceback(runner, tmp_path):
    study = tmp_path / "s.toml"
    study.write_text("[study\n")
    result = runner.invoke(cli, ["--debug", "plan", str(study), "--workers", "1"])
    assert result.exit_code == 2
    assert "Traceback" in result.output


def test_new_writes_a_starter_that_validates(runner, tmp_path):
    target = tmp_path / "net"
    result = runner.invoke(cli, ["new", str(target)])
    assert result.exit_code == 0, result.output
    study = load_study(target / "study.toml")
    assert len(study.sites) == 2
    assert len(study.field_data.tests) == 2  # the example capacity tests
    # A second run must not overwrite the planner's files.
    again = runner.invoke(cli, ["new", str(target)])
    assert again.exit_code == 2 and "already exists" in again.output


SITES = "id,region,climate,load_w,charging,pv_wp,autonomy_days\n"


@pytest.mark.parametrize("toml, sites, expected", [
    ('horizon_years = 0', SITES + "A,r,alpine,2,pv,50,5\n", "[study].horizon_years = 0"),
    ('discount_rate_frac = 0.7', SITES + "A,r,alpine,2,pv,50,5\n", "[study].discount_rate_frac"),
    ('', SITES + "A,r,alpine,2,pv,50,0\n", "row 2, column autonomy_days"),
    ('', SITES + "A,r,alpine,2,pv,50,5\nA,r,alpine,2,pv,50,5\n", "duplicate site id 'A'"),
    ('', SITES, "no rows"),
    ('', SITES.replace("region", "regoin") + "A,r,alpine,2,pv,50,5\n", "did you mean 'region'"),
    ('[costs]\ntrip_cost = -1.0', SITES + "A,r,alpine,2,pv,50,5\n", "[costs].trip_cost"),
])
def test_each_class_of_bad_input_exits_2_with_its_line(runner, tmp_path, toml, sites, expected):
    (tmp_path / "sites.csv").write_text(sites)
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n' + toml + "\n")
    result = runner.invoke(cli, ["plan", str(tmp_path / "s.toml"), "--workers", "1"])
    assert result.exit_code == 2
    lines = [line for line in result.output.splitlines() if line.strip()]
    # every mistake on a line of its own (a misspelt column is also a missing one)
    assert all(line.startswith("error: ") for line in lines) and any(expected in line for line in lines)
    assert "Traceback" not in result.output


def test_infeasible_study_exits_3_and_still_writes_the_workbook(runner, tmp_path):
    # README: exit 3 when no feasible plan exists; the report is still written.
    # Only primary cells are allowed, and a 2 W load is above what they are used for.
    (tmp_path / "sites.csv").write_text(SITES + "A,r,alpine,2,pv,50,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n'
                                     '[candidates]\nchemistries = ["lisocl2"]\n')
    out = tmp_path / "plan.xlsx"
    result = runner.invoke(cli, ["--quiet", "plan", str(tmp_path / "s.toml"), "--out", str(out), "--workers", "1"])
    assert result.exit_code == 3, result.output
    assert out.is_file()


def test_workers_must_be_a_whole_number_from_one(runner, tmp_path):
    # --workers N (README, docs/scaling.md): at least one process; a bad value is a usage
    # error, exit 2
    (tmp_path / "sites.csv").write_text(SITES + "A,r,alpine,2,pv,50,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    result = runner.invoke(cli, ["plan", str(tmp_path / "s.toml"), "--workers", "0"])
    assert result.exit_code == 2 and "--workers" in result.output
    assert "Traceback" not in result.output


def _help_examples(runner, command) -> list[list[str]]:
    """Command lines under 'Example(s):' in a help text (continuation lines joined,
    '&&' chains split), without the leading 'planner'."""
    import shlex

    text = runner.invoke(cli, [*command, "--help"], terminal_width=200).output
    lines = text.split("Example", 1)[1].splitlines()[1:]
    examples = []
    for line in lines:
        stripped = line.strip()
        if not stripped:
            break
        if stripped.startswith("planner "):
            examples.append(stripped)
        elif examples:
            examples[-1] += " " + stripped
    return [shlex.split(part)[1:] for ex in examples for part in ex.split("&&")]


@pytest.mark.parametrize("command", [[], ["plan"], ["new"], ["climate"], ["life"]])
def test_every_help_example_runs(runner, command, tmp_path, monkeypatch):
    # Help texts promise these lines work as typed (from a checkout: scenarios/ at hand).
    import shutil

    shutil.copytree(REPO / "scenarios", tmp_path / "scenarios")
    monkeypatch.chdir(tmp_path)
    examples = _help_examples(runner, command)
    assert examples
    for args in examples:
        result = runner.invoke(cli, args)
        assert result.exit_code == 0, (args, result.output)


def test_quiet_and_debug_also_after_the_subcommand(runner, tmp_path, monkeypatch):
    import shutil

    shutil.copytree(REPO / "scenarios", tmp_path / "scenarios")
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(cli, ["plan", "scenarios/quick.toml", "--quiet", "--out", "q.xlsx"])
    assert result.exit_code == 0, result.output
    assert "total present cost" not in result.output  # --quiet: no console summary
    loud = runner.invoke(cli, ["plan", "scenarios/quick.toml", "--out", "q.xlsx"])
    assert "total present cost" in loud.output
    study = tmp_path / "s.toml"
    study.write_text("[study\n")
    result = runner.invoke(cli, ["plan", str(study), "--debug"])
    assert result.exit_code == 2 and "Traceback" in result.output


def test_console_summary_speaks_the_readers_words():
    # The console summary describes partial coverage in words and shows what each
    # chemistry's cost is made of; the solver's status word stays in the JSON.
    import sys

    sys.path.insert(0, str(REPO / "tests"))
    from plan_fixture import make_plan

    from planner.cli.plan import _summary

    plan = make_plan(5)
    text = _summary(plan, "plan.xlsx")
    assert ("If Demo nickel oxide wherever it can serve: " in text
            and "serves 4 of 5 sites; S0000 keeps Demo iron phosphate" in text)
    assert "serves none of the 5 sites" in text
    assert "days off air" in text and "most of the difference to the plan: S0000" in text
    assert "infeasible" not in text and "optimal" not in text
    # what needs attention comes first, grouped by cause with its count and fix
    lines = text.splitlines()
    assert lines[1].startswith("  needs attention")
    assert lines.index(next(line for line in lines if "total present cost" in line)) > 1
    assert any(line.strip().startswith("fix: ") for line in lines)


def test_endless_study_files_are_refused_by_type(runner, tmp_path):
    # Read, "planner plan /dev/zero" or a FIFO would never end (memory runs out). Nodes
    # made here stand in for them (never real /dev paths); 1:5 is the Linux "zero" device
    # (Linux kernel documentation, admin-guide/devices.txt).
    import os
    import stat

    nodes = [tmp_path / "fifo.toml"]
    os.mkfifo(nodes[0])
    if os.geteuid() == 0:
        nodes.append(tmp_path / "zero.toml")
        os.mknod(nodes[1], stat.S_IFCHR | 0o666, os.makedev(1, 5))
    for node in nodes:
        result = runner.invoke(cli, ["plan", str(node)])
        assert result.exit_code == 2, result.output
        assert "not a regular file: expected a study file (TOML)" in result.output


def test_readme_exit_code_table_matches_the_commands():
    # The README's table is the contract scripts rely on: every code it lists is the one
    # planner.cli returns for that case, and exit 3 means a site cannot be served.
    import re

    from planner import cli as cli_module
    from planner.cli.plan import not_all_served

    text = (REPO / "README.md").read_text(encoding="utf-8")
    table = {}
    for codes, meaning in re.findall(r"^\| ([\d, ]+) \| (.+?) \|$", text, flags=re.M):
        for code in codes.split(","):
            table[code.strip()] = meaning
    assert set(table) == {"0", "2", "3", "4", "130", "143", "129"}
    assert cli_module.EXIT_OK == 0 and "every site is served" in table["0"]
    assert cli_module.EXIT_BAD_INPUT == 2 and "Bad input" in table["2"]
    assert cli_module.EXIT_INFEASIBLE == 3 and "cannot be served" in table["3"] and "1 %" in table["3"]
    assert cli_module.EXIT_WRITE_FAILED == 4 and cli_module.EXIT_INTERRUPTED == 130
    # the rule behind 3: a site no design serves, or one losing more than 1 % of its load
    served = {"sites": [{"id": "a", "daily_load_wh": 100.0, "unserved_wh_per_year": 300.0}],
              "solver": {"status": "optimal"}}  # 300 Wh of 36,500 Wh a year: 0.8 %
    assert not not_all_served(served)
    served["sites"][0]["unserved_wh_per_year"] = 400.0  # 1.1 %
    assert not_all_served(served)
    assert not_all_served({"sites": [{"id": "a"}], "unserved_sites": [{"id": "a"}], "solver": {}})


def test_plan_json_out_is_the_json_option():
    # 'planner life' and 'planner climate' write JSON with --json-out PATH; 'planner plan'
    # takes the same name beside its --json PATH.
    from planner.cli.plan import plan_command

    option = next(p for p in plan_command.params if p.name == "json_path")
    assert {"--json", "--json-out"} <= set(option.opts)


def test_starter_lists_what_the_sites_columns_accept(runner, tmp_path):
    # The starter's comments name every bundled climate, enclosure and charging kind, so
    # a user can fill the sites table without the docs.
    from planner.climate import list_bundled
    from planner.study.schema import SITE_COLUMNS

    assert runner.invoke(cli, ["new", str(tmp_path / "net")]).exit_code == 0
    text = (tmp_path / "net" / "study.toml").read_text()
    comments = [line for line in text.splitlines() if line.startswith("#")]
    for name, _ in list_bundled():
        assert any(line.startswith(f"#     {name}: ") for line in comments), name
    choices = {spec.name: spec.choices for spec in SITE_COLUMNS if spec.name in ("enclosure", "charging")}
    for column, ids in choices.items():
        assert any(line.startswith(f"#   {column}: {', '.join(ids)}") for line in comments), column
