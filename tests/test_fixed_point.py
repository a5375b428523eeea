"""Tests of the reduced-load (Erlang fixed-point) evaluator.

Reference values are computed inside the tests by methods independent of the code under test:
the Erlang B recursion, mpmath, product-form state enumeration of the loss network, and a
scalar fixed point written out by hand.
"""

from __future__ import annotations

import itertools
import math

import mpmath
import numpy as np
import pytest

from netdim.errors import ConvergenceError
from netdim.evaluate.fixed_point import fixed_point
from netdim.model import Demand, Link, Network, Route, Routing, Site


# -- independent references ------------------------------------------------------------------
def erlang_b_ref(a, c):
    """Erlang B by the recursion E(a, n) = a E(a, n-1) / (n + a E(a, n-1)), E(a, 0) = 1.

    Source: the standard Erlang B recursion (e.g. ITU-T E.521; common practice).
    """
    e = 1.0
    for n in range(1, c + 1):
        e = a * e / (n + a * e)
    return e


def erlang_b_mpmath(a, c):
    """Erlang B from its definition (a^c / c!) / sum_k a^k / k!, in mpmath (Erlang 1917)."""
    a = mpmath.mpf(a)
    terms = [a**k / mpmath.factorial(k) for k in range(c + 1)]
    return float(terms[-1] / mpmath.fsum(terms))


