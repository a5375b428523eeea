"""Erlang's loss formula for one group of servers: blocking, its logarithms, its inverses,
its derivatives, the table of every value up to n, and Moe's principle.

``E(A, n)`` is the probability that all ``n`` servers of a group offered ``A`` erlangs of
Poisson traffic are busy (Erlang's formula [1]_), continued to real ``n`` by
``E(A, n) = A^n e^-A / Gamma(n + 1, A)`` [2]_. Every function takes Python numbers (float
out, no compiler loaded for a single answer) or arrays (numpy broadcasting; one compiled
pass over the elements, whatever the n, whole or real).

Accuracy (against mpmath at 50 digits, tests/test_erlang*.py): relative error below 1e-13
wherever ``E >= 1e-300``, for any finite traffic and up to 1e10 servers (worst seen about
5e-14); ``log E`` to 1e-13 relative also where E underflows. Arguments must be finite and
>= 0, servers at most 1e10 (:data:`MAX_ARG`); :func:`servers_for` and :func:`moe_servers`
take traffic up to 9.9e9 (:data:`MAX_TRAFFIC_SIZED`, so that their answers stay within
range); anything else raises ValueError naming the argument. The
numerical plan (recursion, continued fraction, Poisson series in double-double) is in
:mod:`netdim._erlang_core` and docs/theory/erlang-b.md.

References
----------
.. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
   significance in automatic telephone exchanges", Elektroteknikeren 13 (1917) 5-13.
.. [2] D. L. Jagerman, "Some properties of the Erlang loss function", Bell System
   Technical Journal 53 (1974) 525-551.
.. [3] A. Jensen, "Moe's principle: an econometric investigation intended as an aid in
   dimensioning and managing telephone plant", Copenhagen Telephone Company (1950).
"""

from __future__ import annotations

import math
import time

import numpy as np

from netdim import _erlang_core as _core
from netdim._erlang_kernels import (
    FINITE,
    MAX_ARG,
    MAX_TRAFFIC_SIZED,
    _check_arg,
    _check_nonneg,
    _check_positive,
    _check_target,
    _elementwise,
    _finish,
    _flat,
    _many,
    compiled,
    loaded,
)
from netdim._erlang_tables import erlang_b_runs, erlang_b_table

__all__ = [
    "MAX_ARG",
    "MAX_TRAFFIC_SIZED",
    "erlang_b",
    "log_erlang_b",
    "log1m_erlang_b",
    "erlang_b_table",
    "erlang_b_runs",
    "servers_for",
    "traffic_for",
    "erlang_b_dtraffic",
    "erlang_b_dservers",
    "moe_servers",
]

_SCALARS = (int, float)
_HUGE = _core.HUGE


def _recursion_written_out(n):
    """``lambda a: 1/E(a, n)``: Erlang's recursion ``inv = 1 + inv * k / a`` for k = 1..n
    written out as one expression, the same operations in the same order as the loop. For
    a few servers the interpreter's loop costs more than the arithmetic; without it a
    scalar call is faster than the plain loop, which is the floor issue 17 sets."""
    expr = "1.0"
    for k in range(1, n + 1):
        expr = f"(1.0 + {expr} * {float(k)!r} / a)"
    return eval(f"lambda a: {expr}")  # a fixed expression of floats built here, no input


#: 1/E(a, n) for n = 0..30, each built on first use (building all takes a few ms).
_INV = [None] * 31
#: Scalar calls beyond the plain recursion (more than 30 servers or erlangs, or real servers)
#: run as plain Python until they have taken this many seconds in all, about what loading
#: the compiled kernels takes (unless something else has loaded them): a single answer
#: never waits for the compiler, and many answers pay for it once.
_PY_SECONDS = 0.5
_spent = [0.0]


def _call(name, size, *args):
    """``_erlang_core.name(*args)``, compiled once loaded (see :data:`_PY_SECONDS`)."""
    k = loaded()
    if k is None and size > 30:
        if _spent[0] > _PY_SECONDS:
            k = compiled()
        else:
            t0 = time.perf_counter()
            out = getattr(_core, name)(*args)
            _spent[0] += time.perf_counter() - t0
            return out
    return getattr(k if k is not None else _core, name)(*args)


