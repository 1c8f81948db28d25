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

from dataclasses import dataclass

import numpy as np

from planner.aging.calendar import KELVIN_OFFSET, R_GAS_J_MOL_K, arrhenius_factor
from planner.aging.plating import has_plating, plating_share

WANG2011_B_TABLE = {0.5: 31630.0, 2.0: 21681.0, 6.0: 12934.0, 10.0: 15512.0}
"""Pre-exponential factor B vs C-rate, Wang et al. 2011 Table (from memory)."""


def wang2011_cycle_loss_pct(c_rate, temp_c, throughput_ah, *, b=None,
                            activation_energy_j_mol=31700.0, c_rate_alpha_j_mol=370.3,
                            exponent=0.55):
    r"""Cycle capacity loss of a graphite/LiFePO4 cell after Wang et al. 2011, percent.

    .. math::

        Q_{loss}[\%] = B\,\exp\left(-\frac{E_a - \alpha\,C}{R\,T}\right) A_h^{\,z}

    with :math:`B` = ``b`` (from the paper's table at the C-rate when None),
    :math:`E_a` = ``activation_energy_j_mol`` (31,700 J/mol), :math:`\alpha` =
    ``c_rate_alpha_j_mol`` (370.3 J/mol per C-rate), :math:`C` = ``c_rate`` [1/h],
    :math:`T` = ``temp_c`` + 273.15 K, :math:`A_h` = ``throughput_ah`` [Ah of the 2.2 Ah
    cell] and :math:`z` = ``exponent`` (0.55).

    Parameters
    ----------
    c_rate : float
        Cycling C-rate (must be a table entry when ``b`` is None).
    temp_c : array_like
        Temperature, °C.
    throughput_ah : array_like
        Discharged charge throughput of the 2.2 Ah cell, Ah.

    References
    ----------
    Wang, J., Liu, P., Hicks-Garner, J., et al. (2011), Cycle-life model for
    graphite-LiFePO4 cells, J. Power Sources 196, 3942-3948, Eq. 5 (Ea, alpha and z read
    in two re-implementations; the B table from memory).

    Examples
    --------
    At C/2 and 25 °C, 1,000 Ah cost about 4.25 %; at 45 °C 9.46 % (research note, §0):

    >>> [round(float(wang2011_cycle_loss_pct(0.5, t, 1000.0)), 2) for t in (25.0, 45.0)]
    [4.26, 9.46]
    """
    if b is None:
        b = WANG2011_B_TABLE[float(c_rate)]
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    return b * np.exp(-(activation_energy_j_mol - c_rate_alpha_j_mol * c_rate)
                      / (R_GAS_J_MOL_K * temp_k)) * np.asarray(throughput_ah, dtype=float) ** exponent


def naumann2020_coefficient(c_rate, doc_frac, *, a, b, doc_c, doc_d, **_):
    r"""Coefficient of Naumann et al. 2020, fraction per sqrt(FEC).

    .. math::

        k = \frac{(a\,C + b)\left(c\,(DOC - 0.6)^3 + d\right)}{100}

    with :math:`C` = ``c_rate`` [1/h], :math:`DOC` = ``doc_frac`` (depth of cycle,
    fraction), :math:`a, b` = ``a``, ``b`` and :math:`c, d` = ``doc_c``, ``doc_d``; the
    published fit is in percent, hence the 1/100.

    References
    ----------
    Naumann, M., Spingler, F. B., Jossen, A. (2020), Analysis and modeling of cycle aging
    of a commercial LiFePO4/graphite cell, J. Power Sources 451, 227666, cycle capacity
    model (a = 0.0630, b = 0.0971, c = 4.0253, d = 1.0923; read in a re-implementation
    by the same group).

    Examples
    --------
    >>> k = naumann2020_coefficient(1.0, 1.0, a=0.0630, b=0.0971, doc_c=4.0253, doc_d=1.0923)
    >>> round(float(k), 6)
    0.002161
    """
    shift = np.asarray(doc_frac, dtype=float) - 0.6
    # shift * shift * shift, not shift ** 3: numpy's power by 3 calls pow() per element,
    # about 20x slower, and this runs once per counted cycle.
    return (a * np.asarray(c_rate, dtype=float) + b) * (doc_c * (shift * shift * shift) + doc_d) / 100.0


