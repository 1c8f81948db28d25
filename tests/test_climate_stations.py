"""A folder of weather files as stations: headers, great-circle distance, nearest, errors."""

import importlib.util
import shutil
from pathlib import Path

import numpy as np
import pytest

from planner.climate import load_climate, stations
from planner.climate.readers import _pvlib_data_dir
from planner.errors import InputError

REPO = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("fleet_gen", REPO / "benchmarks" / "fleet_gen.py")
fleet_gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(fleet_gen)


def test_great_circle_distance_of_a_published_worked_example():
    # Rosetta Code, task "Haversine formula" (read): from (36.12, -86.67) to (33.94, -118.40)
    # on a sphere of 6372.8 km the distance is 2887.2599506071 km, and 2886.4444428380 km
    # on one of 6371.0 km.
    assert stations.great_circle_km(36.12, -86.67, 33.94, -118.40, radius_km=6372.8) == \
        pytest.approx(2887.2599506071, abs=1e-6)
    assert stations.great_circle_km(36.12, -86.67, 33.94, -118.40, radius_km=6371.0) == \
        pytest.approx(2886.4444428380, abs=1e-6)


def test_great_circle_distance_known_pairs():
    # Geometry of the sphere (from memory): a quarter meridian is pi R / 2; half the equator
    # pi R; a point to itself 0; across the date line the short way round.
    r = stations.EARTH_RADIUS_KM
    assert stations.great_circle_km(0, 0, 90, 0) == pytest.approx(np.pi * r / 2)
    assert stations.great_circle_km(0, 0, 0, 180) == pytest.approx(np.pi * r)
    assert stations.great_circle_km(10, 20, 10, 20) == 0.0
    assert stations.great_circle_km(0, 179.5, 0, -179.5) == pytest.approx(np.pi * r / 180)


def _folder(tmp_path):
    """EPW, plain CSV, TMY3 and TMY2 stations in one folder (the last two from pvlib)."""
    folder = tmp_path / "stations"
    folder.mkdir()
    year = load_climate("temperate-maritime")
    fleet_gen.write_epw(folder / "a.epw", year, latitude_deg=50.0, longitude_deg=5.0,
                        altitude_m=120.0)
    fleet_gen.write_plain_csv(folder / "b.csv", year, latitude_deg=60.0, longitude_deg=10.0,
                              altitude_m=300.0, temp_air_c=year.temp_air_c)
    shutil.copy(_pvlib_data_dir() / "723170TYA.CSV", folder / "c.csv")
    shutil.copy(_pvlib_data_dir() / "12839.tm2", folder / "d.tm2")
    (folder / "notes.md").write_text("not a weather file\n")
    return folder


def test_headers_give_every_format_its_position(tmp_path):
    found = stations.scan_station_folder(_folder(tmp_path))
    by_name = {s.name: s for s in found.stations}
    assert set(by_name) == {"a.epw", "b.csv", "c.csv", "d.tm2"}
    assert (by_name["a.epw"].latitude_deg, by_name["a.epw"].altitude_m) == (50.0, 120.0)
    assert (by_name["b.csv"].kind, by_name["b.csv"].longitude_deg) == ("csv", 10.0)
    # pvlib's bundled files: TMY3 header 36.1 N -79.95 E 273 m UTC-5; TMY2 header
    # N 25 48, W 80 16, 2 m, UTC-5 (the files' own first lines).
    assert (by_name["c.csv"].kind, by_name["c.csv"].latitude_deg, by_name["c.csv"].utc_offset_h) == \
        ("tmy3", 36.1, -5.0)
    assert by_name["d.tm2"].latitude_deg == pytest.approx(25 + 48 / 60)
    assert by_name["d.tm2"].longitude_deg == pytest.approx(-(80 + 16 / 60))
    # The header agrees with what the full reader finds.
    year = stations.station_year(by_name["d.tm2"])
    assert year.latitude_deg == pytest.approx(by_name["d.tm2"].latitude_deg, abs=1e-6)


def test_nearest_station_and_its_distance(tmp_path):
    found = stations.scan_station_folder(_folder(tmp_path))
    index, distance = stations.nearest_stations(found, [50.2, 26.0], [5.1, -80.0])
    names = [found.stations[i].name for i in index]
    assert names == ["a.epw", "d.tm2"]
    assert distance[0] == pytest.approx(stations.great_circle_km(50.2, 5.1, 50.0, 5.0))


def test_each_station_file_is_read_once(tmp_path, monkeypatch):
    found = stations.scan_station_folder(_folder(tmp_path))
    calls = []
    import planner.climate.readers as readers
    real = readers.read_climate_file
    monkeypatch.setattr(readers, "read_climate_file", lambda path, **kw: calls.append(path) or real(path))
    station = next(s for s in found.stations if s.name == "a.epw")
    first = stations.station_year(station)
    for _ in range(5):
        assert stations.station_year(station) is first
    assert len(calls) <= 1


def test_a_folder_without_a_readable_file_names_each_file(tmp_path):
    folder = tmp_path / "bad"
    folder.mkdir()
    (folder / "x.epw").write_text("not an epw\n")
    (folder / "y.csv").write_text("time,temp\n2023-01-01T00:00,1\n")
    (folder / "z.tm2").write_text("short\n")
    with pytest.raises(InputError) as info:
        stations.scan_station_folder(folder)
    message = str(info.value)
    assert "\n" not in message
    for name in ("x.epw", "y.csv", "z.tm2"):
        assert name in message
    assert "LOCATION" in message and "declaration" in message


def test_an_empty_folder_says_what_it_expected(tmp_path):
    with pytest.raises(InputError, match="no readable weather file"):
        stations.scan_station_folder(tmp_path)
