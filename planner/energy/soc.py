"""Hourly state of charge of battery packs, vectorised across lanes.

A *lane* is one site x one candidate pack. The recursion loops over the hours of the
typical year in Python and updates every lane of a chunk at once with numpy; lanes are
streamed in chunks (:func:`iter_soc_chunks`) so that no ``8760 x all-lanes`` float64
array is ever held: 100,000 lanes would be 7 GB per array.

With numba installed the hour loop runs compiled (:mod:`planner.energy.soc_fused` with
the kernels of :mod:`planner.energy._soc_kernels`: lane blocks on every core, four lanes
stepped together); otherwise the numpy loop (:mod:`planner.energy.soc_numpy`) runs,
vectorised across lanes. Both give the same numbers (tested). The result types and the
per-lane summaries are in :mod:`planner.energy.soc_results`.

Hourly arrays (charge, load, battery temperature, self-discharge, heater, available
capacity) may be given once per *site* with ``lane_site_index`` mapping each lane to its
site column, which is how a fleet of sites x designs stays small in memory.

One hour, per lane (energies in Wh, the hour is 1 h so W and Wh per hour coincide):

1. self-discharge: ``E -= E * s[h]`` (the chemistry's self-discharge fraction per hour);
2. the source serves the load first (DC-coupled bus, common practice); the battery
   sees the net ``P_c - P_l``;
3. surplus: the battery accepts ``a = min(surplus, c_max * C, (E_max - E) / eta_c)``,
   stores ``eta_c * a``; ``a = 0`` when charging is blocked (lithium below its minimum
   charge temperature with the heater off); the rest is curtailed;
4. deficit: the battery delivers ``o = min(deficit, (E - E_floor) * eta_d)``, losing
   ``o / eta_d`` of stored energy; what it cannot deliver is *unserved* load.

``E_max = usable_fraction * C``: the charge controller holds the chosen charge voltage,
which caps the top of charge (the chemistry's usable-fraction curve). ``E_floor =
C * (1 - f_avail[h] * (1 - min_soc_frac))``: the controller's low-voltage disconnect at
the maximum depth of discharge, measured on the capacity available at the battery's
temperature (``f_avail`` = 1 unless a cold derating is given).

Energy conservation holds per lane by construction: ``energy_in = energy_out + losses +
delta_stored`` where losses are self-discharge, ``(1 - eta_c) a`` and
``(1/eta_d - 1) o``.

Lead-acid charge-voltage temperature compensation (:func:`compensated_charge_voltage_v_per_cell`)
exists to bring the pack to the *same* top of charge at every temperature, so it does not
change ``E_max`` here; the compensated voltage is a reported value for the aging stage
(float voltage drives corrosion and gassing).
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from planner.energy import _soc_kernels as _kernels
from planner.energy import soc_fused, soc_numpy
from planner.energy.soc_results import HOURS_PER_YEAR, SUMMARY_FIELDS, SocChunk, SocResult
from planner.errors import InputError

#: Default lanes per chunk: 8,192 lanes x 8,760 h x float32 is 287 MB per streamed series.
DEFAULT_CHUNK_LANES = 8192


class _Hourly:
    """An hourly input given as a scalar, ``(n_hours,)`` or ``(n_hours, n_columns)``,
    validated once; ``kind`` says which (see
    :func:`planner.energy.soc_numpy._hour_block` for reading it)."""

    def __init__(self, value, name: str, n_hours: int | None, n_columns: int,
                 dtype=float):
        try:
            arr = np.asarray(value, dtype=dtype)
        except (TypeError, ValueError):
            raise InputError(f"{name}: found a non-numeric value, expected numbers") from None
        if arr.ndim == 1 and n_hours is not None and arr.shape[0] != n_hours:
            raise InputError(f"{name}: found shape {arr.shape}, expected ({n_hours},) or "
                             f"({n_hours}, {n_columns})")
        if arr.ndim == 2 and ((n_hours is not None and arr.shape[0] != n_hours)
                              or arr.shape[1] != n_columns):
            raise InputError(f"{name}: found shape {arr.shape}, expected ({n_hours}, "
                             f"{n_columns})")
        if arr.ndim > 2:
            raise InputError(f"{name}: found {arr.ndim} dimensions, expected at most 2")
        if dtype is float and not np.all(np.isfinite(arr)):
            raise InputError(f"{name}: found non-finite values, expected finite numbers")
        self.kind = ("scalar", "hourly", "matrix")[arr.ndim]
        self.arr = arr
        self.name = name
        self.n_hours = arr.shape[0] if arr.ndim else None

    def is_constant(self, value) -> bool:
        return self.kind == "scalar" and float(self.arr) == value


def _lane_param(value, name: str, n: int, lo: float, hi: float,
                lo_open: bool = False) -> np.ndarray:
    """Per-lane parameter as a float (n,) array, validated to [lo, hi] (or (lo, hi])."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a number or ({n},) numbers") \
            from None
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise InputError(f"{name}: found shape {arr.shape}, expected a scalar or ({n},)")
    bad = np.isnan(arr) | (arr > hi) | ((arr <= lo) if lo_open else (arr < lo))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        rng = f"({lo:g}, {hi:g}]" if lo_open else f"[{lo:g}, {hi:g}]"
        raise InputError(f"{name}[{i}]: found {arr[i]!r}, expected a value in {rng}")
    return arr


