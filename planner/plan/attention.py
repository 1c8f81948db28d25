"""What needs attention in a plan, grouped by cause: the first page a planner reads.

Each cause is one entry of :data:`CAUSES`: a title, what its cost figure is, the fix the
planner would suggest, whether it makes a site count as not served, and a function that
finds its cases in the plan dict (``docs/plan-json.md``). The workbook's *Needs attention*
sheet, the console summary and the JSON key ``needs_attention`` all come from
:func:`needs_attention`, so adding a cause is one entry here.

A site counts as **not served** when no design can serve it (``unserved_sites``) or when
its chosen pack still loses more than :data:`LOST_LOAD_NOT_SERVED_FRAC` of the yearly load.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from planner.plan.numbers import finite_number

#: Share of the yearly load a site may lose and still count as served. Stand-alone supplies
#: for professional loads (telecom, telemetry) are designed to lose about 1 % of their load
#: or less, where domestic systems accept 5-10 % (common practice); a telemetry site off
#: air more than about 3.7 days a year does not do its job.
LOST_LOAD_NOT_SERVED_FRAC = 0.01
#: Probability of failing before the next visit above which a site is at risk (the same
#: threshold the workbook's *Sites at risk* sheet highlights).
AT_RISK_FRAC = 0.10
#: Smallest loss of load worth a line: 0.1 % of the load is about 9 hours a year.
LOST_LOAD_NOTED_FRAC = 0.001
#: Pack mass per trip above which a trip is flagged when the study sets no
#: ``[limits] payload_kg_per_trip``: about the payload of a light utility helicopter or of
#: a pickup truck (common practice). Heavier loads need a second lift or vehicle.
DEFAULT_PAYLOAD_FLAG_KG = 500.0
DAYS_PER_YEAR = 365.0


@dataclass(frozen=True)
class Cause:
    """One reason a site or trip needs attention.

    Attributes
    ----------
    key : str
        Id in the JSON (``needs_attention.groups[].cause``).
    title : str
        The group's heading in plain words.
    cost_meaning : str
        What the cost figure of an item is ("" when the cause has none).
    fix : str
        The fix the planner suggests for the group (an item may give its own).
    find : callable
        ``find(plan, context) -> list of items`` (dicts with ``id``, ``detail`` and
        optionally ``name``, ``region``, ``cost``, ``fix``, ``share_frac``).
    not_served : bool
        Whether its sites count as not served (Summary, exit code 3).
    examples : int
        Cases the console names under the group (0: a count only).
    """

    key: str
    title: str
    cost_meaning: str
    fix: str
    find: Callable[[Mapping, dict], list[dict]]
    not_served: bool = False
    examples: int = 3


def _sites(plan) -> list[Mapping]:
    sites = plan.get("sites")
    return [s for s in sites if isinstance(s, Mapping)] if isinstance(sites, list | tuple) else []


def lost_load_frac(site: Mapping) -> float | None:
    """Share of the yearly load the site's chosen pack does not serve (None: unknown)."""
    unserved = finite_number(site.get("unserved_wh_per_year"))
    daily = finite_number(site.get("daily_load_wh"))
    if unserved is None or not daily or daily <= 0:
        return None
    return unserved / (daily * DAYS_PER_YEAR)


def _item(site, detail, cost=None, fix=None, **extra) -> dict:
    return {"id": site.get("id"), "name": site.get("name"), "region": site.get("region"),
            "detail": detail, "cost": cost, "fix": fix, **extra}


def _calendar(year, context) -> str:
    start = context.get("start_year")
    return f"year {year} ({start + year})" if isinstance(start, int) else f"year {year}"


_SHORTFALL = re.compile(r"\(([^:()]+): ([\d.]+) kWh offered, ([\d.]+) kWh drawn\)")


def _lost_load_fix(site) -> str:
    cause = str(site.get("limiting_cause") or "")
    found = _SHORTFALL.search(cause)
    if found:
        period, offered, drawn = found.groups()
        return (f"a larger charging source: over {period} it offers {offered} kWh while the load "
                f"draws {drawn} kWh; no pack size fixes that")
    if (finite_number(site.get("charge_blocked_hours_per_year")) or 0) > 0:
        return ("a battery heater or insulated box: charging is blocked by cold for "
                f"{site['charge_blocked_hours_per_year']:.0f} h a year")
    return "a larger charging source for the darkest or coldest weeks (a larger pack did not pay)"


def _lost_load(site, share) -> str:
    unserved = finite_number(site.get("unserved_wh_per_year")) or 0.0
    daily = finite_number(site.get("daily_load_wh")) or 0.0
    days = unserved / daily if daily else 0.0
    return (f"loses {share:.1%} of its load ({unserved:,.0f} Wh a year, about {days:.1f} days "
            "off air a year)")


