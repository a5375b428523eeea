"""Listing and evaluating every cheaper plan (netdim.dimension.exhaustive).

The listing is checked against a plain itertools enumeration of every plan written here; the
least cost against exhaustive searches written here, with the fixed point of
``tests/test_dimension_small.py`` (Kelly 1986 repeated substitution, Erlang B by its
recursion, both independent of netdim) where routing is fixed, and otherwise by enumerating
every plan and evaluating it with netdim's own evaluation (checked in its own tests), which
checks the search, not the evaluation.
"""

from __future__ import annotations

import itertools
import time

import numpy as np
import pytest
from test_dimension_small import (  # tests/ is on sys.path under pytest
    TRIANGLE,
    TRIANGLE_TARGETS,
    fixed_point,
    overflow_triangle,
    triangle,
)

from netdim.dimension import SizingChoices, dimension
from netdim.dimension import exhaustive as ex
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site


def R(*links):
    return Route(tuple(links), (1.0,) * len(links))


def cost_of(links, caps):
    """Cost by the rules of netdim.dimension.choices, written out: added modules times their
    price, plus the fixed cost of a link built new."""
    total = 0.0
    for link, c in zip(links, caps, strict=True):
        added = (c - link.installed) // link.module
        total += link.cost_per_module * added
        if link.installed == 0 and c > 0:
            total += link.fixed_cost
    return total


def test_plans_by_cost_lists_every_plan_in_the_window_cheapest_first():
    links = [Link("a", ("A", "B"), cost_per_module=3.0, fixed_cost=4.0, max_capacity=6),
             Link("b", ("A", "B"), cost_per_module=2.0, module=2, installed=1, max_capacity=9),
             Link("c", ("A", "B"), cost_per_module=5.0, max_capacity=4)]
    net = Network("w", (Site("A"), Site("B")), tuple(links), ())
    space = SizingChoices.from_network(net)
    lo, hi = 9.0, 20.0
    want = []
    for ks in itertools.product(range(7), range(5), range(5)):
        caps = [ks[0], 1 + 2 * ks[1], ks[2]]
        c = cost_of(links, caps)
        if lo <= c < hi:
            want.append((c, ks))
    got = ex.plans_by_cost(space, lo, hi, np.ones(3, bool))
    assert sorted(tuple(int(x) for x in k) for _, k in got) == sorted(ks for _, ks in want)
    costs = [c for c, _ in got]
    assert costs == sorted(costs)
    assert all(c == pytest.approx(space.cost(k)) for c, k in got)
    # a link held at 0, and too many plans
    held = ex.plans_by_cost(space, lo, hi, np.array([True, False, True]))
    assert all(k[1] == 0 for _, k in held)
    assert len(held) == sum(1 for _, ks in want if ks[1] == 0)
    assert ex.plans_by_cost(space, lo, hi, np.ones(3, bool), limit=3) is None


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_triangle_least_cost_from_a_dear_start_equals_exhaustive_search():
    # Reference: exhaustive search with the independent fixed point of test_dimension_small.
    costs = (1.0, 1.5, 3.0)
    best = np.inf
    for caps in itertools.product(range(6, 17), range(8, 19), range(4, 13)):
        c = float(np.dot(costs, caps))
        if c < best and all(x <= t for x, t in zip(fixed_point(caps, TRIANGLE),
                                                   TRIANGLE_TARGETS, strict=True)):
            best = c
    net = triangle()
    space = SizingChoices.from_network(net)
    found = ex.least_cost_by_enumeration(net, space, "fixed-point", lo=best - 4, hi=best + 3)
    assert found.status == "improved"
    assert found.cost == pytest.approx(best) and found.bound == pytest.approx(best)
    assert space.cost(found.modules) == pytest.approx(best)
    assert evaluate(net, space.capacity(found.modules)).all_met
    # started at the least cost itself: every cheaper plan fails
    done = ex.least_cost_by_enumeration(net, space, "fixed-point", lo=best - 4, hi=best)
    assert done.status == "optimal" and done.bound == pytest.approx(best)
    assert done.evaluated == done.plans > 0


def test_stopped_early_the_bound_is_the_next_plan_and_never_above_the_least_cost():
    net = triangle()
    space = SizingChoices.from_network(net)
    past = time.perf_counter() - 1.0
    found = ex.least_cost_by_enumeration(net, space, "fixed-point", lo=40.0, hi=60.0,
                                         deadline=past)
    assert found.status == "partial" and found.evaluated == 0 and found.stopped_by_time
    assert "the safety stop fired after 0 of" in found.message
    first = ex.plans_by_cost(space, 40.0, 60.0, np.ones(3, bool))[0][0]
    assert found.bound == pytest.approx(max(40.0, first))
    tight = ex.least_cost_by_enumeration(net, space, "fixed-point", lo=40.0, hi=60.0, limit=5)
    assert tight.status == "too-many" and tight.bound == 40.0 and tight.evaluated == 0


