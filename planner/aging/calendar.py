"""Calendar fade laws: capacity lost while a battery sits at a temperature and state of charge.

One function per published law, pure and array-aware. Each law is also exposed to the
engine as a *rate* split into a temperature part and a state-of-charge part (see
:func:`calendar_rate_parts`), because the engine superposes every law by equivalent
time (:mod:`planner.aging.superposition`).

Temperature convention (issue 4 asks to state it): the fitted laws of Naumann et al.
2018 and Schmalstieg et al. 2014 put the Arrhenius factor in the *coefficient*,
``Q = k_ref * AF(T) * g(SOC) * t**z``; their parameters were fitted that way, so the
engine uses the coefficient convention for them (equivalent reference time
``sum(AF**(1/z) * dt)``). The linear laws (lead-acid halving rule, LTO, primary
self-discharge) have ``z = 1``, where clock and coefficient conventions coincide.
"""

from __future__ import annotations

import numpy as np

from planner import HOURS_PER_YEAR

R_GAS_J_MOL_K = 8.314462618
"""Molar gas constant (CODATA 2018), J/(mol K)."""

KELVIN_OFFSET = 273.15
SECONDS_PER_HOUR = 3600.0
HOURS_PER_DAY = 24.0


def arrhenius_factor(temp_c, activation_energy_j_mol, temp_ref_c=25.0):
    """Arrhenius acceleration factor relative to a reference temperature.

    ``AF = exp(-Ea / R * (1 / T - 1 / T_ref))`` with T in kelvin
    (Arrhenius, S. (1889), Z. Phys. Chem. 4, 226-248).

    Parameters
    ----------
    temp_c : array_like
        Temperature, °C.
    activation_energy_j_mol : float
        Activation energy Ea, J/mol.
    temp_ref_c : float
        Reference temperature, °C (AF = 1 there).

    Returns
    -------
    ndarray
        Dimensionless factor.
    """
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    return np.exp(-activation_energy_j_mol / R_GAS_J_MOL_K
                  * (1.0 / temp_k - 1.0 / (temp_ref_c + KELVIN_OFFSET)))


def arrhenius_factor_below(temp_c, activation_energy_j_mol, temp_ref_c, *, below_c=None,
                           low_activation_energy_j_mol=None):
    """Arrhenius factor with its own activation energy below the lowest fitted temperature.

    ``AF(T)`` as :func:`arrhenius_factor` from ``below_c`` up; below it the curve goes on
    from ``AF(below_c)`` with ``low_activation_energy_j_mol``. A fit on warm points only
    (e.g. 25 and 45 °C) says nothing about the slope in the cold: a storage study that
    covers the cold supplies it (docs/aging.md, "Cold storage"). Without ``below_c`` the
    plain factor is returned.
    """
    af = arrhenius_factor(temp_c, activation_energy_j_mol, temp_ref_c)
    if below_c is None or low_activation_energy_j_mol is None:
        return af
    temp = np.asarray(temp_c, dtype=float)
    cold = (arrhenius_factor(below_c, activation_energy_j_mol, temp_ref_c)
            * arrhenius_factor(temp, low_activation_energy_j_mol, below_c))
    return np.where(temp < below_c, cold, af)


def naumann2018_soc_factor(soc_frac, soc_c, soc_d):
    """SOC term of Naumann et al. 2018: ``c * (SOC - 0.5)**3 + d`` (dimensionless)."""
    return soc_c * (np.asarray(soc_frac, dtype=float) - 0.5) ** 3 + soc_d


