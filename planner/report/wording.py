"""The plan in a reader's words: coverage of a chemistry, what drives a cost difference,
and the plan's status, without solver vocabulary.

Used by the workbook and the console summary alike; every function reads the plan dict
(``docs/plan-json.md``) and tolerates missing parts. The solver's own status stays in
the JSON (``solver.status``, ``chemistry_comparison[].status``).
"""

from __future__ import annotations

from collections.abc import Mapping

from planner.plan.numbers import finite_number

#: Longest list of site ids written out in a sentence; beyond it, a count and a pointer.
MAX_IDS_NAMED = 3
#: Abbreviations for dense cells (visit grid, trip summaries), each defined on its sheet.
CHEMISTRY_CODES = {"lisocl2": "Li-SOCl2"}


def chemistry_names(plan: Mapping) -> dict[str, str]:
    """Chemistry id -> its full name, the one name a reader sees everywhere: the plan's
    ``chemistry_name`` of a site with that chemistry, else the chemistry library's."""
    names: dict[str, str] = {}
    for site in _seq(plan.get("sites")):
        if isinstance(site, Mapping) and site.get("chemistry") and site.get("chemistry_name"):
            names.setdefault(str(site["chemistry"]), str(site["chemistry_name"]))
    try:
        from planner.chemistry import all_chemistries
        for chem in all_chemistries():
            names.setdefault(chem.id, chem.name)
    except Exception:  # a plan read without the library still names its chemistries by id
        pass
    return names


def chemistry_name(chemistry, names: Mapping) -> str | None:
    """Full name of a chemistry id (the id itself when unknown, None when missing)."""
    if chemistry is None or chemistry == "":
        return None
    return names.get(str(chemistry), str(chemistry))


def chemistry_code(chemistry) -> str:
    """Short code of a chemistry id for dense cells ('LFP', 'Li-SOCl2')."""
    key = str(chemistry or "")
    return CHEMISTRY_CODES.get(key, key.upper())


def comparison_label(row: Mapping, names: Mapping) -> str:
    """A chemistry comparison row in words: "If lithium iron phosphate wherever it can serve"."""
    name = chemistry_name(row.get("chemistry"), names) or "?"
    return f"If {name} wherever it can serve"


def _seq(value) -> list:
    return list(value) if isinstance(value, list | tuple) else []


def _count(value) -> int | None:
    """A count given as a number or as a list of ids."""
    if isinstance(value, list | tuple):
        return len(value)
    value = finite_number(value)
    return int(value) if value is not None else None


def _and(items: list[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def coverage_text(row: Mapping, n_sites: int, names: Mapping | None = None) -> str:
    """How far one chemistry serves the fleet, e.g. "serves 15 of 16 sites; DP-05 keeps lisocl2".

    ``row`` is a ``chemistry_comparison`` entry; ``n_sites`` the number of sites planned.
    """
    unserved_ids = [str(i) for i in _seq(row.get("sites_unserved"))]
    n_unserved = _count(row.get("sites_unserved")) or 0
    served = _count(row.get("sites_served"))
    if served is None:
        served = max(n_sites - n_unserved, 0)
    total = max(n_sites, served + n_unserved)
    if n_unserved == 0:
        return f"serves all {total:,} sites"
    if served == 0:
        return f"serves none of the {total:,} sites"
    text = f"serves {served:,} of {total:,} sites"
    kept = row.get("kept_by_other") if isinstance(row.get("kept_by_other"), Mapping) else {}
    if unserved_ids and len(unserved_ids) <= MAX_IDS_NAMED:
        by_chem: dict[str, list[str]] = {}
        for site_id in unserved_ids:
            by_chem.setdefault(str(kept.get(site_id) or "no other design"), []).append(site_id)
        parts = [f"{_and(ids)} {'keeps' if len(ids) == 1 else 'keep'} {_named(chem, names)}"
                 if chem != "no other design" else f"{_and(ids)} cannot be served"
                 for chem, ids in by_chem.items()]
        return f"{text}; {'; '.join(parts)}"
    counts: dict[str, int] = {}
    for chem in kept.values():
        counts[str(chem)] = counts.get(str(chem), 0) + 1
    detail = ", ".join(f"{_named(chem, names)} {n:,}" for chem, n in sorted(counts.items(), key=lambda kv: -kv[1]))
    verb = "keeps" if n_unserved == 1 else "keep"
    return (f"{text}; the other {n_unserved:,} {verb} another chemistry"
            + (f" ({detail})" if detail else ""))


def _named(chem: str, names: Mapping | None) -> str:
    return chemistry_name(chem, names) if names else chem


def drivers_text(row: Mapping, currency: str) -> str | None:
    """The sites that make most of a chemistry's extra cost, with their days-off-air part.

    e.g. "UV-04: +216,450 EUR, of which days off air +215,902 EUR". None when the row
    costs no more than the plan (or names no site).
    """
    parts = []
    for d in _seq(row.get("driving_sites")):
        if not isinstance(d, Mapping) or finite_number(d.get("difference")) is None:
            continue
        text = f"{d.get('id')}: {d['difference']:+,.0f} {currency}".rstrip()
        downtime = finite_number(d.get("downtime_difference"))
        if downtime is not None and abs(downtime) >= 0.5:
            text += f", of which days off air {downtime:+,.0f} {currency}".rstrip()
        parts.append(text)
    return "; ".join(parts) or None


def downtime_share(row: Mapping) -> float | None:
    """Days off air as a fraction of a comparison row's fleet present cost."""
    downtime = finite_number(row.get("downtime"))
    total = finite_number(row.get("total_with_others_present_cost"))
    if downtime is None or not total:
        return None
    return downtime / total


def plan_status_text(plan: Mapping) -> str:
    """The plan's standing in plain words (how many sites it serves, how sure the cost is).

    A site is not served when no design can serve it or when it loses more than the
    stated share of its load (:mod:`planner.plan.attention`).
    """
    from planner.plan.attention import attention_of

    solver = plan.get("solver") if isinstance(plan.get("solver"), Mapping) else {}
    n_sites = len([s for s in _seq(plan.get("sites")) if isinstance(s, Mapping)])
    n_not = len(_seq(attention_of(plan).get("sites_not_served")))
    served = max(n_sites - n_not, 0)
    every = f"all {n_sites:,} sites served" if n_sites != 1 else "the site is served"
    coverage = (every if n_not == 0 else
                f"{served:,} of {n_sites:,} sites served; {n_not:,} not (see Needs attention)")
    gap = finite_number(solver.get("gap_frac"))
    status = str(solver.get("status") or "")
    if status == "feasible":
        certainty = ("stopped at the time limit" +
                     (f", within {gap:.1%} of the lowest possible cost" if gap is not None else ""))
    elif gap is not None and served:
        certainty = f"cost within {gap:.2%} of the lowest possible"
    else:
        certainty = ""
    return coverage + (f"; {certainty}" if certainty else "")
