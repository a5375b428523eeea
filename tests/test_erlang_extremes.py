"""Extreme and malformed arguments to the loss formulas (issue 19), against mpmath.

Every check names its source; the mpmath values come from tests/erlang_mpmath.py (mpmath's
incomplete gamma function at 50 digits, with the exact finite sum or Jagerman's integral
where mpmath's series give up).
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from erlang_mpmath import mp_erlang, mp_log_erlang
from hypothesis import given, settings
from hypothesis import strategies as st

from netdim import _erlang_core, _erlang_kernels
from netdim.erlang import (
    MAX_ARG,
    erlang_b,
    erlang_b_dtraffic,
    erlang_b_runs,
    erlang_b_table,
    log1m_erlang_b,
    log_erlang_b,
    moe_servers,
    servers_for,
    traffic_for,
)


def _rel(value, exact):
    exact = mp.mpf(exact)
    if exact == 0:
        return abs(value)
    with mp.workdps(50):
        return float(abs((mp.mpf(value) - exact) / exact))


def _mp_log1m(a, n):
    with mp.workdps(60):
        return mp.log1p(-mp_erlang(a, n, dps=60))


# -- the calls of the issue, each answered right or refused ---------------------------------


def test_huge_equal_traffic_and_servers():
    # source: mpmath, E(1e9, 1e9) = 2.5231e-5 (the table; 1.0 before)
    assert _rel(erlang_b(1e9, 1e9), mp_erlang(1e9, 1e9)) <= 1e-13
    assert erlang_b(1e9, 1e9) == pytest.approx(2.52309e-5, rel=1e-5)


def test_log_erlang_b_at_the_smallest_traffic():
    # source: mpmath, log E(5e-324, 1) = log(A / (1 + A)) = -744.44 (the issue; -inf before)
    assert _rel(log_erlang_b(5e-324, 1), mp_log_erlang(5e-324, 1)) <= 1e-15
    assert log_erlang_b(5e-324, 1) == pytest.approx(-744.44007, rel=1e-7)
    assert erlang_b(5e-324, 1) == 5e-324


def test_log1m_erlang_b_at_tiny_traffic_and_servers():
    # source: mpmath, log(1 - E(5e-324, 1e-9)) = -14.11 (the issue; NaN before)
    assert _rel(log1m_erlang_b(5e-324, 1e-9), _mp_log1m(5e-324, 1e-9)) <= 1e-12
    assert log1m_erlang_b(5e-324, 1e-9) == pytest.approx(-14.1114095, rel=1e-8)


@pytest.mark.parametrize(
    "call,message",
    [
        (lambda: erlang_b(10.0, math.inf), r"servers: must be finite, got inf"),
        (lambda: erlang_b(math.inf, 3), r"traffic: must be finite, got inf"),
        (lambda: erlang_b(np.array([1.0, np.inf]), 3), r"traffic: must be finite, got inf"),
        (lambda: log_erlang_b(2.0, np.array([np.inf])), r"servers: must be finite, got inf"),
        (lambda: log1m_erlang_b(math.inf, 1.0), r"traffic: must be finite, got inf"),
        (lambda: servers_for(math.inf, 0.01), r"traffic: must be finite, got inf"),
        (lambda: servers_for(np.array([math.inf]), 0.01), r"traffic: must be finite, got inf"),
        (lambda: traffic_for(math.inf, 0.01), r"servers: must be finite, got inf"),
        (lambda: erlang_b_dtraffic(10.0, math.inf), r"servers: must be finite, got inf"),
        (lambda: erlang_b_dtraffic(math.inf, 10.0), r"traffic: must be finite, got inf"),
        (lambda: erlang_b_table(math.inf, 3), r"traffic: must be finite, got inf"),
        (lambda: moe_servers(math.inf, 1.0, 2.0), r"traffic: must be finite, got inf"),
        (lambda: erlang_b(5.0, 2e10), r"servers: must be at most 1e10 \(the range"),
        (lambda: servers_for(np.array([1e12]), 1e-300), r"traffic: must be at most 9.9e9"),
        (lambda: servers_for(1e12, 0.01), r"traffic: must be at most 9.9e9"),
        (lambda: traffic_for(1e11, 0.01), r"servers: must be at most 1e10"),
        (lambda: moe_servers(1e11, 1.0, 2.0), r"traffic: must be at most 9.9e9"),
        (lambda: erlang_b_table(3.0, 2.5), r"max_servers: must be a whole number >= 0, got 2\.5"),
        (lambda: erlang_b_table(3.0, -1), r"max_servers: must be a whole number >= 0, got -1"),
        (lambda: erlang_b_table(np.ones(1000), 10**6),
         r"max_servers: the table would hold 1,000,001,000 values, at most 100,000,000"),
        (lambda: erlang_b_table(3.0, 5, servers=[2, 6]),
         r"servers: must be whole numbers from 0 to 5, got 6"),
        (lambda: erlang_b_table(3.0, 5, servers=[-1]),
         r"servers: must be whole numbers from 0 to 5, got -1"),
        (lambda: erlang_b_table(3.0, 5, servers=[1.5]),
         r"servers: must be whole numbers, got 1\.5"),
        (lambda: erlang_b_table(3.0, 5, servers=[[1]]),
         r"servers: must be one list of server counts, got shape \(1, 1\)"),
        (lambda: erlang_b_table(np.ones(1000), 10**6, servers=np.zeros(10**5 + 1, int)),
         r"servers: the table would hold 100,001,000 values, at most 100,000,000"),
        (lambda: erlang_b_runs([math.inf], [0], [1], [2]), r"traffic: must be finite, got inf"),
        (lambda: erlang_b_runs([[1.0]], [0], [1], [2]),
         r"traffic: must be one list of loads, got shape \(1, 1\)"),
        (lambda: erlang_b_runs([1.0], [0], [1], [-2]),
         r"count: must be whole numbers >= 0 and at most 1e10, got -2"),
        (lambda: erlang_b_runs([1.0], [0.5], [1], [2]), r"first: must be whole numbers, got 0\.5"),
        (lambda: erlang_b_runs([1.0, 2.0], [0, 0], [1], [2, 2]),
         r"step: must have one value per load \(2\), got shape \(1,\)"),
        (lambda: erlang_b_runs([1.0], [10**10], [1], [2]),
         r"first, step, count: server counts up to 10000000001, at most 1e10"),
        (lambda: erlang_b_runs(np.ones(2), [0, 0], [1, 1], [6 * 10**7, 5 * 10**7]),
         r"count: the table would hold 110,000,000 values, at most 100,000,000"),
    ],
)
def test_refusals_name_the_argument(call, message):
    # source: issue 19 (ValueError naming the argument, never OverflowError or a hang)
    with pytest.raises(ValueError, match=message):
        call()


def test_huge_traffic_with_few_servers_is_answered():
    # source: Erlang's formula written out for n = 2 (exact rational in mpmath):
    # 1/E = 1 + 2/A + 2/A^2; any finite traffic is accepted
    for a in [1e12, 1e200, 1.7e308]:
        with mp.workdps(40):
            exact = 1 / (1 + 2 / mp.mpf(a) + 2 / mp.mpf(a) ** 2)
        assert _rel(erlang_b(a, 2), exact) <= 1e-15
        assert _rel(erlang_b(np.array([a]), 2.0)[0], exact) <= 1e-15


def test_servers_for_tiny_target_at_the_largest_traffic():
    # source: definition (smallest n with E <= target), checked with log_erlang_b, which
    # is checked against mpmath below; the answer comes at once (no stepping from A)
    for a in [9.9e9, 3.3e7]:
        n = servers_for(np.array([a]), 1e-300)[0]
        assert log_erlang_b(a, float(n)) <= math.log(1e-300) < log_erlang_b(a, float(n - 1))
        assert servers_for(a, 1e-300) == n


def test_dtraffic_underflow_and_its_log_form():
    # source: mpmath, dE/dA = E (n/A - 1 + E) at A = 1e-300, n = 10 is 2.76e-2706: the
    # double underflows to 0 (as the docstring says); the log form it gives is right
    assert erlang_b_dtraffic(1e-300, 10) == 0.0
    assert "underflows" in erlang_b_dtraffic.__doc__
    with mp.workdps(50):
        a, n = mp.mpf(1e-300), mp.mpf(10)
        e = mp_erlang(1e-300, 10)
        exact_log = mp.log(e * (n / a - 1 + e))
    # the figure, 2.76e-2706
    assert float(exact_log) / math.log(10) == pytest.approx(-2706 + math.log10(2.76), abs=1e-3)
    s = 10 - 1e-300 * (1 - erlang_b(1e-300, 10))
    log_form = log_erlang_b(1e-300, 10) + math.log(s) - math.log(1e-300)
    assert _rel(log_form, exact_log) <= 1e-14


def test_dtraffic_keeps_its_digits_far_above_the_servers():
    # source: mpmath, dE/dA = E (n/A - 1 + E) at 60 digits; at A >> n the two terms
    # nearly cancel (dE/dA ~ n (n - 1) / A^3), which the fraction's tail avoids
    for a, n in [(1e5, 10.0), (1e7, 3.0), (500.0, 2.5), (40.0, 39.0)]:
        with mp.workdps(60):
            e = mp_erlang(a, n, dps=60)
            exact = e * (mp.mpf(n) / mp.mpf(a) - 1 + e)
        assert _rel(erlang_b_dtraffic(a, n), exact) <= 1e-12, (a, n)
        assert _rel(erlang_b_dtraffic(np.array([a]), n)[0], exact) <= 1e-12, (a, n)


# -- erlang_b_table ---------------------------------------------------------------------------


def test_erlang_b_table_against_mpmath():
    # source: mpmath 50-digit E(A, n) for every n of the table
    loads = np.array([[0.5, 7.0], [42.0, 150.0]])
    table = erlang_b_table(loads, 200)
    assert table.shape == (2, 2, 201)
    for idx in np.ndindex(loads.shape):
        for n in (0, 1, 2, 17, 60, 149, 200):
            exact = mp_erlang(loads[idx], n)
            if exact >= mp.mpf("1e-300"):
                assert _rel(table[idx + (n,)], exact) <= 1e-13, (idx, n)
    assert list(erlang_b_table(0.0, 3)) == [1.0, 0.0, 0.0, 0.0]
    assert erlang_b_table(3.0, 0).tolist() == [1.0]


def test_erlang_b_table_of_chosen_servers_against_mpmath():
    # source: mpmath 50-digit E(A, n); the chosen columns in the caller's order, repeats kept
    loads = np.array([0.5, 42.0, 150.0])
    servers = [200, 0, 17, 17, 149, 1]
    table = erlang_b_table(loads, 200, servers=servers)
    assert table.shape == (3, 6)
    for i, a in enumerate(loads):
        for k, n in enumerate(servers):
            exact = mp_erlang(a, n)
            if exact >= mp.mpf("1e-300"):
                assert _rel(table[i, k], exact) <= 1e-13, (a, n)
    # one recursion either way: the full table's columns to the last bit
    assert np.array_equal(table, erlang_b_table(loads, 200)[:, servers])
    assert erlang_b_table(loads, 5, servers=[]).shape == (3, 0)


def test_erlang_b_runs_against_mpmath():
    # source: mpmath 50-digit E(A, n) at first + step k; a run of no values, a load of 0,
    # a step of 0 (one count repeated)
    loads = [7.0, 0.0, 90.0, 3.0, 33.0]
    first, step, count = [2, 0, 60, 4, 5], [3, 1, 7, 1, 0], [5, 3, 6, 0, 2]
    got = erlang_b_runs(loads, first, step, count)
    assert got.shape == (sum(count),)
    pos = 0
    for a, f, s, c in zip(loads, first, step, count, strict=True):
        for k in range(c):
            exact = mp_erlang(a, f + s * k)
            assert _rel(got[pos], exact) <= 1e-13, (a, f + s * k)
            assert got[pos] == erlang_b_table(a, f + s * k)[-1]  # the same recursion
            pos += 1
    assert erlang_b_runs([], [], [], []).shape == (0,)


# -- the numerics' own pieces -----------------------------------------------------------------


def test_zeta_constants_and_lgamma1p():
    # source: mpmath.zeta and mpmath.loggamma at 50 digits
    with mp.workdps(50):
        assert list(_erlang_core._ZETA) == [float(mp.zeta(k)) for k in range(2, 10)]
        # below 0.01 the series (relative accuracy); above it math.lgamma(1 + f), whose
        # error is a few ulps of 1 there
        for f in [1e-12, 1e-9, 3e-5, 0.004, 0.0099]:
            exact = mp.loggamma(1 + mp.mpf(f))
            assert abs(_erlang_core.lgamma1p(f) - exact) <= 2e-16 * abs(exact)
        for f in [0.01, 0.25, 0.75, 1.0]:
            exact = mp.loggamma(1 + mp.mpf(f))
            assert abs(_erlang_core.lgamma1p(f) - exact) <= 2e-15


def test_plain_python_and_compiled_numerics_agree():
    # source: the same code run twice (plain Python, numba); they differ by rounding only
    rng = np.random.default_rng(7)
    a = np.exp(rng.uniform(math.log(1e-3), math.log(1e5), 300))
    x = np.exp(rng.uniform(0.0, math.log(1e5), 300))
    x[::2] = np.floor(x[::2])
    fast = _erlang_kernels.compiled()
    for ai, xi in zip(a.tolist(), x.tolist(), strict=True):
        py = _erlang_core.point(ai, xi)
        jit = fast.point(ai, xi)
        if py[0] > 1e-300:
            assert py[0] == pytest.approx(jit[0], rel=1e-14, abs=0.0)


def test_traffic_for_converges_in_at_most_ten_iterations():
    # source: issue 17 (Newton or Halley on log E: at most 10 iterations); the 167 server
    # counts of the benchmark and a spread of targets
    ns = np.unique(np.round(np.logspace(0, 5, 200)))
    assert ns.size == 167
    fast = _erlang_kernels.compiled()
    worst = 0
    for n in [0.5, 2.5, *ns.tolist(), 3e6, 1e9]:
        for t in [0.99, 0.5, 0.1, 0.01, 1e-3, 1e-9, 1e-50, 1e-300, 1e-310]:
            worst = max(worst, fast.traffic_for_point(float(n), t)[1])
    assert worst <= 10


# -- property tests against mpmath ------------------------------------------------------------


def _check_against_mpmath(a, n):
    exact = mp_erlang(a, n)
    e = erlang_b(a, n)
    vec = erlang_b(np.array([a]), np.array([n]))[0]
    if exact >= mp.mpf("1e-300"):
        assert _rel(e, exact) <= 1e-13, (a, n)
        assert _rel(vec, exact) <= 1e-13, (a, n)
    else:
        assert e <= 1.1e-300
    lexact = mp_log_erlang(a, n)
    if lexact != 0:
        assert _rel(log_erlang_b(a, n), lexact) <= 1e-13, (a, n)
    if exact < 1 and exact > mp.mpf("1e-300"):
        l1 = _mp_log1m(a, n)
        if l1 != 0:
            assert _rel(log1m_erlang_b(a, n), l1) <= 1e-12, (a, n)


def _log_uniform(lo, hi):
    return st.floats(min_value=math.log(lo), max_value=math.log(hi)).map(math.exp)


@settings(max_examples=120, deadline=None)
@given(a=_log_uniform(1e-3, 1e5), n=_log_uniform(1.0, 1e5 + 1.0), whole=st.booleans())
def test_property_wide_grid_against_mpmath(a, n, whole):
    # source: mpmath 50 digits on the benchmark's grid (A 1e-3..1e5, n 0..1e5, issue 17)
    n = n - 1.0
    _check_against_mpmath(a, math.floor(n) if whole else n)


@settings(max_examples=60, deadline=None)
@given(a=_log_uniform(1e-300, 1e7), n=_log_uniform(1e-9, 1e7), whole=st.booleans())
def test_property_extremes_against_mpmath(a, n, whole):
    # source: mpmath 50 digits, traffic from 1e-300 and servers from 1e-9 to 1e7
    _check_against_mpmath(a, float(max(1, round(n))) if whole else n)


@pytest.mark.slow
@pytest.mark.parametrize("a,n", [(1e10, 1e10), (2e9, 2e9 + 4e4), (5e9, 4.99e9), (1e10, 3.0),
                                 (7.5e9, 7.5e9 + 0.5)])
def test_largest_servers_against_mpmath(a, n):
    # source: mpmath 50 digits at the top of the accepted range (a few seconds each)
    _check_against_mpmath(a, n)


@settings(max_examples=80, deadline=None)
@given(a=_log_uniform(1e-3, 1e6), t=_log_uniform(1e-320, 0.99))
def test_property_servers_for_is_smallest(a, t):
    # source: definition (smallest n with E <= target), compared on log E below 1e-300
    n = servers_for(a, t)
    assert n == servers_for(np.array([a]), t)[0]
    if t >= 1e-300:
        assert erlang_b(a, n) <= t and (n == 0 or erlang_b(a, n - 1) > t)
    else:
        lt = math.log(t)
        assert log_erlang_b(a, n) <= lt and (n == 0 or log_erlang_b(a, n - 1) > lt)


@settings(max_examples=80, deadline=None)
@given(n=_log_uniform(1e-3, 1e6), t=_log_uniform(1e-300, 0.99), whole=st.booleans())
def test_property_traffic_for_is_largest(n, t, whole):
    # source: definition (largest A with E <= target), to 1e-12 relative
    n = float(max(1, round(n))) if whole else n
    a = traffic_for(n, t)
    assert a == pytest.approx(traffic_for(np.array([n]), t)[0], rel=1e-14)
    if a == 0.0:
        return
    assert erlang_b(a, n) <= t
    assert log_erlang_b(a * (1 + 1e-12), n) > math.log(t)


@settings(max_examples=60, deadline=None)
@given(a=st.floats(min_value=0.0, max_value=400.0), ratio=st.floats(min_value=1e-6,
                                                                    max_value=1.5))
def test_property_moe_equals_the_plain_walk(a, ratio):
    # source: Moe's rule applied circuit by circuit with Erlang's recursion (the
    # definition), against the bisection
    n = 0
    e = 1.0
    while a > 0:
        marginal = a * e - a * (a * e / (n + 1 + a * e))
        if not marginal > ratio * (1 + 1e-12):
            break
        e = a * e / (n + 1 + a * e)
        n += 1
    got = moe_servers(a, ratio, 1.0)
    assert abs(got - n) <= 1 or a == 0
    if a > 0 and got != n:
        # only where the marginal traffic is within rounding of the ratio
        e_got = erlang_b(a, got)
        assert a * (e_got - erlang_b(a, got + 1)) == pytest.approx(ratio, rel=1e-9)


def test_max_arg_is_the_documented_limit():
    # source: the module docstring of netdim.erlang (servers at most 1e10)
    assert MAX_ARG == 1e10
    assert erlang_b(1e10, MAX_ARG) > 0
