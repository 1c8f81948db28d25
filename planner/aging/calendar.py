"""Calendar fade laws: capacity lost while a battery sits at a temperature and state of charge.

One function per published law, pure and array-aware. Each law is also exposed to the
engine as a *rate* split into a temperature part and a state-of-charge part (see
:func:`calendar_rate_parts`), because the engine superposes every law by equivalent
time (:mod:`planner.aging.superposition`).

Temperature convention (stated because the two conventions differ under a varying
temperature): the fitted laws of Naumann et al. 2018 and Schmalstieg et al. 2014 put
the Arrhenius factor in the *coefficient*,
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
    r"""Arrhenius acceleration factor relative to a reference temperature.

    .. math::

        AF = \exp\left(-\frac{E_a}{R}\left(\frac{1}{T} - \frac{1}{T_{ref}}\right)\right)

    with :math:`T` = ``temp_c`` + 273.15 K, :math:`T_{ref}` = ``temp_ref_c`` + 273.15 K,
    :math:`E_a` = ``activation_energy_j_mol`` [J/mol] and :math:`R` = 8.314462618
    J/(mol K) (CODATA 2018).

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

    References
    ----------
    Arrhenius, S. (1889), Z. Phys. Chem. 4, 226-248. Xu, B., Oudalov, A., Ulbig, A.,
    Andersson, G., Kirschen, D. S. (2018), Modeling of lithium-ion battery degradation
    for cell life assessment, IEEE Trans. Smart Grid 9 (2), 1131-1140: temperature
    stress ``exp(k_T (T - T_ref) T_ref / T)`` with k_T = 6.93e-2 1/K, the same factor
    with Ea = k_T R T_ref**2 (parameters read in two re-implementations).

    Examples
    --------
    Xu et al. 2018's stress at 35 °C is 1.955 (research note on aging models, §0):

    >>> round(float(arrhenius_factor(35.0, 6.93e-2 * R_GAS_J_MOL_K * 298.15 ** 2)), 3)
    1.955
    """
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    return np.exp(-activation_energy_j_mol / R_GAS_J_MOL_K
                  * (1.0 / temp_k - 1.0 / (temp_ref_c + KELVIN_OFFSET)))


def cold_limited_rate(temp_c, warm_rate, *, below_c=None, low_activation_energy_j_mol=None,
                      no_gain_below_c=None):
    r"""A calendar law's temperature part, carried into the cold only as far as data go.

    .. math::

        r(T) = \begin{cases} w(T') & T' \ge T_b \\
               w(T_b)\,AF_{E_{a,low}}(T'; T_b) & T' < T_b \end{cases}
        \qquad T' = \max(T, T_{stop})

    with :math:`w` = ``warm_rate`` (the law's own temperature part, as fitted),
    :math:`T_b` = ``below_c`` [°C] (the lowest temperature of the law's own storage tests),
    :math:`E_{a,low}` = ``low_activation_energy_j_mol`` [J/mol] (the slope a storage study
    that covers the cold supports, :func:`arrhenius_factor` referenced to :math:`T_b`) and
    :math:`T_{stop}` = ``no_gain_below_c`` [°C] (the lowest storage temperature of that
    study): colder than it the rate falls no further, because no data say by how much
    (research note cold-and-scale, §2). Each limit is optional.

    Examples
    --------
    A rate that halves per 10 K, held below 0 °C:

    >>> rate = lambda t: 2.0 ** (np.asarray(t, dtype=float) / 10.0)
    >>> [float(cold_limited_rate(t, rate, no_gain_below_c=0.0)) for t in (10.0, 0.0, -20.0)]
    [2.0, 1.0, 1.0]
    """
    temp = np.asarray(temp_c, dtype=float)
    if no_gain_below_c is not None:
        temp = np.maximum(temp, no_gain_below_c)
    rate = warm_rate(temp)
    if below_c is None or low_activation_energy_j_mol is None:
        return rate
    cold = warm_rate(below_c) * arrhenius_factor(temp, low_activation_energy_j_mol, below_c)
    return np.where(temp < below_c, cold, rate)


def arrhenius_factor_below(temp_c, activation_energy_j_mol, temp_ref_c, *, below_c=None,
                           low_activation_energy_j_mol=None, no_gain_below_c=None):
    r"""Arrhenius factor with its own activation energy below the lowest fitted temperature.

    .. math::

        AF(T) = \begin{cases} AF_{E_a}(T) & T \ge T_b \\
                AF_{E_a}(T_b)\,AF_{E_{a,low}}(T; T_b) & T < T_b \end{cases}

    with :math:`T_b` = ``below_c`` [°C], :math:`E_a` = ``activation_energy_j_mol`` and
    :math:`E_{a,low}` = ``low_activation_energy_j_mol`` [J/mol] (the second factor
    referenced to :math:`T_b`), held constant below ``no_gain_below_c``
    (:func:`cold_limited_rate`). A fit on warm points only (e.g. 25 and 45 °C) says
    nothing about the slope in the cold: a storage study that covers the cold supplies it
    (docs/aging.md, "Cold storage"). Without ``below_c`` the plain factor is returned.
    """
    return cold_limited_rate(
        temp_c, lambda t: arrhenius_factor(t, activation_energy_j_mol, temp_ref_c),
        below_c=below_c, low_activation_energy_j_mol=low_activation_energy_j_mol,
        no_gain_below_c=no_gain_below_c)


def naumann2018_soc_factor(soc_frac, soc_c, soc_d):
    r"""SOC term of Naumann et al. 2018 (dimensionless).

    .. math::

        g(SOC) = c\,(SOC - 0.5)^3 + d

    with :math:`SOC` = ``soc_frac`` (fraction), :math:`c` = ``soc_c`` and :math:`d` =
    ``soc_d`` (see :func:`naumann2018_calendar_loss` for the reference).

    Examples
    --------
    At half charge the term is ``d`` (0.60225 in the published fit):

    >>> float(naumann2018_soc_factor(0.5, 2.8575, 0.60225))
    0.60225
    """
    return soc_c * (np.asarray(soc_frac, dtype=float) - 0.5) ** 3 + soc_d


def naumann2018_calendar_loss(temp_c, soc_frac, duration_s, *, k_ref_per_sqrt_s,
                              activation_energy_j_mol, temp_ref_c, soc_c, soc_d,
                              low_temp_below_c=None, low_temp_activation_energy_j_mol=None,
                              no_gain_below_c=None):
    r"""Calendar capacity loss of an LFP/graphite cell at constant conditions (fraction).

    .. math::

        Q_{loss} = k_{ref}\,AF(T)\,\left(c\,(SOC - 0.5)^3 + d\right)\sqrt{t}

    with :math:`k_{ref}` = ``k_ref_per_sqrt_s`` [s^-0.5], :math:`AF` the Arrhenius factor
    of :func:`arrhenius_factor` with :math:`E_a` = ``activation_energy_j_mol`` [J/mol]
    about :math:`T_{ref}` = ``temp_ref_c`` [°C] (:func:`arrhenius_factor_below` below
    ``low_temp_below_c``), :math:`T` = ``temp_c`` [°C], :math:`SOC` = ``soc_frac``,
    :math:`c, d` = ``soc_c``, ``soc_d`` and :math:`t` = ``duration_s`` [s].

    Parameters
    ----------
    temp_c, soc_frac, duration_s : array_like
        Temperature (°C), state of charge (fraction), storage duration (s).
    k_ref_per_sqrt_s, activation_energy_j_mol, temp_ref_c, soc_c, soc_d : float
        Model parameters (see ``chemistries.toml``).
    low_temp_below_c, low_temp_activation_energy_j_mol : float, optional
        Below this temperature the activation energy of a cold storage study applies
        (:func:`arrhenius_factor_below`).
    no_gain_below_c : float, optional
        Below this temperature the rate falls no further (:func:`cold_limited_rate`).

    Returns
    -------
    ndarray
        Capacity loss as a fraction of rated capacity.

    References
    ----------
    Naumann, M., Schimpe, M., Keil, P., Hesse, H. C., Jossen, A. (2018), Analysis and
    modeling of calendar aging of a commercial LiFePO4/graphite cell, J. Energy Storage
    17, 153-169, capacity model (k_ref = 1.2571e-5 s^-0.5, Ea = 17,126 J/mol, c =
    2.8575, d = 0.60225; read in a re-implementation by the same group).

    Examples
    --------
    Storage at 25 °C and SOC 0.5 for one year loses 4.25 % (research note, §0):

    >>> year_s = 365 * 24 * 3600.0
    >>> loss = naumann2018_calendar_loss(25.0, 0.5, year_s, k_ref_per_sqrt_s=1.2571e-5,
    ...                                  activation_energy_j_mol=17126.0, temp_ref_c=25.0,
    ...                                  soc_c=2.8575, soc_d=0.60225)
    >>> round(float(loss), 4)
    0.0425
    """
    k = (k_ref_per_sqrt_s * arrhenius_factor_below(temp_c, activation_energy_j_mol, temp_ref_c,
                                                   below_c=low_temp_below_c,
                                                   low_activation_energy_j_mol=low_temp_activation_energy_j_mol,
                                                   no_gain_below_c=no_gain_below_c)
         * naumann2018_soc_factor(soc_frac, soc_c, soc_d))
    return k * np.sqrt(np.asarray(duration_s, dtype=float))


def schmalstieg2014_alpha_cap(voltage_v, temp_c, *, voltage_slope_per_v, voltage_offset,
                              scale, temp_coefficient_k, low_temp_below_c=None,
                              low_temp_activation_energy_j_mol=None, no_gain_below_c=None, **_):
    r"""Calendar coefficient of Schmalstieg et al. 2014, in d^-0.75.

    .. math::

        \alpha_{cap} = \max(a V + b, 0)\cdot s\cdot \exp\left(-\frac{\theta}{T}\right)

    with :math:`V` = ``voltage_v`` [V per cell], :math:`a` = ``voltage_slope_per_v``
    (7.543 1/V), :math:`b` = ``voltage_offset`` (-23.75), :math:`s` = ``scale`` (1e6),
    :math:`\theta` = ``temp_coefficient_k`` (6976 K, i.e. Ea = 58.0 kJ/mol) and
    :math:`T` = ``temp_c`` + 273.15 K; clamped at 0 below the voltage where the linear
    term vanishes (about 3.15 V). Below ``low_temp_below_c`` the temperature part follows
    ``low_temp_activation_energy_j_mol`` and below ``no_gain_below_c`` it is held
    (:func:`cold_limited_rate`; the published law has neither).

    Parameters
    ----------
    voltage_v : array_like
        Storage (open-circuit) voltage per cell, V.
    temp_c : array_like
        Temperature, °C.

    References
    ----------
    Schmalstieg, J., Käbitz, S., Ecker, M., Sauer, D. U. (2014), A holistic aging model
    for Li(NiMnCo)O2 based 18650 lithium-ion batteries, J. Power Sources 257, 325-334,
    alpha_cap equation (coefficients read in a re-implementation).

    Examples
    --------
    At 4.1 V and 25 °C, 4.95e-4 d^-0.75 (research note on aging models, §0):

    >>> a = schmalstieg2014_alpha_cap(4.1, 25.0, voltage_slope_per_v=7.543,
    ...                               voltage_offset=-23.75, scale=1e6, temp_coefficient_k=6976.0)
    >>> round(float(a), 7)
    0.0004948
    """
    linear = np.maximum(voltage_slope_per_v * np.asarray(voltage_v, dtype=float) + voltage_offset, 0.0)
    return linear * scale * schmalstieg2014_temp_factor(
        temp_c, temp_coefficient_k=temp_coefficient_k, low_temp_below_c=low_temp_below_c,
        low_temp_activation_energy_j_mol=low_temp_activation_energy_j_mol,
        no_gain_below_c=no_gain_below_c)


def schmalstieg2014_temp_factor(temp_c, *, temp_coefficient_k, low_temp_below_c=None,
                                low_temp_activation_energy_j_mol=None, no_gain_below_c=None, **_):
    r"""Temperature part ``exp(-theta/T)`` of :func:`schmalstieg2014_alpha_cap`, cold-limited.

    ``theta`` = ``temp_coefficient_k`` [K], ``T`` = ``temp_c`` + 273.15 K; below
    ``low_temp_below_c`` and ``no_gain_below_c`` as :func:`cold_limited_rate`.
    """
    def warm(temp):
        return np.exp(-temp_coefficient_k / (np.asarray(temp, dtype=float) + KELVIN_OFFSET))

    return cold_limited_rate(temp_c, warm, below_c=low_temp_below_c,
                             low_activation_energy_j_mol=low_temp_activation_energy_j_mol,
                             no_gain_below_c=no_gain_below_c)


def schmalstieg2014_calendar_loss(voltage_v, temp_c, duration_days, **params):
    r"""Calendar capacity loss of Schmalstieg et al. 2014 at constant conditions (fraction).

    .. math::

        1 - C_{rel} = \alpha_{cap}(V, T)\, t^{z}

    with :math:`\alpha_{cap}` from :func:`schmalstieg2014_alpha_cap`, :math:`t` =
    ``duration_days`` [d] and :math:`z` = ``time_exponent`` (0.75).

    References
    ----------
    Schmalstieg et al. (2014), J. Power Sources 257, 325-334 (see
    :func:`schmalstieg2014_alpha_cap`).

    Examples
    --------
    One year at 4.1 V and 35 °C leaves 0.912 of the capacity (research note, §0):

    >>> params = dict(voltage_slope_per_v=7.543, voltage_offset=-23.75, scale=1e6,
    ...               temp_coefficient_k=6976.0, time_exponent=0.75)
    >>> round(1.0 - float(schmalstieg2014_calendar_loss(4.1, 35.0, 365.0, **params)), 3)
    0.912
    """
    z = params.get("time_exponent", 0.75)
    return schmalstieg2014_alpha_cap(voltage_v, temp_c, **params) * np.asarray(
        duration_days, dtype=float) ** z


def arrhenius_halving_life_years(temp_c, *, life_years_ref, temp_ref_c, halving_step_k, **_):
    r"""Float life of a lead-acid battery under the halving rule of stationary practice, years.

    .. math::

        L(T) = L_{ref}\, 2^{-\max(T - T_{ref},\,0)/\Delta T_{half}}

    with :math:`L_{ref}` = ``life_years_ref`` [years], :math:`T` = ``temp_c`` and
    :math:`T_{ref}` = ``temp_ref_c`` [°C], :math:`\Delta T_{half}` = ``halving_step_k``
    [K]; cold does not extend float life (``L_ref`` below ``T_ref``).

    References
    ----------
    IEEE Std 1187/1188 practice: a 50 % life reduction per 8.3 K (15 °F) above 25 °C
    (from memory); 8-10 K is the range of practice. Battery University BU-806a: "each
    8°C rise in temperature cuts the life of a sealed lead acid battery in half".

    Examples
    --------
    BU-806a's worked example, 10 years at 25 °C: 5 years at 33 °C, 30 months at 41 °C:

    >>> [float(arrhenius_halving_life_years(t, life_years_ref=10.0, temp_ref_c=25.0,
    ...                                     halving_step_k=8.0)) for t in (33.0, 41.0)]
    [5.0, 2.5]
    """
    excess = np.maximum(np.asarray(temp_c, dtype=float) - temp_ref_c, 0.0)
    return life_years_ref * np.exp2(-excess / halving_step_k)


def linear_arrhenius_loss_per_year(temp_c, *, loss_frac_per_year_ref, activation_energy_j_mol,
                                   temp_ref_c, **_):
    r"""Calendar loss rate linear in time with an Arrhenius temperature term, fraction/year.

    .. math::

        \frac{dQ}{dt} = q_{ref}\, AF(T)

    with :math:`q_{ref}` = ``loss_frac_per_year_ref`` [1/year] at :math:`T_{ref}` =
    ``temp_ref_c`` and :math:`AF` from :func:`arrhenius_factor` with ``activation_energy_j_mol``.
    Used for LTO, whose calendar fade is small; no published law exists for it offline
    (parameters marked with their basis in ``chemistries.toml``), so the example only
    shows the form.

    Examples
    --------
    >>> float(linear_arrhenius_loss_per_year(25.0, loss_frac_per_year_ref=0.005,
    ...                                      activation_energy_j_mol=50e3, temp_ref_c=25.0))
    0.005
    """
    return loss_frac_per_year_ref * arrhenius_factor(temp_c, activation_energy_j_mol, temp_ref_c)


def primary_self_discharge_per_year(temp_c, *, loss_frac_per_year_ref, temp_ref_c,
                                    activation_energy_j_mol, **_):
    r"""Self-discharge of a primary lithium cell, fraction of initial capacity per year.

    .. math::

        s(T) = s_{ref}\, AF(T)

    with :math:`s_{ref}` = ``loss_frac_per_year_ref`` [1/year] at :math:`T_{ref}` =
    ``temp_ref_c`` [°C] and :math:`AF` the Arrhenius factor of :func:`arrhenius_factor`
    with ``activation_energy_j_mol``. A doubling per 10 K would give 32 %/yr at 70 °C
    and 90 %/yr at 85 °C, inside the cell's rated window, where bobbin cells lose a few
    %/yr; the activation energy is fitted to two such figures instead.

    References
    ----------
    Vendor statements on bobbin Li-SOCl2 cells: about 1 %/yr at room temperature (read:
    research note on aging models, §5) and a few %/yr when stored at 55-70 °C (from
    memory); Ea = R ln(3) / (1/293.15 K - 1/343.15 K) = 18.4 kJ/mol puts 3 %/yr at 70 °C.

    Examples
    --------
    >>> [round(100 * float(primary_self_discharge_per_year(
    ...     t, loss_frac_per_year_ref=0.01, temp_ref_c=20.0, activation_energy_j_mol=18376.0)), 1)
    ...  for t in (20.0, 55.0, 70.0, 85.0)]
    [1.0, 2.2, 3.0, 3.9]
    """
    return loss_frac_per_year_ref * arrhenius_factor(temp_c, activation_energy_j_mol, temp_ref_c)


def primary_remaining_fraction(duration_h, load_charge_frac_per_h, temp_c, *,
                               loss_frac_per_year_ref, temp_ref_c, activation_energy_j_mol, **_):
    """Remaining capacity of a primary cell at constant load and temperature, fraction.

    ``C(t)/C0 = 1 - I t / C0 - s(T) t`` (initial capacity minus load charge minus
    self-discharge of :func:`primary_self_discharge_per_year`), never below 0.

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
        activation_energy_j_mol=activation_energy_j_mol) / HOURS_PER_YEAR
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
        stop = p.get("no_gain_below_c")

        def temp_part(temp_c):
            af = arrhenius_factor_below(temp_c, ea, t_ref, below_c=below,
                                        low_activation_energy_j_mol=ea_low, no_gain_below_c=stop)
            return (k_ref * af) ** 2 * SECONDS_PER_HOUR

        def soc_part(soc_frac):
            return naumann2018_soc_factor(soc_frac, p["soc_c"], p["soc_d"]) ** 2

        return temp_part, soc_part, 0.5
    if model == "schmalstieg2014_calendar":
        z = p["time_exponent"]

        def temp_part(temp_c):
            return (p["scale"] * schmalstieg2014_temp_factor(temp_c, **p)) ** (1.0 / z) / HOURS_PER_DAY

        def soc_part(soc_frac):
            volts = chemistry.open_circuit_voltage_v(soc_frac)
            linear = np.maximum(p["voltage_slope_per_v"] * volts + p["voltage_offset"], 0.0)
            return linear ** (1.0 / z)

        return temp_part, soc_part, z
    if model in ("gasper2023_lfp", "gasper2023_nmc"):
        # imported here: the large-format laws build on this module's helpers
        from planner.aging.large_format import large_format_rate_parts
        return large_format_rate_parts(model, p)
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
