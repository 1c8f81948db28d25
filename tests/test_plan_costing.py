"""Candidates priced for the optimizer: the standalone cost bounds of a design."""

from pathlib import Path

import pytest

from planner.designs.evaluation import evaluate_fleet
from planner.plan.costing import pack_price, standalone_cost_bounds
from planner.site.model import model_sites
from planner.study.loading import load_study

QUICK = Path(__file__).resolve().parents[1] / "scenarios" / "quick.toml"


def test_standalone_bounds_are_single_present_values_of_each_replacement():
    # NIST Handbook 135 (Fuller & Petersen 1996) single present value 1/(1+d)^t per
    # replacement at t = 0, L, 2L, ... < H; the high bound adds one region trip each.
    study = load_study(QUICK)
    models = model_sites(study)
    site = evaluate_fleet(study, models)[0]
    o = next(o for o in site.outcomes if 1.0 <= o.life_years < 100 and o.eol_soh_frac < 1.0)
    low, high = standalone_cost_bounds(study, models[0], o)
    d, h = study.discount_rate_frac, study.settings["study"]["horizon_years"]
    step = max(1, int(o.life_years + 1e-9))
    factor = sum((1 + d) ** -t for t in range(0, h, step))
    trip = study.region(models[0].site.region)["trip_cost"]
    assert high - low == pytest.approx(trip * factor)
    assert low > pack_price(study, o.design.chemistry, o.design.pack.capacity_wh) * factor
