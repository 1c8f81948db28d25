"""Climate files a hostile user writes: impossible stations, data coarser than hourly,
a byte-order mark, declarations that are not numbers (planner/climate/normalise.py and
csv_reader.py). Each class with a known case and a second variant.
"""

import re

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from test_climate_readers import BASE, hours, ramp, stamps, write_csv, write_epw

from planner.cli import cli
from planner.climate import load_climate
from planner.errors import InputError
from planner.study.loading import load_study

# ---------------------------------------------------------------- impossible station


def _epw_with(tmp_path, name, field_index, value):
    path = write_epw(tmp_path / name, np.full(8760, 5.0))
    lines = path.read_text().splitlines(keepends=True)
    fields = lines[0].rstrip("\n").split(",")
    fields[field_index] = value       # LOCATION: ..., latitude [6], longitude [7], TZ [8], elevation [9]
    lines[0] = ",".join(fields) + "\n"
    path.write_text("".join(lines))
    return path


@pytest.mark.parametrize("index, value, words", [
    (6, "999", "latitude 999"),           # (|latitude| <= 90 by definition)
    (7, "-500", "longitude -500"),        # variant: longitude beyond 180 degrees
    (8, "15", "UTC offset (h) 15"),       # variant: no zone is 15 h from UTC (they span -12..+14)
])
def test_epw_with_an_impossible_station_is_refused(tmp_path, index, value, words):
    path = _epw_with(tmp_path, "bad.epw", index, value)
    with pytest.raises(InputError, match=re.escape(f"bad.epw: the header gives {words}")):
        load_climate(str(path))
    result = CliRunner().invoke(cli, ["climate", str(path)])
    assert result.exit_code == 2 and words in result.output and "Traceback" not in result.output


def test_impossible_station_inside_a_plan_names_file_and_site(tmp_path):
    from planner.site.model import model_sites

    _epw_with(tmp_path, "bad.epw", 6, "999")
    (tmp_path / "sites.csv").write_text("id,region,climate,load_w,charging,pv_wp,autonomy_days\n"
                                        "A,r,alpine,2,pv,60,5\n\nB,r,bad.epw,2,pv,60,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    study = load_study(tmp_path / "s.toml")
    with pytest.raises(InputError, match=r"sites.csv: row 4, column climate \(site B\): .*bad.epw: "
                                         "the header gives latitude 999"):
        model_sites(study)


# ---------------------------------------------------------------- coarser than hourly


def test_two_hourly_data_is_an_error_not_interpolated(tmp_path):
    # a reading every 2 hours, timestamps marking the start
    index = hours(periods=4380, freq="2h")
    path = write_csv(tmp_path / "two.csv", stamps(index), ramp()[::2])
    with pytest.raises(InputError, match="timestamps are 2 h apart; expected hourly or finer"):
        load_climate(str(path), options=BASE)


def test_three_hourly_end_marked_data_with_offsets_is_an_error(tmp_path):
    # variant: 3-hourly, hour-ending labels, ISO timestamps carrying their offset
    index = pd.date_range("2023-01-01 03:00", periods=2920, freq="3h", tz="UTC")
    path = write_csv(tmp_path / "three.csv", index.strftime("%Y-%m-%dT%H:%M%z"), ramp()[::3])
    with pytest.raises(InputError, match="3 h apart"):
        load_climate(str(path), options={**BASE, "timestamp_marks": "end"})


def test_half_hourly_data_still_averages(tmp_path):
    index = hours(periods=2 * 8760, freq="30min")
    path = write_csv(tmp_path / "half.csv", stamps(index), np.repeat(ramp(), 2))
    np.testing.assert_allclose(load_climate(str(path), options=BASE).temp_air_c, ramp(), atol=1e-9)


# ---------------------------------------------------------------- byte-order mark


def _declared_csv(tmp_path, name="declared.csv"):
    path = tmp_path / name
    frame = pd.DataFrame({"time": stamps(hours()), "temp_air_c": ramp()})
    lines = "".join(f"# {k} = {v}\n" for k, v in BASE.items())
    path.write_text(lines + frame.to_csv(index=False))
    return path


def test_byte_order_mark_before_declarations(tmp_path):
    # the BOM hid the first declaration ("option ... is missing")
    path = _declared_csv(tmp_path)
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    year = load_climate(str(path))
    np.testing.assert_allclose(year.temp_air_c, ramp(), atol=1e-9)


def test_byte_order_mark_before_a_plain_header(tmp_path):
    # variant: no declarations; the BOM sat in front of the "time" column name
    path = write_csv(tmp_path / "plain.csv", stamps(hours()), ramp())
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    np.testing.assert_allclose(load_climate(str(path), options=BASE).temp_air_c, ramp(), atol=1e-9)


def test_blank_lines_in_a_climate_csv_keep_row_numbers(tmp_path):
    path = _declared_csv(tmp_path)
    lines = path.read_text().splitlines(keepends=True)
    lines.insert(8, "\n")                      # after the 5 declarations, header and 2 rows
    lines[20] = lines[20].split(",")[0] + ",n/a\n"
    path.write_text("".join(lines))
    with pytest.raises(InputError, match="row 21, column 'temp_air_c': 'n/a' is not a number"):
        load_climate(str(path))
