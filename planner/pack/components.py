"""What ends a pack besides cell fade: the lives of its other components.

A lightly cycled pack at a remote site is often not ended by the capacity fade of its
cells but by something the fade laws do not describe. Each component here has a life that
depends on the site, each parameter a source in ``chemistries.toml`` (``[<id>.components]``):

* **battery-management electronics** (lithium-ion): a wear-out life that halves per 10 K
  (the design rule for electrolytic capacitors), counted on the battery temperature of
  every hour of the typical year;
* **seals and terminals**: a life set by how often moisture condenses on the pack
  (:func:`condensation_class`: from the weather file's dew point where it has one, or
  the sites table, or the enclosure);
* **cell imbalance** (lithium-ion series strings): where the charge voltage stays below
  the voltage at which the management system starts balancing, the cells' self-discharge
  differences pull their states of charge apart year after year and strand capacity;
  this loss adds to cell fade (:func:`imbalance_loss_frac_per_year`);
* **standby drain** (lithium-ion): a pack held at its low-voltage disconnect through a
  long dark spell keeps feeding its management system; once that drain has taken the
  reserve below the disconnect, the cells are over-discharged (:func:`standby_drain_years`);
* **shelf life** (primary cells): the vendors' shelf-life statement.

The study's ``[service_life]`` stays the user's ceiling: the lower of it and the component
lives applies (:func:`service_limit`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Condensation classes, driest first.
CONDENSATION_CLASSES = ("dry", "occasional", "frequent")
#: Share of the year's hours with the battery below the air's dew point at which the
#: class changes (engineering judgement, from memory: a pack that sits below the dew
#: point for more than a few per cent of the year is wet for weeks).
CONDENSATION_HOURS_FRAC = (0.02, 0.10)
#: The class where the weather file has no dew point: a conditioned shelter stays dry,
#: a buried vault is damp, a cabinet condenses now and then (common practice).
ENCLOSURE_CONDENSATION = {"shelter": "dry", "vault": "frequent", "cabinet-sun": "occasional",
                          "cabinet-shade": "occasional"}

#: Names of the components, as the plan reports them.
ELECTRONICS = "battery-management electronics"
SEALS = "seals and terminals"
IMBALANCE = "cell imbalance"
STANDBY_DRAIN = "standby drain"
SHELF_LIFE = "shelf life"
CEILING = "service-life limit"


def condensation_class(temp_battery_c, temp_dew_c, enclosure: str, given: str = "auto") -> str:
    """How often moisture condenses on the pack: ``dry``, ``occasional`` or ``frequent``.

    ``given`` (the sites table's ``condensation``) wins unless it is ``auto``. With a dew
    point, the share of hours with the battery colder than the outdoor air's dew point
    (a cabinet breathes outdoor air; surfaces below its dew point wet) is compared with
    :data:`CONDENSATION_HOURS_FRAC`; without one, the enclosure's class.

    Examples
    --------
    >>> condensation_class(np.full(8760, 5.0), np.full(8760, 8.0), "cabinet-sun")
    'frequent'
    >>> condensation_class(np.full(8760, 20.0), None, "vault")
    'frequent'
    """
    if given and given != "auto":
        return given
    if temp_dew_c is None:
        return ENCLOSURE_CONDENSATION.get(enclosure, "occasional")
    wet = float(np.mean(np.asarray(temp_battery_c, dtype=float) < np.asarray(temp_dew_c, dtype=float)))
    low, high = CONDENSATION_HOURS_FRAC
    return "dry" if wet < low else ("occasional" if wet < high else "frequent")


def electronics_life_years(temp_battery_c, *, electronics_life_years_ref, electronics_temp_ref_c,
                           electronics_halving_k, **_) -> float:
    r"""Wear-out life of battery-management electronics over a typical year's temperatures.

    .. math::

        L = \frac{L_{ref}}{\overline{2^{\max(T_h - T_{ref}, 0)/\Delta T}}}

    with :math:`L_{ref}` = ``electronics_life_years_ref`` [years] at :math:`T_{ref}` =
    ``electronics_temp_ref_c`` [°C], :math:`\Delta T` = ``electronics_halving_k`` [K] and
    the mean taken over the hourly battery temperatures :math:`T_h` (wear accumulates
    hour by hour: Miner's rule on the rate). Cold hours count at the reference rate (no
    credit for cold: other parts of the board do not last longer in it).

    References
    ----------
    The 10-degree rule for aluminium electrolytic capacitors, ``L = L0 2^((T0 - T)/10)``
    (capacitor makers' life formula; from memory).

    Examples
    --------
    Ten hot hours in twenty at 45 °C halve the life twice over for those hours:

    >>> round(electronics_life_years(np.r_[np.full(10, 25.0), np.full(10, 45.0)],
    ...       electronics_life_years_ref=20.0, electronics_temp_ref_c=25.0,
    ...       electronics_halving_k=10.0), 2)
    8.0
    """
    temp = np.asarray(temp_battery_c, dtype=float)
    rate = np.exp2(np.maximum(temp - electronics_temp_ref_c, 0.0) / electronics_halving_k)
    return float(electronics_life_years_ref / np.mean(rate))


def seal_life_years(condensation: str, params) -> float:
    """Life of seals and terminals in a condensation class (``seal_life_years_<class>``)."""
    return float(params[f"seal_life_years_{condensation}"])


def expected_range_of_normals(n: int) -> float:
    """Expected range of ``n`` standard normal draws (Blom's approximation of the largest
    order statistic, doubled; Blom, G. (1958), Statistical Estimates and Transformed
    Beta-Variables, Wiley).

    Examples
    --------
    The d2 constants of control-chart tables (textbook): 2.059 for n = 4, 3.532 for
    n = 16; the approximation is within 2 %:

    >>> [round(expected_range_of_normals(n), 2) for n in (4, 16)]
    [2.1, 3.54]
    """
    from scipy.stats import norm

    if n < 2:
        return 0.0
    return float(2.0 * norm.ppf((n - 0.375) / (n + 0.25)))


def imbalance_loss_frac_per_year(temp_battery_c, series_cells: int, charge_voltage_v_per_cell: float,
                                 *, balancing_start_v_per_cell, imbalance_drift_frac_per_year_ref,
                                 imbalance_temp_ref_c, imbalance_doubling_k, **_) -> float:
    r"""Capacity a series string loses each year to cell imbalance, fraction of rated.

    Zero when the charge voltage reaches the balancing start (balancing runs at every full
    charge). Otherwise the cells' states of charge drift apart at the spread of their
    self-discharge, :math:`\sigma` = ``imbalance_drift_frac_per_year_ref`` per year at
    ``imbalance_temp_ref_c``, doubling per ``imbalance_doubling_k``; a string delivers
    only between its highest and lowest cell, so it loses the expected *range* of its
    ``n`` cells:

    .. math::

        \dot q = d_n\,\sigma\,\overline{2^{(T_h - T_{ref})/\Delta T}}

    with :math:`d_n` from :func:`expected_range_of_normals`.

    Examples
    --------
    Four cells at 25 °C drifting 0.5 %/yr apart, charged below the balancing start:

    >>> round(imbalance_loss_frac_per_year(np.full(8760, 25.0), 4, 3.40,
    ...       balancing_start_v_per_cell=3.45, imbalance_drift_frac_per_year_ref=0.005,
    ...       imbalance_temp_ref_c=25.0, imbalance_doubling_k=10.0), 4)
    0.0105
    """
    if charge_voltage_v_per_cell >= balancing_start_v_per_cell - 1e-9 or series_cells < 2:
        return 0.0
    temp = np.asarray(temp_battery_c, dtype=float)
    heat = float(np.mean(np.exp2((temp - imbalance_temp_ref_c) / imbalance_doubling_k)))
    return expected_range_of_normals(series_cells) * imbalance_drift_frac_per_year_ref * heat


def standby_drain_years(days_at_floor: float, reserve_frac: float, *,
                        standby_drain_frac_per_month, **_) -> float:
    """Years until the standby drain over-discharges a pack held at its low-voltage
    disconnect: one year when the typical year's longest spell at the disconnect
    (``days_at_floor``) outlasts the reserve below it (``reserve_frac`` of rated
    capacity, drained at ``standby_drain_frac_per_month``), else never (``inf``).

    Examples
    --------
    A 10 % reserve drained at 2 %/month lasts about 152 days at the disconnect:

    >>> standby_drain_years(200.0, 0.1, standby_drain_frac_per_month=0.02)
    1.0
    >>> standby_drain_years(100.0, 0.1, standby_drain_frac_per_month=0.02)
    inf
    """
    if standby_drain_frac_per_month <= 0:
        return math.inf
    days_to_empty = reserve_frac / (standby_drain_frac_per_month * 12.0 / 365.0)
    return 1.0 if days_at_floor >= days_to_empty else math.inf


@dataclass(frozen=True)
class SiteComponents:
    """The component lives of one chemistry at one site that do not depend on the design.

    ``lives`` maps component names to years (``inf``: never ends the pack);
    ``condensation`` is the site's class.
    """

    lives: dict
    condensation: str

    @property
    def bound_years(self) -> float:
        """Longest life any pack of the chemistry can have at the site."""
        return min(self.lives.values(), default=math.inf)


def site_components(params, rechargeable: bool, lithium: bool, temp_battery_c, temp_dew_c,
                    enclosure: str, condensation: str = "auto") -> SiteComponents:
    """The design-independent component lives of a chemistry (``params``: its
    ``[components]`` table) at a site."""
    klass = condensation_class(temp_battery_c, temp_dew_c, enclosure, condensation)
    lives = {SEALS: seal_life_years(klass, params)}
    if lithium:
        lives[ELECTRONICS] = electronics_life_years(temp_battery_c, **params)
    if not rechargeable and "shelf_life_years" in params:
        lives[SHELF_LIFE] = float(params["shelf_life_years"])
    return SiteComponents(lives=lives, condensation=klass)


def service_limit(lives: dict, ceiling_years: float | None) -> tuple[float, str]:
    """``(years, name)`` of whatever ends the pack first among its component ``lives`` and
    the user's ``ceiling_years`` ([service_life], None: none); ``(inf, "")`` if nothing."""
    best, name = math.inf, ""
    for key, years in lives.items():
        if years < best:
            best, name = years, key
    if ceiling_years is not None and ceiling_years <= best:
        best, name = float(ceiling_years), CEILING
    return best, name
