"""The project's own exceptions.

Every problem with what the user supplied (study file, sites table, climate file,
command-line value) is an :class:`InputError` whose message is one line naming the
file, the key path or row/column, what was found and what was expected. The command
line turns it into that line on stderr and exit code 2, with no traceback unless
``--debug`` is given. A checker that finds several mistakes at once (a study and its
sites table) gathers them in a :class:`MistakeList` and raises :class:`InputErrors`:
one such line per mistake, at most :data:`MAX_LINES` of them and a count of the rest.
"""

from __future__ import annotations

from contextlib import contextmanager

#: Mistakes shown one per line; beyond them, one line counts the rest.
MAX_LINES = 20


def one_line(text: str) -> str:
    """``text`` with its line breaks written as ``\\n``: a message quoting a user's cell
    (a CSV field may hold a quoted newline) stays one line on the terminal."""
    return text.replace("\r\n", "\\n").replace("\n", "\\n").replace("\r", "\\r")


class InputError(ValueError):
    """Bad user input. ``str(err)`` is the one-line message shown to the user."""

    def __init__(self, message: str, *, source: str | None = None):
        self.source = source
        super().__init__(one_line(f"{source}: {message}" if source else message))

    def lines(self) -> list[str]:
        """The message as lines for the terminal: one for one mistake."""
        return [str(self)]


class InputErrors(InputError):
    """Several mistakes found together: ``errors`` holds each one as an InputError.

    ``str(err)`` is one line per mistake (the first :data:`MAX_LINES`), then a line
    counting the rest.
    """

    def __init__(self, errors):
        self.errors = list(errors)
        self.source = self.errors[0].source if self.errors else None
        ValueError.__init__(self, "\n".join(self.lines()))

    def lines(self) -> list[str]:
        shown = [str(err) for err in self.errors[:MAX_LINES]]
        rest = len(self.errors) - len(shown)
        if rest:
            shown.append(f"... and {rest:,} more mistake{'s' if rest > 1 else ''} of the same "
                         "kinds (fix these and run again to see them)")
        return shown


class MistakeList:
    """Mistakes gathered while checking, raised together by :meth:`raise_if_any`.

    ``with mistakes.catch(): ...`` records an InputError raised in the block (several,
    if it is an InputErrors) and carries on after the block.
    """

    def __init__(self):
        self.errors: list[InputError] = []

    def __bool__(self) -> bool:
        return bool(self.errors)

    def __len__(self) -> int:
        return len(self.errors)

    def add(self, err: InputError) -> None:
        self.errors.extend(err.errors if isinstance(err, InputErrors) else [err])

    @contextmanager
    def catch(self):
        try:
            yield
        except InputError as err:
            self.add(err)

    def raise_if_any(self) -> None:
        if len(self.errors) == 1:
            raise self.errors[0]
        if self.errors:
            raise InputErrors(self.errors)


class OutputError(OSError):
    """An output could not be written (disk full, no permission, device error).

    ``str(err)`` is the one-line message shown to the user; the command line exits with
    its own code for it (see README). Earlier files of the same names are left untouched.
    """

    def __init__(self, message: str, *, source: str | None = None):
        self.source = source
        super().__init__(one_line(f"{source}: {message}" if source else message))
