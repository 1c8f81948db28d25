"""Normalising what a reader found into an hour-start, local-standard, degC typical year.

Every reader (:mod:`planner.climate.readers`, :mod:`planner.climate.csv_reader`) only
extracts raw columns and timestamps into a :class:`RawSeries`; all conversions
(hour-ending to hour-start labels, time zone to local standard time, tenths of a degree
and degrees Fahrenheit to degC, 29 February, sub-hourly averaging, multi-year
condensation, gaps, plausibility ranges, missing irradiance components) happen here, in
:func:`normalise`.
"""

from __future__ import annotations

import dataclasses
import warnings
import zoneinfo

import numpy as np
import pandas as pd

from planner import HOURS_PER_YEAR
from planner.climate.solar import clear_sky_ghi, split_ghi
from planner.climate.typical_year import ClimateWarning, TypicalYear, hour_starts
from planner.errors import InputError
from planner.inputs.numbers import NumberError, parse_number, shown

#: Plausible hourly air temperature, degC (beyond the recorded world extremes of about
#: -89 and +57 degC, common practice).
TEMP_RANGE_C = (-90.0, 60.0)
#: Hour-average irradiance above this is not physical at the surface (solar constant
#: ~1361 W/m2, Kopp & Lean 2011, Geophys. Res. Lett. 38, L01706).
IRRADIANCE_MAX_W_M2 = 1400.0
WIND_RANGE_M_S = (0.0, 75.0)
#: Gaps up to this many hours are interpolated (with a ClimateWarning); longer ones
#: are errors.
MAX_GAP_H = 6
#: Without an irradiance column, GHI = this fraction x Ineichen clear-sky GHI. Annual
#: ratios of measured to clear-sky GHI are about 0.6-0.8 at most inhabited places
#: (from memory); 0.7 is a middle value. Declare ``clearness_frac`` to change it.
DEFAULT_CLEARNESS_FRAC = 0.7
#: Without a wind column, a constant wind speed (m/s); only the report uses wind.
DEFAULT_WIND_M_S = 2.0


@dataclasses.dataclass
class RawSeries:
    """What a reader found in a file, before any conversion.

    ``times`` are naive timestamps (or tz-aware when the file carried offsets);
    ``rows`` are the 1-based file line numbers of each record, for messages.
    """

    file: str
    name: str
    description: str
    times: pd.DatetimeIndex
    rows: np.ndarray
    marks: str                      # "start" or "end" of the interval
    temp: np.ndarray
    temp_unit: str                  # "C", "F" or "0.1C"
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    utc_offset_h: float
    time_zone: str | float = "local-standard"
    ghi: np.ndarray | None = None
    dni: np.ndarray | None = None
    dhi: np.ndarray | None = None
    wind: np.ndarray | None = None
    wind_scale: float = 1.0
    dew: np.ndarray | None = None     # dew point, in temp_unit (optional)
    clearness_frac: float = DEFAULT_CLEARNESS_FRAC
    multi_year: str | int | None = None
    typical: bool = False           # a typical-year file: calendar years are meaningless


def first_line(err: BaseException) -> str:
    """The first line of an exception's text (at most 160 characters), for one-line messages."""
    text = str(err).strip().splitlines()
    return text[0][:160] if text else ""


# --------------------------------------------------------------------------- normalise

_MONTH_START_DOY = np.cumsum([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30])


def _to_local_standard(raw: RawSeries) -> pd.DatetimeIndex:
    """Timestamps as naive local standard time."""
    times = raw.times
    offset = pd.Timedelta(hours=raw.utc_offset_h)
    if times.tz is not None:
        return (times.tz_convert("UTC").tz_localize(None) + offset)
    zone = raw.time_zone
    if zone in (None, "local-standard"):
        return times
    if isinstance(zone, (int, float)) and not isinstance(zone, bool):
        if not -12 <= zone <= 14:
            raise InputError(f"option 'time_zone' is {zone!r}; expected hours from -12 to 14",
                             source=raw.file)
        return times - pd.Timedelta(hours=float(zone)) + offset
    zone = str(zone)
    if zone.upper() == "UTC":
        return times + offset
    try:
        tz = zoneinfo.ZoneInfo(zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, TypeError):
        raise InputError(f"option 'time_zone' is {zone!r}; expected 'local-standard', 'UTC', "
                         "a number of hours or a zone name such as 'Europe/Vienna'",
                         source=raw.file) from None
    try:
        # Daylight-saving clocks repeat an hour in autumn: 'infer' uses the order of rows.
        aware = times.tz_localize(tz, ambiguous="infer", nonexistent="raise")
    except Exception as err:  # pytz/zoneinfo errors vary by pandas version
        raise InputError(f"timestamps cannot be placed in zone '{zone}' "
                         f"({first_line(err)}); expected clock times that exist in that "
                         "zone, in file order", source=raw.file) from None
    return aware.tz_convert("UTC").tz_localize(None) + offset


