"""Results of the hourly SOC simulation and how the hour loops' accumulators become them.

:class:`SocResult` holds the per-lane summaries of one simulated period, :class:`SocChunk`
one streamed chunk of lanes (:func:`planner.energy.soc.iter_soc_chunks`). Both hour
loops (:mod:`planner.energy.soc_numpy`, :mod:`planner.energy.soc_fused`) end a chunk with
:func:`finish_chunk`, so their summaries are computed by the same code.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields

import numpy as np

from planner import HOURS_PER_YEAR


@dataclass(frozen=True)
class SocResult:
    """Per-lane summary of one simulated period (a typical year unless stated).

    All arrays have shape ``(n_lanes,)`` unless stated. Energies are totals over the
    simulated hours (Wh); for an 8,760-hour typical year these are per-year figures.

    Attributes
    ----------
    equivalent_full_cycles_per_year : energy delivered by the battery / capacity_wh,
        scaled to 8,760 h.
    mean_soc_frac, min_soc_frac, final_soc_frac : state of charge (fraction of rated
        capacity) at the end of each hour: mean, minimum, last. Mean and minimum are
        taken from the float32 series (single precision, about 1e-7).
    max_c_rate : highest hourly-mean charge or discharge C-rate (1/h = power / capacity_wh).
        Load bursts are not in it; the caller combines the burst peak separately.
    unserved_wh : load energy the pack could not supply (Wh).
    unserved_hours : hours with any unserved load.
    longest_low_soc_days : longest run of consecutive days on which the SOC never rose
        to the low-SOC threshold (days).
    energy_in_wh : energy accepted at the battery terminals while charging (Wh).
    energy_out_wh : energy delivered at the battery terminals while discharging (Wh).
    losses_wh : charge-efficiency, discharge-efficiency and self-discharge losses (Wh).
    self_discharge_wh : the self-discharge part of ``losses_wh`` (Wh).
    delta_stored_wh : stored energy at the end minus at the start (Wh).
    curtailed_wh : surplus charging energy the battery did not accept (Wh).
    charge_blocked_hours : hours with surplus power while charging was blocked, by cold
        or heat (the sum of the next two).
    charge_blocked_cold_hours : of those, hours below the minimum charge temperature.
    charge_blocked_hot_hours : of those, hours above the maximum charge temperature.
    unserved_wh_by_month : unserved load per calendar month, shape ``(n_lanes, 12)`` (Wh);
        for a run that is not 8,760 hours long, everything is put in column 0.
    series_lanes : lane indices whose hourly series are kept, shape ``(k,)``.
    soc_frac_series : hourly SOC at the end of each hour, shape ``(n_hours, k)``, float32.
    current_c_rate_series : hourly mean battery current as C-rate, shape ``(n_hours, k)``,
        float32, positive while discharging and negative while charging.
    n_hours : number of simulated hours.
    """

    equivalent_full_cycles_per_year: np.ndarray
    mean_soc_frac: np.ndarray
    min_soc_frac: np.ndarray
    final_soc_frac: np.ndarray
    max_c_rate: np.ndarray
    unserved_wh: np.ndarray
    unserved_hours: np.ndarray
    longest_low_soc_days: np.ndarray
    energy_in_wh: np.ndarray
    energy_out_wh: np.ndarray
    losses_wh: np.ndarray
    self_discharge_wh: np.ndarray
    delta_stored_wh: np.ndarray
    curtailed_wh: np.ndarray
    charge_blocked_hours: np.ndarray
    unserved_wh_by_month: np.ndarray
    charge_blocked_cold_hours: np.ndarray
    charge_blocked_hot_hours: np.ndarray
    series_lanes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.intp))
    soc_frac_series: np.ndarray | None = None
    current_c_rate_series: np.ndarray | None = None
    n_hours: int = HOURS_PER_YEAR


#: The per-lane summary fields of :class:`SocResult` (not the series).
SUMMARY_FIELDS = tuple(f.name for f in fields(SocResult)
                       if f.name not in ("series_lanes", "soc_frac_series",
                                         "current_c_rate_series", "n_hours"))


@dataclass(frozen=True)
class SocChunk:
    """One chunk of consecutive lanes ``start:stop`` streamed by
    :func:`planner.energy.soc.iter_soc_chunks`.

    ``soc_frac`` and ``current_c_rate`` are ``(n_hours, stop - start)`` float32 arrays
    (``None`` when ``series=False``); ``summary`` holds the per-lane summaries of the
    chunk (its own series fields are empty).
    """

    start: int
    stop: int
    soc_frac: np.ndarray | None
    current_c_rate: np.ndarray | None
    summary: SocResult


def monthly_unserved(snap_dr, snap_dfc, inv, eta_d, n_uns) -> np.ndarray:
    """Unserved Wh per month from month-end snapshots of the running sums, (k, 12)."""
    k = len(eta_d)
    out = np.zeros((k, 12))
    if not snap_dr:
        return out
    dr = np.stack(snap_dr, axis=1) * eta_d[:, None]          # delivered, cumulative (Wh)
    dfc = np.stack(snap_dfc, axis=1)
    dfc = dfc if inv is None else dfc[inv]
    cum = np.maximum(dfc - dr, 0.0)
    cum = np.maximum.accumulate(cum, axis=1)                 # rounding cannot un-serve
    monthly = np.diff(cum, axis=1, prepend=0.0)
    monthly[n_uns == 0] = 0.0
    # snap tiny rounding residue to zero so "no unserved load" reads as exactly 0
    monthly[monthly < 1e-9 * np.maximum(dfc[:, -1:], 1.0)] = 0.0
    out[:, :monthly.shape[1]] = monthly
    return out


def finish_chunk(start, stop, keep, n_hours, cap, eta_c, eta_d, e, e_start, sum_acc,
                 sum_dr, sum_sd, n_uns, blocked_cold, blocked_hot, sum_surplus_wh, sum_deficit_wh,
                 unserved_by_month, mean_soc, min_soc, max_c_rate, longest_days,
                 soc_series, c_rate_series) -> SocChunk:
    """Turn the chunk's accumulators into per-lane summaries and the kept series."""
    inv_c = 1.0 / cap
    energy_in = sum_acc / eta_c
    energy_out = sum_dr * eta_d
    losses = sum_sd + sum_acc * (1.0 / eta_c - 1.0) + sum_dr * (1.0 - eta_d)
    # unserved = deficit offered - energy delivered; exactly 0 when no hour fell short
    unserved = np.where(n_uns > 0, np.maximum(sum_deficit_wh - energy_out, 0.0), 0.0)
    curtailed = np.maximum(sum_surplus_wh - energy_in, 0.0)
    summary = SocResult(
        equivalent_full_cycles_per_year=energy_out * inv_c * (HOURS_PER_YEAR / n_hours),
        mean_soc_frac=mean_soc,
        min_soc_frac=min_soc,
        final_soc_frac=e * inv_c,
        max_c_rate=max_c_rate,
        unserved_wh=unserved,
        unserved_hours=n_uns,
        longest_low_soc_days=longest_days,
        energy_in_wh=energy_in,
        energy_out_wh=energy_out,
        losses_wh=losses,
        self_discharge_wh=sum_sd,
        delta_stored_wh=e - e_start,
        curtailed_wh=curtailed,
        charge_blocked_hours=blocked_cold + blocked_hot,
        unserved_wh_by_month=unserved_by_month,
        charge_blocked_cold_hours=blocked_cold,
        charge_blocked_hot_hours=blocked_hot,
        n_hours=n_hours,
    )
    if keep is None:
        return SocChunk(start, stop, None, None, summary)
    if isinstance(keep, slice) or soc_series.shape[1] == len(keep):
        return SocChunk(start, stop, soc_series, c_rate_series, summary)
    return SocChunk(start, stop, soc_series[:, keep], c_rate_series[:, keep], summary)
