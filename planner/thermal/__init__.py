"""Battery temperature inside its enclosure, hour by hour.

Public entry: :func:`battery_temperature` (one site) and
:func:`battery_temperature_fleet` (many sites, arrays ``(8760, n_sites)``);
:func:`get_enclosure` -> :class:`Enclosure` (the enclosure kinds).

Modules: :mod:`~planner.thermal.battery` (sun, ground and internal heat drive the
enclosure), :mod:`~planner.thermal.enclosures` (the kinds and their parameters),
:mod:`~planner.thermal.lumped` (the exact hourly first-order solver, compiled in
:mod:`~planner.thermal._kernels`), :mod:`~planner.thermal.ground` (Kusuda-Achenbach
ground temperature).
"""

from planner.thermal.battery import battery_temperature, battery_temperature_fleet
from planner.thermal.enclosures import Enclosure, get_enclosure

__all__ = ["Enclosure", "battery_temperature", "battery_temperature_fleet", "get_enclosure"]