def naumann2020_cycle_loss(c_rate, doc_frac, full_equivalent_cycles, **params):
    r"""Cycle capacity loss of Naumann et al. 2020 at constant conditions (fraction).

    .. math::

        Q_{loss} = k(C, DOC)\,\sqrt{FEC}

    with :math:`k` from :func:`naumann2020_coefficient` and :math:`FEC` =
    ``full_equivalent_cycles``.

    References
    ----------
    Naumann et al. (2020), J. Power Sources 451, 227666 (see :func:`naumann2020_coefficient`).

    Examples
    --------
    1,000 full cycles at 1 C and full depth cost 6.83 % (research note, §0):

    >>> loss = naumann2020_cycle_loss(1.0, 1.0, 1000.0, a=0.0630, b=0.0971, doc_c=4.0253,
    ...                               doc_d=1.0923)
    >>> round(float(loss), 4)
    0.0683
    """
    return naumann2020_coefficient(c_rate, doc_frac, **params) * np.sqrt(
        np.asarray(full_equivalent_cycles, dtype=float))


def schmalstieg2014_beta_cap(mean_voltage_v, dod_frac, *, curvature_per_v2, voltage_centre_v,
                             offset, dod_slope, **_):
    r"""Cycle coefficient of Schmalstieg et al. 2014, Ah^-0.5.

    .. math::

        \beta_{cap} = \kappa\,(\bar V - V_c)^2 + \beta_0 + \delta\, DOD

    with :math:`\bar V` = ``mean_voltage_v`` [V per cell], :math:`\kappa` =
    ``curvature_per_v2`` (7.348e-3), :math:`V_c` = ``voltage_centre_v`` (3.667 V),
    :math:`\beta_0` = ``offset`` (7.600e-4), :math:`\delta` = ``dod_slope`` (4.081e-3)
    and :math:`DOD` = ``dod_frac``.

    References
    ----------
    Schmalstieg, J., Käbitz, S., Ecker, M., Sauer, D. U. (2014), J. Power Sources 257,
    325-334, beta_cap equation (coefficients read in a re-implementation).

    Examples
    --------
    At the centre voltage and full depth, 4.841e-3 Ah^-0.5 (research note, §0):

    >>> params = dict(curvature_per_v2=7.348e-3, voltage_centre_v=3.667, offset=7.600e-4,
    ...               dod_slope=4.081e-3)
    >>> round(float(schmalstieg2014_beta_cap(3.667, 1.0, **params)), 6)
    0.004841
    """
    v = np.asarray(mean_voltage_v, dtype=float)
    return curvature_per_v2 * (v - voltage_centre_v) ** 2 + offset + dod_slope * np.asarray(
        dod_frac, dtype=float)


def schmalstieg2014_cycle_loss(mean_voltage_v, dod_frac, throughput_ah, **params):
    r"""Cycle capacity loss of Schmalstieg et al. 2014 at constant conditions (fraction).

    .. math::

        1 - C_{rel} = \beta_{cap}(\bar V, DOD)\,\sqrt{Q}

    with :math:`\beta_{cap}` from :func:`schmalstieg2014_beta_cap` and :math:`Q` =
    ``throughput_ah`` [Ah of the 2.05 Ah cell].

    Examples
    --------
    1,000 Ah at 3.667 V and full depth leave 0.847 of the capacity (research note, §0):

    >>> params = dict(curvature_per_v2=7.348e-3, voltage_centre_v=3.667, offset=7.600e-4,
    ...               dod_slope=4.081e-3)
    >>> round(1.0 - float(schmalstieg2014_cycle_loss(3.667, 1.0, 1000.0, **params)), 3)
    0.847
    """
    return schmalstieg2014_beta_cap(mean_voltage_v, dod_frac, **params) * np.sqrt(
        np.asarray(throughput_ah, dtype=float))


def woehler_cycles_to_failure(dod_frac, *, cycles_at_full_depth, woehler_exponent, **_):
    r"""Cycles to end of life at depth of discharge ``dod_frac`` (Wöhler curve).

    .. math::

        N(DOD) = N_{100}\, DOD^{-k}

    with :math:`N_{100}` = ``cycles_at_full_depth``, :math:`k` = ``woehler_exponent``
    and :math:`DOD` = ``dod_frac``.

    References
    ----------
    Wöhler, A. (1870), Z. Bauwesen 20, 73-106 (from memory); applied to batteries e.g.
    in Bindner, H., et al. (2005), Lifetime modelling of lead acid batteries,
    Risø-R-1515(EN).

    Examples
    --------
    A flooded deep-cycle battery with 225 cycles at 80 % depth and 750 at 50 % has
    k = ln(750/225)/ln(0.8/0.5) = 2.56 (research note, §4.2):

    >>> n = woehler_cycles_to_failure(0.5, cycles_at_full_depth=225 * 0.8 ** 2.56,
    ...                               woehler_exponent=2.56)
    >>> round(float(n), -1)
    750.0
    """
    dod = np.asarray(dod_frac, dtype=float)
    with np.errstate(divide="ignore"):
        return cycles_at_full_depth * dod ** (-woehler_exponent)


