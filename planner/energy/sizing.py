"""The 1x reference pack: the smallest battery that carries a site through its days of
autonomy at its coldest, to the end of its life, after stand-alone PV practice.

IEEE Std 1013 (sizing lead-acid batteries for stand-alone PV systems; clauses 4-6:
autonomy, load, unadjusted and adjusted capacity) and IEEE Std 1562 (sizing stand-alone
PV systems; clauses 5-7) chain the factors as::

    L_Ah   = E_day / (V_sys * eta_conv)            daily load in Ah
    C_unadj = L_Ah * N_aut                         days of autonomy
    C      = C_unadj / DOD_max * K_T * K_age * K_margin

with ``K_T`` the temperature correction at the lowest expected battery temperature,
``K_age = 1.25`` so that a pack at 80 % of rated capacity (the usual replacement point)
still carries the load, and a design margin of 1.10-1.15. (Clause numbers and the order
of factors: from memory; the chain was confirmed against practitioner worksheets, see
docs/energy.md.) The optimizer explores oversizing factors on top of this size.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from planner.errors import InputError

#: IEEE 485 Table 1 temperature correction factors for vented lead-acid cells
#: (specific gravity about 1.215), reference 25 degC (77 degF), as (degF, factor).
#: Source: from memory (IEEE 485-2010 Table 1); the rows at 60, 50 and 40 degF match two
#: independent practitioner tables (ambient-temperature multipliers 1.11, 1.19, 1.30), and
#: the table range -3.9 to 51.7 degC was read in a secondary source.
IEEE485_TABLE1_DEGF = (
    (25.0, 1.520), (30.0, 1.430), (35.0, 1.350), (40.0, 1.300), (45.0, 1.250),
    (50.0, 1.190), (55.0, 1.150), (60.0, 1.110), (65.0, 1.080), (70.0, 1.040),
    (75.0, 1.011), (77.0, 1.000), (78.0, 0.994), (80.0, 0.980), (85.0, 0.960),
    (90.0, 0.940), (95.0, 0.930), (100.0, 0.910), (105.0, 0.890), (110.0, 0.880),
    (115.0, 0.870), (120.0, 0.860), (125.0, 0.850),
)

#: Practitioner battery-bank multiplier at 20 degF (-6.7 degC), below the IEEE 485 range.
#: Source: two practitioner tables (a stand-alone battery sizing worksheet and an inverter
#: installation manual, appendix B), read; see docs/energy.md.
PRACTITIONER_20F_FACTOR = 1.59

#: Aging factor for replacement at 80 % of rated capacity (1 / 0.8). Source: IEEE 1013 /
#: IEEE 485 practice (80 % replacement criterion of IEEE 450 / IEEE 1188), common practice.
DEFAULT_AGING_FACTOR = 1.25

#: Design margin. Source: IEEE 485 practice, typical 1.10-1.15 (from memory).
DEFAULT_DESIGN_MARGIN = 1.10


def _f_to_c(temp_f):
    return (np.asarray(temp_f, dtype=float) - 32.0) * 5.0 / 9.0


def lead_acid_temperature_factor(temp_c, *, allow_credit_above_25c: bool = False):
    """Capacity correction factor K_T for lead-acid at the lowest electrolyte temperature.

    Linear interpolation in IEEE 485 Table 1 (``IEEE485_TABLE1_DEGF``, from memory;
    rows at 60/50/40 degF confirmed by practitioner tables). Below the table's lowest row
    (-3.9 degC) the practitioner row at 20 degF (-6.7 degC, 1.59) is used, and colder
    than that the last segment is extrapolated linearly: prefer the chemistry's own
    derating curve (:func:`temperature_factor_from_derating`) for cold sites.

    IEEE 485 takes no credit for temperatures above 25 degC (factors below 1 shorten life
    instead), so the factor is held at >= 1 unless ``allow_credit_above_25c``.

    Parameters
    ----------
    temp_c : float or array
        Lowest expected battery (electrolyte) temperature (degC), -40 to 60.

    Returns
    -------
    float or numpy.ndarray
        K_T (dimensionless, multiplies the required capacity).
    """
    t = np.asarray(temp_c, dtype=float)
    if np.any(~np.isfinite(t)) or np.any(t < -40.0) or np.any(t > 60.0):
        raise InputError(f"temp_c: found {temp_c!r}, expected -40 to 60 degC")
    table_f = np.array([row[0] for row in IEEE485_TABLE1_DEGF])
    table_k = np.array([row[1] for row in IEEE485_TABLE1_DEGF])
    xs = np.concatenate([[float(_f_to_c(20.0))], _f_to_c(table_f)])
    ks = np.concatenate([[PRACTITIONER_20F_FACTOR], table_k])
    k = np.interp(t, xs, ks)
    # extrapolate below -6.7 degC with the slope of the coldest segment
    slope = (ks[1] - ks[0]) / (xs[1] - xs[0])
    k = np.where(t < xs[0], ks[0] + slope * (t - xs[0]), k)
    if not allow_credit_above_25c:
        k = np.maximum(k, 1.0)
    return float(k) if k.ndim == 0 else k


def temperature_factor_from_derating(available_fraction, *,
                                     allow_credit_above_one: bool = False):
    """Temperature factor from a chemistry's available-capacity fraction: ``K_T = 1/f``.

    Used for lithium and other chemistries whose derating comes from a datasheet curve
    (the IEEE 485 factors are themselves the reciprocal of available capacity).

    Parameters
    ----------
    available_fraction : float or array
        Fraction of rated capacity available at the design temperature, (0, 1.5].

    Returns
    -------
    float or numpy.ndarray
        K_T, held at >= 1 unless ``allow_credit_above_one``.
    """
    f = np.asarray(available_fraction, dtype=float)
    if np.any(~np.isfinite(f)) or np.any(f <= 0.0) or np.any(f > 1.5):
        raise InputError(f"available_fraction: found {available_fraction!r}, expected "
                         "a fraction in (0, 1.5]")
    k = 1.0 / f
    if not allow_credit_above_one:
        k = np.maximum(k, 1.0)
    return float(k) if k.ndim == 0 else k


LEAD_ACID_TEMPERATURE_METHODS = ("datasheet", "ieee485")
"""How the lead-acid temperature factor is found: the chemistry's datasheet-style
available-capacity curve (default) or the IEEE 485 Table 1 correction."""


def lead_acid_sizing_temperature_factor(temp_c, available_fraction, method: str = "datasheet"):
    """K_T of a lead-acid pack at its lowest battery temperature, by the chosen method.

    ``"datasheet"`` (default): ``1 / f`` with ``f`` the chemistry's available capacity at
    ``temp_c`` (VRLA datasheets at C/10-C/20: about 0.85 at 0 °C, K_T about 1.18; from
    memory). A telemetry pack is discharged over days of autonomy, at C/100 or slower,
    where the low-rate datasheet curve applies. ``"ieee485"``: IEEE 485 Table 1
    (:func:`lead_acid_temperature_factor`, about 1.40 at 0 °C, from memory), written for
    vented cells at the 1-8 h rates of stationary duty: colder-sensitive and more
    conservative. Choose it where a utility or client requires IEEE 485 sizing.

    Parameters
    ----------
    temp_c : float
        Lowest expected battery temperature, °C.
    available_fraction : float
        The chemistry's available-capacity fraction at ``temp_c``.
    method : {"datasheet", "ieee485"}
    """
    if method == "datasheet":
        return temperature_factor_from_derating(available_fraction)
    if method == "ieee485":
        return lead_acid_temperature_factor(max(float(temp_c), -40.0))
    raise InputError(f"lead-acid temperature method: found {method!r}, expected one of "
                     f"{', '.join(LEAD_ACID_TEMPERATURE_METHODS)}")


@dataclass(frozen=True)
class ReferenceSize:
    """The 1x reference size with every factor of the chain, to follow it by hand.

    Attributes
    ----------
    daily_load_wh : daily energy drawn by the load (Wh/day).
    system_voltage_v : nominal battery bus voltage (V).
    conversion_efficiency_frac : efficiency between battery and load (0-1].
    daily_load_ah : daily_load_wh / (system_voltage_v * conversion_efficiency_frac) (Ah/day).
    autonomy_days : days the pack carries the load with no charging (days).
    unadjusted_capacity_ah : daily_load_ah * autonomy_days (Ah).
    max_dod_frac : maximum depth of discharge allowed (0-1].
    temperature_factor : K_T at the lowest expected battery temperature.
    aging_factor : K_age (1.25 for replacement at 80 %).
    design_margin : K_margin.
    capacity_ah : required rated capacity (Ah).
    capacity_wh : capacity_ah * system_voltage_v (Wh).
    """

    daily_load_wh: float
    system_voltage_v: float
    conversion_efficiency_frac: float
    daily_load_ah: float
    autonomy_days: float
    unadjusted_capacity_ah: float
    max_dod_frac: float
    temperature_factor: float
    aging_factor: float
    design_margin: float
    capacity_ah: float
    capacity_wh: float

    def to_dict(self) -> dict:
        return asdict(self)

    def steps(self) -> list[str]:
        """The chain as lines a planner can check with a calculator."""
        return [
            f"daily load {self.daily_load_wh:g} Wh / ({self.system_voltage_v:g} V x "
            f"{self.conversion_efficiency_frac:g}) = {self.daily_load_ah:.4g} Ah/day",
            f"x {self.autonomy_days:g} days of autonomy = {self.unadjusted_capacity_ah:.4g} Ah",
            f"/ max depth of discharge {self.max_dod_frac:g} x temperature factor "
            f"{self.temperature_factor:.4g} x aging factor {self.aging_factor:g} x design "
            f"margin {self.design_margin:g} = {self.capacity_ah:.4g} Ah "
            f"({self.capacity_wh:.4g} Wh)",
        ]


def _positive(value, key: str, hi: float, *, allow_zero: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{key}: found {value!r}, expected a number") from None
    ok = math.isfinite(v) and (v >= 0 if allow_zero else v > 0) and v <= hi
    if not ok:
        low = "0" if allow_zero else "above 0"
        raise InputError(f"{key}: found {value!r}, expected {low} up to {hi:g}")
    return v


def reference_capacity(*, daily_load_wh: float, system_voltage_v: float,
                       autonomy_days: float, max_dod_frac: float, temperature_factor: float,
                       aging_factor: float = DEFAULT_AGING_FACTOR,
                       design_margin: float = DEFAULT_DESIGN_MARGIN,
                       conversion_efficiency_frac: float = 1.0) -> ReferenceSize:
    """Required rated capacity of the 1x reference pack (IEEE 1013 / IEEE 1562 chain).

    ``C_Ah = E_day / (V_sys * eta_conv) * N_aut / DOD_max * K_T * K_age * K_margin``

    Example: 960 Wh/day at 12 V, 5 days, DOD 0.8, K_T 1.30 (40 degF), K_age 1.25,
    K_margin 1.10 gives 893.75 Ah.

    Parameters
    ----------
    daily_load_wh : float
        Daily load energy at the battery side of the converter (Wh/day), including any
        heater/HVAC energy the pack supplies.
    system_voltage_v : float
        Nominal bus voltage (V).
    autonomy_days : float
        Days of autonomy (days).
    max_dod_frac : float
        Maximum depth of discharge (0-1].
    temperature_factor : float
        K_T, from :func:`lead_acid_temperature_factor` or
        :func:`temperature_factor_from_derating` (0.5-5).
    aging_factor : float
        K_age (1-2), 1.25 for replacement at 80 % of rated capacity.
    design_margin : float
        K_margin (1-2).
    conversion_efficiency_frac : float
        Efficiency between battery and load (0-1].

    Returns
    -------
    ReferenceSize
    """
    e_day = _positive(daily_load_wh, "daily_load_wh", 1e7, allow_zero=True)
    v = _positive(system_voltage_v, "system_voltage_v", 2000.0)
    n_aut = _positive(autonomy_days, "autonomy_days", 365.0)
    dod = _positive(max_dod_frac, "max_dod_frac", 1.0)
    k_t = _positive(temperature_factor, "temperature_factor", 5.0)
    k_age = _positive(aging_factor, "aging_factor", 2.0)
    margin = _positive(design_margin, "design_margin", 2.0)
    eta = _positive(conversion_efficiency_frac, "conversion_efficiency_frac", 1.0)
    if k_age < 1.0 or margin < 1.0:
        raise InputError(f"aging_factor/design_margin: found {k_age:g}/{margin:g}, "
                         "expected factors of at least 1")
    daily_ah = e_day / (v * eta)
    unadj = daily_ah * n_aut
    cap_ah = unadj / dod * k_t * k_age * margin
    return ReferenceSize(daily_load_wh=e_day, system_voltage_v=v,
                         conversion_efficiency_frac=eta, daily_load_ah=daily_ah,
                         autonomy_days=n_aut, unadjusted_capacity_ah=unadj, max_dod_frac=dod,
                         temperature_factor=k_t, aging_factor=k_age, design_margin=margin,
                         capacity_ah=cap_ah, capacity_wh=cap_ah * v)
