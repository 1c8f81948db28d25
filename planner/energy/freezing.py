"""Lead-acid electrolyte freezing point versus state of charge.

A discharged lead-acid cell has dilute electrolyte that freezes a few degrees below
0 degC and can crack the case; a full one survives about -65 degC. Two tables of
US Army Technical Manual TM 5-1185 (battery maintenance) are chained:

- Table II: specific gravity (corrected to 80 degF) by state of charge:
  1.280 fully charged, 1.250 75 %, 1.220 50 %, 1.190 25 %, 1.130 discharged;
- Table III: freezing point by specific gravity: 1.280 -90 degF, 1.250 -62 degF,
  1.200 -16 degF, 1.150 +5 degF, 1.100 +19 degF.

Both are interpolated linearly. The tables are for a flooded cell whose full-charge
gravity is 1.280; VRLA/AGM cells (1.29-1.30 full) freeze a little lower, so these
freezing points are on the safe side for them (common practice).
"""

from __future__ import annotations

import numpy as np

from planner.errors import InputError

#: TM 5-1185 Table II: (state of charge fraction, specific gravity at 80 degF). Read.
TM5_1185_SOC_TO_SG = ((0.0, 1.130), (0.25, 1.190), (0.50, 1.220), (0.75, 1.250),
                      (1.0, 1.280))

#: TM 5-1185 Table III: (specific gravity, freezing point degF). Read.
TM5_1185_SG_TO_FREEZE_F = ((1.100, 19.0), (1.150, 5.0), (1.200, -16.0), (1.250, -62.0),
                           (1.280, -90.0))


def _soc_array(soc_frac, key: str = "soc_frac") -> np.ndarray:
    s = np.asarray(soc_frac, dtype=float)
    if np.any(~np.isfinite(s)) or np.any(s < -1e-9) or np.any(s > 1 + 1e-9):
        raise InputError(f"{key}: found values outside 0-1, expected a state of charge "
                         "fraction")
    return np.clip(s, 0.0, 1.0)


def lead_acid_freezing_point_c(soc_frac):
    """Freezing point of lead-acid electrolyte (degC) at a state of charge.

    ``T_f = F_III(G_II(SOC))`` with the US Army TM 5-1185 Table II (gravity by state of
    charge) and Table III (freezing point by gravity), each interpolated linearly, and
    degF converted to degC.

    Parameters
    ----------
    soc_frac : float or array
        State of charge (0-1).

    Returns
    -------
    float or numpy.ndarray
        Freezing point (degC).
    """
    s = _soc_array(soc_frac)
    soc_pts, sg_pts = np.array(TM5_1185_SOC_TO_SG).T
    sg_tab, f_tab = np.array(TM5_1185_SG_TO_FREEZE_F).T
    sg = np.interp(s, soc_pts, sg_pts)
    freeze_c = (np.interp(sg, sg_tab, f_tab) - 32.0) * 5.0 / 9.0
    return float(freeze_c) if freeze_c.ndim == 0 else freeze_c


def freezing_risk_hours(temp_battery_c, soc_frac, margin_k: float = 5.0):
    """Hours in which the battery is within ``margin_k`` of freezing at its SOC.

    Counts hours with ``T_battery < T_freeze(SOC) + margin_k``.

    Parameters
    ----------
    temp_battery_c : array, (n_hours,) or (n_hours, n)
        Battery temperature (degC).
    soc_frac : array, broadcastable to ``temp_battery_c``
        State of charge (0-1), e.g. a lane's hourly SOC series.
    margin_k : float
        Safety margin (K), >= 0; 5 K is common practice.

    Returns
    -------
    int or numpy.ndarray
        Number of hours at risk (per lane for 2-D input).
    """
    t = np.asarray(temp_battery_c, dtype=float)
    if np.any(~np.isfinite(t)):
        raise InputError("temp_battery_c: found non-finite values, expected degC")
    if not (np.isfinite(margin_k) and margin_k >= 0):
        raise InputError(f"margin_k: found {margin_k!r}, expected >= 0 K")
    freeze_c = lead_acid_freezing_point_c(soc_frac)
    try:
        at_risk = t < np.asarray(freeze_c) + margin_k
    except ValueError:
        raise InputError(f"soc_frac: found shape {np.shape(soc_frac)}, expected a shape "
                         f"broadcastable to {t.shape}") from None
    count = at_risk.sum(axis=0)
    return int(count) if np.ndim(count) == 0 else count
