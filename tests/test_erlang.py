"""Tests of netdim.erlang against outside sources (each check names its source)."""

from __future__ import annotations

import csv
import math
import pathlib

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from netdim.erlang import (
    erlang_b,
    erlang_b_dservers,
    erlang_b_dtraffic,
    log1m_erlang_b,
    log_erlang_b,
    moe_servers,
    servers_for,
    traffic_for,
)

REF = pathlib.Path(__file__).parent / "data" / "erlang_reference.csv"


def _reference():
    with REF.open() as fh:
        rows = [line for line in fh if not line.startswith("#")]
    out = []
    for r in csv.DictReader(rows):
        out.append(
            (
                float(r["traffic"]),
                float(r["servers"]),
                mp.mpf(r["E"]),
                mp.mpf(r["logE"]),
                mp.mpf(r["log1mE"]) if r["log1mE"] != "-inf" else None,
            )
        )
    return out


mp.mp.dps = 50  # parse the 50-digit strings at full precision
REFERENCE = _reference()


def _rel(value, exact):
    exact = mp.mpf(exact)
    if exact == 0:
        return abs(value)
    return float(abs((mp.mpf(value) - exact) / exact))


# -- mpmath 50-digit reference table (tests/data/make_erlang_reference.py) ---------------------


def test_reference_table_is_the_advertised_grid():
    # source: tests/data/make_erlang_reference.py (13 traffics x 20 server counts)
    assert len(REFERENCE) == 260
    # the mpmath incomplete-gamma values agree with the exact recursion done in mpmath
    # (source: Erlang's recursion, evaluated independently here at 50 digits)
    mp.mp.dps = 50
    for a, n, e, _, _ in REFERENCE:
        if n == int(n) and n <= 200:
            inv = mp.mpf(1)
            for k in range(1, int(n) + 1):
                inv = 1 + inv * k / mp.mpf(a)
            assert abs(1 / inv - e) <= mp.mpf("1e-40") * e


def test_erlang_b_scalar_matches_mpmath_reference():
    # source: mpmath 50-digit table; requirement relative error <= 1e-13 for E >= 1e-300
    worst = 0.0
    for a, n, e, _, _ in REFERENCE:
        if e < mp.mpf("1e-300"):
            assert erlang_b(a, n) < 1e-290
            continue
        worst = max(worst, _rel(erlang_b(a, n), e))
    assert worst <= 1e-13


def test_erlang_b_vectorised_matches_mpmath_reference():
    # source: mpmath 50-digit table, all pairs in one array call
    a = np.array([r[0] for r in REFERENCE])
    n = np.array([r[1] for r in REFERENCE])
    got = erlang_b(a, n)
    assert isinstance(got, np.ndarray) and got.shape == a.shape
    for g, (_, _, e, _, _) in zip(got, REFERENCE, strict=True):
        if e >= mp.mpf("1e-300"):
            assert _rel(g, e) <= 1e-13
        else:
            assert g < 1e-290


def test_log_erlang_b_matches_mpmath_reference():
    # source: mpmath 50-digit table; log E is accurate also where E underflows or is near 1
    a = np.array([r[0] for r in REFERENCE])
    n = np.array([r[1] for r in REFERENCE])
    vec = log_erlang_b(a, n)
    for i, (ai, ni, _, le, _) in enumerate(REFERENCE):
        if le == 0:
            assert log_erlang_b(ai, ni) == 0.0 and vec[i] == 0.0
            continue
        assert _rel(log_erlang_b(ai, ni), le) <= 1e-12, (ai, ni)
        assert _rel(vec[i], le) <= 1e-12, (ai, ni)


def test_log1m_erlang_b_matches_mpmath_reference():
    # source: mpmath 50-digit table of log(1 - E), including E within 1e-7 of 1
    a = np.array([r[0] for r in REFERENCE])
    n = np.array([r[1] for r in REFERENCE])
    vec = log1m_erlang_b(a, n)
    for i, (ai, ni, e, _, l1m) in enumerate(REFERENCE):
        if l1m is None:
            assert log1m_erlang_b(ai, ni) == -math.inf and vec[i] == -math.inf
            continue
        if e < mp.mpf("1e-300"):
            continue  # log(1 - E) = -E is below the smallest double
        assert _rel(log1m_erlang_b(ai, ni), l1m) <= 1e-12, (ai, ni)
        assert _rel(vec[i], l1m) <= 1e-12, (ai, ni)


