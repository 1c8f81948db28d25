"""Calendar laws fitted to large-format commercial cells, and how they are carried past their tests.

Gasper et al. 2023 (J. Energy Storage 73, 109042) aged large-format cells of both
lithium-ion chemistries under one test matrix (an LFP/graphite cell of 250 Ah and two
NMC/graphite cells of 75 Ah, "A", and 50 Ah, "B1") and fitted a life model to each cell;
the first author's open-source code holds the fitted equations (read there). Each
calendar model is a power law in time whose coefficient depends on temperature and on the
graphite anode's potential against lithium (the state of charge):

* LFP: ``k = p1 exp(p2/T) exp(p3 U_a/T)``, ``Q = k t**0.526`` (t in days);
* NMC A: ``k = p1 exp(p2 (T/T_n)**3 / (U_a/U_n)**(1/3))``, ``Q = k (t/1000 d)**0.578``;
* NMC B1: ``k = p1 exp(p2 (U_a/U_n)**(1/3) / (T/T_n)**3)``, ``Q = k (t/10,000 d)**0.708``.

The laws here are those equations written about a reference (stored full at 25 °C), so
that the level is the loss of the first year there and the temperature terms keep their
fitted shape; the NMC law is the geometric mean of the two NMC cells' models (itself a
power law, in the mean exponent). ``T_n`` is 308.15 K: the version of the code the
earlier rows were read in divides by "293.15 + 35", a later version of the same code
reads "273.15 + 35" (35 °C), as every other model of that author normalises by 273.15 +
a test temperature.

Past the longest test the fitted power laws are not carried further: beyond
``hold_after_years`` the loss grows at the rate the law reaches there
(:func:`held_loss`, in the engine :func:`planner.aging.superposition.held_loss_from_state`),
as the cold rule holds the rate below the coldest test. Nothing in the data says the
fade keeps slowing as ``t**z`` for decades.
"""

from __future__ import annotations

import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging.calendar import KELVIN_OFFSET, R_GAS_J_MOL_K, cold_limited_rate

DAYS_PER_YEAR = 365.0
LARGE_FORMAT_MODELS = ("gasper2023_lfp", "gasper2023_nmc")
"""Calendar model names of the laws in this module (``calendar_model`` in chemistries.toml)."""


def graphite_potential_v(soc_frac):
    r"""Potential of a graphite anode against lithium at a cell state of charge, V.

    .. math::

        x = 0.0085 + SOC\,(0.78 - 0.0085)

        U_a = 0.6379 + 0.5416\,e^{-305.5309 x} + 0.044 \tanh\frac{-(x - 0.1958)}{0.1088}
              - 0.1978 \tanh\frac{x - 1.0571}{0.0854} - 0.6875 \tanh\frac{x + 0.0117}{0.0529}
              - 0.0175 \tanh\frac{x - 0.5692}{0.0875}

    with :math:`SOC` = ``soc_frac`` (clipped to 0-1: the cells were not charged beyond
    their rated full) and :math:`x` the anode's lithiation fraction.

    References
    ----------
    Safari, M., Delacourt, C. (2011), J. Electrochem. Soc. 158 (5), A562, graphite
    open-circuit potential; the lithiation range 0.0085-0.78 as the life models of
    Gasper et al. 2023 evaluate it (read in the first author's code).

    Examples
    --------
    Near half charge the potential is the 0.123 V those models normalise by ("Ua at
    about 50 % SOC", in their code):

    >>> round(float(graphite_potential_v(0.5)), 3)
    0.123
    """
    soc = np.clip(np.asarray(soc_frac, dtype=float), 0.0, 1.0)
    x = 8.5e-3 + soc * (0.78 - 8.5e-3)
    return (0.6379 + 0.5416 * np.exp(-305.5309 * x) + 0.044 * np.tanh(-(x - 0.1958) / 0.1088)
            - 0.1978 * np.tanh((x - 1.0571) / 0.0854) - 0.6875 * np.tanh((x + 0.0117) / 0.0529)
            - 0.0175 * np.tanh((x - 0.5692) / 0.0875))


