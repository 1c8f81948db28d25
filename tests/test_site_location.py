"""Sites where they really are: coordinates, station folders, monthly normals, bad input."""

import importlib.util
import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.climate import load_climate
from planner.climate.stations import great_circle_km
from planner.errors import InputError
from planner.site.model import model_sites
from planner.study.loading import load_study
from planner.study.schema import MONTHS

REPO = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("fleet_gen", REPO / "benchmarks" / "fleet_gen.py")
fleet_gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(fleet_gen)

HEADER = "id,region,climate,load_w,charging,pv_wp,autonomy_days,latitude_deg,longitude_deg,altitude_m\n"


def _stations(folder: Path) -> Path:
    """Two invented stations from the temperate-maritime archetype: 50 N 5 E at 100 m and
    40 N 15 E at 1,200 m (EPW and the project's plain CSV)."""
    folder.mkdir(parents=True, exist_ok=True)
    year = load_climate("temperate-maritime")
    fleet_gen.write_epw(folder / "low.epw", year, latitude_deg=50.0, longitude_deg=5.0, altitude_m=100.0)
    fleet_gen.write_plain_csv(folder / "high.csv", year, latitude_deg=40.0, longitude_deg=15.0,
                              altitude_m=1200.0, temp_air_c=year.temp_air_c - 7.0)
    return folder


def _study(tmp_path, rows, extra="", climates='[climates.net]\nstations = "wx"\n'):
    _stations(tmp_path / "wx")
    (tmp_path / "sites.csv").write_text(HEADER + "".join(rows), encoding="utf-8")
    path = tmp_path / "s.toml"
    path.write_text('[study]\nsites_file = "sites.csv"\n' + extra + climates, encoding="utf-8")
    return path


def _one_line_error(path) -> str:
    with pytest.raises(InputError) as info:
        load_study(path)
    message = str(info.value)
    assert "\n" not in message
    return message


def test_nearest_station_distance_and_lapse_shift(tmp_path):
    study = load_study(_study(tmp_path, ["A,r,net,1,pv,40,5,50.3,5.2,400\n",
                                          "B,r,net,1,pv,40,5,40.1,15.3,700\n"]))
    a, b = model_sites(study)
    assert (a.site_climate.source, b.site_climate.source) == ("low.epw", "high.csv")
    assert a.site_climate.station_distance_km == pytest.approx(great_circle_km(50.3, 5.2, 50.0, 5.0))
    # ICAO standard gradient 6.5 K/km: 300 m above the station is 1.95 K colder, 500 m
    # below is 3.25 K warmer.
    assert a.site_climate.altitude_shift_k == pytest.approx(-1.95)
    assert b.site_climate.altitude_shift_k == pytest.approx(3.25)
    station = load_climate(str(tmp_path / "wx" / "low.epw"))
    lead = int(np.round(5.2 / 15.0 - 5.0 / 15.0))
    assert lead == 0
    np.testing.assert_allclose(a.year.temp_air_c, station.temp_air_c - 1.95, atol=1e-9)
    # Own sun: the year is at the site's position, its offset from the longitude.
    assert (a.year.latitude_deg, a.year.utc_offset_h) == (50.3, 0.0)
    assert a.site_climate.utc_offset_from == "longitude"
    assert not any("km away" in w for w in a.warnings)


def test_far_station_and_large_altitude_difference_warn_with_the_numbers(tmp_path):
    # 2,000 km from the nearest station: a warning naming the distance (the plan still runs).
    lat = 50.0 + 2000.0 / 111.195    # one degree of latitude is 111.195 km on the mean sphere
    study = load_study(_study(tmp_path, [f"A,r,net,1,pv,40,5,{lat:.4f},5.0,1500\n"]))
    model = model_sites(study)[0]
    text = " | ".join(model.warnings)
    assert "2,000 km away" in text and "limit 150 km" in text
    assert "1,400 m above" in text and "-9.1 K" in text
    assert model.site_climate.station_distance_km == pytest.approx(2000.0, abs=0.5)


def test_limits_are_study_settings(tmp_path):
    study = load_study(_study(tmp_path, ["A,r,net,1,pv,40,5,52.0,5.0,100\n"],
                              extra="[location]\nstation_distance_limit_km = 100\n"
                                    "lapse_rate_k_per_km = 5.0\n"))
    model = model_sites(study)[0]
    assert any("222 km away (limit 100 km)" in w for w in model.warnings)


