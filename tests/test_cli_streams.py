"""Closed or failing standard streams, and what `planner plan` does with its outputs
(planner/cli/streams.py, planner/cli/plan.py).

Classes (each with a known case and a second variant):
- a closed standard output or error (``>&-``, ``2>&-``) or one that cannot be written
  (``2>/dev/full``): the plan is still written, the documented exit code kept, no
  traceback; a result that cannot reach standard output is exit 4;
- output options that say nothing (``--out ''``, ``--json ''``), ``-`` in ``[output].json``,
  an output that is a symbolic link.
Planning is replaced by the synthetic plan of ``plan_fixture`` (these tests are about the
streams and the writing), in a child process where the streams are real.
"""

import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from click.testing import CliRunner

import planner.pipeline
from planner.cli import cli

REPO = Path(__file__).resolve().parents[1]
TESTS = Path(__file__).resolve().parent

FAKE_PLAN = textwrap.dedent("""
    import sys
    import planner.pipeline
    from plan_fixture import make_plan
    from planner.cli import main

    def fake_run(study, progress=None, **_options):
        plan = make_plan(3)
        for row in plan["chemistry_comparison"]:
            row["sites_unserved"] = []
        return plan

    planner.pipeline.run_study = fake_run
    main(sys.argv[1:])
""")


@pytest.fixture
def study_dir(tmp_path):
    for name in ("quick.toml", "quick_sites.csv"):
        shutil.copy(REPO / "scenarios" / name, tmp_path / name)
    return tmp_path


def planner_child(folder: Path, args, *, shell_redirect: str = ""):
    """Run the planner with the fake plan in a child process; ``shell_redirect`` is what a
    shell would add (e.g. ``>&-``). Returns (exit code, stdout, stderr)."""
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), str(TESTS)])}
    script = folder / "fake_planner.py"
    script.write_text(FAKE_PLAN)
    quoted = " ".join(f"'{a}'" for a in args)
    command = f"'{sys.executable}' '{script}' {quoted} {shell_redirect}"
    proc = subprocess.run(["/bin/sh", "-c", command], cwd=folder, env=env, capture_output=True,
                          text=True, timeout=300)
    return proc.returncode, proc.stdout, proc.stderr


@pytest.mark.parametrize("redirect", [
    ">&-", "2>&-", "2>/dev/full",            # the three usual redirections
    ">&- 2>&- <&-",                          # variant: every standard stream closed
])
def test_closed_streams_still_write_the_plan_with_exit_0(study_dir, redirect):
    code, out, err = planner_child(study_dir, ["plan", "quick.toml", "--out", "p.xlsx",
                                               "--json", "p.json"], shell_redirect=redirect)
    assert code == 0, (code, err)
    assert (study_dir / "p.xlsx").stat().st_size > 0
    assert json.loads((study_dir / "p.json").read_text())["sites"]
    assert "Traceback" not in err and "Exception ignored" not in err
    assert not [p.name for p in study_dir.iterdir() if p.name.endswith((".tmp", ".old"))]


@pytest.mark.parametrize("redirect", [">&-", ">/dev/full"])
def test_json_that_cannot_reach_standard_output_is_exit_4(study_dir, redirect):
    (study_dir / "p.xlsx").write_bytes(b"earlier")
    code, _, err = planner_child(study_dir, ["plan", "quick.toml", "--out", "p.xlsx", "--json", "-"],
                                 shell_redirect=redirect)
    assert code == 4, (code, err)
    assert "standard output" in err and "Traceback" not in err
    assert (study_dir / "p.xlsx").read_bytes() == b"earlier"   # the pair did not change


def test_result_commands_on_a_closed_standard_output_are_exit_4(tmp_path):
    # variant: the result of `planner climate` / `planner life` is their standard output
    for args in (["climate", "alpine"], ["life", "--chemistry", "lfp", "--temp-c", "25"]):
        code, _, err = planner_child(tmp_path, args, shell_redirect=">&-")
        assert code == 4 and "standard output" in err and "Traceback" not in err, err
        code, _, err = planner_child(tmp_path, args, shell_redirect="2>&-")
        assert code == 0, err


