r"""Lithium plating on graphite: the cycle fade of charging, hour by hour.

Charging a graphite anode in the cold, fast or near full charge plates metallic lithium;
part of it never returns. Schimpe et al. 2018 model the cycle fade of an LFP/graphite
cell (the cell family of Naumann et al. 2018/2020) as two terms with their own drivers:

* a high-temperature term (growth of the surface film) on the *total* charge throughput,
  with an Arrhenius factor that grows with temperature (Ea = 32.7 kJ/mol);
* a low-temperature term (plating) on the *charge* throughput, with an Arrhenius factor
  that grows as temperature falls (Ea = 55.5 kJ/mol) and an exponential in the charge
  current:

  .. math::

      k_{lowT}(T, I_{ch}) = k_{lowT,ref}\,
          \exp\left(\frac{E_{a,lowT}}{R}\left(\frac{1}{T} - \frac{1}{T_{ref}}\right)\right)
          \exp\left(\beta_{lowT}\,\frac{I_{ch} - I_{ch,ref}}{C_0}\right)

  with :math:`k_{lowT,ref}` = 4.01e-4 Ah^-0.5, :math:`\beta_{lowT}` = 2.64 h,
  :math:`I_{ch,ref}` = 3 A on the :math:`C_0` = 3 Ah cell (1 C) and :math:`T_{ref}` =
  298.15 K (Schimpe, M., von Kuepach, M. E., Naumann, M., Hesse, H. C., Smith, K.,
  Jossen, A. (2018), Comprehensive modeling of temperature-dependent degradation
  mechanisms in lithium iron phosphate batteries, J. Electrochem. Soc. 165 (2),
  A181-A193, Eqs. 15 and 18, Table IV; values read in a re-implementation of the table).

At 25 °C and 1 C the plating term is a share
``s = 4.01e-4 / (4.01e-4 + 1.46e-4 sqrt(2)) = 0.660`` of the cycle coefficient (the
film term counts charge and discharge throughput, hence sqrt(2) for full cycles). At a
charge rate C its share is ``sigma(C) = w / ((1 - s) + w)`` with ``w = s exp(beta (C -
1))``. The planner's cycle law (Naumann 2020 for LFP, fitted at 25 °C) is taken as the
total at 25 °C and the lane's charge rate, and split by Schimpe's shares: ``(1 - sigma)``
of it stays on the counted cycles with the film Arrhenius factor (at every temperature),
``sigma`` of it becomes the plating term, summed over the hours that *charge*, each
with its own battery temperature and charge current. At 25 °C and a steady charge rate
the two add back to the fitted law; charging in the cold multiplies the plating term by
``AF_pl = exp(55.5 kJ/mol / R (1/T - 1/298.15 K))`` (7.76 at 0 °C), and above 25 °C it
shrinks, so that at 1 C Schimpe's total cycle fade is smallest well above 25 °C.

The plating state grows, in each charging hour h, by

    (kappa AF_pl(T_h) exp(beta (C_h - 1)))**2 * C_h * 1 h,
    kappa = k_cycle,ref * s / ((1 - s) + w_mean),

a square-root law in charge throughput superposed by equivalent throughput (the loss is
the square root of the state); ``k_cycle,ref`` is the lane's cycle-law coefficient at
25 °C per full equivalent cycle and ``w_mean`` uses the lane's mean charge rate.
Schimpe's third term (linear plating at low temperature *and* high state of charge,
Ea = 233 kJ/mol) is left out.
"""

from __future__ import annotations

import numpy as np

from planner.aging.calendar import arrhenius_factor

PLATING_KEYS = ("plating_share_ref", "plating_activation_energy_j_mol", "plating_c_rate_beta",
                "plating_temp_ref_c")
"""Parameters of a cycle set that has the plating term (all four, or none)."""


def has_plating(params) -> bool:
    """Whether a cycle parameter set carries the plating term."""
    return all(key in params for key in PLATING_KEYS)


