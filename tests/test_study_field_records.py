"""Field records (capacity-test table, battery log): every bad input is one line naming the
file, the row as an editor shows it and the column; records of packs replaced since are
skipped with a warning; the input files are never modified.

All sites, tests and samples here are invented.
"""

import hashlib

import pytest

from planner.errors import InputError
from planner.study.loading import load_study

SITES = ("id,region,climate,load_w,charging,pv_wp,autonomy_days,existing_chemistry,"
         "existing_capacity_wh,existing_installed_year\n"
         "A-1,hills,alpine,2.0,pv,60,5,vrla,1200,2021\n"
         "B-2,hills,alpine,2.0,pv,60,5,,,\n")
STUDY = ('[study]\nsites_file = "sites.csv"\nstart_year = 2027\n'
         '[field_data]\ncapacity_tests_file = "tests.csv"\n')
HEADER = "site_id,test_date,kind,duration_h,capacity_ah,start_temp_c\n"
GOOD = "A-1,2024-05-02,performance,9.5,95,20\n"


def write(tmp_path, tests=HEADER + GOOD, study=STUDY, log=None):
    (tmp_path / "sites.csv").write_text(SITES, encoding="utf-8")
    (tmp_path / "tests.csv").write_text(tests, encoding="utf-8")
    if log is not None:
        (tmp_path / "log.csv").write_text(log, encoding="utf-8")
    path = tmp_path / "study.toml"
    path.write_text(study, encoding="utf-8")
    return path


def error_of(path) -> str:
    with pytest.raises(InputError) as info:
        load_study(path)
    message = str(info.value)
    assert "\n" not in message, "an input error is one line"
    return message


def test_good_table_reads_its_tests(tmp_path):
    study = load_study(write(tmp_path))
    (test,) = study.field_data.tests
    assert test.site_id == "A-1" and test.capacity_ah == 95.0 and test.row == 2
    assert study.field_data.tests_path.name == "tests.csv"


@pytest.mark.parametrize("row, column, words", [
    ("Z-9,2024-05-02,performance,9.5,95,20", "site_id", "unknown site 'Z-9'"),
    ("A-1,2020-05-02,performance,9.5,95,20", "test_date", "before the pack in service was installed"),
    ("A-1,2027-01-01,performance,9.5,95,20", "test_date", "not before the study's start"),
    ("A-1,2031-03-04,performance,9.5,95,20", "test_date", "not before the study's start"),
    ("A-1,2024-05-02,performance,9.5,151,20", "capacity_ah", "above 150%"),
    ("A-1,2024-05-02,performance,0,95,20", "duration_h", "expected a number > 0"),
    ("A-1,2024-05-02,performance,-2,95,20", "duration_h", "expected a number > 0"),
    ("A-1,2024-05-02,performance,9.5,95,", "start_temp_c", "not corrected to 25"),
    ("A-1,02/05/2024,performance,9.5,95,20", "test_date", "YYYY-MM-DD"),
    ("A-1,2024-05-02,capacity,9.5,95,20", "kind", "one of acceptance"),
    ("A-1,2024-05-02,performance,9.5,1e2,20", "capacity_ah", "a number"),
])
def test_bad_test_rows_name_file_row_and_column(tmp_path, row, column, words):
    # the bad row is the 4th line in the editor: a good row and a blank line come first
    message = error_of(write(tmp_path, HEADER + GOOD + "\n" + row + "\n"))
    assert "tests.csv" in message
    assert "row 4" in message, message
    assert f"column {column}" in message and words in message, message


def test_missing_capacity_is_an_error(tmp_path):
    message = error_of(write(tmp_path, "site_id,test_date,duration_h,start_temp_c\nA-1,2024-05-02,9,20\n"))
    assert "row 2, column capacity_ah" in message


def test_unknown_column_suggests_closest(tmp_path):
    message = error_of(write(tmp_path, "site_id,test_date,duration_h,capacity_ahh\n"))
    assert "unknown column 'capacity_ahh'" in message and "capacity_ah" in message


