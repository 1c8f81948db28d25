"""Dominance pruning and screening of candidate designs."""

from hypothesis import given, settings
from hypothesis import strategies as st

from planner.optimize import Candidate, SiteOptions
from planner.optimize.candidates import prune_dominated, screen_site, whole_years


def c(design, pack, life, mass=10.0, install=100.0, disposal=20.0, probs=None):
    return Candidate(design, "lfp", 1.0, 3.4, 1000.0, mass, pack, install, disposal, life, probs, "calendar")


def test_dominated_design_is_removed():
    # definition (docs/optimizer.md, Candidates): cheaper and longer-lived on every count dominates
    a = c("a", 1000, 6)
    b = c("b", 1200, 5)          # dearer and shorter: dominated by a
    d = c("d", 800, 4)           # cheaper but shorter: kept (trade-off)
    e = c("e", 1000, 6, mass=5)  # same as a but lighter: dominates a
    assert [x.design_id for x in prune_dominated([a, b, d, e])] == ["d", "e"]


def test_failure_risk_counts_in_dominance():
    # a design with higher failure probability at some age is not dominated
    a = c("a", 1000, 6, probs=(0.0, 0.0, 0.1))
    b = c("b", 1000, 6, probs=(0.0, 0.05, 0.05))
    assert len(prune_dominated([a, b])) == 2


def test_exact_ties_keep_the_first():
    assert [x.design_id for x in prune_dominated([c("x", 1, 2), c("y", 1, 2)])] == ["x"]


def test_whole_years_rounds_down():
    # replacement at or before the predicted life, in whole years (docs/optimizer.md)
    assert whole_years(4.999) == 4 and whole_years(5.0) == 5 and whole_years(0.7) == 0


def test_screen_site_reasons():
    site = SiteOptions("s", "A", (1,), [c("a", 1000, 0.5)])
    cands, reason, limit = screen_site(site, None)
    assert cands == [] and limit == "life" and "site s" in reason
    heavy = SiteOptions("s", "A", (1,), [c("a", 1000, 5, mass=80.0)])
    assert screen_site(heavy, 50.0)[2] == "payload_kg_per_trip"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(1, 5), st.integers(1, 5), st.integers(1, 3)), min_size=1, max_size=8))
def test_pruned_set_is_the_pareto_front(rows):
    # brute-force Pareto check (definition of dominance): nothing kept is dominated by any
    # input, and every input is matched or dominated by something kept
    cands = [c(f"d{i}", p, life, mass=m) for i, (p, life, m) in enumerate(rows)]
    kept = prune_dominated(cands)

    def dom(x, y):  # x no worse than y everywhere
        return x.pack_cost <= y.pack_cost and x.life_years >= y.life_years and x.mass_kg <= y.mass_kg

    for k in kept:
        assert not any(dom(o, k) and (o.pack_cost, o.life_years, o.mass_kg) != (k.pack_cost, k.life_years, k.mass_kg)
                       for o in cands)
    for o in cands:
        assert any(dom(k, o) for k in kept)