def compensated_charge_voltage_v_per_cell(charge_voltage_v_per_cell, temp_battery_c,
                                          compensation_v_per_c_per_cell, *,
                                          reference_temp_c: float = 25.0,
                                          clamp_temp_c: tuple[float, float] = (0.0, 50.0)):
    """Charge voltage a temperature-compensating controller applies (V per cell).

    ``V(T) = V_set + k * (clip(T, T_lo, T_hi) - T_ref)``, with ``k`` negative for
    lead-acid (about -3 to -5 mV/K per cell referenced to 25 degC, from memory; see
    IEEE 1361 / IEC 62509 for controller requirements). Controllers stop compensating
    outside a temperature band so the voltage cannot run away; the default band
    0-50 degC is from memory and can be changed.

    The compensation keeps the top of charge at the same SOC at every temperature, so the
    SOC recursion keeps ``usable_fraction`` at its set-point value; this voltage is a
    reported value for the aging stage.

    Parameters
    ----------
    charge_voltage_v_per_cell : float or array
        Set-point at ``reference_temp_c`` (V per cell).
    temp_battery_c : array
        Battery temperature (degC).
    compensation_v_per_c_per_cell : float
        Slope (V per K per cell); 0 for chemistries without compensation.
    reference_temp_c : float
        Temperature of the set-point (degC).
    clamp_temp_c : (float, float)
        Band outside which the controller holds the compensation constant (degC).

    Returns
    -------
    numpy.ndarray
        Compensated charge voltage (V per cell), shape of the broadcast inputs.
    """
    temp = np.clip(np.asarray(temp_battery_c, dtype=float), clamp_temp_c[0], clamp_temp_c[1])
    return (np.asarray(charge_voltage_v_per_cell, dtype=float)
            + compensation_v_per_c_per_cell * (temp - reference_temp_c))


def iter_soc_chunks(charge_power_w, load_power_w, capacity_wh, temp_battery_c, *,
                    usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                    self_discharge_frac_per_h=0.0, max_charge_c_rate=np.inf,
                    charge_temp_min_c=-np.inf, charge_temp_max_c=np.inf, heater_on=None, min_soc_frac=0.0,
                    available_capacity_frac=None, initial_soc_frac=1.0,
                    low_soc_threshold_frac=0.5, lane_site_index=None,
                    chunk_lanes: int = DEFAULT_CHUNK_LANES,
                    series=True, engine: str = "auto") -> Iterator[SocChunk]:
    """Simulate the hourly SOC of all lanes, yielding one :class:`SocChunk` per chunk.

    Same parameters as :func:`simulate_soc` (which documents them), plus ``series``:
    True (default) streams the hourly series of every lane of each chunk; False streams
    summaries only; a sequence of lane indices streams the series of those lanes only
    (each chunk's ``soc_frac`` then has one column per selected lane inside the chunk,
    in increasing lane order, or is ``None`` when the chunk has none).

    ``engine``: "auto" uses the numba-compiled loop when numba is installed and the numpy
    loop otherwise; "numpy" forces the numpy loop (both give the same numbers).

    The aging stage consumes each chunk's ``soc_frac`` and ``current_c_rate`` and drops
    them, so peak memory is about two ``(n_hours, chunk_lanes)`` float32 arrays plus the
    per-lane summaries, whatever the number of lanes.
    """
    p = _prepare(charge_power_w, load_power_w, capacity_wh, temp_battery_c,
                 usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                 self_discharge_frac_per_h, max_charge_c_rate, charge_temp_min_c, charge_temp_max_c,
                 heater_on, min_soc_frac, available_capacity_frac, initial_soc_frac,
                 low_soc_threshold_frac, lane_site_index)
    if not isinstance(chunk_lanes, (int, np.integer)) or chunk_lanes < 1:
        raise InputError(f"chunk_lanes: found {chunk_lanes!r}, expected an integer >= 1")
    if engine not in ("auto", "numpy"):
        raise InputError(f"engine: found {engine!r}, expected 'auto' or 'numpy'")
    p["engine"] = engine
    wanted = None if isinstance(series, (bool, np.bool_)) else \
        np.unique(np.asarray(series, dtype=np.intp))
    n = p["cap"].shape[0]
    for start in range(0, n, chunk_lanes):
        stop = min(n, start + chunk_lanes)
        if wanted is None:
            keep = slice(None) if series else None
        else:
            local = wanted[(wanted >= start) & (wanted < stop)] - start
            keep = local if local.size else None
        yield _run_chunk(p, start, stop, keep)


