"""Pack design and life uncertainty: strings, weak cells, gradients, balancing.

A pack is ``series_cells`` cells in series per string and ``parallel_strings``
strings in parallel (trade notation ``4s2p``). Its cells differ from the day they
are made, run at different temperatures and carry different currents, so the pack
fades faster than its nominal cell. This module turns the nominal cell's fade
curves from the aging engine into a distribution of pack life by a seeded Monte
Carlo, vectorised over sites x draws x cells.

Model in one paragraph (details in ``docs/pack.md``)
----------------------------------------------------
Each cell ``i`` ages along the nominal cell's calendar and cycle loss curves at its
own *equivalent time* (the virtual-time method of notes section 6.1)::

    d tau_cal/dt = (k_i * AF_i)**(1/z_cal)
    d tau_cyc/dt = l_s * depth_i**kappa * (k_i * AF_i)**(1/z_cyc)
    loss_i(t)    = L_cal_nom(tau_cal) + L_cyc_nom(tau_cyc)

Stress multipliers on the *coefficient* of a ``k * t**z`` law (``k_i`` the cell's
aging-rate draw, ``AF_i`` the Arrhenius factor of its temperature offset) become a
clock rate ``m**(1/z)`` -- for a constant multiplier
``L_nom(m**(1/z) * t) = m * L_nom(t)`` exactly for a power law (convention B of
notes section 6.1, the one fitted Arrhenius laws use). Throughput effects act on
the *clock* itself (Palmgren-Miner damage is linear in cycles): the string's
current share ``l_s`` and the depth ratio ``depth_i = c_nom / c_i`` (the same
ampere-hours through a smaller cell are more of its own full cycles). The rates
are re-evaluated every ``step_months`` from the current state, so a cell that has
fallen behind cycles deeper and, with its resistance grown, runs warmer: the
feedback widens the spread with time. Usable string capacity is the weakest cell
(capacity and state-of-charge window); strings in parallel add.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.special import ndtri

from planner.errors import InputError

__all__ = [
    "BALANCING_KINDS",
    "GAS_CONSTANT_J_MOL_K",
    "SPREAD_PRESETS",
    "PARAMETER_SOURCES",
    "DEFAULT_DRAWS",
    "SpreadPreset",
    "PackStructure",
    "LifeDistribution",
    "pack_structure",
    "arrhenius_factor",
    "inner_temperature_offsets_k",
    "string_current_shares",
    "usable_string_capacity_frac",
    "scaled_loss_curve",
    "years_to_threshold",
    "row_years",
    "life_distribution",
    "life_fields",
    "life_summary",
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
        "0.8: common practice for reporting life (DESIGN.md); the planner passes the "
        "site's requirement-based threshold"
    ),
    "temperature_profile": (
        "parabolic profile along the cell row, 0 K at the two end cells, inner_delta_k at "
        "the centre: 1-D steady conduction with uniform heat generation (F.P. Incropera, "
        "D.P. DeWitt, Fundamentals of Heat and Mass Transfer, 6th ed., 2007, eq. 3.40; "
        "equation number from memory)"
    ),
}

#: Equivalent time is followed up to this multiple of the input horizon (a cell
#: aging with a 4x coefficient on a square-root law); beyond, its loss stays flat.
_EXTEND = 16

#: Default Monte Carlo draws. With one production lot and passive or active
#: balancing, P50 life differs by at most about 1 % between seeds at this count
#: (measured, docs/pack.md; checked in tests/test_pack.py); mixed lots or no
#: balancing widen the distribution and need 4,000-8,000 draws for 2 %.
DEFAULT_DRAWS = 1000

#: Elements (sites x draws x cells) processed at once: a few MB per array keeps the
#: step loop near the CPU caches and bounds memory.
DEFAULT_CHUNK_ELEMENTS = 100_000


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
    if series_cells is None and charge_voltage_v_per_cell is not None:
        v_ch = _positive("charge_voltage_v_per_cell", charge_voltage_v_per_cell)
        n_s = max(1, int(math.floor(1.2 * v_sys / v_ch + 0.5)))
    elif series_cells is None:
        n_s = max(1, int(math.floor(v_sys / v_cell + 0.5)))
    else:
        n_s = _whole("series_cells", series_cells)
    string_wh = n_s * v_cell * c_cell
    # The tolerance keeps float noise (e.g. 2 * 1280.0000000001) from adding a string.
    n_p = max(1, int(math.ceil(e_req / string_wh - 1e-9)))
    cap_ah = n_p * c_cell
    v_nom = n_s * v_cell
    cap_wh = v_nom * cap_ah
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


# ---------------------------------------------------------------------------
# Monte Carlo
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class LifeDistribution:
    """Pack life distribution per site.

    Attributes
    ----------
    p10_years, p50_years, p90_years : numpy.ndarray, shape (n_sites,)
        Percentiles of years to the site's end-of-life threshold (``inf`` = beyond
        the horizon of the input curves). P10 is the early-failure side.
    prob_fail_before_year : numpy.ndarray, shape (horizon_years, n_sites)
        Row ``y - 1``: probability that the pack falls below the threshold before
        age ``y`` years (y = 1..horizon).
    soh_p10_by_month, soh_p50_by_month, soh_p90_by_month : numpy.ndarray
        Percentiles of pack SOH (usable capacity / rated), shape (n_months+1, n_sites).
    draws : int
        Monte Carlo draws per site.
    series_cells, parallel_strings : int
    balancing : str
    notes : tuple of str
        Method and assumptions, for the plan's cautions and the workbook.
    """

    p10_years: np.ndarray
    p50_years: np.ndarray
    p90_years: np.ndarray
    prob_fail_before_year: np.ndarray
    soh_p10_by_month: np.ndarray
    soh_p50_by_month: np.ndarray
    soh_p90_by_month: np.ndarray
    draws: int
    series_cells: int
    parallel_strings: int
    balancing: str
    notes: tuple


def _curves(name, value, n_months_plus_1=None):
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found a non-numeric array, expected loss fractions",
                         source="life") from None
    if a.ndim == 1:
        a = a[:, None]
    if a.ndim != 2 or a.shape[0] < 13:
        raise InputError(
            f"{name}: found shape {np.shape(value)}, expected (n_months+1,) or (n_months+1, n_sites) "
            "with at least 12 months", source="life")
    if n_months_plus_1 is not None and a.shape[0] != n_months_plus_1:
        raise InputError(f"{name}: found {a.shape[0]} months+1, expected {n_months_plus_1} like "
                         "the first curve", source="life")
    if not np.all(np.isfinite(a)):
        raise InputError(f"{name}: found non-finite values, expected finite loss fractions", source="life")
    return a


def _fraction(name, value, upper=None):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a number >= 0", source="life") from None
    if not math.isfinite(x) or x < 0 or (upper is not None and x > upper):
        lim = f" and <= {upper}" if upper is not None else ""
        raise InputError(f"{name}: found {value!r}, expected a number >= 0{lim}", source="life")
    return x


def _quantiles(x, qs, axis):
    """Linear-interpolated quantiles that keep ``inf`` (beyond horizon) as ``inf``."""
    big = 1e30
    q = np.quantile(np.where(np.isinf(x), big, x), qs, axis=axis)
    return np.where(q > 1e20, np.inf, q)


def life_distribution(
    *,
    calendar_loss_frac,
    cycle_loss_frac,
    eol_soh_frac=0.8,
    series_cells,
    parallel_strings=1,
    cell_spread_frac=SPREAD_PRESETS["one-lot"].cell_spread_frac,
    resistance_spread_frac=SPREAD_PRESETS["one-lot"].resistance_spread_frac,
    rate_spread_frac=SPREAD_PRESETS["one-lot"].rate_spread_frac,
    inner_delta_k=1.0,
    activation_energy_j_mol=50e3,
    cycle_activation_energy_j_mol=None,
    reference_temp_c=25.0,
    parallel_imbalance_frac=0.1,
    balancing="passive",
    draws=DEFAULT_DRAWS,
    seed=0,
    model_sets=None,
    calendar_time_exponent=0.5,
    cycle_time_exponent=0.5,
    self_heating_k=0.5,
    resistance_growth_per_loss=2.0,
    depth_stress_exponent=1.0,
    soc_offset_spread_frac=0.01,
    soc_drift_spread_frac_per_year=0.005,
    active_recovery_frac=0.8,
    step_months=6,
    chunk_elements=DEFAULT_CHUNK_ELEMENTS,
):
    """Distribution of pack life from the nominal cell's fade curves.

    Parameters
    ----------
    calendar_loss_frac, cycle_loss_frac : array_like
        Nominal cell's monthly calendar and cycle loss [fraction of rating],
        shape ``(n_months+1,)`` (same for all sites) or ``(n_months+1, n_sites)``;
        the ``FadeResult`` fields of :func:`planner.aging.age_lanes`.
    eol_soh_frac : float or array_like (n_sites,)
        Pack SOH below which the site's requirement is no longer met.
    series_cells, parallel_strings : int
        Pack structure (see :func:`pack_structure`).
    cell_spread_frac, resistance_spread_frac, rate_spread_frac : float
        Coefficients of variation of initial capacity (normal), initial resistance
        and aging-rate coefficient (log-normal, median 1). Defaults: one production
        lot, ``SPREAD_PRESETS["one-lot"]``; ``SPREAD_PRESETS["mixed-lots"]`` for
        mixed stock.
    inner_delta_k : float
        Centre cell of a row runs this much warmer than the end cells [K].
    activation_energy_j_mol : float or array_like (n_sites,)
        Ea of the chemistry's calendar law [J/mol], for temperature offsets.
    cycle_activation_energy_j_mol : float or array_like (n_sites,), optional
        Ea of the cycle law [J/mol]; default: the calendar one. For a halving rule
        with step dT use ``R * T_ref * (T_ref + dT) * ln 2 / dT``.
    reference_temp_c : float or array_like (n_sites,)
        Battery temperature the nominal curves stand for [degC] (e.g. the site's
        Arrhenius-effective battery temperature).
    parallel_imbalance_frac : float
        Extra current share of the most loaded parallel string (0.1 = +10 %).
    balancing : {"none", "passive", "active"}
    draws : int
        Monte Carlo draws per site (default 1000).
    seed : int
        Seed (>= 0); results do not depend on the chunking.
    model_sets : list of (calendar, cycle) pairs or FadeResult, optional
        Alternative nominal curves (aging engine's alternative parameter sets),
        each shaped like ``calendar_loss_frac``; objects with ``calendar_loss_frac``
        and ``cycle_loss_frac`` attributes (``FadeResult``) are accepted. Draws are
        spread evenly across the sets (draw ``d`` uses set ``d mod K``), which widens
        the distribution by the disagreement between published models. When given,
        the main curves are used only for their shape check and the sets replace
        them (list the default set too if it should take part).
    calendar_time_exponent, cycle_time_exponent : float
        Time exponents ``z`` of the nominal laws (0.5 for square-root laws; 1 for
        laws linear in time such as Arrhenius life halving).
    self_heating_k : float
        Nominal cell's mean rise from its own I^2 R loss [K]; a cell with relative
        resistance ``r`` and current share ``l`` rises ``self_heating_k * r * l**2``.
    resistance_growth_per_loss : float
        Relative resistance rise per unit capacity loss [-].
    depth_stress_exponent : float
        Exponent ``kappa`` of the depth ratio in the cycle clock.
    soc_offset_spread_frac, soc_drift_spread_frac_per_year : float
        Standard deviations of initial charge offsets [fraction of rating] and of
        their drift [fraction per year] (self-discharge differences); they matter
        only with ``balancing="none"``.
    active_recovery_frac : float
        Share of the weakest-to-mean capacity gap active balancing recovers.
    step_months : int
        Months between re-evaluations of the cell stresses (1 = monthly feedback;
        default 6, which moved P10/P50/P90 by under 0.1 % against monthly steps,
        docs/pack.md). Between steps the pack SOH follows the nominal curve times a
        linearly interpolated pack-to-nominal ratio, so the single-cell case is
        exact at any step.
    chunk_elements : int
        Sites x draws x cells processed at once (memory bound).

    Returns
    -------
    LifeDistribution
    """
    p = _check_options(
        balancing=balancing, series_cells=series_cells, parallel_strings=parallel_strings,
        draws=draws, seed=seed, step_months=step_months, cell_spread_frac=cell_spread_frac,
        resistance_spread_frac=resistance_spread_frac, rate_spread_frac=rate_spread_frac,
        inner_delta_k=inner_delta_k, parallel_imbalance_frac=parallel_imbalance_frac,
        self_heating_k=self_heating_k, resistance_growth_per_loss=resistance_growth_per_loss,
        depth_stress_exponent=depth_stress_exponent, soc_offset_spread_frac=soc_offset_spread_frac,
        soc_drift_spread_frac_per_year=soc_drift_spread_frac_per_year,
        active_recovery_frac=active_recovery_frac, calendar_time_exponent=calendar_time_exponent,
        cycle_time_exponent=cycle_time_exponent)
    pairs = _curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets)
    site = _site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                        cycle_activation_energy_j_mol)
    p["same_ea"] = site["same_ea"]
    n_sites, n_mp1, k_sets = site["n_sites"], pairs[0][0].shape[0], len(pairs)
    n_draws, n_cells = p["draws"], p["n_s"] * p["n_p"]

    # (K, M+1, S) float32 curves; model set of draw d is d mod K (evenly spread).
    cal_k = np.stack([np.broadcast_to(a, (n_mp1, n_sites)) for a, _ in pairs]).astype(np.float32)
    cyc_k = np.stack([np.broadcast_to(b, (n_mp1, n_sites)) for _, b in pairs]).astype(np.float32)
    set_of_draw = np.arange(n_draws) % k_sets
    rngs = {q: [np.random.default_rng([p["seed"], qi, j]) for j in range(n_cells)]
            for qi, q in enumerate(("capacity", "resistance", "rate", "soc0", "drift"))}

    out_years = np.empty((n_sites, n_draws))
    soh_q = np.empty((3, n_mp1, n_sites))
    per_chunk = max(1, int(chunk_elements) // (n_draws * n_cells))
    # The gather tables hold (horizon x extension) months per site and set: bound them.
    per_chunk = min(per_chunk, max(1, 1_000_000 // (k_sets * ((n_mp1 - 1) * _EXTEND + 2))))
    for s0 in range(0, n_sites, per_chunk):
        sl = slice(s0, min(n_sites, s0 + per_chunk))
        out_years[sl], soh_q[:, :, sl] = _simulate_chunk(
            cal_k[:, :, sl], cyc_k[:, :, sl], set_of_draw, site["eol"][sl], site["t_ref"][sl],
            site["ea_cal"][sl], site["ea_cyc"][sl], rngs, p)

    p10, p50, p90 = _quantiles(out_years, [0.1, 0.5, 0.9], axis=1)
    ages = np.arange(1, (n_mp1 - 1) // 12 + 1, dtype=float)
    prob = (out_years[None, :, :] < ages[:, None, None]).mean(axis=2)
    return LifeDistribution(
        p10_years=p10, p50_years=p50, p90_years=p90,
        prob_fail_before_year=prob,
        soh_p10_by_month=soh_q[0], soh_p50_by_month=soh_q[1], soh_p90_by_month=soh_q[2],
        draws=n_draws, series_cells=p["n_s"], parallel_strings=p["n_p"], balancing=balancing,
        notes=_notes(p, k_sets, bool(np.any(np.isinf(out_years)))),
    )


def _check_options(**o):
    """Validated scalar options of :func:`life_distribution` as the internal dict."""
    if o["balancing"] not in BALANCING_KINDS:
        raise InputError(f"balancing: found {o['balancing']!r}, expected one of "
                         f"{', '.join(BALANCING_KINDS)}", source="life")
    n_p = _whole("parallel_strings", o["parallel_strings"], source="life")
    n_s = _whole("series_cells", o["series_cells"], source="life")
    p = dict(
        balancing=o["balancing"], n_s=n_s, n_p=n_p,
        draws=_whole("draws", o["draws"], source="life"),
        seed=_whole("seed", o["seed"], minimum=0, source="life"),
        step=_whole("step_months", o["step_months"], source="life"),
        sig_c=_fraction("cell_spread_frac", o["cell_spread_frac"], upper=0.3),
        sig_r=_fraction("resistance_spread_frac", o["resistance_spread_frac"], upper=2.0),
        sig_k=_fraction("rate_spread_frac", o["rate_spread_frac"], upper=2.0),
        d_in=_fraction("inner_delta_k", o["inner_delta_k"], upper=40.0),
        imb=_fraction("parallel_imbalance_frac", o["parallel_imbalance_frac"],
                      upper=n_p - 1.0 if n_p > 1 else None) if n_p > 1 else 0.0,
        theta=_fraction("self_heating_k", o["self_heating_k"], upper=40.0),
        g_res=_fraction("resistance_growth_per_loss", o["resistance_growth_per_loss"]),
        kappa=_fraction("depth_stress_exponent", o["depth_stress_exponent"], upper=5.0),
        sig_u0=_fraction("soc_offset_spread_frac", o["soc_offset_spread_frac"], upper=0.5),
        sig_du=_fraction("soc_drift_spread_frac_per_year", o["soc_drift_spread_frac_per_year"], upper=0.5),
        eta=_fraction("active_recovery_frac", o["active_recovery_frac"], upper=1.0),
        z_cal=_positive("calendar_time_exponent", o["calendar_time_exponent"], source="life"),
        z_cyc=_positive("cycle_time_exponent", o["cycle_time_exponent"], source="life"),
    )
    if n_p == 1:
        _fraction("parallel_imbalance_frac", o["parallel_imbalance_frac"])
    p["grad_k"] = inner_temperature_offsets_k(n_s, p["d_in"])
    p["share"] = string_current_shares(n_p, p["imb"])
    return p


def _curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets):
    """Checked (calendar, cycle) curve pairs, each (M+1, S or 1) float."""
    cal = _curves("calendar_loss_frac", calendar_loss_frac)
    cyc = _curves("cycle_loss_frac", cycle_loss_frac, cal.shape[0])
    if model_sets is None:
        return [(cal, cyc)]
    try:
        model_list = [(m.calendar_loss_frac, m.cycle_loss_frac) if hasattr(m, "cycle_loss_frac")
                      else m for m in model_sets]
        pairs = [(_curves(f"model_sets[{j}] calendar", a, cal.shape[0]),
                  _curves(f"model_sets[{j}] cycle", b, cal.shape[0]))
                 for j, (a, b) in enumerate(model_list)]
    except (TypeError, ValueError):
        raise InputError("model_sets: expected a list of (calendar, cycle) curve pairs",
                         source="life") from None
    if not pairs:
        raise InputError("model_sets: found an empty list, expected at least one pair", source="life")
    return pairs


def _site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                 cycle_activation_energy_j_mol):
    """Per-site arrays (n_sites,) of threshold, reference temperature and Ea."""
    def flat(value, name):
        try:
            return np.asarray(value, dtype=float).reshape(-1)
        except (TypeError, ValueError):
            raise InputError(f"{name}: found {value!r}, expected a number or one per site",
                             source="life") from None

    eol = flat(eol_soh_frac, "eol_soh_frac")
    t_ref = flat(reference_temp_c, "reference_temp_c")
    ea = flat(activation_energy_j_mol, "activation_energy_j_mol")
    same_ea = cycle_activation_energy_j_mol is None
    ea_cyc = ea if same_ea else flat(cycle_activation_energy_j_mol, "cycle_activation_energy_j_mol")
    widths = {a.shape[1] for pair in pairs for a in pair} | {eol.size, t_ref.size, ea.size, ea_cyc.size}
    widths.discard(1)
    if len(widths) > 1:
        raise InputError(f"site count: found inconsistent site counts {sorted(widths)} among curves, "
                         "eol_soh_frac, reference_temp_c and activation energies, expected one",
                         source="life")
    if not np.all((eol > 0) & (eol < 1.5)):
        raise InputError(f"eol_soh_frac: found {eol_soh_frac!r}, expected fractions in (0, 1.5)",
                         source="life")
    if not np.all((t_ref >= -80) & (t_ref <= 120)):
        raise InputError(f"reference_temp_c: found {reference_temp_c!r}, expected -80..120 degC",
                         source="life")
    if not (np.all(ea >= 0) and np.all(ea_cyc >= 0)):
        raise InputError(f"activation_energy_j_mol: found {activation_energy_j_mol!r} (cycle "
                         f"{cycle_activation_energy_j_mol!r}), expected >= 0 J/mol", source="life")
    n = widths.pop() if widths else 1
    ea_b = np.broadcast_to(ea, (n,))
    return dict(n_sites=n, eol=np.broadcast_to(eol, (n,)), t_ref=np.broadcast_to(t_ref, (n,)),
                ea_cal=ea_b, ea_cyc=ea_b if same_ea else np.broadcast_to(ea_cyc, (n,)),
                same_ea=same_ea)


def _notes(p, k_sets, beyond):
    """Plain-text method notes for the plan's cautions and the workbook."""
    notes = [
        f"Monte Carlo over {p['draws']} draws per site (seed {p['seed']}, Latin hypercube), "
        f"pack {p['n_s']}s{p['n_p']}p, balancing '{p['balancing']}'.",
        f"Cell spread: capacity CV {p['sig_c']:.3g}, resistance CV {p['sig_r']:.3g}, aging-rate "
        f"CV {p['sig_k']:.3g}; inner cells up to {p['d_in']:.3g} K warmer; most loaded string "
        f"+{p['imb']:.3g} current.",
        "Each cell ages along the nominal curves at its own equivalent time (coefficient "
        "multipliers m act as clock m**(1/z)); stresses re-evaluated every "
        f"{p['step']} month(s); the weakest cell limits each string, strings add.",
    ]
    if k_sets > 1:
        notes.append(f"Model uncertainty: draws spread evenly over {k_sets} alternative aging "
                     "parameter sets; the life band includes the disagreement between published models.")
    if beyond:
        notes.append("Some draws stay above the threshold for the whole horizon; their life is "
                     "reported as beyond the horizon (inf).")
    return tuple(notes)


def _simulate_chunk(cal_k, cyc_k, set_of_draw, eol, t_ref_c, ea_cal, ea_cyc, rngs, p):
    """Monte Carlo for a chunk of sites; returns years (S, D) and SOH bands (3, M+1, S)."""
    n_sites = cal_k.shape[2]
    n_draws = set_of_draw.size
    cells = _draw_cells(rngs, n_sites, n_draws, p)
    stress_cal = _log_stress(cells, t_ref_c, ea_cal, p)
    stress = [stress_cal, stress_cal if p["same_ea"] else _log_stress(cells, t_ref_c, ea_cyc, p)]
    marks = np.unique(np.r_[np.arange(0, cal_k.shape[1] - 1, p["step"]), cal_k.shape[1] - 1])
    soh_marks = _age_cells(cal_k, cyc_k, set_of_draw, cells, stress, marks, p)
    soh_nom_k = np.float32(1.0) - (cal_k + cyc_k)  # (K, M+1, S)
    bands = _soh_bands(soh_marks, marks, soh_nom_k)
    years = _years_between_marks(soh_marks, marks, soh_nom_k, set_of_draw, eol)
    return years, bands


def _draw_cells(rngs, n_sites, n_draws, p):
    """Per-cell draws, each (N, S, D) float32; one stream per (quantity, cell).

    Cells lead the shape so that reductions over a string run over whole slabs.
    """
    f32 = np.float32

    def normal(q):
        # Latin hypercube per site, cell and quantity (McKay, Beckman and Conover 1979,
        # Technometrics 21 (2) 239-245, from memory): each of the D draws falls in its own 1/D
        # probability stratum, in random order, which steadies the percentiles. The
        # streams are nested across pack sizes and independent of the chunking.
        out = np.empty((len(rngs[q]), n_sites, n_draws), f32)
        for j, g in enumerate(rngs[q]):
            # One call per chunk, consumed site by site: [ranking keys, jitter] per site.
            v = g.random((n_sites, 2, n_draws))
            stratum = np.argsort(v[:, 0, :], axis=1)  # a uniform random permutation
            u = (stratum + v[:, 1, :]) / n_draws
            out[j] = ndtri(np.clip(u, 1e-12, 1.0 - 1e-12))
        return out

    def log_sigma(cv):
        # Log-normal with median 1 and coefficient of variation cv.
        return f32(math.sqrt(math.log1p(cv * cv)))

    cells = {
        "c0": np.maximum(f32(1.0) + f32(p["sig_c"]) * normal("capacity"), f32(0.05)),
        "r0": np.exp(log_sigma(p["sig_r"]) * normal("resistance")),
        "log_k": log_sigma(p["sig_k"]) * normal("rate"),
    }
    if p["balancing"] == "none":
        cells["u0"] = f32(p["sig_u0"]) * normal("soc0")
        cells["du"] = f32(p["sig_du"] / 12.0) * normal("drift")
    return cells


def _log_stress(cells, t_ref_c, ea, p):
    """Log stress coefficient ``x = x_static + x_heat * h`` of each cell, one mechanism.

    ``h`` is the cell's resistance relative to the nominal cell's (grows with its
    own loss). Gradient: exact Arrhenius at the cell's static temperature T_s;
    self-heating ``theta * r * l**2`` (a fraction of a kelvin) to first order in
    1/T around T_s: ``d(-Ea/RT) = Ea/R * dT / T_s**2``.
    """
    f32 = np.float32
    grad = np.tile(p["grad_k"], p["n_p"]).astype(f32)[:, None, None]  # (N, 1, 1)
    share = np.repeat(p["share"], p["n_s"]).astype(f32)[:, None, None]
    theta = f32(p["theta"])
    t_ref = (np.asarray(t_ref_c) + 273.15).astype(f32)[None, :, None]  # (1, S, 1)
    ea_r = (np.asarray(ea) / GAS_CONSTANT_J_MOL_K).astype(f32)[None, :, None]
    t_s = t_ref + grad  # (N, S, 1)
    a_heat = ea_r / (t_s * t_s)
    x_static = ea_r * (f32(1.0) / t_ref - f32(1.0) / t_s) + cells["log_k"] - a_heat * theta
    x_heat = (a_heat * theta) * cells["r0"] * (share * share)
    return x_static, x_heat


def _gather_table(curves, z):
    """Loss and slope to the next month, flat over (set, month, site), float32 each.

    Beyond the input horizon the curve continues as its ``t**z`` law (notes 6.1)
    up to ``_EXTEND`` x the horizon, then stays flat (a last row with zero slope).
    """
    n_months = curves.shape[1] - 1
    months_ext = np.arange(n_months + 1, n_months * _EXTEND + 1) / n_months
    ext = curves[:, -1:, :].astype(float) * (months_ext ** z)[None, :, None]
    loss_pad = np.concatenate([curves, ext, ext[:, -1:]], axis=1)
    slope = np.diff(loss_pad, axis=1, append=loss_pad[:, -1:])
    return loss_pad.astype(np.float32).reshape(-1), slope.astype(np.float32).reshape(-1)


def _age_cells(cal_k, cyc_k, set_of_draw, cells, stress, marks, p):
    """Step every cell's equivalent times from mark to mark; pack SOH at the marks.

    Arrays are (N cells, S sites, D draws) float32, cells string by string.
    """
    f32 = np.float32
    n_sets, n_mp1, n_sites = cal_k.shape
    n_draws = set_of_draw.size
    n_s, n_p = p["n_s"], p["n_p"]
    shape = (n_s * n_p, n_sites, n_draws)
    cells4 = (n_p, n_s, n_sites, n_draws)
    rows = (n_mp1 - 1) * _EXTEND + 2
    tabs = (_gather_table(cal_k, p["z_cal"]), _gather_table(cyc_k, p["z_cyc"]))
    # Flat row of (set k, month m, site s): (k * rows + m) * S + s.
    base = (set_of_draw[None, :] * (rows * n_sites) + np.arange(n_sites)[:, None]).astype(np.intp)
    loss_nom_draw = (cal_k + cyc_k)[set_of_draw]  # (D, M+1, S)
    m_last = f32(rows - 1)
    share_n = np.repeat(p["share"], n_s).astype(f32)[:, None, None]

    def read(tab, tau):
        # Linear interpolation in the nominal curve at equivalent time tau [months].
        whole = np.floor(tau)
        np.minimum(whole, m_last, out=whole)
        f = tau - whole
        i = whole.astype(np.intp)
        i *= n_sites
        i += base
        f *= np.take(tab[1], i)
        f += np.take(tab[0], i)
        return f

    def pack_soh(cap, month):
        u = None
        if p["balancing"] == "none":
            u = (cells["u0"] + cells["du"] * f32(month)).reshape(cells4)
        usable = usable_string_capacity_frac(cap.reshape(cells4), u, balancing=p["balancing"],
                                             active_recovery_frac=f32(p["eta"]), axis=1)
        return usable.sum(axis=0) / f32(n_p)

    tau = [np.zeros(shape, f32), np.zeros(shape, f32)]  # calendar, cycle [months]
    loss = read(tabs[0], tau[0])
    loss += read(tabs[1], tau[1])
    inv_z = (f32(1.0 / p["z_cal"]), f32(1.0 / p["z_cyc"]))
    g_res = f32(p["g_res"])
    dynamic = p["theta"] > 0 and g_res > 0
    same = inv_z[0] == inv_z[1] and stress[0] is stress[1]
    soh_marks = np.empty((marks.size, n_sites, n_draws), f32)
    rate = None
    for j, m0 in enumerate(marks):
        cap = np.subtract(f32(1.0), loss)
        np.maximum(cap, f32(0.0), out=cap)
        cap *= cells["c0"]
        soh_marks[j] = pack_soh(cap, m0)
        if j == marks.size - 1:
            break
        dt = f32(marks[j + 1] - m0)
        l_nom = loss_nom_draw[:, m0, :].T[None].astype(f32)  # (1, S, D)
        if rate is None or dynamic:
            # Clock rates at the start of the step (explicit equivalent-time update):
            # coefficient**(1/z) = exp(x / z); resistance relative to the nominal cell's.
            h = loss * g_res
            h += f32(1.0)
            h /= f32(1.0) + g_res * l_nom
            rate = [None, None]
            for k in (0, 1):
                if k == 1 and same:
                    rate[1] = rate[0]
                    break
                x = h * stress[k][1]
                x += stress[k][0]
                x *= inv_z[k]
                rate[k] = np.exp(x, out=x)
        tau[0] += dt * rate[0]
        # Cycle clock: current share x (depth ratio)**kappa x coefficient**(1/z).
        if p["balancing"] == "active":
            c4 = cap.reshape(cells4)
            cap = (c4 + f32(p["eta"]) * (c4.mean(axis=1, keepdims=True) - c4)).reshape(shape)
        depth = np.maximum(cap, f32(1e-6))
        np.divide(np.maximum(f32(1.0) - l_nom, f32(1e-6)), depth, out=depth)
        depth = _pow(depth, p["kappa"])
        depth *= share_n * dt
        depth *= rate[1]
        tau[1] += depth
        loss = read(tabs[0], tau[0])
        loss += read(tabs[1], tau[1])
    return soh_marks


def _soh_bands(soh_marks, marks, soh_nom_k):
    """P10/P50/P90 of pack SOH by month, shape (3, M+1, S).

    Quantiles of pack SOH relative to the (set-mean) nominal SOH at the yearly
    marks, interpolated between them and multiplied back by the monthly nominal
    curve: exact at whole years, and exact everywhere for one cell without spread.
    """
    # Yearly marks (and the last) are enough for a band that rides on the monthly
    # nominal curve, and halve the cost of the quantiles.
    keep = (marks % 12 == 0) | (marks == marks[-1])
    soh_marks, marks = soh_marks[keep], marks[keep]
    nom_ref = soh_nom_k.mean(axis=0)  # (M+1, S)
    rel = soh_marks / nom_ref[marks][:, :, None]
    q_marks = np.quantile(rel, [0.1, 0.5, 0.9], axis=2)  # (3, n_marks, S)
    months = np.arange(nom_ref.shape[0])
    seg = np.clip(np.searchsorted(marks, months, side="right") - 1, 0, marks.size - 2)
    w = (months - marks[seg]) / (marks[seg + 1] - marks[seg])
    q_m = (1.0 - w)[None, :, None] * q_marks[:, seg] + w[None, :, None] * q_marks[:, seg + 1]
    return nom_ref[None].astype(float) * q_m


def _years_between_marks(soh_marks, marks, soh_nom_k, set_of_draw, eol):
    """Years to ``eol`` per (site, draw) from pack SOH at the marks.

    Locates the first mark at or below the threshold, then refines month by month
    inside the preceding step: monthly SOH is the nominal SOH of the draw's model
    set times the pack-to-nominal ratio interpolated linearly between the marks.
    """
    n_marks, n_sites, n_draws = soh_marks.shape
    thr = eol[:, None]
    below = soh_marks <= thr
    hit = below.any(axis=0)
    jm = np.maximum(np.argmax(below, axis=0), 1)
    m_lo, m_hi = marks[jm - 1], marks[jm]
    site = np.arange(n_sites)[:, None]
    k = set_of_draw[None, :]
    s_lo = np.take_along_axis(soh_marks, (jm - 1)[None], 0)[0]
    s_hi = np.take_along_axis(soh_marks, jm[None], 0)[0]
    tiny = np.float32(1e-6)
    r_lo = s_lo / np.maximum(soh_nom_k[k, m_lo, site], tiny)
    r_hi = s_hi / np.maximum(soh_nom_k[k, m_hi, site], tiny)
    offs = np.arange(int(np.max(np.diff(marks))) + 1)[:, None, None]
    m = np.minimum(m_lo[None] + offs, m_hi[None])  # (step+1, S, D)
    w = (m - m_lo[None]) / np.maximum(m_hi - m_lo, 1)[None]
    soh = soh_nom_k[k[None], m, site[None]] * ((1.0 - w) * r_lo[None] + w * r_hi[None])
    soh[0] = s_lo  # exact at the marks (no rounding through the ratio)
    soh = np.where(m == m_hi[None], s_hi[None], soh)
    within = _crossing_rows(soh, thr)  # rows after m_lo
    rows = np.where(np.isfinite(within), m_lo + within, m_hi)
    years = np.where(below[0], 0.0, row_years(rows))
    return np.where(hit, years, np.inf)


def _pow(x, e):
    # Identity and square are exact and cheap; the common square-root laws hit them.
    if e == 1.0:
        return x
    if e == 2.0:
        return x * x
    return x ** np.float32(e)


def stress_parameters(aging_params, *, default_activation_energy_j_mol=50e3):
    """Activation energies and time exponents of an aging parameter set.

    Reads a chemistry's aging set (``planner.chemistry.Chemistry.aging_set()``:
    ``calendar_model``, ``cycle_model``, ``calendar``, ``cycle``) and returns the
    keyword arguments of :func:`life_distribution` that describe its laws:

    - time exponents: the engine's own (``calendar_rate_parts`` / ``cycle_exponent``
      of :mod:`planner.aging`): 0.5 for the square-root laws of Naumann et al.
      2018/2020, 0.75 for the Schmalstieg et al. 2014 calendar law, 1 for laws
      linear in time (halving rule, Woehler/Palmgren-Miner);
    - activation energy: ``activation_energy_j_mol`` as given; ``temp_coefficient_k``
      x R (Schmalstieg's ``exp(-6976/T)`` is 58 kJ/mol, notes 2.1); a halving or
      doubling step dT at T_ref is the Arrhenius law with
      ``Ea = R T_ref (T_ref + dT) ln 2 / dT`` (exactly a factor 2 over dT).

    A law without a temperature term gets ``default_activation_energy_j_mol``
    (50 kJ/mol, the middle of the 50-70 kJ/mol of SEI growth, notes 6.3) only if it
    names none at all; an explicit 0 stays 0.
    """
    from planner.aging.calendar import calendar_rate_parts
    from planner.aging.cycle import cycle_exponent

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
        z_cyc = float(cycle_exponent(aging_params.cycle_model))
    except (ValueError, KeyError, AttributeError) as err:
        raise InputError(f"aging set: found an unknown law ({err}), expected one of the aging "
                         "engine's calendar and cycle models", source="life") from None
    return {
        "activation_energy_j_mol": ea_of(aging_params.calendar),
        "cycle_activation_energy_j_mol": ea_of(aging_params.cycle),
        "calendar_time_exponent": z_cal,
        "cycle_time_exponent": z_cyc,
    }


def life_fields(dist, *, prefix="life"):
    """The fixed JSON fields of the life percentiles, one dict per site.

    ``prefix="life"`` gives ``life_p10_years``, ``life_p50_years``, ``life_p90_years``
    (plan JSON); ``prefix="years_to_eol"`` gives ``years_to_eol_p10``,
    ``years_to_eol_p50``, ``years_to_eol_p90`` (``planner life --json``). Years
    beyond the horizon become ``None`` (JSON null).
    """
    def val(x):
        return None if not np.isfinite(x) else round(float(x), 3)

    rows = []
    for i in range(dist.p50_years.size):
        vals = (dist.p10_years[i], dist.p50_years[i], dist.p90_years[i])
        if prefix == "years_to_eol":
            keys = ("years_to_eol_p10", "years_to_eol_p50", "years_to_eol_p90")
        elif prefix == "life":
            keys = ("life_p10_years", "life_p50_years", "life_p90_years")
        else:
            raise InputError(f"prefix: found {prefix!r}, expected 'life' or 'years_to_eol'", source="life")
        rows.append({k: val(v) for k, v in zip(keys, vals)})
    return rows


def life_summary(fade=None, *, calendar_loss_frac=None, cycle_loss_frac=None, prefix="life",
                 **options):
    """One call from the aging engine's curves to the fixed JSON life fields.

    Parameters
    ----------
    fade : FadeResult, optional
        The aging engine's result (its ``calendar_loss_frac`` and
        ``cycle_loss_frac``, one column per site or lane); or pass the two arrays.
    prefix : {"life", "years_to_eol"}
        Key style, see :func:`life_fields`.
    **options
        Everything else of :func:`life_distribution` (``eol_soh_frac``,
        ``series_cells``, ``parallel_strings``, ``cell_spread_frac``, ``balancing``,
        ``draws``, ``seed``, ``model_sets`` ...).

    Returns
    -------
    rows : list of dict
        Per site, the three percentile fields (None = beyond the horizon).
    dist : LifeDistribution
        The full distribution (failure probabilities, SOH bands, notes).
    """
    if fade is not None:
        calendar_loss_frac, cycle_loss_frac = fade.calendar_loss_frac, fade.cycle_loss_frac
    if calendar_loss_frac is None or cycle_loss_frac is None:
        raise InputError("fade: found no fade curves, expected a FadeResult or both "
                         "calendar_loss_frac and cycle_loss_frac", source="life")
    dist = life_distribution(calendar_loss_frac=calendar_loss_frac, cycle_loss_frac=cycle_loss_frac,
                             **options)
    return life_fields(dist, prefix=prefix), dist
