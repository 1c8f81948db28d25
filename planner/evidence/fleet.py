"""The fleet's field records through the model: a posterior per pack in service.

:func:`update_fleet` reads every site's records against its pack's predicted fade,
fits the fleet model of each chemistry that has records
(:mod:`planner.evidence.hierarchy`) and gives each pack in service of that chemistry
its posterior: factor percentiles, the remaining-life belief the optimizer prices
(:meth:`SiteEvidence.existing_life`), the end-of-life year percentiles and a
state-of-health band for the report. Packs of a chemistry without any record keep the
plan's laboratory prediction unchanged.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.designs.candidates import Outcome, SiteDesigns
from planner.evidence.hierarchy import (
    D_GRID,
    G_GRID,
    HyperPosterior,
    fit_fleet,
    prior_hyper,
    site_posteriors,
)
from planner.evidence.lives import (
    LifeBelief,
    PackCurve,
    life_belief,
    soh_band,
    soh_curve,
    systematic_draws,
)
from planner.evidence.observations import SiteRecords, site_records

#: Equally weighted belief draws kept per pack (deterministic systematic resampling of
#: the grid posterior): the plan's lives and bands are read from them.
N_DRAWS = 1000
#: State-of-health band for the report, every half year from installation.
BAND_STEP_YEARS = 0.5
BAND_YEARS_AHEAD = 15


@dataclass
class SiteEvidence:
    """One pack in service under the fleet model."""

    site_id: str
    chemistry: str
    installed_year: int
    records: SiteRecords
    curve: PackCurve
    rho: float
    draw_k: np.ndarray  # equally weighted posterior draws as grid indices (g, δ): small
    draw_j: np.ndarray
    lab_remaining_years: float
    factor_p10: float = math.nan
    factor_p50: float = math.nan
    factor_p90: float = math.nan
    initial_capacity_p50_frac: float = math.nan
    belief: LifeBelief | None = None

    @property
    def draws_g(self) -> np.ndarray:
        return G_GRID[self.draw_k]

    @property
    def draws_delta(self) -> np.ndarray:
        return D_GRID[self.draw_j]

    @property
    def has_records(self) -> bool:
        return self.records.observations.n > 0

    def existing_life(self, outcome: Outcome | None = None) -> LifeBelief:
        """Remaining-life belief of the pack: on its own curve, or on the curve of
        ``outcome`` (the same pack under another climate case)."""
        if outcome is None or outcome.install_calendar_loss_frac is None:
            return self.belief
        curve = curve_of(outcome)
        return life_belief(curve, self.draws_g, self.draws_delta, np.ones(self.draws_g.size), self.rho)

    def soh_from_now(self, months: int) -> np.ndarray:
        """Monthly state of health from the study start at the posterior median factor and
        initial capacity (the plan's curve of the pack in service)."""
        full = soh_curve(self.curve, float(np.median(self.draws_g)), float(np.median(self.draws_delta)),
                         self.rho)
        start = int(round(self.curve.age_years * 12))
        return full[start:start + months]

    def band(self, horizon_years: int) -> dict:
        """State-of-health P10/P50/P90 from installation to :data:`BAND_YEARS_AHEAD` years
        from now (at most the end of the study), for the report's chart."""
        end = self.curve.age_years + min(horizon_years, BAND_YEARS_AHEAD)
        ages = np.arange(0.0, end + 1e-9, BAND_STEP_YEARS)
        months = np.round(ages * 12).astype(int)
        # every 4th draw (still a systematic sample) is plenty for three percentiles
        q = soh_band(self.curve, self.draws_g[::4], self.draws_delta[::4], self.rho, months=months)
        predicted = soh_curve(self.curve, 0.0, 0.0, 0.0)[np.minimum(months, self.curve.calendar_loss_frac.size - 1)]
        return {"age_years": [round(float(a), 4) for a in ages],
                "soh_p10": _rounded(q[0]), "soh_p50": _rounded(q[1]), "soh_p90": _rounded(q[2]),
                "soh_predicted": _rounded(predicted)}


@dataclass
class FleetEvidence:
    """Posteriors of the packs in service, fleet fits by chemistry, skipped records, and
    the records of packs whose chemistry has no usable record (lives unchanged)."""

    sites: dict[str, SiteEvidence] = field(default_factory=dict)
    chemistries: dict[str, HyperPosterior] = field(default_factory=dict)
    records_only: dict[str, SiteRecords] = field(default_factory=dict)
    skipped: list[str] = field(default_factory=list)
    tests_file: str | None = None
    log_file: str | None = None

    def site(self, site_id: str) -> SiteEvidence | None:
        return self.sites.get(site_id)

    def hyper(self, chemistry: str) -> HyperPosterior:
        """The chemistry's fleet posterior, or the priors where it has no record."""
        return self.chemistries.get(chemistry) or prior_hyper()


def curve_of(outcome: Outcome) -> PackCurve:
    """The laws' prediction for the pack in service of ``outcome``.

    Its end-of-life state of health is the outcome's (the site's requirement, the
    worn-out floor, the knee floor); it rises with a growing load (the requirement's share
    of rated capacity times ``(1 + g)^(t - lag)``, :mod:`planner.designs.load_growth`) and
    with the capacity cell imbalance strands each year (:mod:`planner.pack.components`),
    neither of which a fade factor scales. The service limit is the outcome's
    (components and the study's ceiling), counted from installation.
    """
    d = outcome.design
    cal = np.asarray(outcome.install_calendar_loss_frac, dtype=float)
    age = float(d.existing_age_years or 0.0)
    years = np.arange(cal.size) / 12.0
    threshold = np.full(cal.size, float(outcome.eol_soh_frac))
    if outcome.requirement_growth is not None:
        share, growth, lag = outcome.requirement_growth
        threshold = np.maximum(threshold, share * np.maximum(1.0, (1.0 + growth) ** (years - age - lag)))
    threshold = threshold + float(outcome.imbalance_frac_per_year) * years
    rising = outcome.requirement_growth is not None or outcome.imbalance_frac_per_year > 0.0
    return PackCurve(
        calendar_loss_frac=cal, cycle_loss_frac=np.asarray(outcome.install_cycle_loss_frac, dtype=float),
        age_years=age, eol_soh_frac=float(outcome.eol_soh_frac),
        service_limit_years=float(outcome.service_limit_years) + age,
        eol_soh_by_month=threshold if rising else None)


def packs_in_service(study, designs: list[SiteDesigns]) -> list[tuple[int, Outcome]]:
    """(site index, outcome) of every pack in service with its predicted curve."""
    return [(i, d.existing) for i, d in enumerate(designs)
            if d.existing is not None and d.existing.install_calendar_loss_frac is not None]


def update_fleet(study, designs: list[SiteDesigns]) -> FleetEvidence | None:
    """Posteriors of the packs in service from the study's field records.

    Returns None when the study has no field records (the plan is then the laboratory
    plan, unchanged). Only chemistries with at least one usable record are fitted; their
    packs without a record of their own move with the chemistry's fleet mean.
    """
    data = study.field_data
    if data is None:
        return None
    settings = study.settings["field_data"]
    start_year = study.settings["study"]["start_year"]
    out = FleetEvidence(skipped=list(data.skipped),
                        tests_file=data.tests_path.name if data.tests_path else None,
                        log_file=data.logs_path.name if data.logs_path else None)
    packs = packs_in_service(study, designs)
    sites = study.sites
    staged = []
    def records(site, outcome, curve, with_table_soh):
        return site_records(site, outcome.design.chemistry, curve, data.tests_of(site.id),
                            data.logs.get(site.id), start_year=start_year,
                            series_cells=outcome.design.pack.series_cells,
                            lead_acid_rule=settings["lead_acid_correction"], with_table_soh=with_table_soh)

    for i, outcome in packs:
        curve = curve_of(outcome)
        staged.append((sites[i], outcome, curve, records(sites[i], outcome, curve, False)))
    by_chem: dict[str, list] = {}
    for item in staged:
        by_chem.setdefault(item[1].design.chemistry, []).append(item)
    for chem, items in sorted(by_chem.items()):
        if not any(rec.observations.n > 0 for *_, rec in items):
            continue
        # a chemistry with records: a measured state of health of the sites table joins
        # its sites' records too (a reading at the study start)
        items = [(site, outcome, curve, records(site, outcome, curve, True) if site.existing_soh_frac else rec)
                 for site, outcome, curve, rec in items]
        hyper = fit_fleet([rec.observations for *_, rec in items])
        out.chemistries[chem] = hyper
        obs = [rec.observations for *_, rec in items]
        for k, post in site_posteriors(hyper, obs):
            site, outcome, curve, rec = items[k]
            out.sites[site.id] = _site_evidence(site, outcome, curve, rec, hyper, post)
    # packs of a chemistry with no usable record keep their predicted life; what their
    # records said still shows (a failed cell, an unusable log)
    for site, _, _, rec in staged:
        if site.id not in out.sites and (rec.failed_cell or rec.log_note or rec.tests):
            out.records_only[site.id] = rec
    return out


def _site_evidence(site, outcome, curve, rec, hyper: HyperPosterior, post: np.ndarray) -> SiteEvidence:
    k, j = systematic_draws(post, N_DRAWS)
    g, d = G_GRID[k], D_GRID[j]
    marginal = post.sum(axis=1)
    c = np.cumsum(marginal)
    p10, p50, p90 = (float(np.exp(np.interp(q, c, G_GRID))) for q in (0.1, 0.5, 0.9))
    ev = SiteEvidence(site_id=site.id, chemistry=outcome.design.chemistry,
                      installed_year=int(site.existing_installed_year), records=rec, curve=curve,
                      rho=hyper.rho, draw_k=k.astype(np.int16), draw_j=j.astype(np.int8),
                      lab_remaining_years=float(outcome.life_years),
                      factor_p10=p10, factor_p50=p50, factor_p90=p90,
                      initial_capacity_p50_frac=float(1.0 + np.median(d)))
    ev.belief = life_belief(curve, g, d, np.ones(g.size), hyper.rho)
    return ev


def _rounded(values) -> list[float]:
    return [round(float(v), 5) for v in values]
