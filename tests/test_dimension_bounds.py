"""Lower bounds of the sizer (netdim.dimension.bounds) and the solver seam under them.

References, all outside netdim's sizer:

- the least cost of tiny networks by exhaustive search written here, over every choice of
  links to build and every module count, each plan checked with the reduced-load fixed point
  of tests/test_dimension_small.py (Kelly 1986 repeated substitution, Erlang B by its
  recursion, independent of netdim);
- Erlang B by its recursion (the ``erlang_b_ref`` fixture; Jagerman 1974) for networks
  whose links are independent, so that the least cost is a sum of single-link sizes;
- weak duality: a MILP's proven lower bound is at most its objective, and within its
  relative gap of it when solved (common practice, no source); two solvers (HiGHS, CBC)
  solving one model agree within that gap.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from test_dimension_small import fixed_point  # tests/ is on sys.path under pytest

from netdim.dimension import (
    SOLVERS,
    SizingChoices,
    carried_load_bound,
    dimension,
    loss_flow_bound,
    thinned_load_bound,
)
from netdim.dimension.choices import LossTable, first_route_loads
from netdim.dimension.net_value import objective_bound
from netdim.dimension.secant_milp import solve_secant_milp
from netdim.model import Demand, Link, Network, Route, Routing, Site


def R(*links):
    return Route(tuple(links), (1.0,) * len(links))


def star(spokes=40):
    """Spokes of 30-circuit modules (cost 100) around a hub link of 1-circuit modules
    (cost 1): each spoke carries 10 E alone, the hub link 0.8 E. Invented demo data."""
    sites = [Site("HUB"), Site("FAR")] + [Site(f"S{i}") for i in range(spokes)]
    links = [Link("HUB-FAR", ("HUB", "FAR"), cost_per_module=1.0)]
    links += [Link(f"S{i}-HUB", (f"S{i}", "HUB"), module=30, cost_per_module=100.0)
              for i in range(spokes)]
    demands = [Demand(f"S{i}", (f"S{i}", "HUB"), 10.0, routes=(R(i + 1),))
               for i in range(spokes)]
    demands.append(Demand("FAR", ("HUB", "FAR"), 0.8, routes=(R(0),)))
    return Network("star", tuple(sites), tuple(links), tuple(demands))


def single_link_least_cost(net, erlang_b_ref):
    """Least cost of a network whose demands each use one link of their own: each link's
    fewest modules alone (Erlang B recursion)."""
    total = 0.0
    for d in net.demands:
        link = net.links[d.routes[0].links[0]]
        k = 0
        while erlang_b_ref(d.traffic, link.module * k) > d.target:
            k += 1
        total += link.cost_per_module * k
    return total


# -- the constant HiGHS never saw (issue 12) --------------------------------------------------
def test_star_bound_keeps_the_links_the_milp_fixes(erlang_b_ref):
    # The MILP fixes every spoke at one module (its window has one point), so 4000 of the
    # cost is a constant of the objective; HiGHS reported its dual bound without it.
    net = star()
    least = single_link_least_cost(net, erlang_b_ref)
    assert least == pytest.approx(4004.0)  # 40 modules of 100, and 4 circuits: E(0.8, 4) < 1 %
    for solver in SOLVERS:
        plan = dimension(net, solver=solver)
        assert plan.cost == pytest.approx(least)
        assert (1 - 1e-4) * least <= plan.lower_bound <= least + 1e-9
        assert plan.gap <= 1e-4


@pytest.mark.parametrize("spokes", [3, 40])
def test_secant_milp_bound_against_cbc_and_its_own_objective(spokes):
    net = star(spokes)
    choices = SizingChoices.from_network(net)
    table = LossTable(first_route_loads(net), choices.installed, choices.module)
    routes = [d.routes[0].links for d in net.demands]
    budgets = -np.log1p(-np.array([d.target for d in net.demands]))
    res = {s: solve_secant_milp(choices, table, routes, budgets, solver=s, mip_gap=1e-4)
           for s in SOLVERS}
    for r in res.values():
        assert r.status == "optimal"
        assert r.objective * (1 - 1e-4) - 1e-9 <= r.bound <= r.objective + 1e-9
    assert res["highs"].objective == pytest.approx(res["cbc"].objective)
    assert res["highs"].bound == pytest.approx(res["cbc"].bound, rel=2e-4)


# -- fixed routing with links that may be left unbuilt ---------------------------------------
def droppable_network(seed):
    """Four sites; two direct links with a fixed cost the sizer may leave out (their
    demands then take a two-hop route); modules of 2 and 3 circuits. Invented demo data."""
    rng = np.random.default_rng(seed)
    links = [Link("AB", ("A", "B"), module=3, cost_per_module=5.0),
             Link("BC", ("B", "C"), module=3, cost_per_module=4.0),
             Link("CD", ("C", "D"), module=2, cost_per_module=3.0),
             Link("AC", ("A", "C"), module=3, cost_per_module=6.0,
                  fixed_cost=float(rng.uniform(1, 12))),
             Link("BD", ("B", "D"), module=2, cost_per_module=5.0,
                  fixed_cost=float(rng.uniform(1, 12)))]
    a = rng.uniform(0.3, 2.0, 5)
    demands = [Demand("AC", ("A", "C"), a[0], target=0.05, routes=(R(3), R(0, 1))),
               Demand("BD", ("B", "D"), a[1], target=0.05, routes=(R(4), R(1, 2))),
               Demand("AB", ("A", "B"), a[2], target=0.03, routes=(R(0),)),
               Demand("CD", ("C", "D"), a[3], target=0.03, routes=(R(2),)),
               Demand("AD", ("A", "D"), a[4], target=0.08, routes=(R(3, 2), R(0, 1, 2)))]
    sites = tuple(Site(s) for s in "ABCD")
    return Network("drop", sites, tuple(links), tuple(demands))


def least_cost_with_build_choices(net, budget, conservative=False):
    """Least cost over every choice of the links with a fixed cost to build (a demand takes
    its first route over built links) and every module count costing at most ``budget``,
    each plan checked with the independent fixed point; fixed costs paid by links built."""
    optional = [j for j, link in enumerate(net.links) if link.fixed_cost > 0]
    best = math.inf
    for n in range(len(optional) + 1):
        for built in itertools.combinations(optional, n):
            unbuilt = set(optional) - set(built)
            routes = []
            for d in net.demands:
                r = next((r for r in d.routes if not unbuilt & set(r.links)), None)
                routes.append(r)
            if any(r is None for r in routes):
                continue
            fixed = sum(net.links[j].fixed_cost for j in built)
            ranges = []
            for j, link in enumerate(net.links):
                if j in unbuilt:
                    ranges.append(range(1))
                else:
                    lo = 1 if j in built else 0
                    ranges.append(range(lo, int((budget - fixed) // link.cost_per_module) + 1))
            demands = [(d.traffic, r.links) for d, r in zip(net.demands, routes, strict=True)]
            for ks in itertools.product(*ranges):
                cost = fixed + sum(link.cost_per_module * k
                                   for link, k in zip(net.links, ks, strict=True))
                if cost >= best or cost > budget:
                    continue
                caps = tuple(link.module * k for link, k in zip(net.links, ks, strict=True))
                if any(caps[j] == 0 for _, links in demands for j in links):
                    continue
                blk = fixed_point(caps, demands, conservative)
                if all(b <= d.target for b, d in zip(blk, net.demands, strict=True)):
                    best = cost
    assert math.isfinite(best), "no plan within the budget meets the targets"
    return best


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("model", ["fixed-point", "conservative"])
def test_bounds_with_build_choices_below_least_cost_by_exhaustive_search(seed, model):
    net = droppable_network(seed)
    choices = SizingChoices.from_network(net)
    plan = dimension(net, model=model)
    best = least_cost_with_build_choices(net, plan.cost, model == "conservative")
    thinned = thinned_load_bound(net, choices, model=model)
    carried = carried_load_bound(net, choices, all_routes=True)
    assert thinned is not None and "choices of links to build" in thinned.kind
    assert thinned.value <= best + 1e-9
    assert carried.value <= best + 1e-9
    assert plan.lower_bound <= best + 1e-9
    assert plan.cost == pytest.approx(best)
    # whole modules and fixed costs count: above the LP "capacity >= carried load"
    lp = carried_load_bound(net, choices, all_routes=True, integer=False)
    assert max(thinned.value, carried.value) > lp.value


def seven_sites():
    """Six exchanges around a tandem, 30-circuit modules, fixed costs, three direct links
    the sizer may leave out (routes: direct first, then through the tandem). Invented."""
    names = ["ALD", "BEX", "COR", "DEL", "EMB", "FEN"]
    sites = (Site("TAN"),) + tuple(Site(s) for s in names)
    cost = dict(zip(names, (40, 38, 45, 42, 36, 44), strict=True))
    links = [Link(f"{s}-TAN", (s, "TAN"), module=30, cost_per_module=cost[s], fixed_cost=25)
             for s in names]
    direct = {("ALD", "BEX"): 30, ("COR", "DEL"): 32, ("EMB", "FEN"): 28}
    links += [Link(f"{a}-{b}", (a, b), module=30, cost_per_module=c, fixed_cost=40)
              for (a, b), c in direct.items()]
    pos = {link.ends: j for j, link in enumerate(links)}
    rng = np.random.default_rng(7)
    demands = []
    for a, b in itertools.combinations(names, 2):
        via = R(names.index(a), names.index(b))
        routes = ((R(pos[(a, b)]), via) if (a, b) in pos else (via,))
        demands.append(Demand(f"{a}-{b}", (a, b), float(rng.uniform(0.8, 5.0)),
                              routes=routes))
    return Network("seven", sites, tuple(links), tuple(demands))


def test_seven_sites_bound_respects_whole_modules_and_fixed_costs():
    # Issue 12: with 30-circuit modules and fixed costs the bound was a small share of the
    # plan's cost (the LP counts fractions of modules and no fixed cost). Each exchange has
    # demands that only its tandem link can carry, so every plan builds all six (a module
    # and a fixed cost each); the plan that builds just those meets every target under the
    # independent fixed point, so it is a least-cost plan and the bound must equal it.
    net = seven_sites()
    plan = dimension(net)
    tandem = [j for j, link in enumerate(net.links) if link.ends[1] == "TAN"]
    floor = sum(net.links[j].cost_per_module + net.links[j].fixed_cost for j in tandem)
    caps = tuple(30 if j in tandem else 0 for j in range(len(net.links)))
    demands = [(d.traffic, d.routes[-1].links) for d in net.demands]
    assert all(b <= 0.01 for b in fixed_point(caps, demands))
    assert plan.cost == pytest.approx(floor)
    assert plan.lower_bound == pytest.approx(floor)
    lp = carried_load_bound(net, SizingChoices.from_network(net), all_routes=True,
                            integer=False)
    assert lp.value < 0.5 * floor  # what the LP alone said


# -- every solve honours the solver asked for ----------------------------------------------
@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_every_model_is_solved_by_the_solver_asked_for(monkeypatch):
    from netdim.dimension import _lp as lp

    used = []
    real = lp.make_solver

    def record(name, **kw):
        used.append(name)
        return real(name, **kw)

    monkeypatch.setattr(lp, "make_solver", record)
    alternate = Network(
        "tri", tuple(Site(s) for s in "ABC"),
        (Link("AB", ("A", "B")), Link("BC", ("B", "C"), cost_per_module=1.5),
         Link("AC", ("A", "C"), cost_per_module=2.0, fixed_cost=3.0)),
        (Demand("AB", ("A", "B"), 3.0, target=0.05, routes=(R(0), R(2, 1))),
         Demand("AC", ("A", "C"), 2.0, target=0.05, routes=(R(2), R(0, 1)))),
        routing=Routing("alternate", reservation=1))
    from dataclasses import replace

    valued = replace(droppable_network(1), demands=tuple(
        replace(d, value=2.0) for d in droppable_network(1).demands))
    for solver in SOLVERS:
        used.clear()
        dimension(droppable_network(1), solver=solver)  # secant, thinned and carried MILPs
        dimension(alternate, solver=solver)  # loss-flow LP and MILP rounds, carried MILP
        dimension(valued, solver=solver, objective="net-value")  # the net-value bound
        assert used and set(used) == {solver}
        assert len(used) >= 8


@pytest.mark.parametrize("solver", SOLVERS)
def test_each_bound_with_each_solver(solver):
    net = droppable_network(2)
    choices = SizingChoices.from_network(net)
    ref = {s: thinned_load_bound(net, choices, solver=s).value for s in SOLVERS}
    assert ref[solver] == pytest.approx(ref["highs"], rel=2e-4)
    car = carried_load_bound(net, choices, all_routes=True, solver=solver).value
    assert car == pytest.approx(carried_load_bound(net, choices, all_routes=True).value,
                                rel=1e-6)
    tri = Network("tri", tuple(Site(s) for s in "ABC"),
                  (Link("AB", ("A", "B")), Link("BC", ("B", "C"), cost_per_module=1.5),
                   Link("AC", ("A", "C"), cost_per_module=2.0)),
                  (Demand("AB", ("A", "B"), 3.0, target=0.05, routes=(R(0), R(2, 1))),
                   Demand("BC", ("B", "C"), 2.0, target=0.05, routes=(R(1), R(0, 2)))),
                  routing=Routing("alternate", reservation=1))
    lf = loss_flow_bound(tri, integer=True, solver=solver)
    assert lf.value == pytest.approx(loss_flow_bound(tri, integer=True).value, rel=1e-3)
    from dataclasses import replace

    valued = replace(net, demands=tuple(replace(d, value=2.0) for d in net.demands))
    ub, _ = objective_bound(valued, choices, solver=solver)
    assert ub == pytest.approx(objective_bound(valued, choices)[0], rel=1e-5)


# -- one input, one bound --------------------------------------------------------------------
def test_bound_does_not_depend_on_the_safety_stop_unless_it_fires():
    net = seven_sites()
    plans = [dimension(net, bound_time=t) for t in (5.0, 300.0)]
    assert plans[0].lower_bound == plans[1].lower_bound
    assert not any(p.details["bound_stopped_by_time"] for p in plans)


def test_a_safety_stop_that_fires_is_reported():
    # Allowed 10 ms, the loss-flow rounds and the listing of cheaper plans of the bundled
    # three-village network stop early: the plan must say that its bound depends on the
    # machine, and that bound must still be below the least cost the full run certifies.
    from pathlib import Path

    from netdim.netfile import read_network

    net = read_network(Path(__file__).parents[1] / "networks" / "three-villages.yaml")
    full = dimension(net)
    assert full.details["bound"].startswith("least cost")
    cut = dimension(net, bound_time=0.01)
    assert cut.details["bound_stopped_by_time"] is True
    assert any("cut short by its safety stop (0.01 s)" in w for w in cut.warnings)
    assert cut.lower_bound <= full.lower_bound + 1e-9