def held_loss(loss_at_hold, duration_years, hold_after_years, exponent):
    r"""Loss of a power law carried at its end-of-test rate past the test, constant conditions.

    .. math::

        Q(t) = \begin{cases} Q_h\,(t/t_h)^z & t \le t_h \\
               Q_h\,\left(1 + z\,(t/t_h - 1)\right) & t > t_h \end{cases}

    with :math:`Q_h` = ``loss_at_hold`` (the law's loss at :math:`t_h`),
    :math:`t_h` = ``hold_after_years`` [years] (the longest test behind the fit),
    :math:`t` = ``duration_years`` and :math:`z` = ``exponent``: past :math:`t_h` the
    slope :math:`z Q_h / t_h` the law has there is kept.

    Examples
    --------
    A square-root law that lost 2 % in its one-year test: 3 % after two years held, not
    the 2.83 % of the law carried on:

    >>> round(float(held_loss(0.02, 2.0, 1.0, 0.5)), 4)
    0.03
    """
    t = np.asarray(duration_years, dtype=float)
    ratio = t / hold_after_years
    power = loss_at_hold * np.maximum(ratio, 0.0) ** exponent
    return np.where(ratio > 1.0, loss_at_hold * (1.0 + exponent * (ratio - 1.0)), power)


def _in_time(loss_per_year, duration_days, exponent, hold_after_years):
    """A coefficient (loss of the first year) carried over ``duration_days``."""
    years = np.asarray(duration_days, dtype=float) / DAYS_PER_YEAR
    if hold_after_years is None:
        return loss_per_year * years ** exponent
    return held_loss(loss_per_year * hold_after_years ** exponent, years, hold_after_years,
                     exponent)


# ------------------------------------------------------------------------------- LFP
def gasper2023_lfp_factor(temp_c, soc_frac, *, activation_energy_j_mol,
                          anode_coefficient_k_per_v, temp_ref_c, **_):
    r"""Temperature and state-of-charge factor of the large-format LFP law (1 stored full at T_ref).

    .. math::

        F = \exp\left(-\frac{E_a}{R}\left(\frac{1}{T} - \frac{1}{T_{ref}}\right)
            - \theta_U\left(\frac{U_a}{T} - \frac{U_{a,full}}{T_{ref}}\right)\right)

    with :math:`E_a` = ``activation_energy_j_mol`` [J/mol] (:math:`-R\,p_2`),
    :math:`\theta_U` = ``anode_coefficient_k_per_v`` [K/V] (:math:`-p_3`),
    :math:`U_a` from :func:`graphite_potential_v` at ``soc_frac`` and
    :math:`U_{a,full}` at full charge, :math:`T` = ``temp_c`` + 273.15 K.
    """
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    ref_k = temp_ref_c + KELVIN_OFFSET
    full = graphite_potential_v(1.0)
    return np.exp(-activation_energy_j_mol / R_GAS_J_MOL_K * (1.0 / temp_k - 1.0 / ref_k)
                  - anode_coefficient_k_per_v * (graphite_potential_v(soc_frac) / temp_k
                                                 - full / ref_k))


