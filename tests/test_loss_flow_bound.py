"""The loss-flow lower bound under alternate routing (netdim.dimension.loss_flow_bound).

Validity is checked against the least cost found by exhaustive search, written here, over
every integer plan in a box, each plan evaluated with the fixed-point model the bound is
stated for (``netdim.evaluate.evaluate(method='fixed-point')``; a plan counts as feasible
when either solution of a bistable network meets every target). The box is large enough to
be sure of the least cost: every plan outside it costs more than the least cost found.
The offsets of the cutting planes are checked in tests/test_loss_cuts.py.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from netdim.dimension import SizingChoices, carried_load_bound, dimension, loss_flow_bound
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site


def lp_bound(net):
    """The LP "capacity >= carried load" over every route."""
    return carried_load_bound(net, SizingChoices.from_network(net), all_routes=True,
                              integer=False).value


def R(*links, holdings=None):
    return Route(tuple(links), tuple(holdings or (1.0,) * len(links)))


def network(links, demands, reservation=1, policy="alternate"):
    sites = tuple(Site(s) for s in sorted({e for link in links for e in link.ends}))
    return Network("tiny", sites, tuple(links), tuple(demands),
                   routing=Routing(policy=policy, reservation=reservation))


def feasible(net, caps):
    ev = evaluate(net, np.array(caps), method="fixed-point")
    sols = [ev] + ([ev.alternative] if ev.alternative is not None else [])
    return any(bool(np.all(s.blocking <= s.target)) for s in sols)


def least_cost(net, budget):
    """Least cost of a plan meeting every target, searched over every plan costing at most
    ``budget``, cheapest first (link j then has at most budget / cost_j units)."""
    costs = np.array([link.cost_per_module for link in net.links])
    ranges = [range(int(budget // c) + 1) for c in costs]
    plans = [caps for caps in itertools.product(*ranges) if costs @ np.array(caps) <= budget]
    plans.sort(key=lambda caps: float(costs @ np.array(caps)))
    for caps in plans:
        if feasible(net, caps):
            # every cheaper plan is in the list, so this is the least cost
            return float(costs @ np.array(caps))
    raise AssertionError("no plan within the budget meets the targets")


def triangle(reservation=1):
    # demands A-B and B-C direct first, the other two links as their alternative
    links = [Link("AB", ("A", "B"), cost_per_module=1.0),
             Link("BC", ("B", "C"), cost_per_module=1.5),
             Link("AC", ("A", "C"), cost_per_module=2.0)]
    demands = [Demand("AB", ("A", "B"), 3.0, target=0.05, routes=(R(0), R(2, 1))),
               Demand("BC", ("B", "C"), 2.0, target=0.05, routes=(R(1), R(0, 2)))]
    return network(links, demands, reservation)


def parallel(reservation):
    # one demand over two parallel one-link routes, and a second demand on the second link
    links = [Link("L0", ("A", "B"), cost_per_module=1.0),
             Link("L1", ("A", "B"), cost_per_module=1.3)]
    demands = [Demand("d0", ("A", "B"), 4.0, target=0.02, routes=(R(0), R(1))),
               Demand("d1", ("A", "B"), 1.5, target=0.05, routes=(R(1), R(0)))]
    return network(links, demands, reservation)


def square():
    # a two-hop first route, two alternatives, and a holding time that differs per link
    links = [Link("AB", ("A", "B"), cost_per_module=1.0),
             Link("BC", ("B", "C"), cost_per_module=1.2),
             Link("AD", ("A", "D"), cost_per_module=0.9),
             Link("DC", ("D", "C"), cost_per_module=1.1)]
    demands = [Demand("AC", ("A", "C"), 1.0, target=0.2,
                      routes=(R(0, 1), R(2, 3, holdings=(1.0, 0.8)))),
               Demand("AB", ("A", "B"), 0.7, target=0.2, routes=(R(0), R(2, 3, 1))),
               Demand("DC", ("D", "C"), 0.5, target=0.2, routes=(R(3),))]
    return network(links, demands, reservation=1)


CASES = [("triangle r=1", triangle, 16), ("parallel r=0", lambda: parallel(0), 14),
         ("parallel r=2", lambda: parallel(2), 14), ("square", square, 9)]


@pytest.mark.parametrize("name,make,budget", CASES, ids=[c[0] for c in CASES])
@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_bound_below_least_cost_by_exhaustive_search(name, make, budget):
    net = make()
    best = least_cost(net, budget)
    b = loss_flow_bound(net)
    assert b.kind.startswith("loss-flow")
    assert b.value <= best + 1e-9
    # (b) never below the LP bound "capacity >= carried load" (the relaxation contains it)
    assert b.value >= lp_bound(net) * (1 - 1e-5) - 1e-6
    # the MILP ending, and the relaxation without the reservation-chain cuts, are bounds too
    b_int = loss_flow_bound(net, integer=True, reservation_cuts=False)
    assert b_int.value <= best + 1e-9
    assert b_int.kind.startswith("loss-flow")


@pytest.mark.parametrize("name,make,budget", CASES, ids=[c[0] for c in CASES])
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_sizer_plan_is_least_cost_by_exhaustive_search(name, make, budget):
    # The plan's cost equals the least cost of the exhaustive search above under the
    # fixed-point model, and lies at or above the bound the sizer reports.
    from netdim import dimension

    net = make()
    plan = dimension(net)
    assert plan.evaluation.all_met
    assert plan.cost == pytest.approx(least_cost(net, budget), abs=1e-9)
    assert plan.lower_bound <= plan.cost + 1e-9


def without(net, dropped):
    """The network with every route over a link in ``dropped`` taken away (what the sizer
    does to a link it leaves unbuilt); None when a demand is left without a route."""
    from dataclasses import replace

    demands = []
    for d in net.demands:
        routes = tuple(r for r in d.routes if not set(r.links) & set(dropped))
        if not routes:
            return None
        demands.append(replace(d, routes=routes))
    return replace(net, demands=tuple(demands))


def least_cost_with_drops(net, budget):
    """Least cost over every choice of unbuilt links with a fixed cost (their routes taken
    away) and every plan of the rest costing at most ``budget``, fixed costs included."""
    droppable = [j for j, link in enumerate(net.links) if link.fixed_cost > 0]
    best = np.inf
    for n in range(len(droppable) + 1):
        for dropped in itertools.combinations(droppable, n):
            sub = without(net, dropped)
            if sub is None:
                continue
            links = [j for j in range(len(net.links)) if j not in dropped]
            ranges = [range(int(budget // net.links[j].cost_per_module) + 1) for j in links]
            for units in itertools.product(*ranges):
                caps = np.zeros(len(net.links), int)
                caps[links] = units
                cost = sum(link.cost_per_module * c + (link.fixed_cost if c > 0 else 0.0)
                           for link, c in zip(net.links, caps, strict=True))
                if cost < best and cost <= budget and feasible(sub, caps):
                    best = cost
    assert np.isfinite(best), "no plan within the budget meets the targets"
    return float(best)


def test_bound_below_least_cost_when_a_link_may_be_left_unbuilt():
    # Left unbuilt, link X takes demand d's first route away: d's second route, over Y,
    # becomes its first choice and escapes Y's reservation. A bound that kept d's traffic on
    # Y in the overflow stream asked for about 21 units; the least cost is 18 (checked here
    # by exhaustive search over both choices for X).
    links = [Link("X", ("A", "B"), cost_per_module=10.0, fixed_cost=5.0, max_capacity=30),
             Link("Y", ("A", "B"), cost_per_module=1.0, max_capacity=40)]
    demands = [Demand("d", ("A", "B"), 5.0, routes=(R(0), R(1))),
               Demand("e", ("A", "B"), 5.0, routes=(R(1),))]
    net = network(links, demands, reservation=3)
    best = least_cost_with_drops(net, 22)
    assert best == pytest.approx(18.0)
    for integer in (False, True):
        b = loss_flow_bound(net, integer=integer)
        assert b.kind.startswith("loss-flow")
        assert b.value <= best + 1e-9
    plan = dimension(net)
    assert plan.cost == pytest.approx(best)
    assert plan.lower_bound <= best + 1e-9


def mesh5():
    # A 5-site full mesh as in the sizing benchmark: direct routes, 2-hop alternatives.
    rng = np.random.default_rng(3)
    n = 5
    sites = [f"S{i}" for i in range(n)]
    pairs = list(itertools.combinations(range(n), 2))
    pos = {p: k for k, p in enumerate(pairs)}
    links = [Link(f"S{i}-S{j}", (sites[i], sites[j]), cost_per_module=1.0 + rng.random())
             for i, j in pairs]
    demands = []
    for i, j in pairs:
        vias = [m for m in range(n) if m not in (i, j)][:2]
        alts = tuple(R(pos[tuple(sorted((i, m)))], pos[tuple(sorted((m, j)))]) for m in vias)
        demands.append(Demand(f"{i}-{j}", (sites[i], sites[j]), float(rng.uniform(2, 10)),
                              routes=(R(pos[(i, j)]),) + alts))
    return network(links, demands, reservation=2)


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_bound_tighter_than_lp_bound_on_a_mesh():
    # a performance claim (validity is the exhaustive search above)
    net = mesh5()
    assert loss_flow_bound(net).value > 1.03 * lp_bound(net)


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_not_applicable_returns_none():
    # fixed routing, multi-rate demands, a demand without routes: no loss-flow bound (the
    # sizer then uses the carried-load bound)
    fixed = network(triangle().links, triangle().demands, policy="fixed")
    assert loss_flow_bound(fixed) is None
    from dataclasses import replace

    net = triangle()
    wide = replace(net, demands=(replace(net.demands[0], bandwidth=2),) + net.demands[1:])
    assert loss_flow_bound(wide) is None
    lost = replace(net, demands=net.demands + (Demand("x", ("A", "C"), 1.0, routes=()),))
    assert loss_flow_bound(lost) is None
    plan = dimension(wide)
    assert plan.details["bound"].startswith(("MILP: capacity >= carried load", "least cost"))


@pytest.mark.parametrize("kw,word", [({"solver": "glpk"}, "solver: unknown solver 'glpk'"),
                                     ({"max_rounds": 0}, "max_rounds: must be an integer")])
def test_bad_options(kw, word):
    with pytest.raises(ValueError, match=word):
        loss_flow_bound(triangle(), **kw)


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_hull_slopes_raise_the_relaxation():
    # the slopes from the grid's lower hull give a higher LP value than the load derivative
    # alone (their validity is the exhaustive-search test above)
    net = mesh5()
    plain = loss_flow_bound(net, hull_slopes=False).value
    assert loss_flow_bound(net).value > 1.01 * plain


@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_one_input_gives_one_bound():
    # the work is bounded by rounds and nodes, not by time: repeated runs agree exactly,
    # and a longer safety stop changes nothing when it does not fire
    for net in (triangle(), square()):
        runs = [loss_flow_bound(net, integer=True, time_limit=t) for t in (60.0, 600.0, None)]
        assert len({b.value for b in runs}) == 1 and len({b.kind for b in runs}) == 1
        assert not any(b.stopped_by_time for b in runs)


@pytest.mark.slow  # about a second: out of the quick round (issue 13)
def test_sizer_reports_the_loss_flow_bound_under_alternate_routing():
    # The plan's lower bound is the loss-flow bound (or, once every cheaper plan is listed
    # and evaluated, the least cost), at most the least cost by exhaustive search (above)
    # and at least the LP bound; the conservative model uses it too (its
    # blocking is above every fixed-point solution, so its plans are fixed-point plans).
    from netdim.dimension import dimension

    net = triangle()
    best = least_cost(net, 16)
    lp = lp_bound(net)
    for model in ("fixed-point", "conservative"):
        plan = dimension(net, model=model)
        kind = plan.details["bound"]
        assert kind.startswith(("loss-flow", "least cost"))
        assert lp * (1 - 1e-5) <= plan.lower_bound <= best + 1e-9
        if kind.startswith("least cost"):
            # the cheaper plans were listed and evaluated: the bound is the least cost
            assert plan.lower_bound == pytest.approx(best)
        assert plan.cost >= best - 1e-9
        assert plan.gap == pytest.approx((plan.cost - plan.lower_bound) / plan.cost)


def test_bound_time_must_be_positive(tmp_path, capsys):
    from netdim.cli import main
    from netdim.dimension import dimension

    with pytest.raises(ValueError, match=r"bound_time: must be > 0 seconds, got 0"):
        dimension(triangle(), bound_time=0)
    p = tmp_path / "tri.yaml"
    from netdim.netfile import write_network

    write_network(triangle(), p)
    assert main(["size", str(p), "--bound-time", "-1", "--quiet"]) == 2
    assert "--bound-time: must be > 0 seconds, got -1.0" in capsys.readouterr().err
