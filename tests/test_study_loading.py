"""Study-file and sites-table validation (docs/study-file.md).

Each class of bad input must give the project's InputError with one line naming the file,
the key path or row/column, what was found and what was expected.
"""

import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from planner.errors import InputError
from planner.study.loading import load_study, parse_months
from planner.study.schema import reference_markdown

REPO = Path(__file__).resolve().parents[1]

SITES_HEADER = "id,name,region,climate,load_w,charging,pv_wp,autonomy_days,access_months\n"
GOOD_ROW = "A-1,Gauge,hills,alpine,2.0,pv,60,5,6-9\n"


def write_study(tmp_path, toml_body, sites=SITES_HEADER + GOOD_ROW, sites_name="sites.csv"):
    (tmp_path / sites_name).write_text(sites, encoding="utf-8")
    study = tmp_path / "study.toml"
    study.write_text(toml_body, encoding="utf-8")
    return study


BASE = '[study]\nsites_file = "sites.csv"\n'


def error_of(path) -> str:
    """The study's mistakes, one per line (several mistakes are reported together)."""
    with pytest.raises(InputError) as info:
        load_study(path)
    lines = info.value.lines()
    assert str(info.value) == "\n".join(lines)
    assert len(lines) <= 21 and all(line.strip() for line in lines)
    return str(info.value)


def test_valid_minimal_study_fills_defaults(tmp_path):
    study = load_study(write_study(tmp_path, BASE))
    assert study.settings["study"]["horizon_years"] == 20
    assert study.sites[0].access_months == (6, 7, 8, 9)
    assert study.sites[0].name == "Gauge"
    assert study.name == "study"


def test_unknown_key_suggests_closest(tmp_path):
    message = error_of(write_study(tmp_path, BASE + "horizon_year = 10\n"))
    assert "study.toml" in message
    assert "[study].horizon_year" in message
    assert "did you mean 'horizon_years'" in message


def test_unknown_section_suggests_closest(tmp_path):
    message = error_of(write_study(tmp_path, BASE + "[cost]\ntrip_cost = 1.0\n"))
    assert "unknown section [cost]" in message and "did you mean 'costs'" in message


def test_wrong_type(tmp_path):
    message = error_of(write_study(tmp_path, BASE + 'horizon_years = "twenty"\n'))
    assert "[study].horizon_years = 'twenty'" in message and "whole number" in message


@pytest.mark.parametrize(
    "line, key",
    [
        ("[costs]\ntrip_cost = -5.0", "[costs].trip_cost"),
        ("discount_rate_frac = 0.6", "[study].discount_rate_frac"),
        ("horizon_years = 0", "[study].horizon_years"),
        ("horizon_years = 61", "[study].horizon_years"),
        ("[regions.hills]\naccess_months = [0, 13]", "[regions.hills].access_months"),
    ],
)
def test_out_of_range_values(tmp_path, line, key):
    message = error_of(write_study(tmp_path, BASE + line + "\n"))
    assert key in message and "expected" in message


def test_unknown_chemistry_lists_valid_ids(tmp_path):
    message = error_of(write_study(tmp_path, BASE + '[candidates]\nchemistries = ["lfp", "lifepo"]\n'))
    assert "lifepo" in message and "vrla, lfp, nmc, lto, lisocl2" in message


def test_missing_study_file(tmp_path):
    message = error_of(tmp_path / "nope.toml")
    assert "nope.toml" in message and "not found" in message


def test_invalid_toml_syntax(tmp_path):
    message = error_of(write_study(tmp_path, "[study\n"))
    assert "not valid TOML" in message


def test_missing_sites_file(tmp_path):
    study = tmp_path / "study.toml"
    study.write_text('[study]\nsites_file = "absent.csv"\n')
    message = error_of(study)
    assert "absent.csv" in message and "not found" in message


def test_empty_sites_table(tmp_path):
    assert "no rows" in error_of(write_study(tmp_path, BASE, sites=SITES_HEADER))
    assert "empty" in error_of(write_study(tmp_path, BASE, sites=""))