def palmgren_miner_damage(counts, cycles_to_failure):
    r"""Linear damage sum (Palmgren-Miner rule).

    .. math::

        D = \sum_i \frac{n_i}{N_i}

    with :math:`n_i` = ``counts`` and :math:`N_i` = ``cycles_to_failure``; end of life
    at :math:`D = 1`.

    References
    ----------
    Miner, M. A. (1945), Cumulative damage in fatigue, J. Appl. Mech. 12, A159-A164.

    Examples
    --------
    >>> float(palmgren_miner_damage([100, 50], [1000, 100]))
    0.6
    """
    return np.sum(np.asarray(counts, dtype=float) / np.asarray(cycles_to_failure, dtype=float))


def halving_life_factor(temp_c, temp_ref_c, halving_step_k):
    r"""Life multiplier of the halving rule: 1 below the reference temperature.

    .. math::

        f(T) = 2^{-\max(T - T_{ref},\,0)/\Delta T}

    with :math:`T` = ``temp_c``, :math:`T_{ref}` = ``temp_ref_c`` [°C] and
    :math:`\Delta T` = ``halving_step_k`` [K] (see
    :func:`planner.aging.calendar.arrhenius_halving_life_years` for the source).

    Examples
    --------
    >>> float(halving_life_factor(33.0, 25.0, 8.0))
    0.5
    """
    return np.exp2(-np.maximum(np.asarray(temp_c, dtype=float) - temp_ref_c, 0.0) / halving_step_k)


