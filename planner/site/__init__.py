"""One site's hourly world: climate, battery temperature, load and charging source,
and the thermal measures that change it.

Public entry: :func:`model_sites` -> list of :class:`SiteModel`;
:func:`evaluate_with_measures` (a site's priced thermal-measure variants).

Modules: :mod:`~planner.site.model` (the hourly inputs every candidate pack sees),
:mod:`~planner.site.thermal_measures` (insulated box, heater, sun shield, vault: priced
variants of a site's model).
"""

from planner.site.model import SiteModel, model_sites
from planner.site.thermal_measures import evaluate_with_measures

__all__ = ["SiteModel", "evaluate_with_measures", "model_sites"]
