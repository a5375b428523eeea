"""Tests of netdim.engset against outside sources (each check names its source)."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from netdim.engset import engset_call, engset_time
from netdim.erlang import erlang_b


def _rel(value, exact):
    exact = mp.mpf(exact)
    if exact == 0:
        return abs(value)
    return float(abs((mp.mpf(value) - exact) / exact))


# -- Engset -----------------------------------------------------------------------------------


def _engset_sum(N, alpha, n):
    """Defining sum: C(N, n) alpha^n / sum_{k<=n} C(N, k) alpha^k (Engset 1918), exact."""
    if n > N:
        return mp.mpf(0)
    terms = [mp.binomial(N, k) * mp.mpf(alpha) ** k for k in range(n + 1)]
    return terms[n] / mp.fsum(terms)


@pytest.mark.parametrize("N,alpha,n", [(10, 0.5, 3), (40, 0.05, 6), (200, 0.2, 30),
                                       (5, 2.0, 5), (5, 2.0, 7), (1, 0.3, 1), (300, 1.5, 250)])
def test_engset_vs_defining_sum(N, alpha, n):
    # source: Engset's defining sum evaluated in mpmath (time congestion with N sources,
    # call congestion = time congestion with N - 1 sources)
    mp.mp.dps = 40
    assert _rel(engset_time(N, alpha, n), _engset_sum(N, alpha, n)) <= 1e-13
    assert _rel(engset_call(N, alpha, n), _engset_sum(N - 1, alpha, n)) <= 1e-13
    vec = engset_time(np.array([N, N]), alpha, np.array([n, 0]))
    assert vec[1] == 1.0 and _rel(vec[0], _engset_sum(N, alpha, n)) <= 1e-13


def test_engset_approaches_erlang():
    # source: Engset tends to Erlang as N -> inf with N alpha = A fixed (textbook limit)
    assert engset_time(10**6, 8.0 / 10**6, 10) == pytest.approx(erlang_b(8.0, 10), rel=1e-4)


# -- argument errors (priority 2 functions) ---------------------------------------------------


def test_errors_second_tier():
    # source: issue 2 (bad arguments raise ValueError naming the argument and the value)
    with pytest.raises(ValueError, match=r"sources: must be a whole number >= 0, got 2\.5"):
        engset_time(2.5, 0.1, 1)
    with pytest.raises(ValueError, match=r"alpha: must be >= 0, got -0\.1"):
        engset_call(3, -0.1, 1)
    with pytest.raises(ValueError, match=r"servers: must be a whole number >= 0, got -1\.0"):
        engset_time(3, 0.1, -1)
