"""Tests of netdim.daily_loads (networks over a day) against outside references.

References used here, each computed in this file:
* the modified offered load of one link has a closed form for piecewise-constant rates,
  ``m(t) = m0 e^{-t/h} + lambda h (1 - e^{-t/h})`` (the infinite-server mean; Jagerman 1975),
  its blocking ``E(m(t), C)`` integrated by scipy.integrate.quad;
* the carried-load closure of one link solved as one scalar ODE with scipy's brentq
  (Jennings and Massey 1997);
* with constant rates both must settle on the reduced-load (Erlang) fixed point (Kelly 1986),
  solved here by plain repeated substitution, with trunk reservation as the birth-death
  chain of the link written out;
* the exact transient chain of one park (checked in test_transient.py against expm).
Erlang B is the recursion B(k) = a B / (k + a B) (Erlang 1917).
"""

from __future__ import annotations

import doctest
import json
import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from netdim import _day_closures, daily_loads
from netdim.daily_loads import (
    day_reduced_load,
    day_single_resource,
    offered_for_carried,
)
from netdim.errors import ConvergenceError
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.transient import day_loss

WAVE = [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]


def erl(a, c):
    # Erlang B recursion (Erlang 1917; any handbook)
    b = 1.0
    for k in range(1, c + 1):
        b = a * b / (k + a * b)
    return b


def park(capacity, holding=2.0, demands=1):
    ds = tuple(Demand(f"D{i}", ("G", "P"), 1.0, holding, routes=(Route((0,), (holding,)),))
               for i in range(demands))
    return Network("park", (Site("G"), Site("P")), (Link("P", ("G", "P"), capacity),), ds)


def tandem(c1=10, c2=12):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), c1), Link("BC", ("B", "C"), c2))
    dem = (Demand("AB", ("A", "B"), 6.0, 1.0, routes=(Route((0,), (1.0,)),)),
           Demand("BC", ("B", "C"), 7.0, 2.0, routes=(Route((1,), (2.0,)),)),
           # a transit call holds AB for 1.5 h and BC for 0.5 h (per-link holding times)
           Demand("AC", ("A", "C"), 3.0, 1.5, routes=(Route((0, 1), (1.5, 0.5)),)))
    return Network("tandem", sites, links, dem)


def triangle(reservation=1):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), 10), Link("BC", ("B", "C"), 10), Link("AC", ("A", "C"), 10))
    two = (1.0, 1.0)
    dem = (Demand("AB", ("A", "B"), 7.0, 1.0, routes=(Route((0,), (1.0,)), Route((2, 1), two))),
           Demand("BC", ("B", "C"), 6.0, 1.0, routes=(Route((1,), (1.0,)), Route((0, 2), two))),
           Demand("AC", ("A", "C"), 8.0, 1.0, routes=(Route((2,), (1.0,)), Route((0, 1), two))))
    return Network("tri", sites, links, dem,
                   routing=Routing(policy="alternate", reservation=reservation))


# --------------------------------------------------------------------------------------------
# one link: the two closures against independent solutions


def test_mol_on_one_link_matches_the_closed_form():
    rates, hours, h, c = [12.0, 30.0, 4.0], [1.0, 0.5, 2.0], 1.5, 20
    r = day_reduced_load(park(c, h), [rates], period=hours, method="mol", rtol=1e-10,
                         start=[3.0])
    m0 = 3.0
    for p, (lam, dt) in enumerate(zip(rates, hours, strict=True)):
        def m(t, m0=m0, lam=lam):
            return m0 * math.exp(-t / h) + lam * h * (1 - math.exp(-t / h))
        want = integrate.quad(lambda t, m=m: erl(m(t), c), 0, dt, epsabs=1e-13)[0] / dt
        assert r.blocking[0, p] == pytest.approx(want, rel=1e-6)
        m0 = m(dt)
    assert r.offered_load[0, -1] == pytest.approx(m0, rel=1e-7)


