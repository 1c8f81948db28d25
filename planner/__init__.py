"""Remote battery planner: chemistry, sizing, charge voltage and replacement visits
for unattended remote sites, at the lowest lifetime cost."""

__version__ = "0.1.0"

#: Hours in a typical year: 365 days, the leap day dropped (index 0 = 1 January 00:00-01:00
#: local standard time).
HOURS_PER_YEAR = 8760
