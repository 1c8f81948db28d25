"""The study-file and sites-table vocabulary: every key, its unit, default and range.

One table drives validation (:mod:`planner.study.loading`), the reference in
``docs/study-file.md``, the starter study written by ``planner new`` and the
inputs listed in the workbook's assumptions sheet, so the four can never drift apart.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from typing import Any

REQUIRED = object()


@dataclass(frozen=True)
class Field:
    """One key of the study file or one column of the sites table."""

    name: str
    kind: str  # "float", "int", "str", "bool", "months", "floats", "strs", "date", "timestamp"
    default: Any = REQUIRED
    unit: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: bool = False
    choices: tuple[str, ...] | None = None
    doc: str = ""

    @property
    def required(self) -> bool:
        return self.default is REQUIRED

    def expectation(self) -> str:
        """Plain words for what a valid value looks like, for error messages."""
        what = {
            "float": "a number",
            "int": "a whole number",
            "str": "text",
            "bool": "true or false",
            "months": "months 1-12 (e.g. 6-9 or 5;6;7)",
            "floats": "a list of numbers (in a table cell: separated by ';')",
            "strs": "a list of names",
            "date": "a date YYYY-MM-DD",
            "timestamp": "a date and time YYYY-MM-DD HH:MM or YYYY-MM-DD HH:MM:SS",
        }[self.kind]
        if self.choices:
            return "one of " + ", ".join(self.choices)
        bounds = []
        if self.minimum is not None:
            bounds.append(f"{'>' if self.exclusive_minimum else '>='} {self.minimum:g}")
        if self.maximum is not None:
            bounds.append(f"<= {self.maximum:g}")
        return what + (" " + " and ".join(bounds) if bounds else "")


def closest(name: str, valid) -> str:
    """A ``; did you mean 'x'?`` suffix for a mistyped key, or an empty string."""
    match = difflib.get_close_matches(name, list(valid), n=1, cutoff=0.6)
    return f"; did you mean '{match[0]}'?" if match else ""


F = Field

#: Largest amount any single money field may hold, in any currency. Far above any real
#: trip, pack or daily penalty (even in currencies of small unit), yet small enough that
#: sums over a fleet and a 60-year horizon stay finite and the optimizer's coefficients
#: stay within the range a MILP solver handles (HiGHS treats 1e20 as infinite).
MAX_MONEY = 1e12
#: Largest annual budget (a fleet-wide sum of many amounts).
MAX_BUDGET = 1e15

STUDY = (
    F("name", "str", "", doc="Title shown in the plan; defaults to the file name."),
    F("sites_file", "str", doc="Sites table (CSV or XLSX), relative to the study file."),
    F("horizon_years", "int", 20, "years", 1, 60, doc="Planning horizon."),
    F("discount_rate_frac", "float", 0.03, "1/year", 0.0, 0.5,
      doc="Real discount rate (NIST Handbook 135 convention: constant money, real rate)."),
    F("inflation_frac", "float", 0.0, "1/year", -0.1, 0.5,
      doc="General inflation: the plan's spending by year is also shown in money of each "
          "year (constant x (1 + inflation)^year); with nominal_rate_frac it also gives the "
          "real rate = (1 + nominal)/(1 + inflation) - 1."),
    F("nominal_rate_frac", "float", None, "1/year", 0.0, 0.5,
      doc="Optional nominal discount rate; when given it replaces discount_rate_frac."),
    F("currency", "str", "EUR", doc="Currency label written beside every amount."),
    F("start_year", "int", 2027, "calendar year", 1990, 2100,
      doc="Calendar year of the plan's year 0; ages of installed packs count to it."),
    F("warming_k", "float", 0.0, "K", -5.0, 10.0,
      doc="Added to every hourly air temperature (climate-change sensitivity)."),
    F("report_soh_frac", "float", 0.8, "fraction", 0.5, 0.99,
      doc="State of health at which the plan also reports each chosen pack's years "
          "(years_to_report_soh, Sites column 'Years to ... SOH'); lives and replacements use "
          "each site's own end of life (eol_soh_frac)."),
)

CANDIDATES = (
    F("chemistries", "strs", ("vrla", "lfp", "nmc", "lto", "lisocl2"),
      doc="Chemistries the optimizer may choose from."),
    F("oversize_factors", "floats", (1.0, 1.25, 1.5, 2.0, 3.0), "x 1x size", 1.0, 10.0,
      doc="Pack sizes tried, as multiples of the 1x reference size."),
    F("aging_factor", "float", 1.25, "factor", 1.0, 2.0,
      doc="IEEE 1013 aging factor in the 1x size (1.25: end of life at 80 % capacity)."),
    F("design_margin", "float", 1.10, "factor", 1.0, 2.0,
      doc="Design margin in the 1x size (IEEE 1013 practice: 1.10-1.15)."),
    F("lead_acid_temperature_factor", "str", "datasheet", choices=("datasheet", "ieee485"),
      doc="VRLA cold correction in the 1x size: the chemistry's low-rate datasheet curve "
          "(about 1.18 at 0 °C; telemetry packs discharge over days) or IEEE 485 Table 1 "
          "(about 1.40 at 0 °C, written for 1-8 h rates; more conservative)."),
    F("load_growth_step_years", "int", 5, "years", 1, 30,
      doc="With a site's load growth: the load is re-simulated in steps of this many years; a "
          "pack installed in a step is designed for the load at the step's end."),
    F("design_changes", "bool", True,
      doc="A replacement may install any candidate design of the site (false: a site keeps "
          "the design of its first new pack)."),
)

COSTS = (
    F("trip_cost", "float", 2500.0, "currency/trip", 0.0, MAX_MONEY,
      doc="Mobilisation cost of one planned trip to a region (vehicle, helicopter, travel)."),
    F("site_visit_cost", "float", 150.0, "currency/site", 0.0, MAX_MONEY,
      doc="Extra cost of each site visited on a trip."),
    F("labour_hours_per_replacement", "float", 3.0, "h", 0.0, 200.0,
      doc="Crew hours to swap one pack."),
    F("labour_rate_per_h", "float", 85.0, "currency/h", 0.0, MAX_MONEY),
    F("disposal_per_kg", "float", 1.5, "currency/kg", 0.0, MAX_MONEY,
      doc="Disposal or recycling of a removed pack."),
    F("unplanned_trip_cost", "float", None, "currency/trip", 0.0, MAX_MONEY,
      doc="Cost of an emergency trip after a failure; default 1.5 x the region's trip cost."),
    F("downtime_cost_per_day", "float", 200.0, "currency/day", 0.0, MAX_MONEY,
      doc="Penalty for each day a site is off air."),
    F("illustrative", "bool", True,
      doc="Mark the costs as illustrative in the workbook (set false for quoted prices)."),
)

PRICE = (
    F("price_per_kwh", "float", None, "currency/kWh", 0.0, MAX_MONEY,
      doc="Pack price per nominal kWh; default the chemistry library's illustrative price."),
    F("fixed_price", "float", 0.0, "currency/pack", 0.0, MAX_MONEY,
      doc="Fixed part of a pack's price (enclosure, BMS, cabling)."),
    F("price_trend_frac_per_year", "float", 0.0, "1/year", -0.5, 0.5,
      doc="Real yearly change of the pack price (-0.03: 3 % cheaper each year); a pack bought "
          "in year t costs price x (1 + change)^t."),
)

REGION = (
    F("trip_cost", "float", None, "currency/trip", 0.0, MAX_MONEY, doc="Default [costs].trip_cost."),
    F("site_visit_cost", "float", None, "currency/site", 0.0, MAX_MONEY, doc="Default [costs].site_visit_cost."),
    F("access_months", "months", tuple(range(1, 13)), "month numbers",
      doc="Months when crews can reach the region's sites."),
)

LIMITS = (
    F("crew_site_visits_per_year", "int", 0, "sites/year", 0, 1_000_000, doc="0 means no limit."),
    F("annual_budget", "float", 0.0, "currency/year", 0.0, MAX_BUDGET, doc="0 means no limit."),
    F("payload_kg_per_trip", "float", 0.0, "kg", 0.0, 1e6, doc="0 means no limit."),
)

#: Thermal measure ids (planner.site.thermal_measures prices each; a test keeps the two equal).
THERMAL_MEASURE_IDS = ("insulated-box", "heater", "heater-box", "sun-shield", "vault")

THERMAL = (
    F("measures", "strs", ("insulated-box", "heater-box", "sun-shield", "vault"),
      doc="Thermal measures a new installation may add where they can matter (heaters and the "
          "box where the battery gets too cold to charge, shade, a vault and the box where it gets "
          "hot); [\"none\"] switches them off. Ids: insulated-box, heater (a pad alone), heater-box, "
          "sun-shield, vault."),
    F("heater_setpoint_c", "float", 5.0, "°C", -30.0, 30.0,
      doc="Thermostat of an added battery heater (lithium-ion is charged above 0 °C)."),
    F("heater_power_w", "float", 20.0, "W", 1.0, 2000.0,
      doc="Electric power of an added heater pad; its energy is part of the load, hour by hour."),
    F("heater_control", "str", "charging", choices=("charging", "thermostat"),
      doc="charging: an added heater runs on the charging source's surplus over the load (up to its "
          "power) while the battery is below the setpoint, warming the pack to accept charge; "
          "thermostat: it holds the setpoint day and night from the battery."),
    F("heater_price", "float", 120.0, "currency", 0.0, MAX_MONEY, doc="Heater pad with thermostat."),
    F("heater_labour_h", "float", 1.0, "h", 0.0, 200.0, doc="Crew hours to fit a heater."),
    F("box_ua_w_k", "float", 1.0, "W/K", 0.05, 100.0,
      doc="Conductance of the insulated battery box (in series with the enclosure's)."),
    F("box_price", "float", 150.0, "currency", 0.0, MAX_MONEY, doc="Insulated battery box."),
    F("box_labour_h", "float", 1.0, "h", 0.0, 200.0, doc="Crew hours to fit the box."),
    F("shield_price", "float", 250.0, "currency", 0.0, MAX_MONEY, doc="Sun shield or canopy over a cabinet."),
    F("shield_labour_h", "float", 2.0, "h", 0.0, 200.0, doc="Crew hours to fit a sun shield."),
    F("vault_price", "float", 2500.0, "currency", 0.0, MAX_MONEY, doc="Buried vault for the battery, dug in."),
    F("vault_labour_h", "float", 16.0, "h", 0.0, 500.0, doc="Crew hours to dig in and move to a vault."),
)

SOLVER = (
    F("name", "str", "auto", choices=("auto", "highs", "cbc"),
      doc="MILP solver: HiGHS where installed, CBC otherwise."),
    F("time_limit_s", "float", 60.0, "s", 1.0, 86400.0),
    F("gap_rel_frac", "float", 0.005, "fraction", 0.0, 0.5, doc="Relative optimality gap to stop at."),
)

LOCATION = (
    F("station_distance_limit_km", "float", 150.0, "km", 1.0, 20000.0,
      doc="A site farther than this from its nearest station (a climate of [climates.<name>] "
          "with stations) gets a warning naming the distance. A typical year stands for its "
          "region's monthly statistics, not its day-to-day weather; monthly temperature and "
          "irradiation stay similar over roughly 100-200 km of open terrain (from memory)."),
    F("station_altitude_limit_m", "float", 500.0, "m", 1.0, 9000.0,
      doc="A site whose altitude differs from its station's (or its named normals') by more "
          "than this gets a warning with the shift applied: real gradients near the ground "
          "range about 4-8 K/km and valleys hold cold air on clear nights (from memory), so "
          "500 m leaves the standard-gradient shift about 1 K uncertain."),
    F("lapse_rate_k_per_km", "float", 6.5, "K/km", 0.0, 10.0,
      doc="Air temperature falls this much per km of altitude when a climate is moved to a "
          "site's altitude_m (ICAO standard atmosphere 6.5 K/km; 0 switches the shift off)."),
)

OUTPUT = (
    F("workbook", "str", "", doc="Workbook path; default output/<study file name>.xlsx."),
    F("json", "str", "", doc="Optional JSON path for the same plan."),
    F("fade_chart_sites", "int", 20, "sites", 0, 200,
      doc="Capacity-fade charts are drawn for this many of the most expensive sites."),
    F("sensitivity", "bool", True, doc="Re-solve for trip cost, discount rate and warming."),
)

# The user's ceiling on service per chemistry. Seals, electronics, imbalance and standby
# drain have lives of their own per site (chemistries.toml [<id>.components]); the lower
# of the ceiling and those applies.
SERVICE_LIFE = tuple(
    F(chem_id, "float", None, "years", 1.0, 60.0,
      doc=f"Longest service planned for a {chem_id} pack (a vendor's design life or warranty); "
          "the lower of it and the component lives applies; blank = no ceiling "
          "(`planner life --list` shows the component lives' sources).")
    for chem_id in ("vrla", "lfp", "nmc", "lto", "lisocl2"))

# Field records of the packs in service (planner.evidence): capacity tests and battery
# logs update each site's fade, and the plan says where one more test pays.
FIELD_DATA = (
    F("capacity_tests_file", "str", "",
      doc="Capacity-test table (CSV or XLSX, columns below), relative to the study file; "
          "blank = none."),
    F("battery_log_file", "str", "",
      doc="Battery log (CSV, columns below), relative to the study file; blank = none."),
    F("lead_acid_correction", "str", "iec60896-21", choices=("iec60896-21", "ieee450-time"),
      doc="How a lead-acid test is corrected to 25 °C: the IEC 60896-21 rule C = Ca / (1 + "
          "λ(θ - 25)) (λ 0.006/K at 10-20 h rates, 0.01/K at 1-3 h, interpolated between) or "
          "the IEEE 450 time-adjusted method (vented-cell factors). Tests run by the IEEE 450 "
          "rate-adjusted method are already corrected: mark them corrected_to_25c = yes."),
    F("test_labour_h", "float", 6.0, "h", 0.0, 200.0,
      doc="Crew hours one capacity test takes on site (discharge, recharge, records): its "
          "cost where a visit is planned anyway."),
    F("test_value", "bool", True,
      doc="Rank the sites with a pack in service by the value of one more capacity test "
          "(workbook sheet Field evidence, JSON field_data.test_value)."),
)

SECTIONS = {
    "study": STUDY,
    "candidates": CANDIDATES,
    "costs": COSTS,
    "service_life": SERVICE_LIFE,
    "limits": LIMITS,
    "thermal": THERMAL,
    "location": LOCATION,
    "solver": SOLVER,
    "output": OUTPUT,
    "field_data": FIELD_DATA,
}
# Sections whose sub-tables are named by the user: [prices.<chemistry>], [regions.<name>],
# [climates.<name>] (options for a user climate file, checked by planner.climate).
NAMED_SECTIONS = {"prices": PRICE, "regions": REGION, "climates": None}

SITE_COLUMNS = (
    F("id", "str", doc="Unique site id."),
    F("name", "str", "", doc="Site name; defaults to the id."),
    F("region", "str", doc="Trip region: one planned trip serves every site of its region visited that year."),
    F("climate", "str", doc="Bundled climate name, a [climates.<name>] entry (a weather file, a "
      "folder of station files or a table of monthly normals), or an EPW/TMY3/TMY2 file."),
    F("latitude_deg", "float", None, "deg N", -90.0, 90.0,
      doc="Site latitude (south negative). With longitude_deg: sun, irradiance and PV at the "
          "site's own position; required by station-folder and normals climates."),
    F("longitude_deg", "float", None, "deg E", -180.0, 180.0,
      doc="Site longitude (west negative); given with latitude_deg."),
    F("altitude_m", "float", None, "m", -500.0, 8850.0,
      doc="Site altitude above sea level: the climate's air temperature is moved to it by "
          "[location].lapse_rate_k_per_km; blank = the climate's own altitude."),
    F("utc_offset_h", "float", None, "h", -12.0, 14.0,
      doc="Local standard time minus UTC at the site (with coordinates); blank = the nautical "
          "zone round(longitude / 15)."),
    F("normals_id", "str", "",
      doc="Row of the site's normals table (a climate with normals); blank = the site's id."),
    F("enclosure", "str", "cabinet-sun", choices=("cabinet-sun", "cabinet-shade", "vault", "shelter"),
      doc="Enclosure kind (sets the thermal model's defaults)."),
    F("load_w", "float", unit="W", minimum=0.0, maximum=5000.0, doc="Continuous load (mean power)."),
    F("burst_w", "float", 0.0, "W", 0.0, 20000.0, doc="Extra power during a transmit burst."),
    F("burst_s", "float", 0.0, "s", 0.0, 3600.0, doc="Length of each burst."),
    F("burst_every_min", "float", 0.0, "min", 0.0, 1440.0, doc="Time between burst starts; 0 = no bursts."),
    F("load_schedule_w", "floats", (), "W", 0.0, 20000.0,
      doc="Extra load per hour of the day: 24 values separated by ';' (hour 0 first)."),
    F("load_monthly_factors", "floats", (), "factor", 0.0, 10.0,
      doc="Multiplies the whole load month by month: 12 values separated by ';'."),
    F("load_file", "str", "",
      doc="Hourly load CSV (8,760 rows, column load_w in W), added to the other load terms; "
          "relative to the study file."),
    F("charging", "str", "pv", choices=("pv", "mains", "none"), doc="Charging source."),
    F("pv_wp", "float", 0.0, "Wp", 0.0, 20000.0, doc="PV array size (with charging = pv)."),
    F("pv_tilt_deg", "float", None, "deg", 0.0, 90.0, doc="Blank: |latitude| + 15, capped at 90 (favours winter)."),
    F("pv_azimuth_deg", "float", None, "deg", 0.0, 360.0, doc="Blank: facing the equator (180 north of it, 0 south)."),
    F("pv_snow_months", "months", (), "month numbers",
      doc="Months the array is taken as snow-covered (no PV); blank = none."),
    F("outages_per_year", "float", 0.0, "1/year", 0.0, 365.0, doc="Mains outages (with charging = mains)."),
    F("outage_mean_h", "float", 0.0, "h", 0.0, 2000.0, doc="Mean mains outage duration."),
    F("load_growth_frac_per_year", "float", 0.0, "1/year", -0.2, 0.5,
      doc="Yearly growth of the site's own load (0.05: 5 % a year); later packs are designed for it."),
    F("autonomy_days", "float", unit="days", minimum=0.0, maximum=60.0, exclusive_minimum=True,
      doc="Days the pack must carry the load with no charging."),
    F("system_voltage_v", "float", 12.0, "V", 1.0, 60.0, doc="Nominal DC bus voltage."),
    F("access_months", "months", (), "month numbers", doc="Months the site can be reached; blank = its region's."),
    F("heater_setpoint_c", "float", None, "°C", -40.0, 40.0,
      doc="Battery heater thermostat; blank = no heater."),
    F("thermal_measures", "str", "",
      doc="Thermal measures this site may use, separated by ';' ('none': none); blank = [thermal].measures."),
    F("electronics_heat_w", "float", None, "W", 0.0, 5000.0,
      doc="Heat released in the enclosure by electronics; blank = the load's mean power."),
    F("warming_k", "float", 0.0, "K", -5.0, 10.0, doc="Added to the study's warming offset."),
    F("condensation", "str", "auto", choices=("auto", "dry", "occasional", "frequent"),
      doc="How often moisture condenses on the pack (it ages seals and terminals): auto = "
          "from the weather file's dew point when it has one, else by enclosure (shelter "
          "dry, vault frequent, cabinets occasional)."),
    F("existing_chemistry", "str", "", doc="Chemistry of the pack installed today (blank: new pack at start)."),
    F("existing_capacity_wh", "float", 0.0, "Wh", 0.0, 1e7),
    F("existing_installed_year", "int", 0, "calendar year", 0, 2100),
    F("existing_soh_frac", "float", 0.0, "fraction", 0.0, 1.0,
      doc="Measured capacity / rated capacity, if known (0: predict from age)."),
    F("notes", "str", "", doc="Free text, copied to the plan."),
)


TEST_KINDS = ("acceptance", "performance", "service", "partial")

# One row per capacity test of a pack in service ([field_data].capacity_tests_file).
TEST_COLUMNS = (
    F("site_id", "str", doc="Site id of the sites table."),
    F("test_date", "date", doc="Day of the test; before the study's start_year and not before "
                               "the pack's installation year."),
    F("kind", "str", "performance", choices=TEST_KINDS,
      doc="acceptance (new pack: fixes its initial capacity), performance or service (run to "
          "the end voltage), partial (stopped early: capacity at least what was delivered)."),
    F("duration_h", "float", unit="h", minimum=0.0, exclusive_minimum=True, maximum=1000.0,
      doc="Duration of the discharge."),
    F("capacity_ah", "float", None, "Ah", 0.0, 1e6,
      doc="Charge delivered; give this or capacity_pct (at most 150 % of rated)."),
    F("capacity_pct", "float", None, "% of rated", 0.0, 150.0,
      doc="Capacity delivered as a percentage of the pack's rated capacity."),
    F("start_temp_c", "float", None, "°C", -40.0, 70.0,
      doc="Battery (electrolyte or cell) temperature at the start; needed unless corrected_to_25c."),
    F("corrected_to_25c", "bool", False,
      doc="yes when the figure is already corrected to 25 °C (for example an IEEE 450 "
          "rate-adjusted test); it is then used as given."),
    F("rate_h", "float", None, "h", 0.0, 1000.0, exclusive_minimum=True,
      doc="Discharge rate in hours of rated capacity (10 for a C/10 test); blank: from the "
          "current, the power or the duration."),
    F("discharge_current_a", "float", None, "A", 0.0, 1e5, exclusive_minimum=True,
      doc="Constant discharge current, if the test ran at one."),
    F("discharge_power_w", "float", None, "W", 0.0, 1e7, exclusive_minimum=True,
      doc="Constant discharge power, if the test ran at one."),
    F("end_voltage_v_per_cell", "float", None, "V/cell", 0.0, 5.0, exclusive_minimum=True,
      doc="End voltage per cell (the string's mean at the end of the test)."),
    F("stopped_early", "bool", False,
      doc="yes when the test ended before the end voltage (treated like kind = partial)."),
    F("lowest_cell_v", "float", None, "V", 0.0, 5.0,
      doc="Lowest cell (or block, per cell) voltage at the end of the test."),
    F("lowest_cell_id", "str", "", doc="Which cell or block read lowest."),
    F("tested_pack_installed_year", "int", None, "calendar year", 1900, 2100,
      doc="Installation year of the pack tested, if not the pack in service today (a pack "
          "replaced since: the row is skipped with a warning)."),
    F("notes", "str", "", doc="Free text."),
)

# One row per logged sample ([field_data].battery_log_file), sorted by time per site.
LOG_COLUMNS = (
    F("timestamp", "timestamp", doc="Local standard time of the sample, before the study's start."),
    F("site_id", "str", doc="Site id of the sites table."),
    F("pack_voltage_v", "float", unit="V", minimum=0.0, maximum=1000.0, doc="Pack voltage."),
    F("current_a", "float", unit="A", minimum=-1e5, maximum=1e5,
      doc="Pack current, positive while charging."),
    F("battery_temp_c", "float", unit="°C", minimum=-60.0, maximum=90.0, doc="Battery temperature."),
)

MONTHS = ("jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec")
CLOUDINESS = ("clear", "few", "scattered", "broken", "overcast")

#: Columns of a monthly-normals table ([climates.<name>] normals = "file").
NORMALS_COLUMNS = (
    F("id", "str", doc="A site id, or a name sites give in their normals_id column."),
    *(F(f"tmin_{m}_c", "float", unit="°C", minimum=-90.0, maximum=60.0,
        doc="Mean daily minimum air temperature of the month." if m == "jan" else "")
      for m in MONTHS),
    *(F(f"tmax_{m}_c", "float", unit="°C", minimum=-90.0, maximum=60.0,
        doc="Mean daily maximum air temperature of the month." if m == "jan" else "")
      for m in MONTHS),
    *(F(f"ghi_{m}_kwh_m2_day", "float", None, "kWh/m² per day", 0.0, 12.0,
        doc="Monthly mean daily global horizontal irradiation (all 12 or none)."
        if m == "jan" else "")
      for m in MONTHS),
    F("cloudiness", "str", "", choices=CLOUDINESS,
      doc="Instead of irradiation: the usual cloud amount (clear 0, few 1-2, scattered 3-4, "
          "broken 5-7, overcast 8 oktas), turned into clearness by Kasten & Czeplak (1980)."),
    F("altitude_m", "float", None, "m", -500.0, 8850.0,
      doc="Altitude the normals were measured at; blank = the site's own (no lapse shift)."),
    F("wind_speed_m_s", "float", 2.0, "m/s", 0.0, 40.0, doc="Mean wind speed (constant)."),
    F("day_to_day_sd_k", "float", 2.0, "K", 0.0, 10.0,
      doc="Standard deviation of the day-to-day anomaly of daily mean temperature."),
    F("notes", "str", "", doc="Free text (where the normals come from)."),
)


def reference_markdown() -> str:
    """The study-file reference (``docs/study-file.md``), generated from the tables above."""

    def rows(specs):
        out = ["| key | unit | default | allowed | meaning |", "|---|---|---|---|---|"]
        for spec in specs:
            default = "required" if spec.required else _shown_default(spec.default)
            out.append(f"| `{spec.name}` | {spec.unit or ''} | {default} | {spec.expectation()} "
                       f"| {spec.doc} |")
        return out

    lines = [
        "# Study file reference",
        "",
        "Generated from `planner/study/schema.py` (a test keeps the two equal). A study is a TOML file",
        "with the sections below, plus a sites table (CSV or XLSX) named by `[study].sites_file`.",
        "Unknown keys, sections and columns are errors (the closest valid name is suggested).",
        "Money is in `[study].currency`, in constant (real) terms. Every money field is at most",
        f"{MAX_MONEY:g} and `[limits].annual_budget` at most {MAX_BUDGET:g}, in any currency: far above",
        "any real amount, and small enough that fleet sums stay finite for the optimizer.",
        "",
        "A `[regions.<region>]` or `[climates.<name>]` table that no site uses is an error (the",
        "closest name of the sites is suggested); sites in a region without a table use the",
        "`[costs]` defaults.",
        "",
        "Numbers in the sites table are plain decimals: an optional sign, digits and an optional",
        "decimal point (`2`, `-1.5`, `0.25`). Exponents (`1e1`), digit separators (`1_0`, `1,000`),",
        "`inf` and `nan` are errors; months are whole numbers 1-12. Every number of the study, the",
        "sites table, a climate declaration or a command-line option goes through one parser",
        "(`planner.inputs.numbers`): non-finite values and huge integers are refused like any value out of",
        "range.",
        "",
        "Every mistake of the study and its sites table is reported in one run, one line each (at",
        "most 20, then a count of the rest); a row with a bad cell skips the rules that join",
        "several columns. Rows are numbered as a spreadsheet shows them: the header is row 1 and",
        "blank rows count (a row after a value spanning several lines also gives its line in an",
        "editor). Rows whose cells are all blank are skipped. A row with more fields than the",
        "header, a header name used twice and an unnamed header cell above values are errors",
        "naming the row or the column's position.",
        "",
        "Rules that join keys or columns: with `nominal_rate_frac`, the real rate",
        "(1 + nominal)/(1 + inflation) - 1 must lie from -1.5 % to 50 % a year (below about -1.65 %",
        "a pack's residual value at a 60-year horizon would be worth more today than its price,",
        "and the total present cost loses its meaning; `planner.economics.MIN_REAL_RATE_FRAC`);",
        "`existing_capacity_wh`, `existing_installed_year` and `existing_soh_frac` need",
        "`existing_chemistry`; a `system_voltage_v` below one cell of every candidate chemistry",
        "(or of the pack in service) is an error, and a chemistry whose single cell is above it is",
        "not offered at that site (the plan says so in the site's warnings); `thermal_measures`",
        "and `[thermal].measures` take `none` alone or known ids. A measured `existing_soh_frac`",
        "caps the pack's health from the study's start: the pack continues from the point of its",
        "simulated fade curve at that health, or, when the measurement is below the whole curve,",
        "fades from it at the curve's relative pace (`planner.aging.measured`).",
        "",
        "Paths are relative to the study file's real folder: a study opened through a symbolic",
        "link reads its tables and writes its `[output]` files beside the file the link points to.",
        "`[output].json = \"-\"` prints the JSON on standard output, as `--json -` does.",
        "",
        "Input files (the study, its sites table, climate and load files) must be regular files of",
        f"at most {_input_limit_mib()} MiB each; a folder, device, named pipe or socket is refused before",
        "anything is read. A study saved with a UTF-8 byte-order mark is read as without it.",
        "",
    ]
    for section, specs in SECTIONS.items():
        lines += [f"## [{section}]", "", *rows(specs), ""]
    lines += ["## [prices.<chemistry>]", "",
              "Optional, one table per chemistry id (`vrla`, `lfp`, `nmc`, `lto`, `lisocl2`).", "",
              *rows(NAMED_SECTIONS["prices"]), ""]
    lines += ["## [regions.<region>]", "",
              "Optional, one table per region named in the sites table.", "",
              *rows(NAMED_SECTIONS["regions"]), ""]
    lines += ["## [climates.<name>]", "",
              "Optional, one table per user climate; sites name it in their `climate` column. Each",
              "holds exactly one of:", "",
              "- `file`: a weather file (EPW, TMY3, TMY2 or plain CSV) and its reading options",
              "  (`docs/climate.md`);",
              "- `stations`: a folder of weather files; each site (with `latitude_deg` and",
              "  `longitude_deg`) takes the nearest station by great-circle distance, its air",
              "  temperature moved to the site's `altitude_m` (`[location]`);",
              "- `normals`: a table (CSV or XLSX) of monthly normals, columns below; each site",
              "  (with coordinates) takes the row named by its `normals_id` or its `id`.", "",
              "Paths are relative to the study file.", ""]
    lines += ["## Sites table columns", "",
              "One row per site. Months are written `6-9`, `11-3` (wrapping), `5;6;7` or `all`.", "",
              *rows(SITE_COLUMNS), ""]
    lines += ["## Capacity-test table columns", "",
              "One row per discharge test of a pack in service (`[field_data].capacity_tests_file`,",
              "CSV or XLSX). Dates are days of the calendar; a test on or after 1 January of",
              "`start_year`, or before the pack's installation year, is an error; a test of a pack",
              "replaced since (`tested_pack_installed_year` earlier than the site's",
              "`existing_installed_year`) is skipped with a warning. How tests are used:",
              "`docs/field-data.md`.", "",
              *rows(TEST_COLUMNS), ""]
    lines += ["## Battery-log columns", "",
              "Samples of pack voltage, current and temperature (`[field_data].battery_log_file`,",
              "CSV), sorted by time within each site, no time twice. Samples before the pack's",
              "installation year are skipped with a warning (a pack replaced since).", "",
              *rows(LOG_COLUMNS), ""]
    lines += ["## Normals table columns", "",
              "One row per site or per named set of normals; every month of `tmin_<mon>_c` and",
              "`tmax_<mon>_c` (`jan` ... `dec`) is required, the minimum below the maximum. The",
              "same columns exist for every month where the first one is described.", "",
              *rows(NORMALS_COLUMNS), ""]
    lines += ["## Complete example", "", "`scenarios/corvale.toml` with `scenarios/corvale_sites.csv`;",
              "`planner new DIR` writes a commented starter with every key.", ""]
    return "\n".join(lines)


def _input_limit_mib() -> int:
    from planner.fileio import MAX_INPUT_BYTES

    return MAX_INPUT_BYTES // 2**20


def _shown_default(value) -> str:
    if isinstance(value, tuple):
        return "[" + ", ".join(str(v) for v in value) + "]" if value else "(blank)"
    if isinstance(value, bool):
        return "true" if value else "false"
    if value == "" or value is None:
        return "(blank)"
    return f"{value:g}" if isinstance(value, float) else str(value)