def test_vectorised_path_agrees_with_mpmath_at_large_recursion_depth():
    # source: mpmath (incomplete-gamma formula) at n up to 5000, where the array path still
    # runs the recursion; a rounding of 1/A that acted like a change of A would show here
    mp.mp.dps = 40
    a = np.array([4000.0, 4999.5, 4500.0, 3000.0, 123.456])
    n = np.array([5000, 5000, 4321, 3100, 4000], dtype=float)
    got = erlang_b(a, n)
    for g, ai, ni in zip(got, a, n, strict=True):
        exact = mp.exp(ni * mp.log(ai) - ai - mp.log(mp.gammainc(ni + 1, ai)))
        if exact > mp.mpf("1e-300"):
            assert _rel(g, exact) <= 1e-13
            assert _rel(erlang_b(float(ai), float(ni)), exact) <= 1e-13


def test_large_server_counts_stay_finite():
    # source: mpmath evaluated here (same incomplete-gamma formula) at servers up to 1e7
    mp.mp.dps = 40
    for a, n in [(1e7, 1e7), (9.99e6, 1e7), (1e7, 9.99e6)]:
        exact = mp.exp(n * mp.log(a) - a - mp.log(mp.gammainc(n + 1, a)))
        assert _rel(erlang_b(a, n), exact) <= 1e-12
    assert 0.0 <= erlang_b(1e3, 1e7) < 1e-300
    assert math.isfinite(log_erlang_b(1e3, 1e7))


# -- special values ---------------------------------------------------------------------------


def test_boundary_values():
    # source: definition of Erlang's formula: E(0, n) = 0 for n > 0 and E(A, 0) = 1
    assert erlang_b(0.0, 5) == 0.0
    assert erlang_b(0, 0.5) == 0.0
    assert erlang_b(7.0, 0) == 1.0
    assert erlang_b(0.0, 0) == 1.0
    assert list(erlang_b(np.array([0.0, 3.0, 0.0]), np.array([4, 0, 0]))) == [0.0, 1.0, 1.0]
    assert log_erlang_b(0.0, 3) == -math.inf
    assert log1m_erlang_b(5.0, 0) == -math.inf


def test_one_server_closed_form():
    # source: E(A, 1) = A / (1 + A) (Erlang's formula with n = 1)
    for a in [1e-6, 0.3, 1.0, 42.0, 1e6]:
        assert erlang_b(a, 1) == pytest.approx(a / (1 + a), rel=1e-15)


def test_scalar_and_array_types():
    # source: the interface contract of netdim.erlang (issue 2): floats in, float out
    assert type(erlang_b(10.0, 10)) is float
    assert type(erlang_b(np.float64(10.0), 10)) is float
    out = erlang_b(np.array([[1.0], [2.0]]), np.array([1, 2, 3]))
    assert out.shape == (2, 3)
    assert out[1, 2] == pytest.approx(erlang_b(2.0, 3), rel=1e-14)


# -- handbook and trade values ----------------------------------------------------------------


def test_handbook_traffic_for():
    # from memory of published Erlang B tables: n = 20 carries 12.03 E at 1% and 15.25 E at
    # 5%; n = 100 carries 84.06 E at 1%
    assert traffic_for(20, 0.01) == pytest.approx(12.03, abs=0.005)
    assert traffic_for(20, 0.05) == pytest.approx(15.25, abs=0.005)
    assert traffic_for(100, 0.01) == pytest.approx(84.06, abs=0.005)


def test_hundred_erlangs_on_hundred_circuits():
    # common practice, no source: 100 E offered to 100 circuits are blocked about 7.6%
    assert erlang_b(100.0, 100) == pytest.approx(0.076, abs=0.0005)


