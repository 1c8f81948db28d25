"""How long each design can stay in service besides cell fade: component lives and ceiling.

For the lanes of a chunk (:mod:`planner.designs.evaluation`) this module gathers what the
pack's other components allow (:mod:`planner.pack.components`): the design-independent
lives of a chemistry at a site (seals and terminals by condensation class, management
electronics by the battery temperature, shelf life), the per-design ones (cell imbalance
below the balancing start, which adds to fade; standby drain over the longest spell at the
low-voltage disconnect), and the study's ``[service_life]`` ceiling. The lower of the
ceiling and the component lives applies; the plan says which decides.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.pack.components import (
    CEILING,
    IMBALANCE,
    STANDBY_DRAIN,
    SiteComponents,
    imbalance_loss_frac_per_year,
    service_limit,
    site_components,
    standby_drain_years,
)

#: Chemistries whose packs carry a battery-management system (electronics, balancing,
#: standby drain).
LITHIUM_ION = ("lfp", "nmc", "lto")
#: Margin above the low-voltage disconnect that still counts as sitting at it (fraction
#: of rated capacity): the hourly state of charge settles a little above the floor.
AT_FLOOR_MARGIN_FRAC = 0.02

#: Limiting causes that are not cell fade (a component, or the user's ceiling).
SERVICE_CAUSES = frozenset(("battery-management electronics", "seals and terminals",
                            IMBALANCE, STANDBY_DRAIN, "shelf life", CEILING))


@dataclass(frozen=True)
class LaneService:
    """What limits one lane besides cell fade.

    ``lives``: component lives in years (the site's, plus standby drain); ``years``,
    ``name``: the lowest of those and the ceiling, and what it is; ``imbalance_frac_per_year``:
    capacity lost to cell imbalance each year (0 when balancing runs).
    """

    lives: dict
    years: float
    name: str
    imbalance_frac_per_year: float
    condensation: str


class ChunkService:
    """Component lives of a chunk's lanes, computed once per (site, chemistry)."""

    def __init__(self, models, chunk, chems):
        self.models, self.chunk, self.chems = models, chunk, chems
        self._site: dict[tuple[int, str], SiteComponents] = {}
        for d in chunk:
            key = (d.site_index, d.chemistry)
            if key not in self._site:
                model = models[d.site_index]
                chem = chems[d.chemistry]
                self._site[key] = site_components(
                    chem.components, chem.rechargeable, d.chemistry in LITHIUM_ION,
                    model.temp_battery_c, model.year.temp_dew_c, model.enclosure.kind,
                    getattr(model.site, "condensation", "auto") or "auto")
        self.imbalance = np.array([self._imbalance(d) for d in chunk])

    def _imbalance(self, d) -> float:
        chem = self.chems[d.chemistry]
        if d.chemistry not in LITHIUM_ION or "balancing_start_v_per_cell" not in chem.components:
            return 0.0
        return imbalance_loss_frac_per_year(self.models[d.site_index].temp_battery_c,
                                            d.pack.series_cells, d.charge_voltage_v_per_cell,
                                            **chem.components)

    def site_bound(self, site_index: int, chemistry: str, ceiling: float | None) -> float:
        """Longest service any pack of the chemistry can have at the site (the
        design-independent component lives and the ceiling)."""
        bound = self._site[site_index, chemistry].bound_years
        return min(bound, ceiling) if ceiling is not None else bound

    def floor_thresholds(self, lanes, available) -> np.ndarray:
        """Per lane of ``lanes``: the state of charge up to which a day counts as spent at
        the low-voltage disconnect (the cold-derated floor plus a small margin)."""
        out = []
        for j in lanes:
            chem = self.chems[self.chunk[j].chemistry]
            out.append(1.0 - available[j] * chem.max_dod_frac + AT_FLOOR_MARGIN_FRAC)
        return np.clip(np.array(out, dtype=float), 0.0, 1.0)

    def lane(self, j: int, days_at_floor: float) -> LaneService:
        """The service limit of lane ``j`` given its longest spell at the disconnect."""
        d = self.chunk[j]
        chem = self.chems[d.chemistry]
        site = self._site[d.site_index, d.chemistry]
        lives = dict(site.lives)
        if d.chemistry in LITHIUM_ION and "standby_drain_frac_per_month" in chem.components:
            lives[STANDBY_DRAIN] = standby_drain_years(days_at_floor, 1.0 - chem.max_dod_frac,
                                                       **chem.components)
        years, name = service_limit(lives, d.service_life_years)
        return LaneService(lives=lives, years=years, name=name,
                           imbalance_frac_per_year=float(self.imbalance[j]),
                           condensation=site.condensation)
