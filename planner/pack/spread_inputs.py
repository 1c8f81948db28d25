"""Checks of the inputs of the pack life spread (:func:`planner.pack.spread.life_distribution`).

Every bad value is a one-line :class:`planner.errors.InputError` naming the argument,
what was found and what was expected.
"""

from __future__ import annotations

import math

import numpy as np

from planner.errors import InputError
from planner.pack.structure import BALANCING_KINDS, _positive, _whole, inner_temperature_offsets_k


def _curves(name, value, n_months_plus_1=None):
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found a non-numeric array, expected loss fractions",
                         source="life") from None
    if a.ndim == 1:
        a = a[:, None]
    if a.ndim != 2 or a.shape[0] < 13:
        raise InputError(
            f"{name}: found shape {np.shape(value)}, expected (n_months+1,) or (n_months+1, n_sites) "
            "with at least 12 months", source="life")
    if n_months_plus_1 is not None and a.shape[0] != n_months_plus_1:
        raise InputError(f"{name}: found {a.shape[0]} months+1, expected {n_months_plus_1} like "
                         "the first curve", source="life")
    if not np.all(np.isfinite(a)):
        raise InputError(f"{name}: found non-finite values, expected finite loss fractions", source="life")
    return a


def _fraction(name, value, upper=None):
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: found {value!r}, expected a number >= 0", source="life") from None
    if not math.isfinite(x) or x < 0 or (upper is not None and x > upper):
        lim = f" and <= {upper}" if upper is not None else ""
        raise InputError(f"{name}: found {value!r}, expected a number >= 0{lim}", source="life")
    return x


def check_options(**o):
    """Validated scalar options of :func:`life_distribution` as the internal dict."""
    if o["balancing"] not in BALANCING_KINDS:
        raise InputError(f"balancing: found {o['balancing']!r}, expected one of "
                         f"{', '.join(BALANCING_KINDS)}", source="life")
    counts = np.atleast_1d(np.asarray(o["parallel_strings"], dtype=object)).reshape(-1)
    if counts.size == 0:
        raise InputError("parallel_strings: found an empty list, expected a whole number >= 1",
                         source="life")
    for c in counts:
        _whole("parallel_strings", c, source="life")
    n_s = _whole("series_cells", o["series_cells"], source="life")
    p = dict(
        balancing=o["balancing"], n_s=n_s,
        draws=_whole("draws", o["draws"], source="life"),
        seed=_whole("seed", o["seed"], minimum=0, source="life"),
        step=_whole("step_months", o["step_months"], source="life"),
        sig_c=_fraction("cell_spread_frac", o["cell_spread_frac"], upper=0.3),
        sig_r=_fraction("resistance_spread_frac", o["resistance_spread_frac"], upper=2.0),
        sig_k=_fraction("rate_spread_frac", o["rate_spread_frac"], upper=2.0),
        d_in=_fraction("inner_delta_k", o["inner_delta_k"], upper=40.0),
        # checked against each site's string count in string_counts
        imb=_fraction("parallel_imbalance_frac", o["parallel_imbalance_frac"]),
        theta=_fraction("self_heating_k", o["self_heating_k"], upper=40.0),
        g_res=_fraction("resistance_growth_per_loss", o["resistance_growth_per_loss"]),
        kappa=_fraction("depth_stress_exponent", o["depth_stress_exponent"], upper=5.0),
        sig_u0=_fraction("soc_offset_spread_frac", o["soc_offset_spread_frac"], upper=0.5),
        sig_du=_fraction("soc_drift_spread_frac_per_year", o["soc_drift_spread_frac_per_year"], upper=0.5),
        eta=_fraction("active_recovery_frac", o["active_recovery_frac"], upper=1.0),
        z_cal=_positive("calendar_time_exponent", o["calendar_time_exponent"], source="life"),
        z_cyc=_positive("cycle_time_exponent", o["cycle_time_exponent"], source="life"),
    )
    p["grad_k"] = inner_temperature_offsets_k(n_s, p["d_in"])
    return p