def test_handbook_servers_for():
    # from memory of published Erlang B tables (the same rows read the other way)
    assert servers_for(12.03, 0.01) == 20
    assert servers_for(12.04, 0.01) == 21
    assert servers_for(84.06, 0.01) == 100


# -- inverse functions ------------------------------------------------------------------------


def test_servers_for_is_smallest():
    # source: definition (smallest n with E(A, n) <= target), checked against erlang_b
    traffic = np.array([0.5, 3.0, 12.0, 99.0, 850.0, 4321.0, 2e4])
    for t in [0.9, 0.3, 0.01, 1e-6, 1e-200]:
        n = servers_for(traffic, t)
        assert n.dtype == np.int64
        for a, k in zip(traffic, n, strict=True):
            assert k == servers_for(float(a), t)
            assert erlang_b(float(a), int(k)) <= t
            assert k == 0 or erlang_b(float(a), int(k) - 1) > t
    assert servers_for(0.0, 0.01) == 0


def test_traffic_for_precision():
    # source: definition (largest A with E(A, n) <= target): E at A is <= target and E at
    # A (1 + 1e-12) is above it
    for n in [0.5, 1, 2.5, 3.3, 7, 20, 100, 1000, 2e4]:
        for t in [0.5, 0.01, 1e-9, 1e-300]:
            a = traffic_for(n, t)
            if a == 0.0:
                # the answer is below the smallest double: E ~ A^n / n! for small A
                # (leading term of Erlang's formula) puts it at exp((log t + lgamma(n+1))/n)
                assert (math.log(t) + math.lgamma(n + 1)) / n < math.log(5e-324)
                continue
            assert erlang_b(a, n) <= t
            assert log_erlang_b(a * (1 + 1e-12), n) > math.log(t)
    vec = traffic_for(np.array([20, 100, 0]), 0.01)
    assert vec[2] == 0.0
    assert vec[0] == pytest.approx(traffic_for(20, 0.01), rel=1e-14)


# -- properties (hypothesis) ------------------------------------------------------------------

traffic_st = st.floats(min_value=1e-6, max_value=1e5)
servers_st = st.floats(min_value=0.0, max_value=3000.0)


@settings(max_examples=150, deadline=None)
@given(a=traffic_st, n=servers_st)
def test_property_range_and_monotone(a, n):
    # source: Jagerman (1974): 0 <= E <= 1, E decreasing in n, increasing in A
    e = erlang_b(a, n)
    assert 0.0 <= e <= 1.0
    assert erlang_b(a, n + 1.0) <= e
    assert erlang_b(a * 1.01, n) >= e * (1 - 1e-14)  # equal to rounding when E is near 1
    assert erlang_b(a, n) >= max(0.0, 1.0 - n / a) * (1 - 1e-12)  # carried <= n


@settings(max_examples=100, deadline=None)
@given(a=st.floats(min_value=1e-3, max_value=2e4), t=st.floats(min_value=1e-12, max_value=0.9))
def test_property_round_trips(a, t):
    # source: definitions of servers_for and traffic_for
    n = servers_for(a, t)
    assert erlang_b(a, n) <= t
    if n > 0:
        assert traffic_for(n, t) >= a * (1 - 1e-12)
        assert traffic_for(n - 1, t) < a


# -- argument errors --------------------------------------------------------------------------


@pytest.mark.parametrize("func", [erlang_b, log_erlang_b, log1m_erlang_b])
def test_errors_traffic_servers(func):
    # source: issue 2 (bad arguments raise ValueError naming the argument and the value)
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got -1\.0"):
        func(-1.0, 3)
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got nan"):
        func(float("nan"), 3)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got -2\.0"):
        func(1.0, -2)
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got -3\.0"):
        func(np.array([1.0, -3.0]), 2)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got nan"):
        func(np.array([1.0]), np.array([np.nan]))