def test_fpa_on_one_link_matches_a_scalar_solution():
    c, h = 70, 2.0

    def offered(q):
        if q <= 0:
            return 0.0
        return optimize.brentq(lambda a: a * (1 - erl(a, c)) - q, q, c * q / (c - q) + 1e-9,
                               xtol=1e-13, rtol=1e-14)

    y = np.zeros(2)
    want = []
    for lam in WAVE:
        def f(t, y, lam=lam):
            b = erl(offered(y[0]), c)
            return [lam * (1 - b) - y[0] / h, b]
        y[1] = 0.0
        y = integrate.solve_ivp(f, (0, 1), y, rtol=1e-10, atol=1e-12).y[:, -1].copy()
        want.append(y[1])
    r = day_reduced_load(park(c), [WAVE], rtol=1e-10)
    np.testing.assert_allclose(r.blocking[0], want, rtol=1e-5, atol=1e-10)
    # the closure's mean occupancy is its carried load
    assert r.occupancy_mean[0, -1] == pytest.approx(y[0], rel=1e-5)


@pytest.mark.parametrize("servers", [70, 76])
def test_default_method_within_15_percent_of_the_exact_park(servers):
    # issue 20 goal: the network method within 15 % of the exact chain on a single park,
    # for the lost fraction and the worst period, at 70 and 76 spaces
    exact = day_loss(WAVE, servers, 2.0)
    r = day_reduced_load(park(servers), [WAVE])
    assert r.method == daily_loads.DEFAULT_METHOD
    assert r.peak_period[0] == exact.peak_period
    assert r.peak_blocking[0] / exact.peak_blocking == pytest.approx(1.0, abs=0.15)
    assert r.lost_fraction[0] / exact.lost_fraction == pytest.approx(1.0, abs=0.15)


# --------------------------------------------------------------------------------------------
# constant rates: the reduced-load fixed point


def static_fixed_point_fixed_routing(net):
    """Reduced-load fixed point, fixed routing, per-link holding times (Kelly 1986)."""
    caps = [link.capacity for link in net.links]
    b = np.zeros(len(caps))
    for _ in range(2000):
        load = np.zeros(len(caps))
        for d in net.demands:
            r = d.routes[0]
            for j, hj in zip(r.links, r.holdings, strict=True):
                other = np.prod([1 - b[i] for i in r.links if i != j])
                load[j] += d.rate * hj * other
        b = np.array([erl(a, c) for a, c in zip(load, caps, strict=True)])
    return np.array([1 - np.prod([1 - b[i] for i in d.routes[0].links]) for d in net.demands])


def reservation_blocking(first, over, c, r):
    """Birth-death chain of a link with trunk reservation: P(full), P(>= c - r busy)."""
    w = [1.0]
    for k in range(1, c + 1):
        lam = first + over if k - 1 < c - r else first
        w.append(w[-1] * lam / k)
    w = np.array(w) / sum(w)
    return w[c], w[c - r:].sum()


def static_fixed_point_alternate(net):
    """Reduced-load fixed point with alternate routes and trunk reservation."""
    caps = [link.capacity for link in net.links]
    res = net.routing.reservation
    b1, b2 = np.zeros(len(caps)), np.zeros(len(caps))
    for _ in range(3000):
        f, o = np.zeros(len(caps)), np.zeros(len(caps))
        for d in net.demands:
            reach = 1.0
            for k, r in enumerate(d.routes):
                bs = b1 if k == 0 else b2
                for j in r.links:
                    other = np.prod([1 - bs[i] for i in r.links if i != j])
                    (f if k == 0 else o)[j] += d.rate * d.holding * reach * other
                reach *= 1 - np.prod([1 - bs[i] for i in r.links])
        pairs = [reservation_blocking(f[j], o[j], caps[j], res) for j in range(len(caps))]
        b1 = 0.5 * b1 + 0.5 * np.array([p[0] for p in pairs])
        b2 = 0.5 * b2 + 0.5 * np.array([p[1] for p in pairs])
    out = []
    for d in net.demands:
        loss = 1.0
        for k, r in enumerate(d.routes):
            bs = b1 if k == 0 else b2
            loss *= 1 - np.prod([1 - bs[i] for i in r.links])
        out.append(loss)
    return np.array(out)


