"""A folder of weather files as a set of stations; the nearest one to a place.

A planner often holds, offline, the typical-year files of the stations of a region
(EPW, TMY3, TMY2, or the project's plain CSV with its ``# key = value`` declarations).
:func:`scan_station_folder` reads only each file's header (position, altitude, UTC
offset); a station's hourly year is read when a site first needs it and kept for the
process (:func:`station_year`), so each file is read at most once per process whatever
the number of sites. :func:`nearest_stations` picks each site's station by great-circle
distance.
"""

from __future__ import annotations

import dataclasses
import functools
import os
from pathlib import Path

import numpy as np

from planner.climate.typical_year import TypicalYear
from planner.errors import InputError

#: Mean radius of the Earth, km: the IUGG mean radius R1 = (2a + b)/3 of the WGS 84
#: ellipsoid (Moritz 1980, Geodetic Reference System 1980; from memory). The spherical
#: distance is within about 0.5 % of the ellipsoidal one.
EARTH_RADIUS_KM = 6371.0088
#: File name endings a station folder may hold; anything else in the folder is ignored.
STATION_SUFFIXES = (".epw", ".csv", ".tm2", ".txt")
#: Declarations a plain CSV station file must carry itself (a folder gives no options).
_CSV_REQUIRED = ("temperature_unit", "timestamp_marks", "utc_offset_h", "latitude_deg",
                 "longitude_deg")


def great_circle_km(lat1_deg, lon1_deg, lat2_deg, lon2_deg, radius_km: float = EARTH_RADIUS_KM):
    """Great-circle distance on a sphere, km (haversine formula; arrays broadcast).

    d = 2 R asin(sqrt(sin^2(dphi/2) + cos(phi1) cos(phi2) sin^2(dlambda/2)))
    (Sinnott 1984, Sky and Telescope 68(2), 159), stable for short distances.

    Examples
    --------
    One degree of latitude along a meridian, pi R / 180:

    >>> round(float(great_circle_km(0.0, 0.0, 1.0, 0.0)), 3)
    111.195
    """
    p1, p2 = np.radians(lat1_deg), np.radians(lat2_deg)
    dphi = p2 - p1
    dlam = np.radians(np.asarray(lon2_deg, float) - np.asarray(lon1_deg, float))
    h = np.sin(dphi / 2.0) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dlam / 2.0) ** 2
    return 2.0 * radius_km * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0)))


@dataclasses.dataclass(frozen=True)
class Station:
    """One weather file of a station folder, as its header describes it."""

    path: Path
    kind: str                 # "epw", "tmy3", "tmy2" or "csv"
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    utc_offset_h: float

    @property
    def name(self) -> str:
        return self.path.name


@dataclasses.dataclass(frozen=True)
class StationFolder:
    """The readable stations of a folder and the files left out (with why)."""

    folder: Path
    stations: tuple[Station, ...]
    skipped: tuple[tuple[str, str], ...]

    @property
    def latitudes_deg(self) -> np.ndarray:
        return np.array([s.latitude_deg for s in self.stations])

    @property
    def longitudes_deg(self) -> np.ndarray:
        return np.array([s.longitude_deg for s in self.stations])


def scan_station_folder(folder) -> StationFolder:
    """The stations of ``folder`` from their file headers (cached while the folder is unchanged).

    Raises :class:`InputError` when the folder is missing or holds no readable weather
    file; the message names each file tried and why it was refused.
    """
    folder = Path(folder)
    try:
        entries = sorted(os.scandir(folder), key=lambda e: e.name)
    except OSError as err:
        raise InputError(f"station folder cannot be listed ({err.strerror}); expected a folder "
                         "of EPW, TMY3, TMY2 or CSV weather files", source=str(folder)) from None
    files = []
    for entry in entries:
        if entry.name.lower().endswith(STATION_SUFFIXES) and not entry.name.startswith("."):
            try:
                info = entry.stat()
            except OSError:
                info = None
            files.append((entry.name, info.st_size if info else -1,
                          info.st_mtime_ns if info else -1))
    found = _scan(str(folder.resolve()), tuple(files))
    if not found.stations:
        tried = "; ".join(f"{name}: {why}" for name, why in found.skipped) or \
            f"no file ending in {', '.join(STATION_SUFFIXES)}"
        raise InputError(f"no readable weather file in the station folder ({tried}); expected "
                         "EPW, TMY3, TMY2 or declared CSV files", source=str(folder))
    return found


