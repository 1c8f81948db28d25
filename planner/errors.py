"""The project's own exceptions.

Every problem with what the user supplied (study file, sites table, climate file,
command-line value) is an :class:`InputError` whose message is one line naming the
file, the key path or row/column, what was found and what was expected. The command
line turns it into that line on stderr and exit code 2, with no traceback unless
``--debug`` is given.
"""


def one_line(text: str) -> str:
    """``text`` with its line breaks written as ``\\n``: a message quoting a user's cell
    (a CSV field may hold a quoted newline) stays one line on the terminal."""
    return text.replace("\r\n", "\\n").replace("\n", "\\n").replace("\r", "\\r")


class InputError(ValueError):
    """Bad user input. ``str(err)`` is the one-line message shown to the user."""

    def __init__(self, message: str, *, source: str | None = None):
        self.source = source
        super().__init__(one_line(f"{source}: {message}" if source else message))


class OutputError(OSError):
    """An output could not be written (disk full, no permission, device error).

    ``str(err)`` is the one-line message shown to the user; the command line exits with
    its own code for it (see README). Earlier files of the same names are left untouched.
    """

    def __init__(self, message: str, *, source: str | None = None):
        self.source = source
        super().__init__(one_line(f"{source}: {message}" if source else message))