def _loses_load(plan, context, *, above: bool) -> list[dict]:
    threshold = context["threshold"]
    out = []
    for site in _sites(plan):
        share = lost_load_frac(site)
        if share is None or share < LOST_LOAD_NOTED_FRAC or (share > threshold) != above:
            continue
        cost = finite_number((site.get("cost_breakdown") or {}).get("downtime")
                             if isinstance(site.get("cost_breakdown"), Mapping) else None)
        out.append(_item(site, _lost_load(site, share), cost, _lost_load_fix(site), share_frac=share))
    return out


def _cannot_be_served(plan, context) -> list[dict]:
    names = {str(s.get("id")): s for s in _sites(plan)}
    out = []
    for entry in plan.get("unserved_sites") or []:
        if not isinstance(entry, Mapping):
            continue
        site = names.get(str(entry.get("id")), {"id": entry.get("id")})
        reason = str(entry.get("reason") or "no design can serve it")
        out.append(_item(site, reason, None, None))
    return out


def _at_risk(plan, context) -> list[dict]:
    out = []
    for site in _sites(plan):
        risk = finite_number(site.get("risk_before_next_visit_frac"))
        if risk is None or risk <= AT_RISK_FRAC:
            continue
        visit = site.get("next_visit_year")
        when = (f"before the visit in {_calendar(visit, context)}" if isinstance(visit, int)
                else "before the end of the study")
        fix = (f"visit earlier than {_calendar(visit, context)}" if isinstance(visit, int)
               else "plan a replacement before the end of the study")
        out.append(_item(site, f"{risk:.0%} chance the pack in service fails {when}",
                         finite_number(site.get("expected_failure_cost_before_next_visit")), fix,
                         share_frac=risk))
    return out


def _extrapolated(plan, context) -> list[dict]:
    out = []
    for site in _sites(plan):
        if site.get("life_extrapolated") is True:
            breakdown = site.get("cost_breakdown") if isinstance(site.get("cost_breakdown"), Mapping) else {}
            note = str(site.get("life_extrapolation_note") or "outside the fitted conditions")
            out.append(_item(site, f"life leans on an aging law used outside its fit: {note}",
                             finite_number(breakdown.get("packs")), None))
    return out


def _component_limit(plan, context) -> list[dict]:
    out = []
    for site in _sites(plan):
        kind = site.get("life_limit_kind")
        limited = (kind in ("component", "ceiling") if kind is not None
                   else site.get("limiting_cause") == "service-life limit")
        if not limited:
            continue
        life = finite_number(site.get("life_years"))
        years = f"{life:.0f}-year " if life is not None else ""
        what = site.get("life_limited_by") or "service life"
        out.append(_item(site, f"replaced at the {years}limit of its {what} "
                               f"({site.get('chemistry_name') or site.get('chemistry') or 'pack'}), "
                               "before its cells wear out", None, None))
    return out


def _failed_cell(plan, context) -> list[dict]:
    out = []
    for site in _sites(plan):
        evidence = site.get("field_evidence")
        if isinstance(evidence, Mapping) and evidence.get("visit_recommended"):
            out.append(_item(site, f"capacity test found a failed cell: {evidence.get('failed_cell')}"))
    return out


def _test_pays(plan, context) -> list[dict]:
    data = plan.get("field_data") if isinstance(plan.get("field_data"), Mapping) else {}
    by_id = {s.get("id"): s for s in _sites(plan)}
    out = []
    for rank in data.get("test_value") or []:
        if not isinstance(rank, Mapping):
            continue
        net = finite_number(rank.get("net_value"))
        if net is None or net <= 0:
            continue
        site = by_id.get(rank.get("site_id"), {"id": rank.get("site_id")})
        low, high = rank.get("replacement_year_after_test_low"), rank.get("replacement_year_after_test_high")
        out.append(_item(site, f"one more capacity test in {_calendar(0, context)} is worth "
                               f"{finite_number(rank.get('value')) or 0:,.0f} for "
                               f"{finite_number(rank.get('test_cost')) or 0:,.0f}: its result may move "
                               f"the replacement anywhere from {_calendar(low, context)} to "
                               f"{_calendar(high, context)}", net, None))
    return out


def _heavy_trips(plan, context) -> list[dict]:
    limit = context["payload_kg"]
    out = []
    for trip in plan.get("trips") or []:
        if not isinstance(trip, Mapping):
            continue
        mass = finite_number(trip.get("pack_mass_kg"))
        count = finite_number(trip.get("trip_count")) or 1
        if mass is None or mass / count <= limit:
            continue
        mass /= count  # a trip group split for the payload carries its share per trip
        year, month = trip.get("year"), trip.get("month")
        label = f"trip {trip.get('region')} {_calendar(year, context)}" + (f", month {month}" if month else "")
        out.append({"id": label, "name": None, "region": trip.get("region"),
                    "detail": f"carries {mass:,.0f} kg of packs, over the {limit:,.0f} kg payload "
                              f"({len(trip.get('site_ids') or [])} sites)",
                    "cost": None, "fix": None, "share_frac": None})
    return out