def product_form_blocking(caps, routes, traffic, bandwidths=None):
    """Exact blocking of a fixed-routing loss network by enumerating its states.

    P(n) is proportional to prod_r traffic_r^n_r / n_r! over the states that fit every link
    (Kelly 1986, Ross 1995 ch. 1). Route r is blocked in the states where one more of its calls
    does not fit (time congestion = call congestion by PASTA).
    """
    bandwidths = bandwidths or [1] * len(routes)
    maxn = [min(caps[j] // b for j in r) for r, b in zip(routes, bandwidths, strict=True)]
    total = 0.0
    blocked = np.zeros(len(routes))
    for n in itertools.product(*[range(m + 1) for m in maxn]):
        use = [0] * len(caps)
        for r, b, k in zip(routes, bandwidths, n, strict=True):
            for j in r:
                use[j] += b * k
        if any(u > c for u, c in zip(use, caps, strict=True)):
            continue
        w = 1.0
        for a, k in zip(traffic, n, strict=True):
            w *= a**k / math.factorial(k)
        total += w
        for i, (r, b) in enumerate(zip(routes, bandwidths, strict=True)):
            if any(use[j] + b > caps[j] for j in r):
                blocked[i] += w
    return blocked / total


# -- tiny network builders -------------------------------------------------------------------
def network(caps, demands, policy="fixed", reservation=0, holdings=None, bandwidths=None):
    """Network with links L0..Ln-1 and demands given as (traffic, [route link lists])."""
    n_sites = max(2, len(caps) + 1)
    sites = tuple(Site(f"S{i}") for i in range(n_sites))
    links = tuple(Link(f"L{j}", ("S0", "S1"), capacity=c) for j, c in enumerate(caps))
    ds = []
    for i, (a, routes) in enumerate(demands):
        rs = []
        for k, r in enumerate(routes):
            h = holdings[i][k] if holdings else (1.0,) * len(r)
            rs.append(Route(tuple(r), tuple(h)))
        bw = bandwidths[i] if bandwidths else 1
        ds.append(Demand(f"D{i}", ("S0", "S1"), float(a), bandwidth=bw, routes=tuple(rs)))
    return Network("test", sites, links, tuple(ds),
                   routing=Routing(policy=policy, reservation=reservation))


def mesh(K, C, a, n_alt, reservation=0):
    """Fully connected symmetric network: direct route, then up to n_alt two-link routes."""
    sites = tuple(Site(f"S{i}") for i in range(K))
    pairs = list(itertools.combinations(range(K), 2))
    idx = {p: j for j, p in enumerate(pairs)}

    def li(i, j):
        return idx[(min(i, j), max(i, j))]

    links = tuple(Link(f"L{i}-{j}", (f"S{i}", f"S{j}"), C) for i, j in pairs)
    dem = []
    for i, j in pairs:
        routes = [Route((li(i, j),), (1.0,))]
        for k in [k for k in range(K) if k not in (i, j)][:n_alt]:
            routes.append(Route((li(i, k), li(k, j)), (1.0, 1.0)))
        dem.append(Demand(f"D{i}-{j}", (f"S{i}", f"S{j}"), a, routes=tuple(routes)))
    return Network("mesh", sites, links, tuple(dem),
                   routing=Routing(policy="alternate", reservation=reservation))


# -- single link -----------------------------------------------------------------------------
@pytest.mark.parametrize("a,c", [(5.0, 10), (0.5, 1), (20.0, 30), (50.0, 40), (100.0, 120)])
def test_single_link_equals_erlang_b(a, c):
    # Source: Erlang B recursion (ITU-T E.521) and the defining formula in mpmath.
    ev = fixed_point(network([c], [(a, [[0]])]))
    assert ev.blocking[0] == pytest.approx(erlang_b_ref(a, c), rel=1e-10)
    assert ev.blocking[0] == pytest.approx(erlang_b_mpmath(a, c), rel=1e-9)
    assert ev.link_offered[0] == pytest.approx(a)
    assert ev.link_carried[0] == pytest.approx(a * (1 - erlang_b_ref(a, c)))
    assert ev.status == "converged" and ev.method == "fixed-point"


@pytest.mark.parametrize("a,c", [(1e12, 2), (1e7, 3), (3e4, 2), (50.0, 40)])
def test_carried_load_accurate_near_saturation(a, c):
    # Source: mpmath at 50 digits, carried = A (1 - E(A, C)); near saturation 1 - E is tiny
    # and must not be lost to cancellation (here 1 - E is about C / A).
    import mpmath

    with mpmath.workdps(50):
        A = mpmath.mpf(a)
        inv = mpmath.mpf(1)
        for k in range(1, c + 1):
            inv = 1 + inv * k / A
        carried = float(A * (1 - 1 / inv))
    ev = fixed_point(network([c], [(a, [[0]])]))
    assert ev.link_carried[0] == pytest.approx(carried, rel=1e-9)


# -- product form: the approximation error ---------------------------------------------------
def test_two_link_route_error_against_exact():
    # Source: exact blocking of one route over two links is E(5, 10) = 0.0184 (both links
    # always hold the same calls); the reduced-load value is about 0.033 (Kelly 1986 notes the
    # approximation overstates blocking on small networks). Exact value by enumeration.
    ev = fixed_point(network([10, 10], [(5.0, [[0, 1]])]))
    exact = product_form_blocking([10, 10], [[0, 1]], [5.0])[0]
    assert exact == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-12)
    assert exact == pytest.approx(0.0184, abs=5e-5)
    assert ev.blocking[0] == pytest.approx(0.0334, abs=5e-4)
    # the fixed point itself: B = E(5 (1 - B), 10), L = 1 - (1 - B)^2 (hand-solved scalar)
    b = 0.0
    for _ in range(200):
        b = erlang_b_ref(5.0 * (1 - b), 10)
    assert ev.blocking[0] == pytest.approx(1 - (1 - b) ** 2, rel=1e-8)


def test_small_network_against_enumeration():
    # Source: product-form enumeration (Kelly 1986). Two links of 6 circuits, a through route
    # and a local route on each; the reduced-load error on such a small network is of the
    # order of 10-40 % relative (Kelly 1986, section 5 examples; size checked here).
    caps = [6, 6]
    routes = [[0, 1], [0], [1]]
    traffic = [2.0, 2.5, 3.0]
    exact = product_form_blocking(caps, routes, traffic)
    ev = fixed_point(network(caps, [(a, [r]) for a, r in zip(traffic, routes, strict=True)]))
    rel = np.abs(ev.blocking - exact) / exact
    assert np.all(rel < 0.5)
    assert rel.max() > 1e-3  # an approximation, not the exact answer
    # single-link routes are those with the smaller relative error (the through route is
    # where the independence assumption bites)
    assert rel[0] > rel[1:].min()


def test_error_shrinks_as_network_grows():
    # Source: Kelly's limit theorem (Kelly 1986): with capacities and loads scaled by N the
    # fixed point tends to the exact blocking. Exact values by enumeration in this test.
    errors = []
    for n in (1, 3, 6):
        caps = [5 * n, 5 * n]
        routes = [[0, 1], [0], [1]]
        traffic = [2.0 * n, 2.5 * n, 2.5 * n]
        exact = product_form_blocking(caps, routes, traffic)
        ev = fixed_point(network(caps, [(a, [r]) for a, r in zip(traffic, routes, strict=True)]))
        errors.append(float(np.max(np.abs(ev.blocking - exact))))
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 0.5 * errors[0]


def test_multirate_single_link_equals_enumeration():
    # Source: product form of a multi-rate link by brute-force state enumeration (Kaufman
    # 1981, Roberts 1981; Ross 1995 ch. 2), written here without the recursion.
    caps = [12]
    traffic = [3.0, 1.5]
    bws = [1, 3]
    exact = product_form_blocking(caps, [[0], [0]], traffic, bws)
    ev = fixed_point(network(caps, [(a, [[0]]) for a in traffic], bandwidths=bws))
    assert ev.blocking == pytest.approx(exact, rel=1e-9)
    # link load in capacity units (erlangs x bandwidth)
    assert ev.link_offered[0] == pytest.approx(3.0 + 4.5)
    carried = 3.0 * (1 - exact[0]) + 4.5 * (1 - exact[1])
    assert ev.link_carried[0] == pytest.approx(carried, rel=1e-9)


def test_multirate_two_links_thinned_per_class():
    # Source: Ross 1995 ch. 5 reduced-load for multi-rate: each class thinned by its own
    # blocking on the other links. Hand-iterated scalar version with the enumerated link.
    caps = [8, 8]
    ev = fixed_point(network(caps, [(1.5, [[0, 1]]), (1.0, [[0, 1]])], bandwidths=[1, 2]))

    def link(a1, a2):
        return product_form_blocking([8, 8], [[0], [0]], [a1, a2], [1, 2])
    b = np.zeros(2)
    for _ in range(300):
        b = link(1.5 * (1 - b[0]), 1.0 * (1 - b[1]))
    assert ev.blocking == pytest.approx(1 - (1 - b) ** 2, rel=1e-7)


# -- holding times ---------------------------------------------------------------------------
def test_equal_holdings_reduce_to_single_holding():
    # Source: the load a route offers a link is traffic x (holding on the link / demand
    # holding) (common practice, no source): equal holdings change nothing.
    base = network([10, 12, 9], [(4.0, [[0, 1]]), (3.0, [[1, 2]]), (5.0, [[0, 2]])])
    demands = tuple(
        Demand(d.id, d.between, d.traffic, holding=0.25,
               routes=tuple(Route(r.links, (0.25,) * r.hops) for r in d.routes))
        for d in base.demands
    )
    from dataclasses import replace
    other = replace(base, demands=demands)
    a, b = fixed_point(base), fixed_point(other)
    assert np.array_equal(a.blocking, b.blocking)
    assert np.array_equal(a.link_offered, b.link_offered)


def test_per_link_holding_scales_that_link_load():
    # Source: hand-solved scalar fixed point with link 1 offered half the erlangs because
    # calls hold it half as long (load = arrival rate x holding; Erlang 1917).
    net = network([10, 4], [(5.0, [[0, 1]])], holdings=[[(1.0, 0.5)]])
    ev = fixed_point(net)
    b0 = b1 = 0.0
    for _ in range(500):
        b0, b1 = erlang_b_ref(5.0 * (1 - b1), 10), erlang_b_ref(2.5 * (1 - b0), 4)
    assert ev.link_blocking == pytest.approx([b0, b1], rel=1e-8)
    assert ev.blocking[0] == pytest.approx(1 - (1 - b0) * (1 - b1), rel=1e-8)


# -- alternate routing -----------------------------------------------------------------------
def test_overflow_between_parallel_links():
    # Source: reduced-load overflow formula E(A, C1) E(A E(A, C1), C2) (Girard 1990 ch. 3;
    # ITU-T E.529), which lies below the exact sequential-hunting value E(A, C1 + C2)
    # because overflow traffic is peakier than Poisson (Wilkinson 1956).
    a, c1, c2 = 8.0, 8, 4
    ev = fixed_point(network([c1, c2], [(a, [[0], [1]])], policy="alternate"))
    e1 = erlang_b_ref(a, c1)
    expected = e1 * erlang_b_ref(a * e1, c2)
    assert ev.blocking[0] == pytest.approx(expected, rel=1e-8)
    assert ev.blocking[0] < erlang_b_ref(a, c1 + c2)
    assert ev.link_offered[1] == pytest.approx(a * e1, rel=1e-8)


def test_reservation_on_overflow_link():
    # Source: birth-death chain of a link with trunk reservation (Girard 1990 ch. 4): with
    # only overflow traffic on link 1, reservation r leaves it C2 - r circuits for them.
    a, c1, c2, r = 8.0, 8, 6, 2
    ev = fixed_point(network([c1, c2], [(a, [[0], [1]])], policy="alternate", reservation=r))
    e1 = erlang_b_ref(a, c1)
    assert ev.blocking[0] == pytest.approx(e1 * erlang_b_ref(a * e1, c2 - r), rel=1e-8)
    assert ev.link_blocking_alternate[1] == pytest.approx(erlang_b_ref(a * e1, c2 - r), rel=1e-8)


def test_bistability_found_and_removed_by_reservation():
    # Source: Gibbens, Hunt and Kelly 1990 (bistability of symmetric fully connected networks
    # with alternate routing, removed by trunk reservation). Case computed here: 6 sites,
    # 30 circuits per link, 22.2 E per pair, direct route then 4 two-link routes.
    ev = fixed_point(mesh(6, 30, 22.2, 4))
    assert ev.status == "bistable"
    assert ev.alternative is not None
    assert ev.alternative.blocking.mean() > 100 * ev.blocking.mean()
    assert any("two solutions" in w for w in ev.warnings)
    assert "alternative" in ev.to_dict()
    fixed = fixed_point(mesh(6, 30, 22.2, 4, reservation=1))
    assert fixed.status == "converged" and fixed.alternative is None
    assert fixed.blocking.mean() < 1e-3


# -- solving ---------------------------------------------------------------------------------
def _line(n_links, C, lens, peak):
    """Links in a row; one demand per run of `lens` consecutive links, busiest link at peak."""
    sites = tuple(Site(f"S{i}") for i in range(n_links + 1))
    links = tuple(Link(f"L{i}", (f"S{i}", f"S{i + 1}"), C) for i in range(n_links))
    runs = [(s, n) for n in lens for s in range(n_links - n + 1)]
    per_link = max(sum(1 for s, n in runs if s <= j < s + n) for j in range(n_links))
    a = peak / per_link
    dem = tuple(Demand(f"D{s}-{n}", (f"S{s}", f"S{s + n}"), a,
                       routes=(Route(tuple(range(s, s + n)), (1.0,) * n),)) for s, n in runs)
    return Network("line", sites, links, dem)


@pytest.mark.parametrize("lens", [(4,), (6,), (4, 5, 6)])
def test_long_routes_in_overload_converge(lens):
    # Source: fixed-point equations of Kelly 1986 checked with the Erlang B recursion written
    # here; the case (routes of 4-6 links at 3x load) makes plain substitution swing between
    # two states, so only adaptive damping settles it.
    net = _line(8, 10, lens, 30.0)
    ev = fixed_point(net)
    B = ev.link_blocking
    for j in range(len(net.links)):
        rho = 0.0
        for d in net.demands:
            r = d.routes[0]
            if j in r.links:
                rho += d.traffic * np.prod([1 - B[i] for i in r.links if i != j])
        assert B[j] == pytest.approx(erlang_b_ref(rho, 10), abs=1e-8)


def test_convergence_error():
    # Source: common practice, no source (a solver must say when it stopped early).
    net = _line(8, 10, (4, 5, 6), 30.0)
    with pytest.raises(ConvergenceError, match=r"did not converge in 3 iterations.*try") as ei:
        fixed_point(net, max_iter=3)
    assert ei.value.iterations == 3 and ei.value.residual > 0


def test_bad_arguments():
    net = network([10], [(5.0, [[0]])])
    with pytest.raises(ValueError, match="tol: must be a positive number"):
        fixed_point(net, tol=0)
    with pytest.raises(ValueError, match="max_iter: must be an integer >= 1"):
        fixed_point(net, max_iter=0)
    with pytest.raises(ValueError, match="start: expected 'idle', 'full'"):
        fixed_point(net, start="warm")
    with pytest.raises(ValueError, match="start: expected link blockings of shape"):
        fixed_point(net, start=[0.1, 0.2])
    with pytest.raises(ValueError, match="capacities: expected 1 values"):
        fixed_point(net, [1, 2])
    with pytest.raises(ValueError, match="capacities: link 'L0' has negative capacity"):
        fixed_point(net, [-1])


def test_warm_start_gives_same_answer():
    # Source: uniqueness of the fixed point under fixed routing (Kelly 1986, Theorem 2.2).
    net = _line(6, 10, (2, 3), 12.0)
    a = fixed_point(net)
    b = fixed_point(net, start=a)
    c = fixed_point(net, start="full")
    assert b.blocking == pytest.approx(a.blocking, abs=1e-9)
    assert c.blocking == pytest.approx(a.blocking, abs=1e-9)
    assert b.iterations < a.iterations


def test_conservative_bounds_fixed_point():
    # Source: product bound (Whitt 1985): un-thinned loads give blocking at least the
    # reduced-load value; with one link each it is exactly Erlang B of the full load.
    net = _line(8, 10, (1, 2, 3, 4), 14.0)
    fp = fixed_point(net)
    cons = fixed_point(net, conservative=True)
    assert cons.method == "conservative" and cons.iterations == 0
    assert np.all(cons.blocking >= fp.blocking - 1e-12)
    assert np.any(cons.blocking > fp.blocking * 1.01)
    ex = product_form_blocking([10, 10], [[0, 1]], [5.0])[0]
    two = fixed_point(network([10, 10], [(5.0, [[0, 1]])]), conservative=True)
    assert two.blocking[0] == pytest.approx(1 - (1 - erlang_b_ref(5.0, 10)) ** 2, rel=1e-10)
    assert two.blocking[0] >= ex


def _reservation_chain(nu1, nu2, c, r):
    """First-choice and overflow blocking of one link by its birth-death chain, directly."""
    w = [1.0]
    for i in range(1, c + 1):
        lam = nu1 + nu2 if i - 1 < c - r else nu1
        w.append(w[-1] * lam / i)
    tot = sum(w)
    return w[c] / tot, sum(w[c - r:]) / tot


def test_conservative_alternate_triangle_against_scalar_equations():
    # Source: the un-thinned overflow equations (route k offered A prod_{m<k} L_m on every
    # link, no thinning) with the trunk-reservation chain (Girard 1990 ch. 4). On a symmetric
    # triangle, each link carries its own demand (A) and the overflow of the two others
    # (2 A B1), so the largest solution is a scalar iteration from B = 1, written here.
    a, c, r = 6.0, 9, 1
    sites = tuple(Site(s) for s in "XYZ")
    links = (Link("XY", ("X", "Y"), c), Link("YZ", ("Y", "Z"), c), Link("XZ", ("X", "Z"), c))
    other = {0: (2, 1), 1: (0, 2), 2: (0, 1)}
    dem = tuple(Demand(f"D{j}", links[j].ends, a,
                       routes=(Route((j,), (1.0,)), Route(other[j], (1.0, 1.0))))
                for j in range(3))
    net = Network("tri", sites, links, dem, routing=Routing(policy="alternate", reservation=r))
    b1, b2 = 1.0, 1.0
    for _ in range(500):
        b1, b2 = _reservation_chain(a, 2 * a * b1, c, r)
    expected = b1 * (1 - (1 - b2) ** 2)
    cons = fixed_point(net, conservative=True)
    assert cons.method == "conservative"
    assert cons.blocking == pytest.approx([expected] * 3, rel=1e-8)
    assert np.all(cons.blocking >= fixed_point(net).blocking)
    assert any("not proven above the exact" in w for w in cons.warnings)
    # Stopped early, the iterate is still above the limit (the iteration falls to it).
    early = fixed_point(net, conservative=True, max_iter=1)
    assert np.all(early.blocking >= cons.blocking)
    assert any("conservative iteration stopped after 1 sweeps" in w for w in early.warnings)


def test_conservative_alternate_above_both_solutions_of_bistable_mesh():
    # Source: Tarski's fixed-point theorem on the increasing un-thinned map, which lies above
    # the thinned one; the bistable case is Gibbens, Hunt and Kelly 1990 (as above).
    ev = fixed_point(mesh(6, 30, 22.2, 4))
    cons = fixed_point(mesh(6, 30, 22.2, 4), conservative=True)
    assert ev.status == "bistable"
    assert np.all(cons.blocking >= ev.alternative.blocking - 1e-12)
    assert np.all(cons.blocking >= ev.blocking)


def test_zero_capacity_and_zero_traffic():
    # Source: a link of 0 circuits blocks every call (E(a, 0) = 1; Erlang 1917).
    net = network([0, 10, 10], [(3.0, [[0, 1]]), (0.0, [[1, 2]]), (2.0, [[2]])])
    ev = fixed_point(net)
    assert ev.blocking[0] == 1.0
    assert ev.link_blocking[0] == 1.0
    assert np.all(np.isfinite(ev.link_offered)) and np.all(np.isfinite(ev.link_carried))
    assert ev.blocking[2] == pytest.approx(erlang_b_ref(2.0, 10), rel=1e-9)
    assert ev.offered[1] == 0.0
    assert ev.blocking[1] == pytest.approx(erlang_b_ref(2.0, 10), rel=1e-9)
    assert ev.utilisation[0] == 0.0
    # the same under alternate routing, zero-capacity overflow link
    alt = fixed_point(network([10, 0], [(8.0, [[0], [1]])], policy="alternate"))
    assert alt.blocking[0] == pytest.approx(erlang_b_ref(8.0, 10), rel=1e-9)


def test_multirate_overflow_with_reservation():
    # Source: product form of a multi-rate link by state enumeration (Ross 1995 ch. 2). Link 0
    # carries only first-choice calls (an exact Kaufman-Roberts link); link 1 only overflow
    # calls, admitted while k + b <= C - r, i.e. a link of C - r units for them. The reduced
    # load thins each class by its own blocking (Ross 1995 ch. 5; ITU-T E.529).
    a, bws, c0, c1, r = [4.0, 1.0], [1, 2], 8, 7, 2
    net = network([c0, c1], [(a[0], [[0], [1]]), (a[1], [[0], [1]])], policy="alternate",
                  reservation=r, bandwidths=bws)
    ev = fixed_point(net)
    b0 = product_form_blocking([c0], [[0], [0]], a, bws)
    b1 = product_form_blocking([c1 - r], [[0], [0]], [a[0] * b0[0], a[1] * b0[1]], bws)
    assert ev.blocking == pytest.approx(b0 * b1, rel=1e-8)


def test_demand_without_route_and_unknown_policy():
    # Source: common practice, no source (a call with no route is lost).
    net = network([10], [(5.0, [[0]]), (2.0, [])])
    ev = fixed_point(net)
    assert ev.blocking[1] == 1.0
    assert ev.blocking[0] == pytest.approx(erlang_b_ref(5.0, 10), rel=1e-10)
    from dataclasses import replace
    bad = replace(net, routing=Routing(policy="random"))
    with pytest.raises(ValueError, match="routing policy: unknown policy 'random'"):
        fixed_point(bad)


# -- verdicts the figures support (issue 12) -------------------------------------------------
NETWORKS = __import__("pathlib").Path(__file__).resolve().parent.parent / "networks"


@pytest.mark.parametrize("tol", [1e-2, 1e-4])
def test_loose_tolerance_is_not_bistability(tol):
    # Source: the same equations solved from idle and from full links to tol 1e-12 agree to
    # 1e-9 (computed here), so the network has one solution; before, tol 1e-2 and 1e-4
    # stopped the two ends apart and printed 'bistable'.
    from netdim.netfile import read_network

    net = read_network(NETWORKS / "three-villages.yaml")
    lo = fixed_point(net, start="idle", tol=1e-12)
    hi = fixed_point(net, start="full", tol=1e-12)
    assert np.max(np.abs(lo.blocking - hi.blocking)) < 1e-9
    ev = fixed_point(net, tol=tol)
    assert ev.status == "converged" and ev.alternative is None
    assert not any("bistable" in w for w in ev.warnings)
    assert np.max(np.abs(ev.blocking - lo.blocking)) < 10 * tol


def test_bistability_survives_a_loose_tolerance():
    # Source: Gibbens, Hunt and Kelly 1990: the mesh of test_bistability_found_and_removed_
    # by_reservation has two solutions whose mean blockings differ a hundredfold.
    ev = fixed_point(mesh(6, 30, 22.2, 4), tol=1e-2)
    assert ev.status == "bistable"
    assert ev.alternative.blocking.mean() > 100 * ev.blocking.mean()
    warning = next(w for w in ev.warnings if "two solutions" in w)
    assert "'alternative'" not in warning  # the text report must not point at a JSON key


def test_tiny_route_blocking_keeps_relative_precision():
    # Source: mpmath at 50 digits: the reduced-load equations of the two-link case
    # (B1 = E(a + a (1 - B2), 10), B2 = E(a (1 - B1), 10), a = 0.1) iterated to convergence,
    # route blocking 1 - (1 - B1)(1 - B2) ~ 2.3e-14. Before, route blockings were
    # 1 - prod(1 - B) in doubles: multiples of 1.1e-16, 5e-4 off here.
    mpmath.mp.dps = 50

    def erlang(a, c):
        terms = [a**k / mpmath.factorial(k) for k in range(c + 1)]
        return terms[-1] / mpmath.fsum(terms)

    a = mpmath.mpf("0.1")
    b1 = b2 = mpmath.mpf(0)
    for _ in range(20):
        b1, b2 = erlang(a + a * (1 - b2), 10), erlang(a * (1 - b1), 10)
    ev = fixed_point(network([10, 10], [(0.1, [[0]]), (0.1, [[0, 1]])]))
    assert ev.blocking[0] == pytest.approx(float(b1), rel=1e-12)
    assert ev.blocking[1] == pytest.approx(float(1 - (1 - b1) * (1 - b2)), rel=1e-12)


# -- structure and repeated calls (issues 13, 17) ---------------------------------------------
def test_fixed_point_object_equals_the_function():
    # Source: FixedPoint(network)(caps) is documented to be fixed_point(network, caps).
    from netdim.evaluate import FixedPoint

    net = mesh(5, 12, 8.0, 2, reservation=1)
    fp = FixedPoint(net)
    for caps in ([12] * 10, [10, 14] * 5, [0] + [12] * 9):
        a = fp(caps)
        b = fixed_point(net, caps)
        np.testing.assert_array_equal(a.blocking, b.blocking)
        np.testing.assert_array_equal(a.link_offered, b.link_offered)
        assert a.status == b.status and a.iterations == b.iterations
    warm = fp([12] * 10, start=a)
    assert warm.blocking == pytest.approx(fixed_point(net, [12] * 10).blocking, abs=1e-9)


def test_prepared_arrays_are_a_frozen_dataclass_kept_on_the_network():
    import dataclasses
    import importlib

    from netdim.evaluate._reduced_load import RouteArrays

    net = mesh(4, 10, 5.0, 2)
    arrays = RouteArrays.of(net)
    assert dataclasses.is_dataclass(arrays) and arrays is RouteArrays.of(net)
    with pytest.raises(dataclasses.FrozenInstanceError):
        arrays.n_links = 3
    module = importlib.import_module("netdim.evaluate.fixed_point")
    assert not [n for n in vars(module) if "CACHE" in n.upper() and not n.startswith("__")]


def test_link_solved_state_by_state_too_large_is_refused():
    # Source: the documented limit MAX_STATE_UNITS: a trunk-reservation link walks its
    # occupancy states one by one (linkmodels), so 10**6 units a link is refused at once.
    from netdim.errors import ModelTooLargeError

    net = network([10**6, 10], [(1.0, [[0], [1]])], policy="alternate", reservation=1)
    with pytest.raises(ModelTooLargeError, match="link 'L0' has 1000000 units; with trunk "
                                                 "reservation .* more than 100000"):
        fixed_point(net)