def test_errors_inverse():
    # source: issue 2 (targets outside (0, 1) are rejected)
    with pytest.raises(ValueError, match=r"target: must be in \(0, 1\), got 1\.0"):
        servers_for(10.0, 1.0)
    with pytest.raises(ValueError, match=r"target: must be in \(0, 1\), got 0\.0"):
        traffic_for(10, 0.0)
    with pytest.raises(ValueError, match=r"target: must be in \(0, 1\), got -0\.5"):
        servers_for(np.array([1.0]), np.array([-0.5]))
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got -5\.0"):
        servers_for(-5.0, 0.01)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got -1\.0"):
        traffic_for(np.array([-1.0]), 0.01)


# -- derivatives ------------------------------------------------------------------------------


def _mp_erlang(a, n):
    a, n = mp.mpf(a), mp.mpf(n)
    return mp.exp(n * mp.log(a) - a - mp.log(mp.gammainc(n + 1, a)))


@pytest.mark.parametrize("a,n", [(0.3, 1), (10.0, 12), (10.0, 12.3), (95.0, 100), (500.0, 0.5),
                                 (2.0, 40)])
def test_derivatives_vs_mpmath(a, n):
    # source: mpmath numerical differentiation (mp.diff) of the incomplete-gamma formula
    mp.mp.dps = 40
    da = mp.diff(lambda t: _mp_erlang(t, n), a)
    dn = mp.diff(lambda k: _mp_erlang(a, k), n)
    assert _rel(erlang_b_dtraffic(a, n), da) <= 1e-12
    assert _rel(erlang_b_dservers(a, n), dn) <= 1e-9


def test_derivatives_vs_finite_differences_and_arrays():
    # source: central finite differences of erlang_b itself (step 1e-5)
    a = np.array([3.0, 40.0, 250.0])
    n = np.array([4.5, 38.0, 260.0])
    h = 1e-5
    fd_a = (erlang_b(a + h, n) - erlang_b(a - h, n)) / (2 * h)
    fd_n = (erlang_b(a, n + h) - erlang_b(a, n - h)) / (2 * h)
    np.testing.assert_allclose(erlang_b_dtraffic(a, n), fd_a, rtol=1e-6)
    np.testing.assert_allclose(erlang_b_dservers(a, n), fd_n, rtol=1e-6)
    # limits at zero traffic (source: E(A, 1) = A/(1 + A) and E(A, n) ~ A^n/n! near A = 0)
    assert erlang_b_dtraffic(0.0, 1) == 1.0
    assert erlang_b_dtraffic(0.0, 3) == 0.0
    assert erlang_b_dservers(0.0, 3) == 0.0


# -- Moe's principle --------------------------------------------------------------------------


@pytest.mark.parametrize("a,cost,value", [(10.0, 1.0, 5.0), (50.0, 0.3, 1.0), (2.0, 5.0, 1.0),
                                          (200.0, 1.0, 40.0)])
def test_moe_vs_brute_force_profit(a, cost, value):
    # source: brute force -- Moe's n maximises value * carried - cost * n (marginal carried
    # traffic A[E(n) - E(n+1)] falls with n), searched over n = 0..3A+50 here
    def profit(n):
        return value * a * (1 - erlang_b(a, n)) - cost * n

    best = max(range(int(3 * a) + 50), key=profit)
    assert moe_servers(a, cost, value) == best
    arr = moe_servers(np.array([a, 0.0]), cost, value)
    assert arr.dtype == np.int64 and list(arr) == [best, 0]


# -- argument errors (priority 2 functions) ---------------------------------------------------


def test_errors_second_tier():
    # source: issue 2 (bad arguments raise ValueError naming the argument and the value)
    with pytest.raises(ValueError, match=r"traffic: must be >= 0, got -1\.0"):
        erlang_b_dtraffic(-1.0, 2)
    with pytest.raises(ValueError, match=r"servers: must be >= 0, got -1\.0"):
        erlang_b_dservers(1.0, -1)
    with pytest.raises(ValueError, match=r"cost_per_circuit: must be > 0, got 0\.0"):
        moe_servers(3.0, 0.0, 1.0)
    with pytest.raises(ValueError, match=r"value_per_erlang: must be >= 0, got -1\.0"):
        moe_servers(3.0, 1.0, -1.0)