def plating_share(charge_c_rate, *, plating_share_ref, plating_c_rate_beta, **_):
    r"""Share of the plating term in the cycle coefficient at 25 °C and a charge rate.

    .. math::

        \sigma(C) = \frac{w}{(1 - s) + w}, \qquad w = s\,e^{\beta (C - 1)}

    with :math:`C` = ``charge_c_rate`` [1/h], :math:`s` = ``plating_share_ref`` (the share
    at 1 C) and :math:`\beta` = ``plating_c_rate_beta`` [h].

    Examples
    --------
    Schimpe et al. 2018, Table IV: at 1 C the low-temperature term is 0.660 of the cycle
    coefficient at 25 °C, 4.01e-4 / (4.01e-4 + 1.46e-4 sqrt(2)):

    >>> s = 4.01e-4 / (4.01e-4 + 1.46e-4 * 2 ** 0.5)
    >>> round(s, 3), round(float(plating_share(1.0, plating_share_ref=s, plating_c_rate_beta=2.64)), 3)
    (0.66, 0.66)
    """
    s = plating_share_ref
    w = s * np.exp(plating_c_rate_beta * (np.asarray(charge_c_rate, dtype=float) - 1.0))
    return w / ((1.0 - s) + w)


def plating_temperature_factor(temp_c, *, plating_activation_energy_j_mol, plating_temp_ref_c,
                               **_):
    r"""Arrhenius factor of the plating term: it grows as the charging battery cools.

    .. math::

        AF_{pl}(T) = \exp\left(\frac{E_{a}}{R}\left(\frac{1}{T} - \frac{1}{T_{ref}}\right)\right)

    with :math:`T` = ``temp_c`` + 273.15 K (the battery temperature of the charging hour),
    :math:`E_a` = ``plating_activation_energy_j_mol`` [J/mol] and :math:`T_{ref}` =
    ``plating_temp_ref_c`` + 273.15 K.

    Examples
    --------
    Schimpe et al. 2018, Table IV (Ea = 55.5 kJ/mol about 25 °C): charging at 0 °C
    plates 7.76 times as fast as at 25 °C, and at 35 °C half as fast:

    >>> [round(float(plating_temperature_factor(t, plating_activation_energy_j_mol=55500.0,
    ...                                          plating_temp_ref_c=25.0)), 2) for t in (0.0, 35.0)]
    [7.76, 0.48]
    """
    return arrhenius_factor(temp_c, -plating_activation_energy_j_mol, plating_temp_ref_c)


def plating_rate_factor(charge_c_rate, *, plating_c_rate_beta, **_):
    r"""Charge-current factor of the plating coefficient, relative to a 1 C charge.

    .. math::

        f(C) = e^{\beta (C - 1)}

    with :math:`C` = ``charge_c_rate`` [1/h] and :math:`\beta` = ``plating_c_rate_beta``
    [h] (Schimpe et al. 2018, Table IV: 2.64 h at I_ch,ref = 1 C).

    Examples
    --------
    A C/10 charge plates at 0.093 of the 1 C rate, all else equal:

    >>> round(float(plating_rate_factor(0.1, plating_c_rate_beta=2.64)), 3)
    0.093
    """
    return np.exp(plating_c_rate_beta * (np.asarray(charge_c_rate, dtype=float) - 1.0))


def plating_state_scale(reference_coefficient_sq, mean_charge_c_rate, *, plating_share_ref,
                        plating_c_rate_beta, **_):
    """``kappa**2`` per lane: what multiplies the hourly sums of
    ``AF_pl(T_h)**2 exp(2 beta (C_h - 1)) C_h`` to give the plating state.

    ``reference_coefficient_sq`` is the lane's cycle-law coefficient squared at 25 °C per
    full equivalent cycle (its state increment per cycle there), ``mean_charge_c_rate``
    the lane's mean charge rate (see the module docstring).
    """
    s = plating_share_ref
    w = s * np.exp(plating_c_rate_beta * (np.asarray(mean_charge_c_rate, dtype=float) - 1.0))
    return np.asarray(reference_coefficient_sq, dtype=float) * (s / ((1.0 - s) + w)) ** 2
