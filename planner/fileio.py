"""Safe file reading, the one path resolver, and the one output committer.

Paths: :func:`resolve_path` turns a path the user gave into the real file it names
(symbolic links followed) or refuses it in one line: a NUL character, a loop of links,
a name longer than the file system allows. Inputs and outputs go through it, so a link
means the same thing wherever it appears.

Reading: :func:`read_input_bytes` and :func:`check_input_file` refuse anything that is not
a regular file (a FIFO or ``/dev/zero`` would be read without end) and any file larger
than :data:`MAX_INPUT_BYTES`, before a byte is read.

Writing: :class:`OutputBatch` is the one committer. Every output is first written to a
temporary file in its target's folder; when all are written, the earlier files of the
same names are kept aside (a hard link, or a copy where links are not possible), the
temporary files are renamed over their targets one by one, and only when every rename
succeeded are the kept copies removed. If a rename fails, the targets already replaced
get their earlier files back (a target that did not exist is removed again), so the
outputs change together or not at all. What cannot be promised: a hard kill (SIGKILL,
power loss) between two renames leaves the first output new and the second old (the
kept copy stays beside it as ``.<name>.<pid>.<random>.old`` until the next write of that
name); and a character device or standard output, written before the renames, cannot
be taken back. ``os.replace`` is atomic on POSIX and Windows within one volume, which
the temporary file in the target's folder guarantees.

A target that is a symbolic link is written through: the file the link points to is
replaced and the link stays. A character device (``/dev/null``, a terminal) is written
straight through, never replaced by a regular file; folders and other special files
are refused.
"""

from __future__ import annotations

import errno
import functools
import gc
import hashlib
import os
import re
import shutil
import stat
import sys
import tempfile
from contextlib import contextmanager
from pathlib import Path

from planner.errors import InputError, OutputError

#: Largest input file read (study, sites table, climate or load file): 256 MiB. A
#: typical-year climate file is about 2 MB and a 10,000-site table about 5 MB.
MAX_INPUT_BYTES = 256 * 1024 * 1024
#: Longest file name (one path component, in bytes) when the file system does not say:
#: 255 on ext4, XFS, Btrfs, APFS and NTFS (from memory).
DEFAULT_NAME_MAX = 255

_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
          (stat.S_ISSOCK, "a socket"))
#: errno values that say the *name* cannot be a path (the user's input, exit 2), as
#: opposed to a file system that refuses to write (exit 4).
_BAD_NAME = {errno.ELOOP: "a loop of symbolic links", errno.ENAMETOOLONG: "a name too long",
             errno.EINVAL: "not a valid name"}


def _why(err: OSError) -> str:
    """The system's words for an OSError, with ours for a bad name ("File name too long:
    a name too long" reads oddly; "Too many levels of symbolic links" is left as is)."""
    return err.strerror or _BAD_NAME.get(err.errno) or str(err)


def file_kind(mode: int) -> str:
    """Plain words for what a ``st_mode`` describes ("a regular file", "a folder", ...)."""
    for test, words in _KINDS:
        if test(mode):
            return words
    return "a regular file" if stat.S_ISREG(mode) else "a special file"


# ---------------------------------------------------------------- the path resolver


def resolve_path(path, *, what: str) -> Path:
    """The real, absolute path of ``path`` (links followed; it need not exist).

    Refused with one line (:class:`InputError`): a NUL character, a loop of symbolic
    links, a name longer than the file system allows. ``what`` says what the path is
    for ("the plan workbook").
    """
    text = os.fspath(path)
    if isinstance(text, bytes):
        text = os.fsdecode(text)
    if "\x00" in text:
        raise InputError(f"a NUL character in the path; expected a file name for {what}",
                         source=repr(text))
    if not text:
        raise InputError(f"an empty path; expected a file name for {what}", source="''")
    try:
        os.lstat(text)
    except OSError as err:
        if err.errno in _BAD_NAME:
            raise InputError(f"cannot be used for {what}: {_why(err)}", source=text) from None
    try:
        real = os.path.realpath(text)
        os.stat(real)
    except FileNotFoundError:
        pass
    except OSError as err:
        if err.errno in _BAD_NAME:
            raise InputError(f"cannot be used for {what}: {_why(err)}", source=text) from None
    except ValueError as err:  # what realpath finds may still be unusable on some systems
        raise InputError(f"cannot be used for {what}: {err}", source=text) from None
    return Path(real)