def test_duplicate_site_ids_name_both_rows(tmp_path):
    message = error_of(write_study(tmp_path, BASE, sites=SITES_HEADER + GOOD_ROW + GOOD_ROW))
    assert "row 3" in message and "duplicate site id 'A-1'" in message and "row 2" in message


@pytest.mark.parametrize(
    "row, column",
    [
        ("A-1,Gauge,hills,alpine,2.0,pv,60,0,6-9\n", "autonomy_days"),
        ("A-1,Gauge,hills,alpine,2.0,pv,60,-1,6-9\n", "autonomy_days"),
        ("A-1,Gauge,hills,alpine,2.0,pv,60,5,13\n", "access_months"),
        ("A-1,Gauge,hills,alpine,-2,pv,60,5,6-9\n", "load_w"),
        ("A-1,Gauge,hills,alpine,abc,pv,60,5,6-9\n", "load_w"),
        ("A-1,Gauge,hills,alpine,2.0,wind,60,5,6-9\n", "charging"),
        ("A-1,Gauge,hills,alpine,2.0,pv,,5,6-9\n", "pv_wp"),
        (",Gauge,hills,alpine,2.0,pv,60,5,6-9\n", "id"),
    ],
)
def test_bad_site_cells_name_row_and_column(tmp_path, row, column):
    message = error_of(write_study(tmp_path, BASE, sites=SITES_HEADER + row))
    assert "sites.csv" in message and "row 2" in message and f"column {column}" in message
    assert "expected" in message


def test_unknown_climate_names_row_and_suggests(tmp_path):
    row = "A-1,Gauge,hills,alpin,2.0,pv,60,5,6-9\n"
    message = error_of(write_study(tmp_path, BASE, sites=SITES_HEADER + row))
    assert "row 2, column climate" in message and "did you mean 'alpine'" in message


def test_climate_entry_needs_an_existing_file(tmp_path):
    message = error_of(write_study(tmp_path, BASE + '[climates.logger]\nfile = "nope.csv"\n'))
    assert "[climates.logger].file" in message and "not found" in message


def test_unknown_column_suggests_closest(tmp_path):
    sites = SITES_HEADER.replace("autonomy_days", "autonomy_day") + GOOD_ROW
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "unknown column 'autonomy_day'" in message and "autonomy_days" in message


def test_existing_pack_needs_capacity_and_year(tmp_path):
    sites = SITES_HEADER.strip() + ",existing_chemistry\n" + GOOD_ROW.strip() + ",vrla\n"
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "existing_capacity_wh" in message


def test_xlsx_sites_table(tmp_path):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    for line in (SITES_HEADER + GOOD_ROW).strip().splitlines():
        sheet.append(line.split(","))
    book.save(tmp_path / "sites.xlsx")
    study = tmp_path / "study.toml"
    study.write_text('[study]\nsites_file = "sites.xlsx"\n')
    assert load_study(study).sites[0].autonomy_days == 5.0


def test_nominal_rate_converts_to_real(tmp_path):
    # NIST Handbook 135 real rate d = (1 + D)/(1 + I) - 1; D = 5 %, I = 2 % -> 0.029412 (computed)
    study = load_study(write_study(tmp_path, BASE + "nominal_rate_frac = 0.05\ninflation_frac = 0.02\n"))
    assert study.discount_rate_frac == pytest.approx(0.029412, abs=1e-6)


@pytest.mark.parametrize(
    "text, months",
    [("6-9", (6, 7, 8, 9)), ("11-2", (1, 2, 11, 12)), ("5;7", (5, 7)), ("all", tuple(range(1, 13)))],
)
def test_month_notation(text, months):
    assert parse_months(text) == months


def test_bundled_studies_validate():
    for name in ("corvale.toml", "quick.toml"):
        study = load_study(REPO / "scenarios" / name)
        assert len(study.sites) >= 3


