"""Cycle fade laws: capacity lost to charge-discharge cycles.

One function per published law, pure and array-aware, plus :func:`cycle_state_increment`,
which turns rainflow-counted cycles (depth, mean SOC, count) with their temperature,
C-rate and charge voltage into increments of the superposition state of
:mod:`planner.aging.superposition` (the loss is ``state ** exponent``).

Power laws in throughput (``Q = k * x**z``) are superposed like the calendar laws:
each cycle adds ``k**(1/z) * dx``. Wöhler curves with Palmgren-Miner damage and linear
throughput laws have ``z = 1``.
"""

from __future__ import annotations

import numpy as np

from planner.aging.calendar import KELVIN_OFFSET, R_GAS_J_MOL_K, arrhenius_factor

WANG2011_B_TABLE = {0.5: 31630.0, 2.0: 21681.0, 6.0: 12934.0, 10.0: 15512.0}
"""Pre-exponential factor B vs C-rate, Wang et al. 2011 Table (from memory)."""


def wang2011_cycle_loss_pct(c_rate, temp_c, throughput_ah, *, b=None,
                            activation_energy_j_mol=31700.0, c_rate_alpha_j_mol=370.3,
                            exponent=0.55):
    """Cycle capacity loss of a graphite/LiFePO4 cell after Wang et al. 2011, percent.

    ``Q_loss[%] = B * exp(-(Ea - alpha * C) / (R T)) * Ah**z`` (Eq. 5 of Wang, J., Liu, P.,
    Hicks-Garner, J., et al. (2011), Cycle-life model for graphite-LiFePO4 cells,
    J. Power Sources 196, 3942-3948), with Ea = 31,700 J/mol, alpha = 370.3 J/mol per
    C-rate, z = 0.55 and B from the paper's table (from memory) unless given.

    Parameters
    ----------
    c_rate : float
        Cycling C-rate (must be a table entry when ``b`` is None).
    temp_c : array_like
        Temperature, °C.
    throughput_ah : array_like
        Discharged charge throughput of the 2.2 Ah cell, Ah.
    """
    if b is None:
        b = WANG2011_B_TABLE[float(c_rate)]
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    return b * np.exp(-(activation_energy_j_mol - c_rate_alpha_j_mol * c_rate)
                      / (R_GAS_J_MOL_K * temp_k)) * np.asarray(throughput_ah, dtype=float) ** exponent


def plating_factor(temp_c, charge_c_rate, *, plating_below_c, plating_share_ref,
                   plating_activation_energy_j_mol, plating_c_rate_beta,
                   plating_sei_activation_energy_j_mol, **_):
    """Low-temperature factor of a sqrt-law cycle coefficient: lithium plating on graphite.

    Below the crossover temperature ``T_x`` (about 25 °C: Waldmann et al. 2014, J. Power
    Sources 262, 129-135; Feinauer et al. 2024, J. Power Sources 594, 233948) cycle fade
    of a graphite anode speeds up as the *charge* temperature falls and the charge
    current rises. Schimpe et al. 2018 (J. Electrochem. Soc. 165 (2), A181-A193, Eqs. 15
    and 18, Table IV) split the cycle coefficient into an SEI term
    ``k_hi exp(-Ea_hi/R (1/T - 1/T_ref))`` and a plating term
    ``k_lo exp(+Ea_lo/R (1/T - 1/T_ref)) exp(beta (I_ch - I_ref)/C0)``. Relative to its
    value at ``T_x`` and the same charge rate, their sum is

        F = ((1 - s) AF_sei(T) + w AF_pl(T)) / ((1 - s) + w),   w = s exp(beta (C_ch - 1)),

    with ``s`` the plating share at ``T_x`` and 1 C. ``F = 1`` at and above ``T_x`` (the
    set's own temperature law applies there). The sqrt-law LFP set multiplies its
    coefficient by F, as Schimpe fit it; the NMC set, whose activation energies come from
    Waldmann's Arrhenius plot of the ageing *rate*, multiplies its rate by F.

    Parameters
    ----------
    temp_c : array_like
        Charge temperature, °C (the engine uses the temperature of the cycle).
    charge_c_rate : array_like
        Mean charge current as a C-rate.
    """
    temp = np.asarray(temp_c, dtype=float)
    share = plating_share_ref
    w = share * np.exp(plating_c_rate_beta * (np.asarray(charge_c_rate, dtype=float) - 1.0))
    # Both Arrhenius terms relative to T_x share x = 1/T - 1/T_x.
    x = 1.0 / (temp + KELVIN_OFFSET) - 1.0 / (plating_below_c + KELVIN_OFFSET)
    sei = np.exp(-plating_sei_activation_energy_j_mol / R_GAS_J_MOL_K * x)
    plating = np.exp(plating_activation_energy_j_mol / R_GAS_J_MOL_K * x)
    factor = ((1.0 - share) * sei + w * plating) / ((1.0 - share) + w)
    return np.where(temp < plating_below_c, factor, 1.0)


