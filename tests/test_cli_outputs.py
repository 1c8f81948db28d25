"""``planner plan`` and ``planner new`` outputs: never onto an input, checked before planning,
written together, one-line errors with their own exit code (README, docs/workbook.md).

The exit codes are the README's: 2 bad input, 3 no feasible plan, 4 could not write the
output. Planning itself is replaced by the synthetic plan of ``plan_fixture`` where only
the writing is under test, so these tests run in seconds.
"""

import hashlib
import json
import os
import shutil
import stat
from pathlib import Path

import pytest
from click.testing import CliRunner
from plan_fixture import make_plan

import planner.pipeline
from planner.cli import cli
from planner.cli.terminal import printable

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture
def study_dir(tmp_path):
    for name in ("quick.toml", "quick_sites.csv"):
        shutil.copy(REPO / "scenarios" / name, tmp_path / name)
    return tmp_path


def synthetic_plan(n_sites=3):
    plan = make_plan(n_sites)
    for row in plan["chemistry_comparison"]:  # docs/plan-json.md: the ids, not a count
        row["sites_unserved"] = []
    return plan


@pytest.fixture
def no_planning(monkeypatch):
    """Count planning runs and answer with a synthetic plan."""
    calls = []

    def fake_run(study, progress=None, **_options):  # workers, log
        calls.append(study)
        return synthetic_plan(3)

    monkeypatch.setattr(planner.pipeline, "run_study", fake_run)
    return calls


def digest(folder: Path) -> dict:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in folder.iterdir() if p.is_file()}


def run(folder: Path, *args):
    cwd = os.getcwd()
    os.chdir(folder)
    try:
        return CliRunner().invoke(cli, ["plan", *args])
    finally:
        os.chdir(cwd)


def one_error_line(result) -> str:
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert len(lines) == 1 and "Traceback" not in result.output, result.output
    return lines[0]


@pytest.mark.parametrize("args, toml_extra, expected", [
    # An output onto an input, or onto the other output
    (["--out", "quick_sites.xlsx"], "", None),  # placeholder row replaced below (xlsx table)
    (["--json", "quick.toml"], "", "--json quick.toml is the study file"),
    (["--json", "quick_sites.csv"], "", "--json quick_sites.csv is the study's sites table"),
    (["--out", "a.xlsx", "--json", "a.xlsx"], "", "--json and --out are the same file"),
    ([], '[output]\nworkbook = "w.xlsx"\njson = "w.xlsx"\n', "[output].json and [output].workbook"),
    ([], '[output]\njson = "quick.toml"\n', "[output].json"),
    # Workbook suffix
    (["--out", "plan.csv"], "", "does not end in .xlsx"),
])
def test_bad_output_paths_are_refused_before_planning(study_dir, no_planning, args, toml_extra, expected):
    if expected is None:
        # A sites table in XLSX: --out onto it must be refused although the suffix fits.
        import pandas as pd
        pd.read_csv(study_dir / "quick_sites.csv", dtype=str, keep_default_na=False).to_excel(
            study_dir / "quick_sites.xlsx", index=False)
        (study_dir / "quick.toml").write_text((study_dir / "quick.toml").read_text().replace(
            "quick_sites.csv", "quick_sites.xlsx"))
        expected = "--out quick_sites.xlsx is the study's sites table"
    if toml_extra:
        text = (study_dir / "quick.toml").read_text().replace("[output]\nsensitivity = false\n", "")
        (study_dir / "quick.toml").write_text(text + toml_extra)
    before = digest(study_dir)
    result = run(study_dir, "quick.toml", *args)
    assert result.exit_code == 2
    assert expected in one_error_line(result)
    assert no_planning == []  # refused before any planning
    assert digest(study_dir) == before


def test_climate_and_load_files_are_inputs_too(study_dir, no_planning):
    load = "\n".join(["load_w"] + ["1.5"] * 8760) + "\n"
    (study_dir / "load.csv").write_text(load)
    sites = (study_dir / "quick_sites.csv").read_text().splitlines()
    sites[0] += ",load_file"
    sites[1] += ",load.csv"
    sites[2:] = [row + "," for row in sites[2:]]
    (study_dir / "quick_sites.csv").write_text("\n".join(sites) + "\n")
    result = run(study_dir, "quick.toml", "--json", "load.csv")
    assert result.exit_code == 2 and "is load file of site Q-1" in one_error_line(result)


def test_trailing_separator_means_a_folder(study_dir, no_planning):
    # "--out newdir/" writes newdir/<study>.xlsx, never a file called newdir
    result = run(study_dir, "quick.toml", "--out", "newdir/")
    assert result.exit_code == 0, result.output
    assert (study_dir / "newdir" / "quick.xlsx").is_file()


def test_output_section_paths_resolve_against_the_study(tmp_path, study_dir, no_planning):
    # [output] workbook and json both resolve against the study's folder
    text = (study_dir / "quick.toml").read_text().replace("[output]\nsensitivity = false\n", "")
    (study_dir / "quick.toml").write_text(text + '[output]\nworkbook = "out/w.xlsx"\njson = "out/p.json"\n')
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    result = run(elsewhere, str(study_dir / "quick.toml"))
    assert result.exit_code == 0, result.output
    assert (study_dir / "out" / "w.xlsx").is_file() and (study_dir / "out" / "p.json").is_file()
    assert list(elsewhere.iterdir()) == []