@pytest.mark.parametrize("method", daily_loads.METHODS)
def test_constant_rates_settle_on_the_reduced_load_fixed_point(method):
    net = tandem()
    want = static_fixed_point_fixed_routing(net)
    rates = np.array([[d.rate] * 4 for d in net.demands])
    r = day_reduced_load(net, rates, period=3.0, cyclic=True, method=method, rtol=1e-10)
    np.testing.assert_allclose(r.blocking[:, -1], want, rtol=1e-6)
    np.testing.assert_allclose(r.lost_fraction, want, rtol=1e-6)
    assert r.days >= 1 and r.residual < 1e-6


@pytest.mark.parametrize("method", daily_loads.METHODS)
@pytest.mark.parametrize("reservation", [0, 1])
def test_alternate_routing_settles_on_the_fixed_point_with_reservation(method, reservation):
    net = triangle(reservation)
    want = static_fixed_point_alternate(net)
    rates = np.array([[d.rate] * 4 for d in net.demands])
    r = day_reduced_load(net, rates, period=3.0, cyclic=True, method=method, rtol=1e-10)
    np.testing.assert_allclose(r.blocking[:, -1], want, rtol=1e-5)


@pytest.mark.parametrize("method", daily_loads.METHODS)
def test_alternate_routes_closed_by_reservation_are_fixed_routing(method):
    # a reservation of the whole capacity keeps every overflow call off: the day must be
    # that of the same network routed over first routes only (the model's own identity)
    net = triangle(reservation=10)
    rates = np.array([[1, 7, 12, 3.0], [6.0] * 4, [2, 8, 14, 1.0]])
    alt = day_reduced_load(net, rates, method=method)
    fixed = Network(net.name, net.sites, net.links,
                    tuple(Demand(d.id, d.between, d.traffic, d.holding, routes=d.routes[:1])
                          for d in net.demands))
    one = day_reduced_load(fixed, rates, method=method)
    np.testing.assert_allclose(alt.blocking, one.blocking, rtol=1e-6, atol=1e-12)
    np.testing.assert_allclose(alt.occupancy_mean, one.occupancy_mean, rtol=1e-6, atol=1e-9)


def test_the_reservation_law_matched_to_a_carried_total():
    # the factor s with mean occupancy of the chain at (s f, s o) equal to the target,
    # against the birth-death chain written out here
    caps, res = np.array([12, 30, 8]), np.array([2, 4, 0])
    f, o = np.array([5.0, 20.0, 1.0]), np.array([3.0, 9.0, 0.5])
    target = np.array([9.0, 27.5, 2.0])
    s, b1, b2 = _day_closures.scale_to_occupancy(f, o, caps, caps - res, target)
    for j in range(3):
        w = [1.0]
        for k in range(1, caps[j] + 1):
            lam = s[j] * (f[j] + o[j] if k - 1 < caps[j] - res[j] else f[j])
            w.append(w[-1] * lam / k)
        w = np.array(w) / sum(w)
        assert w @ np.arange(caps[j] + 1) == pytest.approx(target[j], rel=1e-10)
        assert b1[j] == pytest.approx(w[-1], rel=1e-9)
        assert b2[j] == pytest.approx(w[caps[j] - res[j]:].sum(), rel=1e-9)


# --------------------------------------------------------------------------------------------
# the exact single resource in the same form


def test_single_resource_pools_the_demands():
    rates = np.array([[2, 6, 20, 30, 25, 20, 14, 10, 6, 3, 1, 0],
                      [3, 4, 10, 15, 15, 10, 6, 5, 4, 2, 1, 0]], float)
    r = day_single_resource(park(70, demands=2), rates)
    exact = day_loss(WAVE, 70, 2.0)
    np.testing.assert_allclose(r.blocking, np.tile(exact.blocking, (2, 1)), atol=1e-15)
    assert r.peak_blocking.tolist() == [exact.peak_blocking] * 2
    assert r.method == "exact"
    # the offered load is the infinite-server mean, closed form at the period ends
    m, ends = 0.0, []
    for lam in WAVE:
        m = m * math.exp(-0.5) + lam * 2.0 * (1 - math.exp(-0.5))
        ends.append(m)
    np.testing.assert_allclose(r.offered_load[0, 4::4], ends, rtol=1e-12)


def test_single_resource_cyclic_offered_load_is_periodic():
    r = day_single_resource(park(60), [WAVE], cyclic=True)
    assert r.offered_load[0, 0] == pytest.approx(r.offered_load[0, -1], rel=1e-12)


