"""Tests of netdim.linkmodels against independent exact solutions computed in the tests."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from netdim.erlang import erlang_b
from netdim.linkmodels import (
    kaufman_roberts,
    kaufman_roberts_many,
    kaufman_roberts_occupancy,
    reservation_link,
    reservation_link_many,
    reservation_link_multi_many,
)


def _product_form(loads, bandwidths, capacity):
    """Brute force: enumerate every state (n_1..n_K) with sum n_i b_i <= C, weight
    prod a_i^n_i / n_i! (the product-form solution of the multi-rate loss link, Kaufman 1981).
    Returns (occupancy distribution, per-class blocking)."""
    ranges = [range(capacity // b + 1) for b in bandwidths]
    occ = np.zeros(capacity + 1)
    for state in itertools.product(*ranges):
        k = sum(n * b for n, b in zip(state, bandwidths, strict=True))
        if k <= capacity:
            w = 1.0
            for n, a in zip(state, loads, strict=True):
                w *= a**n / math.factorial(n)
            occ[k] += w
    occ /= occ.sum()
    block = [occ[capacity - b + 1 :].sum() if b <= capacity else 1.0 for b in bandwidths]
    return occ, np.array(block)


def _birth_death_direct(loads, capacity, limits, bandwidths):
    """Solve the link's Markov chain directly: generator matrix over the full state
    (n_1..n_K), stationary distribution by a linear solve (numpy). Exact for any bandwidths
    with admission k + b_i <= C - limits_i."""
    K = len(loads)
    ranges = [range(capacity // b + 1) for b in bandwidths]
    states = [
        s for s in itertools.product(*ranges)
        if sum(n * b for n, b in zip(s, bandwidths, strict=True)) <= capacity
    ]
    index = {s: i for i, s in enumerate(states)}
    Q = np.zeros((len(states), len(states)))
    for s, i in index.items():
        k = sum(n * b for n, b in zip(s, bandwidths, strict=True))
        for c in range(K):
            if k + bandwidths[c] <= capacity - limits[c]:
                t = list(s)
                t[c] += 1
                Q[i, index[tuple(t)]] += loads[c]
            if s[c] > 0:
                t = list(s)
                t[c] -= 1
                Q[i, index[tuple(t)]] += s[c]
        Q[i, i] = -Q[i].sum()
    A = np.vstack([Q.T, np.ones(len(states))])
    rhs = np.zeros(len(states) + 1)
    rhs[-1] = 1.0
    p = np.linalg.lstsq(A, rhs, rcond=None)[0]
    block = []
    for c in range(K):
        bl = 0.0
        for s, i in index.items():
            k = sum(n * b for n, b in zip(s, bandwidths, strict=True))
            if k + bandwidths[c] > capacity - limits[c]:
                bl += p[i]
        block.append(bl)
    return np.array(block)


CASES = [
    ([3.0], [1], 5),
    ([2.0, 1.5], [1, 2], 7),
    ([4.0, 0.7, 0.3], [1, 3, 5], 12),
    ([0.5, 0.5], [2, 4], 9),
    ([1e-3, 6.0], [6, 1], 10),
]


@pytest.mark.parametrize("loads,bandwidths,capacity", CASES)
def test_kaufman_roberts_vs_enumeration(loads, bandwidths, capacity):
    # source: brute-force enumeration of the product-form states (in this test)
    occ, block = _product_form(loads, bandwidths, capacity)
    np.testing.assert_allclose(
        kaufman_roberts_occupancy(loads, bandwidths, capacity), occ, rtol=1e-12
    )
    np.testing.assert_allclose(kaufman_roberts(loads, bandwidths, capacity), block, rtol=1e-12)


def test_kaufman_roberts_single_class_is_erlang():
    # source: with one class of bandwidth 1 the link is Erlang's loss system
    for a, c in [(5.0, 10), (80.0, 100), (900.0, 1000)]:
        assert kaufman_roberts([a], [1], c)[0] == pytest.approx(erlang_b(a, c), rel=1e-11)


def test_kaufman_roberts_large_capacity_does_not_overflow():
    # source: Erlang's formula (single class) at a capacity where a^C / C! overflows
    b = kaufman_roberts([4000.0, 0.0], [1, 2], 4100)
    assert b[0] == pytest.approx(erlang_b(4000.0, 4100), rel=1e-9)
    assert np.all(np.isfinite(b))


def test_kaufman_roberts_many_equals_single():
    # source: the single-link function above (itself checked against enumeration)
    rng = np.random.default_rng(4)
    bw = np.array([1, 2, 5])
    caps = np.array([0, 1, 4, 12, 30, 7, 30])
    loads = rng.uniform(0.0, 6.0, size=(len(caps), len(bw)))
    loads[2, 1] = 0.0
    many = kaufman_roberts_many(loads, bw, caps)
    for i, c in enumerate(caps):
        np.testing.assert_allclose(many[i], kaufman_roberts(loads[i], bw, int(c)), rtol=1e-12)


@pytest.mark.parametrize(
    "loads,capacity,limits,bandwidths",
    [
        ([5.0, 2.0], 8, [0, 2], None),
        ([3.0, 3.0, 1.0], 6, [0, 1, 3], None),
        ([9.0], 7, [0], None),
        ([4.0, 4.0], 5, [0, 5], None),
    ],
)
def test_reservation_single_rate_vs_direct_chain(loads, capacity, limits, bandwidths):
    # source: the birth-death chain solved directly as a linear system (numpy) in the test
    bw = [1] * len(loads)
    expected = _birth_death_direct(loads, capacity, limits, bw)
    got = reservation_link(loads, capacity, limits, bandwidths)
    np.testing.assert_allclose(got, expected, rtol=1e-9, atol=1e-14)


def test_reservation_multirate_without_limits_is_exact():
    # source: with no reservation the Roberts recursion is Kaufman-Roberts, whose product
    # form the direct chain solution (numpy linear solve in this test) confirms
    loads, bw, cap = [2.0, 0.8], [1, 3], 8
    expected = _birth_death_direct(loads, cap, [0, 0], bw)
    np.testing.assert_allclose(reservation_link(loads, cap, [0, 0], bw), expected, rtol=1e-9)


def test_reservation_multirate_roberts_is_close():
    # source: direct chain solution (numpy); the Roberts recursion is an approximation with
    # reservation, so only closeness is expected (Roberts 1983 reports errors of a few %)
    loads, bw, cap, lim = [3.0, 0.6], [1, 2], 10, [0, 2]
    exact = _birth_death_direct(loads, cap, lim, bw)
    approx = reservation_link(loads, cap, lim, bw)
    np.testing.assert_allclose(approx, exact, rtol=0.25)


def test_reservation_link_many_equals_single():
    # source: reservation_link (checked against the direct chain above)
    first = np.array([5.0, 0.0, 12.0, 3.0, 40.0, 1.0])
    over = np.array([2.0, 3.0, 0.0, 3.0, 15.0, 0.5])
    caps = np.array([8, 4, 15, 0, 60, 3])
    res = np.array([2, 1, 0, 1, 5, 7])
    bf, bo = reservation_link_many(first, over, caps, res)
    for i in range(len(first)):
        single = reservation_link([first[i], over[i]], int(caps[i]), [0, int(res[i])])
        assert bf[i] == pytest.approx(single[0], rel=1e-12, abs=1e-300)
        assert bo[i] == pytest.approx(single[1], rel=1e-12, abs=1e-300)
    # no reservation: both streams see Erlang's formula (source: Erlang 1917)
    bf, bo = reservation_link_many([30.0], [10.0], [45], [0])
    assert bf[0] == pytest.approx(erlang_b(40.0, 45), rel=1e-12)
    assert bo[0] == pytest.approx(erlang_b(40.0, 45), rel=1e-12)
    # reservation >= capacity: overflow always refused, first-choice sees Erlang
    bf, bo = reservation_link_many([30.0], [10.0], [45], [45])
    assert bo[0] == 1.0 and bf[0] == pytest.approx(erlang_b(30.0, 45), rel=1e-12)


@pytest.mark.parametrize("n_links", [3, 300])
def test_reservation_link_many_both_paths_equal_the_chain(n_links, monkeypatch):
    # source: reservation_link (the birth-death chain, checked against the direct solution
    # above) on a sample of links; few links take the log-space path, many the loop over
    # states, and each path is also forced on the other's input
    import netdim.linkmodels as lm

    rng = np.random.default_rng(n_links)
    caps = rng.integers(0, 120, n_links)
    first = rng.uniform(0.0, 100.0, n_links) * (rng.random(n_links) > 0.1)
    over = rng.uniform(0.0, 30.0, n_links) * (rng.random(n_links) > 0.1)
    res = rng.integers(0, 8, n_links)
    got = [reservation_link_many(first, over, caps, res)]
    monkeypatch.setattr(lm, "_LOG_LINKS", 0 if n_links < lm._LOG_LINKS else 10**6)
    got.append(reservation_link_many(first, over, caps, res))
    for i in rng.choice(n_links, min(n_links, 12), replace=False):
        want = reservation_link([first[i], over[i]], int(caps[i]), [0, int(res[i])])
        for bf, bo in got:
            assert bf[i] == pytest.approx(want[0], rel=1e-11, abs=1e-300)
            assert bo[i] == pytest.approx(want[1], rel=1e-11, abs=1e-300)
    np.testing.assert_allclose(got[0], got[1], rtol=1e-11, atol=1e-300)


def test_reservation_link_multi_many_equals_single():
    # source: reservation_link, per link (checked against the direct chain above), and with
    # one-unit streams the exact chain of reservation_link_many
    rng = np.random.default_rng(4)
    bw = np.array([1, 1, 4, 4])  # first-choice and overflow of two classes
    caps = np.array([12, 0, 30, 7, 3, 60])
    loads = rng.uniform(0, 8, (len(caps), len(bw)))
    loads[2, 1] = 0.0
    res = np.array([2, 1, 0, 3, 5, 4])
    limits = np.column_stack([np.zeros(6, int), res, np.zeros(6, int), res])
    got = reservation_link_multi_many(loads, bw, caps, limits)
    for j in range(len(caps)):
        want = reservation_link(loads[j], int(caps[j]), limits[j], bandwidths=bw)
        np.testing.assert_allclose(got[j], want, rtol=1e-12, atol=1e-300)
    one = reservation_link_multi_many(loads[:, :2], [1, 1], caps, limits[:, :2])
    bf, bo = reservation_link_many(loads[:, 0], loads[:, 1], caps, res)
    np.testing.assert_allclose(one[:, 0], bf, rtol=1e-12)
    np.testing.assert_allclose(one[:, 1], bo, rtol=1e-12)


def test_reservation_link_multi_many_bad_shapes():
    with pytest.raises(ValueError, match=r"loads: expected shape \(2, 2\) \(links x streams\)"):
        reservation_link_multi_many(np.ones((2, 3)), [1, 2], [5, 5], np.zeros((2, 3), int))
    with pytest.raises(ValueError, match=r"limits: expected shape \(2, 2\)"):
        reservation_link_multi_many(np.ones((2, 2)), [1, 2], [5, 5], np.zeros((2, 3), int))
    with pytest.raises(ValueError, match="limits"):
        reservation_link_multi_many(np.ones((2, 2)), [1, 2], [5, 5], -np.ones((2, 2), int))


def test_reservation_link_many_large_capacity():
    # source: Erlang's formula at a capacity where the raw chain weights overflow
    bf, bo = reservation_link_many([3000.0], [500.0], [3600], [0])
    assert bf[0] == pytest.approx(erlang_b(3500.0, 3600), rel=1e-9)


def test_link_errors():
    # source: issue 2 (bad arguments raise ValueError naming the argument and the value)
    with pytest.raises(ValueError, match=r"loads: must be finite and >= 0, got -1\.0"):
        kaufman_roberts([-1.0], [1], 3)
    with pytest.raises(ValueError, match=r"bandwidths: must be whole numbers >= 1, got 0\.0"):
        kaufman_roberts([1.0], [0], 3)
    with pytest.raises(ValueError, match=r"capacity: must be a whole number >= 0, got -2"):
        kaufman_roberts_occupancy([1.0], [1], -2)
    with pytest.raises(ValueError, match=r"bandwidths: expected 1 values"):
        kaufman_roberts([1.0], [1, 2], 3)
    with pytest.raises(ValueError, match=r"limits: must be whole numbers >= 0, got -1\.0"):
        reservation_link([1.0], 3, [-1])
    with pytest.raises(ValueError, match=r"loads: expected shape \(2, 1\)"):
        kaufman_roberts_many([[1.0, 2.0]], [1], [3, 4])
    with pytest.raises(ValueError, match=r"capacities: must be whole numbers >= 0, got 2\.5"):
        kaufman_roberts_many([[1.0]], [1], [2.5])
    with pytest.raises(ValueError, match=r"reservations: expected 1 values"):
        reservation_link_many([1.0], [1.0], [3], [1, 2])
    with pytest.raises(ValueError, match=r"overflow_load: must be finite and >= 0, got nan"):
        reservation_link_many([1.0], [np.nan], [3], [1])
