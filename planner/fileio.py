"""Safe file reading and atomic file writing.

Reading: :func:`read_input_bytes` and :func:`check_input_file` refuse anything that is not
a regular file (a FIFO or ``/dev/zero`` would be read without end) and any file larger
than :data:`MAX_INPUT_BYTES`, before a byte is read.

Writing: every output is written to a temporary file in the target folder, then renamed.
An interrupted or failed write never leaves a half-written file under the target name,
and an earlier file of that name stays byte-identical (``os.replace`` is atomic on POSIX
and Windows when source and target are on the same volume, which writing the temporary
file into the target folder guarantees). :class:`OutputBatch` stages several outputs and
renames them only when all were written, so a failure leaves none of them half-updated.
A character device (``/dev/null``, a terminal) is written straight through, never
replaced by a regular file; other special files are refused.
"""

from __future__ import annotations

import functools
import os
import re
import stat
import tempfile
from contextlib import contextmanager
from pathlib import Path

from planner.errors import InputError, OutputError

#: Largest input file read (study, sites table, climate or load file): 256 MiB. A
#: typical-year climate file is about 2 MB and a 10,000-site table about 5 MB.
MAX_INPUT_BYTES = 256 * 1024 * 1024

_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
          (stat.S_ISSOCK, "a socket"))


def file_kind(mode: int) -> str:
    """Plain words for what a ``st_mode`` describes ("a regular file", "a folder", ...)."""
    for test, words in _KINDS:
        if test(mode):
            return words
    return "a regular file" if stat.S_ISREG(mode) else "a special file"


def check_input_file(path, *, what: str) -> os.stat_result:
    """Refuse ``path`` unless it is an existing regular file of at most MAX_INPUT_BYTES.

    The check is made on the file's type and size, never by reading it.
    """
    source = str(path)
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise InputError(f"file not found: expected {what}", source=source) from None
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror}): expected {what}", source=source) from None
    _check_input_stat(info, source, what)
    return info


def _check_input_stat(info: os.stat_result, source: str, what: str) -> None:
    if not stat.S_ISREG(info.st_mode):
        raise InputError(f"is {file_kind(info.st_mode)}, not a regular file: expected {what}",
                         source=source)
    if info.st_size > MAX_INPUT_BYTES:
        raise InputError(f"is {info.st_size / 2**20:,.0f} MiB; expected {what} of at most "
                         f"{MAX_INPUT_BYTES // 2**20} MiB", source=source)


def read_input_bytes(path, *, what: str) -> bytes:
    """The bytes of the regular file ``path``, at most MAX_INPUT_BYTES of them.

    The type is checked before opening and again on the open file (the name could have
    been swapped for a FIFO in between); ``O_NONBLOCK`` keeps even that open from waiting.
    """
    source = str(path)
    check_input_file(path, what=what)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    try:
        fd = os.open(path, flags)
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror}): expected {what}", source=source) from None
    try:
        _check_input_stat(os.fstat(fd), source, what)
        chunks, total = [], 0
        while total <= MAX_INPUT_BYTES:
            chunk = os.read(fd, min(1 << 20, MAX_INPUT_BYTES + 1 - total))
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror}): expected {what}", source=source) from None
    finally:
        os.close(fd)
    if total > MAX_INPUT_BYTES:
        raise InputError(f"grew past {MAX_INPUT_BYTES // 2**20} MiB while read: expected {what}",
                         source=source)
    return b"".join(chunks)


# ---------------------------------------------------------------- output targets


def same_file(a, b) -> bool:
    """True when paths ``a`` and ``b`` name the same file (existing or not)."""
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        try:
            return Path(a).resolve() == Path(b).resolve()
        except (OSError, ValueError):  # a name the OS cannot look up is no existing file
            return str(a) == str(b)


def prepare_target(path, *, what: str) -> Path:
    """Check ``path`` can receive a file; create its folder; return it as a Path.

    An existing target must be a regular file or a character device (written straight
    through); folders and other special files are refused.
    """
    target = Path(path)
    if "\x00" in str(target):
        raise InputError(f"a NUL character in the path; expected a file name for the {what}",
                         source=repr(str(target)))
    try:
        info = os.stat(target)
    except FileNotFoundError:
        info = None
    except OSError as exc:  # a name too long, a loop of links, a file used as a folder...
        raise InputError(f"cannot be used for the {what}: {exc.strerror}", source=str(target)) from None
    if info is not None and not (stat.S_ISREG(info.st_mode) or stat.S_ISCHR(info.st_mode)):
        words = file_kind(info.st_mode)
        raise InputError(f"found {words}; expected a file name for the {what}", source=str(target))
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create its folder for the {what}: {exc.strerror}", source=str(target)) from None
    return target