def _check_range(values, rows, lo, hi, what, where):
    if values is None:
        return
    bad = ~np.isnan(values) & ((values < lo) | (values > hi))
    if bad.any():
        i = int(np.argmax(bad))
        raise InputError(f"row {rows[i]}: {what} {values[i]:g} is outside {lo:g}...{hi:g}; "
                         "expected a plausible value (check the unit)", source=where)


#: Where a weather file's header may put a station, checked before any computation:
#: latitude and longitude by definition, UTC offsets in use run from -12 to +14 h, and
#: ground stations lie between the Dead Sea shore (about -430 m) and 9,000 m (common practice).
LOCATION_RANGES = {"latitude_deg": (-90.0, 90.0, "latitude"),
                   "longitude_deg": (-180.0, 180.0, "longitude"),
                   "altitude_m": (-500.0, 9000.0, "altitude (m)"),
                   "utc_offset_h": (-12.0, 14.0, "UTC offset (h)")}


def _check_location(raw: RawSeries) -> None:
    """The station's position and time zone, as the file's header gives them, are
    possible ones (an EPW header may say latitude 999)."""
    for key, (lo, hi, words) in LOCATION_RANGES.items():
        try:
            parse_number(getattr(raw, key), minimum=lo, maximum=hi, exponent=True)
        except NumberError:
            raise InputError(f"the header gives {words} {shown(getattr(raw, key))}; expected "
                             f"a number from {lo:g} to {hi:g}", source=raw.file) from None


def _interval(starts_or_ends: np.ndarray, raw: RawSeries) -> np.timedelta64:
    """The data interval: the most common spacing of consecutive timestamps; data coarser
    than hourly is refused (a typical year is hour by hour: interpolating 2-hourly
    readings would invent the hours between)."""
    if len(starts_or_ends) < 2:
        return np.timedelta64(3600, "s")
    diffs = np.diff(np.sort(starts_or_ends)).astype("timedelta64[s]").astype(np.int64)
    diffs = diffs[diffs > 0]
    if len(diffs) == 0:
        return np.timedelta64(3600, "s")
    values, counts = np.unique(diffs, return_counts=True)
    step = int(values[np.argmax(counts)])
    if step > 3600:
        raise InputError(f"timestamps are {step / 3600:g} h apart; expected hourly or finer "
                         "data", source=raw.file)
    return np.timedelta64(step, "s")