def temperature_factor_with_plating(temp_c, charge_c_rate, params):
    """The set's Arrhenius factor, times :func:`plating_factor` below the crossover.

    Above ``plating_below_c`` (or for a set without plating parameters) the set's own
    ``activation_energy_j_mol`` / ``temp_ref_c`` law; below it that law is held at the
    crossover and the plating factor takes over. Runs once per counted cycle of every
    lane, so each branch is evaluated on its own cycles only.
    """
    temp = np.asarray(temp_c, dtype=float)
    ea, ref = params["activation_energy_j_mol"], params["temp_ref_c"]
    if "plating_below_c" not in params:
        return arrhenius_factor(temp, ea, ref)
    below = params["plating_below_c"]
    if temp.ndim == 0:
        return (arrhenius_factor(max(float(temp), below), ea, ref)
                * plating_factor(temp, charge_c_rate, **params))
    cold = temp < below
    factor = np.empty_like(temp)
    factor[~cold] = arrhenius_factor(temp[~cold], ea, ref)
    rate = np.broadcast_to(np.asarray(charge_c_rate, dtype=float), temp.shape)[cold]
    factor[cold] = float(arrhenius_factor(below, ea, ref)) * plating_factor(temp[cold], rate, **params)
    return factor


def naumann2020_coefficient(c_rate, doc_frac, *, a, b, doc_c, doc_d, **_):
    """Coefficient of Naumann et al. 2020, fraction per sqrt(FEC).

    ``k = (a C + b) * (c (DOC - 0.6)**3 + d) / 100`` (the published fit is in percent;
    Naumann, M., Spingler, F. B., Jossen, A. (2020), Analysis and modeling of cycle aging
    of a commercial LiFePO4/graphite cell, J. Power Sources 451, 227666; from memory).
    """
    shift = np.asarray(doc_frac, dtype=float) - 0.6
    # shift * shift * shift, not shift ** 3: numpy's power by 3 calls pow() per element,
    # about 20x slower, and this runs once per counted cycle.
    return (a * np.asarray(c_rate, dtype=float) + b) * (doc_c * (shift * shift * shift) + doc_d) / 100.0


def naumann2020_cycle_loss(c_rate, doc_frac, full_equivalent_cycles, **params):
    """Cycle capacity loss of Naumann et al. 2020 at constant conditions (fraction).

    ``Q_loss = (a C + b) (c (DOC - 0.6)^3 + d) sqrt(FEC)`` (J. Power Sources 451, 227666).
    """
    return naumann2020_coefficient(c_rate, doc_frac, **params) * np.sqrt(
        np.asarray(full_equivalent_cycles, dtype=float))


def schmalstieg2014_beta_cap(mean_voltage_v, dod_frac, *, curvature_per_v2, voltage_centre_v,
                             offset, dod_slope, **_):
    """Cycle coefficient of Schmalstieg et al. 2014, Ah^-0.5.

    ``beta_cap = 7.348e-3 (V_mean - 3.667)^2 + 7.600e-4 + 4.081e-3 * DOD``
    (J. Power Sources 257, 325-334).
    """
    v = np.asarray(mean_voltage_v, dtype=float)
    return curvature_per_v2 * (v - voltage_centre_v) ** 2 + offset + dod_slope * np.asarray(
        dod_frac, dtype=float)


def schmalstieg2014_cycle_loss(mean_voltage_v, dod_frac, throughput_ah, **params):
    """Cycle capacity loss of Schmalstieg et al. 2014 at constant conditions (fraction).

    ``1 - C_rel = beta_cap(V_mean, DOD) * sqrt(Q)``, Q the charge throughput in Ah.
    """
    return schmalstieg2014_beta_cap(mean_voltage_v, dod_frac, **params) * np.sqrt(
        np.asarray(throughput_ah, dtype=float))


def woehler_cycles_to_failure(dod_frac, *, cycles_at_full_depth, woehler_exponent, **_):
    """Cycles to end of life at depth of discharge ``dod_frac``: ``N = N_100 * DOD**-k``.

    The Wöhler (S-N) form used for lead-acid cycle life vs depth (Wöhler, A. (1870), from memory:
    Z. Bauwesen 20, 73-106; applied to batteries e.g. in Bindner et al. (2005), Lifetime
    modelling of lead acid batteries, Risø-R-1515(EN)).
    """
    dod = np.asarray(dod_frac, dtype=float)
    with np.errstate(divide="ignore"):
        return cycles_at_full_depth * dod ** (-woehler_exponent)


def palmgren_miner_damage(counts, cycles_to_failure):
    """Linear damage sum ``D = sum(n_i / N_i)`` (Miner, M. A. (1945), J. Appl. Mech. 12, A159-A164)."""
    return np.sum(np.asarray(counts, dtype=float) / np.asarray(cycles_to_failure, dtype=float))


def halving_life_factor(temp_c, temp_ref_c, halving_step_k):
    """Life multiplier ``2 ** (-(T - T_ref)/dT)`` above T_ref, 1 below (halving rule)."""
    return np.exp2(-np.maximum(np.asarray(temp_c, dtype=float) - temp_ref_c, 0.0) / halving_step_k)


