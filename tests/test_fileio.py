"""Safe reading and atomic writing (DEVELOPERS.md conventions; docs/workbook.md, "Safe writing").

Device and FIFO tests use nodes made in a temporary folder (``os.mkfifo``; ``os.mknod`` as
root), never real ``/dev`` paths. Device numbers 1:3 (null), 1:5 (zero) and 1:7 (full) are
the Linux memory devices (Linux kernel documentation, admin-guide/devices.txt, "1 char
Memory devices").
"""

import os
import stat
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from planner import fileio
from planner.errors import InputError, OutputError
from planner.fileio import (
    OutputBatch,
    check_input_file,
    read_input_bytes,
    remove_stale_temps,
    write_atomically,
)

REPO = Path(__file__).resolve().parents[1]
as_root = pytest.mark.skipif(os.geteuid() != 0, reason="making device nodes needs root")


def device(folder: Path, name: str, minor: int) -> Path:
    path = folder / name
    os.mknod(path, stat.S_IFCHR | 0o666, os.makedev(1, minor))
    return path


# ---------------------------------------------------------------- endless inputs


def test_fifo_input_is_refused_by_type_before_reading(tmp_path):
    # A FIFO with no writer would block a reader forever: the refusal comes from stat().
    fifo = tmp_path / "study.toml"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match=r"named pipe \(FIFO\), not a regular file"):
        read_input_bytes(fifo, what="a study file (TOML)")


@as_root
def test_zero_device_input_is_refused(tmp_path):
    zero = device(tmp_path, "zero.epw", 5)
    with pytest.raises(InputError, match="character device, not a regular file"):
        check_input_file(zero, what="a climate file")


def test_folder_input_is_refused(tmp_path):
    with pytest.raises(InputError, match="a folder, not a regular file"):
        read_input_bytes(tmp_path, what="a study file")


def test_input_size_is_capped(tmp_path, monkeypatch):
    big = tmp_path / "big.csv"
    big.write_bytes(b"x" * 5000)
    monkeypatch.setattr(fileio, "MAX_INPUT_BYTES", 4096)
    with pytest.raises(InputError, match="of at most 0 MiB"):
        read_input_bytes(big, what="the sites table")
    small = tmp_path / "small.csv"
    small.write_bytes(b"y" * 4096)
    assert read_input_bytes(small, what="the sites table") == b"y" * 4096


# ---------------------------------------------------------------- special outputs


@as_root
def test_character_device_output_is_written_through_not_replaced(tmp_path):
    null = device(tmp_path, "null", 3)
    write_atomically(null, lambda p: Path(p).write_text("plan"), what="plan JSON")
    assert stat.S_ISCHR(os.stat(null).st_mode)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["null"]


def test_fifo_output_is_refused(tmp_path):
    fifo = tmp_path / "plan.json"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="named pipe"):
        write_atomically(fifo, lambda p: Path(p).write_text("x"), what="plan JSON")
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)


# ---------------------------------------------------------------- full disk, both or neither


@as_root
def test_full_device_is_an_output_error(tmp_path):
    full = device(tmp_path, "full", 7)
    with pytest.raises(OutputError, match="could not write the plan JSON: No space left on device"):
        write_atomically(full, lambda p: Path(p).write_text("plan"), what="plan JSON")


def test_second_output_failing_leaves_both_targets_unchanged(tmp_path):
    book, data = tmp_path / "plan.xlsx", tmp_path / "plan.json"
    book.write_bytes(b"earlier workbook")
    data.write_bytes(b"earlier json")

    def no_space(path):
        Path(path).write_bytes(b"half")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="plan JSON: No space left on device"):
        with OutputBatch() as batch:
            batch.add(book, lambda p: Path(p).write_bytes(b"new workbook"), what="plan workbook")
            batch.add(data, no_space, what="plan JSON")
            batch.commit()
    assert book.read_bytes() == b"earlier workbook" and data.read_bytes() == b"earlier json"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json", "plan.xlsx"]


# ---------------------------------------------------------------- temporary files


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_stale_temp_of_a_dead_process_is_removed_live_one_kept(tmp_path):
    stale = tmp_path / f".plan.xlsx.{_dead_pid()}.abcd1234.tmp"
    live = tmp_path / f".plan.xlsx.{os.getppid()}.abcd1234.tmp"  # the test runner's parent lives
    other = tmp_path / f".other.xlsx.{_dead_pid()}.abcd1234.tmp"  # another target: not ours to judge
    for path in (stale, live, other):
        path.write_bytes(b"debris")
    write_atomically(tmp_path / "plan.xlsx", lambda p: Path(p).write_bytes(b"ok"), what="plan workbook")
    names = sorted(p.name for p in tmp_path.iterdir())
    assert stale.name not in names and live.name in names and other.name in names
    assert remove_stale_temps(tmp_path, "other.xlsx") == [other]


