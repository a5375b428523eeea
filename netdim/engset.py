"""Engset's loss formulas for a finite number of traffic sources.

Time congestion (all servers busy) and call congestion (an arriving call blocked) of ``n``
servers shared by ``N`` sources, each offering ``alpha`` erlangs while idle. Same calling
conventions as :mod:`netdim.erlang`: Python numbers in, float out; arrays broadcast.

References
----------
.. [1] T. O. Engset, "Die Wahrscheinlichkeitsrechnung zur Bestimmung der Wählerzahl in
   automatischen Fernsprechämtern", Elektrotechnische Zeitschrift 39 (1918) 304-306.
"""

from __future__ import annotations

import math

import numpy as np

from netdim._erlang_kernels import MAX_ARG, _check_arg, _elementwise

__all__ = ["engset_time", "engset_call"]

#: Most sources and servers accepted: the recursion takes one step per server.
MAX_WHOLE = 10**6


def _check_whole(name, x):
    arr = np.asarray(x, dtype=float)
    bad = ~(arr >= 0) | (arr != np.floor(arr)) | ~np.isfinite(arr)
    if bad.any():
        raise ValueError(f"{name}: must be a whole number >= 0, got {float(arr[bad].flat[0])!r}")
    if (arr > MAX_WHOLE).any():
        raise ValueError(
            f"{name}: must be at most {MAX_WHOLE:,} (one recursion step per server), got "
            f"{float(arr[arr > MAX_WHOLE].flat[0])!r}"
        )


def _engset_time_scalar(sources, alpha, servers):
    n_src = int(sources)
    n = int(servers)
    if n == 0:
        return 1.0
    if n > n_src or alpha == 0.0:
        return 0.0
    inv = 1.0
    for k in range(1, n + 1):
        inv = 1.0 + inv * k / ((n_src - k + 1) * alpha)
        if inv == math.inf:
            return 0.0
    return 1.0 / inv


def _engset(sources, alpha, servers, call):
    _check_whole("sources", sources)
    _check_arg("alpha", alpha, MAX_ARG)
    _check_whole("servers", servers)
    shift = 1 if call else 0

    def one(s, al, n):
        s = int(s)
        if call and s == 0:
            return 0.0
        return _engset_time_scalar(s - shift, float(al), int(n))

    return _elementwise(one, sources, alpha, servers)


def engset_time(sources, alpha, servers):
    """Engset time congestion: probability that all servers are busy, finite sources.

    Parameters
    ----------
    sources : int or array_like
        Number of traffic sources N, a whole number, 0 <= N <= 1e6.
    alpha : float or array_like
        Offered traffic per idle source (arrival rate of an idle source times the mean
        holding time), finite, 0 <= alpha <= 1e10.
    servers : int or array_like
        Number of servers n, a whole number, 0 <= n <= 1e6.

    Returns
    -------
    float or ndarray
        ``C(N, n) alpha^n / sum_{k<=n} C(N, k) alpha^k``; 0 when n > N.

    Raises
    ------
    ValueError
        Sources or servers not whole numbers in [0, 1e6]; alpha negative, NaN, infinite
        or above 1e10 (the message names the argument).

    Notes
    -----
    Stable inverse recursion ``1/E_k = 1 + k / ((N - k + 1) alpha E_{k-1})``, ``E_0 = 1``
    (as Erlang's) [1]_.

    References
    ----------
    .. [1] T. O. Engset, Elektrotechnische Zeitschrift 39 (1918) 304-306.

    Examples
    --------
    >>> from netdim.engset import engset_time
    >>> round(engset_time(10, 0.5, 3), 6)
    0.465116
    """
    return _engset(sources, alpha, servers, call=False)


def engset_call(sources, alpha, servers):
    """Engset call congestion: probability that an arriving call is blocked.

    Parameters
    ----------
    sources, alpha, servers : int, float, int or array_like
        As :func:`engset_time`.

    Returns
    -------
    float or ndarray
        The time congestion of a system with one source fewer (an arriving call sees the
        other N - 1 sources in equilibrium): Engset's formula proper [1]_. 0 when n >= N.

    Raises
    ------
    ValueError
        As :func:`engset_time`.

    References
    ----------
    .. [1] T. O. Engset, Elektrotechnische Zeitschrift 39 (1918) 304-306.

    Examples
    --------
    >>> from netdim.engset import engset_call
    >>> round(engset_call(10, 0.5, 3), 6)
    0.42
    """
    return _engset(sources, alpha, servers, call=True)