def same_file(a, b) -> bool:
    """True when paths ``a`` and ``b`` name the same file (existing or not)."""
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        pass
    try:
        return os.path.realpath(a) == os.path.realpath(b)
    except (OSError, ValueError):  # a name the OS cannot look up is no existing file
        return os.fspath(a) == os.fspath(b)


# ---------------------------------------------------------------- reading


def check_input_file(path, *, what: str) -> os.stat_result:
    """Refuse ``path`` unless it is an existing regular file of at most MAX_INPUT_BYTES.

    The check is made on the file's type and size, never by reading it.
    """
    source = _source(path)
    if "\x00" in source:
        raise InputError(f"a NUL character in the path; expected {what}", source=repr(source))
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise InputError(f"file not found: expected {what}", source=source) from None
    except OSError as err:
        raise InputError(f"cannot be read ({_why(err)}): expected {what}", source=source) from None
    except ValueError as err:
        raise InputError(f"cannot be read ({err}): expected {what}", source=source) from None
    _check_input_stat(info, source, what)
    return info


def _source(path) -> str:
    text = os.fspath(path)
    return os.fsdecode(text) if isinstance(text, bytes) else text


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
    source = _source(path)
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


def prepare_target(path, *, what: str) -> Path:
    """Check ``path`` can receive a file, create its folder, and return the real target.

    A symbolic link is followed (the file it points to is what gets replaced). An
    existing target must be a regular file or a character device (written straight
    through); folders and other special files are refused, and so is a name longer
    than the file system allows (:class:`InputError`, exit 2). A folder that cannot be
    created is an :class:`OutputError` (exit 4), like any refusal to write.
    """
    given = _source(path)
    target = resolve_path(path, what=f"the {what}")
    try:
        info = os.stat(target)
    except FileNotFoundError:
        info = None
    except OSError as err:
        if err.errno == errno.ENOTDIR:  # a file where a folder should be: mkdir says so below
            info = None
        else:
            raise _output_problem(err, f"cannot be used for the {what}", given) from None
    if info is not None and not (stat.S_ISREG(info.st_mode) or stat.S_ISCHR(info.st_mode)):
        raise InputError(f"found {file_kind(info.st_mode)}; expected a file name for the {what}",
                         source=given)
    if info is None or not stat.S_ISCHR(info.st_mode):
        limit = _name_max(target.parent)
        size = len(os.fsencode(target.name))
        if size > limit:
            raise InputError(f"the file name is {size} bytes long; expected at most {limit} "
                             f"bytes for the {what}", source=given)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        blocker = _not_a_folder(target.parent)
        problem = err if blocker is None else OSError(
            errno.ENOTDIR, f"Not a directory ({blocker} is not a folder)")
        raise _output_problem(problem, f"cannot create its folder for the {what}", given) from None
    return target


def _not_a_folder(folder: Path) -> Path | None:
    """The nearest existing part of ``folder``'s path that is not a folder, if any."""
    for part in (folder, *folder.parents):
        try:
            if os.path.lexists(part):
                return None if os.path.isdir(part) else part
        except (OSError, ValueError):
            return None
    return None


def _output_problem(err: OSError, words: str, source: str) -> Exception:
    """A bad name is the user's input (exit 2); a refusal to write is an output error (4)."""
    if err.errno in _BAD_NAME:
        return InputError(f"{words}: {_why(err)}", source=source)
    return OutputError(f"{words}: {_why(err)}", source=source)


def _name_max(folder: Path) -> int:
    for candidate in (folder, *folder.parents):
        try:
            return int(os.pathconf(candidate, "PC_NAME_MAX"))
        except (OSError, ValueError, AttributeError):
            continue
    return DEFAULT_NAME_MAX


def is_char_device(target) -> bool:
    """Whether ``target`` exists and is a character device (``/dev/null``, a terminal)."""
    try:
        return stat.S_ISCHR(os.stat(target).st_mode)
    except (OSError, ValueError):
        return False


