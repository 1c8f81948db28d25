"""Aging: calendar and cycle capacity fade of battery packs.

Public interface (other stages depend on these names):

- :func:`age_lanes` -> :class:`FadeResult` (``soh_monthly``, ``calendar_loss_frac``,
  ``cycle_loss_frac``, ``efc_per_year``, ``state``)
- :func:`years_to_soh`
- :class:`AgingState` (carry a pack's aging from one run to the next)

Modules: :mod:`~planner.aging.calendar` (calendar laws),
:mod:`~planner.aging.large_format` (the laws fitted to large-format cells, held at their
end-of-test rate past the tests), :mod:`~planner.aging.cycle`
(cycle laws, Wöhler/Palmgren-Miner), :mod:`~planner.aging.rainflow` (vectorised ASTM
E1049 counting), :mod:`~planner.aging.superposition` (equivalent time, repeated year),
:mod:`~planner.aging.engine` (orchestration, one named step each),
:mod:`~planner.aging.results` (``FadeResult``, ``AgingState``),
:mod:`~planner.aging.sweep` (one pass over a chunk's hourly year),
:mod:`~planner.aging.kernels` (the same hot path as one-pass loops, compiled with numba
when it is installed).
"""

from planner.aging.engine import AgingState, FadeResult, age_lanes, years_to_soh

__all__ = ["AgingState", "FadeResult", "age_lanes", "years_to_soh"]
