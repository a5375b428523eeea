"""Tests of netdim.transient (one loss resource over a day) against outside references.

The reference is the transient birth-death chain computed here, independently of the module:
the matrix exponential (scipy.linalg.expm) of the generator augmented with one column that
accumulates P(full), period by period (Kolmogorov forward equations; Feller, vol. 1, ch.
XVII). Erlang B comes from its recursion evaluated with mpmath at 30 digits (Erlang 1917).
"""

from __future__ import annotations

import doctest
import json

import mpmath as mp
import numpy as np
import pytest
import scipy.linalg as sl
from scipy import integrate

from netdim import _transient_solvers, transient
from netdim.errors import ConvergenceError, InfeasibleError, ModelTooLargeError
from netdim.transient import (
    day_grid,
    day_loss,
    day_servers,
    offered_load,
    period_lengths,
    worst_period,
)

# The worked example of the issue: arrivals per hour in twelve 1-h periods, mean stay 2 h.
WAVE = [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]


def augmented(lam, n, h):
    """(n + 2)-state matrix: the loss chain's generator plus a column gathering P(N = n)."""
    m = np.zeros((n + 2, n + 2))
    for k in range(n + 1):
        if k < n:
            m[k, k + 1] = lam
            m[k, k] -= lam
        if k > 0:
            m[k, k - 1] = k / h
            m[k, k] -= k / h
    m[n, n + 1] = 1.0
    return m


def dense_day(rates, n, h, hours=None, p0=None):
    """Per period: time full / length, and the state at each period end (expm reference)."""
    hours = np.ones(len(rates)) if hours is None else np.asarray(hours, float)
    p = np.zeros(n + 1)
    if p0 is None:
        p[0] = 1.0
    else:
        p = np.asarray(p0, float).copy()
    blocking, ends = [], [p]
    for lam, dt in zip(rates, hours, strict=True):
        y = np.append(p, 0.0) @ sl.expm(augmented(lam, n, h) * dt)
        p = y[:-1]
        blocking.append(y[-1] / dt)
        ends.append(p)
    return np.array(blocking), ends


def dense_cyclic(rates, n, h, hours=None):
    """The periodic state: left eigenvector of the day's transition matrix (expm, lstsq)."""
    hours = np.ones(len(rates)) if hours is None else np.asarray(hours, float)
    phi = np.eye(n + 1)
    for lam, dt in zip(rates, hours, strict=True):
        phi = phi @ sl.expm(augmented(lam, n, h)[:-1, :-1] * dt)
    a = np.vstack([(phi - np.eye(n + 1)).T, np.ones(n + 1)])
    b = np.zeros(n + 2)
    b[-1] = 1.0
    return np.linalg.lstsq(a, b, rcond=None)[0]


def mp_erlang_b(a, n):
    # Erlang B recursion B(k) = a B(k-1) / (k + a B(k-1)) at 30 digits (Erlang 1917)
    with mp.workdps(30):
        b = mp.mpf(1)
        for k in range(1, n + 1):
            b = a * b / (k + a * b)
        return float(b)


def least_erlang(a, target):
    n = 0
    while mp_erlang_b(a, n) > target:
        n += 1
    return n


# --------------------------------------------------------------------------------------------
# the worked example, computed three ways


@pytest.mark.parametrize("method", transient.METHODS)
@pytest.mark.parametrize("servers", [70, 76])
def test_wave_matches_matrix_exponential(method, servers):
    ref, _ = dense_day(WAVE, servers, 2.0)
    r = day_loss(WAVE, servers, 2.0, method=method)
    np.testing.assert_allclose(r.blocking, ref, rtol=0, atol=1e-9)
    offered = np.array(WAVE, float)
    assert r.lost_fraction == pytest.approx((ref * offered).sum() / offered.sum(), abs=1e-9)
    assert r.peak_period == int(np.argmax(ref))


def test_wave_worst_period_at_70_is_about_4_6_percent():
    # issue 20: "at 70 spaces ... the true worst period sees about 4.6%"; the busy-hour
    # figure E(90, 70) "predicts 25%" (Erlang B at 30 digits)
    u = day_loss(WAVE, 70, 2.0)
    o = day_loss(WAVE, 70, 2.0, method="ode")
    assert round(u.peak_blocking, 3) == round(o.peak_blocking, 3) == 0.046
    assert round(mp_erlang_b(90, 70), 2) == 0.25