def _scalar(a, x, want):
    if x == 0 or a == 0:
        return _core.special_point(a, x, want)
    e, t, le = _call("point", x, float(a), float(x))
    return _core.pick(e, t, le, want)


def _array(traffic, servers, want):
    (a, x), shape = _flat(traffic, servers)
    return _finish(_many("erlang_many", a, x, extra=(want,)).reshape(shape))


def erlang_b(traffic, servers):
    """Erlang's loss formula E(A, n): the probability that all ``servers`` are busy.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic A in erlangs, finite, >= 0.
    servers : float or array_like
        Number of servers n, 0 <= n <= 1e10; real values use the continuation
        ``E(A, n) = A^n e^-A / Gamma(n + 1, A)`` [2]_.

    Returns
    -------
    float or ndarray
        Blocking in [0, 1], a float when both arguments are Python numbers.
        ``E(A, 0) = 1`` (also for A = 0) and ``E(0, n) = 0`` for n > 0.

    Raises
    ------
    ValueError
        An argument negative, NaN or infinite, or servers above 1e10 (the message names
        the argument).

    Notes
    -----
    Relative error below 1e-13 where E >= 1e-300; below that E underflows gracefully to 0
    (use :func:`log_erlang_b`). Whole n <= 30 run Erlang's recursion
    ``1/E_k = 1 + (k/A)(1/E_{k-1})`` [1]_ as plain Python.

    References
    ----------
    .. [1] A. K. Erlang, Elektroteknikeren 13 (1917) 5-13.
    .. [2] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import erlang_b
    >>> round(erlang_b(10.0, 15), 6)
    0.036497
    >>> erlang_b([5.0, 10.0], 10).round(6)
    array([0.018385, 0.214582])
    """
    # the commonest call first, in as few operations as possible (a float load, a few
    # whole servers): the scalar recursion, written out
    if type(servers) is int and 0 <= servers <= 30 and type(traffic) is float and \
            0.0 < traffic <= FINITE:
        f = _INV[servers]
        if f is None:
            f = _INV[servers] = _recursion_written_out(servers)
        inv = f(traffic)
        if inv <= _HUGE:
            return 1.0 / inv
    if type(traffic) in _SCALARS and type(servers) in _SCALARS:
        if not (0 <= traffic <= FINITE and 0 <= servers <= MAX_ARG):
            _check_arg("traffic", traffic, FINITE)
            _check_arg("servers", servers)
        if servers <= 30 and (type(servers) is int or servers.is_integer()):
            if traffic == 0:
                return 1.0 if servers == 0 else 0.0
            n = int(servers)
            f = _INV[n]
            if f is None:
                f = _INV[n] = _recursion_written_out(n)
            inv = f(traffic)
            if inv <= _HUGE:
                return 1.0 / inv
            return _core.tiny(float(traffic), float(servers))[0]
        return _scalar(traffic, servers, 0)
    return _checked(traffic, servers, 0)


def _checked(traffic, servers, want):
    """E (want 0), log E (1) or log(1 - E) (2) after the argument checks."""
    _check_arg("traffic", traffic, FINITE)
    _check_arg("servers", servers)
    if type(traffic) in _SCALARS and type(servers) in _SCALARS:
        return _scalar(traffic, servers, want)
    return _array(traffic, servers, want)


def log_erlang_b(traffic, servers):
    """Natural logarithm of E(A, n), accurate (relatively) also where E underflows.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray
        ``log E`` in (-inf, 0]; ``-inf`` only for no traffic on some servers.

    Raises
    ------
    ValueError
        As :func:`erlang_b`.

    Notes
    -----
    Where E is below 1e-300 the value is ``log pmf(n; A)`` of the Poisson law, in the
    saddle-point form of [1]_ (``log P(X <= n)`` is 0 to double precision there); near
    E = 1 it is ``-log1p(1/E - 1)`` with ``1/E - 1`` from the last step of the recursion.

    References
    ----------
    .. [1] C. Loader, "Fast and accurate computation of binomial probabilities" (2000).

    Examples
    --------
    >>> from netdim.erlang import log_erlang_b
    >>> round(log_erlang_b(1.0, 200), 4)
    -864.232
    """
    return _checked(traffic, servers, 1)


