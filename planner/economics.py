"""Life-cycle cost arithmetic: present-value factors and the present cost of a
replacement schedule at one site.

Conventions follow NIST Handbook 135 (Fuller & Petersen, 1996, *Life-Cycle Costing
Manual for the Federal Energy Management Program*, NIST HB 135, ch. 4-5 and App. D):

* constant (real) money with a real discount rate;
* every one-time cost is discounted from the end of the year it falls in, so a cost in
  year ``t`` (counted from the start, year 0 = today) has present value ``c * SPV(d, t)``;
* the residual value of the pack in service at the end of the study period is its
  purchase price prorated linearly over its life, discounted from the horizon year.

All functions accept numpy arrays and broadcast; money carries no unit in the name
(it is the study's currency).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

# Days per month of a 365-day typical year (leap day dropped, as everywhere in the planner).
DAYS_PER_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)


#: Lowest real discount rate a study may use, per year. The residual value of the pack in
#: service at the horizon is its price prorated over its life L and discounted from the
#: horizon; bought s years before the horizon, that credit is worth
#: ``(1 - s/L) (1 + d)**-s`` of the pack's own discounted price. With d below zero the
#: factor ``(1 + d)**-s`` grows, and the credit exceeds the price for some s as soon as
#: ``-ln(1 + d) > 1/L`` (the derivative at s = 0): a pack bought just before the horizon
#: would earn money and the fleet's total could turn negative (computed). The longest
#: service a study may plan is 60 years ([service_life]), so d >= exp(-1/60) - 1 =
#: -1.65 %; -1.5 % keeps a margin and still allows the small negative real rates of
#: years when inflation runs above interest.
MIN_REAL_RATE_FRAC = -0.015
#: Highest real discount rate, per year: the bound of ``[study].discount_rate_frac``.
MAX_REAL_RATE_FRAC = 0.5


def spv(rate, years):
    r"""Single present value factor: what one unit of money paid later is worth today.

    .. math::

        \mathrm{SPV}(d, t) = \frac{1}{(1 + d)^{t}}

    with :math:`d` the real discount rate per year (``rate``, fraction) and :math:`t`
    the years from the base date to the cash flow (``years``; a cost is discounted from
    the end of the year it falls in).

    Parameters
    ----------
    rate : float or array
        Real discount rate per year, fraction (0.03 = 3 %).
    years : float or array
        Years from the base date to the cash flow (end-of-year convention).

    Returns
    -------
    float or numpy.ndarray
        Present value of one unit of money paid ``years`` from now.

    References
    ----------
    .. [1] S. K. Fuller and S. R. Petersen (1996), *Life-Cycle Costing Manual for the
       Federal Energy Management Program*, NIST Handbook 135, 1995 ed., formula D.2.1.1.
    .. [2] Compound-interest table at 3 % ("Discrete Cash Flow: Compound Interest
       Factors", Table 8), P/F column: 0.7441 at n = 10, 0.5537 at n = 20 (table read;
       that it is the table of Blank & Tarquin, *Engineering Economy*, is from memory).

    Examples
    --------
    One unit paid in 10 and in 20 years at 3 % ([2], P/F):

    >>> [round(float(f), 4) for f in spv(0.03, [10, 20])]
    [0.7441, 0.5537]
    """
    return np.power(1.0 + np.asarray(rate, dtype=float), -np.asarray(years, dtype=float))


def upv(rate, years):
    r"""Uniform present value factor (annuity factor, ESPWF): what one unit paid at the
    end of every year is worth today.

    .. math::

        \mathrm{UPV}(d, n) = \sum_{t=1}^{n} \frac{1}{(1 + d)^{t}}
                           = \frac{(1 + d)^{n} - 1}{d\,(1 + d)^{n}}

    with :math:`d` the real discount rate per year (``rate``, fraction) and :math:`n` the
    number of equal end-of-year payments (``years``). At :math:`d = 0` the limit
    :math:`n` is returned.

    Parameters
    ----------
    rate : float or array
        Real discount rate per year, fraction.
    years : float or array
        Number of equal end-of-year payments.

    Returns
    -------
    float or numpy.ndarray
        Present value of one unit paid at the end of each of ``years`` years.

    References
    ----------
    .. [1] S. K. Fuller and S. R. Petersen (1996), *Life-Cycle Costing Manual for the
       Federal Energy Management Program*, NIST Handbook 135, 1995 ed., App. D
       (uniform present value).
    .. [2] Compound-interest table at 3 % ("Discrete Cash Flow: Compound Interest
       Factors", Table 8), P/A column: 8.5302 at n = 10, 14.8775 at n = 20 (table read;
       that it is the table of Blank & Tarquin, *Engineering Economy*, is from memory).
    .. [3] ASHRAE (2013), *Pocket Guide for Air Conditioning, Heating, Ventilation and
       Refrigeration*, equal series present worth factors: 8.53 at 3 % over 10 years,
       11.94 over 15 years (as restated on engineersedge.com, read).

    Examples
    --------
    At 3 % over 10 and 20 years ([2], P/A):

    >>> [round(float(f), 4) for f in upv(0.03, [10, 20])]
    [8.5302, 14.8775]

    and over 15 years, as the ASHRAE table prints it ([3]):

    >>> round(float(upv(0.03, 15)), 2)
    11.94
    """
    d = np.asarray(rate, dtype=float)
    n = np.asarray(years, dtype=float)
    safe_d = np.where(d == 0.0, 1.0, d)
    # expm1/log1p keep full precision for tiny rates, where 1 - (1+d)**-n cancels
    factor = -np.expm1(-n * np.log1p(safe_d)) / safe_d
    return np.where(d == 0.0, n, factor)


def upv_escalating(rate, escalation_rate, years):
    r"""Modified uniform present value factor: a yearly cost, given in base-year money,
    that escalates at a constant real rate.

    .. math::

        \mathrm{UPV}^{*}(d, e, n) = \sum_{t=1}^{n} \left(\frac{1 + e}{1 + d}\right)^{t}
            = \frac{1 + e}{d - e}\left[1 - \left(\frac{1 + e}{1 + d}\right)^{n}\right]

    with :math:`d` the real discount rate per year (``rate``, fraction), :math:`e` the
    real yearly escalation of the cost (``escalation_rate``, fraction) and :math:`n` the
    number of end-of-year payments (``years``). At :math:`d = e` the limit
    :math:`n (1 + e)/(1 + d)` is returned; at :math:`e = 0` it is :func:`upv`.

    Parameters
    ----------
    rate : float or array
        Real discount rate per year, fraction.
    escalation_rate : float or array
        Real yearly escalation of the cost, fraction.
    years : float or array
        Number of end-of-year payments.

    Returns
    -------
    float or numpy.ndarray
        Present value of a cost of one unit a year in base-year money, paid at the end of
        each of ``years`` years and escalating at ``escalation_rate``.

    References
    ----------
    .. [1] S. K. Fuller and S. R. Petersen (1996), *Life-Cycle Costing Manual for the
       Federal Energy Management Program*, NIST Handbook 135, 1995 ed., App. D
       (modified uniform present value).
    .. [2] Compound-interest table at 3 % ("Discrete Cash Flow: Compound Interest
       Factors", Table 8), P/A column: 8.5302 at n = 10 (table read; that it is the table
       of Blank & Tarquin, *Engineering Economy*, is from memory).

    Examples
    --------
    Without escalation the factor is the uniform present value of the table ([2]):

    >>> round(float(upv_escalating(0.03, 0.0, 10)), 4)
    8.5302

    With 1 % escalation over 10 years at 3 % (computed from the formula above; no
    published table of this factor was read):

    >>> round(float(upv_escalating(0.03, 0.01, 10)), 6)
    8.991899
    """
    d = np.asarray(rate, dtype=float)
    e = np.asarray(escalation_rate, dtype=float)
    n = np.asarray(years, dtype=float)
    same = np.isclose(d, e)
    diff = np.where(same, 1.0, d - e)
    factor = (1.0 + e) / diff * (1.0 - np.power((1.0 + e) / (1.0 + d), n))
    return np.where(same, n * (1.0 + e) / (1.0 + d), factor)


def crf(rate, years):
    r"""Capital recovery factor: the equal end-of-year payment worth one unit today.

    .. math::

        \mathrm{CRF}(d, n) = \frac{1}{\mathrm{UPV}(d, n)}
                           = \frac{d\,(1 + d)^{n}}{(1 + d)^{n} - 1}

    with :math:`d` the real discount rate per year (``rate``, fraction) and :math:`n` the
    study period (``years``). It multiplies a present value into the equivalent uniform
    annual cost.

    Parameters
    ----------
    rate : float or array
        Real discount rate per year, fraction.
    years : float or array
        Study period, years.

    Returns
    -------
    float or numpy.ndarray
        Yearly payment, per unit of present value.

    References
    ----------
    .. [1] S. K. Fuller and S. R. Petersen (1996), *Life-Cycle Costing Manual for the
       Federal Energy Management Program*, NIST Handbook 135, 1995 ed., App. D.
    .. [2] Compound-interest table at 3 % ("Discrete Cash Flow: Compound Interest
       Factors", Table 8), A/P column: 0.11723 at n = 10, 0.06722 at n = 20 (table read;
       that it is the table of Blank & Tarquin, *Engineering Economy*, is from memory).

    Examples
    --------
    At 3 % over 10 and 20 years ([2], A/P):

    >>> [round(float(f), 5) for f in crf(0.03, [10, 20])]
    [0.11723, 0.06722]
    """
    return 1.0 / upv(rate, years)


def real_rate(nominal_rate, inflation_rate):
    r"""Real discount rate from a nominal rate and general inflation.

    .. math::

        d = \frac{1 + D}{1 + I} - 1

    with :math:`D` the nominal discount rate per year (``nominal_rate``, fraction) and
    :math:`I` the general inflation per year (``inflation_rate``, fraction).

    Parameters
    ----------
    nominal_rate : float or array
        Nominal discount rate D per year, fraction.
    inflation_rate : float or array
        General inflation I per year, fraction.

    Returns
    -------
    float or numpy.ndarray
        Real discount rate d per year, fraction.

    References
    ----------
    .. [1] S. K. Fuller and S. R. Petersen (1996), *Life-Cycle Costing Manual for the
       Federal Energy Management Program*, NIST Handbook 135, 1995 ed., ch. 4 (constant
       versus current money).

    Examples
    --------
    A 5 % nominal rate with 2 % inflation (computed from the formula above):

    >>> round(float(real_rate(0.05, 0.02)), 6)
    0.029412
    """
    return (1.0 + np.asarray(nominal_rate, dtype=float)) / (
        1.0 + np.asarray(inflation_rate, dtype=float)
    ) - 1.0


def nominal_rate(real_rate_frac, inflation_rate):
    r"""Nominal discount rate, the inverse of :func:`real_rate`.

    .. math::

        D = (1 + d)(1 + I) - 1

    with :math:`d` the real discount rate per year (``real_rate_frac``, fraction) and
    :math:`I` the general inflation per year (``inflation_rate``, fraction); NIST
    Handbook 135 (Fuller & Petersen 1996), ch. 4.

    Examples
    --------
    A cost in current money discounted at the nominal rate has the present value of the
    same cost in constant money at the real rate (computed from the formulas):

    >>> d, inflation = 0.03, 0.02
    >>> current = nominal_amount(5000.0, inflation, 10)
    >>> round(float(current * spv(nominal_rate(d, inflation), 10)), 4)
    3720.4696
    >>> round(float(5000.0 * spv(d, 10)), 4)
    3720.4696
    """
    return (1.0 + np.asarray(real_rate_frac, dtype=float)) * (
        1.0 + np.asarray(inflation_rate, dtype=float)
    ) - 1.0


def nominal_amount(constant, inflation_rate, years):
    """Money of the year it is spent (current money) from constant money of year 0.

    ``nominal = constant * (1 + I)**t``: NIST Handbook 135 (Fuller & Petersen 1996),
    ch. 4 (constant versus current money). Discounted at the nominal rate
    ``(1 + d)(1 + I) - 1`` (:func:`nominal_rate`) it has the same present value as the
    constant amount at the real rate ``d``.

    Parameters
    ----------
    constant : float or array
        Amount in constant money of the study start.
    inflation_rate : float or array
        General inflation I per year, fraction.
    years : float or array
        Years from the study start to the cash flow.
    """
    return np.asarray(constant, dtype=float) * np.power(
        1.0 + np.asarray(inflation_rate, dtype=float), np.asarray(years, dtype=float))


def residual_fraction(service_years, life_years):
    """Fraction of a pack's price still owed to it when the study ends.

    Linear prorating of the initial cost over the life, the NIST Handbook 135 default
    when no better estimate exists (Fuller & Petersen 1996, ch. 5, residual values):
    ``max(0, life - service) / life``.

    Parameters
    ----------
    service_years : float or array
        Years the pack has served when the study ends.
    life_years : float or array
        Years the pack can carry the site.
    """
    life = np.asarray(life_years, dtype=float)
    served = np.asarray(service_years, dtype=float)
    return np.clip((life - served) / life, 0.0, 1.0)


def expected_wait_days(access_months):
    """Expected days from a failure to the start of the next month the site can be reached.

    A failure is equally likely at any moment of the 365-day year. Failing inside an
    accessible month costs no wait (the unplanned visit goes that month); failing in a
    closed month waits the rest of that month plus every following closed month.

    Parameters
    ----------
    access_months : sequence of int
        Months 1-12 in which the site can be reached. Empty means never: ``inf``.

    Returns
    -------
    float
        Expected wait, days.
    """
    is_open = np.zeros(12, dtype=bool)
    months = [int(m) for m in access_months]
    if not months:
        return float("inf")
    is_open[np.asarray(months) - 1] = True
    wait = 0.0
    for m in range(12):  # 12 months, not a data loop
        if is_open[m]:
            continue
        after = 0.0
        k = (m + 1) % 12
        while not is_open[k]:
            after += DAYS_PER_MONTH[k]
            k = (k + 1) % 12
        # uniform failure time inside month m: half the month on average, then the closed run
        wait += DAYS_PER_MONTH[m] / 365.0 * (DAYS_PER_MONTH[m] / 2.0 + after)
    return float(wait)


def failure_risk_cost(start_year, service_years, failure_prob_by_age, failure_cost, rate):
    """Expected present cost of unplanned failures of a pack during its planned service.

    The pack installed in ``start_year`` serves ``service_years`` whole years. Element
    ``i`` of ``failure_prob_by_age`` is the probability that it can no longer carry the
    site before age ``i + 1`` years (a cumulative distribution, non-decreasing; ages past
    its end keep the last value). A failure in year ``a`` of service is paid at the end of
    that year (NIST HB 135 end-of-year convention), so the expected cost is
    ``sum_a (F(a) - F(a-1)) * cost * SPV(d, start + a)``.

    Parameters
    ----------
    start_year : int
        Year the pack goes in.
    service_years : int
        Whole years it is planned to serve.
    failure_prob_by_age : sequence of float or None
        Cumulative failure probability at ages 1, 2, ... years; None means no risk.
    failure_cost : float
        Cost of one unplanned failure (emergency trip plus downtime penalty).
    rate : float
        Real discount rate per year, fraction.
    """
    n = int(service_years)
    if failure_prob_by_age is None or n <= 0 or failure_cost == 0.0:
        return 0.0
    probs = np.asarray(failure_prob_by_age, dtype=float)
    if probs.size == 0:
        return 0.0
    ages = np.arange(1, n + 1)
    cdf = probs[np.minimum(ages, probs.size) - 1]
    pdf = np.diff(np.concatenate(([0.0], cdf)))
    return float(np.sum(pdf * failure_cost * spv(rate, start_year + ages)))


@dataclass(frozen=True)
class CostBreakdown:
    """Present cost of one site's plan, by kind. ``residual`` is a credit (<= 0).

    ``downtime`` is the expected cost of days off air (load not served) of the packs
    chosen, net of the share that falls after the horizon (credited like the residual
    value, so packs and downtime each carry their own part).
    """

    packs: float = 0.0
    labour: float = 0.0
    trips: float = 0.0
    disposal: float = 0.0
    residual: float = 0.0
    failure_risk: float = 0.0
    downtime: float = 0.0

    @property
    def total(self) -> float:
        return (self.packs + self.labour + self.trips + self.disposal + self.residual
                + self.failure_risk + self.downtime)

    def to_dict(self) -> dict:
        return {f.name: float(getattr(self, f.name)) for f in fields(self)}

    def __add__(self, other: CostBreakdown) -> CostBreakdown:
        return CostBreakdown(
            **{f.name: getattr(self, f.name) + getattr(other, f.name) for f in fields(self)}
        )


def schedule_present_cost(
    replacement_years,
    *,
    horizon_years: int,
    rate: float,
    pack_cost: float,
    life_years: float,
    install_cost: float = 0.0,
    disposal_cost: float = 0.0,
    trip_cost=0.0,
    existing_disposal_cost: float | None = None,
    failure_prob_by_age=None,
    failure_cost: float = 0.0,
    existing_failure_prob_by_age=None,
    residual_value: bool = True,
    downtime_cost: float = 0.0,
) -> CostBreakdown:
    """Present cost of one site's replacement schedule with one design.

    Cash flows (NIST Handbook 135 conventions; Fuller & Petersen 1996):

    * each replacement year ``t`` pays pack price, installation labour and the trip
      (``trip_cost``: a scalar, or one value per replacement for a shared trip's share),
      all times ``SPV(d, t)``;
    * disposal of the pack taken out is paid in the year it comes out; the first
      replacement removes the existing pack (``existing_disposal_cost``) or, when
      ``existing_disposal_cost`` is None, is the site's initial purchase and removes
      nothing;
    * the last pack's residual value ``pack_cost * max(0, L - (H - t)) / L`` is credited
      at ``SPV(d, H)``;
    * the failure risk of each pack over its planned service (see
      :func:`failure_risk_cost`); with an existing pack, its risk until the first
      replacement uses ``existing_failure_prob_by_age``;
    * ``downtime_cost`` (present value at installation of a pack's days off air over its
      service) is paid with each pack, and the last pack's share beyond the horizon is
      credited at ``SPV(d, H)`` with the same linear fraction as its residual value.

    Parameters
    ----------
    replacement_years : sequence of int
        Years (0 = start) at which a new pack goes in, strictly increasing, < horizon.
    horizon_years : int
        Study period H, years.
    rate : float
        Real discount rate per year, fraction.
    pack_cost, install_cost, disposal_cost : float
        Purchase (including the fixed part), labour and disposal per pack.
    life_years : float
        Years a pack of this design can carry the site (used for the residual value).
    trip_cost : float or sequence of float
        Trip cost charged to this site at each replacement.
    residual_value : bool
        Credit the residual value of the last pack (True, HB 135 practice).

    Returns
    -------
    CostBreakdown
    """
    years = np.asarray(list(replacement_years), dtype=int)
    h = int(horizon_years)
    if years.size == 0:
        risk = failure_risk_cost(0, h, existing_failure_prob_by_age, failure_cost, rate)
        return CostBreakdown(failure_risk=risk)
    factors = spv(rate, years)
    trips = np.broadcast_to(np.asarray(trip_cost, dtype=float), years.shape)
    removed = np.full(years.shape, float(disposal_cost))
    removed[0] = 0.0 if existing_disposal_cost is None else float(existing_disposal_cost)
    served = np.diff(np.concatenate((years, [h])))
    risk = sum(
        failure_risk_cost(int(t), int(n), failure_prob_by_age, failure_cost, rate)
        for t, n in zip(years, served)
    )
    if existing_disposal_cost is not None:
        risk += failure_risk_cost(0, int(years[0]), existing_failure_prob_by_age, failure_cost, rate)
    residual = downtime_credit = 0.0
    if residual_value:
        left = float(residual_fraction(served[-1], life_years)) * float(spv(rate, h))
        residual = -pack_cost * left
        downtime_credit = -downtime_cost * left
    return CostBreakdown(
        packs=float(pack_cost * factors.sum()),
        labour=float(install_cost * factors.sum()),
        trips=float(np.sum(trips * factors)),
        disposal=float(np.sum(removed * factors)),
        residual=residual,
        failure_risk=float(risk),
        downtime=float(downtime_cost * factors.sum() + downtime_credit),
    )
