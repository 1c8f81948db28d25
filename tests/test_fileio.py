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
