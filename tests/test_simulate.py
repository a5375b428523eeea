"""Tests of the event-driven simulation.

Statistical checks use a fixed seed and 99.9% intervals: were the simulation right, each
interval check fails with probability about 0.1% per demand (the false-failure bound).
"""

import numpy as np
import pytest

from netdim.evaluate.exact import exact
from netdim.evaluate.simulate import simulate


def _inside(sim, value):
    lo, hi = sim.blocking_interval[:, 0], sim.blocking_interval[:, 1]
    return np.all((lo <= value) & (value <= hi))


@pytest.mark.slow
def test_simulation_matches_erlang_b(erlang_b_ref, one_link):
    # source: Erlang B recursion (tests/test_exact.py); 99.9% interval, seed fixed
    sim = simulate(one_link(10, [(7.0, 1)]), seed=11, calls=400_000, confidence=0.999)
    assert _inside(sim, erlang_b_ref(7.0, 10))


@pytest.mark.slow
def test_simulation_matches_exact_alternate_routing(triangle):
    # source: exact Markov chain (checked against a brute-force chain in test_exact.py);
    # alternate routing, reservation, per-link holding times; 99.9% intervals
    net = triangle(4, 3.0, 1, holdings=(1.0, 0.25))
    ex = exact(net)
    sim = simulate(net, seed=5, calls=600_000, confidence=0.999)
    assert _inside(sim, ex.blocking)
    np.testing.assert_allclose(sim.link_carried, ex.link_carried, rtol=0.02)
    np.testing.assert_allclose(sim.link_offered, ex.link_offered, rtol=0.02)


@pytest.mark.slow
@pytest.mark.parametrize("law,cv", [("deterministic", 1.0), ("lognormal", 2.0)])
def test_insensitivity_fixed_routing(tandem, law, cv):
    # source: insensitivity of the Erlang loss formula to the holding-time law
    # (Sevastyanov 1957) and of the product form of loss networks (Kelly 1991);
    # 99.9% intervals around the exact (exponential) value
    net = tandem(6, 4.0)
    sim = simulate(net, seed=3, calls=400_000, holding_law=law, cv=cv, confidence=0.999)
    assert _inside(sim, exact(net).blocking)


def test_same_seed_same_run(triangle):
    # source: reproducibility contract of the seed (common practice, no source)
    net = triangle(3, 2.0, 1, holdings=(1.0, 1.0))
    a = simulate(net, seed=42, calls=20_000, holding_law="deterministic")
    b = simulate(net, seed=42, calls=20_000, holding_law="deterministic")
    c = simulate(net, seed=43, calls=20_000, holding_law="deterministic")
    np.testing.assert_array_equal(a.blocking, b.blocking)
    assert not np.array_equal(a.blocking, c.blocking)


def test_precision_stops_when_intervals_are_narrow(one_link):
    # source: the stopping rule itself: half-width <= precision x estimate (documented)
    net = one_link(5, [(5.0, 1)])
    seen = []
    sim = simulate(net, seed=1, precision=0.02, calls=20_000,
                   progress=lambda f, m: seen.append(f))
    half = np.array(sim.details["half_width"])
    assert np.all(half <= 0.02 * sim.blocking)
    assert sim.details["calls"] > 20_000 and seen and seen[-1] <= 1.0


def test_bad_options(one_link):
    net = one_link(5, [(2.0, 1)])
    with pytest.raises(ValueError, match="holding_law: unknown law 'gamma'; choose one of "
                                         "exponential, deterministic, lognormal"):
        simulate(net, holding_law="gamma")
    with pytest.raises(ValueError, match="cv: the coefficient of variation must be > 0"):
        simulate(net, holding_law="lognormal", cv=0.0)
    with pytest.raises(ValueError, match="calls: must be a positive integer"):
        simulate(net, calls=0)
    with pytest.raises(ValueError, match=r"precision: must lie in \(0, 1\)"):
        simulate(net, precision=1.5)
    with pytest.raises(ValueError, match=r"confidence: must lie in \(0, 1\)"):
        simulate(net, confidence=1.0)
    with pytest.raises(ValueError, match="batches: must be an integer >= 2"):
        simulate(net, batches=1)