SLOW_WRITE = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    import pandas as pd
    from planner.cli import main

    def slow(self, path, *args, **kwargs):
        Path(path).write_text("half a file")
        print("writing", flush=True)
        time.sleep(60)

    pd.DataFrame.to_csv = slow
    sys.exit(main(["climate", "alpine", "--csv", sys.argv[1]]))
""")


@pytest.mark.parametrize("signum, code", [(2, 130), (15, 143), (1, 129)])
def test_signal_during_write_cleans_up_and_exits_128_plus_signal(tmp_path, signum, code):
    # SIGINT, SIGTERM and SIGHUP (POSIX signal numbers 2, 15, 1): exit 128 + n (shell
    # convention, common practice); no temporary file is left and the old file stays.
    target = tmp_path / "hourly.csv"
    target.write_text("earlier export\n")
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    proc = subprocess.Popen([sys.executable, "-c", SLOW_WRITE, str(target)], env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        assert proc.stdout.readline().strip() == "writing"
        proc.send_signal(signum)
        _, err = proc.communicate(timeout=60)
    finally:
        proc.kill()
    assert proc.returncode == code, err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert target.read_text() == "earlier export\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["hourly.csv"]


# ---------------------------------------------------------------- the path resolver
# Class: a path the OS cannot use (a NUL, a loop of links, a name too long) is one line,
# never a ValueError or RuntimeError traceback, for inputs and outputs alike.


def test_nul_and_loops_are_input_errors_for_inputs_and_outputs(tmp_path):
    (tmp_path / "a").symlink_to(tmp_path / "b")
    (tmp_path / "b").symlink_to(tmp_path / "a")
    for path in (str(tmp_path / "x\x00y.toml"), tmp_path / "a"):
        with pytest.raises(InputError):
            read_input_bytes(path, what="a study file")
        with pytest.raises(InputError):
            write_atomically(path, b"x", what="plan JSON")
    with pytest.raises(InputError, match="Too many levels of symbolic links"):
        fileio.resolve_path(tmp_path / "a" / "plan.xlsx", what="the plan workbook")
    # variant: a loop further up the path, and a folder component that is a loop
    with pytest.raises(InputError):
        check_input_file(tmp_path / "a" / "deeper" / "study.toml", what="a study file")


def test_resolve_follows_links_and_keeps_missing_names(tmp_path):
    (tmp_path / "real").mkdir()
    (tmp_path / "link").symlink_to(tmp_path / "real")
    assert fileio.resolve_path(tmp_path / "link" / "new.xlsx", what="x") == \
        (tmp_path / "real" / "new.xlsx").resolve()
    with pytest.raises(InputError, match="an empty path"):
        fileio.resolve_path("", what="the plan workbook")


def test_255_byte_names_are_written_and_their_temps_cleaned(tmp_path):
    # NAME_MAX is 255 bytes on Linux file systems (POSIX limits.h; ext4): a legal name
    # must not fail because its temporary name would be longer.
    name = "p" * 250 + ".xlsx"
    write_atomically(tmp_path / name, b"one", what="plan workbook")
    assert (tmp_path / name).read_bytes() == b"one"
    # variant: multi-byte characters (3 bytes each in UTF-8) up to the limit
    wide = "é" * 125 + ".json"                       # 2 x 125 + 5 = 255 bytes
    write_atomically(tmp_path / wide, b"two", what="plan JSON")
    stale = tmp_path / f".{fileio._side_stem(wide)}.{_dead_pid()}.abcd1234.tmp"
    stale.write_bytes(b"debris")
    write_atomically(tmp_path / wide, b"three", what="plan JSON")
    assert not stale.exists() and (tmp_path / wide).read_bytes() == b"three"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([name, wide])
    with pytest.raises(InputError, match="File name too long"):
        write_atomically(tmp_path / ("q" * 251 + ".xlsx"), b"x", what="plan workbook")
    # in a folder still to be created the OS cannot say it yet; the planner does
    with pytest.raises(InputError, match="256 bytes long; expected at most 255"):
        write_atomically(tmp_path / "new" / ("q" * 251 + ".xlsx"), b"x", what="plan workbook")
    assert not (tmp_path / "new").exists()


def test_folder_that_cannot_be_created_is_an_output_error(tmp_path):
    (tmp_path / "file").write_text("a file")
    with pytest.raises(OutputError, match="cannot create its folder.*file is not a folder"):
        write_atomically(tmp_path / "file" / "sub" / "plan.xlsx", b"x", what="plan workbook")


def test_symlink_target_is_written_through(tmp_path):
    (tmp_path / "runs").mkdir()
    real = tmp_path / "runs" / "2027.xlsx"
    real.write_bytes(b"old")
    link = tmp_path / "latest.xlsx"
    link.symlink_to(Path("runs") / "2027.xlsx")
    write_atomically(link, b"new", what="plan workbook")
    assert link.is_symlink() and real.read_bytes() == b"new"
    # variant: a dangling link creates the file it points to
    dangling = tmp_path / "next.xlsx"
    dangling.symlink_to(Path("runs") / "2028.xlsx")
    write_atomically(dangling, b"made", what="plan workbook")
    assert dangling.is_symlink() and (tmp_path / "runs" / "2028.xlsx").read_bytes() == b"made"


# ---------------------------------------------------------------- the output committer
# Class: when the second target cannot be replaced, the first gets its earlier file back;
# either both outputs are new or both are as before.


def _pair(tmp_path, second_exists=True):
    book, data = tmp_path / "plan.xlsx", tmp_path / "plan.json"
    book.write_bytes(b"earlier workbook")
    if second_exists:
        data.write_bytes(b"earlier json")
    return book, data


def _commit(book, data):
    with OutputBatch() as batch:
        batch.add(book, b"new workbook", what="plan workbook")
        batch.add(data, b"new json", what="plan JSON")
        batch.commit()


def test_second_rename_failing_puts_the_first_back(tmp_path, monkeypatch):
    book, data = _pair(tmp_path)
    real_replace = os.replace

    def replace(src, dst):
        if Path(dst) == data.resolve():
            raise OSError(5, "Input/output error")   # the second target cannot be replaced
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", replace)
    with pytest.raises(OutputError, match="plan JSON: Input/output error; the outputs written "
                                          "before it were put back"):
        _commit(book, data)
    monkeypatch.undo()
    assert book.read_bytes() == b"earlier workbook" and data.read_bytes() == b"earlier json"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json", "plan.xlsx"]


def test_second_target_missing_before_leaves_neither_new(tmp_path, monkeypatch):
    # variant: the JSON did not exist; after the failure the workbook is the old one and
    # no JSON appears
    book, data = _pair(tmp_path, second_exists=False)
    real_replace = os.replace
    monkeypatch.setattr(os, "replace", lambda src, dst: (_ for _ in ()).throw(
        OSError(28, "No space left on device")) if Path(dst) == data.resolve() else real_replace(src, dst))
    with pytest.raises(OutputError):
        _commit(book, data)
    monkeypatch.undo()
    assert book.read_bytes() == b"earlier workbook" and not data.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.xlsx"]


def test_second_target_turned_into_a_folder_changes_nothing(tmp_path):
    # variant without fault injection: after both files were staged, the JSON's name is
    # taken by a non-empty folder, which no rename can replace
    book, data = _pair(tmp_path)
    with pytest.raises(OutputError):
        with OutputBatch() as batch:
            batch.add(book, b"new workbook", what="plan workbook")
            batch.add(data, b"new json", what="plan JSON")
            data.unlink()
            data.mkdir()
            (data / "inside").write_text("x")
            batch.commit()
    assert book.read_bytes() == b"earlier workbook"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json", "plan.xlsx"]


def test_successful_pair_leaves_no_kept_copies(tmp_path):
    book, data = _pair(tmp_path)
    _commit(book, data)
    assert book.read_bytes() == b"new workbook" and data.read_bytes() == b"new json"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json", "plan.xlsx"]


FULL_WORKBOOK = textwrap.dedent("""
    import gc, sys
    import openpyxl
    from planner.errors import OutputError
    from planner.fileio import write_atomically

    book = openpyxl.Workbook()
    book.active["A1"] = "x" * 100000
    try:
        write_atomically(sys.argv[1], book.save, what="plan workbook")
    except OutputError as err:
        print(err)
    gc.collect()
""")


@as_root
def test_full_device_workbook_has_no_ignored_exception(tmp_path):
    # --out /dev/full printed "Exception ignored in ZipFile.__del__".
    # variant: the same through a symbolic link to the device
    full = device(tmp_path, "full", 7)
    (tmp_path / "link.xlsx").symlink_to(full)
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    for target in (full, tmp_path / "link.xlsx"):
        proc = subprocess.run([sys.executable, "-c", FULL_WORKBOOK, str(target)], env=env,
                              capture_output=True, text=True, timeout=120)
        assert "No space left on device" in proc.stdout
        assert proc.stderr == "", proc.stderr