def test_demo_network_meets_its_brief():
    # The demo network stays small enough to read (12-20 sites) and shows at least three
    # contrasting climates.
    study = load_study(REPO / "scenarios" / "corvale.toml")
    assert 12 <= len(study.sites) <= 20
    assert len({site.climate for site in study.sites}) >= 3


def test_reference_doc_is_generated_from_schema():
    assert (REPO / "docs" / "study-file.md").read_text(encoding="utf-8") == reference_markdown()


# ---------------------------------------------------------------- junk input

toml_text = st.text(alphabet=st.characters(codec="utf-8"), max_size=200)
toml_like = st.lists(
    st.sampled_from(['[study]', 'sites_file = "sites.csv"', 'horizon_years = 5', 'horizon_years = "x"',
                     '[costs]', 'trip_cost = -1', '[regions.a]', 'access_months = [1, 99]',
                     '[candidates]', 'chemistries = []', 'oversize_factors = [0.5]', '= =', '[[study]]',
                     'name = 3', 'discount_rate_frac = nan', 'x = {a = 1}', '[prices.lfp]',
                     'price_per_kwh = inf']),
    max_size=8,
).map("\n".join)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(body=st.one_of(toml_text, toml_like))
def test_junk_toml_raises_only_input_error(tmp_path, body):
    study = write_study(tmp_path, body)
    try:
        load_study(study)
    except InputError:
        pass


csv_cell = st.one_of(st.text(max_size=6), st.sampled_from(["", "1", "-3", "nan", "1e999", "6-9", "pv"]))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.lists(csv_cell, min_size=0, max_size=10), max_size=4),
       raw=st.text(max_size=120))
def test_junk_sites_table_raises_only_input_error(tmp_path, rows, raw):
    import csv
    import io

    buffer = io.StringIO()
    csv.writer(buffer).writerows(rows)
    for sites in (SITES_HEADER + buffer.getvalue(), raw):
        study = write_study(tmp_path, BASE, sites=sites)
        try:
            load_study(study)
        except InputError:
            pass


def test_load_schedule_needs_24_values(tmp_path):
    sites = ("id,region,climate,load_w,charging,pv_wp,autonomy_days,load_schedule_w\n"
             "A,r,alpine,1,pv,50,5," + ";".join(["1"] * 23) + "\n")
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "row 2, column load_schedule_w: 23 values; expected 24" in message


def test_missing_load_file_names_row(tmp_path):
    sites = "id,region,climate,load_w,charging,pv_wp,autonomy_days,load_file\nA,r,alpine,1,pv,50,5,x.csv\n"
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "row 2, column load_file" in message and "not found" in message


# ---------------------------------------------------------------- hostile and unusual input


def test_unused_region_table_is_an_error_with_a_hint(tmp_path):
    # [regions.hill] while the sites say "hills" must not fall back silently
    message = error_of(write_study(tmp_path, BASE + "[regions.hill]\ntrip_cost = 5000.0\n"))
    assert "[regions.hill] is used by no site; did you mean 'hills'?" in message


def test_unused_region_table_without_a_close_name_lists_the_regions(tmp_path):
    message = error_of(write_study(tmp_path, BASE + "[regions.coast]\ntrip_cost = 5000.0\n"))
    assert "[regions.coast] is used by no site; the sites' regions are hills" in message


def test_region_without_a_table_keeps_the_cost_defaults(tmp_path):
    study = load_study(write_study(tmp_path, BASE + "[costs]\ntrip_cost = 1234.0\n"))
    assert study.region("hills")["trip_cost"] == 1234.0


