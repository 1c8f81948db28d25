"""Battery-temperature summary of a typical year: what a planner reads per site.

The Arrhenius-effective temperature is the constant temperature that gives the same
mean reaction (aging) rate as the hourly series, for a rate law
k = A exp(-E_a / (R T)) (Arrhenius 1889, Z. Phys. Chem. 4, 226-248):

    T_eff = -E_a / (R ln( mean_h exp(-E_a / (R T_h)) ))

Because exp(-E_a/(R T)) is convex in T for T < E_a/(2R) (about 3,000 K at
50 kJ/mol), Jensen's inequality gives T_eff >= mean(T): hot hours age a battery more
than cold hours spare it.
"""

from __future__ import annotations

import dataclasses

import numpy as np

#: Molar gas constant, J/(mol K) (CODATA 2018, exact).
GAS_CONSTANT_J_MOL_K = 8.314462618
KELVIN = 273.15
_DAYS_IN_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_OF_HOUR = np.repeat(np.arange(12), _DAYS_IN_MONTH * 24)


def effective_temperature_c(temp_c: np.ndarray, activation_energy_j_mol: float = 50e3) -> np.ndarray:
    """Arrhenius-effective temperature of a series, degC (over axis 0).

    Parameters
    ----------
    temp_c : (hours,) or (hours, n) array
        Temperatures, degC.
    activation_energy_j_mol : float
        Activation energy E_a, J/mol (default 50 kJ/mol).

    Returns
    -------
    float or (n,) array, degC. Computed with a log-sum-exp shift, so extreme
    activation energies do not underflow.
    """
    temp_k = np.asarray(temp_c, dtype=float) + KELVIN
    x = -activation_energy_j_mol / (GAS_CONSTANT_J_MOL_K * temp_k)
    x_max = x.max(axis=0)
    log_mean = x_max + np.log(np.mean(np.exp(x - x_max), axis=0))
    return -activation_energy_j_mol / (GAS_CONSTANT_J_MOL_K * log_mean) - KELVIN


def monthly_means_c(temp_c: np.ndarray) -> np.ndarray:
    """Monthly means of an 8,760-hour series (non-leap year), degC, shape (12,) or (12, n)."""
    temp = np.asarray(temp_c, dtype=float)
    counts = np.bincount(_MONTH_OF_HOUR, minlength=12).astype(float)
    if temp.ndim == 1:
        return np.bincount(_MONTH_OF_HOUR, weights=temp, minlength=12) / counts
    starts = np.r_[0, np.cumsum(_DAYS_IN_MONTH * 24)[:-1]]
    return np.add.reduceat(temp, starts, axis=0) / counts[:, None]


@dataclasses.dataclass
class TemperatureSummary:
    """Annual statistics of air and battery temperature at one site (degC, hours)."""

    air_mean_c: float
    air_p1_c: float
    air_p99_c: float
    battery_mean_c: float
    battery_p1_c: float
    battery_p99_c: float
    battery_min_c: float
    battery_max_c: float
    hours_above_35c: int
    hours_above_45c: int
    hours_above_55c: int
    hours_below_0c: int
    hours_below_minus20c: int
    effective_temp_c: float
    activation_energy_j_mol: float
    coldest_month: int
    hottest_month: int
    air_monthly_mean_c: list
    battery_monthly_mean_c: list

    def to_dict(self) -> dict:
        """Plain JSON-ready dict (the fixed keys of ``planner climate --json``)."""
        out = dataclasses.asdict(self)
        for key, value in out.items():
            if isinstance(value, float):
                out[key] = round(value, 3)
            elif isinstance(value, list):
                out[key] = [round(float(v), 3) for v in value]
        return out


def summarize_temperatures(temp_air_c: np.ndarray, temp_battery_c: np.ndarray, *,
                           activation_energy_j_mol: float = 50e3) -> TemperatureSummary:
    """Summarise an hourly year of air and battery temperature.

    Percentiles are of the 8,760 hourly values (numpy's linear interpolation);
    "hours above 45 degC" counts hours with a mean strictly above 45 degC, "below 0"
    strictly below 0. Coldest and hottest months (1-12) are by battery monthly mean.
    """
    air = np.asarray(temp_air_c, dtype=float)
    bat = np.asarray(temp_battery_c, dtype=float)
    air_monthly = monthly_means_c(air)
    bat_monthly = monthly_means_c(bat)
    p_air = np.percentile(air, [1, 99])
    p_bat = np.percentile(bat, [1, 99])
    return TemperatureSummary(
        air_mean_c=float(air.mean()), air_p1_c=float(p_air[0]), air_p99_c=float(p_air[1]),
        battery_mean_c=float(bat.mean()), battery_p1_c=float(p_bat[0]),
        battery_p99_c=float(p_bat[1]), battery_min_c=float(bat.min()),
        battery_max_c=float(bat.max()),
        hours_above_35c=int(np.sum(bat > 35.0)), hours_above_45c=int(np.sum(bat > 45.0)),
        hours_above_55c=int(np.sum(bat > 55.0)), hours_below_0c=int(np.sum(bat < 0.0)),
        hours_below_minus20c=int(np.sum(bat < -20.0)),
        effective_temp_c=float(effective_temperature_c(bat, activation_energy_j_mol)),
        activation_energy_j_mol=float(activation_energy_j_mol),
        coldest_month=int(np.argmin(bat_monthly)) + 1,
        hottest_month=int(np.argmax(bat_monthly)) + 1,
        air_monthly_mean_c=[float(v) for v in air_monthly],
        battery_monthly_mean_c=[float(v) for v in bat_monthly])