def is_char_device(target) -> bool:
    """Whether ``target`` exists and is a character device (``/dev/null``, a terminal)."""
    try:
        return stat.S_ISCHR(os.stat(target).st_mode)
    except (OSError, ValueError):
        return False


_TEMP_NAME = re.compile(r"^\.(?P<name>.+)\.(?P<pid>\d+)\.[a-z0-9_]{8}\.tmp$")


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists but belongs to someone else
        return True
    return True


def remove_stale_temps(folder: Path, name: str) -> list[Path]:
    """Remove ``.<name>.<pid>.<random>.tmp`` files of our naming whose process is gone.

    A process killed outright (SIGKILL, power loss) cannot clean up after itself; the
    next write of the same target does. Returns the files removed.
    """
    removed = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        match = _TEMP_NAME.match(entry.name)
        if not match or match.group("name") != name:
            continue
        pid = int(match.group("pid"))
        if pid == os.getpid() or _pid_alive(pid):
            continue
        try:
            if entry.is_file(follow_symlinks=False):
                os.unlink(entry.path)
                removed.append(Path(entry.path))
        except OSError:
            pass
    return removed


def _new_temp(target: Path, what: str) -> Path:
    remove_stale_temps(target.parent, target.name)
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.{os.getpid()}.", suffix=".tmp",
                                        dir=target.parent)
    except OSError as exc:
        raise OutputError(f"could not write the {what} into its folder: {exc.strerror}",
                          source=str(target)) from None
    os.close(fd)
    return Path(tmp_name)


class OutputBatch:
    """Outputs written together: all renamed into place only when every one was written.

    Use as a context manager; :meth:`add` writes one output to its temporary file (or
    queues a character device), :meth:`commit` writes the devices and renames the files.
    Leaving the block without a commit (any exception, Ctrl-C, a signal) removes every
    temporary file and leaves every earlier target untouched.
    """

    def __init__(self):
        self._staged: list[tuple[Path, Path, str]] = []
        self._direct: list[tuple[Path, object, str]] = []

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.discard()
        return False

    def add(self, path, write, *, what: str) -> Path:
        """Stage ``write(tmp_path)`` for ``path``; returns the target path."""
        target = prepare_target(path, what=what)
        if is_char_device(target):
            self._direct.append((target, write, what))
            return target
        tmp = _new_temp(target, what)
        self._staged.append((tmp, target, what))
        _guarded(lambda: write(tmp), target, what)
        return target

    def commit(self) -> None:
        """Write the character devices, then rename every staged file over its target."""
        for target, write, what in self._direct:
            _guarded(functools.partial(write, target), target, what)
        for tmp, target, what in self._staged:
            _guarded(functools.partial(_match_mode, tmp, target), target, what)
        for tmp, target, what in self._staged:
            _guarded(functools.partial(os.replace, tmp, target), target, what)
        self._staged.clear()
        self._direct.clear()

    def discard(self) -> None:
        """Remove every staged temporary file."""
        for tmp, _, _ in self._staged:
            tmp.unlink(missing_ok=True)
        self._staged.clear()
        self._direct.clear()


def _guarded(step, target: Path, what: str) -> None:
    try:
        step()
    except OutputError:
        raise
    except OSError as exc:
        reason = exc.strerror or str(exc) or type(exc).__name__
        raise OutputError(f"could not write the {what}: {reason}", source=str(target)) from None


def write_atomically(path, write, *, what: str) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then rename it over ``path``.

    Parameters
    ----------
    path : str or Path
        Target file (a character device is written straight through).
    write : callable
        Writes the complete file to the path it is given.
    what : str
        Words for messages, e.g. ``"plan workbook"``.

    Returns
    -------
    Path
        The target path.

    Raises
    ------
    planner.errors.OutputError
        The file could not be written (disk full, no permission, ...).
    """
    with OutputBatch() as batch:
        target = batch.add(path, write, what=what)
        batch.commit()
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
    if is_char_device(target):
        yield target  # a device is written straight through, never replaced
        return
    tmp = _new_temp(target, what)
    try:
        yield tmp
        _guarded(functools.partial(_match_mode, tmp, target), target, what)
        _guarded(functools.partial(os.replace, tmp, target), target, what)
    finally:
        tmp.unlink(missing_ok=True)