@pytest.mark.parametrize("column, cell", [
    ("load_w", "1_0"), ("load_w", "1e1"), ("load_w", "inf"), ("load_w", "nan"),
    ("load_w", "0x10"), ("load_w", "١٢"), ("access_months", "1e1"), ("access_months", "6.0"),
    ("pv_wp", "6 0"),
])
def test_sites_numbers_follow_one_plain_decimal_syntax(tmp_path, column, cell):
    # "1_0" is not 10 and "1e1" is not October
    header = "id,region,climate,load_w,charging,pv_wp,autonomy_days,access_months\n"
    values = {"load_w": "2", "pv_wp": "60", "access_months": "6-9", column: cell}
    row = f"A,hills,alpine,{values['load_w']},pv,{values['pv_wp']},5,{values['access_months']}\n"
    message = error_of(write_study(tmp_path, BASE, sites=header + row))
    assert f"row 2, column {column}: found '{cell}'" in message


@pytest.mark.parametrize("cell, value", [("2", 2.0), ("-0", 0.0), ("+2.5", 2.5), (".5", 0.5), ("2.", 2.0)])
def test_plain_decimals_are_accepted(tmp_path, cell, value):
    header = "id,region,climate,load_w,charging,pv_wp,autonomy_days\n"
    study = load_study(write_study(tmp_path, BASE, sites=header + f"A,hills,alpine,{cell},pv,60,5\n"))
    assert study.sites[0].load_w == value


def test_xlsx_numbers_are_read_as_plain_decimals(tmp_path):
    import pandas as pd

    frame = pd.DataFrame({"id": ["A"], "region": ["hills"], "climate": ["alpine"], "load_w": [0.00001],
                          "charging": ["pv"], "pv_wp": [60], "autonomy_days": [5]})
    frame.to_excel(tmp_path / "sites.xlsx", index=False)
    study = load_study(write_study(tmp_path, BASE.replace("sites.csv", "sites.xlsx"),
                                   sites_name="ignored.csv"))
    assert study.sites[0].load_w == pytest.approx(1e-5)


def test_deeply_nested_toml_is_bad_input(tmp_path):
    # 5,000 nested arrays: one line of bad input, never a RecursionError traceback
    message = error_of(write_study(tmp_path, BASE + "x = " + "[" * 5000 + "]" * 5000 + "\n"))
    assert "nested too deeply" in message


def test_byte_order_mark_is_accepted(tmp_path):
    # Windows editors save UTF-8 with a BOM (Unicode Standard §23.8, U+FEFF)
    study = tmp_path / "study.toml"
    write_study(tmp_path, BASE)
    study.write_bytes(b"\xef\xbb\xbf" + BASE.encode("utf-8"))
    assert load_study(study).sites[0].id == "A-1"


@pytest.mark.parametrize("key", ["downtime_cost_per_day", "trip_cost", "labour_rate_per_h",
                                 "site_visit_cost", "disposal_per_kg", "unplanned_trip_cost"])
def test_money_fields_are_bounded(tmp_path, key):
    # 1e308 in a money field would make HiGHS spin for minutes or give a false "no plan"
    message = error_of(write_study(tmp_path, BASE + f"[costs]\n{key} = 1e308\n"))
    assert f"[costs].{key} = 1e+308: expected a number >= 0 and <= 1e+12" in message


def test_semicolon_separated_table_gets_a_hint(tmp_path):
    sites = SITES_HEADER.replace(",", ";") + GOOD_ROW.replace(",", ";")
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "separated by ';'" in message


def test_table_on_another_sheet_gets_a_hint(tmp_path):
    import pandas as pd

    with pd.ExcelWriter(tmp_path / "sites.xlsx") as writer:
        pd.DataFrame({"Notes": ["the sites are on the next sheet"]}).to_excel(writer, sheet_name="Read me", index=False)
        pd.DataFrame({"id": ["A"]}).to_excel(writer, sheet_name="Sites", index=False)
    message = error_of(write_study(tmp_path, BASE.replace("sites.csv", "sites.xlsx"), sites_name="x.csv"))
    assert "read from the first sheet ('Read me')" in message


def test_fifo_climate_or_load_file_is_refused_by_type(tmp_path):
    # A FIFO named as a load file is refused before anything reads it
    os.mkfifo(tmp_path / "load.csv")
    sites = "id,region,climate,load_w,charging,pv_wp,autonomy_days,load_file\nA,hills,alpine,1,pv,50,5,load.csv\n"
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "load.csv: is a named pipe (FIFO), not a regular file" in message