def charge_voltage_life_factor(charge_voltage_v_per_cell, voltage_ref_v_per_cell, doubling_step_v):
    r"""Cycle-life multiplier of the charge-voltage rule.

    .. math::

        f(V) = 2^{(V_{ref} - V)/\Delta V}

    with :math:`V` = ``charge_voltage_v_per_cell``, :math:`V_{ref}` =
    ``voltage_ref_v_per_cell`` [V per cell] and :math:`\Delta V` = ``doubling_step_v``
    [V]; ``doubling_step_v <= 0`` switches the rule off (factor 1). A rule of practice
    for NMC-type cells (each 0.1 V per cell below 4.20 V roughly doubles cycle life;
    common practice), not a fitted law.

    Examples
    --------
    >>> round(float(charge_voltage_life_factor(4.10, 4.20, 0.1)), 6)
    2.0
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


def cycle_exponent(model: str, params=None) -> float:
    """Exponent z of the named cycle law (a set's ``throughput_exponent`` when it gives one:
    the square-root laws take it as a parameter so that it can be checked)."""
    if model not in CYCLE_EXPONENTS:
        raise ValueError(f"unknown cycle model {model!r}")
    if params is not None and "throughput_exponent" in params:
        return float(params["throughput_exponent"])
    return CYCLE_EXPONENTS[model]


@dataclass(frozen=True)
class CycleIncrements:
    """What counted cycles add to the cycle state under a cycle law.

    Attributes
    ----------
    total : ndarray
        Increment of each cycle at its own temperature; for a set with the plating term
        (:mod:`planner.aging.plating`) only the film share ``(1 - sigma)**2`` of it, the
        plating share being summed over the charging hours instead.
    reference : ndarray
        The same cycles without the set's temperature factor and without the split: the
        law as fitted at its reference temperature (it scales the plating term).
    exponent : float
        The law's exponent z (loss = state ** z).
    """

    total: np.ndarray
    reference: np.ndarray
    exponent: float


def cycle_state_increment(model: str, params, chemistry, depth_frac, mean_soc_frac, count,
                          temp_c, c_rate, charge_voltage_v_per_cell, charge_c_rate=None):
    """State increments of counted cycles for the named cycle law, and the law's exponent.

    ``(cycle_increments(...).total, exponent)``; see :func:`cycle_increments`.
    """
    inc = cycle_increments(model, params, chemistry, depth_frac, mean_soc_frac, count, temp_c,
                           c_rate, charge_voltage_v_per_cell, charge_c_rate)
    return inc.total, inc.exponent


def cycle_increments(model: str, params, chemistry, depth_frac, mean_soc_frac, count, temp_c,
                     c_rate, charge_voltage_v_per_cell, charge_c_rate=None) -> CycleIncrements:
    """State increments of counted cycles for the named cycle law (:class:`CycleIncrements`).

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
        Mean charge C-rate of each cycle's lane: sets the plating share that leaves the
        counted cycles (default ``c_rate``).
    """
    p = dict(params)
    depth = np.asarray(depth_frac, dtype=float)
    n = np.asarray(count, dtype=float)
    charge_rate = c_rate if charge_c_rate is None else charge_c_rate
    exponent = cycle_exponent(model, p)
    if model == "naumann2020":
        # Coefficient convention, as Wang et al. 2011 and Schimpe et al. 2018 apply their
        # Arrhenius terms: the film term's factor scales the coefficient, hence AF**(1/z)
        # (AF**2 for the square-root law) in the state.
        k = naumann2020_coefficient(c_rate, depth, **p)
        base = k ** (1.0 / exponent) * n * depth if exponent != 0.5 else k * k * n * depth
        af = arrhenius_factor(temp_c, p["activation_energy_j_mol"], p["temp_ref_c"])
        heat = af ** (1.0 / exponent) if exponent != 0.5 else af * af
    elif model == "schmalstieg2014_cycle":
        base = _schmalstieg_reference(p, chemistry, depth, mean_soc_frac, n, temp_c, c_rate,
                                      charge_voltage_v_per_cell, exponent)
        # The temperature rule of practice scales the ageing *rate* (clock convention).
        heat = arrhenius_factor(temp_c, p["activation_energy_j_mol"], p["temp_ref_c"])
    elif model == "woehler_miner":
        life = woehler_cycles_to_failure(np.maximum(depth, 1e-12), **p)
        base = p["loss_at_end_frac"] * n / life
        heat = 1.0 / halving_life_factor(temp_c, p["temp_ref_c"], p["halving_step_k"])
    elif model == "linear_throughput":
        base = p["loss_at_end_frac"] * n * depth / p["full_cycles_to_end"]
        heat = arrhenius_factor(temp_c, p["activation_energy_j_mol"], p["temp_ref_c"])
    else:
        raise ValueError(f"unknown cycle model {model!r}")
    total = base * heat
    if has_plating(p):
        film = 1.0 - plating_share(charge_rate, **p)
        total = total * film ** (1.0 / exponent)
    return CycleIncrements(total=np.asarray(total, dtype=float),
                           reference=np.asarray(base, dtype=float), exponent=exponent)


def _schmalstieg_reference(p, chemistry, depth, mean_soc_frac, n, temp_c, c_rate,
                           charge_voltage_v_per_cell, exponent=0.5):
    """Schmalstieg et al. 2014 cycle increments without the temperature rule (sqrt(Ah) law)."""
    volts = chemistry.open_circuit_voltage_v(mean_soc_frac)
    if p.get("depth_per_usable", 0.0) >= 0.5:
        # Depth and throughput relative to the capacity usable at the charge voltage:
        # the charge-voltage rule below is stated for *full* cycles at each voltage,
        # so the shallower full cycle of a lower voltage must not be credited twice.
        # The published model counts depth on rated capacity (the flag is 0 there).
        depth = depth / np.asarray(chemistry.usable_fraction(charge_voltage_v_per_cell), dtype=float)
    beta = schmalstieg2014_beta_cap(volts, depth, **p) * p.get("coefficient_scale", 1.0)
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN_OFFSET
    # C-rate term borrowed from Wang et al. 2011 (coefficient convention, squared for z=0.5).
    c_term = np.exp(p["c_rate_alpha_j_mol"] * (np.asarray(c_rate, dtype=float) - p["c_rate_ref"])
                    / (R_GAS_J_MOL_K * temp_k))
    # The charge-voltage rule of practice scales cycle *life* (clock convention).
    life = charge_voltage_life_factor(charge_voltage_v_per_cell, p["voltage_ref_v_per_cell"],
                                      p["voltage_doubling_step_v"])
    directions = 2.0 if p["throughput_both_directions"] >= 0.5 else 1.0
    throughput_ah = n * depth * p["cell_capacity_ah"] * directions
    return (beta * c_term) ** (1.0 / exponent) * throughput_ah / life