# --------------------------------------------------------------------------------------------
# details


def test_offered_for_carried_inverts_the_carried_traffic():
    a = np.array([0.0, 0.3, 5.0, 60.0, 90.0, 400.0, 3000.0])
    n = np.array([5, 5, 5, 70, 70, 70, 70])
    carried = a * (1 - np.array([erl(x, int(c)) for x, c in zip(a, n, strict=True)]))
    got = offered_for_carried(carried, n)
    np.testing.assert_allclose(got, a, rtol=1e-9)
    # at capacity the answer is finite (just below it) and huge
    assert 1e9 < offered_for_carried([70.0], [70])[0] < np.inf
    assert offered_for_carried([0.0, 2.0], [3, 0]).tolist() == [0.0, 0.0]


def test_occupancy_laws_at_constant_demand():
    # settled, the FPA link law is the truncated Poisson law of the link's offered load
    r = day_reduced_load(park(20, 1.0), [[15.0] * 6], cyclic=True, quantile=0.9)
    a = 15.0
    law = stats.poisson.pmf(np.arange(21), a)
    law /= law.sum()
    assert r.occupancy_quantile[0, -1] == int(np.searchsorted(np.cumsum(law), 0.9))
    assert r.occupancy_mean[0, -1] == pytest.approx(law @ np.arange(21), rel=1e-7)
    assert r.full_probability[0, -1] == pytest.approx(erl(a, 20), rel=1e-7)
    assert r.offered_load[0, -1] == pytest.approx(a, rel=1e-7)


def test_zero_capacity_and_idle_demands():
    net = tandem(c1=0)
    rates = np.array([[6.0, 6.0], [0.0, 0.0], [2.0, 2.0]])
    r = day_reduced_load(net, rates)
    np.testing.assert_allclose(r.blocking[[0, 2]], 1.0, rtol=1e-12)
    assert r.lost_fraction[1] == 0.0 and r.blocking[1].max() == 0.0


def test_to_dict_is_json():
    d = json.loads(json.dumps(day_reduced_load(tandem(), np.ones((3, 2))).to_dict()))
    rec = d["demands"][2]
    for key in ("peak_blocking", "peak_period", "lost_fraction", "blocking_by_period"):
        assert key in rec
    assert d["links"][0]["occupancy"]["quantile_level"] == 0.95


def test_examples_in_docstrings():
    result = doctest.testmod(daily_loads)
    assert result.attempted >= 1 and result.failed == 0


# --------------------------------------------------------------------------------------------
# bad input


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (dict(rates=np.ones((2, 3))), r"rates: expected an array of 3 demands x periods"),
        (dict(rates=[[1.0], [2.0], [-1.0]]), r"rates: demand 'AC', period 0: must be a finite"),
        (dict(capacities=[1, 2, 3]), r"capacities: expected 2 values"),
        (dict(capacities=[1.5, 2]), r"capacities: link 'AB': must be a whole number >= 0"),
        (dict(method="exact"), r"method: unknown method 'exact'; choose one of fpa, mol"),
        (dict(start=[1.0, 2.0]), r"start: expected 3 values \(calls in progress per demand\)"),
        (dict(start=[-1.0, 0, 0]), r"start: demand 'AB': must be >= 0"),
        (dict(start=[8.0, 0, 5.0]), r"start: link 'AB': 13 calls in progress exceed its capa"),
        (dict(start=[0, 0, 0], cyclic=True), r"start: a cyclic day has no start occupancy"),
        (dict(period=[1.0]), r"period: expected one length or 2"),
        (dict(steps_per_period=0), r"steps_per_period: must be a whole number >= 1"),
        (dict(quantile=0.0), r"quantile: must lie in \(0, 1\)"),
        (dict(rtol=0.5), r"rtol: must lie in \(0, 0.01\)"),
    ],
)
def test_bad_arguments(kwargs, message):
    args = dict(rates=np.ones((3, 2)))
    args.update(kwargs)
    with pytest.raises(ValueError, match=message):
        day_reduced_load(tandem(), args.pop("rates"), **args)


