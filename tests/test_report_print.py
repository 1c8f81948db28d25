"""The workbook on paper: the demo plan and an invented 1,000-site plan rendered by
LibreOffice (a real client; CI installs it and poppler before the tests).

Checks: the 1,000-site workbook prints in at most 80 pages; crew-page text is at least
8 pt as printed (cell style x print scale in the file, word heights in the PDF); no crew
cell's text runs into the next column; the Spending sheet's reconciliation lines hold
to the cent; the demo plan serves every site and exits 0. The 1,000-site plan is the
invented fixture of tests/plan_fixture.py (no plan run); the demo runs with its
sensitivity cases off, which leaves the plan itself unchanged.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest
from click.testing import CliRunner
from plan_fixture import make_plan

from planner.cli import cli
from planner.report import write_workbook
from planner.report.crew_sheet import COLUMNS, LINE_PT, row_height_pt

REPO = Path(__file__).resolve().parents[1]
#: The page limit of a 1,000-site workbook printed whole.
MAX_PAGES_1000 = 80
#: Smallest text size a printed work instruction may use [pt].
MIN_PRINTED_PT = 8.0
CREW = "Crew trips"

_NO_RENDERER = not os.environ.get("CI") and not (shutil.which("soffice") and shutil.which("pdftotext"))
pytestmark = pytest.mark.skipif(_NO_RENDERER, reason="LibreOffice (soffice) or pdftotext is not installed")


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    """{name: (xlsx, pdf)} for the demo and the 1,000-site fixture, plus the demo's JSON."""
    folder = tmp_path_factory.mktemp("print")
    for path in (REPO / "scenarios").glob("corvale*"):  # the study and every file it names
        shutil.copy(path, folder / path.name)
    with (folder / "corvale.toml").open("a", encoding="utf-8") as fh:
        fh.write("\n[output]\nsensitivity = false\n")
    demo = folder / "demo.xlsx"
    result = CliRunner().invoke(cli, ["--quiet", "plan", str(folder / "corvale.toml"), "--out", str(demo),
                                      "--json", str(folder / "demo.json"), "--workers", "1"])
    fleet = write_workbook(make_plan(1000, seed=3, lost_load=True), folder / "fleet.xlsx")
    profile = f"-env:UserInstallation={(folder / 'lo-profile').as_uri()}"
    subprocess.run(["soffice", profile, "--headless", "--convert-to", "pdf", "--outdir", str(folder),
                    str(demo), str(fleet)], check=True, capture_output=True, timeout=600)
    return {"demo": (demo, folder / "demo.pdf"), "fleet": (fleet, folder / "fleet.pdf"),
            "exit_code": result.exit_code, "output": result.output,
            "json": json.loads((folder / "demo.json").read_text(encoding="utf-8"))
            if (folder / "demo.json").is_file() else {}}


def _pages(pdf: Path) -> int:
    info = subprocess.run(["pdfinfo", str(pdf)], check=True, capture_output=True, text=True).stdout
    return int(re.search(r"Pages:\s+(\d+)", info).group(1))


_WORD = re.compile(r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)</word>')
_PAGE = re.compile(r"<page [^>]*>(.*?)</page>", re.S)


def _crew_pages(pdf: Path) -> list[list[tuple[float, float, float, float, str]]]:
    """Words (x0, y0, x1, y1, text) of every page whose footer names the crew sheet."""
    xml = subprocess.run(["pdftotext", "-bbox", str(pdf), "-"], check=True, capture_output=True,
                         text=True, timeout=300).stdout
    pages = []
    for body in _PAGE.findall(xml):
        words = [(float(a), float(b), float(c), float(d), w) for a, b, c, d, w in _WORD.findall(body)]
        footer = " ".join(w[4] for w in words if w[1] > 540)
        if footer.startswith("Crew trips page"):
            pages.append(words)
    return pages


def test_demo_serves_every_site_and_exits_0(rendered):
    # The demo stays fully served: exit 0 (README: 3 only when some site cannot be served).
    assert rendered["exit_code"] == 0, rendered["output"]
    attention = rendered["json"]["needs_attention"]
    assert attention["sites_not_served"] == [] and attention["lost_load_threshold_frac"] == 0.01


def test_1000_site_workbook_prints_in_at_most_80_pages(rendered):
    pages = _pages(rendered["fleet"][1])
    demo_pages = _pages(rendered["demo"][1])
    print(f"pages: 1,000 sites {pages}, demo {demo_pages}")
    assert pages <= MAX_PAGES_1000
    assert 10 <= demo_pages < pages


@pytest.mark.parametrize("name", ["demo", "fleet"])
def test_crew_text_is_at_least_8_pt_as_printed(rendered, name):
    xlsx, pdf = rendered[name]
    ws = openpyxl.load_workbook(xlsx, rich_text=True)[CREW]
    assert not ws.sheet_properties.pageSetUpPr.fitToPage  # printed at its own scale
    scale = int(ws.page_setup.scale or 100) / 100.0
    sizes = []
    for row in ws.iter_rows():
        for cell in row:
            if cell.value is None:
                continue
            runs = getattr(cell.value, "__iter__", None) and not isinstance(cell.value, str | int | float)
            if runs:  # rich text: every run's own size
                sizes += [float(block.font.sz) for block in cell.value if hasattr(block, "font")]
            else:
                sizes.append(float(cell.font.sz or 11))
    assert min(sizes) * scale >= MIN_PRINTED_PT
    # In the PDF: word boxes are the font size x the font's ascent plus descent; the title
    # (14 pt) gives that ratio, and no word is shorter than 8 pt at it.
    pages = _crew_pages(pdf)
    assert pages
    title = next(w for w in pages[0] if w[4] == "Crew")
    ratio = (title[3] - title[1]) / 14.0
    smallest = min(w[3] - w[1] for page in pages for w in page)
    assert smallest / ratio >= MIN_PRINTED_PT - 0.05


