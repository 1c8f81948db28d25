"""The plan's field-evidence parts (docs/plan-json.md): per site and for the fleet.

Per site (``sites[*].field_evidence``): what its records say about its pack in service,
the posterior fade factor and end-of-life year, and a failed-cell flag. For the fleet
(``field_data``): the files read and rows skipped, each chemistry's fleet fit, the
measured points against the predicted band of every site with records, and the sites
ranked by the value of one more capacity test.
"""

from __future__ import annotations

import math

from scipy.stats import spearmanr

from planner.evidence import FleetEvidence, TestValue
from planner.evidence.hierarchy import (
    NU,
    PRIOR_MU_SD,
    PRIOR_RHO_SD,
    PRIOR_TAU_SCALE,
    SIGMA_DELTA_FRAC,
    TAU_FLOOR,
)
from planner.evidence.observations import FAILED_CELL_DROP_OF_NOMINAL, TEST_SIGMA_FRAC, SiteRecords


def _num(x, digits: int = 5):
    return round(float(x), digits) if x is not None and math.isfinite(float(x)) else None


def _records_part(rec: SiteRecords) -> dict:
    return {
        "records_used": int(rec.observations.n),
        "tests": [{"row": t.row, "test_date": t.test_date.isoformat(), "kind": t.kind,
                   "age_years": _num(t.age_years, 3), "measured_soh_frac": _num(t.measured_frac),
                   "soh_at_25c_frac": _num(t.corrected_frac), "lower_bound": t.censored,
                   "used": t.used, "note": t.note} for t in rec.tests],
        "log_note": rec.log_note, "log_records": rec.log_records,
        "failed_cell": rec.failed_cell or None,
        "visit_recommended": bool(rec.failed_cell),
    }


_POSTERIOR_KEYS = ("factor_p10", "factor_p50", "factor_p90", "initial_capacity_p50_frac",
                   "remaining_life_p10_years", "remaining_life_p50_years", "remaining_life_p90_years",
                   "end_of_life_year_p10", "end_of_life_year_p50", "end_of_life_year_p90",
                   "replace_by_years", "remaining_life_years_predicted", "serving_today_frac")


def site_field_evidence(evidence: FleetEvidence | None, site_id: str, start_year: int) -> dict | None:
    """``sites[*].field_evidence`` of one site (None when it has neither records nor a
    posterior; posterior keys None where its chemistry has no usable record)."""
    if evidence is None:
        return None
    ev = evidence.site(site_id)
    if ev is None:
        rec = evidence.records_only.get(site_id)
        return None if rec is None else {**_records_part(rec), **dict.fromkeys(_POSTERIOR_KEYS)}
    rec = ev.records
    belief = ev.belief
    q = belief.quantiles((0.1, 0.5, 0.9))
    return {
        **_records_part(rec),
        "factor_p10": _num(ev.factor_p10, 4), "factor_p50": _num(ev.factor_p50, 4),
        "factor_p90": _num(ev.factor_p90, 4),
        "initial_capacity_p50_frac": _num(ev.initial_capacity_p50_frac, 4),
        "remaining_life_p10_years": _num(q[0], 3), "remaining_life_p50_years": _num(q[1], 3),
        "remaining_life_p90_years": _num(q[2], 3),
        "end_of_life_year_p10": _num(start_year + q[0], 2),
        "end_of_life_year_p50": _num(start_year + q[1], 2),
        "end_of_life_year_p90": _num(start_year + q[2], 2),
        "replace_by_years": _num(belief.replace_by_years(), 3),
        "remaining_life_years_predicted": _num(ev.lab_remaining_years, 3),
        "serving_today_frac": _num(belief.alive_frac, 4),
    }


def site_warnings(evidence: FleetEvidence | None, site_id: str) -> list[str]:
    """Warnings a site's records raise (failed cell first)."""
    if evidence is None:
        return []
    ev = evidence.site(site_id)
    rec = ev.records if ev is not None else evidence.records_only.get(site_id)
    if rec is None:
        return []
    out = []
    if rec.failed_cell:
        out.append(f"failed cell in the pack in service: {rec.failed_cell}; a visit is "
                   "recommended (the fade factor leaves this test out)")
    if ev is not None and ev.belief.alive_frac < 0.5:
        out.append(f"field records say the pack in service has probably passed its end of life "
                   f"already (probability {1 - ev.belief.alive_frac:.0%}): replace it at the first visit")
    return out + list(rec.warnings)


