"""What the command line shows on the terminal and how it ends when told to stop.

- :func:`printable`: user text (a study name, a file name) with control characters shown
  as escapes, so a NUL or BEL in a study never reaches the terminal raw.
- :func:`console_warnings`: a warning (a repaired gap in a climate file) is one line
  ``warning: ...``, never the Python source line that issued it.
- :func:`stop_on_signals`: SIGTERM and SIGHUP end the command the way Ctrl-C does (every
  ``finally`` runs, so temporary output files are removed); the exit status is then
  128 + the signal number, as shells report a process ended by a signal (POSIX shell
  convention, common practice): 130 for Ctrl-C, 143 for SIGTERM, 129 for SIGHUP.
"""

from __future__ import annotations

import re
import signal
import warnings
from contextlib import contextmanager

_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def printable(text) -> str:
    """``text`` with control characters (except tab and newline) written as ``\\xNN``."""
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", str(text))


def _warning_line(message, category, filename, lineno, line=None) -> str:
    return f"warning: {printable(message)}\n"


@contextmanager
def console_warnings():
    """Within the block, warnings print as one ``warning: <message>`` line."""
    previous = warnings.formatwarning
    warnings.formatwarning = _warning_line
    try:
        yield
    finally:
        warnings.formatwarning = previous


class Stopped(BaseException):
    """The process was told to stop by a signal; ``exit_code`` is 128 + its number.

    A BaseException like KeyboardInterrupt, so no ``except Exception`` swallows it.
    """

    def __init__(self, signum: int):
        self.signum = signum
        self.exit_code = 128 + signum
        super().__init__(f"stopped by {signal.Signals(signum).name}")


def _raise_stopped(signum, frame):
    raise Stopped(signum)


@contextmanager
def stop_on_signals():
    """Within the block, SIGTERM and SIGHUP raise :class:`Stopped` in the main thread."""
    names = [name for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name)]
    previous = {}
    try:
        for name in names:
            number = getattr(signal, name)
            previous[number] = signal.signal(number, _raise_stopped)
    except ValueError:  # not the main thread: leave the default handlers
        pass
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def emit_json(text: str, *, as_json: bool, json_out, what: str) -> bool:
    """Write a command's JSON where it was asked for: a file (``json_out``, written
    atomically), standard output (``--json`` or ``json_out == "-"``), or both. True when
    the JSON went to standard output (the command then prints nothing else)."""
    if json_out and json_out != "-":
        from pathlib import Path

        from planner.fileio import atomic_path

        with atomic_path(Path(json_out), what=what) as tmp:
            Path(tmp).write_text(text + "\n", encoding="utf-8")
    if as_json or json_out == "-":
        import click

        click.echo(text)
        return True
    return False
