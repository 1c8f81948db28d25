"""Atomic file writing: nothing the user owns is overwritten half-way."""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def atomic_path(target):
    """Yield a temporary path in ``target``'s folder; rename it over ``target`` on success.

    If the body raises, the temporary file is removed and ``target`` is untouched.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    handle, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp",
                                        dir=target.parent)
    os.close(handle)
    tmp = Path(tmp_name)
    try:
        yield tmp
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()


def write_text_atomic(target, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``target`` through a temporary file and a rename."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)
