"""Tests of netdim.evaluate.peaked_fixed_point: the network evaluation with peaked overflow.

Every check names its source: Erlang's formula (mpmath), the plain reduced-load fixed point
(whose own tests check it against independent references), the exact Markov chain of the
network (``evaluate(method='exact')``, checked in its own tests against product form and
enumeration) and simulation with confidence intervals.
"""

from __future__ import annotations

from dataclasses import replace

import mpmath
import numpy as np
import pytest

from netdim.errors import ConvergenceError
from netdim.evaluate import evaluate
from netdim.evaluate.peaked_fixed_point import METHOD, peaked_fixed_point
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.netfile import loads_network, read_network

NETWORKS = "networks"


def erlang_mp(a, n):
    """Erlang's loss formula (a^n / n!) / sum_k a^k / k! in mpmath (Erlang 1917)."""
    a = mpmath.mpf(a)
    terms = [a**k / mpmath.factorial(k) for k in range(n + 1)]
    return float(terms[-1] / mpmath.fsum(terms))


def two_groups(a, n1, n2, reservation=0, second_traffic=0.0):
    """One demand of ``a`` erlangs on a group of n1 circuits, overflowing to one of n2
    (which may also carry ``second_traffic`` first-choice erlangs of its own)."""
    sites = (Site("A"), Site("B"))
    links = (Link("P", ("A", "B"), n1), Link("F", ("A", "B"), n2))
    ds = [Demand("D", ("A", "B"), a, routes=(Route((0,), (1.0,)), Route((1,), (1.0,))))]
    if second_traffic:
        ds.append(Demand("E", ("A", "B"), second_traffic, routes=(Route((1,), (1.0,)),)))
    return Network("two", sites, links, tuple(ds),
                   routing=Routing("alternate", reservation=reservation))


# -- no overflow: the plain fixed point ------------------------------------------------------
def test_fixed_routing_equals_the_plain_fixed_point(line_yaml, tandem, triangle):
    # source: the plain reduced-load fixed point (evaluate(method='fixed-point')); with no
    # overflow every stream is Poisson and the equations are the same
    line = loads_network(line_yaml())
    line = line.with_capacities([28, 24])
    for net in (line, tandem(6, 3.0),
                triangle(5, 2.5, 0, policy="fixed"),
                triangle(6, 3.0, 1, policy="fixed", holdings=(0.5, 2.0))):
        plain = evaluate(net, method="fixed-point")
        ev = peaked_fixed_point(net)
        assert ev.method == METHOD == "peaked-fixed-point"
        np.testing.assert_allclose(ev.blocking, plain.blocking, rtol=1e-8, atol=1e-14)
        np.testing.assert_allclose(ev.link_offered, plain.link_offered, rtol=1e-8)
        np.testing.assert_allclose(ev.link_blocking, plain.link_blocking, rtol=1e-8)


def test_alternate_policy_without_second_routes_equals_the_plain_fixed_point():
    # source: the plain fixed point, whose reservation chain without overflow is Erlang B
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), 8), Link("BC", ("B", "C"), 6))
    ds = (Demand("AB", ("A", "B"), 4.0, routes=(Route((0,), (1.0,)),)),
          Demand("AC", ("A", "C"), 2.0, routes=(Route((0, 1), (1.0, 1.0)),)))
    net = Network("alt", sites, links, ds, routing=Routing("alternate", reservation=2))
    plain = evaluate(net, method="fixed-point")
    ev = peaked_fixed_point(net)
    np.testing.assert_allclose(ev.blocking, plain.blocking, rtol=1e-8)
    np.testing.assert_allclose(ev.link_blocking_alternate, plain.link_blocking_alternate,
                               rtol=1e-8)


# -- one overflow stream: the equivalent random method ----------------------------------------
@pytest.mark.parametrize("a,n1,n2,r", [(10.0, 10, 5, 0), (8.0, 8, 4, 0), (20.0, 25, 8, 0),
                                       (8.0, 8, 6, 2)])