def test_wave_sized_to_one_percent_in_the_worst_period_is_78():
    # issue 20: least size with every period's blocking <= 1 % is 78; Erlang B at the busy
    # hour (45/h x 2 h = 90 E) asks 107. Both checked against the expm reference here.
    s = day_servers(WAVE, 2.0, 0.01)
    assert s.servers == 78
    assert dense_day(WAVE, 78, 2.0)[0].max() <= 0.01 < dense_day(WAVE, 77, 2.0)[0].max()
    assert s.busy_hour_servers == least_erlang(90, 0.01) == 107
    assert s.below.peak_blocking > 0.01 >= s.result.peak_blocking
    assert s.achieved == s.result.peak_blocking


@pytest.mark.slow
def test_wave_sizing_by_the_ode_agrees():
    assert day_servers(WAVE, 2.0, 0.01, method="ode").servers == 78


def test_sizing_on_the_day_lost_fraction():
    # least n whose share of the day's arrivals lost is <= 1 %, by a linear scan of the
    # expm reference
    offered = np.array(WAVE, float)
    n = 60
    while (dense_day(WAVE, n, 2.0)[0] * offered).sum() / offered.sum() > 0.01:
        n += 1
    s = day_servers(WAVE, 2.0, 0.01, target_basis="day")
    assert s.servers == n
    assert s.result.lost_fraction <= 0.01 < s.below.lost_fraction


# --------------------------------------------------------------------------------------------
# constant demand reduces to Erlang B


@pytest.mark.parametrize("a, n", [(90.0, 107), (5.0, 8), (30.0, 25), (2.0, 0)])
def test_constant_rates_cyclic_is_erlang_b(a, n):
    r = day_loss([a / 1.5] * 6, n, 1.5, period=2.0, cyclic=True)
    np.testing.assert_allclose(r.blocking, mp_erlang_b(a, n), rtol=1e-10, atol=1e-15)
    assert r.residual < 1e-10


@pytest.mark.parametrize("method", transient.METHODS)
def test_constant_rates_long_day_from_empty_tends_to_erlang_b(method):
    # 40 holding times after an empty start the transient is below exp(-40)
    r = day_loss([12.0] * 40, 15, 1.0, method=method)
    assert r.blocking[-1] == pytest.approx(mp_erlang_b(12, 15), rel=1e-9)
    assert r.blocking[0] < r.blocking[-1]


# --------------------------------------------------------------------------------------------
# starts, cyclic days, period lengths


@pytest.mark.parametrize("method", transient.METHODS)
def test_given_occupancy_and_distribution(method):
    rates, hours = [20.0, 3.0, 14.0], [0.5, 2.0, 1.25]
    ref, _ = dense_day(rates, 12, 0.8, hours, p0=np.eye(13)[9])
    r = day_loss(rates, 12, 0.8, hours, start=9, method=method)
    np.testing.assert_allclose(r.blocking, ref, atol=1e-9)
    p0 = np.linspace(1, 2, 13) / np.linspace(1, 2, 13).sum()
    ref, ends = dense_day(rates, 12, 0.8, hours, p0=p0)
    r = day_loss(rates, 12, 0.8, hours, start=p0, method=method)
    np.testing.assert_allclose(r.blocking, ref, atol=1e-9)
    np.testing.assert_allclose(r.end, ends[-1], atol=1e-9)


@pytest.mark.parametrize("method", transient.METHODS)
def test_cyclic_day_is_the_periodic_state(method):
    rates, hours = [4.0, 30.0, 22.0, 1.0], [3.0, 1.0, 2.5, 4.0]
    p = dense_cyclic(rates, 20, 1.7, hours)
    r = day_loss(rates, 20, 1.7, hours, cyclic=True, method=method)
    np.testing.assert_allclose(r.start, p, atol=1e-10)
    np.testing.assert_allclose(r.end, r.start, atol=1e-10)
    ref, _ = dense_day(rates, 20, 1.7, hours, p0=p)
    np.testing.assert_allclose(r.blocking, ref, atol=1e-9)