def _prepare(charge_power_w, load_power_w, capacity_wh, temp_battery_c, usable_fraction,
             charge_efficiency_frac, discharge_efficiency_frac, self_discharge_frac_per_h,
             max_charge_c_rate, charge_temp_min_c, charge_temp_max_c, heater_on, min_soc_frac,
             available_capacity_frac, initial_soc_frac, low_soc_threshold_frac,
             lane_site_index) -> dict:
    """Validate every input once and return them as arrays (hourly ones wrapped)."""
    cap = np.asarray(capacity_wh, dtype=float)
    if cap.ndim != 1:
        raise InputError(f"capacity_wh: found shape {cap.shape}, expected (n_lanes,)")
    n = cap.shape[0]
    p = {
        "cap": _lane_param(cap, "capacity_wh", n, 0.0, 1e9, lo_open=True),
        "usable": _lane_param(usable_fraction, "usable_fraction", n, 0.0, 1.0, True),
        "eta_c": _lane_param(charge_efficiency_frac, "charge_efficiency_frac", n, 0.0, 1.0,
                             True),
        "eta_d": _lane_param(discharge_efficiency_frac, "discharge_efficiency_frac", n,
                             0.0, 1.0, True),
        "c_max": _lane_param(max_charge_c_rate, "max_charge_c_rate", n, 0.0, np.inf),
        "soc_min": _lane_param(min_soc_frac, "min_soc_frac", n, 0.0, 1.0),
        "soc0": _lane_param(initial_soc_frac, "initial_soc_frac", n, 0.0, 1.0),
        "low": _lane_param(low_soc_threshold_frac, "low_soc_threshold_frac", n, 0.0, 1.0),
    }
    for key, name, none in (("t_min", "charge_temp_min_c", "-inf"),
                            ("t_max", "charge_temp_max_c", "inf")):
        limit = np.asarray(charge_temp_min_c if key == "t_min" else charge_temp_max_c,
                           dtype=float)
        limit = np.full(n, float(limit)) if limit.ndim == 0 else limit
        if limit.shape != (n,) or np.any(np.isnan(limit)):
            raise InputError(f"{name}: found shape {limit.shape}, expected a scalar "
                             f"or ({n},) temperatures in degC ({none} for no limit)")
        p[key] = limit
    if np.any(p["soc_min"] >= p["usable"]):
        i = int(np.flatnonzero(p["soc_min"] >= p["usable"])[0])
        raise InputError(f"min_soc_frac[{i}]: found {p['soc_min'][i]!r}, expected below "
                         f"usable_fraction ({p['usable'][i]!r})")

    if lane_site_index is None:
        n_columns, site_idx = n, None
    else:
        site_idx = np.asarray(lane_site_index)
        if site_idx.shape != (n,) or not np.issubdtype(site_idx.dtype, np.integer) \
                or (n and site_idx.min() < 0):
            raise InputError(f"lane_site_index: found shape {site_idx.shape} of "
                             f"{site_idx.dtype}, expected ({n},) non-negative integers")
        n_columns = int(site_idx.max()) + 1 if n else 0
        hourly_2d = [np.ndim(a) == 2 for a in (charge_power_w, load_power_w, temp_battery_c)]
        if any(hourly_2d):
            n_columns = max(np.shape(a)[1] for a in (charge_power_w, load_power_w,
                                                     temp_battery_c) if np.ndim(a) == 2)
            if n and site_idx.max() >= n_columns:
                raise InputError(f"lane_site_index: found {int(site_idx.max())}, expected "
                                 f"indices below the {n_columns} site columns")
    p["site_idx"] = site_idx
    p["n_columns"] = n_columns

    charge = _Hourly(charge_power_w, "charge_power_w", None, n_columns)
    load = _Hourly(load_power_w, "load_power_w", charge.n_hours, n_columns)
    n_hours = charge.n_hours or load.n_hours or HOURS_PER_YEAR
    charge = _Hourly(charge_power_w, "charge_power_w", n_hours, n_columns)
    for h in (charge, load):
        if np.any(h.arr < 0):
            raise InputError(f"{h.name}: found a negative power, expected >= 0 W")
    sd = _Hourly(self_discharge_frac_per_h, "self_discharge_frac_per_h", n_hours, n_columns)
    if np.any(sd.arr < 0) or np.any(sd.arr >= 1):
        raise InputError("self_discharge_frac_per_h: found values outside [0, 1), expected "
                         "a fraction of stored energy lost per hour")
    p.update(n_hours=n_hours, charge=charge, load=load, sd=sd,
             temp=_Hourly(temp_battery_c, "temp_battery_c", n_hours, n_columns),
             heater=None if heater_on is None else
             _Hourly(heater_on, "heater_on", n_hours, n_columns, dtype=bool),
             avail=None)
    if available_capacity_frac is not None:
        avail = _Hourly(available_capacity_frac, "available_capacity_frac", n_hours,
                        n_columns)
        if np.any(avail.arr <= 0) or np.any(avail.arr > 1):
            raise InputError("available_capacity_frac: found values outside (0, 1], "
                             "expected the fraction of rated capacity available")
        p["avail"] = avail
    return p