def normalise(raw: RawSeries) -> TypicalYear:
    """Turn what a reader found into an hour-start, local-standard, degC typical year.

    Steps, in order: check the station's position and UTC offset (an EPW header may say
    latitude 999); convert time zone to local standard time; move hour-ending labels
    to interval starts; reject duplicate timestamps; drop 29 February; convert units;
    check plausibility ranges; average sub-hourly records into hours; condense
    several years (``multi_year``); interpolate gaps of at most 6 h (with a
    :class:`ClimateWarning`), reject longer ones; fill missing irradiance components
    (clear-sky scaled GHI, Erbs decomposition).
    """
    where = raw.file
    _check_location(raw)
    times = _to_local_standard(raw).to_numpy().astype("datetime64[s]")
    rows = np.asarray(raw.rows)
    step = _interval(times, raw)
    if raw.marks == "end":
        times = times - step
    order = np.argsort(times, kind="stable")
    sorted_times = times[order]
    dup = np.nonzero(sorted_times[1:] == sorted_times[:-1])[0]
    if len(dup):
        a, b = sorted((int(rows[order[dup[0]]]), int(rows[order[dup[0] + 1]])))
        raise InputError(f"rows {a} and {b} have the same timestamp "
                         f"{pd.Timestamp(sorted_times[dup[0]])}; expected each time once",
                         source=where)

    temp = np.asarray(raw.temp, float)
    temp = {"C": temp, "F": (temp - 32.0) * 5.0 / 9.0, "0.1C": temp * 0.1}[raw.temp_unit]
    _check_range(temp, rows, *TEMP_RANGE_C, "air temperature (degC)", where)
    series = {"temp": temp}
    for key in ("ghi", "dni", "dhi"):
        values = getattr(raw, key)
        if values is not None:
            values = np.asarray(values, float)
            _check_range(values, rows, 0.0, IRRADIANCE_MAX_W_M2, f"{key.upper()} (W/m2)", where)
            series[key] = values
    if raw.wind is not None:
        wind = np.asarray(raw.wind, float) * raw.wind_scale
        _check_range(wind, rows, *WIND_RANGE_M_S, "wind speed (m/s)", where)
        series["wind"] = wind
    if raw.dew is not None:
        dew = np.asarray(raw.dew, float)
        dew = {"C": dew, "F": (dew - 32.0) * 5.0 / 9.0, "0.1C": dew * 0.1}[raw.temp_unit]
        # optional: an implausible dew point is dropped rather than refused
        series["dew"] = np.where((dew >= TEMP_RANGE_C[0]) & (dew <= TEMP_RANGE_C[1]), dew, np.nan)

    stamp = pd.DatetimeIndex(times)
    month, day = stamp.month.to_numpy(), stamp.day.to_numpy()
    keep = ~((month == 2) & (day == 29))
    doy = _MONTH_START_DOY[month - 1] + day - 1
    slot = doy * 24 + stamp.hour.to_numpy()
    year = stamp.year.to_numpy()
    if raw.typical:
        year = np.zeros_like(year)   # typical-year files mix source years by design
    slot, year, rows_k = slot[keep], year[keep], rows[keep]
    series = {k: v[keep] for k, v in series.items()}

    years = np.unique(year)
    # One year of data may straddle New Year (e.g. July to June): that is not multi-year.
    # Several calendar years claim the same hour of the year -> multi-year data.
    distinct = np.unique(year.astype(np.int64) * HOURS_PER_YEAR + slot) % HOURS_PER_YEAR
    multi = len(years) > 1 and len(slot) > 0 and np.bincount(distinct).max() > 1
    if multi:
        policy = raw.multi_year
        if policy is None:
            raise InputError(f"covers several years ({years.min()}-{years.max()}); declare "
                             "option 'multi_year' as 'typical-month', 'mean' or one of the "
                             "calendar years", source=where)
        if not isinstance(policy, str):
            if policy not in years:
                raise InputError(f"option 'multi_year' is {policy}; the file covers "
                                 f"{years.min()}-{years.max()}", source=where)
            pick = year == policy
            slot, year, rows_k = slot[pick], year[pick], rows_k[pick]
            series = {k: v[pick] for k, v in series.items()}
            years = np.array([policy])
            multi = False
    else:
        year = np.zeros_like(year)
        years = np.array([0])

    # Hour means per (year, slot): averages sub-hourly records into hours.
    n_years = len(years)
    year_index = np.searchsorted(years, year)
    flat = year_index * HOURS_PER_YEAR + slot
    grids = {}
    for key, values in series.items():
        ok = ~np.isnan(values)
        sums = np.bincount(flat[ok], weights=values[ok], minlength=n_years * HOURS_PER_YEAR)
        counts = np.bincount(flat[ok], minlength=n_years * HOURS_PER_YEAR)
        with np.errstate(invalid="ignore", divide="ignore"):
            grids[key] = (sums / counts).reshape(n_years, HOURS_PER_YEAR)
    first_row = np.full(n_years * HOURS_PER_YEAR, -1)
    first_row[flat[::-1]] = rows_k[::-1]
    first_row = first_row.reshape(n_years, HOURS_PER_YEAR)

    if multi and raw.multi_year == "mean":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN hours become gaps
            grids = {k: np.nanmean(g, axis=0) for k, g in grids.items()}
        first_row = np.where(first_row >= 0, first_row, np.iinfo(np.int64).max).min(axis=0)
        first_row = np.where(first_row == np.iinfo(np.int64).max, -1, first_row)
    elif multi:
        choice = _typical_months(grids["temp"])
        grids = {k: np.take_along_axis(g, choice[None, :], axis=0)[0] for k, g in grids.items()}
        first_row = np.take_along_axis(first_row, choice[None, :], axis=0)[0]
    else:
        grids = {k: g[0] for k, g in grids.items()}
        first_row = first_row[0]

    filled = {}
    repaired = []
    for key, values in grids.items():
        if key == "dew":
            # optional: a dew point with long gaps is left out, not an error
            try:
                filled[key], _ = _fill_gaps(values, key, first_row, where)
            except InputError:
                pass
            continue
        filled[key], gaps = _fill_gaps(values, key, first_row, where)
        if key == "temp":
            repaired = gaps
    if repaired:
        text = ", ".join(repaired[:10]) + (f" and {len(repaired) - 10} more" if len(repaired) > 10 else "")
        warnings.warn(f"{where}: interpolated {len(repaired)} short gap(s) of at most "
                      f"{MAX_GAP_H} h in air temperature: {text}", ClimateWarning, stacklevel=3)

    ghi, dni, dhi = _complete_irradiance(raw, filled.get("ghi"), filled.get("dni"),
                                         filled.get("dhi"))
    wind = filled.get("wind")
    source_note = raw.description
    if "ghi" not in filled:
        source_note += (f"; no irradiance in file: GHI = {raw.clearness_frac:g} x Ineichen "
                        "clear sky (estimate)")
    if wind is None:
        wind = np.full(HOURS_PER_YEAR, DEFAULT_WIND_M_S)
    return TypicalYear(
        name=raw.name, source=source_note, latitude_deg=raw.latitude_deg,
        longitude_deg=raw.longitude_deg, altitude_m=raw.altitude_m,
        utc_offset_h=raw.utc_offset_h, temp_air_c=filled["temp"], ghi_w_m2=ghi, dni_w_m2=dni,
        dhi_w_m2=dhi, wind_speed_m_s=wind, temp_dew_c=filled.get("dew"))