def test_cyclic_day_with_long_holding():
    # holding time twice the day: the day map contracts slowly, GMRES still solves it
    rates = [2.0, 9.0, 6.0, 0.5]
    p = dense_cyclic(rates, 30, 8.0)
    r = day_loss(rates, 30, 8.0, cyclic=True)
    np.testing.assert_allclose(r.start, p, atol=1e-10)


# --------------------------------------------------------------------------------------------
# occupancy over the day


def test_occupancy_curves_against_the_matrix_exponential():
    rates, h, n = [6.0, 40.0, 25.0], 1.0, 30
    r = day_loss(rates, n, h, steps_per_period=4, quantile=0.9)
    assert r.times.tolist() == pytest.approx(np.linspace(0, 3, 13).tolist())
    gen = [augmented(lam, n, h)[:-1, :-1] for lam in rates]
    p = np.eye(n + 1)[0]
    states = [p]
    for g in gen:
        step = sl.expm(g * 0.25)
        for _ in range(4):
            p = p @ step
            states.append(p)
    states = np.array(states)
    k = np.arange(n + 1)
    np.testing.assert_allclose(r.occupancy_mean, states @ k, atol=1e-9)
    np.testing.assert_allclose(r.full_probability, states[:, n], atol=1e-12)
    want_q = [int(np.searchsorted(np.cumsum(s), 0.9 - 1e-12)) for s in states]
    assert r.occupancy_quantile.tolist() == want_q
    assert r.peak_occupancy == pytest.approx((states @ k).max(), abs=1e-9)
    assert r.peak_time == r.times[np.argmax(states @ k)]

    # time-average occupancy of each period: numerical quadrature of the mean curve
    def mean_at(t, i, p_start):
        return float(p_start @ sl.expm(gen[i] * t) @ k)

    for i in range(3):
        want = integrate.quad(mean_at, 0, 1, args=(i, states[4 * i]), epsabs=1e-11)[0]
        assert r.occupancy_period_mean[i] == pytest.approx(want, abs=1e-8)


def test_offered_load_is_the_infinite_server_mean():
    # m' = lambda(t) - m / h (the infinite-server mean; Jagerman 1975), solved by solve_ivp
    rates, hours, h = [8.0, 30.0, 2.0], [1.0, 0.5, 3.0], 1.5
    m = offered_load(rates, h, hours, start=4.0, steps_per_period=5)
    times = day_grid(np.array(hours), 5)

    def f(t, y):
        i = min(int(np.searchsorted(np.cumsum(hours), t, side="right")), 2)
        return [rates[i] - y[0] / h]

    sol = integrate.solve_ivp(f, (0, 4.5), [4.0], t_eval=times, rtol=1e-11, atol=1e-12,
                              max_step=0.01)
    np.testing.assert_allclose(m, sol.y[0], rtol=1e-7)
    cyc = offered_load(rates, h, hours, cyclic=True)
    assert cyc[0] == pytest.approx(cyc[-1], rel=1e-12)


def test_periods_without_arrivals_are_not_the_worst():
    # after a heavy hour the park stays fuller in the empty hour that follows, but no
    # arrival sees it: the worst period is the one with arrivals
    r = day_loss([200.0, 0.0], 20, 10.0, [0.2, 0.5])
    ref, _ = dense_day([200.0, 0.0], 20, 10.0, [0.2, 0.5])
    assert ref[1] > ref[0]
    np.testing.assert_allclose(r.blocking, ref, atol=1e-9)
    assert r.peak_period == 0
    assert r.lost[1] == 0.0
    assert worst_period([0.5, 0.9], [0.0, 0.0]) == 1


def test_to_dict_is_json():
    d = day_loss(WAVE, 70, 2.0).to_dict()
    text = json.dumps(d)
    for key in ("peak_blocking", "peak_period", "lost_fraction", "blocking_by_period"):
        assert key in d
    assert json.loads(text)["occupancy"]["peak_quantile"] >= 60
    assert "result" in json.loads(json.dumps(day_servers(WAVE, 2.0, 0.01).to_dict()))


