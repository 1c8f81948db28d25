"""Reading numbers back from a plan dict, where any value may be missing or not finite."""

from __future__ import annotations

import math
from numbers import Integral, Real


def finite_number(value) -> int | float | None:
    """A finite number from a plan value, else None.

    Integers (numpy's included) stay integers, other reals become floats; ``bool``, text,
    ``None``, NaN and infinities give None, so a reader can treat all of them as "no value".

    >>> finite_number(3), finite_number(2.5), finite_number(float("nan")), finite_number(True)
    (3, 2.5, None, None)
    """
    if isinstance(value, bool):
        return None
    if isinstance(value, Integral):
        return int(value)
    if isinstance(value, Real):
        value = float(value)
        return value if math.isfinite(value) else None
    return None