def log1m_erlang_b(traffic, servers):
    """Natural logarithm of 1 - E(A, n), accurate where E is tiny and where E is near 1.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray
        ``log(1 - E)`` in [-inf, 0]; ``-inf`` where E = 1 (no servers).

    Raises
    ------
    ValueError
        As :func:`erlang_b`.

    Notes
    -----
    For E >= 1/2 it is ``log t - log1p(t)`` with ``t = 1/E - 1 = n / (A E(A, n - 1))``,
    which follows from the recursion and has no cancellation [1]_.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import log1m_erlang_b
    >>> round(log1m_erlang_b(1e6, 1.0), 4)
    -13.8155
    """
    return _checked(traffic, servers, 2)


# --------------------------------------------------------------------------------------------
# inverse problems


def servers_for(traffic, target):
    """Smallest whole number of servers n with E(traffic, n) <= target.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic in erlangs, 0 <= A <= 9.9e9; no traffic needs no servers (0).
    target : float or array_like
        Blocking target in (0, 1). Below 1e-300 the comparison is made on log E.

    Returns
    -------
    int or ndarray of int64

    Raises
    ------
    ValueError
        Traffic negative, NaN, infinite or above 9.9e9; target outside (0, 1).

    Notes
    -----
    One evaluation of E near the answer (the normal approximation of the Poisson law
    gives the start), then Erlang's recursion step by step to the answer; Newton's step on
    log E with its exact discrete slope ``log(E_n + (n + 1)/A)`` where that walk would be
    long. The work is a few microseconds at 1e5 erlangs, whatever the target [1]_.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import servers_for
    >>> servers_for(10.0, 0.01)
    18
    >>> servers_for([10.0, 100.0], 0.01)
    array([ 18, 117])
    """
    _check_arg("traffic", traffic, MAX_TRAFFIC_SIZED)
    _check_target("target", target)
    if type(traffic) in _SCALARS and type(target) in _SCALARS:
        if traffic == 0:
            return 0
        return int(_call("servers_for_point", traffic, float(traffic), float(target)))
    (a, t), shape = _flat(traffic, target)
    return _finish(_many("servers_many", a, t, out_dtype=np.int64).reshape(shape))


#: Below this a traffic has fewer than 53 bits (a subnormal double).
_SMALLEST_NORMAL = float(np.finfo(float).tiny)


def traffic_for(servers, target):
    """Largest offered traffic A with E(A, servers) <= target, to 1e-12 relative.

    Parameters
    ----------
    servers : float or array_like
        Servers n, 0 <= n <= 1e10 (real values allowed); no servers carry nothing (0).
    target : float or array_like
        Blocking target in (0, 1).

    Returns
    -------
    float or ndarray
        0.0 where the answer is below the smallest normal double (about 2.2e-308: a few
        servers, a tiny target), where it could not be given to 1e-12 relative.

    Raises
    ------
    ValueError
        Servers negative, NaN, infinite or above 1e10; target outside (0, 1).

    Notes
    -----
    Halley's method on ``log E(e^u, n) = log target`` in ``u = log A`` with the exact
    derivatives ``d log E / du = n - A (1 - E)`` and its own derivative ``-A (1 - E) +
    A E (n - A (1 - E))`` [1]_, from the small-traffic or the normal approximation,
    bracketed by ``E >= 1 - n/A``; at most 8 evaluations of E on the benchmark's range.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import traffic_for
    >>> round(traffic_for(20, 0.01), 4)
    12.0306
    """
    _check_arg("servers", servers)
    _check_target("target", target)
    if type(servers) in _SCALARS and type(target) in _SCALARS:
        if servers == 0:
            return 0.0
        a = _call("traffic_for_point", servers, float(servers), float(target))[0]
        return a if a >= _SMALLEST_NORMAL else 0.0
    (x, t), shape = _flat(servers, target)
    a = _many("traffic_many", x, t)
    return _finish(np.where(a >= _SMALLEST_NORMAL, a, 0.0).reshape(shape))


# --------------------------------------------------------------------------------------------
# derivatives


