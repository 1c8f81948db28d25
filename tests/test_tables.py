"""Reading a user's table (planner/inputs/tables.py): the rows the user sees, and the shapes a
table can go wrong in.

Classes (each with a known case and a second variant):
- row and line numbers as a spreadsheet or an editor shows them (blank lines counted);
- a row with more fields than the header;
- a repeated or an empty header cell;
- a byte-order mark at the start.
The same reader serves the sites table, climate CSVs and load files, so the classes are
also tried through those doors.
"""

import io

import numpy as np
import openpyxl
import pytest

from planner.energy.loads import read_hourly_load_csv
from planner.errors import InputError
from planner.inputs.tables import column_label, read_table
from planner.study.loading import load_study


def csv_table(text: str, **kwargs):
    return read_table(text.encode("utf-8"), source="t.csv", kind="csv", what="the table", **kwargs)


def xlsx_bytes(rows: dict[int, list]) -> bytes:
    """A workbook whose first sheet holds ``rows`` at the given (1-based) row numbers."""
    book = openpyxl.Workbook()
    sheet = book.active
    for number, values in rows.items():
        for col, value in enumerate(values, start=1):
            sheet.cell(row=number, column=col, value=value)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


# ---------------------------------------------------------------- rows the user sees


def test_blank_lines_count_in_csv_rows():
    table = csv_table("id,x\n\na,1\n\n\nb,2\n,\n")
    assert [row.number for row in table.rows] == [3, 6]      # ",": all blank, skipped
    assert [row.where() for row in table.rows] == ["row 3", "row 6"]


def test_a_value_spanning_lines_gives_row_and_line():
    # variant: a quoted newline keeps one spreadsheet row but moves the editor's lines
    table = csv_table('id,notes\na,"two\nlines"\nb,x\n')
    assert [row.where() for row in table.rows] == ["row 2", "row 3 (line 4)"]
    assert table.rows[1].where("line") == "line 4"


def test_blank_rows_count_in_xlsx_rows():
    data = xlsx_bytes({1: ["id", "x"], 2: ["a", 1.5], 6: ["b", 2]})
    table = read_table(data, source="t.xlsx", kind="xlsx", what="the table")
    assert [row.number for row in table.rows] == [2, 6]
    assert table.cell(table.rows[0], "x") == "1.5"


def test_xlsx_table_starting_below_row_1():
    # variant: a sheet whose header sits on row 3, column B
    data = xlsx_bytes({3: [None, "id", "x"], 4: [None, "a", 7]})
    table = read_table(data, source="t.xlsx", kind="xlsx", what="the table")
    assert table.header_row == 3 and table.rows[0].number == 4
    assert table.cell(table.rows[0], "id") == "a"


def test_sites_table_error_names_the_spreadsheet_row(tmp_path):
    # an error on spreadsheet row 6 was reported as row 4
    sites = ("id,region,climate,load_w,charging,pv_wp,autonomy_days\n"
             "A,hills,alpine,2,pv,60,5\n\n"
             "B,hills,alpine,2,pv,60,5\n\n"
             "C,hills,alpine,-2,pv,60,5\n")
    (tmp_path / "sites.csv").write_text(sites)
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    with pytest.raises(InputError, match="row 6, column load_w: found '-2'"):
        load_study(tmp_path / "s.toml")
    assert [s.row for s in load_study(_fixed(tmp_path)).sites] == [2, 4, 6]


def _fixed(tmp_path):
    text = (tmp_path / "sites.csv").read_text().replace(",-2,", ",2,")
    (tmp_path / "sites.csv").write_text(text)
    return tmp_path / "s.toml"


