"""Single-resource loss formulas: Erlang B and its relatives.

Every function takes plain Python numbers (fast pure-Python path, no numpy call: the sizer
calls these millions of times) or arrays (numpy broadcasting, result an ndarray).

Numerical plan for ``E(A, n)`` (offered traffic ``A`` erlangs, ``n`` servers):

* integer ``n`` of moderate size: the recursion ``1/E_k = 1 + k/(A E_{k-1})``, ``E_0 = 1``, in
  its inverse form. Its relative rounding errors shrink by the factor ``1 - E_k`` at each step,
  so it is the most accurate method there is. Over arrays it runs as a compiled (numba) loop
  over blocks of elements.
* real ``n`` or large ``n``: a start value at ``s0 = n - m <= A`` (``m`` a whole number) from
  the incomplete-gamma continuation ``E(A, s) = A^s e^-A / Gamma(s + 1, A)`` -- by the Legendre
  continued fraction of ``Gamma(s + 1, A)``, which converges in about ``sqrt(s)`` terms when
  ``s <= A``, or by ``scipy.special.gammaincc`` when ``A < 2`` -- then the same recursion
  forward over the ``m`` remaining steps. The closed form ``pmf / gammaincc`` is never used
  for E itself: it returns NaN where the Poisson tail underflows and loses digits at large n.
* when ``E`` underflows (below about 1e-300) ``log_erlang_b`` switches to the saddle-point
  form of the Poisson probability (Loader's ``bd0`` and Stirling error), never forming
  ``A^n / n!``.

References
----------
A. K. Erlang, "Solution of some problems in the theory of probabilities of significance in
automatic telephone exchanges", Elektroteknikeren 13 (1917).
D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical Journal
53 (1974) 525-551 (recursion, continuation to real n, derivatives).
C. Loader, "Fast and accurate computation of binomial probabilities" (2000).
W. H. Press et al., Numerical Recipes, 3rd ed., section 6.2 (continued fraction of the
incomplete gamma function, modified Lentz method).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from netdim._erlang_kernels import (
    _check_nonneg,
    _check_positive,
    _check_target,
    _erlang_b_array,
    _erlang_b_scalar,
    _finish,
    _inv_array,
    _is_scalar,
    _log1m_erlang_b_scalar,
    _log_erlang_b_scalar,
    _log_erlang_tiny,
    _prepare,
)

__all__ = [
    "erlang_b",
    "log_erlang_b",
    "log1m_erlang_b",
    "servers_for",
    "traffic_for",
    "erlang_b_dtraffic",
    "erlang_b_dservers",
    "moe_servers",
]


# --------------------------------------------------------------------------------------------
# public API


def erlang_b(traffic, servers):
    """Erlang's loss formula E(A, n): probability that all ``servers`` are busy.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic A in erlangs, >= 0.
    servers : float or array_like
        Number of servers n >= 0; real values use the incomplete-gamma continuation
        ``E(A, n) = A^n e^-A / Gamma(n + 1, A)``.

    Returns
    -------
    float or ndarray
        Blocking in [0, 1]; a float when both arguments are Python numbers. ``E(0, n) = 0``
        for n > 0 and ``E(A, 0) = 1``.

    Raises
    ------
    ValueError
        Negative or NaN traffic or servers.

    Notes
    -----
    See the module notes for the numerical plan. Relative error about 1e-14 against
    50-digit values for blocking down to 1e-300; below that the value underflows (use
    :func:`log_erlang_b`).

    References
    ----------
    A. K. Erlang (1917); D. L. Jagerman, Bell System Technical Journal 53 (1974).
    """
    if _is_scalar(traffic, servers):
        _check_nonneg("traffic", traffic)
        _check_nonneg("servers", servers)
        return _erlang_b_scalar(float(traffic), float(servers))
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    return _finish(_erlang_b_array(traffic, servers))


def _array_cases(traffic, servers, at_one, at_zero):
    """Flat arrays with the trivial cases filled in: E = 1 (no servers or infinite traffic)
    gets ``at_one``, E = 0 (no traffic) gets ``at_zero``; ``work`` indexes the rest."""
    a, x, shape = _prepare(traffic, servers)
    out = np.empty(a.shape)
    one = (x == 0) | (a == np.inf)
    zero = (a == 0) & ~one
    out[one] = at_one
    out[zero] = at_zero
    return a, x, shape, out, np.flatnonzero(~(one | zero))


def log_erlang_b(traffic, servers):
    """Natural log of E(A, n), accurate (relatively) also when E underflows.

    Parameters and rules as :func:`erlang_b`; returns ``-inf`` for ``E = 0``.

    Notes
    -----
    Below 1e-280 the value is ``log pmf(n; A) - log P(X <= n)`` for ``X ~ Poisson(A)``, the
    Poisson probability taken in saddle-point form (Loader 2000).
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _log_erlang_b_scalar(float(traffic), float(servers))
    a, x, shape, out, work = _array_cases(traffic, servers, at_one=0.0, at_zero=-np.inf)
    if work.size:
        inv, prev = _inv_array(a[work], x[work])
        out[work] = -np.log(inv)
        for i in work[inv >= 1e280]:
            out[i] = _log_erlang_tiny(float(a[i]), float(x[i]))
        near = inv < 2.0
        ok = near & np.isfinite(prev)
        idx = work[ok]
        out[idx] = -np.log1p(x[idx] * prev[ok] / a[idx])
        for i in work[near & ~ok]:
            out[i] = _log_erlang_b_scalar(float(a[i]), float(x[i]))
    return _finish(out.reshape(shape))


