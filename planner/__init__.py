"""Remote battery planner: chemistry, sizing, charge voltage and replacement visits
for unattended remote sites, at the lowest lifetime cost."""

__version__ = "0.1.0"
