"""Standard streams that are closed or cannot be written (``>&-``, ``2>&-``, ``2>/dev/full``).

What the command line promises whatever the streams: the plan is still written and
the documented exit code is kept.

- A closed descriptor 0, 1 or 2 is reopened on the null device at start, so no file the
  planner opens later (a workbook's temporary file) takes its number and receives what
  was meant for the terminal, and worker processes inherit valid descriptors.
- Standard error carries messages only: a message that cannot be written is dropped
  (the exit code still says what happened).
- Standard output carries results (``--json -``, ``planner climate``, ``planner life``):
  one that cannot be written (closed, full, a broken pipe) is an
  :class:`~planner.errors.OutputError`, exit code 4.

After a failed write the descriptor is pointed at the null device, so the text Python
still holds in its buffers cannot fail again at exit ("Exception ignored ...", exit 120).
"""

from __future__ import annotations

import io
import os
import sys
from contextlib import contextmanager

from planner.errors import OutputError


def _reopen_closed(fd: int) -> bool:
    """Open the null device on ``fd`` if it is closed; True if it was."""
    try:
        os.fstat(fd)
        return False
    except OSError:
        pass
    null = os.open(os.devnull, os.O_RDWR)
    if null != fd:
        os.dup2(null, fd)
        os.close(null)
    return True


def _silence(fd: int) -> None:
    """Point ``fd`` at the null device (after a write to it failed)."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, fd)
        os.close(null)
    except OSError:
        pass


class _Stream(io.TextIOBase):
    """A text stream over one of the standard streams that handles its failures.

    ``results=False`` (stderr): failures are dropped. ``results=True`` (stdout): a
    failure raises :class:`OutputError` naming standard output.
    """

    def __init__(self, inner, fd: int, *, results: bool, closed_at_start: bool):
        super().__init__()
        self._inner = inner
        self._fd = fd
        self._results = results
        self.closed_at_start = closed_at_start
        self.failed = False

    @property
    def encoding(self):
        return getattr(self._inner, "encoding", "utf-8")

    @property
    def errors(self):
        return getattr(self._inner, "errors", "strict")

    def isatty(self) -> bool:
        try:
            return bool(self._inner is not None and not self.failed and self._inner.isatty())
        except (OSError, ValueError):
            return False

    def fileno(self) -> int:
        return self._fd

    def writable(self) -> bool:
        return True

    def write(self, text) -> int:
        if not isinstance(text, str):
            raise TypeError(f"write() argument must be str, not {type(text).__name__}")
        if self.closed_at_start or self._inner is None:
            return self._fail("it is closed")
        if self.failed:
            return self._fail("an earlier write failed")
        try:
            self._inner.write(text)
            if "\n" in text and not self._results:
                self._inner.flush()
        except OSError as err:
            return self._fail(err.strerror or str(err))
        return len(text)

    def flush(self) -> None:
        if self._inner is None or self.failed or self.closed_at_start:
            return
        try:
            self._inner.flush()
        except OSError as err:
            self._fail(err.strerror or str(err))

    def _fail(self, reason: str) -> int:
        first = not self.failed
        self.failed = True
        if first:
            _silence(self._fd)
        if self._results:
            raise OutputError(f"could not write the output: {reason}", source="standard output")
        return 0


@contextmanager
def guarded_streams():
    """Within the block, ``sys.stdout`` and ``sys.stderr`` are :class:`_Stream` objects."""
    closed = {fd: _reopen_closed(fd) for fd in (0, 1, 2)}
    previous = sys.stdout, sys.stderr
    sys.stdout = _Stream(sys.stdout, 1, results=True, closed_at_start=closed[1])
    sys.stderr = _Stream(sys.stderr, 2, results=False, closed_at_start=closed[2])
    try:
        yield sys.stdout, sys.stderr
    finally:
        sys.stdout, sys.stderr = previous


def finish_output(code: int) -> int:
    """Flush standard output at the end of a command; a failure turns exit 0 into 4."""
    try:
        sys.stdout.flush()
    except OutputError as err:
        try:
            sys.stderr.write(f"error: {err}\n")
        except OSError:
            pass
        return 4 if code in (0, None) else code
    return code