def log1m_erlang_b(traffic, servers):
    """Natural log of 1 - E(A, n), accurate when E is tiny and when E is close to 1.

    Parameters and rules as :func:`erlang_b`; ``-inf`` where E = 1.

    Notes
    -----
    For E >= 1/2 it uses ``1 - E_n = n E_n / (A E_{n-1})``, which follows from the
    recursion and has no cancellation (Jagerman 1974).
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _log1m_erlang_b_scalar(float(traffic), float(servers))
    a, x, shape, out, work = _array_cases(traffic, servers, at_one=-np.inf, at_zero=0.0)
    if work.size:
        inv, prev = _inv_array(a[work], x[work])
        with np.errstate(divide="ignore"):
            e = 1.0 / inv
            out[work] = np.log1p(-e)
        hi = inv <= 2.0
        ok = hi & np.isfinite(prev)
        idx = work[ok]
        t = x[idx] * prev[ok] / a[idx]
        out[idx] = np.log(t) - np.log1p(t)
        for i in work[hi & ~ok]:
            out[i] = _log1m_erlang_b_scalar(float(a[i]), float(x[i]))
    return _finish(out.reshape(shape))


# --------------------------------------------------------------------------------------------
# inverse problems


def _servers_for_scalar(a, t):
    if a == 0.0:
        return 0
    # E(A, n) > 1 - n/A (carried traffic is below n), so E > t at n_lo = A(1 - t) - 1.
    n = max(0, math.floor(a * (1.0 - t)) - 1)
    inv = 1.0 / _erlang_b_scalar(a, float(n)) if n > 0 else 1.0
    goal = 1.0 / t
    while inv < goal:
        n += 1
        inv = 1.0 + inv * n / a
    return n


def servers_for(traffic, target):
    """Smallest whole number of servers n with E(traffic, n) <= target.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic in erlangs, >= 0 (zero traffic needs 0 servers).
    target : float or array_like
        Blocking target in (0, 1).

    Returns
    -------
    int or ndarray of int64

    Raises
    ------
    ValueError
        Negative or NaN traffic; target outside (0, 1).

    Notes
    -----
    Starts below the answer at ``A (1 - target) - 1`` (where ``E > 1 - n/A`` guarantees
    blocking above the target) and steps the recursion up; the work is about the distance
    from there to the answer, ``O(sqrt(A))`` for small targets.
    """
    _check_nonneg("traffic", traffic)
    _check_target("target", target)
    if _is_scalar(traffic, target):
        return _servers_for_scalar(float(traffic), float(target))
    a, t = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(target, dtype=float))
    shape = a.shape
    a = a.ravel()
    t = t.ravel()
    n = np.zeros(a.shape, dtype=np.int64)
    live = a > 0
    n[live] = np.maximum(0, np.floor(a[live] * (1.0 - t[live])) - 1).astype(np.int64)
    inv = np.ones(a.shape)
    pos = live & (n > 0)
    inv[pos] = 1.0 / _erlang_b_array(a[pos], n[pos].astype(float))
    goal = 1.0 / t
    idx = np.flatnonzero(live & (inv < goal))
    while idx.size:
        n[idx] += 1
        inv[idx] = 1.0 + inv[idx] * n[idx] / a[idx]
        idx = idx[inv[idx] < goal[idx]]
    out = n.reshape(shape)
    return int(out) if out.ndim == 0 else out


def traffic_for(servers, target):
    """Largest offered traffic A with E(A, servers) <= target, to 1e-12 relative or better.

    Parameters
    ----------
    servers : float or array_like
        Servers n >= 0 (real values allowed); 0 servers carry nothing (returns 0).
    target : float or array_like
        Blocking target in (0, 1).

    Returns
    -------
    float or ndarray

    Raises
    ------
    ValueError
        Negative or NaN servers; target outside (0, 1).

    Notes
    -----
    E increases in A, and ``d log E / d log A = n - A (1 - E) > 0`` (Jagerman 1974), so
    Newton's method on ``log E(e^u, n) = log target`` in ``u = log A`` converges quickly; it is
    kept inside the bracket ``(0, n / (1 - target)]`` (E >= 1 - n/A gives the upper end) and
    falls back to bisection when a step leaves it.
    """
    _check_nonneg("servers", servers)
    _check_target("target", target)
    scalar = _is_scalar(servers, target)
    x, t = np.broadcast_arrays(np.asarray(servers, dtype=float), np.asarray(target, dtype=float))
    shape = x.shape
    x = x.ravel().copy()
    t = t.ravel().copy()
    out = np.zeros(x.shape)
    live = np.flatnonzero(x > 0)
    if live.size:
        xs, ts = x[live], t[live]
        logt = np.log(ts)
        hi = np.log(xs / (1.0 - ts))
        lo = np.full(xs.shape, -np.inf)
        # start: the Poisson tail bound E ~ pmf for small A gives log A ~ (log t + lgamma(n+1))/n
        u = np.minimum(hi, (logt + special.gammaln(xs + 1.0)) / xs)
        u = np.where(np.isfinite(u), u, hi)
        active = np.arange(xs.size)
        for _ in range(200):
            if active.size == 0:
                break
            uu = u[active]
            aa = np.exp(uu)
            le = np.asarray(log_erlang_b(aa, xs[active]), dtype=float)
            g = le - logt[active]
            over = g > 0
            hi[active] = np.where(over, uu, hi[active])
            lo[active] = np.where(over, lo[active], uu)
            e = np.exp(le)
            slope = xs[active] - aa * (1.0 - e)
            step = g / slope
            new = uu - step
            bad = ~((new > lo[active]) & (new < hi[active])) | ~np.isfinite(new)
            lo_a = lo[active]
            mid = np.where(np.isfinite(lo_a), 0.5 * (lo_a + hi[active]), hi[active] - 1.0)
            new = np.where(bad, mid, new)
            new = np.where(g == 0, uu, new)
            u[active] = new
            done = (np.abs(new - uu) <= 1e-15 * np.maximum(1.0, np.abs(uu))) | (g == 0)
            active = active[~done]
        a_final = np.exp(u)
        # the answer must satisfy E <= t: step down by ulps if rounding put it just above
        # (checked with the same path, scalar or array, the caller will use)
        def check(f):
            if scalar:
                return np.array([f(float(p), float(q)) for p, q in zip(a_final, xs, strict=True)])
            return np.asarray(f(a_final, xs), dtype=float)

        for _ in range(8):
            tiny = ts < 1e-307
            le = check(log_erlang_b)
            e = check(erlang_b)
            above = np.where(tiny, le > logt, e > ts)
            if not above.any():
                break
            slope = np.maximum(xs - a_final * (1.0 - np.minimum(e, 1.0)), 1e-300)
            over = np.where(tiny, le - logt, np.log(e / ts))
            shrink = np.exp(-np.maximum(over, 0.0) / slope) * (1.0 - 4.5e-16)
            a_final = np.where(above, a_final * shrink, a_final)
        out[live] = a_final
    out = out.reshape(shape)
    if scalar or out.ndim == 0:
        return float(out)
    return out


# --------------------------------------------------------------------------------------------
# derivatives


def erlang_b_dtraffic(traffic, servers):
    """Derivative dE/dA of Erlang's formula with respect to the offered traffic.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray

    Notes
    -----
    ``dE/dA = E (n/A - 1 + E)`` for integer and real n (Jagerman 1974). At A = 0 the limit is
    used: 0 for n = 0 or n > 1, 1 for n = 1, +inf for 0 < n < 1.
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    scalar = _is_scalar(traffic, servers)
    a, x = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(servers, dtype=float))
    e = np.asarray(erlang_b(a, x), dtype=float)
    # 1 - E from log(1 - E) where E is near 1, so n/A - (1 - E) keeps its digits
    one_minus = np.where(e > 0.5, np.exp(np.asarray(log1m_erlang_b(a, x), dtype=float)), 1 - e)
    with np.errstate(divide="ignore", invalid="ignore"):
        d = e * (x / a - one_minus)
    zero = a == 0
    if zero.any():
        lim = np.where(x == 1, 1.0, np.where((x > 0) & (x < 1), np.inf, 0.0))
        d = np.where(zero, lim, d)
    d = np.where(x == 0, 0.0, d)
    d = np.where(np.isinf(a), 0.0, d)
    return float(d) if scalar or np.ndim(d) == 0 else d