def test_load_file_error_names_the_editor_line(tmp_path):
    # a load file's line 13 was reported as line 12
    values = ["1.0"] * 8760
    values[10] = "-4"
    text = "load_w\n" + "\n".join(values[:5]) + "\n\n" + "\n".join(values[5:]) + "\n"
    (tmp_path / "load.csv").write_text(text)
    with pytest.raises(InputError, match="line 13, column 'load_w': found -4 W"):
        read_hourly_load_csv(tmp_path / "load.csv")
    # variant: a comment-free blank line before the header shifts every line by one
    (tmp_path / "load.csv").write_text("\n" + text.replace("-4", "x"))
    with pytest.raises(InputError, match="line 14, column 'load_w': 'x' is not a number"):
        read_hourly_load_csv(tmp_path / "load.csv")


# ---------------------------------------------------------------- more fields than the header


def test_row_with_more_fields_than_the_header_is_named():
    with pytest.raises(InputError, match=r"row 3: 4 fields, the header has 3"):
        csv_table("id,x,y\na,1,2\nb,1,2,3\n")
    # variant: trailing empty fields (a spreadsheet's export) are not extra values
    assert len(csv_table("id,x,y\na,1,2,,\n").rows) == 1


def test_sites_row_with_an_extra_field_does_not_shift_columns(tmp_path):
    # "column enclosure: found '2.0'"
    sites = ("id,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days\n"
             "A,hills,alpine,cabinet-sun,2,pv,60,5\n"
             "B,hills,alpine,vault,extra,2.0,pv,60,5\n"
             "C,hills,alpine,shelter,-1,pv,60,5\n")
    (tmp_path / "sites.csv").write_text(sites)
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    with pytest.raises(InputError) as info:
        load_study(tmp_path / "s.toml")
    lines = info.value.lines()
    assert any("row 3: 9 fields, the header has 8" in line for line in lines)
    assert not any("column enclosure" in line for line in lines)
    assert any("row 4, column load_w: found '-1'" in line for line in lines)  # still checked


# ---------------------------------------------------------------- the header


def test_repeated_header_is_named_as_such():
    with pytest.raises(InputError, match=r"column 'id' appears twice \(field 1 and field 3\)"):
        csv_table("id,x,id\na,1,b\n")
    # variant: in a sheet the positions are the sheet's columns
    data = xlsx_bytes({1: ["id", "x", "y", "x"], 2: ["a", 1, 2, 3]})
    with pytest.raises(InputError, match=r"'x' appears twice \(column 2 \(B\) and column 4 \(D\)\)"):
        read_table(data, source="t.xlsx", kind="xlsx", what="the table")


def test_empty_header_cell_above_values_is_named_by_position():
    with pytest.raises(InputError, match=r"field 2 has no name but holds values"):
        csv_table("id,,x\na,5,1\n")
    # variant: an empty header cell with nothing below it is harmless (a stray separator)
    assert csv_table("id,,x\na,,1\n").columns == ["id", "x"]


def test_column_labels():
    # spreadsheet column letters: A..Z, then AA (the bijective base-26 of every spreadsheet)
    assert [column_label(i, "xlsx") for i in (0, 25, 26, 701, 702)] == [
        "column 1 (A)", "column 26 (Z)", "column 27 (AA)", "column 702 (ZZ)", "column 703 (AAA)"]
    assert column_label(4, "csv") == "field 5"


# ---------------------------------------------------------------- byte-order mark


def test_byte_order_mark_is_not_part_of_the_first_header():
    # U+FEFF encoded in UTF-8 (Unicode Standard §23.8)
    table = read_table(b"\xef\xbb\xbfid,x\na,1\n", source="t.csv", kind="csv", what="t")
    assert table.columns == ["id", "x"]
    values = table.numbers("x", what="a number")
    np.testing.assert_array_equal(values, [1.0])


def test_declaration_lines_count_in_rows():
    table = csv_table("# a = 1\n# b = 2\ntime,x\n\nt0,3\n", skip_lines=2)
    assert table.header_row == 3 and table.rows[0].number == 5
    with pytest.raises(InputError, match="row 5, column 'x': 'z' is not a number"):
        csv_table("# a = 1\n# b = 2\ntime,x\n\nt0,z\n", skip_lines=2).numbers("x", what="a number")