@pytest.mark.parametrize("name", ["demo", "fleet"])
def test_crew_cells_wrap_within_their_column(rendered, name):
    xlsx, pdf = rendered[name]
    ws = openpyxl.load_workbook(xlsx)[CREW]
    # In the file: every text cell wraps, and its row is as tall as the lines it needs.
    merged = {r.min_row for r in ws.merged_cells.ranges}
    widths = [w for _, w in COLUMNS]
    for row in ws.iter_rows(min_row=3):
        values = [c.value for c in row[:len(COLUMNS)]]
        if row[0].row in merged or all(v is None for v in values):
            continue
        for cell in row:
            if isinstance(cell.value, str):
                assert cell.alignment.wrap_text, (cell.coordinate, cell.value)
        if isinstance(values[0], int) or values[1] == "Site":
            assert ws.row_dimensions[row[0].row].height >= row_height_pt(values, widths) - 1e-9
    # On paper: no word of a cell crosses into the next column, and no two words overlap
    # (text printed over the next row). Columns start where the header words start.
    pages = _crew_pages(pdf)
    header = next(p for p in pages if any(w[4] == "Install" for w in p))
    y_head = next(w[1] for w in header if w[4] == "Install")
    starts = sorted(w[0] for w in header if abs(w[1] - y_head) < 1 and w[4] in
                    ("Site", "Install", "Charger", "Thermal", "Remove", "Access"))
    assert len(starts) == len(COLUMNS) - 1
    for words in pages:
        body = [w for w in words if w[1] < 540]
        # a line is the words on one baseline (runs of different sizes share it)
        lines: list[list] = []
        for w in sorted(body, key=lambda w: w[3]):
            if lines and w[3] - lines[-1][-1][3] < 2.0:
                lines[-1].append(w)
            else:
                lines.append([w])
        for line in lines:
            line.sort()
            first = line[0]
            if first[4] == "Notes:" or (first[0] < starts[0] - 1 and not first[4].isdigit()):
                continue  # merged cells: the title and intro, a trip's heading, a site's notes
            for x0, _, x1, _, text in line:
                later = [s for s in starts if s > x0 + 0.5]
                if later:
                    assert x1 <= later[0] + 0.5, (text, x0, x1, later[0])
        # word boxes of two lines of one cell touch by about 1 pt (line spacing below the box
        # height); text printed over another row overlaps by most of a line
        for a, b in zip(sorted(body), sorted(body)[1:]):
            overlap_x = min(a[2], b[2]) - max(a[0], b[0])
            overlap_y = min(a[3], b[3]) - max(a[1], b[1])
            assert overlap_x <= 0.5 or overlap_y <= 2.0, (a, b)
    assert LINE_PT * 1.0 >= 8 * 1.22  # a line holds 8 pt text (ascent plus descent 1.22 em)


@pytest.mark.parametrize("name", ["demo", "fleet"])
def test_reconciliation_lines_hold_to_the_cent(rendered, name):
    ws = openpyxl.load_workbook(rendered[name][0])["Spending by year"]
    rows = list(ws.iter_rows(values_only=True))
    top = next(i for i, r in enumerate(rows) if r[0] == "Reconciliation") + 1
    header = rows[top]
    col = {h: i for i, h in enumerate(header) if h}
    checks = []
    for r in rows[top + 1:]:
        if r[col["Holds to the cent"]] is None:
            break
        checks.append(r)
    assert len(checks) == 6  # total, four cost groups, trips against the Trip list
    for r in checks:
        mine, theirs = r[col["This sheet [EUR]"]], r[col["Compared with [EUR]"]]
        assert abs(mine - theirs) <= 0.005, r[0]
        assert r[col["Holds to the cent"]] == "yes", r[0]


def test_demo_assumptions_name_sources_a_reader_has(rendered):
    # Sources point at published work or the trade, never at files the reader lacks.
    plan = rendered["json"]
    for row in plan["assumptions"]:
        assert not re.search(r"research note|DESIGN\.md|\.md\b|§", str(row["source"])), row
    ws = openpyxl.load_workbook(rendered["demo"][0])["Assumptions and sources"]
    rows = [r for r in ws.iter_rows(min_row=5, values_only=True) if r[0]]
    # each study setting listed once (with the unit of the study-file reference): the plan's
    # study block adds only what the study's own rows do not list
    settings = [(r[0], r[1]) for r in rows if str(r[0]).startswith("study")]
    assert len(settings) == len(set(settings)) and ("study [study]", "horizon_years") in settings
    listed = {name for group, name in settings if group == "study [study]"}
    assert not listed & {name for group, name in settings if group == "study"}
    # the solver's figures moved here from the Summary
    assert "how the plan was found" in {r[0] for r in rows}


def test_demo_oversize_step_is_one_of_the_study_sizes(rendered):
    # The pack built is rounded to whole cells, so its ratio to the 1x size (1.03) need not
    # be a study size; the step that gave it is.
    plan = rendered["json"]
    sizes = {1.0, 1.25, 1.5, 2.0, 3.0}  # scenarios/corvale.toml [candidates] oversize_factors
    primary_years = {2.0, 5.0, 10.0, 15.0}  # planner.designs.candidates.PRIMARY_YEARS_OF_LOAD
    for site in plan["sites"]:
        allowed = primary_years if site["chemistry"] == "lisocl2" else sizes
        assert site["oversize_factor_step"] in allowed, site["id"]
        for pack in site["replacements"]:
            allowed = primary_years if pack["chemistry"] == "lisocl2" else sizes
            assert pack["oversize_factor_step"] in allowed, (site["id"], pack["year"])