def charge_voltage_life_factor(charge_voltage_v_per_cell, voltage_ref_v_per_cell, doubling_step_v):
    """Cycle-life multiplier of the charge-voltage rule: ``2 ** ((V_ref - V) / dV)``.

    Common practice for NMC-type cells: each 0.1 V per cell below 4.20 V roughly doubles
    cycle life (and each 0.1 V above halves it). ``doubling_step_v <= 0`` switches the
    rule off (factor 1).
    """
    if doubling_step_v <= 0:
        return np.ones_like(np.asarray(charge_voltage_v_per_cell, dtype=float))
    return np.exp2((voltage_ref_v_per_cell - np.asarray(charge_voltage_v_per_cell, dtype=float))
                   / doubling_step_v)


CYCLE_EXPONENTS = {
    "naumann2020": 0.5,
    "schmalstieg2014_cycle": 0.5,
    "woehler_miner": 1.0,
    "linear_throughput": 1.0,
    "primary_load_charge": 1.0,
}
"""Exponent z of each cycle law (loss = state ** z)."""


def cycle_exponent(model: str) -> float:
    """Exponent z of the named cycle law."""
    if model not in CYCLE_EXPONENTS:
        raise ValueError(f"unknown cycle model {model!r}")
    return CYCLE_EXPONENTS[model]


def cycle_state_increment(model: str, params, chemistry, depth_frac, mean_soc_frac, count,
                          temp_c, c_rate, charge_voltage_v_per_cell, charge_c_rate=None):
    """State increments of counted cycles for the named cycle law, and the law's exponent.

    Parameters
    ----------
    model : str
        Cycle model name from the chemistry's aging set.
    params : Mapping[str, float]
        Its parameters.
    chemistry : planner.chemistry.Chemistry
    depth_frac, mean_soc_frac, count : ndarray
        Rainflow range (depth of discharge, fraction of rated capacity), mean SOC and
        count (0.5 or 1) per cycle.
    temp_c, c_rate, charge_voltage_v_per_cell : ndarray
        Battery temperature (°C), discharge C-rate and charge voltage per cell for each cycle.
    charge_c_rate : ndarray, optional
        Charge C-rate for each cycle (the lithium-plating term; default ``c_rate``).

    Returns
    -------
    increments : ndarray
        Added to the cycle state; the cycle loss is ``state ** exponent``.
    exponent : float
    """
    p = dict(params)
    depth = np.asarray(depth_frac, dtype=float)
    n = np.asarray(count, dtype=float)
    charge_rate = c_rate if charge_c_rate is None else charge_c_rate
    if model == "naumann2020":
        # Coefficient convention, as Wang et al. 2011 and Schimpe et al. 2018 apply their
        # Arrhenius terms (Schimpe's plating factor scales the coefficient).
        heat = temperature_factor_with_plating(temp_c, charge_rate, p)
        k = naumann2020_coefficient(c_rate, depth, **p) * heat
        return k * k * n * depth, 0.5
    if model == "schmalstieg2014_cycle":
        volts = chemistry.open_circuit_voltage_v(mean_soc_frac)
        if p.get("depth_per_usable", 0.0) >= 0.5:
            # Depth and throughput relative to the capacity usable at the charge voltage:
            # the charge-voltage rule below is stated for *full* cycles at each voltage,
            # so the shallower full cycle of a lower voltage must not be credited twice.
            # The published model counts depth on rated capacity (the flag is 0 there).
            depth = depth / np.asarray(chemistry.usable_fraction(charge_voltage_v_per_cell), dtype=float)
        beta = schmalstieg2014_beta_cap(volts, depth, **p)
        temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
        # C-rate term borrowed from Wang et al. 2011 (coefficient convention, squared for z=0.5).
        c_term = np.exp(p["c_rate_alpha_j_mol"] * (np.asarray(c_rate, dtype=float) - p["c_rate_ref"])
                        / (R_GAS_J_MOL_K * temp_k))
        # The temperature and charge-voltage rules of practice scale cycle *life*: clock convention.
        life = charge_voltage_life_factor(charge_voltage_v_per_cell, p["voltage_ref_v_per_cell"],
                                          p["voltage_doubling_step_v"])
        # Waldmann et al. 2014 plot the ageing *rate*: here the factor scales the rate.
        heat = temperature_factor_with_plating(temp_c, charge_rate, p)
        directions = 2.0 if p["throughput_both_directions"] >= 0.5 else 1.0
        throughput_ah = n * depth * p["cell_capacity_ah"] * directions
        return (beta * c_term) ** 2 * throughput_ah * heat / life, 0.5
    if model == "woehler_miner":
        life = woehler_cycles_to_failure(np.maximum(depth, 1e-12), **p)
        heat = halving_life_factor(temp_c, p["temp_ref_c"], p["halving_step_k"])
        return p["loss_at_end_frac"] * n / (life * heat), 1.0
    if model == "linear_throughput":
        heat = arrhenius_factor(temp_c, p["activation_energy_j_mol"], p["temp_ref_c"])
        return p["loss_at_end_frac"] * n * depth / p["full_cycles_to_end"] * heat, 1.0
    raise ValueError(f"unknown cycle model {model!r}")
