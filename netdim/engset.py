"""Engset's loss formulas for a finite number of traffic sources.

Time congestion (all servers busy) and call congestion (an arriving call blocked) of ``n``
servers shared by ``N`` sources, each offering ``alpha`` erlangs while idle. Same calling
conventions as :mod:`netdim.erlang`: Python numbers in, float out; arrays broadcast.

References
----------
T. O. Engset, "Die Wahrscheinlichkeitsrechnung zur Bestimmung der Wählerzahl in
automatischen Fernsprechämtern", Elektrotechnische Zeitschrift 39 (1918) 304-306.
"""

from __future__ import annotations

import math

import numpy as np

from netdim._erlang_kernels import _check_nonneg, _finish, _is_scalar

__all__ = ["engset_time", "engset_call"]


def _check_whole(name, x):
    arr = np.asarray(x, dtype=float)
    bad = ~(arr >= 0) | (arr != np.floor(arr))
    if bad.any():
        raise ValueError(f"{name}: must be a whole number >= 0, got {float(arr[bad].flat[0])!r}")


def _engset_time_scalar(sources, alpha, servers):
    n_src = int(sources)
    n = int(servers)
    if n == 0:
        return 1.0
    if n > n_src or alpha == 0.0:
        return 0.0
    if alpha == math.inf:
        return 1.0 if n == n_src else 0.0
    inv = 1.0
    for k in range(1, n + 1):
        inv = 1.0 + inv * k / ((n_src - k + 1) * alpha)
        if inv == math.inf:
            return 0.0
    return 1.0 / inv


def _engset(sources, alpha, servers, call):
    _check_whole("sources", sources)
    _check_nonneg("alpha", alpha)
    _check_whole("servers", servers)
    shift = 1 if call else 0

    def one(s, al, n):
        if call and s == 0:
            return 0.0
        return _engset_time_scalar(s - shift, al, n)

    if _is_scalar(sources, alpha, servers):
        return one(int(sources), float(alpha), int(servers))
    s, al, n = np.broadcast_arrays(
        np.asarray(sources, dtype=float), np.asarray(alpha, dtype=float),
        np.asarray(servers, dtype=float),
    )
    out = np.array(
        [one(int(si), float(ai), int(ni)) for si, ai, ni in zip(s.ravel(), al.ravel(),
                                                                n.ravel(), strict=True)]
    )
    return _finish(out.reshape(s.shape))


def engset_time(sources, alpha, servers):
    """Engset time congestion: probability that all servers are busy, finite sources.

    Parameters
    ----------
    sources : int or array_like
        Number of traffic sources N (whole number >= 0).
    alpha : float or array_like
        Offered traffic per idle source (arrival rate of an idle source times the mean
        holding time), >= 0.
    servers : int or array_like
        Number of servers n (whole number >= 0).

    Returns
    -------
    float or ndarray
        ``C(N, n) alpha^n / sum_{k<=n} C(N, k) alpha^k``; 0 when n > N.

    Raises
    ------
    ValueError
        Sources or servers not whole numbers >= 0; negative or NaN alpha.

    Notes
    -----
    Stable inverse recursion ``1/E_k = 1 + k / ((N - k + 1) alpha E_{k-1})``, ``E_0 = 1``
    (as Erlang's). Reference: T. O. Engset, "Die Wahrscheinlichkeitsrechnung zur Bestimmung
    der Wählerzahl in automatischen Fernsprechämtern", Elektrotechnische Zeitschrift 39
    (1918) 304-306.
    """
    return _engset(sources, alpha, servers, call=False)


def engset_call(sources, alpha, servers):
    """Engset call congestion: probability that an arriving call is blocked.

    Parameters as :func:`engset_time`. Equal to the time congestion of a system with one
    source fewer (an arriving call sees the other N - 1 sources in equilibrium): the Engset
    formula proper. 0 when n >= N.
    """
    return _engset(sources, alpha, servers, call=True)