def _dservers_scalar(a, x):
    from scipy import integrate

    if a == 0.0 or a == math.inf:
        return 0.0
    e = _erlang_b_scalar(a, x)
    if e == 0.0:
        return 0.0

    # 1/E = int_0^inf w(u) du with w(u) = e^-u (1 + u/A)^x, so
    # dE/dx = -E * (int w log1p(u/A)) / (int w): a weighted mean, scaled by max w.
    u_star = max(0.0, x - a)

    def logw(u):
        return -u + x * math.log1p(u / a)

    peak = logw(u_star)
    width = 40.0 * math.sqrt(x + a + 1.0) + 50.0
    pieces = [(0.0, u_star), (u_star, u_star + width)] if u_star > 0 else [(0.0, width)]
    num = den = 0.0
    for lo_, hi_ in pieces:
        if hi_ <= lo_:
            continue
        num += integrate.quad(
            lambda u: math.exp(logw(u) - peak) * math.log1p(u / a), lo_, hi_,
            limit=200, epsabs=0.0, epsrel=1e-13,
        )[0]
        den += integrate.quad(
            lambda u: math.exp(logw(u) - peak), lo_, hi_, limit=200, epsabs=0.0, epsrel=1e-13
        )[0]
    return -e * num / den


def erlang_b_dservers(traffic, servers):
    """Derivative dE/dn of the continued Erlang formula with respect to (real) servers.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray
        Always <= 0.

    Notes
    -----
    From the integral form ``1/E(A, n) = int_0^inf e^-u (1 + u/A)^n du`` (Jagerman 1974):
    ``dE/dn = -E * <log(1 + u/A)>``, the mean of ``log(1 + u/A)`` under the weight
    ``e^-u (1 + u/A)^n``, computed by adaptive quadrature (scipy.integrate.quad) around the
    weight's peak, scaled by its maximum so nothing overflows.
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _dservers_scalar(float(traffic), float(servers))
    a, x, shape = _prepare(traffic, servers)
    out = np.array([_dservers_scalar(float(ai), float(xi)) for ai, xi in zip(a, x, strict=True)])
    return _finish(out.reshape(shape))


# --------------------------------------------------------------------------------------------
# economic sizing


def _moe_scalar(a, cost, value):
    if a == 0.0 or value == 0.0:
        return 0
    ratio = cost / value
    n = 0
    e = 1.0
    while True:
        # marginal carried traffic of circuit n + 1: A (E_n - E_{n+1}), without cancellation
        marginal = a * e * (n + 1 - a * (1.0 - e)) / (n + 1 + a * e)
        if not marginal > ratio:
            return n
        e = a * e / (n + 1 + a * e)
        n += 1


def moe_servers(traffic, cost_per_circuit, value_per_erlang):
    """Circuits by Moe's principle: add one while its carried traffic is worth its cost.

    Circuit n + 1 is added while ``A [E(A, n) - E(A, n + 1)] * value_per_erlang >
    cost_per_circuit``. The marginal carried traffic falls as n grows, so the answer also
    maximises ``value * A (1 - E(A, n)) - cost * n``.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic, erlangs, >= 0.
    cost_per_circuit : float or array_like
        Cost of one circuit for the period, > 0.
    value_per_erlang : float or array_like
        Value of one erlang carried for the same period, >= 0.

    Returns
    -------
    int or ndarray of int64

    Raises
    ------
    ValueError
        Negative or NaN traffic or value; cost not > 0.

    References
    ----------
    E. Jensen, "Moe's principle" (1950); see also R. Syski, Introduction to Congestion
    Theory in Telephone Systems, 2nd ed., North-Holland (1986).
    """
    _check_nonneg("traffic", traffic)
    _check_positive("cost_per_circuit", cost_per_circuit)
    _check_nonneg("value_per_erlang", value_per_erlang)
    if _is_scalar(traffic, cost_per_circuit, value_per_erlang):
        return _moe_scalar(float(traffic), float(cost_per_circuit), float(value_per_erlang))
    a, c, v = np.broadcast_arrays(
        np.asarray(traffic, dtype=float), np.asarray(cost_per_circuit, dtype=float),
        np.asarray(value_per_erlang, dtype=float),
    )
    out = np.array(
        [_moe_scalar(float(x), float(y), float(z))
         for x, y, z in zip(a.ravel(), c.ravel(), v.ravel(), strict=True)],
        dtype=np.int64,
    ).reshape(a.shape)
    return int(out) if out.ndim == 0 else out
