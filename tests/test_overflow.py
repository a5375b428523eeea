"""Tests of netdim.overflow against outside sources (each check names its source)."""

from __future__ import annotations

import numpy as np
import pytest

from netdim.erlang import erlang_b
from netdim.overflow import (
    equivalent_random,
    overflow_blocking,
    overflow_moments,
    peakedness,
    rapp,
)

# -- overflow traffic -------------------------------------------------------------------------


def _overflow_chain(a, n, k_over):
    """Markov chain of a primary group of n servers whose overflow goes to a group of
    k_over servers (large enough to lose nothing); stationary law by a linear solve.
    Returns the mean and variance of the busy servers in the overflow group."""
    states = [(i, j) for i in range(n + 1) for j in range(k_over + 1)]
    idx = {s: t for t, s in enumerate(states)}
    Q = np.zeros((len(states), len(states)))
    for (i, j), t in idx.items():
        if i < n:
            Q[t, idx[(i + 1, j)]] += a
        elif j < k_over:
            Q[t, idx[(i, j + 1)]] += a
        if i > 0:
            Q[t, idx[(i - 1, j)]] += i
        if j > 0:
            Q[t, idx[(i, j - 1)]] += j
        Q[t, t] = -Q[t].sum()
    M = np.vstack([Q.T, np.ones(len(states))])
    rhs = np.zeros(len(states) + 1)
    rhs[-1] = 1.0
    p = np.linalg.lstsq(M, rhs, rcond=None)[0]
    j = np.array([s[1] for s in states], dtype=float)
    mean = float(p @ j)
    return mean, float(p @ j**2) - mean**2


@pytest.mark.parametrize("a,n", [(2.5, 3), (6.0, 4), (1.0, 0), (4.0, 8)])
def test_riordan_vs_markov_chain(a, n):
    # source: the primary + overflow group Markov chain solved directly (numpy) in the test
    mean, var = _overflow_chain(a, n, 45)
    m, v = overflow_moments(a, n)
    assert m == pytest.approx(mean, rel=1e-9)
    assert v == pytest.approx(var, rel=1e-8)
    assert peakedness(a, n) == pytest.approx(var / mean, rel=1e-8)


def test_overflow_moments_arrays():
    # source: Riordan's formula evaluated by the scalar path
    m, v = overflow_moments(np.array([2.5, 6.0]), np.array([3, 4]))
    assert m[1] == pytest.approx(overflow_moments(6.0, 4)[0], rel=1e-14)
    assert v[0] == pytest.approx(overflow_moments(2.5, 3)[1], rel=1e-14)


@pytest.mark.parametrize("a,n", [(10.0, 8), (30.0, 35), (4.0, 2.5), (80.0, 70)])
def test_equivalent_random_inverts_riordan(a, n):
    # source: Riordan's moments (checked against the chain above): the ERT of the overflow
    # of (A, n) is (A, n) itself (Wilkinson 1956)
    m, v = overflow_moments(a, n)
    a_star, n_star = equivalent_random(m, v)
    assert a_star == pytest.approx(a, rel=1e-9)
    assert n_star == pytest.approx(n, rel=1e-9, abs=1e-9)
    # Rapp's approximation lands near the exact ERT parameters (Rapp 1964: a few percent)
    ra, rn = rapp(m, v)
    assert ra == pytest.approx(a, rel=0.1)
    assert rn == pytest.approx(n, rel=0.15, abs=0.5)


def test_overflow_blocking_exact_cases():
    # source: sequential hunting -- the overflow of (A, n) offered to m more servers is lost
    # exactly as on n + m servers, so B = E(A, n + m) / E(A, n)
    m, v = overflow_moments(10.0, 8)
    assert overflow_blocking([m], [v], 5) == pytest.approx(
        erlang_b(10.0, 13) / erlang_b(10.0, 8), rel=1e-9
    )
    # Poisson traffic (variance = mean) is its own equivalent random group (Wilkinson 1956)
    assert overflow_blocking([1.0, 2.0], [1.0, 2.0], 5) == pytest.approx(
        erlang_b(3.0, 5), rel=1e-12
    )
    assert overflow_blocking([0.0], [0.0], 3) == 0.0
    # two streams: the result uses the summed moments
    m2, v2 = overflow_moments(4.0, 3)
    a_star, n_star = equivalent_random(m + m2, v + v2)
    assert overflow_blocking([m, m2], [v, v2], 6) == pytest.approx(
        a_star * erlang_b(a_star, n_star + 6) / (m + m2), rel=1e-12
    )


# -- argument errors (priority 2 functions) ---------------------------------------------------


def test_errors_second_tier():
    # source: issue 2 (bad arguments raise ValueError naming the argument and the value)
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got nan"):
        overflow_moments(float("nan"), 3)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got -3\.0"):
        peakedness(1.0, -3)
    with pytest.raises(ValueError, match=r"mean: must be > 0, got 0\.0"):
        rapp(0.0, 1.0)
    with pytest.raises(ValueError, match=r"variance: must be >= mean \(peakedness >= 1\)"):
        equivalent_random(2.0, 1.0)
    with pytest.raises(ValueError, match=r"means: must be >= 0, got -1\.0"):
        overflow_blocking([-1.0], [1.0], 2)
    with pytest.raises(ValueError, match=r"variance: must be >= mean"):
        overflow_blocking([2.0], [1.0], 2)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got -2\.0"):
        overflow_blocking([1.0], [1.0], -2)
