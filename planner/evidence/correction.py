"""Capacity measured at one temperature, expressed at 25 °C.

A discharge test delivers less in the cold and more in the warm; the fade factor must
compare like with like, so every measured capacity is first corrected to 25 °C. Three
rules, one per kind of battery and standard:

* **IEC 60896-21 (valve-regulated lead-acid)**: ``C = Ca / (1 + λ (θ - 25))`` with ``Ca``
  the capacity delivered from an initial temperature ``θ`` (°C). ``λ = 0.006 /K`` for
  tests at the 10-20 h rates and ``0.01 /K`` at the 1-3 h rates (values read on a battery
  maker's support page quoting the rule; the clause number from memory). Between 3 h
  and 10 h this module interpolates ``λ`` linearly in the logarithm of the rate hours
  (0.01 at 3 h to 0.006 at 10 h): a continuous rule that stays between the two published
  values (IEC 60896-11 for vented cells steps from 0.01 to 0.006 at 3 h instead, from
  memory; the two differ by at most 0.004 /K, 0.4 % of capacity per 10 K of offset).
  Faster than 1 h and slower than 20 h the nearest value is held.
* **IEEE 450, time-adjusted method (vented lead-acid)**: the test runs at the rated
  current and the time (equivalently the charge) delivered is multiplied by the
  temperature correction factor of the initial electrolyte temperature. The factors are
  the vented lead-acid table shared with IEEE 485 Table 1
  (:func:`planner.energy.sizing.lead_acid_temperature_factor`, from memory), with credit
  above 25 °C (a warm test is corrected down). The *rate-adjusted* method corrects the
  current before the test instead, so its result is already at 25 °C: record such
  tests with ``corrected_to_25c = yes`` (correcting them again is the classic mix-up).
* **Lithium-ion (LFP, NMC, LTO)**: no standard correction exists for field tests; the
  planner's own chemistry library curve of available capacity against temperature
  (``available_capacity`` in ``planner/data/chemistries.toml``, with its source) is
  used: ``C = Ca / f(θ)`` with ``f(25 °C) = 1``. The curve is held at 1 above 25 °C, so
  a warm lithium test is taken as measured (lithium capacity rises by well under 0.5 %
  per kelvin there, from memory); IEC 62620 tests lithium at 25 ± 5 °C (from memory),
  and tests outside 15-35 °C are flagged by :func:`lithium_test_warning`.

Primary cells are not capacity-tested (a test spends the charge it measures).
"""

from __future__ import annotations

import numpy as np

from planner.chemistry import get_chemistry
from planner.energy.sizing import lead_acid_temperature_factor

REFERENCE_TEMP_C = 25.0
#: IEC 60896-21 λ at the 1-3 h rates and at the 10-20 h rates, per kelvin.
LAMBDA_SHORT_PER_K = 0.01
LAMBDA_LONG_PER_K = 0.006
SHORT_RATE_H = 3.0
LONG_RATE_H = 10.0
#: Lead-acid correction rules a study may choose ([field_data].lead_acid_correction).
LEAD_ACID_RULES = ("iec60896-21", "ieee450-time")
#: IEC 62620 test temperature window for lithium, 25 ± 5 °C widened to ± 10 K here
#: before a test is flagged (from memory).
LITHIUM_TEST_WINDOW_C = (15.0, 35.0)


def iec_lambda_per_k(rate_h):
    """λ of the IEC 60896-21 rule for a test at the ``rate_h`` hour rate.

    0.01 /K at 3 h and faster, 0.006 /K at 10 h and slower, linear in ``log(rate_h)``
    between (see the module docstring for why).

    Examples
    --------
    >>> float(iec_lambda_per_k(10.0)), float(iec_lambda_per_k(1.0))
    (0.006, 0.01)
    """
    h = np.clip(np.asarray(rate_h, dtype=float), SHORT_RATE_H, LONG_RATE_H)
    share = np.log(h / SHORT_RATE_H) / np.log(LONG_RATE_H / SHORT_RATE_H)
    lam = LAMBDA_SHORT_PER_K + share * (LAMBDA_LONG_PER_K - LAMBDA_SHORT_PER_K)
    return float(lam) if lam.ndim == 0 else lam


def iec60896_capacity_at_25c(capacity, temp_c, rate_h):
    """``C = Ca / (1 + λ (θ - 25))`` (IEC 60896-21), any capacity unit.

    Examples
    --------
    A 10 h test from 15 °C delivering 94 % of rating is 100 % at 25 °C:

    >>> round(float(iec60896_capacity_at_25c(0.94, 15.0, 10.0)), 6)
    1.0
    """
    lam = iec_lambda_per_k(rate_h)
    return np.asarray(capacity, dtype=float) / (1.0 + lam * (np.asarray(temp_c, dtype=float)
                                                             - REFERENCE_TEMP_C))


def ieee450_time_adjusted_at_25c(capacity, temp_c):
    """Time-adjusted correction (IEEE 450): the delivered time or charge times the vented
    lead-acid factor of the initial electrolyte temperature (IEEE 485 Table 1 values,
    from memory; credit taken above 25 °C).

    Examples
    --------
    At 60 °F (15.6 °C) the table factor is 1.11:

    >>> round(float(ieee450_time_adjusted_at_25c(0.90, (60 - 32) * 5 / 9)), 4)
    0.999
    """
    factor = lead_acid_temperature_factor(np.clip(temp_c, -40.0, 60.0), allow_credit_above_25c=True)
    return np.asarray(capacity, dtype=float) * factor


def lithium_capacity_at_25c(capacity, temp_c, chemistry: str):
    """``C = Ca / f(θ)`` with ``f`` the chemistry library's available-capacity curve."""
    available = get_chemistry(chemistry).available_capacity_fraction(temp_c)
    return np.asarray(capacity, dtype=float) / np.maximum(available, 1e-6)


def capacity_at_25c(capacity, temp_c, rate_h, chemistry: str, lead_acid_rule: str = "iec60896-21"):
    """Capacity corrected to 25 °C by the rule of ``chemistry`` (see the module docstring).

    Parameters
    ----------
    capacity : float or array
        Capacity delivered in the test (Ah or fraction of rated: the unit is kept).
    temp_c : float or array
        Battery (electrolyte) temperature at the start of the test, °C.
    rate_h : float or array
        The test's discharge rate in hours (10 for a C/10 test).
    chemistry : str
        Chemistry id of the pack tested.
    lead_acid_rule : str
        ``"iec60896-21"`` or ``"ieee450-time"`` for lead-acid.
    """
    if chemistry == "vrla":
        if lead_acid_rule == "ieee450-time":
            return ieee450_time_adjusted_at_25c(capacity, temp_c)
        return iec60896_capacity_at_25c(capacity, temp_c, rate_h)
    return lithium_capacity_at_25c(capacity, temp_c, chemistry)


def lithium_test_warning(temp_c: float, chemistry: str) -> str:
    """A warning for a lithium test far from 25 °C (its correction rests on a library
    curve, not a standard), or an empty string."""
    low, high = LITHIUM_TEST_WINDOW_C
    if chemistry == "vrla" or low <= temp_c <= high:
        return ""
    return (f"test started at {temp_c:g} °C, outside {low:g}-{high:g} °C: its correction to "
            "25 °C rests on the chemistry library's derating curve, not a standard")