@functools.lru_cache(maxsize=16)
def _scan(folder: str, files: tuple) -> StationFolder:
    stations, skipped = [], []
    for name, _size, _mtime in files:
        path = Path(folder) / name
        try:
            stations.append(read_station_header(path))
        except InputError as err:
            skipped.append((name, str(err).removeprefix(f"{path}: ")))
    return StationFolder(Path(folder), tuple(stations), tuple(skipped))


def read_station_header(path: Path) -> Station:
    """Position, altitude and UTC offset from a weather file's header, without its hours."""
    from planner.climate.csv_reader import file_declarations
    from planner.fileio import check_input_file

    check_input_file(path, what="a weather file")
    suffix = path.suffix.lower()
    try:
        with open(path, encoding="utf-8", errors="replace") as handle:
            first, second = handle.readline(), handle.readline()
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=str(path)) from None
    try:
        if suffix == ".epw":
            fields = first.strip().split(",")
            if len(fields) < 10 or fields[0].strip().upper() != "LOCATION":
                raise ValueError("first line is not an EPW LOCATION line")
            return _station(path, "epw", *fields[6:10])
        if suffix == ".tm2":
            tokens = first.split()
            if len(tokens) < 11 or tokens[-7] not in "NS" or tokens[-4] not in "EW":
                raise ValueError("first line is not a TMY2 station header")
            lat = (float(tokens[-6]) + float(tokens[-5]) / 60) * (1 if tokens[-7] == "N" else -1)
            lon = (float(tokens[-3]) + float(tokens[-2]) / 60) * (1 if tokens[-4] == "E" else -1)
            return _station(path, "tmy2", lat, lon, tokens[-8], tokens[-1])
        fields = first.strip().split(",")
        if len(fields) == 7 and second.startswith("Date (MM/DD/YYYY)"):
            return _station(path, "tmy3", fields[4], fields[5], fields[3], fields[6])
        declared, _ = file_declarations(path)
        missing = [k for k in _CSV_REQUIRED if k not in declared]
        if missing:
            raise ValueError(f"plain CSV without the declaration(s) {', '.join(missing)} "
                             "(a station file must carry '# key = value' lines)")
        return _station(path, "csv", declared["latitude_deg"], declared["longitude_deg"],
                        declared["utc_offset_h"], declared.get("altitude_m", 0.0))
    except (ValueError, IndexError) as err:
        raise InputError(str(err), source=str(path)) from None


def _station(path, kind, lat, lon, tz, alt) -> Station:
    values = {}
    for key, raw, lo, hi in (("latitude", lat, -90, 90), ("longitude", lon, -180, 180),
                             ("UTC offset", tz, -12, 14), ("altitude", alt, -500, 9000)):
        try:
            value = float(raw)
        except (TypeError, ValueError):
            value = float("nan")
        if not lo <= value <= hi:
            raise ValueError(f"header {key} {str(raw).strip()!r} is not a number from {lo} to {hi}")
        values[key] = value
    return Station(path, kind, values["latitude"], values["longitude"], values["altitude"],
                   values["UTC offset"])


def nearest_stations(folder: StationFolder, latitude_deg, longitude_deg):
    """Index of the nearest station of ``folder`` for each place and its distance, km.

    Ties go to the file whose name sorts first.
    """
    lat = np.atleast_1d(np.asarray(latitude_deg, float))
    lon = np.atleast_1d(np.asarray(longitude_deg, float))
    distances = great_circle_km(lat[:, None], lon[:, None], folder.latitudes_deg[None, :],
                                folder.longitudes_deg[None, :])
    index = np.argmin(distances, axis=1)
    return index, distances[np.arange(len(lat)), index]


@functools.lru_cache(maxsize=64)
def _read_station(path: str, size: int, mtime_ns: int) -> TypicalYear:
    from planner.climate.readers import read_climate_file
    return read_climate_file(Path(path))


def station_year(station: Station) -> TypicalYear:
    """The station's hourly typical year, read once per process (while the file is unchanged)."""
    try:
        info = station.path.stat()
    except OSError as err:
        raise InputError(f"cannot be read ({err.strerror})", source=str(station.path)) from None
    return _read_station(str(station.path), info.st_size, info.st_mtime_ns)


__all__ = ["great_circle_km", "scan_station_folder", "nearest_stations", "station_year",
           "Station", "StationFolder", "EARTH_RADIUS_KM"]
