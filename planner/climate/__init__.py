"""Site climate: one hourly typical year per site.

A :class:`TypicalYear` holds 8,760 hour averages of air temperature, irradiance and
wind for a fixed non-leap year, labelled at the *start* of each hour in local
standard time (index 0 = 1 January 00:00-01:00). Every reader in
:mod:`planner.climate.readers` and :mod:`planner.climate.csv_reader` (normalised by
:mod:`planner.climate.normalise`) and the archetype generator in
:mod:`planner.climate.archetypes` produce this one shape, so later stages never see
file formats, hour-ending labels, tenths of a degree or degrees Fahrenheit.

Use :func:`load_climate` with a bundled name (see :func:`list_bundled`) or a path to
an EPW, TMY3, TMY2 or CSV file.
"""

from planner import HOURS_PER_YEAR
from planner.climate.sources import list_bundled, load_climate
from planner.climate.typical_year import REFERENCE_YEAR, ClimateWarning, TypicalYear, hour_starts

__all__ = ["TypicalYear", "ClimateWarning", "load_climate", "list_bundled", "hour_starts",
           "HOURS_PER_YEAR", "REFERENCE_YEAR"]