def _typical_months(temp_grid: np.ndarray) -> np.ndarray:
    """Which year supplies each hour: per calendar month the most typical year.

    ``typical-month`` keeps, for each calendar month, the year whose monthly mean air
    temperature is closest to the all-year mean of that month (the temperature part of
    the Sandia typical-meteorological-month selection, Hall, Prairie, Anderson & Boes
    1978, SAND78-1601; simplified: one variable, mean only). Months with less than 90 %
    of their hours are not candidates (if none has, the best covered one is used and
    its gaps are handled like any other). Month boundaries are not blended.
    """
    month_of_slot = np.repeat(np.searchsorted(_MONTH_START_DOY, np.arange(365), "right") - 1, 24)
    choice = np.zeros(HOURS_PER_YEAR, dtype=int)
    for m in range(12):
        cols = month_of_slot == m
        block = temp_grid[:, cols]
        coverage = np.mean(~np.isnan(block), axis=1)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            means = np.nanmean(block, axis=1)
        candidates = coverage >= 0.9
        if not candidates.any():
            candidates = coverage == coverage.max()
        target = np.nanmean(means[candidates])
        dist = np.where(candidates, np.abs(means - target), np.inf)
        choice[cols] = int(np.argmin(dist))
    return choice


def _fill_gaps(values: np.ndarray, key: str, first_row: np.ndarray, where: str):
    """Interpolate runs of <= MAX_GAP_H missing hours (cyclically); longer runs are errors."""
    missing = np.isnan(values)
    if not missing.any():
        return values, []
    if missing.all():
        raise InputError(f"no usable {key} values; expected hourly data", source=where)
    # Rotate so the series starts on a present hour: runs never wrap after that.
    start = int(np.argmin(missing))
    rolled = np.roll(missing, -start)
    edges = np.diff(np.concatenate([[0], rolled.astype(int), [0]]))
    run_starts = np.nonzero(edges == 1)[0]
    run_ends = np.nonzero(edges == -1)[0]
    labels = []
    times = hour_starts(0.0)
    for s, e in zip(run_starts, run_ends):
        length = e - s
        a, b = (s + start) % HOURS_PER_YEAR, (e - 1 + start) % HOURS_PER_YEAR
        span = f"{times[a]:%m-%d %H:00}-{times[b]:%m-%d %H:00}"
        if length > MAX_GAP_H:
            before = first_row[(a - 1) % HOURS_PER_YEAR]
            after = first_row[(b + 1) % HOURS_PER_YEAR]
            rows_text = f" (between rows {before} and {after})" if before > 0 and after > 0 else ""
            raise InputError(f"{key} missing for {length} h, {span}{rows_text}; expected gaps "
                             f"of at most {MAX_GAP_H} h", source=where)
        labels.append(f"{span} ({length} h)")
    x = np.arange(HOURS_PER_YEAR)
    ok = ~missing
    # Periodic interpolation: the typical year wraps from 31 Dec to 1 Jan.
    filled = np.interp(x, x[ok], values[ok], period=HOURS_PER_YEAR)
    return filled, labels


def _complete_irradiance(raw: RawSeries, ghi, dni, dhi):
    loc = (raw.latitude_deg, raw.longitude_deg, raw.altitude_m, raw.utc_offset_h)
    if ghi is None:
        ghi = raw.clearness_frac * clear_sky_ghi(*loc)["ghi"].to_numpy()
        dni = dhi = None
    if dni is None or dhi is None:
        dni_e, dhi_e = split_ghi(ghi, *loc)
        dni = dni_e if dni is None else dni
        dhi = dhi_e if dhi is None else dhi
    return ghi, dni, dhi