def test_overflow_onto_a_second_group_is_the_combined_group(a, n1, n2, r):
    # source: a demand overflowing from n1 to n2 circuits (nothing else on them) is lost
    # with probability E(A, n1 + n2 - r): the two groups hunted in order, reservation
    # included (Wilkinson 1956); Erlang's formula in mpmath. The 'ert' link model with
    # exact equivalent groups is the equivalent random method itself.
    ref = erlang_mp(a, n1 + n2 - r)
    net = two_groups(a, n1, n2, reservation=r)
    ev = peaked_fixed_point(net, link_model="ert", equivalent="exact")
    assert ev.blocking[0] == pytest.approx(ref, rel=1e-7)
    ipp = peaked_fixed_point(net)  # the default model: three moments of the overflow
    plain = evaluate(net, method="fixed-point")
    print(f"A={a} {n1}+{n2} r={r}: ipp/exact {ipp.blocking[0] / ref:.3f}, "
          f"plain/exact {plain.blocking[0] / ref:.3f}")
    assert 0.75 * ref < ipp.blocking[0] < 1.1 * ref
    assert plain.blocking[0] < ipp.blocking[0]


def test_overflow_mixed_with_first_choice_traffic_against_exact():
    # source: the exact Markov chain of the network (method 'exact'); the ratio is printed
    # and bounded by the link-level measurements (tests/test_peaked.py), with a margin
    for a, n1, n2, r, e in [(8.0, 8, 10, 1, 5.0), (6.0, 7, 8, 2, 4.0), (10.0, 12, 12, 0, 6.0)]:
        net = two_groups(a, n1, n2, reservation=r, second_traffic=e)
        exact = evaluate(net, method="exact")
        ev = peaked_fixed_point(net, equivalent="exact")
        plain = evaluate(net, method="fixed-point")
        ratio = ev.blocking / exact.blocking
        print(f"A={a} {n1}->{n2} r={r} E={e}: peaked/exact {np.round(ratio, 3)}, "
              f"plain/exact {np.round(plain.blocking / exact.blocking, 3)}")
        assert np.all((ratio > 0.8) & (ratio < 1.15))
        assert abs(np.log(ratio[0])) < abs(np.log(plain.blocking[0] / exact.blocking[0]))


# -- small alternate networks against the exact chain -----------------------------------------
@pytest.mark.parametrize("cap,a,res", [(5, 2.0, 0), (6, 3.0, 1), (8, 4.0, 1), (6, 4.0, 0)])
def test_triangle_against_exact(triangle, cap, a, res):
    # source: the exact Markov chain (method 'exact') of the triangle fixture; measured
    # ratios 0.7-1.0 (printed); bound with a margin, and closer than the plain fixed point
    net = triangle(cap, a, res)
    exact = evaluate(net, method="exact")
    ev = peaked_fixed_point(net)
    plain = evaluate(net, method="fixed-point")
    ratio = ev.blocking / exact.blocking
    pr = plain.blocking / exact.blocking
    print(f"triangle C={cap} A={a} r={res}: peaked/exact {np.round(ratio, 3)}, "
          f"plain/exact {np.round(pr, 3)}")
    assert np.all((ratio > 0.6) & (ratio < 1.3))
    assert np.max(np.abs(np.log(ratio))) <= np.max(np.abs(np.log(pr))) + 1e-9


def test_three_villages_against_exact():
    # source: the exact Markov chain of the bundled three-village network (method 'exact');
    # measured peaked/exact 0.82-0.90, plain fixed point 0.52-0.55 (printed)
    net = read_network(f"{NETWORKS}/three-villages.yaml")
    exact = evaluate(net, method="exact")
    ev = peaked_fixed_point(net)
    plain = evaluate(net, method="fixed-point")
    ratio = ev.blocking / exact.blocking
    print(f"three villages: peaked/exact {np.round(ratio, 3)}, "
          f"plain/exact {np.round(plain.blocking / exact.blocking, 3)}")
    assert np.all((ratio > 0.75) & (ratio < 1.3))
    assert np.all(ratio > plain.blocking / exact.blocking)


# -- bundled networks against simulation ------------------------------------------------------
@pytest.mark.slow
@pytest.mark.parametrize("name,calls", [("three-villages", 2_000_000),
                                        ("campus-parking", 2_000_000),
                                        ("regional-telephone", 4_000_000)])