#: The causes, in the order a reader should act on them. Add a cause here.
CAUSES: tuple[Cause, ...] = (
    Cause("cannot_be_served", "No design can serve the site", "",
          "change the site: the reason names what would help (a thermal measure, a larger "
          "charging source, a lower load)", _cannot_be_served, not_served=True),
    Cause("loses_load", "Loses more load than a served site may", "days off air, present value",
          "a larger charging source (or a battery heater where cold blocks charging)",
          lambda plan, ctx: _loses_load(plan, ctx, above=True), not_served=True),
    Cause("at_risk", "May fail before the next visit", "expected failure cost before the visit",
          "an earlier visit", _at_risk),
    Cause("failed_cell", "A failed cell in the pack in service", "",
          "visit to replace the cell or the pack (the fade factor leaves that test out)",
          _failed_cell),
    Cause("heavy_trip", "Trip heavier than one lift or vehicle carries", "",
          "split the trip, or set [limits] payload_kg_per_trip so the plan splits it",
          _heavy_trips),
    Cause("loses_some_load", "Loses a little load (within the served limit)",
          "days off air, present value", "a larger charging source, if the days off air matter",
          lambda plan, ctx: _loses_load(plan, ctx, above=False)),
    Cause("life_extrapolated", "Life leans on an aging law outside its fit", "packs, present value",
          "check the life against capacity tests or field data before relying on the visit year",
          _extrapolated, examples=0),
    Cause("component_limit", "Life set by a service limit (a component or the ceiling), not by fade", "",
          "nothing to change; a longer service life from the supplier would move the visit",
          _component_limit, examples=0),
    Cause("test_pays", "One more capacity test pays", "expected saving less the test's cost, present value",
          "test the pack in year 0 (sheet Field evidence ranks every pack in service)", _test_pays),
)


def _context(plan) -> dict:
    study = plan.get("study") if isinstance(plan.get("study"), Mapping) else {}
    payload = finite_number(study.get("payload_kg_per_trip"))
    start = study.get("start_year")
    return {"threshold": LOST_LOAD_NOT_SERVED_FRAC,
            "payload_kg": payload if payload else DEFAULT_PAYLOAD_FLAG_KG,
            "payload_from_study": bool(payload),
            "start_year": start if isinstance(start, int) and not isinstance(start, bool) else None}


def needs_attention(plan: Mapping) -> dict:
    """The plan's cases that need attention, grouped by cause (``docs/plan-json.md``).

    Returns
    -------
    dict
        ``{"lost_load_threshold_frac", "payload_flag_kg", "sites_not_served": [ids],
        "groups": [{"cause", "title", "count", "cost", "cost_meaning", "fix",
        "not_served", "examples", "items": [{"id", "name", "region", "detail", "cost", "fix",
        "share_frac"}]}]}``; groups without cases are left out, items are sorted by cost
        (largest first), then id. ``cost`` of a group is the sum of its items' costs
        (None when the cause has no cost).
    """
    context = _context(plan)
    groups, not_served = [], []
    for cause in CAUSES:
        items = cause.find(plan, context)
        if not items:
            continue
        for item in items:
            item.setdefault("share_frac", None)
        items.sort(key=lambda i: (-(i["cost"] if i["cost"] is not None else -1.0), str(i["id"])))
        costs = [i["cost"] for i in items if i["cost"] is not None]
        groups.append({"cause": cause.key, "title": cause.title, "count": len(items),
                       "cost": sum(costs) if costs else None, "cost_meaning": cause.cost_meaning,
                       "fix": cause.fix, "not_served": cause.not_served, "examples": cause.examples,
                       "items": items})
        if cause.not_served:
            not_served += [str(i["id"]) for i in items if str(i["id"]) not in not_served]
    return {"lost_load_threshold_frac": context["threshold"], "payload_flag_kg": context["payload_kg"],
            "sites_not_served": not_served, "groups": groups}


def attention_of(plan: Mapping) -> dict:
    """The plan's ``needs_attention`` when it holds one, else computed from the plan."""
    stored = plan.get("needs_attention")
    if isinstance(stored, Mapping) and isinstance(stored.get("groups"), list):
        return stored
    return needs_attention(plan)


def sites_not_served(plan: Mapping) -> list[str]:
    """Ids of the sites that count as not served (no design, or too much load lost)."""
    return [str(i) for i in attention_of(plan).get("sites_not_served") or []]