def test_full_device_as_workbook_is_one_line_and_exit_4(study_dir):
    # it used to print "Exception ignored in ZipFile.__del__"; /dev/full is the
    # Linux device whose writes fail with ENOSPC (kernel admin-guide/devices.txt, 1:7)
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full on this system")
    code, _, err = planner_child(study_dir, ["plan", "quick.toml", "--out", "/dev/full"])
    assert code == 4 and err.strip().count("\n") == 0, err
    assert "No space left on device" in err and "Exception ignored" not in err
    # variant: the JSON on the full device, the workbook to a file: neither is written
    code, _, err = planner_child(study_dir, ["plan", "quick.toml", "--out", "w.xlsx",
                                             "--json", "/dev/full"])
    assert code == 4 and not (study_dir / "w.xlsx").exists(), err


# ---------------------------------------------------------------- output options


@pytest.fixture
def no_planning(monkeypatch):
    from plan_fixture import make_plan

    calls = []

    def fake_run(study, progress=None, **_options):
        calls.append(study)
        plan = make_plan(3)
        for row in plan["chemistry_comparison"]:
            row["sites_unserved"] = []
        return plan

    monkeypatch.setattr(planner.pipeline, "run_study", fake_run)
    return calls


def run(folder: Path, *args):
    cwd = os.getcwd()
    os.chdir(folder)
    try:
        return CliRunner().invoke(cli, ["plan", *args])
    finally:
        os.chdir(cwd)


@pytest.mark.parametrize("args, expected", [
    (["--out", ""], "--out is empty"),              # wrote the default
    (["--json", ""], "--json is empty"),            # wrote nothing
    (["--out", "  "], "--out is empty"),            # variant: blanks only
])
def test_empty_output_options_are_refused(study_dir, no_planning, args, expected):
    result = run(study_dir, "quick.toml", *args)
    assert result.exit_code == 2 and expected in result.output and no_planning == []
    assert not (study_dir / "output").exists()


def test_dash_in_the_output_section_is_standard_output(study_dir, no_planning):
    text = (study_dir / "quick.toml").read_text().replace("[output]\n", '[output]\njson = "-"\n')
    (study_dir / "quick.toml").write_text(text)
    result = run(study_dir, "quick.toml", "--out", "p.xlsx")
    assert result.exit_code == 0 and json.loads(result.stdout)["sites"]
    assert not (study_dir / "-").exists()
    # variant: surrounding blanks mean the same
    (study_dir / "quick.toml").write_text(text.replace('json = "-"', 'json = " - "'))
    result = run(study_dir, "quick.toml", "--out", "p.xlsx")
    assert result.exit_code == 0 and not (study_dir / " - ").exists()


def test_output_symlink_is_written_through(study_dir, no_planning):
    (study_dir / "runs").mkdir()
    (study_dir / "runs" / "plan-2027.xlsx").write_bytes(b"old")
    (study_dir / "latest.xlsx").symlink_to(Path("runs") / "plan-2027.xlsx")
    (study_dir / "latest.json").symlink_to(Path("runs") / "plan-2027.json")   # dangling
    result = run(study_dir, "quick.toml", "--out", "latest.xlsx", "--json", "latest.json")
    assert result.exit_code == 0, result.output
    assert (study_dir / "latest.xlsx").is_symlink() and (study_dir / "latest.json").is_symlink()
    assert (study_dir / "runs" / "plan-2027.xlsx").read_bytes()[:2] == b"PK"   # a ZIP (xlsx)
    assert json.loads((study_dir / "runs" / "plan-2027.json").read_text())["sites"]


def test_output_link_onto_an_input_is_refused(study_dir, no_planning):
    # variant: a link is followed before the "never onto an input" check
    (study_dir / "sneaky.json").symlink_to(study_dir / "quick_sites.csv")
    result = run(study_dir, "quick.toml", "--json", "sneaky.json")
    assert result.exit_code == 2 and "is the study's sites table" in result.output
