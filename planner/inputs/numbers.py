"""The one number parser: every number a user gives, wherever it is written.

A study key (a TOML number), a sites-table cell, a climate-file declaration, a column of
a climate or load file, a command-line option: each goes through :func:`parse_number`
(or :func:`parse_number_column` for a whole column), so the same rules hold everywhere:

- text is a plain decimal, an optional sign, digits and an optional decimal point
  (``2``, ``-1.5``, ``.5``, ``60.``), with an exponent (``1e-3``) only where the caller
  allows one; no digit separators (``1_0``, ``1,000``), hex, ``inf`` or ``nan``;
- a number is finite, and a huge integer (hundreds of digits, as TOML allows) is
  refused as out of range rather than overflowing;
- ``True``/``False`` are not numbers (TOML booleans are not 1 and 0);
- the range is checked: ``minimum`` (inclusive unless ``exclusive_minimum``),
  ``maximum``, and whole numbers where ``integer``.

A failure is a :class:`NumberError` (a ``ValueError``) with a few words saying why; the
caller knows where the number was and turns it into the one-line
:class:`~planner.errors.InputError` (:func:`number_input` does it for a named value).
"""

from __future__ import annotations

import math
import numbers
import operator
import re

import numpy as np

from planner.errors import InputError

_DECIMAL = r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)"
_EXPONENT = r"(?:[eE][+-]?[0-9]+)?"
#: Text of a plain decimal number, without and with an exponent.
PLAIN_DECIMAL = re.compile(f"^{_DECIMAL}$")
DECIMAL_WITH_EXPONENT = re.compile(f"^{_DECIMAL}{_EXPONENT}$")
#: Longest number text read (a longer one is refused before it is converted).
MAX_TEXT_CHARS = 64
#: Largest magnitude any number may have, whatever its field: far beyond every range the
#: planner states, and far below the float limit, so sums and products stay finite.
MAX_MAGNITUDE = 1e300


class NumberError(ValueError):
    """Not an acceptable number; ``str(err)`` says why in a few words."""


def parse_number(value, *, minimum: float | None = None, maximum: float | None = None,
                 exclusive_minimum: bool = False, integer: bool = False,
                 exponent: bool = False):
    """``value`` as a checked number: ``int`` when ``integer``, else ``float``.

    Parameters
    ----------
    value : str, int, float
        Text (stripped of surrounding blanks) or a number already typed (TOML, a
        spreadsheet cell, a command-line default).
    minimum, maximum : float, optional
        Allowed range, inclusive (``exclusive_minimum``: the minimum itself is refused).
    integer : bool
        Only whole numbers (``2`` and ``2.0`` pass, ``2.5`` does not).
    exponent : bool
        Text may carry an exponent (``1e-3``); sites-table cells may not.

    Raises
    ------
    NumberError
        With the reason: not a number, not finite, out of range, not whole.

    Examples
    --------
    >>> parse_number(" 2.5 ", minimum=0)
    2.5
    >>> parse_number(10 ** 400, maximum=60, integer=True)
    Traceback (most recent call last):
    ...
    planner.inputs.numbers.NumberError: out of range
    """
    number = _as_float(value, exponent)
    if integer:
        if number != math.floor(number):
            raise NumberError("not a whole number")
    if minimum is not None and (number < minimum or (exclusive_minimum and number == minimum)):
        raise NumberError("out of range")
    if maximum is not None and number > maximum:
        raise NumberError("out of range")
    return int(number) if integer else number


