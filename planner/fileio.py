"""Atomic file writing: nothing the user owns is overwritten half-way.

Every output is written to a temporary file in the target folder, then renamed.

An interrupted or failed write never leaves a half-written file under the target name,
and an earlier file of that name stays byte-identical (``os.replace`` is atomic on POSIX
and Windows when source and target are on the same volume, which writing the temporary
file into the target folder guarantees).
"""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path

from planner.errors import InputError


def prepare_target(path, *, what: str) -> Path:
    """Check ``path`` can receive a file; create its folder; return it as a Path."""
    target = Path(path)
    if target.is_dir():
        raise InputError(f"found a folder; expected a file name for the {what}", source=str(target))
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create its folder for the {what}: {exc.strerror}", source=str(target)) from None
    return target


def write_atomically(path, write, *, what: str) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then rename it over ``path``.

    Parameters
    ----------
    path : str or Path
        Target file.
    write : callable
        Writes the complete file to the path it is given.
    what : str
        Words for messages, e.g. ``"plan workbook"``.

    Returns
    -------
    Path
        The target path.
    """
    target = prepare_target(path, what=what)
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    except OSError as exc:
        raise InputError(f"cannot write the {what} into its folder: {exc.strerror}", source=str(target)) from None
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        write(tmp)
        _match_mode(tmp, target)
        os.replace(tmp, target)
    except BaseException:
        # Any failure (including Ctrl-C) leaves the old target untouched and no debris.
        tmp.unlink(missing_ok=True)
        raise
    return target


def _match_mode(tmp: Path, target: Path) -> None:
    # mkstemp creates 0600; give the file the mode a normal open() would have had.
    if target.exists():
        mode = target.stat().st_mode & 0o777
    else:
        umask = os.umask(0)
        os.umask(umask)
        mode = 0o666 & ~umask
    os.chmod(tmp, mode)


@contextmanager
def atomic_path(target, *, what: str = "output file"):
    """Yield a temporary path beside ``target``; rename it over ``target`` on success.

    If the body raises, the temporary file is removed and ``target`` is untouched.
    """
    target = prepare_target(target, what=what)
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        yield tmp
        _match_mode(tmp, target)
        os.replace(tmp, target)
    finally:
        tmp.unlink(missing_ok=True)


def write_text_atomic(target, text: str, *, what: str = "file") -> Path:
    """Write ``text`` (UTF-8) to ``target`` through a temporary file and a rename."""
    return write_atomically(target, lambda tmp: Path(tmp).write_text(text, encoding="utf-8"),
                            what=what)