@pytest.mark.parametrize(("column", "value", "expected"), [
    ("latitude_deg", "91", ">= -90 and <= 90"),
    ("longitude_deg", "181", ">= -180 and <= 180"),
    ("altitude_m", "-600", ">= -500 and <= 8850"),
    ("altitude_m", "9000", ">= -500 and <= 8850"),
    ("latitude_deg", "north", "a number"),
])
def test_coordinates_out_of_range_are_one_line_errors(tmp_path, column, value, expected):
    row = {"latitude_deg": "50.1", "longitude_deg": "5.1", "altitude_m": "100", column: value}
    path = _study(tmp_path, [f"A,r,net,1,pv,40,5,{row['latitude_deg']},{row['longitude_deg']},"
                             f"{row['altitude_m']}\n"])
    message = _one_line_error(path)
    assert f"row 2, column {column}: found '{value}'" in message and expected in message


def test_cli_exits_2_on_a_bad_coordinate(tmp_path):
    path = _study(tmp_path, ["A,r,net,1,pv,40,5,91,5.1,100\n"])
    result = CliRunner().invoke(cli, ["plan", str(path), "--quiet"])
    assert result.exit_code == 2
    assert "column latitude_deg" in result.output and "Traceback" not in result.output


def test_coordinates_for_some_sites_of_a_station_climate_but_not_others(tmp_path):
    path = _study(tmp_path, ["A,r,net,1,pv,40,5,50.1,5.1,100\n", "B,r,net,1,pv,40,5,,,\n"])
    message = _one_line_error(path)
    assert "row 3, column latitude_deg: empty" in message
    assert "nearest station" in message and "given on row 2" in message