def erlang_b_dtraffic(traffic, servers):
    """Derivative dE/dA of Erlang's formula with respect to the offered traffic.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray
        ``dE/dA >= 0``. At A = 0 the limit: 0 for n = 0 or n > 1, 1 for n = 1, +inf for
        0 < n < 1. It underflows to 0 where ``E s / A`` is below about 1e-308 (for
        example at A = 1e-300, n = 10, where it is about 1e-2706): there use
        ``log(dE/dA) = log E + log s - log A`` with ``log_erlang_b``.

    Raises
    ------
    ValueError
        As :func:`erlang_b`.

    Notes
    -----
    ``dE/dA = E s / A`` with ``s = d log E / d log A = n - A (1 - E) > 0`` [1]_; for
    n < A, s comes from the tail T of the continued fraction, ``s = n (1 + T) / (D + n)``,
    which keeps its digits where ``A (1 - E)`` is close to n.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import erlang_b_dtraffic
    >>> round(erlang_b_dtraffic(10.0, 12), 6)
    0.038285
    """
    _check_arg("traffic", traffic, FINITE)
    _check_arg("servers", servers)
    if type(traffic) in _SCALARS and type(servers) in _SCALARS:
        a = float(traffic)
        x = float(servers)
        if x == 0.0:
            return 0.0
        if a == 0.0:
            return 1.0 if x == 1.0 else (math.inf if x < 1.0 else 0.0)
        return _call("dtraffic_point", x, a, x)
    (a, x), shape = _flat(traffic, servers)
    return _finish(_many("dtraffic_many", a, x).reshape(shape))


def _dservers_scalar(a, x):
    # scipy.integrate is a heavy import (about 0.1 s) that only this derivative needs
    from scipy import integrate

    a = float(a)
    x = float(x)
    if a == 0.0:
        return 0.0
    e = erlang_b(a, x)
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

    Raises
    ------
    ValueError
        As :func:`erlang_b`.

    Notes
    -----
    From ``1/E(A, n) = int_0^inf e^-u (1 + u/A)^n du`` [1]_: ``dE/dn = -E <log(1 + u/A)>``,
    the mean of ``log(1 + u/A)`` under the weight ``e^-u (1 + u/A)^n``, by adaptive
    quadrature (scipy.integrate.quad) around the weight's peak, element by element
    (about 1 ms each); relative accuracy about 1e-10.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.

    Examples
    --------
    >>> from netdim.erlang import erlang_b_dservers
    >>> round(erlang_b_dservers(10.0, 12), 5)
    -0.03945
    """
    _check_arg("traffic", traffic, FINITE)
    _check_arg("servers", servers)
    return _elementwise(_dservers_scalar, traffic, servers)


# --------------------------------------------------------------------------------------------
# economic sizing


def moe_servers(traffic, cost_per_circuit, value_per_erlang):
    """Circuits by Moe's principle: add one while the traffic it carries is worth its cost.

    Circuit n + 1 is added while ``A [E(A, n) - E(A, n + 1)] * value_per_erlang >
    cost_per_circuit`` [1]_. The marginal carried traffic falls as n grows, so the answer
    also maximises ``value * A (1 - E(A, n)) - cost * n``; it is found by bisection on n,
    a few dozen evaluations of E whatever the traffic.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic, erlangs, 0 <= A <= 9.9e9.
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
        Traffic as :func:`erlang_b`; negative or NaN value; cost not > 0.

    References
    ----------
    .. [1] A. Jensen, "Moe's principle", Copenhagen Telephone Company (1950); see also
       R. Syski, Introduction to Congestion Theory in Telephone Systems, 2nd ed.,
       North-Holland (1986).

    Examples
    --------
    >>> from netdim.erlang import moe_servers
    >>> moe_servers(10.0, 1.0, 5.0)
    15
    """
    _check_arg("traffic", traffic, MAX_TRAFFIC_SIZED)
    _check_positive("cost_per_circuit", cost_per_circuit)
    _check_nonneg("value_per_erlang", value_per_erlang)
    if type(traffic) in _SCALARS and type(cost_per_circuit) in _SCALARS and \
            type(value_per_erlang) in _SCALARS:
        if traffic == 0 or value_per_erlang == 0:
            return 0
        ratio = cost_per_circuit / value_per_erlang
        return int(_call("moe_point", traffic, float(traffic), float(ratio)))
    (a, c, v), shape = _flat(traffic, cost_per_circuit, value_per_erlang)
    with np.errstate(divide="ignore"):
        ratio = c / v
    return _finish(_many("moe_many", a, ratio, out_dtype=np.int64).reshape(shape))
