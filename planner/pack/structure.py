"""Pack design: strings, cell gradients, current shares, balancing.

A pack is ``series_cells`` cells in series per string and ``parallel_strings``
strings in parallel (trade notation ``4s2p``). This module holds the pack's
structure and the physical building blocks of a string (temperature profile along
a cell row, current shares of parallel strings, usable capacity of a string under
each balancing scheme, nominal curves read at equivalent time) and the stress laws
of an aging parameter set. The distribution of pack life built from them, a seeded
Monte Carlo, lives in :mod:`planner.pack.spread`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.errors import InputError

__all__ = [
    "BALANCING_KINDS",
    "GAS_CONSTANT_J_MOL_K",
    "SPREAD_PRESETS",
    "PARAMETER_SOURCES",
    "SpreadPreset",
    "PackStructure",
    "pack_structure",
    "arrhenius_factor",
    "inner_temperature_offsets_k",
    "string_current_shares",
    "usable_string_capacity_frac",
    "scaled_loss_curve",
    "years_to_threshold",
    "row_years",
    "stress_parameters",
]

#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact since the 2019 SI redefinition).
GAS_CONSTANT_J_MOL_K = 8.314462618

#: Balancing schemes. ``passive`` bleeds the highest cells near the end of charge
#: (removes state-of-charge offsets, not capacity differences); ``active`` moves
#: charge between cells (also recovers part of the capacity difference).
BALANCING_KINDS = ("none", "passive", "active")


@dataclass(frozen=True)
class SpreadPreset:
    """Cell-to-cell spread defaults (coefficients of variation, 0-1).

    Attributes
    ----------
    cell_spread_frac : float
        Coefficient of variation of initial capacity.
    resistance_spread_frac : float
        Coefficient of variation of initial internal resistance.
    rate_spread_frac : float
        Coefficient of variation of the aging-rate coefficient.
    sources : dict
        Parameter name -> source text.
    """

    cell_spread_frac: float
    resistance_spread_frac: float
    rate_spread_frac: float
    sources: dict = field(default_factory=dict)


SPREAD_PRESETS = {
    # Cells of one production lot, bought together.
    "one-lot": SpreadPreset(
        cell_spread_frac=0.005,
        resistance_spread_frac=0.02,
        rate_spread_frac=0.05,
        sources={
            "cell_spread_frac": (
                "L. Wildfeuer, M. Lienkamp, 'Quantifiability of inherent cell-to-cell "
                "variations of commercial lithium-ion batteries', eTransportation 9 (2021) "
                "100129 (venue from memory; abstract read: published capacity CV "
                "0.2-0.3 %, inherent 0.17 %); "
                "0.5 % keeps a margin for storage and measurement"
            ),
            "resistance_spread_frac": (
                "Wildfeuer and Lienkamp 2021 (abstract: published impedance CV 0.7-3.8 %, "
                "inherent 0.45 %); 2 % mid-range"
            ),
            "rate_spread_frac": (
                "from memory: T. Baumhoefer, M. Bruehl, S. Rothgang, D.U. Sauer, J. Power "
                "Sources 247 (2014) 332-338 show significant lifetime differences among 48 "
                "equal cells aged equally; CV of the fade rate of about 5 % is from memory"
            ),
        },
    ),
    # Cells from several lots or ages, e.g. a pack assembled from stock.
    "mixed-lots": SpreadPreset(
        cell_spread_frac=0.03,
        resistance_spread_frac=0.10,
        rate_spread_frac=0.10,
        sources={
            "cell_spread_frac": "from memory: mixed lots and shelf ages, capacity CV 2-3 %",
            "resistance_spread_frac": "from memory: mixed lots, resistance CV about 10 %",
            "rate_spread_frac": "from memory: mixed lots, fade-rate CV about 10 %",
        },
    ),
}

#: Defaults of the other pack parameters, each with its source.
PARAMETER_SOURCES = {
    "inner_delta_k": (
        "from memory: naturally cooled stationary packs show 1-3 K between inner and edge "
        "cells, the low end at the small currents of remote sites; 1 K default"
    ),
    "parallel_imbalance_frac": (
        "from memory: strings tapped at one end of a shared bus share current within "
        "about 10 %; cf. T. Gogoana et al., J. Power Sources 252 (2014) 8-13, from memory (resistance "
        "mismatch between parallel cells shortens cycle life)"
    ),
    "self_heating_k": (
        "from memory: at the <= C/5 mean currents of remote telemetry sites a cell's mean "
        "rise above its surroundings from its own I^2 R loss stays below about 1 K"
    ),
    "resistance_growth_per_loss": (
        "from memory: in published aging tests of NMC and LFP cells the relative "
        "resistance rise is one to three times the relative capacity loss; 2 used"
    ),
    "depth_stress_exponent": (
        "1.0: the weak cell's cycle clock runs with its own full-equivalent cycles "
        "(same Ah through a smaller capacity); extra per-cycle depth stress neglected "
        "because Xu et al. 2018 (IEEE Trans. Smart Grid 9 (2) 1131-1140) S_delta is "
        "nearly flat per Ah between DOD 0.1 and 0.5 (computed from its equation)"
    ),
    "soc_offset_spread_frac": (
        "from memory: cells delivered at storage charge differ by about 1 % of capacity"
    ),
    "soc_drift_spread_frac_per_year": (
        "from memory: self-discharge differences between Li-ion cells of a string of "
        "about 0.5 % of capacity per year; drift accumulates without balancing"
    ),
    "active_recovery_frac": (
        "from memory: inductive/capacitive balancers transfer charge at 80-90 % "
        "efficiency; balancing current limits keep part of the gap; 0.8 of the gap "
        "between weakest cell and string mean is recovered"
    ),
    "passive_balancing": (
        "common practice: bleed resistors at end of charge top-balance the string, which "
        "removes state-of-charge offsets but cannot add capacity to the weakest cell; "
        "assumes the daily time at top of charge suffices (bleed current >> self-discharge "
        "differences). Lead-acid and NiMH strings self-equalise on overcharge, so model "
        "them as 'passive'"
    ),
    "activation_energy_j_mol": (
        "50 kJ/mol when the aging set gives none: Xu et al. 2018 k_T is equivalent to about "
        "51 kJ/mol and SEI growth is typically 50-70 kJ/mol (notes 6.3); stress_parameters "
        "reads each set's own values"
    ),
    "time_exponents": (
        "0.5 by default: square-root laws of Naumann et al. 2018 (J. Energy Storage 17, "
        "153-169) and 2020 (J. Power Sources 451, 227666); stress_parameters reads each "
        "set's own (0.75 Schmalstieg 2014 calendar, 1 for laws linear in time)"
    ),
    "reference_temp_c": (
        "25 degC: reference temperature of the fitted laws (T_ref = 298.15 K in Naumann "
        "et al. 2018); pass the site's effective battery temperature"
    ),
    "eol_soh_frac": (
        "0.8: common practice for reporting life; the planner passes the "
        "site's requirement-based threshold"
    ),
    "temperature_profile": (
        "parabolic profile along the cell row, 0 K at the two end cells, inner_delta_k at "
        "the centre: 1-D steady conduction with uniform heat generation (F.P. Incropera, "
        "D.P. DeWitt, Fundamentals of Heat and Mass Transfer, 6th ed., 2007, eq. 3.40; "
        "equation number from memory)"
    ),
}


# ---------------------------------------------------------------------------
# Pack structure
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class PackStructure:
    """A pack of ``series_cells`` in series x ``parallel_strings`` strings.

    Attributes
    ----------
    series_cells, parallel_strings : int
    cell_voltage_v, cell_capacity_ah : float
        The cell (or module) the pack is built of.
    capacity_ah : float
        Pack capacity, ``parallel_strings * cell_capacity_ah``.
    nominal_voltage_v : float
        ``series_cells * cell_voltage_v``.
    capacity_wh : float
        ``nominal_voltage_v * capacity_ah``.
    mass_kg, volume_l : float
        From the chemistry's per-kWh figures (NaN when not given).
    label : str
        Trade notation, e.g. ``"4s2p"``.
    """

    series_cells: int
    parallel_strings: int
    cell_voltage_v: float
    cell_capacity_ah: float
    capacity_ah: float
    nominal_voltage_v: float
    capacity_wh: float
    mass_kg: float
    volume_l: float
    label: str


def _positive(name, value, source="pack"):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a positive number",
                         source=source) from None
    if not math.isfinite(x) or x <= 0.0:
        raise InputError(f"{name}: found {value!r}, expected a positive number", source=source)
    return x


def series_count(system_voltage_v: float, cell_voltage_v: float,
                 charge_voltage_v_per_cell: float | None = None) -> int:
    """Cells in series for a system voltage (the rule of :func:`pack_structure`)."""
    if charge_voltage_v_per_cell is not None:
        return max(1, int(math.floor(1.2 * system_voltage_v / charge_voltage_v_per_cell + 0.5)))
    return max(1, int(math.floor(system_voltage_v / cell_voltage_v + 0.5)))


def whole_strings(required_capacity_wh: float, series_cells: int, cell_voltage_v: float,
                  cell_capacity_ah: float) -> tuple[int, float]:
    """``(parallel strings, pack capacity in Wh)`` of the smallest whole-string pack
    holding ``required_capacity_wh`` (the rule of :func:`pack_structure`)."""
    string_wh = series_cells * cell_voltage_v * cell_capacity_ah
    # The tolerance keeps float noise (e.g. 2 * 1280.0000000001) from adding a string.
    n_p = max(1, int(math.ceil(required_capacity_wh / string_wh - 1e-9)))
    return n_p, (series_cells * cell_voltage_v) * (n_p * cell_capacity_ah)


def pack_structure(
    *,
    system_voltage_v,
    required_capacity_wh,
    cell_voltage_v,
    cell_capacity_ah,
    charge_voltage_v_per_cell=None,
    mass_kg_per_kwh=None,
    volume_l_per_kwh=None,
    series_cells=None,
):
    """Whole-cell pack that reaches a system voltage and a required energy.

    Series count, unless given: with the chemistry's full charge voltage per cell,
    the count whose charge voltage matches the system's, taking 1.2 x the system
    voltage as the system's charge voltage (a 12 V system charges at about 14.4 V,
    2.4 V per lead-acid cell: common practice): ``floor(1.2 * V_sys / V_charge + 0.5)``
    -> 12 V: 6 lead-acid (2.4 V), 4 LFP (3.6 V), 3 NMC (4.2 V) cells; 48 V: 16 LFP.
    Without it, the nearest whole number of nominal voltages,
    ``floor(V_sys / V_cell + 0.5)``. ``parallel_strings = ceil(required / string)``,
    at least 1, so the real pack is never smaller than required (common practice).

    Parameters
    ----------
    system_voltage_v : float
        Nominal DC system voltage [V], e.g. 12, 24, 48.
    required_capacity_wh : float
        Energy the pack must hold at rated capacity [Wh] (after oversizing).
    cell_voltage_v, cell_capacity_ah : float
        Nominal voltage [V] and rated capacity [Ah] of one cell or module.
    charge_voltage_v_per_cell : float, optional
        The chemistry's full (highest) charge voltage per cell [V]; pass the top of
        its range, not the chosen reduced charge voltage, so the series count does
        not change with the charge-voltage choice.
    mass_kg_per_kwh, volume_l_per_kwh : float, optional
        Chemistry's specific mass [kg/kWh] and volume [L/kWh].
    series_cells : int, optional
        Override the series count.

    Returns
    -------
    PackStructure
    """
    v_sys = _positive("system_voltage_v", system_voltage_v)
    e_req = _positive("required_capacity_wh", required_capacity_wh)
    v_cell = _positive("cell_voltage_v", cell_voltage_v)
    c_cell = _positive("cell_capacity_ah", cell_capacity_ah)
    if series_cells is None:
        v_ch = None if charge_voltage_v_per_cell is None else \
            _positive("charge_voltage_v_per_cell", charge_voltage_v_per_cell)
        n_s = series_count(v_sys, v_cell, v_ch)
    else:
        n_s = _whole("series_cells", series_cells)
    n_p, cap_wh = whole_strings(e_req, n_s, v_cell, c_cell)
    cap_ah = n_p * c_cell
    v_nom = n_s * v_cell
    mass = float("nan") if mass_kg_per_kwh is None else \
        cap_wh / 1000.0 * _positive("mass_kg_per_kwh", mass_kg_per_kwh)
    vol = float("nan") if volume_l_per_kwh is None else \
        cap_wh / 1000.0 * _positive("volume_l_per_kwh", volume_l_per_kwh)
    return PackStructure(
        series_cells=n_s,
        parallel_strings=n_p,
        cell_voltage_v=v_cell,
        cell_capacity_ah=c_cell,
        capacity_ah=cap_ah,
        nominal_voltage_v=v_nom,
        capacity_wh=cap_wh,
        mass_kg=mass,
        volume_l=vol,
        label=f"{n_s}s{n_p}p",
    )


def _whole(name, value, minimum=1, source="pack"):
    try:
        ok = float(value) == int(value)
    except (TypeError, ValueError, OverflowError):
        ok = False
    if not ok or int(value) < minimum:
        raise InputError(f"{name}: found {value!r}, expected a whole number >= {minimum}", source=source)
    return int(value)


# ---------------------------------------------------------------------------
# Physical building blocks (pure functions)
# ---------------------------------------------------------------------------


def arrhenius_factor(delta_k, *, reference_temp_c=25.0, activation_energy_j_mol=50e3):
    """Aging-rate multiplier of a cell running ``delta_k`` warmer than the reference.

    ``AF = exp(Ea / R * (1 / T_ref - 1 / (T_ref + delta)))`` (Arrhenius law; the form
    used in the temperature factor of M. Naumann et al., J. Energy Storage 17 (2018)
    153-169, and J. Schmalstieg et al., J. Power Sources 257 (2014) 325-334).

    Parameters
    ----------
    delta_k : array_like
        Temperature offset [K].
    reference_temp_c : array_like
        Temperature the nominal curves were computed at [degC].
    activation_energy_j_mol : array_like
        Activation energy Ea [J/mol].

    Returns
    -------
    numpy.ndarray
        Multiplier [-], 1 at ``delta_k = 0``.
    """
    t_ref = np.asarray(reference_temp_c, dtype=float) + 273.15
    ea_r = np.asarray(activation_energy_j_mol, dtype=float) / GAS_CONSTANT_J_MOL_K
    return np.exp(ea_r * (1.0 / t_ref - 1.0 / (t_ref + np.asarray(delta_k, dtype=float))))


def inner_temperature_offsets_k(series_cells, inner_delta_k):
    """Temperature offset of each cell of a row of ``series_cells`` [K].

    Parabolic profile of 1-D steady conduction with uniform heat generation
    (Incropera and DeWitt 2007, eq. 3.40, number from memory): 0 K at the two end
    cells, ``inner_delta_k`` at the centre of the row. Rows of one or two cells have
    no inner cell.

    Returns
    -------
    numpy.ndarray
        Shape ``(series_cells,)``.
    """
    n = int(series_cells)
    if n <= 2:
        return np.zeros(n)
    x = (np.arange(n) + 0.5) / n
    x_end = 0.5 / n
    shape = (x * (1 - x) - x_end * (1 - x_end)) / (0.25 - x_end * (1 - x_end))
    return float(inner_delta_k) * np.clip(shape, 0.0, 1.0)


def string_current_shares(parallel_strings, parallel_imbalance_frac):
    """Current of each parallel string relative to an even share [-].

    The string nearest the pack terminals carries ``1 + imbalance`` (wiring
    layout); the others share the rest equally so the shares sum to the number of
    strings (Kirchhoff's current law). One string carries exactly 1.
    """
    m = int(parallel_strings)
    if m == 1:
        return np.ones(1)
    imb = float(parallel_imbalance_frac)
    rest = (m - 1.0 - imb) / (m - 1.0)
    return np.r_[1.0 + imb, np.full(m - 1, rest)]


def usable_string_capacity_frac(capacity_frac, soc_offset_frac=None, *, balancing="passive",
                                active_recovery_frac=0.8, axis=-1):
    """Usable capacity of a series string, as a fraction of one cell's rating.

    Charge stops when the first cell is full and discharge when the first cell is
    empty, so with cells at charge offsets ``u`` (u >= 0 below the fullest
    alignment) the string delivers ``min_i(c_i - (u_i - min u))`` (definition of a
    series string: one current through all cells). Passive balancing removes the
    offsets (``min c``); active balancing also moves charge to the weakest cell,
    giving ``min c + eta * (mean c - min c)``.

    Parameters
    ----------
    capacity_frac : array_like
        Cell capacities [fraction of rating], cells along ``axis``.
    soc_offset_frac : array_like, optional
        Charge offsets [fraction of rating], used only with ``balancing="none"``.
    balancing : {"none", "passive", "active"}
    active_recovery_frac : float
        Share ``eta`` of the weakest-to-mean gap active balancing recovers.
    """
    c = np.asarray(capacity_frac)
    if balancing == "none" and soc_offset_frac is not None:
        u = np.asarray(soc_offset_frac)
        u = u - u.min(axis=axis, keepdims=True)
        return (c - u).min(axis=axis)
    c_min = c.min(axis=axis)
    if balancing == "active":
        return c_min + active_recovery_frac * (c.mean(axis=axis) - c_min)
    return c_min


def scaled_loss_curve(loss_frac, clock_months, *, time_exponent=0.5):
    """Nominal loss curve read at equivalent time (linear between months).

    ``loss(tau)`` for a monthly curve ``loss_frac[m]`` (m = 0..M); beyond the last
    month the curve continues as the power law ``loss[M] * (tau / M)**z`` (notes
    section 6.1). A cell with a constant coefficient multiplier ``m`` ages as
    ``loss(m**(1/z) * t)``, equal to ``m * loss(t)`` for a ``t**z`` curve. (The
    Monte Carlo uses the same reading, capped at 16 x the horizon.)

    Parameters
    ----------
    loss_frac : array_like, shape (M+1,)
        Nominal loss [fraction of rating] at months 0..M.
    clock_months : array_like
        Equivalent time [months].
    time_exponent : float
        Exponent ``z`` of the law, used only to extend the curve.
    """
    loss = np.asarray(loss_frac, dtype=float)
    tau = np.asarray(clock_months, dtype=float)
    return _interp_extend(loss, tau, time_exponent)


def _interp_extend(loss, tau, z):
    n_m = loss.shape[0] - 1
    i = np.clip(np.floor(tau), 0, n_m - 1).astype(np.intp)
    f = np.clip(tau - i, 0.0, 1.0)
    inside = (1 - f) * loss[i] + f * loss[i + 1]
    beyond = loss[n_m] * (np.maximum(tau, n_m) / n_m) ** z
    return np.where(tau > n_m, beyond, inside)


#: Year fraction at which each month of the typical year starts (31, 28, 31, ... days;
#: leap day dropped, DEVELOPERS.md), the same month ends as the aging engine's tables.
_DAYS_PER_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_START_YEAR_FRAC = np.r_[0, np.cumsum(_DAYS_PER_MONTH)] / 365.0


def row_years(rows):
    """Elapsed years at (fractional) rows of a monthly table.

    Row ``12 y + m`` is ``y`` years and ``m`` calendar months (of 31, 28, 31, ...
    days); a fractional row lies linearly inside its month.
    """
    r = np.asarray(rows, dtype=float)
    whole = np.floor(r)
    frac = r - whole
    m = (whole % 12).astype(int)
    start = whole // 12 + _MONTH_START_YEAR_FRAC[m]
    return start + frac * (_MONTH_START_YEAR_FRAC[m + 1] - _MONTH_START_YEAR_FRAC[m])


def _crossing_rows(soh, thr):
    """Fractional row where ``soh`` (rows on axis 0) first reaches ``thr`` (inf if never)."""
    below = soh <= thr
    hit = below.any(axis=0)
    first = np.argmax(below, axis=0)
    prev = np.maximum(first - 1, 0)
    s_prev = np.take_along_axis(soh, prev[None], 0)[0]
    s_hit = np.take_along_axis(soh, first[None], 0)[0]
    drop = s_prev - s_hit
    frac = np.where(drop > 0, (s_prev - thr) / np.where(drop > 0, drop, 1.0), 0.0)
    rows = np.where(first == 0, 0.0, prev + np.clip(frac, 0.0, 1.0))
    return np.where(hit, rows, np.inf)


def years_to_threshold(soh, threshold_frac, *, axis=0):
    """Years until a monthly SOH series first reaches a threshold.

    Linear interpolation between the two months around the crossing (months of
    calendar length, :func:`row_years`); ``0`` if the series starts at or below
    it; ``inf`` if it never gets there.

    Parameters
    ----------
    soh : array_like
        SOH [fraction], months along ``axis`` (index 0 = new).
    threshold_frac : array_like
        Threshold, broadcast against ``soh`` without the month axis.
    """
    s = np.moveaxis(np.asarray(soh, dtype=float), axis, 0)
    rows = _crossing_rows(s, np.asarray(threshold_frac, dtype=float))
    return np.where(np.isfinite(rows), row_years(np.where(np.isfinite(rows), rows, 0.0)), np.inf)


def stress_parameters(aging_params, *, default_activation_energy_j_mol=50e3):
    """Activation energies and time exponents of an aging parameter set.

    Reads a chemistry's aging set (``planner.chemistry.Chemistry.aging_set()``:
    ``calendar_model``, ``cycle_model``, ``calendar``, ``cycle``) and returns the
    keyword arguments of :func:`life_distribution` that describe its laws:

    - time exponents: the engine's own (``calendar_rate_parts`` / ``cycle_exponent``
      of :mod:`planner.aging`): 0.5 for the square-root laws of Naumann et al.
      2018/2020, 0.75 for the Schmalstieg et al. 2014 calendar law, 1 for laws
      linear in time (halving rule, Woehler/Palmgren-Miner) and for a calendar law held
      at its end-of-test rate (``hold_after_years``): the lives these sets give lie far
      past the hold, where the loss is linear in time and a cell's rate factor scales
      its life as ``1/m``;
    - activation energy: ``activation_energy_j_mol`` as given; ``temp_coefficient_k``
      x R (Schmalstieg's ``exp(-6976/T)`` is 58 kJ/mol, notes 2.1); a halving or
      doubling step dT at T_ref is the Arrhenius law with
      ``Ea = R T_ref (T_ref + dT) ln 2 / dT`` (exactly a factor 2 over dT); a
      large-format calendar law its local slope stored full at 25 °C
      (:func:`planner.aging.large_format.effective_activation_energy_j_mol`).

    A law without a temperature term gets ``default_activation_energy_j_mol``
    (50 kJ/mol, the middle of the 50-70 kJ/mol of SEI growth, notes 6.3) only if it
    names none at all; an explicit 0 stays 0.
    """
    from planner.aging.calendar import calendar_rate_parts
    from planner.aging.cycle import cycle_exponent
    from planner.aging.large_format import (
        LARGE_FORMAT_MODELS,
        effective_activation_energy_j_mol,
    )

    def ea_of(params):
        p = dict(params)
        if "activation_energy_j_mol" in p:
            return float(p["activation_energy_j_mol"])
        if "temp_coefficient_k" in p:
            return float(p["temp_coefficient_k"]) * GAS_CONSTANT_J_MOL_K
        step = p.get("halving_step_k", p.get("doubling_k"))
        if step:
            t_ref = float(p.get("temp_ref_c", 25.0)) + 273.15
            return GAS_CONSTANT_J_MOL_K * t_ref * (t_ref + step) * math.log(2.0) / float(step)
        return float(default_activation_energy_j_mol)

    try:
        z_cal = float(calendar_rate_parts(aging_params.calendar_model, aging_params.calendar, None)[2])
        z_cyc = float(cycle_exponent(aging_params.cycle_model, aging_params.cycle))
    except (ValueError, KeyError, AttributeError) as err:
        raise InputError(f"aging set: found an unknown law ({err}), expected one of the aging "
                         "engine's calendar and cycle models", source="life") from None
    if aging_params.calendar.get("hold_after_years"):
        z_cal = 1.0
    if aging_params.calendar_model in LARGE_FORMAT_MODELS:
        calendar_ea = effective_activation_energy_j_mol(aging_params.calendar_model,
                                                        aging_params.calendar)
    else:
        calendar_ea = ea_of(aging_params.calendar)
    return {
        "activation_energy_j_mol": calendar_ea,
        "cycle_activation_energy_j_mol": ea_of(aging_params.cycle),
        "calendar_time_exponent": z_cal,
        "cycle_time_exponent": z_cyc,
    }
