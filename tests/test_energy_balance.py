"""Energy balance check: a charging source that cannot cover the load (docs/energy.md)."""

import json
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from click.testing import CliRunner

from planner.energy.balance import SHORTFALL_CAUSE, charging_shortfall, monthly_energy_kwh

HOURS = 8760
# Hours per month of a 365-day year (Gregorian calendar, leap day dropped).
MONTH_HOURS = 24 * np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def test_monthly_energy_sums_whole_months():
    # 1 W for a year is 8.76 kWh; per month 0.744 kWh in January, 0.672 in February
    # (hours x 1 W; calendar arithmetic).
    months = monthly_energy_kwh(np.ones(HOURS))
    assert months.sum() == pytest.approx(8.76)
    assert months[:2] == pytest.approx([0.744, 0.672])


def test_annual_shortfall_reports_both_totals():
    # 5 W of load all year draws 43.8 kWh (5 W x 8,760 h); a source of 1 W offers 8.76 kWh.
    short = charging_shortfall(np.full(HOURS, 5.0), np.full(HOURS, 1.0), charging="pv")
    assert short.period == "the year"
    assert short.charge_kwh == pytest.approx(8.76) and short.load_kwh == pytest.approx(43.8)
    assert short.warning().startswith(SHORTFALL_CAUSE) and "8.8 kWh" in short.warning()
    assert "43.8 kWh" in short.cause()


def test_worst_pv_month_is_named():
    # Ample PV on the year, none in December: December is the month that falls short.
    charge = np.full(HOURS, 10.0)
    charge[-MONTH_HOURS[11]:] = 0.0
    short = charging_shortfall(np.full(HOURS, 1.0), charge, charging="pv")
    assert short.period == "December" and short.charge_kwh == 0.0
    assert short.load_kwh == pytest.approx(0.744)


def test_covered_mains_and_none_sites_pass():
    load = np.full(HOURS, 2.0)
    assert charging_shortfall(load, np.full(HOURS, 2.5), charging="pv") is None
    # Mains is judged on the year only: a dark month is no concern for a grid charger.
    charge = np.full(HOURS, 10.0)
    charge[:MONTH_HOURS[0]] = 0.0
    assert charging_shortfall(load, charge, charging="mains") is None
    # Primary-cell sites have no charging source by design.
    assert charging_shortfall(load, np.zeros(HOURS), charging="none") is None


def test_polar_night_month_falls_short_with_real_pv():
    # At 71.3 N the sun stays below the horizon for weeks around the December solstice
    # (polar night north of the Arctic Circle, 66.6 N: common practice), so a PV array
    # that covers a 1 W load over the year still falls short in December.
    from planner.climate import load_climate
    from planner.energy.pv import pv_dc_power_w

    year = load_climate("polar-coast")
    pv = pv_dc_power_w(year, array_wp=100.0, tilt_deg=86.0, azimuth_deg=180.0)
    short = charging_shortfall(np.full(HOURS, 1.0), pv, charging="pv")
    assert monthly_energy_kwh(pv).sum() > 8.76
    assert short is not None and short.period in ("December", "January")


REPO = Path(__file__).resolve().parents[1]


def test_plan_says_so_per_site_everywhere(tmp_path):
    # The example of docs/energy.md: an off-grid shelter with a 42 Wp panel in a polar
    # climate. Console, JSON warnings, Sites sheet (limiting cause) and Cautions sheet
    # carry both numbers.
    from planner.cli import cli

    (tmp_path / "sites.csv").write_text(
        "id,region,climate,enclosure,load_w,charging,pv_wp,autonomy_days\n"
        "P-1,coast,polar-coast,shelter,5,pv,42,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\nhorizon_years = 10\n'
                                     '[candidates]\nchemistries = ["lfp"]\noversize_factors = [1.0]\n'
                                     '[output]\nsensitivity = false\n')
    result = CliRunner().invoke(cli, ["plan", str(tmp_path / "s.toml"), "--out", str(tmp_path / "p.xlsx"),
                                      "--json", str(tmp_path / "p.json")])
    site = json.loads((tmp_path / "p.json").read_text())["sites"][0]
    # a site that loses more than 1 % of its load is not served: exit code 3 (README), and
    # the Needs attention sheet puts it first with the two numbers in its fix
    share = site["unserved_wh_per_year"] / (site["daily_load_wh"] * 365)
    assert share > 0.01 and result.exit_code == 3, (share, result.output)
    warning = site["warnings"][0]
    assert warning.startswith(SHORTFALL_CAUSE + ": over the year it offers")
    assert site["limiting_cause"].startswith(SHORTFALL_CAUSE + " (the year: ")
    assert f"CHARGING SHORT P-1: {warning}" in result.output
    book = openpyxl.load_workbook(tmp_path / "p.xlsx")
    texts = {ws.title: " ".join(str(c.value) for row in ws.iter_rows() for c in row if c.value is not None)
             for ws in book.worksheets}
    assert site["limiting_cause"] in texts["Sites"]
    assert warning in texts["Cautions"]
    assert "1 not served" in texts["Needs attention"] or "0 of 1 sites served" in texts["Needs attention"]
    assert "a larger charging source: over the year it offers" in texts["Needs attention"]
