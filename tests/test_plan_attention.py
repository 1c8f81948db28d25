"""What needs attention, grouped by cause (planner.plan.attention), on invented plans.

The threshold of lost load above which a site counts as not served is a fact of the trade:
stand-alone supplies for telemetry and telecom are designed to lose about 1 % of their load
or less (common practice). Every other expected value is arithmetic on the plan given.
"""

from __future__ import annotations

import pytest
from plan_fixture import make_plan

from planner.plan.attention import (
    AT_RISK_FRAC,
    CAUSES,
    DEFAULT_PAYLOAD_FLAG_KG,
    LOST_LOAD_NOT_SERVED_FRAC,
    lost_load_frac,
    needs_attention,
    sites_not_served,
)


def _site(site_id, share=0.0, **extra):
    # 100 Wh a day, so a year's load is 36,500 Wh
    return {"id": site_id, "name": f"Demo {site_id}", "region": "Demo Flats", "daily_load_wh": 100.0,
            "unserved_wh_per_year": share * 36500.0, "cost_breakdown": {"downtime": 1000.0 * share},
            **extra}


def _groups(plan):
    return {g["cause"]: g for g in needs_attention(plan)["groups"]}


def test_threshold_is_one_percent_of_the_load():
    # common practice: professional stand-alone supplies lose about 1 % of their load or less
    assert LOST_LOAD_NOT_SERVED_FRAC == 0.01
    plan = {"sites": [_site("A", 0.015), _site("B", 0.005), _site("C", 0.0002)]}
    # 0.015 x 36,500 Wh = 547.5 Wh a year lost at 100 Wh a day: 5.5 days (arithmetic)
    assert lost_load_frac(plan["sites"][0]) == pytest.approx(0.015, rel=1e-12)
    groups = _groups(plan)
    assert [i["id"] for i in groups["loses_load"]["items"]] == ["A"]
    assert "about 5.5 days off air" in groups["loses_load"]["items"][0]["detail"]
    assert [i["id"] for i in groups["loses_some_load"]["items"]] == ["B"]
    assert sites_not_served(plan) == ["A"]  # 0.02 % is not worth a line (about 2 hours a year)
    assert groups["loses_load"]["not_served"] and not groups["loses_some_load"]["not_served"]


def test_sites_no_design_serves_count_as_not_served_with_their_reason():
    plan = {"sites": [_site("A"), _site("B", 0.5)],
            "unserved_sites": [{"id": "A", "reason": "no candidate serves site A (too cold)"}]}
    groups = _groups(plan)
    assert groups["cannot_be_served"]["items"][0]["detail"] == "no candidate serves site A (too cold)"
    assert sites_not_served(plan) == ["A", "B"]
    # causes are listed in the order to act on them
    order = [c.key for c in CAUSES]
    listed = [g["cause"] for g in needs_attention(plan)["groups"]]
    assert listed == sorted(listed, key=order.index)


def test_the_fix_quotes_the_charging_shortfall():
    site = _site("A", 0.2, limiting_cause="charging source too small (December: 4.8 kWh offered, 6.4 kWh drawn)")
    item = _groups({"sites": [site]})["loses_load"]["items"][0]
    assert item["fix"].startswith("a larger charging source: over December it offers 4.8 kWh while the "
                                  "load draws 6.4 kWh")
    cold = _site("B", 0.2, charge_blocked_hours_per_year=173.0)
    assert "battery heater" in _groups({"sites": [cold]})["loses_load"]["items"][0]["fix"]


def test_at_risk_sorted_by_expected_cost_with_the_visit_year():
    sites = [_site(i, risk_before_next_visit_frac=r, next_visit_year=9,
                   expected_failure_cost_before_next_visit=c)
             for i, r, c in (("A", 0.12, 300.0), ("B", 0.30, 900.0), ("C", AT_RISK_FRAC, 50.0))]
    plan = {"sites": sites, "study": {"start_year": 2030}}
    group = _groups(plan)["at_risk"]
    assert [i["id"] for i in group["items"]] == ["B", "A"]  # C is at the threshold, not above
    assert group["cost"] == pytest.approx(1200.0)
    assert group["items"][0]["fix"] == "visit earlier than year 9 (2039)"


def test_trips_over_the_payload_are_flagged():
    trips = [{"region": "R", "year": 0, "month": 6, "site_ids": ["A"], "pack_mass_kg": 700.0, "trip_count": 1},
             {"region": "R", "year": 5, "month": 6, "site_ids": ["A"], "pack_mass_kg": 700.0, "trip_count": 2}]
    plan = {"sites": [], "trips": trips}
    group = _groups(plan)["heavy_trip"]
    assert DEFAULT_PAYLOAD_FLAG_KG == 500.0
    assert group["count"] == 1  # 700 kg split over two trips is 350 kg a trip
    assert "700 kg of packs, over the 500 kg payload" in group["items"][0]["detail"]
    plan["study"] = {"payload_kg_per_trip": 800.0}  # the study's own limit wins
    assert "heavy_trip" not in _groups(plan)


def test_fixture_fleet_groups_add_up():
    plan = make_plan(200, seed=2, lost_load=True)
    result = needs_attention(plan)
    for group in result["groups"]:
        assert group["count"] == len(group["items"]) > 0
        costs = [i["cost"] for i in group["items"] if i["cost"] is not None]
        if costs:
            assert group["cost"] == pytest.approx(sum(costs), rel=1e-12)
            assert costs == sorted(costs, reverse=True)
    # lost_load=True: every 25th site from site 7 loses 15 % of its load (invented)
    expected = [s["id"] for k, s in enumerate(plan["sites"]) if k % 25 == 7]
    assert sorted(result["sites_not_served"]) == sorted(expected)