def field_data_section(study, evidence: FleetEvidence | None, test_values: list[TestValue],
                       horizon_years: int) -> dict:
    """The plan's ``field_data`` object (docs/plan-json.md)."""
    settings = study.settings["field_data"]
    start_year = study.settings["study"]["start_year"]
    sites = []
    chems = []
    if evidence is not None:
        for chem, hyper in sorted(evidence.chemistries.items()):
            chems.append({"chemistry": chem, **{k: (_num(v, 4) if isinstance(v, float) else v)
                                                for k, v in hyper.summary().items()}})
        for ev in evidence.sites.values():
            if not ev.has_records:
                continue
            obs = ev.records.observations
            measured = [{"age_years": _num(a, 3), "soh_frac": _num(y), "lower_bound": bool(c)}
                        for a, y, c, w in zip(obs.age_years, obs.soh_frac, obs.censored, obs.offset_weight)
                        if w > 0]
            sites.append({"site_id": ev.site_id, "chemistry": ev.chemistry,
                          "installed_year": ev.installed_year,
                          "age_years": _num(ev.curve.age_years, 3),
                          "measured": measured, "band": ev.band(horizon_years),
                          **{k: v for k, v in site_field_evidence(evidence, ev.site_id, start_year).items()
                             if k not in ("tests",)}})
    ranked = [v.to_dict() for v in test_values]
    return {
        "capacity_tests_file": evidence.tests_file if evidence is not None else None,
        "battery_log_file": evidence.log_file if evidence is not None else None,
        "lead_acid_correction": settings["lead_acid_correction"],
        "skipped_records": list(evidence.skipped) if evidence is not None else [],
        "chemistries": chems,
        "sites": sites,
        "visits_recommended": _visits(evidence),
        "test_value": ranked,
        "test_value_summary": _ranking_summary(test_values),
    }


def _visits(evidence: FleetEvidence | None) -> list[str]:
    if evidence is None:
        return []
    flagged = [ev.site_id for ev in evidence.sites.values() if ev.records.failed_cell]
    flagged += [site_id for site_id, rec in evidence.records_only.items() if rec.failed_cell]
    return sorted(flagged)


def _ranking_summary(values: list[TestValue]) -> dict:
    worth = [v for v in values if v.net_value > 0]
    corr = None
    if len(values) >= 3 and len({v.value for v in values}) > 1 and len({v.factor_log_sd for v in values}) > 1:
        corr = _num(spearmanr([v.value for v in values], [v.factor_log_sd for v in values]).statistic, 3)
    return {"sites_ranked": len(values), "sites_worth_testing": len(worth),
            "net_value_of_worthwhile_tests": round(sum(v.net_value for v in worth), 2),
            "value_vs_uncertainty_rank_correlation": corr}


def field_assumption_rows(study) -> list[dict]:
    """Assumption rows of the field-evidence model (only when the study has records)."""
    if study.field_data is None:
        return []
    rows = [
        ("fade factor model", "log f = mu(chemistry) + u(site), u ~ Normal(0, tau^2); exact grid "
         "posteriors (hierarchical normal model, Gelman et al. 2013 ch. 5)", ""),
        ("measurement error", f"Student-t, {NU:g} degrees of freedom, scale {TEST_SIGMA_FRAC:g} of rated "
         "(Lange, Little & Taylor 1989; scale from memory)", TEST_SIGMA_FRAC),
        ("prior of the fleet mean log factor", "Normal(0, sd) (modelling choice)", PRIOR_MU_SD),
        ("prior of the site spread tau", "half-normal scale (Gelman 2006, weakly informative)", PRIOR_TAU_SCALE),
        ("lowest site spread tau", "cells' fade-rate spread of one lot (planner.pack.life_risk)", TAU_FLOOR),
        ("prior of the cycle/calendar log ratio", "Normal(0, sd) (modelling choice)", PRIOR_RHO_SD),
        ("initial capacity spread of a pack", "Normal(0, sd), fraction of rated (common practice, "
         "from memory)", SIGMA_DELTA_FRAC),
        ("failed-cell flag", "lowest cell below the string mean by this share of nominal cell "
         "voltage (common practice, from memory)", FAILED_CELL_DROP_OF_NOMINAL),
    ]
    return [{"group": "field evidence", "name": name, "value": value, "unit": "", "source": source}
            for name, source, value in rows]