def naumann2018_calendar_loss(temp_c, soc_frac, duration_s, *, k_ref_per_sqrt_s,
                              activation_energy_j_mol, temp_ref_c, soc_c, soc_d,
                              low_temp_below_c=None, low_temp_activation_energy_j_mol=None):
    """Calendar capacity loss of an LFP/graphite cell at constant conditions (fraction).

    ``Q_loss = k_ref * exp(-Ea/R (1/T - 1/T_ref)) * (c (SOC - 0.5)^3 + d) * sqrt(t)``,
    t in seconds (Naumann, M., Schimpe, M., Keil, P., Hesse, H. C., Jossen, A. (2018),
    Analysis and modeling of calendar aging of a commercial LiFePO4/graphite cell,
    J. Energy Storage 17, 153-169; capacity model, parameters from memory).

    Parameters
    ----------
    temp_c, soc_frac, duration_s : array_like
        Temperature (°C), state of charge (fraction), storage duration (s).
    k_ref_per_sqrt_s, activation_energy_j_mol, temp_ref_c, soc_c, soc_d : float
        Model parameters (see ``chemistries.toml``).
    low_temp_below_c, low_temp_activation_energy_j_mol : float, optional
        Below this temperature the activation energy of a cold storage study applies
        (:func:`arrhenius_factor_below`).

    Returns
    -------
    ndarray
        Capacity loss as a fraction of rated capacity.
    """
    k = (k_ref_per_sqrt_s * arrhenius_factor_below(temp_c, activation_energy_j_mol, temp_ref_c,
                                                   below_c=low_temp_below_c,
                                                   low_activation_energy_j_mol=low_temp_activation_energy_j_mol)
         * naumann2018_soc_factor(soc_frac, soc_c, soc_d))
    return k * np.sqrt(np.asarray(duration_s, dtype=float))


def schmalstieg2014_alpha_cap(voltage_v, temp_c, *, voltage_slope_per_v, voltage_offset,
                              scale, temp_coefficient_k, **_):
    """Calendar coefficient of Schmalstieg et al. 2014, in d^-0.75.

    ``alpha_cap = (7.543 V - 23.75) * 1e6 * exp(-6976 / T)``, clamped at 0 below the
    voltage where the linear term vanishes (about 3.15 V)
    (Schmalstieg, J., Käbitz, S., Ecker, M., Sauer, D. U. (2014), A holistic aging model
    for Li(NiMnCo)O2 based 18650 lithium-ion batteries, J. Power Sources 257, 325-334).

    Parameters
    ----------
    voltage_v : array_like
        Storage (open-circuit) voltage per cell, V.
    temp_c : array_like
        Temperature, °C.
    """
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    linear = np.maximum(voltage_slope_per_v * np.asarray(voltage_v, dtype=float) + voltage_offset, 0.0)
    return linear * scale * np.exp(-temp_coefficient_k / temp_k)


def schmalstieg2014_calendar_loss(voltage_v, temp_c, duration_days, **params):
    """Calendar capacity loss of Schmalstieg et al. 2014 at constant conditions (fraction).

    ``1 - C_rel = alpha_cap(V, T) * t**0.75``, t in days (J. Power Sources 257, 325-334).
    """
    z = params.get("time_exponent", 0.75)
    return schmalstieg2014_alpha_cap(voltage_v, temp_c, **params) * np.asarray(
        duration_days, dtype=float) ** z


def arrhenius_halving_life_years(temp_c, *, life_years_ref, temp_ref_c, halving_step_k, **_):
    """Float life of a lead-acid battery under the halving rule of stationary practice, years.

    ``L(T) = L_ref * 2 ** (-(T - T_ref) / dT_half)`` for T above T_ref, and ``L_ref``
    below it (cold does not extend float life). IEEE Std 1187/1188 practice quotes a
    50 % life reduction per 8.3 K (15 °F) above 25 °C; 8-10 K is the range of practice.
    """
    excess = np.maximum(np.asarray(temp_c, dtype=float) - temp_ref_c, 0.0)
    return life_years_ref * np.exp2(-excess / halving_step_k)


def linear_arrhenius_loss_per_year(temp_c, *, loss_frac_per_year_ref, activation_energy_j_mol,
                                   temp_ref_c, **_):
    """Calendar loss rate linear in time with an Arrhenius temperature term, fraction/year.

    ``dQ/dt = q_ref * AF(T)``; used for LTO, whose calendar fade is small
    (parameters marked with their basis in ``chemistries.toml``).
    """
    return loss_frac_per_year_ref * arrhenius_factor(temp_c, activation_energy_j_mol, temp_ref_c)


def primary_self_discharge_per_year(temp_c, *, loss_frac_per_year_ref, temp_ref_c, doubling_k, **_):
    """Self-discharge of a primary lithium cell, fraction of initial capacity per year.

    ``s(T) = s_ref * 2 ** ((T - T_ref) / dT_double)`` (vendor room-temperature figure;
    the doubling per 10 K is an assumption, see the source strings).
    """
    return loss_frac_per_year_ref * np.exp2(
        (np.asarray(temp_c, dtype=float) - temp_ref_c) / doubling_k)