def test_bundled_networks_against_simulation(name, calls):
    # source: simulation (method 'simulate', 95% batch-means intervals). Stated factor: every
    # demand whose simulated blocking is at least 1e-3 within 2.5x of it, counting from the
    # nearer end of its interval (measured worst: 1.95x, campus conference guests)
    net = read_network(f"{NETWORKS}/{name}.yaml")
    sim = evaluate(net, method="simulate", seed=11, calls=calls)
    ev = peaked_fixed_point(net)
    plain = evaluate(net, method="fixed-point")
    sel = sim.blocking >= 1e-3
    assert sel.any()
    lo, hi = sim.blocking_interval[sel, 0], sim.blocking_interval[sel, 1]
    b = ev.blocking[sel]
    far = np.where(b > hi, b / hi, np.where(b < lo, lo / b, 1.0))
    print(f"{name}: peaked/sim {np.round(b / sim.blocking[sel], 2)}, "
          f"plain/sim {np.round(plain.blocking[sel] / sim.blocking[sel], 2)}")
    assert np.all(far <= 2.5)


# -- the iteration --------------------------------------------------------------------------
def test_bistability_check_and_convergence_error(triangle):
    # source: the solve from idle and from full links as in the plain fixed point; a
    # symmetric alternate network without reservation in overload (Gibbens, Hunt and Kelly
    # 1990): the two starts are solved and either agree or are reported as two solutions
    net = triangle(10, 9.0, 0)
    ev = peaked_fixed_point(net)
    assert ev.status in ("converged", "bistable")
    if ev.status == "converged":
        assert "from full links" in ev.message
        assert ev.alternative is None
    else:
        assert ev.alternative is not None and any("two solutions" in w for w in ev.warnings)
    with pytest.raises(ConvergenceError, match=r"peaked fixed point \(from idle links\) did "
                                               r"not converge in 1 iterations"):
        peaked_fixed_point(net, max_iter=1)


def test_warm_start_and_explicit_starts(triangle):
    # source: a fixed point solved from its own solution is met in one sweep
    net = triangle(6, 3.0, 1)
    ev = peaked_fixed_point(net)
    again = peaked_fixed_point(net, start=ev)
    assert again.iterations == 1
    np.testing.assert_allclose(again.blocking, ev.blocking, rtol=1e-9)
    plain = evaluate(net, method="fixed-point")
    for start in (plain, "idle", "full", plain.link_blocking,
                  np.column_stack([plain.link_blocking, plain.link_blocking_alternate])):
        other = peaked_fixed_point(net, start=start)
        np.testing.assert_allclose(other.blocking, ev.blocking, rtol=1e-7)
    d = ev.to_dict()
    assert d["method"] == "peaked-fixed-point"
    assert d["details"]["link_model"] == "ipp" and d["details"]["equivalent"] == "table"
    assert "step_blocking" not in d["details"]  # arrays stay out of the JSON


def test_bad_arguments(triangle, one_link):
    net = triangle(6, 3.0, 1)
    with pytest.raises(ValueError, match="split: unknown rule 'even'; choose one of equal, "
                                         "peakedness"):
        peaked_fixed_point(net, split="even")
    with pytest.raises(ValueError, match="link_model: unknown model 'poisson'; choose one of"):
        peaked_fixed_point(net, link_model="poisson")
    with pytest.raises(ValueError, match="equivalent: unknown method 'x'; choose one of"):
        peaked_fixed_point(net, equivalent="x")
    with pytest.raises(ValueError, match="tol: must be a positive number"):
        peaked_fixed_point(net, tol=0)
    with pytest.raises(ValueError, match="max_iter: must be an integer >= 1"):
        peaked_fixed_point(net, max_iter=0)
    with pytest.raises(ValueError, match="capacities: expected 3 values"):
        peaked_fixed_point(net, capacities=[1, 2])
    with pytest.raises(ValueError, match="capacities: link 'BC' has capacity -1"):
        peaked_fixed_point(net, capacities=[1, -1, 2])
    with pytest.raises(ValueError, match="start: expected 'idle', 'full', an Evaluation"):
        peaked_fixed_point(net, start="warm")
    with pytest.raises(ValueError, match=r"start: expected link blockings of shape \(3,\)"):
        peaked_fixed_point(net, start=np.zeros(5))
    with pytest.raises(ValueError, match=r"start: blockings must lie in \[0, 1\]"):
        peaked_fixed_point(net, start=np.full(3, 2.0))
    with pytest.raises(ValueError, match="demand 'D1': bandwidth 2: the peaked fixed point "
                                         "handles single-unit calls only"):
        peaked_fixed_point(one_link(10, [(3.0, 1), (2.0, 2)]))
    with pytest.raises(ValueError, match="routing policy: unknown policy 'random'"):
        peaked_fixed_point(replace(net, routing=Routing("random")))


