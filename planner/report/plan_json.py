"""The plan as deterministic JSON (layout in ``docs/plan-json.md``).

Identical plans give byte-identical text: keys sorted, floats rounded to 6 significant
digits, NaN and infinities written as ``null`` (JSON, RFC 8259 §6, has no NaN), no
timestamps, UTF-8, ``\\n`` line ends, a final newline.
"""

from __future__ import annotations

import json
import math
import os
import re
from collections.abc import Mapping
from datetime import date, datetime
from enum import Enum
from numbers import Integral, Real
from pathlib import Path, PurePath

import numpy as np

from planner.fileio import write_atomically

#: Significant digits kept for every float in the plan JSON (docs/plan-json.md).
SIGNIFICANT_DIGITS = 6


def round_significant(value: float, digits: int = SIGNIFICANT_DIGITS) -> float | None:
    """Round ``value`` to ``digits`` significant digits; non-finite values give None.

    Negative zero becomes 0.0 so that the text does not depend on the sign of a zero.
    """
    value = float(value)
    if not math.isfinite(value):
        return None
    rounded = float(f"{value:.{digits}g}")
    return 0.0 if rounded == 0.0 else rounded


def normalise(obj, _path: str = "plan"):
    """Return ``obj`` as plain JSON types with floats rounded (see module docstring).

    Accepts dicts, lists, tuples, numpy scalars and arrays, Paths, dates and Enums.
    Raises TypeError naming the key path for anything else, since that is a bug in the
    stage that built the plan, not a user input problem.
    """
    if obj is None or isinstance(obj, (bool, np.bool_)):
        return None if obj is None else bool(obj)
    if isinstance(obj, Integral):
        return int(obj)
    if isinstance(obj, Real):
        return round_significant(obj)
    if isinstance(obj, str):
        return obj
    if isinstance(obj, Mapping):
        out = {}
        for key, value in obj.items():
            if not isinstance(key, str):
                raise TypeError(f"{_path}: key {key!r} is {type(key).__name__}; plan keys must be str")
            out[key] = normalise(value, f"{_path}.{key}")
        return out
    if isinstance(obj, (list, tuple, np.ndarray)):
        fast = _round_float_sequence(obj)
        if fast is not None:
            return fast
        items = obj.tolist() if isinstance(obj, np.ndarray) else obj
        return [normalise(v, f"{_path}[{i}]") for i, v in enumerate(items)]
    if isinstance(obj, PurePath):
        return obj.as_posix()
    if isinstance(obj, (date, datetime)):
        return obj.isoformat()
    if isinstance(obj, Enum):
        return normalise(obj.value, _path)
    raise TypeError(f"{_path}: {type(obj).__name__} cannot be written to the plan JSON")


def _round_float_sequence(seq) -> list[float] | None:
    """Round a flat all-float, all-finite sequence at C speed; None if it is anything else.

    Fade curves hold 12*horizon+1 floats per series and a fleet has thousands of them, so
    the element-by-element path would dominate the write time. The text route below gives
    exactly what :func:`round_significant` gives for each element.
    """
    if isinstance(seq, np.ndarray):
        if seq.ndim != 1 or seq.dtype.kind != "f":
            return None
        values = seq.tolist()
    else:
        if not seq or not all(type(v) is float for v in seq):
            return None
        values = seq
    if not all(map(math.isfinite, values)):
        return None
    text = (f"%.{SIGNIFICANT_DIGITS}g " * len(values)) % tuple(values)
    # Adding 0.0 turns -0.0 into 0.0, as round_significant does.
    return [float(v) + 0.0 for v in text.split()]


def plan_to_json_text(plan: Mapping) -> str:
    """Return the plan as deterministic JSON text (sorted keys, 6 significant digits).

    Parameters
    ----------
    plan : mapping
        The plan dict laid out as in ``docs/plan-json.md``.

    Returns
    -------
    str
        Indented JSON ending in a newline; identical plans give identical text.
    """
    clean = normalise(plan)
    leaves: list[list] = []
    try:
        skeleton = _park_number_lists(clean, leaves)
    except _TokenClash:
        # A string in the plan holds a NUL and could mimic a placeholder: plain layout.
        return json.dumps(clean, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    text = json.dumps(skeleton, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)
    # Flat number lists (fade curves, monthly temperatures, years) go on one line each:
    # readable, a third of the size, and far quicker than one line per number.
    return _LEAF_TOKEN.sub(lambda m: json.dumps(leaves[int(m.group(1))], allow_nan=False), text) + "\n"


#: Placeholder for a parked number list; NUL never occurs unescaped in JSON text.
_LEAF_TOKEN = re.compile(r'"\\u0000(\d+)\\u0000"')


def _park_number_lists(obj, leaves: list):
    """Replace every non-empty flat list of numbers by a placeholder string (see caller)."""
    if isinstance(obj, dict):
        return {k: _park_number_lists(v, leaves) for k, v in obj.items()}
    if isinstance(obj, list):
        if obj and all(type(v) in (int, float) or v is None for v in obj):
            leaves.append(obj)
            return f"\x00{len(leaves) - 1}\x00"
        return [_park_number_lists(v, leaves) for v in obj]
    if isinstance(obj, str) and "\x00" in obj:
        raise _TokenClash
    return obj


class _TokenClash(Exception):
    """A plan string contains NUL, the placeholder delimiter."""


def write_json(plan: Mapping, path) -> Path:
    """Write the plan JSON to ``path`` atomically and return the path.

    The text is written to a temporary file in the target folder and renamed over the
    target, so an earlier plan stays intact if anything fails. The command line handles
    ``-`` (stdout) itself with :func:`plan_to_json_text`.
    """
    data = plan_to_json_text(plan).encode("utf-8")

    def _write(tmp: Path) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())

    return write_atomically(path, _write, what="plan JSON")