# ---------------------------------------------------------------- temporary and kept files

_SIDE_NAME = re.compile(r"^\.(?P<name>.+)\.(?P<pid>\d+)\.[a-z0-9_]{8}\.(?:tmp|old)$")
#: Room a side file's name needs beyond the target's: ".", ".<pid>.", 8 random, ".tmp".
_SIDE_EXTRA_BYTES = 1 + 1 + 10 + 1 + 8 + 4


def _side_stem(name: str, limit: int = DEFAULT_NAME_MAX) -> str:
    """The target's name as it appears in its side files' names, short enough that
    ``.<stem>.<pid>.<random>.tmp`` stays within the name limit (a 255-byte target name
    is legal; its temporary file's name must be too)."""
    room = limit - _SIDE_EXTRA_BYTES
    raw = name.encode("utf-8", "surrogateescape")
    if len(raw) <= room:
        return name
    digest = hashlib.blake2b(raw, digest_size=4).hexdigest()
    cut = raw[:room - len(digest) - 1].decode("utf-8", "ignore")
    return f"{cut}~{digest}"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists but belongs to someone else
        return True
    return True


def remove_stale_temps(folder: Path, name: str) -> list[Path]:
    """Remove side files (``.<name>.<pid>.<random>.tmp`` or ``.old``) whose process is gone.

    A process killed outright (SIGKILL, power loss) cannot clean up after itself; the
    next write of the same target does. Returns the files removed.
    """
    removed = []
    stem = _side_stem(name, _name_max(Path(folder)))
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        match = _SIDE_NAME.match(entry.name)
        if not match or match.group("name") != stem:
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


def _side_file(target: Path, what: str, suffix: str) -> Path:
    """A new empty file ``.<name>.<pid>.<random><suffix>`` beside ``target``."""
    stem = _side_stem(target.name, _name_max(target.parent))
    try:
        fd, name = tempfile.mkstemp(prefix=f".{stem}.{os.getpid()}.", suffix=suffix,
                                    dir=target.parent)
    except OSError as exc:
        raise OutputError(f"could not write the {what} into its folder: {exc.strerror}",
                          source=str(target)) from None
    os.close(fd)
    return Path(name)


def _new_temp(target: Path, what: str) -> Path:
    remove_stale_temps(target.parent, target.name)
    return _side_file(target, what, ".tmp")


# ---------------------------------------------------------------- the committer