def test_networks_the_methods_do_not_take():
    net = tandem()
    multi = Network(net.name, net.sites, net.links,
                    (Demand("W", ("A", "B"), 1.0, bandwidth=2, routes=(Route((0,), (1.0,)),)),))
    with pytest.raises(ValueError, match=r"demand 'W': bandwidth 2: the day methods take single"):
        day_reduced_load(multi, [[1.0]])
    odd = Network(net.name, net.sites, net.links, net.demands, routing=Routing(policy="random"))
    with pytest.raises(ValueError, match=r"routing policy: unknown policy 'random'"):
        day_reduced_load(odd, np.ones((3, 1)))
    with pytest.raises(ValueError, match=r"exact day: the network has 2 links"):
        day_single_resource(net, np.ones((3, 1)))
    mixed = Network("p", park(5).sites, park(5).links,
                    park(5, 1.0).demands + park(5, 2.0).demands[:1])
    with pytest.raises(ValueError, match=r"exact day: the demands hold the link for 2 different"):
        day_single_resource(mixed, np.ones((2, 1)))


@pytest.mark.parametrize("method", daily_loads.METHODS)
def test_a_link_shut_to_overflow_and_offered_only_overflow(method):
    # the AC link keeps its whole capacity back and nobody routes first over it: the
    # demand whose alternate route crosses it must see that route blocked all day
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), 3), Link("BC", ("B", "C"), 10),
             Link("AC", ("A", "C"), 10, reservation=10))
    dem = (Demand("AB", ("A", "B"), 1.0, 1.0,
                  routes=(Route((0,), (1.0,)), Route((2, 1), (1.0, 1.0)))),)
    net = Network("shut", sites, links, dem, routing=Routing(policy="alternate"))
    r = day_reduced_load(net, [[6.0, 6.0]], method=method)
    # blocking is that of AB alone: Erlang B over the day of a 3-unit link
    alone = day_reduced_load(park(3, 1.0), [[6.0, 6.0]], method=method)
    np.testing.assert_allclose(r.blocking, alone.blocking, rtol=1e-6)


def test_single_resource_refusals():
    net = park(5, demands=2)
    wide = Network("p", net.sites, net.links, (
        Demand("W", ("G", "P"), 1.0, 1.0, bandwidth=2, routes=(Route((0,), (1.0,)),)),))
    with pytest.raises(ValueError, match=r"demand 'W': bandwidth 2: single-rate only"):
        day_single_resource(wide, [[1.0]])
    lost = Network("p", net.sites, net.links, (Demand("X", ("G", "P"), 1.0),))
    with pytest.raises(ValueError, match=r"demand 'X': has no route over the link"):
        day_single_resource(lost, [[1.0]])
    with pytest.raises(ValueError, match=r"start: expected a whole number >= 0 of calls per"):
        day_single_resource(net, np.ones((2, 1)), start=[1.5, 0])


def test_zero_holding_time_is_refused():
    net = Network("p", park(5).sites, park(5).links,
                  (Demand("Z", ("G", "P"), 1.0, 1.0, routes=(Route((0,), (0.0,)),)),))
    with pytest.raises(ValueError, match=r"holding: every holding time must be > 0 hours"):
        day_reduced_load(net, [[1.0]])


def test_solver_and_closure_failures_are_reported(monkeypatch):
    with pytest.raises(ConvergenceError, match=r"offered load for a carried load: not solved"):
        offered_for_carried([60.0], [70], max_iter=1)
    with pytest.raises(ConvergenceError, match=r"carried-load closure: the link loads were not"):
        _day_closures.scale_to_occupancy(np.array([5.0]), np.array([3.0]), np.array([12]),
                                         np.array([10]), np.array([9.0]), max_iter=1)

    class Failed:
        success = False
        message = "too much work"

    monkeypatch.setattr(daily_loads, "solve_ivp", lambda *a, **k: Failed())
    with pytest.raises(ConvergenceError, match=r"day equations: the ODE solver stopped: too"):
        day_reduced_load(tandem(), np.ones((3, 2)))


def test_cyclic_day_that_does_not_settle():
    # holding time far above the day: one day is not enough to forget the start
    with pytest.raises(ConvergenceError, match=r"cyclic day: the state still changed by"):
        day_reduced_load(park(10, 50.0), [[3.0, 1.0]], cyclic=True, max_days=1)