def test_not_applicable_on_many_links(monkeypatch):
    net = triangle()
    monkeypatch.setattr(ex, "MAX_LINKS", 2)
    found = ex.least_cost_by_enumeration(net, SizingChoices.from_network(net), "fixed-point",
                                         1.0, 50.0)
    assert found.status == "not-applicable" and "more than 2 links" in found.message
    assert found.bound == 1.0


def test_a_link_left_unbuilt_takes_its_routes_away():
    # X has a fixed cost and dear circuits; left unbuilt, demand d's route over Y becomes
    # its first choice and escapes Y's reservation of 3. Reference: every plan of each
    # design enumerated here and evaluated by netdim's fixed point (checks the search).
    links = (Link("X", ("A", "B"), cost_per_module=10.0, fixed_cost=5.0, max_capacity=30),
             Link("Y", ("A", "B"), cost_per_module=1.0, max_capacity=40))
    demands = (Demand("d", ("A", "B"), 5.0, routes=(R(0), R(1))),
               Demand("e", ("A", "B"), 5.0, routes=(R(1),)))
    net = Network("xy", (Site("A"), Site("B")), links, demands,
                  routing=Routing(policy="alternate", reservation=3))
    dropped = net.without_links(["X"])
    assert [len(d.routes) for d in dropped.demands] == [1, 1]
    assert net.without_links(["Y"]) is None  # e would have no route
    best = np.inf
    for x, y in itertools.product(range(3), range(41)):
        c = cost_of(links, (x, y))
        variants = [net] + ([dropped] if x == 0 else [])
        if c < best and any(evaluate(v, np.array([x, y])).all_met for v in variants):
            best = c
    assert best == 18.0
    found = ex.least_cost_by_enumeration(net, SizingChoices.from_network(net), "fixed-point",
                                         0.0, 25.0)
    assert found.status == "improved" and found.cost == pytest.approx(best)
    assert found.dropped == (0,)
    plan = dimension(net)
    assert plan.cost == pytest.approx(best) and plan.lower_bound == pytest.approx(best)
    assert plan.status == "optimal-within-gap" and plan.dropped_links == ("X",)


def test_sizer_reports_the_listing():
    # under the exact model the bound before the listing is the weak LP one
    net = overflow_triangle()
    plan = dimension(net, model="exact")
    assert plan.details["listing"] in ("optimal", "improved")
    assert plan.details["listing_evaluated"] >= 1
    assert plan.lower_bound == pytest.approx(plan.cost)
    assert plan.details["bound"].startswith("least cost")
    assert plan.to_dict()["details"]["listing_plans"] == plan.details["listing_plans"]


def test_not_applicable_with_many_links_that_may_be_left_unbuilt(monkeypatch):
    links = (Link("X", ("A", "B"), cost_per_module=10.0, fixed_cost=5.0, max_capacity=30),
             Link("Y", ("A", "B"), cost_per_module=1.0, fixed_cost=1.0, max_capacity=40))
    net = Network("xy", (Site("A"), Site("B")), links,
                  (Demand("d", ("A", "B"), 5.0, routes=(R(0), R(1))),),
                  routing=Routing(policy="alternate", reservation=3))
    monkeypatch.setattr(ex, "MAX_DROPPABLE", 1)
    found = ex.least_cost_by_enumeration(net, SizingChoices.from_network(net), "fixed-point",
                                         5.0, 30.0)
    assert found.status == "not-applicable"
    assert "more than 1 links may be left unbuilt" in found.message


def test_a_plan_that_cannot_be_evaluated_stops_the_listing_with_a_valid_bound(monkeypatch):
    from netdim.errors import ConvergenceError

    net = triangle()
    space = SizingChoices.from_network(net)
    plans = ex.plans_by_cost(space, 40.0, 60.0, np.ones(3, bool))
    calls = []

    def failing(*args, **kwargs):
        calls.append(1)
        if len(calls) == 3:
            raise ConvergenceError("did not converge", iterations=1, residual=1.0)
        return evaluate(*args, **kwargs)

    monkeypatch.setattr(ex, "evaluate", failing)
    found = ex.least_cost_by_enumeration(net, space, "fixed-point", 40.0, 60.0)
    assert found.status == "partial" and found.evaluated == 2
    assert "could not be evaluated (did not converge)" in found.message
    # the two cheapest plans failed: every plan cheaper than the third fails
    assert found.bound == pytest.approx(plans[2][0])
