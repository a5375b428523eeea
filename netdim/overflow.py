"""Overflow traffic: Riordan's moments and Wilkinson's equivalent random method.

The mean and variance of the traffic a group overflows, its peakedness, the equivalent
random group of a peaked stream (exactly, or by Rapp's approximation), and the blocking of a
final group offered several overflow streams. Same calling conventions as
:mod:`netdim.erlang`.

References
----------
.. [1] R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell System
   Technical Journal 35 (1956) 421-514 (with J. Riordan's moments in the appendix).
.. [2] Y. Rapp, "Planning of junction network in a multi-exchange area", Ericsson Technics
   20 (1964) 77-130.
"""

from __future__ import annotations

import math

import numpy as np

from netdim._erlang_kernels import (
    MAX_ARG,
    _check_arg,
    _elementwise,
    _is_scalar,
)
from netdim.erlang import erlang_b, log_erlang_b

__all__ = [
    "overflow_moments",
    "peakedness",
    "rapp",
    "equivalent_random",
    "overflow_blocking",
]


def overflow_moments(traffic, servers):
    """Mean and variance of the traffic a group of ``servers`` overflows (Riordan).

    Parameters
    ----------
    traffic, servers : float or array_like
        Offered traffic (erlangs) and servers of the group, as
        :func:`netdim.erlang.erlang_b`.

    Returns
    -------
    mean, variance : float or ndarray
        ``M = A E(A, n)``, ``V = M (1 - M + A / (n + 1 - A + M))``.

    Raises
    ------
    ValueError
        An argument negative, NaN, infinite or above 1e10.

    References
    ----------
    .. [1] J. Riordan, in R. I. Wilkinson, "Theories for toll traffic engineering in the
       U.S.A.", Bell System Technical Journal 35 (1956) 421-514 (appendix).

    Examples
    --------
    >>> from netdim.overflow import overflow_moments
    >>> m, v = overflow_moments(10.0, 8)
    >>> round(m, 4), round(v, 4)
    (3.3832, 6.1333)
    """
    a, x, m = _overflow_mean(traffic, servers)
    v = m * (1.0 - m + a / (x + 1.0 - a + m))
    if np.ndim(m) == 0:
        return float(m), float(v)
    return m, v


def _overflow_mean(traffic, servers):
    """(A, n, A E(A, n)): Python floats for Python numbers, else broadcast arrays."""
    _check_arg("traffic", traffic)
    _check_arg("servers", servers)
    if _is_scalar(traffic, servers):
        a, x = float(traffic), float(servers)
        return a, x, a * erlang_b(a, x)
    a = np.asarray(traffic, dtype=float)
    x = np.asarray(servers, dtype=float)
    return a, x, np.asarray(erlang_b(a, x), dtype=float) * a


def peakedness(traffic, servers):
    """Peakedness Z = variance / mean of the overflow of a group (Riordan's formula).

    Parameters
    ----------
    traffic, servers : float or array_like
        As :func:`overflow_moments`.

    Returns
    -------
    float or ndarray
        ``1 - M + A / (n + 1 - A + M)`` with ``M = A E(A, n)`` [1]_ (no division by M, so
        it stays defined when the overflow is tiny).

    Raises
    ------
    ValueError
        As :func:`overflow_moments`.

    References
    ----------
    .. [1] R. I. Wilkinson, Bell System Technical Journal 35 (1956) 421-514.

    Examples
    --------
    >>> from netdim.overflow import peakedness
    >>> round(peakedness(10.0, 8), 4)
    1.8129
    """
    a, x, m = _overflow_mean(traffic, servers)
    z = 1.0 - m + a / (x + 1.0 - a + m)
    return float(z) if np.ndim(z) == 0 else z


def _check_mean_var(mean, variance):
    _check_arg("mean", mean)
    _check_arg("variance", variance)
    if not (np.asarray(mean, dtype=float) > 0).all():
        m = np.asarray(mean, dtype=float)
        raise ValueError(f"mean: must be > 0, got {float(m[~(m > 0)].flat[0])!r}")
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
        ``A* = V + 3 Z (Z - 1)``, ``N* = A* (M + Z) / (M + Z - 1) - M - 1`` with Z = V/M
        [1]_.

    Raises
    ------
    ValueError
        Mean not in (0, 1e10], variance not in [mean, 1e10] (or not finite).

    References
    ----------
    .. [1] Y. Rapp, "Planning of junction network in a multi-exchange area", Ericsson
       Technics 20 (1964) 77-130.

    Examples
    --------
    >>> from netdim.overflow import overflow_moments, rapp
    >>> a, n = rapp(*overflow_moments(10.0, 8))
    >>> round(a, 2), round(n, 2)
    (10.55, 8.69)
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
    # scipy.optimize is a heavy import (about 0.2 s) that only the equivalent random group needs
    from scipy import optimize

    target = math.log(mean / a)
    lo, hi = 0.0, max(1.0, a)
    while log_erlang_b(a, hi) > target:
        lo, hi = hi, 2.0 * hi
        if hi > MAX_ARG:
            raise ValueError(
                f"mean: the equivalent random group of mean {mean!r} lies beyond "
                f"{MAX_ARG:g} servers"
            )
    return optimize.brentq(
        lambda n: log_erlang_b(a, n) - target, lo, hi, xtol=1e-13, rtol=1e-15
    )


def _ert_scalar(m, v):
    # scipy.optimize: as above
    from scipy import optimize

    m = float(m)
    v = float(v)
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
        if hi > MAX_ARG:
            raise ValueError(
                f"variance: the equivalent random group of mean {m!r} and variance {v!r} "
                f"lies beyond {MAX_ARG:g} erlangs"
            )
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
        Mean not in (0, 1e10], variance below the mean (smooth traffic has no equivalent
        random group), not finite or above 1e10.

    References
    ----------
    .. [1] R. I. Wilkinson, Bell System Technical Journal 35 (1956) 421-514.

    Examples
    --------
    >>> from netdim.overflow import equivalent_random, overflow_moments
    >>> a, n = equivalent_random(*overflow_moments(10.0, 8))
    >>> round(a, 6), round(n, 6)
    (10.0, 8.0)
    """
    _check_mean_var(mean, variance)
    return _elementwise(_ert_scalar, mean, variance, nout=2)


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
        Negative, NaN, infinite or too large (1e10) means, variances or servers, or total
        variance below the total mean.

    References
    ----------
    .. [1] R. I. Wilkinson, Bell System Technical Journal 35 (1956) 421-514.

    Examples
    --------
    >>> from netdim.overflow import overflow_blocking, overflow_moments
    >>> m, v = overflow_moments(10.0, 8)
    >>> round(overflow_blocking([m], [v], 5), 6)
    0.249288
    """
    _check_arg("means", means)
    _check_arg("variances", variances)
    _check_arg("servers", servers)
    m = float(np.sum(np.asarray(means, dtype=float)))
    v = float(np.sum(np.asarray(variances, dtype=float)))
    if m == 0.0:
        return 0.0
    _check_mean_var(m, v)
    a, n = _ert_scalar(m, max(v, m))
    return min(1.0, a * erlang_b(float(a), float(n) + float(servers)) / m)
