"""Command-line numbers through the one number parser (:mod:`planner.inputs.numbers`).

``--temp-c nan``, ``--draws 1e400`` or ``--warming-k inf`` are refused like a bad study
value: one line naming the option, what was found and what was expected, exit code 2.
"""

from __future__ import annotations

import click

from planner.errors import InputError
from planner.inputs.numbers import NumberError, describe, parse_number, shown


class Number(click.ParamType):
    """A finite number (``integer``: a whole one) within an optional range."""

    def __init__(self, *, minimum=None, maximum=None, exclusive_minimum=False, integer=False):
        self.minimum, self.maximum = minimum, maximum
        self.exclusive_minimum, self.integer = exclusive_minimum, integer
        self.name = "integer" if integer else "number"

    def get_metavar(self, param, ctx=None):
        return "N" if self.integer else "X"

    def convert(self, value, param, ctx):
        try:
            return parse_number(value, minimum=self.minimum, maximum=self.maximum,
                                exclusive_minimum=self.exclusive_minimum, integer=self.integer,
                                exponent=True)
        except NumberError:
            option = param.opts[0] if param is not None and param.opts else "a number"
            command = ctx.command.name if ctx is not None and ctx.command else "planner"
            expected = describe(minimum=self.minimum, maximum=self.maximum,
                                exclusive_minimum=self.exclusive_minimum, integer=self.integer)
            raise InputError(f"{option} is {shown(value)}; expected {expected}",
                             source=command) from None