# ---------------------------------------------------------------- hostile inputs, round 3


def test_every_mistake_is_reported_together(tmp_path):
    # a bad key, a bad section, a bad cell and an unused region: one run, one line each
    body = BASE + "horizon_years = 0\n[cost]\nx = 1\n[regions.coast]\ntrip_cost = 1.0\n"
    sites = SITES_HEADER + GOOD_ROW + "B,Gauge,hills,alpine,-2,pv,60,5,6-9\n"
    lines = error_of(write_study(tmp_path, body, sites=sites)).splitlines()
    assert len(lines) == 4
    for words in ("unknown section [cost]", "[study].horizon_years = 0", "row 3, column load_w",
                  "[regions.coast] is used by no site"):
        assert sum(words in line for line in lines) == 1, (words, lines)


def test_many_mistakes_show_twenty_lines_and_a_count(tmp_path):
    # variant: 25 bad rows give 20 lines and "... and 5 more"
    rows = "".join(f"S{i},Gauge,hills,alpine,x,pv,60,5,6-9\n" for i in range(25))
    lines = error_of(write_study(tmp_path, BASE, sites=SITES_HEADER + rows)).splitlines()
    assert len(lines) == 21 and lines[-1].startswith("... and 5 more mistakes")
    assert "row 21, column load_w" in lines[19]


@pytest.mark.parametrize("nominal, inflation, real", [
    (0.0, 0.5, "-33.3%"),      # -3.57 billion EUR with exit 0
    (0.5, -0.1, "+66.7%"),     # variant: (1.5 / 0.9) - 1 (NIST HB 135 ch. 4), above 50 %
])
def test_real_discount_rate_is_bounded(tmp_path, nominal, inflation, real):
    message = error_of(write_study(tmp_path, BASE + f"nominal_rate_frac = {nominal}\n"
                                                    f"inflation_frac = {inflation}\n"))
    assert f"gives a real discount rate of {real} a year; expected a real rate from -1.5% to +50%" \
        in message


def test_small_negative_real_rate_is_allowed(tmp_path):
    # inflation above interest: (1.02 / 1.03) - 1 = -0.97 % (computed), inside the bound
    study = load_study(write_study(tmp_path, BASE + "nominal_rate_frac = 0.02\ninflation_frac = 0.03\n"))
    assert study.discount_rate_frac == pytest.approx(-0.0097087, abs=1e-6)


def test_real_rate_bound_keeps_residual_credit_below_price():
    # The bound's reason (planner/economics.py): a pack bought s years before the horizon,
    # life L = 60 (the longest [service_life]), is credited (1 - s/L) of its price,
    # discounted s more years. At -1.5 % that credit never exceeds the price; at -2 % it
    # does (exp(-1/60) - 1 = -1.65 % is the edge, computed).
    import numpy as np

    from planner.economics import MIN_REAL_RATE_FRAC, spv

    s = np.linspace(0.0, 60.0, 601)
    credit = (1 - s / 60.0) * spv(MIN_REAL_RATE_FRAC, s)
    assert credit.max() <= 1.0 + 1e-12
    assert ((1 - s / 60.0) * spv(-0.02, s)).max() > 1.0


@pytest.mark.parametrize("columns, cells, filled", [
    ("existing_capacity_wh,existing_installed_year", "800,2020", "existing_capacity_wh, "
                                                                 "existing_installed_year are"),
    ("existing_soh_frac", "0.7", "existing_soh_frac is"),       # variant: the measurement alone
])
def test_existing_pack_fields_need_its_chemistry(tmp_path, columns, cells, filled):
    sites = SITES_HEADER.strip() + f",existing_chemistry,{columns}\n" + GOOD_ROW.strip() + f",,{cells}\n"
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert f"row 2, column existing_chemistry: empty while {filled} filled in" in message