class OutputBatch:
    """Outputs committed together: either every target is the new file or every target
    is what it was before (see the module's notes for the two exceptions).

    Use as a context manager. :meth:`add` writes one output to its temporary file (a
    character device gets its content staged in the system's temporary folder);
    :meth:`commit` writes the devices, keeps the earlier files aside, renames the new
    ones into place and puts the earlier ones back if any rename fails. Leaving the block
    without a commit (any exception, Ctrl-C, a signal) removes every temporary file and
    leaves every earlier target untouched.
    """

    def __init__(self):
        self._staged: list[tuple[Path, Path, str]] = []   # (temporary, target, what)
        self._direct: list[tuple[Path, Path, str]] = []   # (staged content, device, what)
        self._kept: list[Path] = []

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.discard()
        return False

    def add(self, path, write, *, what: str) -> Path:
        """Stage ``write(tmp_path)`` (or ``bytes``) for ``path``; returns the real target."""
        target = prepare_target(path, what=what)
        if is_char_device(target):
            fd, name = tempfile.mkstemp(prefix=".planner-", suffix=".tmp")
            os.close(fd)
            staged = Path(name)
            self._direct.append((staged, target, what))
            _guarded(functools.partial(_write_content, write, staged), target, what)
            return target
        tmp = _new_temp(target, what)
        self._staged.append((tmp, target, what))
        _guarded(functools.partial(_write_content, write, tmp), target, what)
        return target

    def commit(self) -> None:
        """Write the devices, then replace every staged target, all or none."""
        for staged, device, what in self._direct:
            _guarded(functools.partial(_copy_to_device, staged, device), device, what)
        for tmp, target, what in self._staged:
            _guarded(functools.partial(_match_mode, tmp, target), target, what)
        kept = [self._keep_aside(target, what) for _, target, what in self._staged]
        done = []
        for (tmp, target, what), old in zip(self._staged, kept):
            try:
                os.replace(tmp, target)
            except OSError as exc:
                problems = self._put_back(done)
                reason = exc.strerror or str(exc) or type(exc).__name__
                tail = ("; the outputs written before it were put back" if done and not problems
                        else "".join(f"; {p}" for p in problems))
                raise OutputError(f"could not write the {what}: {reason}{tail}",
                                  source=str(target)) from None
            done.append((target, old))
        for path in self._kept:
            path.unlink(missing_ok=True)
        self._kept.clear()
        self._staged.clear()
        self.discard()

    def _keep_aside(self, target: Path, what: str) -> Path | None:
        """A second name for the earlier ``target`` (None if there was none)."""
        if not os.path.lexists(target):
            return None
        old = _side_file(target, what, ".old")
        self._kept.append(old)
        try:
            old.unlink()
            os.link(target, old)
        except OSError:
            _guarded(functools.partial(shutil.copy2, target, old), target, what)
        return old

    def _put_back(self, done) -> list[str]:
        problems = []
        for target, old in reversed(done):
            try:
                if old is None:
                    os.unlink(target)
                else:
                    os.replace(old, target)
                    self._kept.remove(old)
            except OSError as exc:
                where = f" (the earlier file is kept as {old.name})" if old else ""
                problems.append(f"{target} could not be put back: {exc.strerror}{where}")
                if old is not None and old in self._kept:
                    self._kept.remove(old)  # the only copy left: never removed
        return problems

    def discard(self) -> None:
        """Remove every staged temporary file and kept copy not needed any more."""
        for tmp, _, _ in self._staged:
            tmp.unlink(missing_ok=True)
        for staged, _, _ in self._direct:
            staged.unlink(missing_ok=True)
        for old in self._kept:
            old.unlink(missing_ok=True)
        self._staged.clear()
        self._direct.clear()
        self._kept.clear()


def _write_content(write, path: Path) -> None:
    if isinstance(write, (bytes, bytearray, memoryview)):
        with open(path, "wb") as fh:
            fh.write(write)
        return
    try:
        write(path)
    except BaseException:
        _drop_failed_writers()
        raise


def _drop_failed_writers() -> None:
    """Collect the objects a failed writer left (an unclosed ZIP archive of a workbook
    would try to finish itself when collected, fail again and print "Exception ignored");
    the failure is reported once, by the caller."""
    previous = sys.unraisablehook
    sys.unraisablehook = lambda unraisable: None
    try:
        gc.collect()
    finally:
        sys.unraisablehook = previous


def _copy_to_device(staged: Path, device: Path) -> None:
    fd = os.open(device, os.O_WRONLY | getattr(os, "O_NOCTTY", 0))
    try:
        with open(staged, "rb") as fh:
            while chunk := fh.read(1 << 20):
                view = memoryview(chunk)
                while view:
                    view = view[os.write(fd, view):]
    finally:
        os.close(fd)


def _guarded(step, target: Path, what: str) -> None:
    try:
        step()
    except (OutputError, InputError):
        raise
    except OSError as exc:
        reason = exc.strerror or str(exc) or type(exc).__name__
        raise OutputError(f"could not write the {what}: {reason}", source=str(target)) from None


def write_atomically(path, write, *, what: str) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then rename it over ``path``.

    Parameters
    ----------
    path : str or Path
        Target file (a character device is written straight through; a symbolic link
        is written through to the file it points to).
    write : callable or bytes
        Writes the complete file to the path it is given (or the file's bytes).
    what : str
        Words for messages, e.g. ``"plan workbook"``.

    Returns
    -------
    Path
        The real target path.

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

    If the body raises, the temporary file is removed and ``target`` is untouched. (The
    one-file form of :class:`OutputBatch`.)
    """
    with OutputBatch() as batch:
        holder = {}
        batch.add(target, lambda tmp: holder.setdefault("tmp", tmp), what=what)
        yield holder["tmp"]
        batch.commit()