def gasper2023_lfp_calendar_loss(temp_c, soc_frac, duration_days, *, loss_frac_year_ref,
                                 time_exponent, hold_after_years=None, low_temp_below_c=None,
                                 low_temp_activation_energy_j_mol=None, no_gain_below_c=None,
                                 **params):
    r"""Calendar capacity loss of a large-format LFP/graphite cell at constant conditions (fraction).

    .. math::

        Q = q_{ref}\,F(T, SOC)\,\left(\frac{t}{365\ \mathrm{d}}\right)^{z}

    with :math:`q_{ref}` = ``loss_frac_year_ref`` (the loss of one year stored full at
    ``temp_ref_c``), :math:`F` from :func:`gasper2023_lfp_factor`, :math:`t` =
    ``duration_days`` [d] and :math:`z` = ``time_exponent``; past ``hold_after_years``
    the rate reached there is kept (:func:`held_loss`); below ``low_temp_below_c`` the
    slope of a cold storage study and below ``no_gain_below_c`` no further gain
    (:func:`planner.aging.calendar.cold_limited_rate`, at each state of charge).

    This is the fitted model of the cell, ``8.37e4 exp(-5210/T) exp(-3560 U_a/T)
    t**0.526``, written about its value stored full at 25 °C.

    References
    ----------
    Gasper, P., Saxon, A., Shi, Y., Endler, E., Smith, K., Thakkar, F. M. (2023),
    Degradation and modeling of large-format commercial lithium-ion cells as a function
    of chemistry, design, and aging conditions, J. Energy Storage 73, 109042 (authors
    and title from memory); the model of the 250 Ah LFP cell read in the first author's
    open-source code.

    Examples
    --------
    A year stored full at 45 °C costs that cell's model 5.48 % (its equation evaluated):

    >>> loss = gasper2023_lfp_calendar_loss(
    ...     45.0, 1.0, 365.0, loss_frac_year_ref=0.01712, time_exponent=0.526,
    ...     activation_energy_j_mol=43318.0, anode_coefficient_k_per_v=3560.0, temp_ref_c=25.0)
    >>> round(float(loss), 4)
    0.0548
    """
    soc = np.asarray(soc_frac, dtype=float)
    factor = cold_limited_rate(
        temp_c, lambda t: gasper2023_lfp_factor(t, soc, **params), below_c=low_temp_below_c,
        low_activation_energy_j_mol=low_temp_activation_energy_j_mol,
        no_gain_below_c=no_gain_below_c)
    return _in_time(loss_frac_year_ref * factor, duration_days, time_exponent, hold_after_years)


# ------------------------------------------------------------------------------- NMC
def gasper2023_nmc_factor(temp_c, soc_frac, *, cell_a_temp_coefficient,
                          cell_b_temp_coefficient, temp_norm_k, anode_norm_v, temp_ref_c, **_):
    r"""Temperature and state-of-charge factor of the large-format NMC law (1 stored full at T_ref).

    .. math::

        \ln F = \tfrac{1}{2}\left[a\left(\frac{\tau^3}{u} - \frac{\tau_{ref}^3}{u_{full}}\right)
                + b\left(\frac{u}{\tau^3} - \frac{u_{full}}{\tau_{ref}^3}\right)\right]

    with :math:`\tau = T/T_n`, :math:`u = (U_a/U_n)^{1/3}`, :math:`a` =
    ``cell_a_temp_coefficient`` (cell A's :math:`p_2`), :math:`b` =
    ``cell_b_temp_coefficient`` (cell B1's :math:`p_2`), :math:`T_n` = ``temp_norm_k``
    [K], :math:`U_n` = ``anode_norm_v`` [V], :math:`U_a` from
    :func:`graphite_potential_v`; the halves make it the geometric mean of the two
    cells' coefficients.
    """
    tau3 = ((np.asarray(temp_c, dtype=float) + KELVIN_OFFSET) / temp_norm_k) ** 3
    ref3 = ((temp_ref_c + KELVIN_OFFSET) / temp_norm_k) ** 3
    u = np.cbrt(graphite_potential_v(soc_frac) / anode_norm_v)
    full = np.cbrt(graphite_potential_v(1.0) / anode_norm_v)
    return np.exp(0.5 * (cell_a_temp_coefficient * (tau3 / u - ref3 / full)
                         + cell_b_temp_coefficient * (u / tau3 - full / ref3)))