def _run_chunk(p: dict, start: int, stop: int, keep) -> SocChunk:
    """The hourly recursion for lanes ``start:stop`` on the engine ``p["engine"]`` asks for.

    When numba is installed the compiled kernel of :mod:`planner.energy._soc_kernels`
    runs the hours (:func:`planner.energy.soc_fused.run_chunk`); otherwise, or with
    ``p["engine"] = "numpy"``, the numpy loop (:func:`planner.energy.soc_numpy.run_chunk`).
    """
    kernel = _kernels.compiled_kernel() if p.get("engine") != "numpy" else None
    if kernel is not None:
        return soc_fused.run_chunk(p, start, stop, keep, kernel)
    return soc_numpy.run_chunk(p, start, stop, keep)


def simulate_soc(charge_power_w, load_power_w, capacity_wh, temp_battery_c, *,
                 usable_fraction, charge_efficiency_frac, discharge_efficiency_frac,
                 self_discharge_frac_per_h=0.0, max_charge_c_rate=np.inf,
                 charge_temp_min_c=-np.inf, charge_temp_max_c=np.inf, heater_on=None, min_soc_frac=0.0,
                 available_capacity_frac=None, initial_soc_frac=1.0,
                 low_soc_threshold_frac=0.5, lane_site_index=None, keep_series_for=None,
                 chunk_lanes: int = DEFAULT_CHUNK_LANES, engine: str = "auto") -> SocResult:
    """Hourly state of charge of ``n`` lanes over a typical year; per-lane summaries.

    Hourly inputs take any of: a scalar; shape ``(n_hours,)`` (same for every lane);
    shape ``(n_hours, n)`` (one column per lane); or, with ``lane_site_index``, shape
    ``(n_hours, n_sites)`` where lane ``j`` reads column ``lane_site_index[j]``.

    Parameters
    ----------
    charge_power_w : hourly
        Power offered by the charging source at the battery bus (W, hourly mean), e.g.
        :func:`planner.energy.pv.pv_dc_power_w` or a float charger's rating while mains
        is up.
    load_power_w : hourly
        Load on the bus (W, hourly mean), including any battery heater and shelter HVAC
        that the battery must supply.
    capacity_wh : (n,)
        Rated capacity of each lane's pack (Wh), already faded if simulating an older
        pack (the caller re-runs the year with ``soh * capacity``).
    temp_battery_c : hourly
        Battery temperature (degC); used for the charge-temperature block.
    usable_fraction : scalar or (n,)
        Top of charge at the chosen charge voltage, fraction of rated capacity.
    charge_efficiency_frac, discharge_efficiency_frac : scalar or (n,)
        Energy efficiencies of storing and delivering (0-1]; their product is the
        round-trip efficiency.
    self_discharge_frac_per_h : hourly
        Fraction of stored energy lost per hour (chemistry's value at the battery
        temperature).
    max_charge_c_rate : scalar or (n,)
        Charge acceptance limit (1/h): at most ``c * capacity_wh`` Wh per hour.
    charge_temp_min_c : scalar or (n,)
        Below this battery temperature no charge is accepted unless ``heater_on``
        (lithium-ion plating rule); ``-inf`` for no limit.
    charge_temp_max_c : scalar or (n,)
        Above this battery temperature no charge is accepted, heater or not (the
        battery management system's charge over-temperature stop); ``inf`` for no limit.
    heater_on : hourly bool, optional
        Hours when a battery heater keeps the cells warm enough to charge.
    min_soc_frac : scalar or (n,)
        Low-voltage disconnect, ``1 - max_dod_frac``.
    available_capacity_frac : hourly, optional
        Fraction of rated capacity available at the battery temperature (cold derating);
        raises the discharge floor to ``C * (1 - f * (1 - min_soc_frac))``.
    initial_soc_frac : scalar or (n,)
        SOC at hour 0, capped at ``usable_fraction`` (1.0 = full at the charge voltage).
    low_soc_threshold_frac : scalar or (n,)
        Threshold for ``longest_low_soc_days`` (default 0.5: lead-acid held below half
        charge sulphates, common practice).
    lane_site_index : (n,) int, optional
        Column of the hourly arrays each lane reads.
    keep_series_for : sequence of int, optional
        Lanes whose hourly SOC and C-rate series are returned.
    chunk_lanes : int
        Lanes simulated together; bounds the working memory.
    engine : {"auto", "numpy"}
        "auto" runs the hour loop compiled with numba when numba is installed.

    Returns
    -------
    SocResult
        Per-lane summaries, plus hourly series for ``keep_series_for``.

    Raises
    ------
    planner.errors.InputError
        Shapes that do not match, negative powers, fractions outside their range.
    """
    keep = np.unique(np.asarray([] if keep_series_for is None else keep_series_for,
                                dtype=np.intp))
    n = np.asarray(capacity_wh).shape[0] if np.ndim(capacity_wh) == 1 else 0
    if keep.size and (keep.min() < 0 or keep.max() >= n):
        raise InputError(f"keep_series_for: found lane {int(keep.max())}, expected lanes "
                         f"0 to {n - 1}")
    parts: list[SocResult] = []
    soc_cols, cr_cols = [], []
    for chunk in iter_soc_chunks(
            charge_power_w, load_power_w, capacity_wh, temp_battery_c,
            usable_fraction=usable_fraction, charge_efficiency_frac=charge_efficiency_frac,
            discharge_efficiency_frac=discharge_efficiency_frac,
            self_discharge_frac_per_h=self_discharge_frac_per_h,
            max_charge_c_rate=max_charge_c_rate, charge_temp_min_c=charge_temp_min_c,
            charge_temp_max_c=charge_temp_max_c,
            heater_on=heater_on, min_soc_frac=min_soc_frac,
            available_capacity_frac=available_capacity_frac,
            initial_soc_frac=initial_soc_frac, low_soc_threshold_frac=low_soc_threshold_frac,
            lane_site_index=lane_site_index, chunk_lanes=chunk_lanes,
            series=keep if keep.size else False, engine=engine):
        parts.append(chunk.summary)
        if chunk.soc_frac is not None:
            soc_cols.append(chunk.soc_frac)
            cr_cols.append(chunk.current_c_rate)
    merged = {name: np.concatenate([getattr(p, name) for p in parts]) if parts
              else np.zeros(0) for name in SUMMARY_FIELDS}
    n_hours = parts[0].n_hours if parts else HOURS_PER_YEAR
    return SocResult(**merged, series_lanes=keep, n_hours=n_hours,
                     soc_frac_series=np.concatenate(soc_cols, axis=1) if keep.size else None,
                     current_c_rate_series=np.concatenate(cr_cols, axis=1) if keep.size
                     else None)
