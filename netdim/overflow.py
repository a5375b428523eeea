"""Overflow traffic: Riordan's moments and Wilkinson's equivalent random method.

The mean and variance of the traffic a group overflows, its peakedness, the equivalent
random group of a peaked stream (exactly, or by Rapp's approximation), and the blocking of a
final group offered several overflow streams. Same calling conventions as
:mod:`netdim.erlang`.

References
----------
R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell System
Technical Journal 35 (1956) 421-514 (with J. Riordan's moments in the appendix).
Y. Rapp, "Planning of junction network in a multi-exchange area", Ericsson Technics 20
(1964) 77-130.
"""

from __future__ import annotations

import math

import numpy as np

from netdim._erlang_kernels import (
    _check_nonneg,
    _check_positive,
    _erlang_b_scalar,
    _finish,
    _is_scalar,
    _log_erlang_b_scalar,
)
from netdim.erlang import erlang_b

__all__ = [
    "overflow_moments",
    "peakedness",
    "rapp",
    "equivalent_random",
    "overflow_blocking",
]


def overflow_moments(traffic, servers):
    """Mean and variance of the traffic a group of ``servers`` overflows (Riordan).

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    mean, variance : float or ndarray
        ``M = A E(A, n)``, ``V = M (1 - M + A / (n + 1 - A + M))``.

    References
    ----------
    J. Riordan, in R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.",
    Bell System Technical Journal 35 (1956) 421-514 (appendix).
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    scalar = _is_scalar(traffic, servers)
    a = np.asarray(traffic, dtype=float)
    x = np.asarray(servers, dtype=float)
    m = np.asarray(erlang_b(a, x), dtype=float) * a
    v = m * (1.0 - m + a / (x + 1.0 - a + m))
    if scalar or np.ndim(m) == 0:
        return float(m), float(v)
    return m, v


def peakedness(traffic, servers):
    """Peakedness Z = variance / mean of the overflow of a group (Riordan's formula).

    Computed as ``1 - M + A / (n + 1 - A + M)`` (no division by M, so it stays defined when
    the overflow is tiny). Parameters and rules as :func:`erlang_b`.
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    scalar = _is_scalar(traffic, servers)
    a = np.asarray(traffic, dtype=float)
    x = np.asarray(servers, dtype=float)
    m = np.asarray(erlang_b(a, x), dtype=float) * a
    z = 1.0 - m + a / (x + 1.0 - a + m)
    return float(z) if scalar or np.ndim(z) == 0 else z


def _check_mean_var(mean, variance):
    _check_positive("mean", mean)
    _check_nonneg("variance", variance)
    m = np.asarray(mean, dtype=float)
    v = np.asarray(variance, dtype=float)
    bad = v < m * (1.0 - 1e-12)
    if bad.any():
        mb, vb = np.broadcast_arrays(m, v)
        i = np.flatnonzero(bad.ravel())[0]
        raise ValueError(
            f"variance: must be >= mean (peakedness >= 1) for overflow traffic, got variance "
            f"{float(vb.ravel()[i])!r} with mean {float(mb.ravel()[i])!r}"
        )


def rapp(mean, variance):
    """Rapp's approximation to the equivalent random group.

    Parameters
    ----------
    mean, variance : float or array_like
        Mean (> 0) and variance (>= mean) of a peaked traffic stream.

    Returns
    -------
    traffic, servers : float or ndarray
        ``A* = V + 3 Z (Z - 1)``, ``N* = A* (M + Z) / (M + Z - 1) - M - 1`` with Z = V/M.

    References
    ----------
    Y. Rapp, "Planning of junction network in a multi-exchange area", Ericsson Technics 20
    (1964) 77-130.
    """
    _check_mean_var(mean, variance)
    m = np.asarray(mean, dtype=float)
    v = np.maximum(np.asarray(variance, dtype=float), m)
    z = v / m
    a = v + 3.0 * z * (z - 1.0)
    n = np.maximum(a * (m + z) / (m + z - 1.0) - m - 1.0, 0.0)
    if _is_scalar(mean, variance) or np.ndim(a) == 0:
        return float(a), float(n)
    return a, n


def _servers_for_mean(a, mean):
    """Real N >= 0 with A E(A, N) = mean (A > mean): E decreases in N."""
    from scipy import optimize

    target = math.log(mean / a)
    lo, hi = 0.0, max(1.0, a)
    while _log_erlang_b_scalar(a, hi) > target:
        lo, hi = hi, 2.0 * hi
    return optimize.brentq(
        lambda n: _log_erlang_b_scalar(a, n) - target, lo, hi, xtol=1e-13, rtol=1e-15
    )


def _ert_scalar(m, v):
    from scipy import optimize

    z = v / m
    if z - 1.0 < 1e-12:
        return m, 0.0

    def zgap(a):
        n = _servers_for_mean(a, m)
        return peakedness(a, n) - z

    a0, _ = rapp(m, v)
    lo = m * (1.0 + 1e-12)
    hi = max(a0, lo * 1.5)
    while zgap(hi) < 0:
        lo, hi = hi, 2.0 * hi
    a = optimize.brentq(zgap, lo, hi, xtol=1e-12 * hi, rtol=1e-14)
    return a, _servers_for_mean(a, m)


def equivalent_random(mean, variance):
    """Wilkinson's equivalent random group of a peaked stream.

    Finds the Poisson traffic A* and real number of servers N* whose overflow has the given
    mean and variance (Riordan's moments), solved numerically (Brent's method) from Rapp's
    starting point.

    Parameters
    ----------
    mean, variance : float or array_like
        Mean > 0 and variance >= mean.

    Returns
    -------
    traffic, servers : float or ndarray

    Raises
    ------
    ValueError
        Non-positive mean, or variance below the mean (smooth traffic has no equivalent
        random group).

    References
    ----------
    R. I. Wilkinson, Bell System Technical Journal 35 (1956) 421-514.
    """
    _check_mean_var(mean, variance)
    if _is_scalar(mean, variance):
        return _ert_scalar(float(mean), float(variance))
    m, v = np.broadcast_arrays(np.asarray(mean, dtype=float), np.asarray(variance, dtype=float))
    res = [_ert_scalar(float(mi), float(vi)) for mi, vi in zip(m.ravel(), v.ravel(), strict=True)]
    a = np.array([r[0] for r in res]).reshape(m.shape)
    n = np.array([r[1] for r in res]).reshape(m.shape)
    return (_finish(a), _finish(n))


def overflow_blocking(means, variances, servers):
    """Blocking on a final group of ``servers`` offered several overflow streams.

    Wilkinson's equivalent random method: the streams' means and variances are summed, the
    equivalent random group (A*, N*) of the total is found, and the final group is treated as
    the last ``servers`` of a group of ``N* + servers`` offered A*:
    ``B = A* E(A*, N* + servers) / sum(means)``.

    Parameters
    ----------
    means, variances : array_like, shape (K,)
        Mean and variance of each stream offered to the final group (variance >= mean in
        total; Poisson first-choice traffic has variance = mean).
    servers : float
        Servers in the final group, >= 0.

    Returns
    -------
    float
        Fraction of the offered overflow traffic lost (0 when no traffic is offered).

    Raises
    ------
    ValueError
        Negative means, variances or servers, or total variance below the total mean.

    References
    ----------
    R. I. Wilkinson, Bell System Technical Journal 35 (1956) 421-514.
    """
    _check_nonneg("means", means)
    _check_nonneg("variances", variances)
    _check_nonneg("servers", servers)
    m = float(np.sum(np.asarray(means, dtype=float)))
    v = float(np.sum(np.asarray(variances, dtype=float)))
    if m == 0.0:
        return 0.0
    _check_mean_var(m, v)
    a, n = _ert_scalar(m, max(v, m))
    return min(1.0, a * _erlang_b_scalar(a, n + float(servers)) / m)
