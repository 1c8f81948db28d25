"""Where a typical year comes from: a bundled name or a weather file, read once."""

from __future__ import annotations

import os
from pathlib import Path

from planner.climate.typical_year import TypicalYear
from planner.errors import InputError
from planner.inputs.numbers import number_input


def list_bundled() -> list[tuple[str, str]]:
    """Bundled climates as ``(name, one-line description)``, sorted by name."""
    from planner.climate import archetypes, readers

    items = list(readers.PVLIB_FILES_DESCRIPTIONS.items()) + list(archetypes.descriptions().items())
    return sorted(items)


def load_climate(source: str, *, base_dir: Path | None = None, options: dict | None = None,
                 warming_k: float = 0.0) -> TypicalYear:
    """Load a typical year from a bundled name or a weather file.

    Parameters
    ----------
    source : str
        A bundled name (:func:`list_bundled`) or a path to an ``.epw``, TMY3 ``.csv``,
        TMY2 ``.tm2`` or plain ``.csv`` file. Relative paths are resolved against
        ``base_dir`` (default: the current folder).
    base_dir : Path, optional
        Folder for relative paths (usually the study file's folder).
    options : dict, optional
        Declarations for plain CSV files (see ``docs/climate.md``); also accepted for
        EPW/TMY files only where they apply. Unknown keys raise :class:`InputError`.
    warming_k : float
        Kelvin added to every hourly air temperature (climate-change sensitivity).

    Returns
    -------
    TypicalYear
    """
    from planner.climate import archetypes, readers

    if not isinstance(source, str) or not source.strip():
        raise InputError(f"climate source is {source!r}; expected a bundled climate name "
                         "or a path to an EPW/TMY3/TMY2/CSV file", source="climate")
    warming = number_input(warming_k, name="warming_k", source="climate", minimum=-20.0,
                           maximum=20.0, unit="K")
    name = readers.canonical_id(source.strip())
    bundled = name in readers.PVLIB_FILES or name in archetypes.names()
    if bundled and options:
        raise InputError(f"options {sorted(options)} were given for the bundled climate "
                         f"'{name}'; expected options only with a CSV/EPW/TMY file",
                         source="climate")
    if name in readers.PVLIB_FILES:
        year = readers.load_pvlib_bundled(name)
    elif bundled:
        year = archetypes.load_archetype(name)
    else:
        path = Path(name)
        if not path.is_absolute():
            path = Path(base_dir or ".") / path
        if not path.suffix and not os.path.exists(path):
            import difflib
            known = [n for n, _ in list_bundled()]
            close = difflib.get_close_matches(name, known, n=1)
            hint = f"; did you mean '{close[0]}'?" if close else \
                "; run 'planner climate --list' for the bundled names"
            raise InputError(f"'{name}' is neither a bundled climate nor an existing file{hint}",
                             source="climate")
        year = _read_file_cached(path, options)
    return year.with_warming(warming)


def _read_file_cached(path: Path, options: dict | None) -> TypicalYear:
    """Read a weather file once per (path, content, options).

    A fleet often repeats one file; a changed file is read again (the key holds a
    digest of the bytes). Repair warnings (short gaps) are issued on the first read only.
    """
    import hashlib

    from planner.climate import readers
    from planner.fileio import read_input_bytes

    data = read_input_bytes(path, what="an EPW, TMY3, TMY2 or CSV climate file")
    digest = hashlib.blake2b(data, digest_size=16).hexdigest()
    key = (str(path.resolve()), digest,
           tuple(sorted((str(k), repr(v)) for k, v in (options or {}).items())))
    cached = _FILE_CACHE.get(key)
    if cached is None:
        cached = readers.read_climate_file(path, options=options)
        if len(_FILE_CACHE) >= 32:
            _FILE_CACHE.pop(next(iter(_FILE_CACHE)))
        _FILE_CACHE[key] = cached
    return cached


_FILE_CACHE: dict = {}