@pytest.mark.skipif(os.geteuid() != 0, reason="making device nodes needs root")
def test_full_disk_writes_neither_output_and_exits_4(study_dir, no_planning):
    # The JSON fails on a full device (Linux memory device 1:7 "full", kernel
    # admin-guide/devices.txt): the workbook is not renamed into place either.
    os.mknod(study_dir / "full.json", stat.S_IFCHR | 0o666, os.makedev(1, 7))
    result = run(study_dir, "quick.toml", "--out", "plan.xlsx", "--json", "full.json")
    assert result.exit_code == 4
    assert "could not write the plan JSON: No space left on device" in one_error_line(result)
    assert not (study_dir / "plan.xlsx").exists()
    assert not [p for p in study_dir.iterdir() if p.name.endswith(".tmp")]


@pytest.mark.skipif(os.geteuid() != 0, reason="making device nodes needs root")
def test_device_output_stays_a_device(study_dir, no_planning):
    # A character device is written through, never replaced by a regular file
    os.mknod(study_dir / "null", stat.S_IFCHR | 0o666, os.makedev(1, 3))
    result = run(study_dir, "quick.toml", "--out", "plan.xlsx", "--json", "null")
    assert result.exit_code == 0, result.output
    assert stat.S_ISCHR(os.stat(study_dir / "null").st_mode)


def test_json_to_failing_stdout_exits_4_and_keeps_workbook_away(study_dir, no_planning, monkeypatch):
    # "--json - > /dev/full"; standard output is written before any rename
    import sys

    class FullStdout:
        def write(self, text):
            raise OSError(28, "No space left on device")

        def flush(self):
            pass

    monkeypatch.setattr(sys, "stdout", FullStdout())
    from planner.cli.plan import write_outputs
    from planner.errors import OutputError
    with pytest.raises(OutputError, match="standard output: could not write the plan JSON"):
        write_outputs(synthetic_plan(2), study_dir / "plan.xlsx", "-")
    assert not (study_dir / "plan.xlsx").exists()
    assert not [p for p in study_dir.iterdir() if p.name.endswith(".tmp")]


def test_new_into_unwritable_folder_is_one_line_exit_4(tmp_path, monkeypatch):
    # Root ignores folder permissions, so the folder is made unwritable for the
    # process by failing the temporary file the way a read-only folder does (EACCES).
    import tempfile

    def read_only(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(tempfile, "mkstemp", read_only)
    result = CliRunner().invoke(cli, ["new", str(tmp_path / "net")])
    assert result.exit_code == 4
    assert "could not write the starter study into its folder: Permission denied" in one_error_line(result)


def test_new_where_a_file_blocks_the_folder_is_one_line_exit_4(tmp_path):
    (tmp_path / "net").write_text("a file, not a folder")
    result = CliRunner().invoke(cli, ["new", str(tmp_path / "net" / "sub")])
    assert result.exit_code == 4 and "could not create the folder" in one_error_line(result)


def test_console_summary_of_an_infeasible_plan_has_no_nan(study_dir, monkeypatch):
    # smaller points: "total present cost: nan" and raw control characters on the terminal
    plan = synthetic_plan(2)
    plan["total_present_cost"] = None
    plan["solver"].update(status="infeasible", gap_frac=None)
    plan["study"]["name"] = "net\x00work\x07"
    monkeypatch.setattr(planner.pipeline, "run_study", lambda study, progress=None, **_options: plan)
    result = run(study_dir, "quick.toml", "--out", "p.xlsx")
    assert "total present cost: none (no feasible plan)" in result.output
    assert "nan" not in result.output and "\x00" not in result.output and "\x07" not in result.output
    assert "net\\x00work\\x07" in result.output


def test_printable_escapes_control_characters_only():
    assert printable("a\x1b[31mb\tc\nd") == "a\\x1b[31mb\tc\nd"


def test_json_written_with_the_workbook(study_dir, no_planning):
    result = run(study_dir, "quick.toml", "--out", "p.xlsx", "--json", "p.json")
    assert result.exit_code == 0, result.output
    assert json.loads((study_dir / "p.json").read_text())["sites"]


@pytest.mark.parametrize("workbook, expected", [
    ("a\\u0000b.xlsx", "a NUL character in the path"),
    ("x" * 300 + ".xlsx", "File name too long"),          # NAME_MAX 255 (POSIX limits.h)
])
def test_unusable_output_names_are_refused_before_planning(study_dir, no_planning, workbook, expected):
    text = (study_dir / "quick.toml").read_text().replace("[output]\n", f'[output]\nworkbook = "{workbook}"\n')
    (study_dir / "quick.toml").write_text(text)
    result = run(study_dir, "quick.toml")
    assert result.exit_code == 2 and expected in one_error_line(result)
    assert no_planning == []


@pytest.mark.parametrize("workbook", ["quick_sites.csv/p.xlsx", "quick_sites.csv/deeper/p.xlsx"])
def test_output_folder_that_cannot_be_created_is_exit_4_before_planning(study_dir, no_planning, workbook):
    # A folder the file system will not create is a refusal to write (README: exit 4), not
    # a bad input; it is still found before any planning.
    text = (study_dir / "quick.toml").read_text().replace("[output]\n", f'[output]\nworkbook = "{workbook}"\n')
    (study_dir / "quick.toml").write_text(text)
    result = run(study_dir, "quick.toml")
    assert result.exit_code == 4 and "Not a directory" in one_error_line(result)
    assert no_planning == []