def test_one_coordinate_alone_is_an_error(tmp_path):
    (tmp_path / "sites.csv").write_text(HEADER + "A,r,alpine,1,pv,40,5,46.0,,\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    assert "column longitude_deg: empty while the other coordinate is given" in \
        _one_line_error(tmp_path / "s.toml")


def test_a_station_folder_without_a_readable_file_fails_at_load(tmp_path):
    (tmp_path / "wx2").mkdir()
    (tmp_path / "wx2" / "a.epw").write_text("garbage\n")
    path = _study(tmp_path, ["A,r,net,1,pv,40,5,50.1,5.1,100\n"],
                  climates='[climates.net]\nstations = "wx2"\n')
    message = _one_line_error(path)
    assert "no readable weather file" in message and "a.epw" in message


def test_a_bundled_climate_at_the_site_own_position_and_altitude(tmp_path):
    (tmp_path / "sites.csv").write_text(HEADER + "A,r,alpine,1,pv,40,5,,,2650\n"
                                                 "B,r,alpine,1,pv,40,5,-45.0,170.0,2000\n"
                                                 "C,r,alpine,1,pv,40,5,,,\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    a, b, c = model_sites(load_study(tmp_path / "s.toml"))
    alpine = load_climate("alpine")   # archetype at 2,000 m
    np.testing.assert_allclose(a.year.temp_air_c, alpine.temp_air_c - 6.5 * 0.65, atol=1e-9)
    assert a.year.ghi_w_m2 is alpine.ghi_w_m2          # shared sky, only an offset
    assert c.year is alpine                            # no location columns: as before
    assert b.year.latitude_deg == -45.0 and b.pv_azimuth_deg == 0.0   # faces the equator
    assert any("other hemisphere" in w for w in b.warnings)


def _normals_csv(path, rows):
    header = ["id", *(f"tmin_{m}_c" for m in MONTHS), *(f"tmax_{m}_c" for m in MONTHS)]
    extra = sorted({k for r in rows for k in r} - set(header) - {"tmin", "tmax"})
    lines = [",".join(header + extra)]
    for r in rows:
        lines.append(",".join([r["id"], *map(str, r["tmin"]), *map(str, r["tmax"]),
                               *(str(r.get(k, "")) for k in extra)]))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


TMIN = [-4, -3, 0, 4, 8, 12, 14, 14, 11, 6, 1, -3]
TMAX = [4, 6, 10, 14, 18, 22, 25, 24, 20, 14, 8, 5]


def test_normals_per_site_and_named(tmp_path):
    ghi = dict(zip((f"ghi_{m}_kwh_m2_day" for m in MONTHS),
                   [0.8, 1.5, 2.6, 3.9, 4.9, 5.4, 5.3, 4.6, 3.3, 2.0, 1.0, 0.6]))
    _normals_csv(tmp_path / "normals.csv", [
        {"id": "A", "tmin": TMIN, "tmax": TMAX, **ghi},
        {"id": "valley", "tmin": TMIN, "tmax": TMAX, "cloudiness": "broken", "altitude_m": 300},
        {"id": "bare", "tmin": TMIN, "tmax": TMAX}])
    (tmp_path / "sites.csv").write_text(
        HEADER.strip() + ",normals_id\n"
        "A,r,nm,1,pv,40,5,51.0,4.0,,\nB,r,nm,1,pv,40,5,-41.0,174.0,800,valley\n"
        "C,r,nm,1,pv,40,5,10.0,-70.0,,bare\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n'
                                     '[climates.nm]\nnormals = "normals.csv"\n')
    a, b, c = model_sites(load_study(tmp_path / "s.toml"))
    days = a.year.ghi_w_m2.reshape(365, 24).sum(axis=1) / 1000.0
    starts = np.r_[0, np.cumsum([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30])]
    monthly = np.add.reduceat(days, starts) / np.diff(np.r_[starts, 365])
    np.testing.assert_allclose(monthly, list(ghi.values()), rtol=0.03)
    assert a.site_climate.kind == "normals" and a.site_climate.altitude_shift_k == 0.0
    # A named normal measured at 300 m used at 800 m: 500 m higher, -3.25 K.
    assert b.site_climate.altitude_shift_k == pytest.approx(-3.25)
    assert "Kasten & Czeplak" in b.year.source
    assert any("neither irradiation nor cloudiness" in w for w in c.warnings)


@pytest.mark.parametrize(("change", "expected"), [
    (lambda r: r["tmin"].__setitem__(6, 30), "row 2, column tmin_jul_c: 30 °C is not below tmax_jul_c 25 °C"),
    (lambda r: r["tmax"].pop(), "missing column 'tmax_dec_c'"),
])
def test_bad_normals_are_one_line_errors(tmp_path, change, expected):
    row = {"id": "A", "tmin": list(TMIN), "tmax": list(TMAX)}
    change(row)
    _normals_csv(tmp_path / "normals.csv", [row])
    if len(row["tmax"]) == 11:   # 11 months: the header lacks December
        text = (tmp_path / "normals.csv").read_text().replace(",tmax_dec_c", "")
        (tmp_path / "normals.csv").write_text(text)
    (tmp_path / "sites.csv").write_text(HEADER + "A,r,nm,1,pv,40,5,51.0,4.0,\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n'
                                     '[climates.nm]\nnormals = "normals.csv"\n')
    message = _one_line_error(tmp_path / "s.toml")
    assert "normals.csv" in message and expected in message


def test_climate_command_shows_one_site(tmp_path):
    path = _study(tmp_path, ["A,r,net,1,pv,40,5,50.3,5.2,400\n"])
    result = CliRunner().invoke(cli, ["climate", "--study", str(path), "--site", "A"])
    assert result.exit_code == 0, result.output
    assert "nearest station low.epw, 36 km away" in result.output
    assert "air temperature -1.95 K" in result.output and "GHI [kWh/m²/day]" in result.output
    data = json.loads(CliRunner().invoke(cli, ["climate", "--study", str(path), "--site", "A",
                                               "--json"]).output)
    assert data["site_climate"]["kind"] == "station"
    assert len(data["monthly"]["air_min_c"]) == 12
    missing = CliRunner().invoke(cli, ["climate", "--study", str(path), "--site", "Z"])
    assert missing.exit_code == 2 and "no site 'Z'" in missing.output


def test_plan_console_lists_climate_warnings():
    from planner.cli.plan import MAX_UNSERVED_LINES, _climate_lines

    sites = [{"id": f"S{i}", "site_climate": {"warnings": [f"nearest station x is {2000 + i} km away"]}}
             for i in range(MAX_UNSERVED_LINES + 3)] + [{"id": "T", "site_climate": None}]
    lines = _climate_lines(sites)
    assert lines[0] == "  CLIMATE S0: nearest station x is 2000 km away"
    assert lines[-1].startswith("  ... and 3 more climate warnings")