def string_counts(parallel_strings, n_sites, imbalance):
    """Strings in parallel per site (n_sites,) int; the imbalance applies where n > 1."""
    n_p = np.asarray(parallel_strings, dtype=float).reshape(-1)
    if n_p.size not in (1, n_sites):
        raise InputError(f"parallel_strings: found {n_p.size} counts, expected one or one per "
                         f"site ({n_sites})", source="life")
    n_p = np.broadcast_to(n_p, (n_sites,)).astype(np.int64)
    if np.any((n_p > 1) & (imbalance > n_p - 1.0)):
        raise InputError(f"parallel_imbalance_frac: found {imbalance!r}, expected a number >= 0 "
                         "and <= parallel_strings - 1", source="life")
    return n_p


def curve_pairs(calendar_loss_frac, cycle_loss_frac, model_sets):
    """Checked (calendar, cycle) curve pairs, each (M+1, S or 1) float."""
    cal = _curves("calendar_loss_frac", calendar_loss_frac)
    cyc = _curves("cycle_loss_frac", cycle_loss_frac, cal.shape[0])
    if model_sets is None:
        return [(cal, cyc)]
    try:
        model_list = [(m.calendar_loss_frac, m.cycle_loss_frac) if hasattr(m, "cycle_loss_frac")
                      else m for m in model_sets]
        pairs = [(_curves(f"model_sets[{j}] calendar", a, cal.shape[0]),
                  _curves(f"model_sets[{j}] cycle", b, cal.shape[0]))
                 for j, (a, b) in enumerate(model_list)]
    except (TypeError, ValueError):
        raise InputError("model_sets: expected a list of (calendar, cycle) curve pairs",
                         source="life") from None
    if not pairs:
        raise InputError("model_sets: found an empty list, expected at least one pair", source="life")
    return pairs


def site_inputs(pairs, eol_soh_frac, reference_temp_c, activation_energy_j_mol,
                cycle_activation_energy_j_mol, n_string_counts=1):
    """Per-site arrays (n_sites,) of threshold, reference temperature and Ea."""
    def flat(value, name):
        try:
            return np.asarray(value, dtype=float).reshape(-1)
        except (TypeError, ValueError):
            raise InputError(f"{name}: found {value!r}, expected a number or one per site",
                             source="life") from None

    eol = flat(eol_soh_frac, "eol_soh_frac")
    t_ref = flat(reference_temp_c, "reference_temp_c")
    ea = flat(activation_energy_j_mol, "activation_energy_j_mol")
    same_ea = cycle_activation_energy_j_mol is None
    ea_cyc = ea if same_ea else flat(cycle_activation_energy_j_mol, "cycle_activation_energy_j_mol")
    widths = {a.shape[1] for pair in pairs for a in pair} | {eol.size, t_ref.size, ea.size, ea_cyc.size,
                                                             n_string_counts}
    widths.discard(1)
    if len(widths) > 1:
        raise InputError(f"site count: found inconsistent site counts {sorted(widths)} among curves, "
                         "eol_soh_frac, reference_temp_c, activation energies and parallel_strings, expected one",
                         source="life")
    if not np.all((eol > 0) & (eol < 1.5)):
        raise InputError(f"eol_soh_frac: found {eol_soh_frac!r}, expected fractions in (0, 1.5)",
                         source="life")
    if not np.all((t_ref >= -80) & (t_ref <= 120)):
        raise InputError(f"reference_temp_c: found {reference_temp_c!r}, expected -80..120 degC",
                         source="life")
    if not (np.all(ea >= 0) and np.all(ea_cyc >= 0)):
        raise InputError(f"activation_energy_j_mol: found {activation_energy_j_mol!r} (cycle "
                         f"{cycle_activation_energy_j_mol!r}), expected >= 0 J/mol", source="life")
    n = widths.pop() if widths else 1
    ea_b = np.broadcast_to(ea, (n,))
    return dict(n_sites=n, eol=np.broadcast_to(eol, (n,)), t_ref=np.broadcast_to(t_ref, (n,)),
                ea_cal=ea_b, ea_cyc=ea_b if same_ea else np.broadcast_to(ea_cyc, (n,)),
                same_ea=same_ea)