def test_pack_replaced_since_is_skipped_with_a_warning(tmp_path):
    tests = ("site_id,test_date,kind,duration_h,capacity_ah,start_temp_c,tested_pack_installed_year\n"
             "A-1,2019-05-02,performance,9.5,95,20,2015\n" + "A-1,2024-05-02,performance,9.5,95,20,\n")
    study = load_study(write(tmp_path, tests))
    assert len(study.field_data.tests) == 1
    (warning,) = study.field_data.skipped
    assert "row 2" in warning and "replaced since" in warning


def test_test_of_a_site_without_a_pack_in_service_is_skipped(tmp_path):
    study = load_study(write(tmp_path, HEADER + "B-2,2024-05-02,performance,9.5,95,20\n"))
    assert not study.field_data.tests
    assert "no pack in service" in study.field_data.skipped[0]


LOG_STUDY = STUDY.replace('capacity_tests_file = "tests.csv"', 'battery_log_file = "log.csv"')
LOG_HEADER = "timestamp,site_id,pack_voltage_v,current_a,battery_temp_c\n"


def test_log_reads_samples_in_hours_before_the_study(tmp_path):
    log = LOG_HEADER + "2026-12-31 22:00,A-1,12.7,-0.2,5\n2026-12-31T23:00:00,A-1,12.7,-0.2,5\n"
    study = load_study(write(tmp_path, log=log, study=LOG_STUDY))
    sample = study.field_data.logs["A-1"]
    assert sample.time_h.tolist() == [-2.0, -1.0]
    assert sample.current_a.tolist() == [-0.2, -0.2]


@pytest.mark.parametrize("rows, row, column, words", [
    ("2026-01-01 02:00,A-1,12.7,-0.2,5\n2026-01-01 01:00,A-1,12.7,-0.2,5\n", 3, "timestamp", "earlier than row 2"),
    ("2026-01-01 02:00,A-1,12.7,-0.2,5\n2026-01-01 02:00,A-1,12.7,-0.2,5\n", 3, "timestamp", "repeats the time"),
    ("2026-01-01 02:00,A-1,12.7,-0.2,5\n2027-01-01 02:00,A-1,12.7,-0.2,5\n", 3, "timestamp", "not before"),
    ("2026-01-01 02:00,Q-7,12.7,-0.2,5\n", 2, "site_id", "unknown site"),
    ("2026-01-01 02:00,A-1,12.7,inf,5\n", 2, "current_a", "a number"),
    ("2026-01-01 02:00,A-1,12.7,-0.2,\n", 2, "battery_temp_c", "empty"),
    ("2026-13-01 02:00,A-1,12.7,-0.2,5\n", 2, "timestamp", "YYYY-MM-DD HH:MM"),
])
def test_bad_log_rows_name_file_row_and_column(tmp_path, rows, row, column, words):
    message = error_of(write(tmp_path, log=LOG_HEADER + rows, study=LOG_STUDY))
    assert "log.csv" in message and f"row {row}, column " in message and column in message, message
    assert words in message, message


def test_log_samples_older_than_the_pack_are_skipped(tmp_path):
    log = LOG_HEADER + "2019-06-01 00:00,A-1,12.7,-0.2,5\n2026-06-01 00:00,A-1,12.7,-0.2,5\n"
    study = load_study(write(tmp_path, log=log, study=LOG_STUDY))
    assert study.field_data.logs["A-1"].time_h.size == 1
    assert "older than its pack in service" in study.field_data.skipped[0]


def test_inputs_are_never_modified(tmp_path):
    path = write(tmp_path, log=LOG_HEADER + "2026-06-01 00:00,A-1,12.7,-0.2,5\n",
                 study=STUDY + 'battery_log_file = "log.csv"\n')
    before = {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in tmp_path.iterdir()}
    load_study(path)
    after = {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in tmp_path.iterdir()}
    assert before == after


def test_cli_exits_2_on_a_bad_test_row(tmp_path):
    from click.testing import CliRunner

    from planner.cli import cli

    path = write(tmp_path, HEADER + "A-1,2024-05-02,performance,0,95,20\n")
    result = CliRunner().invoke(cli, ["evidence", str(path)])
    assert result.exit_code == 2
    assert "row 2, column duration_h" in result.output