@pytest.mark.parametrize("volts, chemistries, expected", [
    ("1", '["lfp", "nmc", "vrla"]', "1 V is below one cell of every candidate chemistry"),
    ("3", '["lfp", "nmc"]', "3 V is below one cell of every candidate chemistry (lfp 3.2 V, nmc 3.6 V)"),
])
def test_system_voltage_below_every_cell_is_refused(tmp_path, volts, chemistries, expected):
    sites = SITES_HEADER.strip() + ",system_voltage_v\n" + GOOD_ROW.strip() + f",{volts}\n"
    message = error_of(write_study(tmp_path, BASE + f"[candidates]\nchemistries = {chemistries}\n",
                                   sites=sites))
    assert f"row 2, column system_voltage_v: {expected}" in message


def test_system_voltage_below_the_pack_in_service_is_refused(tmp_path):
    sites = (SITES_HEADER.strip() + ",system_voltage_v,existing_chemistry,existing_capacity_wh,"
             "existing_installed_year\n" + GOOD_ROW.strip() + ",3,nmc,500,2020\n")
    message = error_of(write_study(tmp_path, BASE, sites=sites))
    assert "3 V is below one nmc cell (3.6 V) of the pack in service" in message


def test_unused_climate_table_with_unknown_option_is_an_error(tmp_path):
    from click.testing import CliRunner

    from planner.cli import cli

    assert CliRunner().invoke(cli, ["climate", "alpine", "--csv", str(tmp_path / "a.csv")]).exit_code == 0
    # an unused table whose option is misspelt
    message = error_of(write_study(tmp_path, BASE + '[climates.spare]\nfile = "a.csv"\n'
                                                    'temperatur_unit = "C"\n'))
    assert "[climates.spare] is used by no site" in message
    assert "[climates.spare]: unknown climate option 'temperatur_unit'" in message
    # variant: a used table with an option its file (an EPW) does not take
    import numpy as np
    from test_climate_readers import write_epw

    write_epw(tmp_path / "w.epw", np.full(8760, 5.0))
    sites = SITES_HEADER + GOOD_ROW.replace("alpine", "station")
    message = error_of(write_study(tmp_path, BASE + '[climates.station]\nfile = "w.epw"\n'
                                                    "latitude_deg = 40.0\n", sites=sites))
    assert "[climates.station]: unknown climate option 'latitude_deg'" in message


def test_deprecated_climate_id_in_sites_warns_like_the_climate_command(tmp_path):
    import warnings

    from planner.climate import ClimateWarning

    sites = SITES_HEADER + GOOD_ROW.replace("alpine", "pvlib-miami") + \
        GOOD_ROW.replace("A-1", "A-2").replace("alpine", "pvlib-greensboro")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        study = load_study(write_study(tmp_path, BASE, sites=sites))
    words = [str(w.message) for w in caught if issubclass(w.category, ClimateWarning)]
    assert "climate 'pvlib-miami' is now called 'tmy2-miami-fl'; the old name is accepted" in words[0]
    assert any("'pvlib-greensboro' is now called 'tmy3-greensboro-nc'" in w for w in words)
    assert [s.climate for s in study.sites] == ["tmy2-miami-fl", "tmy3-greensboro-nc"]


def test_study_through_a_symlink_reads_and_writes_beside_its_real_file(tmp_path):
    from planner.cli.plan import output_paths

    real = tmp_path / "real"
    real.mkdir()
    write_study(real, BASE + '[output]\nworkbook = "w.xlsx"\njson = "-"\n')
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    (elsewhere / "link.toml").symlink_to(real / "study.toml")
    # a decoy beside the link: the study must not read it
    (elsewhere / "sites.csv").write_text("not,a,sites,table\n")
    study = load_study(elsewhere / "link.toml")
    assert study.sites_path == (real / "sites.csv").resolve()
    workbook, json_target = output_paths(study, None, None)
    assert Path(workbook).parent == real.resolve() and json_target == "-"