def test_no_arrivals_and_zero_servers():
    r = day_loss([0.0, 0.0], 5, 1.0)
    assert r.lost_fraction == 0.0 and r.occupancy_mean.max() == 0.0
    assert day_servers([0.0, 0.0], 1.0, 0.01).servers == 0
    r = day_loss([3.0], 0, 1.0)
    assert r.blocking[0] == pytest.approx(1.0, rel=1e-14) == r.lost_fraction


def test_examples_in_docstrings():
    result = doctest.testmod(transient, optionflags=doctest.ELLIPSIS)
    assert result.attempted >= 2 and result.failed == 0


# --------------------------------------------------------------------------------------------
# bad input


@pytest.mark.parametrize(
    "kwargs, message",
    [
        (dict(rates=[]), r"rates: expected a list of one rate per period"),
        (dict(rates=[1.0, -2.0]), r"rates: period 1: must be a finite rate >= 0"),
        (dict(rates=[[1.0]]), r"rates: expected a list"),
        (dict(servers=-1), r"servers: must be a whole number >= 0"),
        (dict(servers=2.5), r"servers: must be a whole number >= 0"),
        (dict(holding=0.0), r"holding: must be a number of hours > 0"),
        (dict(period=[1.0]), r"period: expected one length or 2 \(one per period\)"),
        (dict(period=-1.0), r"period: must be a number of hours > 0"),
        (dict(start=9), r"start: occupancy must lie in 0..5"),
        (dict(start=[0.5, 0.5]), r"start: expected a whole number of busy units or a distr"),
        (dict(start=[0.5] * 6), r"start: a distribution must be >= 0 and sum to 1"),
        (dict(start=2, cyclic=True), r"start: a cyclic day has no start occupancy"),
        (dict(method="expm"), r"method: unknown method 'expm'; choose one of uniformization"),
        (dict(steps_per_period=0), r"steps_per_period: must be a whole number >= 1"),
        (dict(quantile=1.0), r"quantile: must lie in \(0, 1\)"),
    ],
)
def test_bad_arguments(kwargs, message):
    args = dict(rates=[1.0, 2.0], servers=5, holding=1.0)
    args.update(kwargs)
    with pytest.raises(ValueError, match=message):
        day_loss(args.pop("rates"), args.pop("servers"), args.pop("holding"), **args)


def test_too_large_and_infeasible():
    with pytest.raises(ModelTooLargeError, match=r"servers: 100001 is over the limit"):
        day_loss([1.0], transient.MAX_SERVERS + 1, 1.0)
    with pytest.raises(InfeasibleError, match=r"no size up to max_servers 20 keeps the peak"):
        day_servers(WAVE, 2.0, 0.01, max_servers=20)
    with pytest.raises(ValueError, match=r"target: must lie in \(0, 1\)"):
        day_servers(WAVE, 2.0, 1.5)
    with pytest.raises(ValueError, match=r"target_basis: unknown basis 'hour'; choose one of"):
        day_servers(WAVE, 2.0, 0.01, target_basis="hour")
    with pytest.raises(ValueError, match=r"start: sizing takes a whole number of busy units"):
        day_servers(WAVE, 2.0, 0.01, start=[1.0])
    with pytest.raises(ValueError, match=r"max_servers: must be a whole number >= 1"):
        day_servers(WAVE, 2.0, 0.01, max_servers=0)
    assert period_lengths(0.25, 3).tolist() == [0.25] * 3


def test_cyclic_failure_is_reported(monkeypatch):
    # no residual is small enough under a negative tolerance: the error path must be taken
    monkeypatch.setattr(_transient_solvers, "_CYCLIC_TOL", -1.0)
    with pytest.raises(ConvergenceError, match=r"cyclic day: the periodic state was not found"):
        day_loss([1.0, 2.0], 4, 1.0, cyclic=True)


def test_ode_solver_failure_is_reported(monkeypatch):
    class Failed:
        success = False
        message = "step size too small"

    monkeypatch.setattr(_transient_solvers, "solve_ivp", lambda *a, **k: Failed())
    with pytest.raises(ConvergenceError, match=r"the ODE solver stopped: step size too small"):
        day_loss([1.0], 3, 1.0, method="ode")