def _as_float(value, exponent: bool) -> float:
    if isinstance(value, (bool, np.bool_)):
        raise NumberError("true/false is not a number")
    if isinstance(value, str):
        text = value.strip()
        if len(text) > MAX_TEXT_CHARS:
            raise NumberError("too many characters for a number")
        pattern = DECIMAL_WITH_EXPONENT if exponent else PLAIN_DECIMAL
        if not pattern.match(text):
            raise NumberError("not a number")
        value = float(text)
    elif isinstance(value, numbers.Integral):
        # Compared as integers: float() of a 400-digit integer would overflow.
        if abs(int(value)) > MAX_MAGNITUDE:
            raise NumberError("out of range")
        value = float(int(value))
    elif isinstance(value, numbers.Real):
        value = float(value)
    else:
        raise NumberError("not a number")
    if not math.isfinite(value):
        raise NumberError("not a finite number")
    if abs(value) > MAX_MAGNITUDE:
        raise NumberError("out of range")
    return value


def describe(*, minimum: float | None = None, maximum: float | None = None,
             exclusive_minimum: bool = False, integer: bool = False) -> str:
    """Plain words for a valid value: ``a number >= 0 and <= 1``, ``a whole number ...``."""
    bounds = []
    if minimum is not None:
        bounds.append(f"{'>' if exclusive_minimum else '>='} {minimum:g}")
    if maximum is not None:
        bounds.append(f"<= {maximum:g}")
    what = "a whole number" if integer else "a number"
    return what + (" " + " and ".join(bounds) if bounds else "")


def shown(value, limit: int = 40) -> str:
    """A value as it appears in a message: text quoted, cut to ``limit`` characters."""
    text = repr(value) if isinstance(value, str) else str(value)
    if isinstance(value, numbers.Integral) and not isinstance(value, bool) and len(text) > limit:
        return f"an integer of {len(text.lstrip('-'))} digits"
    return text if len(text) <= limit else text[:limit - 3] + "..."


def number_input(value, *, name: str, source: str | None, minimum: float | None = None,
                 maximum: float | None = None, exclusive_minimum: bool = False,
                 integer: bool = False, exponent: bool = True, unit: str = ""):
    """:func:`parse_number` for a named value; a failure is the one-line InputError
    ``<source>: <name> is <value>; expected <range> [unit]``."""
    try:
        return parse_number(value, minimum=minimum, maximum=maximum,
                            exclusive_minimum=exclusive_minimum, integer=integer,
                            exponent=exponent)
    except NumberError:
        expected = describe(minimum=minimum, maximum=maximum,
                            exclusive_minimum=exclusive_minimum, integer=integer)
        raise InputError(f"{name} is {shown(value)}; expected {expected}"
                         + (f" [{unit}]" if unit else ""), source=source) from None


def parse_number_column(texts, *, exponent: bool = True):
    """A column of cell texts as floats, the same rules as :func:`parse_number`.

    Returns ``(values, bad)``: blank cells are NaN; ``bad`` marks cells that are not a
    finite number (for the caller to name the first one). Fast on the usual all-good
    column (a climate file may hold half a million rows): one regular-expression pass
    over the joined column, and numpy's conversion; cell by cell only to find a bad one.
    """
    texts = list(map(str.strip, map(str, texts)))
    pattern = DECIMAL_WITH_EXPONENT if exponent else PLAIN_DECIMAL
    blank = np.array(list(map(operator.not_, texts)), dtype=bool)
    whole = re.compile(pattern.pattern, re.MULTILINE)
    joined = "\n".join(texts)
    clean = ("\n" not in "".join(texts) and "\r" not in joined
             and len(whole.findall(joined)) == int((~blank).sum())
             and max(map(len, texts), default=0) <= MAX_TEXT_CHARS)
    if clean:
        values = np.array([t or "nan" for t in texts] if blank.any() else texts, dtype=float)
        bad = ~blank & ~(np.abs(values) <= MAX_MAGNITUDE)
        return values, bad
    values = np.full(len(texts), np.nan)
    bad = np.zeros(len(texts), dtype=bool)
    for i, text in enumerate(texts):
        if not text:
            continue
        try:
            values[i] = parse_number(text, exponent=exponent)
        except NumberError:
            bad[i] = True
    return values, bad
