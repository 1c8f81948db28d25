"""Tests for planner.report.workbook: the plan workbook read back against the plan.

Expected values come from outside the writer: the plan dict itself and the JSON written
by write_json (round trip), OWASP's spreadsheet-injection guidance, the OOXML chart parts
(ECMA-376), and a real spreadsheet program (LibreOffice) when installed.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import zipfile
from xml.etree import ElementTree as ET

import openpyxl
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from openpyxl.utils import range_boundaries
from plan_fixture import make_plan

from planner.plan.attention import sites_not_served
from planner.report import SHEET_NAMES, neutralise_text, write_json, write_workbook

N_SITES = 22  # more than the 16 fade charts, so the "most expensive 16" choice is exercised
# Numbers in an xlsx keep 15-16 significant digits (Excel specifications and limits: number
# precision 15 digits; openpyxl writes "%.16g"), so "equal" means within 1e-15 relative.
XL = 1e-15
HOSTILE = ('=HYPERLINK("x")', "+1+1")
C = "{http://schemas.openxmlformats.org/drawingml/2006/chart}"


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    folder = tmp_path_factory.mktemp("wb")
    plan = make_plan(N_SITES, hostile_names=True, seed=7)
    xlsx = write_workbook(plan, folder / "plan.xlsx")
    js = json.loads(write_json(plan, folder / "plan.json").read_text(encoding="utf-8"))
    return plan, xlsx, js


@pytest.fixture(scope="module")
def book(written):
    """The written workbook loaded once (loading is the slow part of these tests)."""
    return openpyxl.load_workbook(written[1])


def _table(ws, first_header: str):
    """Locate a table by the text of its first header cell; return (headers, rows as dicts)."""
    for row in ws.iter_rows(min_col=1, max_col=1):
        if row[0].value == first_header:
            top = row[0].row
            break
    else:
        raise AssertionError(f"{first_header!r} not found on {ws.title}")
    headers = [c.value for c in ws[top] if c.value is not None]
    rows = []
    for values in ws.iter_rows(min_row=top + 1, max_col=len(headers), values_only=True):
        if values[0] is None:
            break
        rows.append(dict(zip(headers, values)))
    return headers, rows


def _years(text):
    return [int(v) for v in str(text).split(",")] if text not in (None, "") else []


def test_sheet_names(book):
    assert book.sheetnames == list(SHEET_NAMES)


def test_summary_numbers_equal_plan_and_json(written, book):
    # Round trip: every number on Summary equals the plan's value (written unrounded) and
    # the JSON's (6 significant digits, so relative 5e-6).
    plan, xlsx, js = written
    ws = book["Summary"]
    _, facts = _table(ws, "Item")
    facts = {f["Item"]: f["Value"] for f in facts}
    assert facts["Total present cost [EUR]"] == pytest.approx(plan["total_present_cost"], rel=XL)
    assert facts["Total present cost [EUR]"] == pytest.approx(js["total_present_cost"], rel=5e-6)
    assert facts["Real discount rate [%]"] == plan["study"]["discount_rate_frac"]
    assert facts["Plan status"] == f"all {N_SITES} sites served; cost within 0.12% of the lowest possible"
    assert facts["Sites planned"] == N_SITES
    # the first packs are not replacements: the two counts add up to every pack put in
    assert facts["First packs put in"] == N_SITES
    assert facts["First packs put in"] + facts["Replacements after the first pack"] == sum(
        len(s["replacement_years"]) for s in plan["sites"])
    # solver figures live on Assumptions and sources, not on the Summary
    assert not any("gap" in str(k).lower() or "bound" in str(k).lower() or "solver" in str(k).lower()
                   for k in facts)

    # The ten most expensive sites, largest first, equal to the plan's values.
    _, rows = _table(ws, "Site id")
    ranked = sorted(plan["sites"], key=lambda s: -s["present_cost"])[:10]
    assert [r["Site id"] for r in rows] == [s["id"] for s in ranked]
    for row, site in zip(rows, ranked):
        assert row["Site name"] == site["name"]
        assert row["Present cost [EUR]"] == pytest.approx(site["present_cost"], rel=XL)
        assert _years(row["Replacement years"]) == site["replacement_years"]

    _, comp = _table(ws, "Case")
    groups = ("Equipment [EUR]", "Trips and labour [EUR]", "Days off air [EUR]", "Expected failure cost [EUR]")
    # the first row is this plan, with the plan's own cost groups adding up to its total
    assert comp[0]["Case"] == "This plan"
    assert comp[0]["Fleet present cost [EUR]"] == pytest.approx(plan["total_present_cost"], rel=XL)
    assert sum(comp[0][g] for g in groups) == pytest.approx(plan["total_present_cost"], rel=1e-12)
    assert comp[0]["Days off air [EUR]"] == pytest.approx(plan["cost_groups"]["downtime"], rel=XL)
    names = {"vrla": "Demo lead-acid", "lfp": "Demo iron phosphate", "nmc": "Demo nickel oxide",
             "lto": "Demo titanate"}
    for row, ref in zip(comp[1:], plan["chemistry_comparison"]):
        name = names.get(ref["chemistry"])
        if name:  # the chemistry's full name, worded as a case (one name everywhere)
            assert row["Case"] == f"If {name} wherever it can serve"
        assert row["Fleet present cost [EUR]"] == pytest.approx(ref["total_with_others_present_cost"], rel=XL)
        assert sum(row[g] for g in groups) == pytest.approx(row["Fleet present cost [EUR]"])
        assert row["Days off air share [%]"] == pytest.approx(ref["downtime"] / ref["total_with_others_present_cost"])


def test_summary_speaks_no_solver_words_for_partial_coverage(written, book):
    # A chemistry that serves part of the fleet is described by its coverage, never by a
    # solver status (the solver's word stays in the JSON under "status").
    plan, _, js = written
    text = " ".join(str(c.value) for row in book["Summary"].iter_rows() for c in row if c.value is not None)
    for word in ("infeasible", "optimal", "feasible"):
        assert not re.search(rf"\b{word}\b", text.lower()), word
    _, comp = _table(book["Summary"], "Case")
    coverage = {r["Case"]: r["Coverage"] for r in comp}
    assert coverage["If Demo nickel oxide wherever it can serve"] == (
        f"serves {N_SITES - 1} of {N_SITES} sites; S0000 keeps Demo iron phosphate")
    assert coverage["If Primary lithium thionyl chloride (Li-SOCl2, bobbin) wherever it can serve"] == (
        f"serves none of the {N_SITES} sites")
    assert coverage["If Demo lead-acid wherever it can serve"] == f"serves all {N_SITES} sites"
    assert [r["status"] for r in js["chemistry_comparison"]][2] == "infeasible"


def _table_at(ws, header_text):
    """Find a header cell anywhere (not only column A) and read the table to its right."""
    for row in ws.iter_rows():
        for cell in row:
            if cell.value == header_text:
                top, left = cell.row, cell.column
                headers = []
                col = left
                while ws.cell(row=top, column=col).value is not None:
                    headers.append(ws.cell(row=top, column=col).value)
                    col += 1
                rows = []
                r = top + 1
                while ws.cell(row=r, column=left).value is not None:
                    rows.append({h: ws.cell(row=r, column=left + i).value for i, h in enumerate(headers)})
                    r += 1
                return headers, rows
    raise AssertionError(header_text)


# Sites sheet header -> plan key path (the test's own map of docs/plan-json.md).
SITES_MAP = {
    "Daily load [Wh/day]": ("daily_load_wh",), "Peak load [W]": ("load_peak_w",),
    "Air mean [°C]": ("temperature", "air_mean_c"), "Air P99 [°C]": ("temperature", "air_p99_c"),
    "Battery mean [°C]": ("temperature", "battery_mean_c"), "Battery P1 [°C]": ("temperature", "battery_p1_c"),
    "Battery P99 [°C]": ("temperature", "battery_p99_c"),
    "Hours above 45 °C [h/year]": ("temperature", "hours_above_45c"),
    "Hours below 0 °C [h/year]": ("temperature", "hours_below_0c"),
    "Effective temperature [°C]": ("temperature", "effective_temp_c"),
    "Reference size 1x [Wh]": ("reference_capacity_wh",),
    "Autonomy [days]": ("reference_factors", "autonomy_days"),
    "Max depth of discharge [%]": ("reference_factors", "max_dod_frac"),
    "Temperature factor [-]": ("reference_factors", "temperature_factor"),
    "Aging factor [-]": ("reference_factors", "aging_factor"),
    "Design margin [-]": ("reference_factors", "design_margin"),
    "Design temperature [°C]": ("reference_factors", "design_temp_c"),
    "Pack over the 1x size [x]": ("oversize_factor",), "Oversize step of the study [x]": ("oversize_factor_step",),
    "Charge voltage of the pack [V]": ("charge_voltage_v",),
    "Charge voltage per cell [V]": ("charge_voltage_v_per_cell",), "System voltage [V]": ("system_voltage_v",),
    "End of life at SOH [%]": ("eol_soh_frac",), "Years to 80% SOH [years]": ("years_to_report_soh",),
    "Pack size [Wh]": ("capacity_wh",), "Capacity [Ah]": ("capacity_ah",), "Pack mass [kg]": ("pack_mass_kg",),
    "Life [years]": ("life_years",), "Life P10 [years]": ("life_p10_years",),
    "Life P50 [years]": ("life_p50_years",), "Life P90 [years]": ("life_p90_years",),
    "Unserved load [Wh/year]": ("unserved_wh_per_year",),
    "Equivalent full cycles [1/year]": ("equivalent_full_cycles_per_year",),
    "Present cost [EUR]": ("present_cost",), "Packs [EUR]": ("cost_breakdown", "packs"),
    "Labour [EUR]": ("cost_breakdown", "labour"), "Trips share [EUR]": ("cost_breakdown", "trips"),
    "Disposal [EUR]": ("cost_breakdown", "disposal"), "Residual value [EUR]": ("cost_breakdown", "residual"),
    "Expected failure cost [EUR]": ("cost_breakdown", "failure_risk"),
    "Days off air [EUR]": ("cost_breakdown", "downtime"),
    "Risk before the next visit [%]": ("risk_before_next_visit_frac",),
}
SITES_TEXT = {"Site id": "id", "Region": "region", "Climate": "climate", "Enclosure": "enclosure",
              "Charging source": "charging", "Chemistry of the first new pack": "chemistry_name",
              "Pack structure": "pack_structure", "Limiting cause": "limiting_cause"}


def _dig(d, path):
    for k in path:
        d = d[k]
    return d


def test_sites_sheet_every_number_equals_plan_and_json(written):
    # Round trip through pandas (the reader a planner's scripts would use).
    plan, xlsx, js = written
    df = pd.read_excel(xlsx, sheet_name="Sites")
    assert set(SITES_MAP) <= set(df.columns)
    numeric = df.select_dtypes("number").columns
    assert set(numeric) <= set(SITES_MAP), set(numeric) - set(SITES_MAP)  # no unmapped number
    for i, site in enumerate(plan["sites"]):
        for header, path in SITES_MAP.items():
            assert df.loc[i, header] == pytest.approx(_dig(site, path), rel=XL), header
            assert df.loc[i, header] == pytest.approx(_dig(js["sites"][i], path), rel=5e-6, abs=1e-12), header
        for header, key in SITES_TEXT.items():
            assert df.loc[i, header] == site[key], header
        assert _years(df.loc[i, "Replacement years"]) == site["replacement_years"]


def test_other_sheets_numbers_equal_json(written, book):
    # Every other sheet read back with pandas, checked against the JSON plan.
    _, xlsx, js = written
    sites = {s["id"]: s for s in js["sites"]}

    fade = pd.read_excel(xlsx, sheet_name="Fade by year")
    chosen = fade[fade["Design"] == "chosen"].reset_index(drop=True)
    for _, row in chosen.iterrows():
        soh = sites[row["Site id"]]["soh_by_month"]
        for year in range(js["study"]["horizon_years"] + 1):
            assert row[f"SOH year {year} [%]"] == pytest.approx(soh[12 * year], rel=5e-6)
        assert row["Lowest SOH [%]"] == pytest.approx(min(soh), rel=5e-6)
    n_alts = sum(len(s["alternatives"]) for s in js["sites"])
    assert len(fade) == len(js["sites"]) + n_alts

    trips = pd.read_excel(xlsx, sheet_name="Trip list")
    assert len(trips) == len(js["trips"])
    by_key = {(t["year"], t["month"], t["region"]): t for t in js["trips"]}
    months = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
    for _, row in trips.iterrows():
        trip = by_key[(row["Year"], months.index(row["Month"]) + 1, row["Region"])]
        assert row["Trip cost [EUR]"] == pytest.approx(trip["cost"], rel=5e-6)
        assert row["Pack mass [kg]"] == pytest.approx(trip["pack_mass_kg"], rel=5e-6)
        assert row["Packs to carry"] == trip["pack_count"]
        assert row["Calendar year"] == js["study"]["start_year"] + trip["year"]
        assert str(row["Site ids"]).split(", ") == trip["site_ids"]

    grid = pd.read_excel(xlsx, sheet_name="Visit schedule")
    for _, row in grid.iterrows():
        site = sites[row["Site id"]]
        for year, month in zip(site["replacement_years"], site["replacement_months"]):
            # Year 0 is the study's start year (docs/plan-json.md: years count from the start);
            # the cell starts with the month, then what the visit installs
            assert row[f"Year {year} ({js['study']['start_year'] + year})"].split()[0] == months[month - 1]
        visited = [c for c in grid.columns if c.startswith("Year ") and isinstance(row[c], str)]
        assert len(visited) == len(site["replacement_years"])

    cost = pd.read_excel(xlsx, sheet_name="Cost comparison")
    for _, row in cost.iterrows():
        site = sites[row["Site id"]]
        assert row["Chosen present cost [EUR]"] == pytest.approx(site["present_cost"], rel=5e-6)
        for alt in site["alternatives"]:
            name = {"vrla": "Demo lead-acid", "lfp": "Demo iron phosphate", "nmc": "Demo nickel oxide",
                    "lto": "Demo titanate"}[alt["chemistry"]]
            assert row[f"{name}: present cost [EUR]"] == pytest.approx(alt["present_cost"], rel=5e-6)
            assert row[f"{name}: life [years]"] == pytest.approx(alt["life_years"], rel=5e-6)
    sens = {r["Sensitivity case"]: r for _, r in cost.dropna(subset=["Sensitivity case"]).iterrows()}
    for case in js["sensitivity"]:
        assert sens[case["case"]]["Change [%]"] == pytest.approx(case["change_frac"], rel=5e-6)

    ws = book["Climate"]
    _, rows = _table(ws, "Site id")
    for row in rows:
        monthly = sites[row["Site id"]]["climate_monthly"]
        for i, m in enumerate(months):
            assert row[f"Air {m} [°C]"] == pytest.approx(monthly["air_mean_c"][i], rel=5e-6)
            assert row[f"Battery {m} [°C]"] == pytest.approx(monthly["battery_mean_c"][i], rel=5e-6)


def _series_ranges(chart_xml: bytes):
    """The cell ranges each chart series draws from (c:val / c:yVal / c:xVal / c:cat)."""
    root = ET.fromstring(chart_xml)
    out = []
    for ser in root.iter(f"{C}ser"):
        refs = [f.text for tag in ("val", "yVal") for el in ser.iter(f"{C}{tag}") for f in el.iter(f"{C}f")]
        out.append(refs)
    return out


def test_chart_parts_reference_non_empty_ranges(written, book):
    # OOXML (ECMA-376 Part 1, §21.2): native charts live in xl/charts/chartN.xml and each
    # series names its data range in a c:f formula. Every range must hold numbers.
    plan, xlsx, _ = written
    wb = book
    with zipfile.ZipFile(xlsx) as zf:
        charts = [n for n in zf.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)]
        # 4 bar charts (Summary: cost groups per case, days off air per case, cost by
        # chemistry; Spending by year) + 16 fade charts (16 most expensive of 22) + climate
        # charts (<= 4) + the two scatter charts of Site map.
        assert 4 + 16 + 1 + 2 <= len(charts) <= 4 + 16 + 4 + 2
        kinds = {"barChart": 0, "scatterChart": 0, "lineChart": 0}
        for name in charts:
            xml = zf.read(name)
            root = ET.fromstring(xml)
            for kind in kinds:
                kinds[kind] += any(True for _ in root.iter(f"{C}{kind}"))
            series = _series_ranges(xml)
            assert series, name
            for refs in series:
                assert refs, name
                for ref in refs:
                    sheet, cells = ref.rsplit("!", 1)
                    ws = wb[sheet.strip("'")]
                    min_col, min_row, max_col, max_row = range_boundaries(cells.replace("$", ""))
                    values = [c for row in ws.iter_rows(min_row=min_row, max_row=max_row, min_col=min_col,
                                                        max_col=max_col, values_only=True) for c in row]
                    assert any(isinstance(v, (int, float)) for v in values), (name, ref)
        assert kinds["barChart"] == 4 and kinds["scatterChart"] == 18 and kinds["lineChart"] >= 1


def test_fade_charts_are_the_most_expensive_sites(written):
    plan, xlsx, _ = written
    expected = sorted(plan["sites"], key=lambda s: -s["present_cost"])[:16]
    with zipfile.ZipFile(xlsx) as zf:
        titles = " ".join(zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/charts/chart"))
    for site in expected:
        assert site["id"] in titles


def test_formula_injection_comes_back_as_text(written, book):
    # OWASP "CSV Injection": cells starting with = + - @ tab CR must not be formulas.
    plan, xlsx, _ = written
    wb = book
    found = {}
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                assert cell.data_type != "f", (ws.title, cell.coordinate, cell.value)
                if isinstance(cell.value, str) and cell.value in (*HOSTILE, "-Demo Ridge"):
                    # docs/workbook.md, "Text can never become a formula": shown as typed
                    # (no apostrophe), kept text by the cell's type, its text number
                    # format and the quote-prefix flag.
                    assert cell.data_type == "s"
                    assert cell.number_format == "@" and cell.quotePrefix
                    found[cell.value] = True
    assert set(found) == {*HOSTILE, "-Demo Ridge"}
    with zipfile.ZipFile(xlsx) as zf:
        for name in zf.namelist():
            if name.startswith("xl/worksheets/sheet"):
                assert b"<f>" not in zf.read(name) and b"<f " not in zf.read(name), name


@given(st.text(max_size=40))
def test_neutralise_text_property(text):
    # OWASP: a neutralised string never starts with a trigger and keeps the original text.
    out = neutralise_text(text)
    assert not out.startswith(("=", "+", "-", "@", "\t", "\r"))
    clean = "".join(ch for ch in text if not (ord(ch) < 32 and ch not in "\t\n\r"))
    assert out in (clean, "'" + clean)


def test_interrupted_save_leaves_previous_workbook_identical(tmp_path, monkeypatch):
    # Atomic replacement: a save that dies midway must not touch the earlier plan.
    target = tmp_path / "plan.xlsx"
    write_workbook(make_plan(2, seed=1), target)
    before = target.read_bytes()

    real_save = openpyxl.Workbook.save

    def dying_save(self, filename):
        real_save(self, filename)
        with open(filename, "r+b") as fh:  # leave a truncated, broken file behind
            fh.truncate(100)
        raise RuntimeError("simulated crash during save")

    monkeypatch.setattr(openpyxl.Workbook, "save", dying_save)
    with pytest.raises(RuntimeError, match="simulated crash"):
        write_workbook(make_plan(3, seed=2), target)
    assert target.read_bytes() == before
    assert os.listdir(tmp_path) == ["plan.xlsx"]


def test_missing_optional_parts_are_left_out(tmp_path):
    # docs/plan-json.md marks sensitivity, alternatives and P10/P90 as optional.
    plan = make_plan(3, with_optional=False)
    for site in plan["sites"]:
        del site["pack_structure"], site["temperature"], site["climate_monthly"]
    del plan["chemistry_comparison"], plan["assumptions"], plan["cautions"]
    xlsx = write_workbook(plan, tmp_path / "lean.xlsx")
    df = pd.read_excel(xlsx, sheet_name="Sites")
    assert "Life P10 [years]" not in df.columns and "Pack structure" not in df.columns
    assert "Battery P99 [°C]" not in df.columns
    assert list(df["Present cost [EUR]"]) == pytest.approx([s["present_cost"] for s in plan["sites"]], rel=XL)
    cost = pd.read_excel(xlsx, sheet_name="Cost comparison")
    assert "Sensitivity case" not in cost.columns


def test_nearly_empty_plan_still_writes(tmp_path):
    xlsx = write_workbook({"sites": []}, tmp_path / "empty.xlsx")
    wb = openpyxl.load_workbook(xlsx)
    assert wb.sheetnames == list(SHEET_NAMES)
    assert not wb["Sites"]["A2"].value


def test_page_setup_landscape_fit_width_and_frozen_headers(written, book):
    # Measured in ../shared/notes/ecosystem.md §3: charts are cut off in LibreOffice unless
    # landscape + fit to width; crews print the visit schedule with repeated headers.
    _, xlsx, _ = written
    wb = book
    fixed_scale = {"Crew trips": 100, "Visit schedule": 75}  # print at a known size, not fitted
    for ws in wb.worksheets:
        assert ws.page_setup.orientation == "landscape", ws.title
        assert ws.freeze_panes, ws.title
        if ws.title in fixed_scale:
            assert not ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
            assert int(ws.page_setup.scale) == fixed_scale[ws.title], ws.title
        else:
            assert ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
            assert int(ws.page_setup.fitToHeight) == 0, ws.title
    for name in ("Visit schedule", "Trip list"):
        assert wb[name].print_title_rows == "$1:$1" and wb[name].print_area
    assert int(wb["Trip list"].page_setup.fitToWidth) == 1


def test_number_formats_and_units(written, book):
    _, xlsx, _ = written
    ws = book["Sites"]
    headers = {c.value: c.column for c in ws[1]}
    assert ws.cell(row=2, column=headers["Present cost [EUR]"]).number_format == '#,##0 "EUR"'
    assert ws.cell(row=2, column=headers["Max depth of discharge [%]"]).number_format == "0.0%"
    assert ws.cell(row=2, column=headers["Battery mean [°C]"]).number_format == "0.0"


def test_cautions_sheet_lists_standard_cautions_and_site_warnings(written, book):
    plan, xlsx, _ = written
    text = " ".join(str(c.value) for row in book["Cautions"].iter_rows() for c in row
                    if c.value is not None)
    # The usual cautions of the trade (README, safety; ../shared/notes/sizing-economics.md §7).
    for needle in ("hydrogen", "thermal runaway", "0 °C", "UN 38.3", "lift", "arc", "NFPA 855", "IEC 62485-2",
                   "IEC 62619", "licensed practice"):
        assert needle.lower() in text.lower(), needle
    for site in plan["sites"]:
        for warning in site["warnings"]:
            assert warning in text


def test_target_folder_is_a_directory_error(tmp_path):
    from planner.errors import InputError

    with pytest.raises(InputError, match="folder"):
        write_workbook(make_plan(1), tmp_path)


# CI installs LibreOffice and poppler before the tests (.ci/run): there the test must run.
_NO_RENDERER = not os.environ.get("CI") and not (shutil.which("soffice") and shutil.which("pdftotext"))


@pytest.mark.skipif(_NO_RENDERER, reason="LibreOffice (soffice) or pdftotext is not installed")
def test_libreoffice_renders_pdf_and_keeps_names_literal(tmp_path):
    # A real client: LibreOffice converts the workbook to PDF (non-empty) and its CSV
    # export of Summary shows the hostile names as text, not evaluated (OWASP). A small
    # plan keeps the two conversions quick.
    xlsx = write_workbook(make_plan(3, hostile_names=True), tmp_path / "plan.xlsx")
    # A private profile: never collide with a LibreOffice the user has open.
    profile = f"-env:UserInstallation={(tmp_path / 'lo-profile').as_uri()}"
    for target in ("pdf", "csv"):
        subprocess.run(["soffice", profile, "--headless", "--convert-to", target, "--outdir", str(tmp_path),
                        str(xlsx)], check=True, capture_output=True, timeout=300)
    pdf = tmp_path / "plan.pdf"
    assert pdf.stat().st_size > 1000 and pdf.read_bytes()[:5] == b"%PDF-"
    csv_text = (tmp_path / "plan.csv").read_text(encoding="utf-8", errors="replace")
    assert '=HYPERLINK(""x"")' in csv_text and "+1+1" in csv_text
    assert "'=" not in csv_text and "'+" not in csv_text
    # The rendered pages show the names exactly as typed: not evaluated, no apostrophe.
    pdf_text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True,
                              text=True, timeout=60).stdout
    for name in (*HOSTILE, "-Demo Ridge"):
        assert name in pdf_text, name
        assert "'" + name not in pdf_text, name


def test_each_site_missing_a_different_key_still_writes(tmp_path):
    # Tolerance (docs/workbook.md): a missing optional key leaves that cell blank, never crashes.
    # Every site loses a different key, so one write covers every key of the fixture.
    keys = sorted(make_plan(1)["sites"][0])
    plan = make_plan(len(keys), seed=5)
    for site, key in zip(plan["sites"], keys):
        site.pop(key, None)  # odd sites have no P10/P90 fade band anyway
    xlsx = write_workbook(plan, tmp_path / "holes.xlsx")
    df = pd.read_excel(xlsx, sheet_name="Sites")
    assert len(df) == len(keys)
    missing_cost = keys.index("present_cost")
    assert pd.isna(df.loc[missing_cost, "Present cost [EUR]"])
    other = (missing_cost + 1) % len(keys)
    assert df.loc[other, "Present cost [EUR]"] == pytest.approx(plan["sites"][other]["present_cost"], rel=XL)


def test_malformed_plan_parts_do_not_crash(tmp_path):
    # Tolerance: wrong types or junk entries in optional parts are skipped or left blank.
    plan = make_plan(4, hostile_names=True)
    s = plan["sites"]
    s[0]["soh_by_month"][5], s[0]["soh_by_month"][6] = None, float("nan")
    s[1]["alternatives"], s[1]["temperature"], s[1]["climate_monthly"] = None, "x", {"air_mean_c": [1, 2]}
    s[2]["replacement_years"], s[2]["present_cost"], s[2]["name"] = None, float("nan"), "a\x01b\tc"
    s[3]["soh_by_month"], s[3]["replacement_months"], s[3]["warnings"] = "junk", [13, "x"], None
    s[3]["alternatives"] = [{"chemistry": "lfp", "soh_by_month": None}, "junk"]
    plan["trips"][0]["site_ids"] = None
    plan["trips"].append("junk")
    plan["study"]["horizon_years"] = None
    plan["solver"] = None
    plan["sites"].append("junk")
    xlsx = write_workbook(plan, tmp_path / "odd.xlsx")
    df = pd.read_excel(xlsx, sheet_name="Sites")
    assert len(df) == 4
    assert pd.isna(df.loc[2, "Present cost [EUR]"])  # NaN is written as an empty cell
    assert df.loc[2, "Site name"] == "ab\tc"  # control character removed (XML 1.0 §2.2), tab kept


def test_fast_block_writer_matches_public_cell_api(monkeypatch, tmp_path):
    # The fast writer touches openpyxl internals; the public API (openpyxl documentation:
    # cell.value, cell.number_format) is the reference it must reproduce cell for cell.
    import planner.report.cells as cells

    rows = [[1.5, "=x", None, 3], ["+y", float("nan"), 2.25, "plain"]]
    formats = ["0.0", None, "0.00%", "#,##0"]
    books = []
    for fast in (True, False):
        monkeypatch.setattr(cells, "_FAST_CELLS", fast)
        wb = openpyxl.Workbook()
        assert cells.write_rows(wb.active, 2, 3, rows, formats) == 4
        wb.save(tmp_path / f"{fast}.xlsx")
        books.append(openpyxl.load_workbook(tmp_path / f"{fast}.xlsx").active)
    fast_ws, public_ws = books
    for r in range(1, 5):
        for c in range(1, 8):
            a, b = fast_ws.cell(r, c), public_ws.cell(r, c)
            assert (a.value, a.data_type, a.number_format) == (b.value, b.data_type, b.number_format)


def test_spending_sheet_matches_json_and_adds_up(written, book):
    # Round trip: every row of Spending by year equals the plan JSON's spending_by_year, and
    # the present values add up to the total present cost within 0.01 (NIST HB 135 identity).
    plan, _, js = written
    ws = book["Spending by year"]
    headers, rows = _table(ws, "Year")
    rows = [r for r in rows if isinstance(r["Year"], int)]
    assert len(rows) == len(js["spending_by_year"]) == plan["study"]["horizon_years"] + 1
    keys = {"Packs [EUR]": "packs", "Installation labour [EUR]": "labour", "Trips [EUR]": "trips",
            "Disposal [EUR]": "disposal", "Thermal measures [EUR]": "thermal",
            "Days off air [EUR]": "downtime", "Expected failure cost [EUR]": "risk",
            "Residual value [EUR]": "residual", "Total [EUR]": "total",
            "Total, money of the year [EUR]": "total_nominal", "Present value [EUR]": "present_value"}
    for row, ref in zip(rows, js["spending_by_year"]):
        assert row["Calendar year"] == ref["calendar_year"]
        for header, key in keys.items():
            assert (row[header] or 0.0) == pytest.approx(ref[key], rel=5e-6, abs=1e-9), header
        # nominal = constant x (1 + inflation)^year (NIST HB 135 ch. 4)
        assert row["Total, money of the year [EUR]"] == pytest.approx(
            row["Total [EUR]"] * 1.02 ** row["Year"], rel=1e-12, abs=1e-9)
    assert abs(sum(r["Present value [EUR]"] for r in rows) - plan["total_present_cost"]) <= 0.01
    text = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert "Check passed: the years add up to the plan's total present cost." in text


def test_risk_sheet_sorted_highlighted_and_equal_to_json(written, book):
    plan, _, js = written
    ws = book["Sites at risk"]
    _, rows = _table(ws, "Site id")
    ref = {s["id"]: s for s in js["sites"]}
    risks = [r["Risk before the next visit [%]"] for r in rows]
    assert risks == sorted(risks, reverse=True) and len(rows) == N_SITES
    top = next(r[0].row for r in ws.iter_rows(min_col=1, max_col=1) if r[0].value == "Site id")
    for offset, row in enumerate(rows):
        site = ref[row["Site id"]]
        assert row["Risk before the next visit [%]"] == pytest.approx(site["risk_before_next_visit_frac"], rel=5e-6)
        assert row["Next visit [year]"] == site["next_visit_year"]
        highlighted = ws.cell(row=top + 1 + offset, column=1).fill.fgColor.rgb.endswith("F6DDCC")
        assert highlighted == (site["risk_before_next_visit_frac"] > 0.10)


def test_fleet_overview_at_1000_sites(tmp_path):
    # A synthetic 1,000-site plan (no pipeline run): the Summary stays a short overview.
    plan = make_plan(1000, seed=3)
    plan["unserved_sites"] = [{"id": f"X{i:03d}", "reason": "demo reason", "limit": "candidates"}
                              for i in range(250)]
    for row in plan["chemistry_comparison"]:
        if row["chemistry"] == "nmc":
            row["sites_unserved"] = [s["id"] for s in plan["sites"][:400]]
            row["sites_served"] = 600
            row["kept_by_other"] = {s["id"]: ("lfp" if k < 300 else "vrla") for k, s in enumerate(plan["sites"][:400])}
    book = openpyxl.load_workbook(write_workbook(plan, tmp_path / "fleet.xlsx"))
    ws = book["Summary"]
    # a few printed pages, not one row per site (a row per region: one region per 40 sites)
    assert ws.max_row < 150
    _, top = _table(ws, "Site id")
    assert len(top) == 10
    _, by_region = _table(ws, "Region")
    assert sum(r["Sites"] for r in by_region) == 1000
    assert sum(r["Present cost [EUR]"] for r in by_region) == pytest.approx(plan["total_present_cost"], rel=1e-12)
    assert sum(r["Replacements"] for r in by_region) == sum(len(s["replacement_years"]) for s in plan["sites"])
    _, by_case = _table(ws, "Case")  # the comparison comes first, then the overview
    coverage = {r["Case"]: r["Coverage"] for r in by_case if r.get("Coverage")}
    assert coverage["If Demo nickel oxide wherever it can serve"] == (
        "serves 600 of 1,000 sites; the other 400 keep another chemistry (Demo iron phosphate 300, "
        "Demo lead-acid 100)")
    longest = max(len(str(c.value)) for row in ws.iter_rows() for c in row if c.value is not None)
    assert longest < 300  # no cell lists hundreds of ids
    text = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert any("250 sites are not served" in t and "Needs attention" in t for t in text)


# ---------------------------------------------------------------- one name for one thing
NAMES = {"vrla": "Demo lead-acid", "lfp": "Demo iron phosphate", "nmc": "Demo nickel oxide",
         "lto": "Demo titanate"}


def test_one_cost_one_name_expected_failure_cost(written, book):
    # The expected cost of failures is money, not a probability: one name on every sheet
    # (the JSON keeps failure_risk / risk for scripts).
    text = {ws.title: " ".join(str(c.value) for row in ws.iter_rows() for c in row if c.value is not None)
            for ws in book.worksheets}
    for title in ("Summary", "Spending by year", "Sites", "Sites at risk"):
        assert "Expected failure cost" in text[title], title
    assert not any("Failure risk" in t for t in text.values())


def test_chemistries_by_their_full_name_everywhere(written, book):
    plan = written[0]
    columns = {"Summary": "Chemistry", "Sites": "Chemistry of the first new pack", "Sites at risk": "Chemistry",
               "Cost comparison": "Chosen chemistry", "Fade by year": "Chemistry"}
    for title, header in columns.items():
        ws = book[title]
        found = [c for row in ws.iter_rows() for c in row if c.value == header]
        assert found, (title, header)
        values = {ws.cell(row=r, column=found[0].column).value
                  for r in range(found[0].row + 1, found[0].row + 11)} - {None}
        assert values and values <= set(NAMES.values()), (title, values)
    xlsx = written[1]
    with zipfile.ZipFile(xlsx) as zf:
        xml = " ".join(zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/charts/chart"))
    assert "chosen: Demo" in xml and "chosen: lfp" not in xml and "best lfp" not in xml
    assert len(plan["chemistry_comparison"]) == 5


def _fade_series_colours(xlsx):
    """(series label, line colour, dashed) of every fade chart, from the chart XML."""
    out = []
    with zipfile.ZipFile(xlsx) as zf:
        for name in sorted(n for n in zf.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)):
            root = ET.fromstring(zf.read(name))
            text = "".join(t.text or "" for t in root.iter("{http://schemas.openxmlformats.org/drawingml/2006/main}t"))
            if not any(True for _ in root.iter(f"{C}scatterChart")) or "State of health" not in text:
                continue  # the Site map's scatter charts are not fade charts
            mins = [float(m.get("val")) for m in root.iter(f"{C}min")]
            for ser in root.iter(f"{C}ser"):
                label = "".join(t.text or "" for t in ser.iter(f"{C}v"))
                colour = next((c.get("val") for c in ser.iter("{http://schemas.openxmlformats.org/drawingml/2006/main}srgbClr")), None)
                dash = any(True for _ in ser.iter("{http://schemas.openxmlformats.org/drawingml/2006/main}prstDash"))
                out.append((name, label, colour, dash, tuple(mins)))
    return out


def test_fade_charts_colour_per_chemistry_replace_line_and_one_range(written):
    series = _fade_series_colours(written[1])
    colour_of: dict[str, set] = {}
    for _, label, colour, _, _ in series:
        for chem_name in NAMES.values():
            if label.endswith(chem_name):
                colour_of.setdefault(chem_name, set()).add(colour)
    # one colour per chemistry across every chart, and different chemistries differ
    assert all(len(c) == 1 for c in colour_of.values()), colour_of
    assert len({next(iter(c)) for c in colour_of.values()}) == len(colour_of)
    # every chart draws the state of health at which its pack is replaced (eol_soh_frac)
    charts = {name for name, *_ in series}
    replace = {name for name, label, *_ in series if label.startswith("replace at ")}
    assert replace == charts
    # one y range for the family: the same lowest value on every chart (x min is 0)
    assert len({mins for *_, mins in series}) == 1


def test_extrapolation_mark_is_explained_once(written, book):
    note = book["Capacity fade"]["A2"].value
    assert note.count("*") == 1 and "outside the conditions it was fitted on" in note
    with zipfile.ZipFile(written[1]) as zf:
        xml = " ".join(zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/charts/chart"))
    assert "(life extrapolated)" not in xml


def test_sub_cent_amounts_show_as_zero(tmp_path):
    # A computed 1e-245 is no spending: it shows as 0 (a dash), never as "0 EUR" beside "-".
    plan = make_plan(3, seed=1)
    plan["spending_by_year"][4]["risk"] = 1e-245
    plan["spending_by_year"][5]["downtime"] = -3e-9
    ws = openpyxl.load_workbook(write_workbook(plan, tmp_path / "p.xlsx"))["Spending by year"]
    headers, rows = _table(ws, "Year")
    by_year = {r["Year"]: r for r in rows if isinstance(r["Year"], int)}
    assert by_year[4]["Expected failure cost [EUR]"] == 0 and by_year[5]["Days off air [EUR]"] == 0


def test_sites_show_every_pack_and_no_charge_voltage_for_primary_cells(tmp_path):
    plan = make_plan(4, seed=2)
    primary = plan["sites"][3]
    primary.update(chemistry="lisocl2", chemistry_name="Demo primary", charge_voltage_v=3.6,
                   charge_voltage_v_per_cell=3.6)
    df = pd.read_excel(write_workbook(plan, tmp_path / "p.xlsx"), sheet_name="Sites")
    assert pd.isna(df.loc[3, "Charge voltage of the pack [V]"])
    assert pd.isna(df.loc[3, "Charge voltage per cell [V]"])
    site = plan["sites"][0]
    every = df.loc[0, "Every new pack"]
    assert every.count("year ") == len(site["replacements"])
    assert every.startswith(f"year 0: {NAMES[site['replacements'][0]['chemistry']]}")


def test_crew_pages_say_what_to_install_program_bring_and_remove(written, book):
    # One block per trip of the first three years; per site: the pack by its full name, the
    # charger setting per cell and per pack, a thermal kit only at the visit that fits it,
    # what comes out, and how the site is reached.
    plan = written[0]
    ws = book["Crew trips"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    site_rows = {r[1].split()[0]: r for r in rows if isinstance(r[0], int)}
    trips = [t for t in plan["trips"] if t["year"] < 3]
    assert len(site_rows) == len({i for t in trips for i in t["site_ids"]})
    headings = [str(r[0]) for r in rows if str(r[0]).startswith("Trip ")]
    assert len(headings) == len(trips)
    for site in plan["sites"]:
        row = site_rows.get(site["id"])
        if row is None:
            continue
        pack = site["replacements"][0]
        assert row[2].startswith(NAMES[pack["chemistry"]]) and f"{pack['pack_mass_kg']:.1f} kg" in row[2]
        assert row[3] == (f"{pack['charge_voltage_v_per_cell']:.2f} V per cell\n"
                          f"{pack['charge_voltage_v']:.2f} V per pack")
        assert (row[4] == "NEW insulated box") == (site["thermal_measure"] == "insulated-box")
        assert row[5].startswith("Demo lead-acid") if site.get("existing_pack") else row[5] == "nothing (first pack)"
        months = "any month" if len(site["access_months"]) == 12 else "Jun-Sep"
        assert row[6].startswith(months)


def test_site_map_has_a_series_per_chemistry_and_per_attention_status(written, book):
    # Native scatter charts (ECMA-376 c:scatterChart): one series per chosen chemistry and one
    # per attention status, each pointing at the longitude/latitude cells of its own sites.
    plan, xlsx, _ = written
    ws = book["Site map"]
    chems = {s["chemistry_name"] for s in plan["sites"]}  # full names, as everywhere
    with zipfile.ZipFile(xlsx) as zf:
        names = [n for n in zf.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)]
        maps = []
        for name in names:
            root = ET.fromstring(zf.read(name))
            heading = root.find(f"{C}chart/{C}title")
            title = "" if heading is None else "".join(
                t.text or "" for t in heading.iter("{http://schemas.openxmlformats.org/drawingml/2006/main}t"))
            if title.startswith("Sites by"):
                labels = [v.text for ser in root.iter(f"{C}ser") for v in ser.findall(f"{C}tx/{C}v")]
                maps.append((title, labels, _series_ranges(zf.read(name))))
    assert {t for t, _, _ in maps} == {"Sites by chosen chemistry", "Sites by attention status"}
    by_title = {t: (labels, refs) for t, labels, refs in maps}
    labels, refs = by_title["Sites by chosen chemistry"]
    assert set(labels) == chems
    points = 0
    for (y_ref,) in refs:
        _, cells = y_ref.rsplit("!", 1)
        min_col, min_row, _, max_row = range_boundaries(cells.replace("$", ""))
        points += max_row - min_row + 1
    assert points == len(plan["sites"])
    labels, _ = by_title["Sites by attention status"]
    # not served as on Needs attention (no design, or more than 1 % of the load lost)
    assert "not served" not in labels or plan["unserved_sites"] or sites_not_served(plan)
    assert ws.freeze_panes


def test_attention_status_comes_from_the_plan_when_it_has_one():
    from planner.report.map_sheet import attention_status

    assert attention_status({"id": "A", "attention_status": "check enclosure"}, set()) == "check enclosure"
    assert attention_status({"id": "A"}, {"A"}) == "not served"
    assert attention_status({"id": "B", "risk_before_next_visit_frac": 0.5}, set()).startswith("risk")
    assert attention_status({"id": "B", "warnings": ["x"]}, set()) == "warnings"
    assert attention_status({"id": "B", "warnings": []}, set()) == "no flag"