def primary_remaining_fraction(duration_h, load_charge_frac_per_h, temp_c, *,
                               loss_frac_per_year_ref, temp_ref_c, doubling_k, **_):
    """Remaining capacity of a primary cell at constant load and temperature, fraction.

    ``C(t)/C0 = 1 - I t / C0 - s(T) t`` (initial capacity minus load charge minus
    self-discharge), never below 0.

    Parameters
    ----------
    duration_h : array_like
        Elapsed time, h.
    load_charge_frac_per_h : array_like
        Load current as a fraction of initial capacity per hour (the C-rate).
    temp_c : array_like
        Cell temperature, °C.
    """
    t_h = np.asarray(duration_h, dtype=float)
    self_per_h = primary_self_discharge_per_year(
        temp_c, loss_frac_per_year_ref=loss_frac_per_year_ref, temp_ref_c=temp_ref_c,
        doubling_k=doubling_k) / HOURS_PER_YEAR
    return np.maximum(1.0 - (np.asarray(load_charge_frac_per_h, dtype=float) + self_per_h) * t_h, 0.0)


def calendar_rate_parts(model: str, params, chemistry):
    """A calendar law as ``(temp_part, soc_part, exponent)`` for equivalent-time superposition.

    The engine accumulates the state ``S += temp_part(T) * soc_part(SOC)`` per hour and
    reads the loss as ``S ** exponent``. For a law ``Q = k(T, SOC) * t**z`` (coefficient
    convention) the hourly increment is ``k**(1/z) * dt``; for ``z = 1`` it is the rate.

    Parameters
    ----------
    model : str
        Calendar model name from the chemistry's aging set.
    params : Mapping[str, float]
        Its parameters.
    chemistry : planner.chemistry.Chemistry
        For the open-circuit-voltage table (Schmalstieg uses storage voltage).

    Returns
    -------
    temp_part : callable(temp_c) -> ndarray
    soc_part : callable(soc_frac) -> ndarray, or None when the law has no SOC term
    exponent : float
    """
    p = dict(params)
    if model == "naumann2018":
        k_ref, ea, t_ref = p["k_ref_per_sqrt_s"], p["activation_energy_j_mol"], p["temp_ref_c"]
        below = p.get("low_temp_below_c")
        ea_low = p.get("low_temp_activation_energy_j_mol")

        def temp_part(temp_c):
            af = arrhenius_factor_below(temp_c, ea, t_ref, below_c=below,
                                        low_activation_energy_j_mol=ea_low)
            return (k_ref * af) ** 2 * SECONDS_PER_HOUR

        def soc_part(soc_frac):
            return naumann2018_soc_factor(soc_frac, p["soc_c"], p["soc_d"]) ** 2

        return temp_part, soc_part, 0.5
    if model == "schmalstieg2014_calendar":
        z = p["time_exponent"]

        def temp_part(temp_c):
            temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
            return (p["scale"] * np.exp(-p["temp_coefficient_k"] / temp_k)) ** (1.0 / z) / HOURS_PER_DAY

        def soc_part(soc_frac):
            volts = chemistry.open_circuit_voltage_v(soc_frac)
            linear = np.maximum(p["voltage_slope_per_v"] * volts + p["voltage_offset"], 0.0)
            return linear ** (1.0 / z)

        return temp_part, soc_part, z
    if model == "arrhenius_halving":
        def temp_part(temp_c):
            return p["loss_at_end_frac"] / (arrhenius_halving_life_years(temp_c, **p) * HOURS_PER_YEAR)

        return temp_part, None, 1.0
    if model == "linear_arrhenius":
        def temp_part(temp_c):
            return linear_arrhenius_loss_per_year(temp_c, **p) / HOURS_PER_YEAR

        return temp_part, None, 1.0
    if model == "primary_self_discharge":
        def temp_part(temp_c):
            return primary_self_discharge_per_year(temp_c, **p) / HOURS_PER_YEAR

        return temp_part, None, 1.0
    raise ValueError(f"unknown calendar model {model!r}")