def gasper2023_nmc_calendar_loss(temp_c, soc_frac, duration_days, *, loss_frac_year_ref,
                                 time_exponent, hold_after_years=None, low_temp_below_c=None,
                                 low_temp_activation_energy_j_mol=None, no_gain_below_c=None,
                                 **params):
    r"""Calendar capacity loss of large-format NMC/graphite cells at constant conditions (fraction).

    .. math::

        Q = q_{ref}\,F(T, SOC)\,\left(\frac{t}{365\ \mathrm{d}}\right)^{z}

    with :math:`F` from :func:`gasper2023_nmc_factor`, the rest as in
    :func:`gasper2023_lfp_calendar_loss`. The geometric mean of the two cells' fitted
    models, ``8.71e-7 exp(10 tau**3/u) (t/1000 d)**0.578`` (A) and
    ``36.2 exp(-4.4 u/tau**3) (t/10,000 d)**0.708`` (B1), is this law with
    :math:`z` = 0.643, the mean of the two exponents.

    References
    ----------
    Gasper et al. (2023), J. Energy Storage 73, 109042 (see
    :func:`gasper2023_lfp_calendar_loss`): the models of the 75 Ah (A) and 50 Ah (B1)
    NMC cells read in the first author's open-source code.

    Examples
    --------
    A year stored full at 45 °C: cell A's model 11.6 %, cell B1's 9.94 %, geometric
    mean 10.7 % (their equations evaluated):

    >>> loss = gasper2023_nmc_calendar_loss(
    ...     45.0, 1.0, 365.0, loss_frac_year_ref=0.02449, time_exponent=0.643,
    ...     cell_a_temp_coefficient=10.0, cell_b_temp_coefficient=-4.4, temp_norm_k=308.15,
    ...     anode_norm_v=0.123, temp_ref_c=25.0)
    >>> round(float(loss), 3)
    0.107
    """
    soc = np.asarray(soc_frac, dtype=float)
    factor = cold_limited_rate(
        temp_c, lambda t: gasper2023_nmc_factor(t, soc, **params), below_c=low_temp_below_c,
        low_activation_energy_j_mol=low_temp_activation_energy_j_mol,
        no_gain_below_c=no_gain_below_c)
    return _in_time(loss_frac_year_ref * factor, duration_days, time_exponent, hold_after_years)


_FACTORS = {"gasper2023_lfp": gasper2023_lfp_factor, "gasper2023_nmc": gasper2023_nmc_factor}


def large_format_rate_parts(model: str, params):
    r"""A large-format law as ``(temp_part, soc_part, exponent)`` for the aging engine.

    The engine needs the hourly increment of the state :math:`S = Q^{1/z}` as a
    temperature part times a state-of-charge part. The fitted coefficients couple the two
    (``U_a/T``), so the law is split at its reference:

    .. math::

        k(T, SOC) \approx q_{ref}\,F(T, 1)\,F(T_{ref}, SOC)

    exact stored full at any temperature and at any state of charge at ``temp_ref_c``.
    Within 10-45 °C at half charge or more the split moves the coefficient by at most
    2.7 % (LFP) and 7.7 % (NMC, upwards at 45 °C and half charge), computed; only
    nearly empty packs, whose calendar loss is small, see more.
    ``temp_part`` is per hour: :math:`(q_{ref} F)^{1/z}` / 8,760 h.
    """
    p = dict(params)
    factor = _FACTORS[model]
    z = p["time_exponent"]
    level = p["loss_frac_year_ref"]

    def temp_part(temp_c):
        warm = cold_limited_rate(
            temp_c, lambda t: factor(t, 1.0, **p), below_c=p.get("low_temp_below_c"),
            low_activation_energy_j_mol=p.get("low_temp_activation_energy_j_mol"),
            no_gain_below_c=p.get("no_gain_below_c"))
        return (level * warm) ** (1.0 / z) / HOURS_PER_YEAR

    def soc_part(soc_frac):
        return factor(p["temp_ref_c"], soc_frac, **p) ** (1.0 / z)

    return temp_part, soc_part, z


def effective_activation_energy_j_mol(model: str, params, temp_c=25.0) -> float:
    r"""Local Arrhenius slope of a large-format law stored full, J/mol.

    :math:`E_{a,eff} = -R\,\mathrm{d}\ln k/\mathrm{d}(1/T)` at ``temp_c`` (central
    difference over +-0.5 K): for the LFP law :math:`E_a + R\,\theta_U U_{a,full}`
    (about 46 kJ/mol). Used where one activation energy stands for the law (a pack's
    inner cells running warmer than its outer ones).
    """
    factor = _FACTORS[model]
    p = dict(params)
    lo, hi = temp_c - 0.5, temp_c + 0.5
    slope = np.log(factor(hi, 1.0, **p) / factor(lo, 1.0, **p))
    return float(R_GAS_J_MOL_K * slope / (1.0 / (lo + KELVIN_OFFSET) - 1.0 / (hi + KELVIN_OFFSET)))
