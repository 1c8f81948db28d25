"""Can the charging source cover the load at all? The site's energy balance check.

A battery only moves energy in time: it cannot make up for a charging source that yields
less energy than the load draws over the year. For PV the binding period is the darkest
month; the stand-alone PV design rule sizes the array on the worst month of the year
(Sandia National Laboratories 1995, "Stand-Alone Photovoltaic Systems: A Handbook of
Recommended Design Practices", SAND87-7023, worst-month sizing worksheet; from memory).
A pack big enough to bridge a whole dark month is possible but costly, so the plan says
so plainly instead of only pricing the days off air.

Sites with ``charging = "none"`` live on primary cells by design and are not checked.
Energies are the sums of hourly mean powers (W x 1 h = Wh) of the typical year.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The limiting cause a site gets when its charging source falls short.
SHORTFALL_CAUSE = "charging source too small"

MONTH_NAMES = ("January", "February", "March", "April", "May", "June", "July", "August",
               "September", "October", "November", "December")
#: Days per month of the 365-day typical year (leap day dropped).
_MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_START_H = np.concatenate(([0], np.cumsum(_MONTH_DAYS)[:-1])) * 24


@dataclass(frozen=True)
class ChargingShortfall:
    """The period in which the charging source yields less than the load draws."""

    period: str          # "the year" or a month name
    charge_kwh: float    # energy the charging source offers at the battery bus
    load_kwh: float      # energy the load (heater and HVAC included) draws

    def cause(self) -> str:
        """Short limiting-cause text with the two numbers (Sites sheet, JSON)."""
        return (f"{SHORTFALL_CAUSE} ({self.period}: {self.charge_kwh:.1f} kWh offered, "
                f"{self.load_kwh:.1f} kWh drawn)")

    def warning(self) -> str:
        """One-line warning for the console, the Cautions sheet and the JSON."""
        return (f"{SHORTFALL_CAUSE}: over {self.period} it offers {self.charge_kwh:.1f} kWh "
                f"while the load draws {self.load_kwh:.1f} kWh; no pack size fixes that: "
                "enlarge the charging source or reduce the load")


def monthly_energy_kwh(power_w: np.ndarray) -> np.ndarray:
    """Energy per calendar month (kWh, shape (12,)) of an 8,760-hour power series (W)."""
    return np.add.reduceat(np.asarray(power_w, dtype=float), _MONTH_START_H) / 1000.0


def charging_shortfall(load_w, charge_w, *, charging: str) -> ChargingShortfall | None:
    """The first period in which the charging source yields less than the load.

    Parameters
    ----------
    load_w, charge_w : array_like, shape (8760,)
        Hourly load the battery carries and power the charging source offers at the
        battery bus (W).
    charging : {"pv", "mains", "none"}
        Charging source; "none" sites are not checked.

    Returns
    -------
    ChargingShortfall or None
        The year when the annual yield falls short, else (PV only) the month with the
        lowest ratio of yield to load when that ratio is below 1; None when the source
        covers the load.
    """
    if charging == "none":
        return None
    charge = monthly_energy_kwh(charge_w)
    load = monthly_energy_kwh(load_w)
    if charge.sum() < load.sum():
        return ChargingShortfall("the year", float(charge.sum()), float(load.sum()))
    if charging != "pv":
        return None
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(load > 0, charge / np.where(load > 0, load, 1.0), np.inf)
    worst = int(np.argmin(ratio))
    if ratio[worst] < 1.0:
        return ChargingShortfall(MONTH_NAMES[worst], float(charge[worst]), float(load[worst]))
    return None