def test_zero_capacity_and_zero_traffic(triangle):
    # source: a link of no capacity blocks every call over it (common practice, no source)
    net = triangle(5, 2.0, 0)
    ev = peaked_fixed_point(net, capacities=[0, 5, 5])
    assert ev.link_blocking[0] == 1.0
    assert 0.0 < ev.blocking[0] < 1.0  # its demand still has the two-link route
    idle = peaked_fixed_point(net.scaled(0.0))
    assert np.all(idle.blocking == 0.0)


def _peakedness_by_bincount(pb, m, b, zo):
    """The stream peakedness written out with np.bincount over the pair arrays: the rule of
    ``_Problem.peakedness`` (random splitting of each link's lost stream, Wilkinson 1956's
    peakedness of a random part ``1 + P (Z - 1)``), computed here independently of the
    compiled kernel."""
    pair_step = np.array([s for a, e, c, d in pb.pair_blocks for s in range(a, e)
                          for _ in range(c, d)], dtype=np.int64)
    pair_src = np.array([k for a, e, c, d in pb.pair_blocks for _ in range(a, e)
                         for k in range(c, d)], dtype=np.int64)
    src_slot = pb.slot[pair_src]
    lost = m * b / pb.step_factor
    tot = np.bincount(pb.step_route, weights=lost, minlength=pb.n_routes)
    with np.errstate(divide="ignore", invalid="ignore"):
        w = np.where(tot[pb.step_route] > 0,
                     lost / np.where(tot > 0, tot, 1.0)[pb.step_route], 0.0)
        src_rate = np.bincount(pb.slot, weights=lost, minlength=2 * pb.n_links)
        src = src_rate[src_slot]
        part = (m / pb.step_factor)[pair_step] * w[pair_src]
        frac = np.where(src > 0, part / np.where(src > 0, src, 1.0), 0.0)
    share = np.minimum(np.bincount(pb.pair_group, weights=frac, minlength=pb.n_groups), 1.0)
    zp = share[pb.pair_group] * (zo.reshape(-1)[src_slot] - 1.0)
    return 1.0 + np.bincount(pair_step, weights=w[pair_src] * zp, minlength=pb.n_steps)


def test_compiled_stream_peakedness_equals_the_bincount_form():
    # Source: the same arithmetic in numpy (above), summed in the same order: equal to the
    # last bit on the bundled alternate-routing network at random stream states.
    from netdim.evaluate.peaked_fixed_point import _Problem

    net = read_network(f"{NETWORKS}/regional-telephone.yaml")
    pb = _Problem(net, net.capacities(), "ipp", "table")
    assert pb.overflow and len(pb.pair_group) > 0
    rng = np.random.default_rng(7)
    for _ in range(3):
        m = rng.uniform(0.0, 5.0, pb.n_steps)
        b = rng.uniform(0.0, 0.3, pb.n_steps) * (rng.random(pb.n_steps) > 0.2)
        zo = rng.uniform(1.0, 3.0, (pb.n_links, 2))
        assert np.array_equal(pb.peakedness(m, b, zo), _peakedness_by_bincount(pb, m, b, zo))
    zero = np.zeros(pb.n_steps)
    assert np.array_equal(pb.peakedness(m, zero, zo), np.ones(pb.n_steps))
