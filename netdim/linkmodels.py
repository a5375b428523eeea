"""Occupancy models of one link: the multi-rate link and the link with trunk reservation.

A link of ``capacity`` units is offered several Poisson streams; a call of stream i holds
``b_i`` units for an exponential (in fact any, by insensitivity) holding time. These
functions return the stationary blocking seen by each stream. The network evaluators call
them once per link and iteration, so each has a form vectorised over many links.

All recursions run on normalised values: a row is rescaled as soon as it grows past 1e250,
so large capacities never overflow and no ``A^n / n!`` is formed.

References
----------
.. [1] J. S. Kaufman, "Blocking in a shared resource environment", IEEE Transactions on
   Communications 29 (1981) 1474-1481.
.. [2] J. W. Roberts, "A service system with heterogeneous user requirements", in
   G. Pujolle (ed.), Performance of Data Communication Systems and their Applications,
   North-Holland (1981) 423-431.
.. [3] J. W. Roberts, "Teletraffic models for the Telecom 1 integrated services network",
   Proceedings of the 10th International Teletraffic Congress (ITC-10), Montreal (1983),
   paper 1.1.2 (the recursion with each stream cut off above its admission threshold,
   used here for multi-rate trunk reservation).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "kaufman_roberts",
    "kaufman_roberts_occupancy",
    "kaufman_roberts_many",
    "reservation_link",
    "reservation_link_many",
    "reservation_link_multi_many",
]

_RESCALE = 1e250
#: reservation_link_many works in log space, every state at once, on at most this many links
#: (and cells, links x states): its loop over states costs about 13 us a step whatever the
#: links, the log space about 40 ns a cell (measured on the benchmark machine).
_LOG_LINKS = 256
_LOG_CELLS = 1 << 22


# --------------------------------------------------------------------------------------------
# argument checks


def _loads(name, x, ndim):
    arr = np.asarray(x, dtype=float)
    if arr.ndim != ndim:
        raise ValueError(f"{name}: expected a {ndim}-d array, got shape {arr.shape}")
    bad = ~(arr >= 0) | ~np.isfinite(arr)
    if bad.any():
        raise ValueError(f"{name}: must be finite and >= 0, got {float(arr[bad].flat[0])!r}")
    return arr


def _ints(name, x, ndim, minimum):
    arr = np.asarray(x)
    if arr.ndim != ndim:
        raise ValueError(f"{name}: expected a {ndim}-d array, got shape {arr.shape}")
    flt = arr.astype(float)
    bad = ~(flt >= minimum) | (flt != np.floor(flt))
    if bad.any():
        raise ValueError(
            f"{name}: must be whole numbers >= {minimum}, got {float(flt[bad].flat[0])!r}"
        )
    return flt.astype(np.int64)


def _capacity(x):
    if isinstance(x, bool) or not float(x) >= 0 or float(x) != int(float(x)):
        raise ValueError(f"capacity: must be a whole number >= 0, got {x!r}")
    return int(x)


def _same_len(name_a, a, name_b, b):
    if a.shape[-1] != b.shape[-1]:
        raise ValueError(
            f"{name_b}: expected {a.shape[-1]} values (one per entry of {name_a}), "
            f"got {b.shape[-1]}"
        )


# --------------------------------------------------------------------------------------------
# single link


def _occupancy(loads, bandwidths, capacity, thresholds):
    """Unnormalised q[0..C] of the (cut-off) Kaufman-Roberts recursion."""
    q = np.zeros(capacity + 1)
    q[0] = 1.0
    ab = loads * bandwidths
    terms = [(float(ab[i]), int(bandwidths[i]), int(thresholds[i])) for i in range(len(ab))]
    terms = [t for t in terms if t[0] > 0]
    for k in range(1, capacity + 1):
        s = 0.0
        for abi, bi, ti in terms:
            # stream i contributes to state k only if it was admitted from k - b_i
            if bi <= k <= ti:
                s += abi * q[k - bi]
        v = s / k
        q[k] = v
        if v > _RESCALE:
            q[: k + 1] /= _RESCALE
    return q


def _tail_blocking(q, capacity, cutoffs):
    """Per stream: sum of q[k] for k > cutoff_i, divided by the total (no cancellation)."""
    tail = np.cumsum(q[::-1])[::-1]  # tail[k] = sum_{j >= k} q[j]
    out = np.ones(len(cutoffs))
    for i, c in enumerate(cutoffs):
        if c >= 0:
            out[i] = tail[c + 1] / tail[0] if c + 1 <= capacity else 0.0
    return out


def kaufman_roberts_occupancy(loads, bandwidths, capacity):
    """Stationary occupancy distribution of a multi-rate loss link.

    Parameters
    ----------
    loads : array_like, shape (K,)
        Offered traffic of each class in erlangs (calls, not units).
    bandwidths : array_like of int, shape (K,)
        Units a call of each class holds, >= 1.
    capacity : int
        Units on the link, >= 0.

    Returns
    -------
    ndarray, shape (capacity + 1,)
        ``q[k]`` = probability that k units are busy (sums to 1).

    Raises
    ------
    ValueError
        Negative or non-finite loads, bandwidths < 1 or not whole, capacity not a whole
        number >= 0, or lengths that differ.

    Notes
    -----
    ``k q(k) = sum_i a_i b_i q(k - b_i)``, ``q(0) = 1``, then normalised [1]_ [2]_.

    References
    ----------
    .. [1] J. S. Kaufman, IEEE Transactions on Communications 29 (1981) 1474-1481.
    .. [2] J. W. Roberts, in Performance of Data Communication Systems and their
       Applications, North-Holland (1981) 423-431.

    Examples
    --------
    One class of single-unit calls: the truncated Poisson law (1, 1, 1/2, 1/6) / (8/3).

    >>> from netdim.linkmodels import kaufman_roberts_occupancy
    >>> kaufman_roberts_occupancy([1.0], [1], 3)
    array([0.375 , 0.375 , 0.1875, 0.0625])
    """
    a = _loads("loads", loads, 1)
    b = _ints("bandwidths", bandwidths, 1, 1)
    _same_len("loads", a, "bandwidths", b)
    c = _capacity(capacity)
    q = _occupancy(a, b, c, np.full(len(a), c))
    return q / q.sum()


def kaufman_roberts(loads, bandwidths, capacity):
    """Blocking of each class on a multi-rate loss link (Kaufman-Roberts recursion).

    A call of class i is blocked in the states ``k > capacity - b_i``.

    Parameters
    ----------
    loads, bandwidths, capacity : see :func:`kaufman_roberts_occupancy`.

    Returns
    -------
    ndarray, shape (K,)
        Time (= call, by Poisson arrivals) congestion of each class.

    Raises
    ------
    ValueError
        As :func:`kaufman_roberts_occupancy`.

    References
    ----------
    .. [1] J. S. Kaufman, "Blocking in a shared resource environment", IEEE Transactions
       on Communications 29 (1981) 1474-1481.
    .. [2] J. W. Roberts, "A service system with heterogeneous user requirements", in
       G. Pujolle (ed.), Performance of Data Communication Systems and their
       Applications, North-Holland (1981) 423-431.

    Examples
    --------
    Calls of one unit and of four units on 20 units; with one class it is Erlang's formula.

    >>> from netdim.linkmodels import kaufman_roberts
    >>> kaufman_roberts([10.0, 2.0], [1, 4], 20).round(4)
    array([0.0797, 0.3466])
    >>> round(float(kaufman_roberts([10.0], [1], 20)[0]), 6)
    0.001869
    """
    a = _loads("loads", loads, 1)
    b = _ints("bandwidths", bandwidths, 1, 1)
    _same_len("loads", a, "bandwidths", b)
    c = _capacity(capacity)
    q = _occupancy(a, b, c, np.full(len(a), c))
    return _tail_blocking(q, c, c - b)


def reservation_link(loads, capacity, limits, bandwidths=None):
    """Blocking of each stream on a link where some streams are kept off the last units.

    Stream i (offered ``loads[i]`` erlangs of calls holding ``b_i`` units) is admitted in
    occupancy k iff ``k + b_i <= capacity - limits[i]``: ``limits[i] = 0`` for first-choice
    traffic, ``= r`` for overflow traffic under trunk reservation r.

    Parameters
    ----------
    loads : array_like, shape (K,)
    capacity : int
    limits : array_like of int, shape (K,)
        Units each stream must leave free, >= 0.
    bandwidths : array_like of int, shape (K,), optional
        Default 1 for every stream.

    Returns
    -------
    ndarray, shape (K,)
        Blocking of each stream.

    Raises
    ------
    ValueError
        Bad loads, capacity, limits or bandwidths (as :func:`kaufman_roberts`).

    Notes
    -----
    With single-unit calls the occupancy is a birth-death chain with birth rate
    ``sum of loads[i]`` over the streams admitted in state k, and the result is exact. With
    several bandwidths the state is not product-form; the Roberts approximation is used: the
    Kaufman-Roberts recursion with each stream's term dropped above its threshold,
    ``k q(k) = sum_i a_i b_i q(k - b_i) [k <= capacity - limits_i]`` [1]_.

    References
    ----------
    .. [1] J. W. Roberts, "Teletraffic models for the Telecom 1 integrated services
       network", Proceedings of ITC-10, Montreal (1983), paper 1.1.2.

    Examples
    --------
    First-choice traffic beside overflow traffic kept off the last 2 of 15 circuits.

    >>> from netdim.linkmodels import reservation_link
    >>> reservation_link([10.0, 3.0], 15, [0, 2]).round(4)
    array([0.0744, 0.3421])
    """
    a = _loads("loads", loads, 1)
    c = _capacity(capacity)
    t = _ints("limits", limits, 1, 0)
    _same_len("loads", a, "limits", t)
    if bandwidths is None:
        b = np.ones(len(a), dtype=np.int64)
    else:
        b = _ints("bandwidths", bandwidths, 1, 1)
        _same_len("loads", a, "bandwidths", b)
    q = _occupancy(a, b, c, c - t)
    return _tail_blocking(q, c, c - t - b)


# --------------------------------------------------------------------------------------------
# many links at once


def kaufman_roberts_many(loads, bandwidths, capacities):
    """:func:`kaufman_roberts` for many links at once, vectorised over links.

    Parameters
    ----------
    loads : array_like, shape (n_links, n_classes)
        Offered traffic of each class on each link, erlangs.
    bandwidths : array_like of int, shape (n_classes,)
    capacities : array_like of int, shape (n_links,)

    Returns
    -------
    ndarray, shape (n_links, n_classes)
        Blocking of each class on each link.

    Raises
    ------
    ValueError
        Bad values or shapes.

    Notes
    -----
    The recursion of :func:`reservation_link_multi_many` with no stream kept off any unit:
    over occupancy k on arrays of links (links sorted by capacity, so the links still growing
    at step k form a prefix), each row rescaled on its own [1]_.

    References
    ----------
    .. [1] J. S. Kaufman, IEEE Transactions on Communications 29 (1981) 1474-1481.

    Examples
    --------
    >>> from netdim.linkmodels import kaufman_roberts_many
    >>> kaufman_roberts_many([[10.0, 2.0], [5.0, 1.0]], [1, 4], [20, 12]).round(4)
    array([[0.0797, 0.3466],
           [0.0732, 0.3605]])
    """
    a = _loads("loads", loads, 2)
    b = _ints("bandwidths", bandwidths, 1, 1)
    caps = _ints("capacities", capacities, 1, 0)
    if a.shape != (len(caps), len(b)):
        raise ValueError(
            f"loads: expected shape ({len(caps)}, {len(b)}) (links x classes), got {a.shape}"
        )
    # The recursion of the reservation link with nothing reserved.
    return reservation_link_multi_many(a, b, caps, np.zeros(a.shape, np.int64))


def reservation_link_many(first_load, overflow_load, capacities, reservations):
    """Single-rate trunk reservation on many links at once (exact birth-death chain).

    On each link, first-choice calls are admitted while any unit is free and overflow calls
    only while more than ``r`` units are free: the occupancy is a birth-death chain with
    birth rate ``first + overflow`` for ``k < C - r`` and ``first`` for ``C - r <= k < C``.

    Parameters
    ----------
    first_load, overflow_load : array_like, shape (n_links,)
        Offered traffic (erlangs) of first-choice and of overflow calls.
    capacities : array_like of int, shape (n_links,)
    reservations : array_like of int, shape (n_links,)
        Reservation r >= 0 (r >= C keeps overflow calls off altogether).

    Returns
    -------
    b_first, b_overflow : ndarray, shape (n_links,)
        Blocking of first-choice calls (``P(k = C)``) and of overflow calls
        (``P(k >= C - r)``).

    Raises
    ------
    ValueError
        Bad values or shapes.

    Notes
    -----
    The chain's probabilities are built up with the normalised recursion
    ``p(k) = p(k - 1) lambda(k - 1) / k`` on arrays of links, rows rescaled on their own.
    On a few links (at most 256) they come instead from the weights in log space, every
    state at once, which saves the loop over states where capacities are large and links
    few (parking spaces by the hundred); the two agree to about 1e-13.

    References
    ----------
    .. [1] J. W. Roberts, Proceedings of ITC-10, Montreal (1983), paper 1.1.2 (trunk
       reservation as a birth-death chain with thresholds).

    Examples
    --------
    >>> from netdim.linkmodels import reservation_link_many
    >>> first, overflow = reservation_link_many([10.0], [3.0], [15], [2])
    >>> round(float(first[0]), 4), round(float(overflow[0]), 4)
    (0.0744, 0.3421)
    """
    f = _loads("first_load", first_load, 1)
    o = _loads("overflow_load", overflow_load, 1)
    caps = _ints("capacities", capacities, 1, 0)
    res = _ints("reservations", reservations, 1, 0)
    for name, arr in (("overflow_load", o), ("capacities", caps), ("reservations", res)):
        _same_len("first_load", f, name, arr)
    n = len(f)
    if n == 0:
        return np.ones(0), np.ones(0)
    if n <= _LOG_LINKS and n * (int(caps.max()) + 1) <= _LOG_CELLS:
        return _reservation_log_weights(f, o, caps, res)
    order = np.argsort(-caps, kind="stable")
    cs, fs, os_, thr = caps[order], f[order], o[order], (caps - res)[order]
    both = fs + os_
    cmax = int(cs[0])
    p = np.ones(n)
    total = np.ones(n)
    tail = np.where(thr <= 0, 1.0, 0.0)
    n_active = np.searchsorted(-cs, -np.arange(cmax + 1), side="right")
    for k in range(1, cmax + 1):
        m = n_active[k]
        lam = np.where(k - 1 < thr[:m], both[:m], fs[:m])
        pk = p[:m] * lam / k
        p[:m] = pk
        total[:m] += pk
        tail[:m] += np.where(k >= thr[:m], pk, 0.0)
        big = total[:m] > _RESCALE
        if big.any():
            idx = np.flatnonzero(big)
            p[idx] /= _RESCALE
            total[idx] /= _RESCALE
            tail[idx] /= _RESCALE
    b_first = np.empty(n)
    b_over = np.empty(n)
    b_first[order] = p / total
    b_over[order] = tail / total
    return b_first, b_over


def _reservation_log_weights(f, o, caps, res):
    """:func:`reservation_link_many` from the chain's weights in log space, every state of
    every link at once (no loop over states: fast where links are few and large).

    ``log w_k = min(k, m) log(f + o) + (k - min(k, m)) log f - log k!`` with ``m =
    max(C - r, 0)``; both blockings are ratios of sums of ``w``, taken relative to the
    largest weight of each link.
    """
    # scipy.special is a heavy import (about 0.2 s) that only this path of a few large
    # links needs
    from scipy.special import gammaln

    k = np.arange(int(caps.max()) + 1, dtype=float)[None, :]
    m = np.maximum(caps - res, 0).astype(float)[:, None]
    km = np.minimum(k, m)
    with np.errstate(divide="ignore", invalid="ignore"):
        lb = np.log(f + o)[:, None]
        lf = np.log(f)[:, None]
        # 0 x log 0 is 0 here: no step taken at a zero rate
        logw = (np.where(km > 0, km * lb, 0.0) + np.where(k > km, (k - km) * lf, 0.0)
                - gammaln(k + 1.0))
    logw[k > caps[:, None]] = -np.inf
    w = np.exp(logw - logw.max(axis=1, keepdims=True))
    total = w.sum(axis=1)
    full = w[np.arange(len(caps)), caps]
    tail = np.where(k >= (caps - res)[:, None], w, 0.0).sum(axis=1)
    return full / total, np.minimum(tail / total, 1.0)


def reservation_link_multi_many(loads, bandwidths, capacities, limits):
    """:func:`reservation_link` with several bandwidths, vectorised over links.

    Parameters
    ----------
    loads : array_like, shape (n_links, n_streams)
        Offered traffic of each stream on each link, erlangs.
    bandwidths : array_like of int, shape (n_streams,)
    capacities : array_like of int, shape (n_links,)
    limits : array_like of int, shape (n_links, n_streams)
        Units each stream must leave free on each link (0 for first-choice calls, the
        reservation for overflow calls).

    Returns
    -------
    ndarray, shape (n_links, n_streams)
        Blocking of each stream on each link.

    Raises
    ------
    ValueError
        Bad values or shapes.

    Notes
    -----
    The Roberts approximation of :func:`reservation_link`, ``k q(k) = sum_i a_i b_i
    q(k - b_i) [k <= C - limits_i]`` (Roberts, ITC-10, 1983), run over occupancy k on
    arrays of links sorted by capacity (the links still growing at step k form a prefix),
    each row rescaled on its own; stream i is blocked in the states above
    ``C - limits_i - b_i``.

    References
    ----------
    .. [1] J. W. Roberts, "Teletraffic models for the Telecom 1 integrated services
       network", Proceedings of ITC-10, Montreal (1983), paper 1.1.2.

    Examples
    --------
    >>> from netdim.linkmodels import reservation_link_multi_many
    >>> reservation_link_multi_many([[10.0, 1.0]], [1, 2], [15], [[0, 2]]).round(4)
    array([[0.059 , 0.4053]])
    """
    a = _loads("loads", loads, 2)
    b = _ints("bandwidths", bandwidths, 1, 1)
    caps = _ints("capacities", capacities, 1, 0)
    lim = np.asarray(limits)
    if a.shape != (len(caps), len(b)):
        raise ValueError(
            f"loads: expected shape ({len(caps)}, {len(b)}) (links x streams), got {a.shape}"
        )
    if lim.shape != a.shape:
        raise ValueError(f"limits: expected shape {a.shape} (links x streams), got {lim.shape}")
    lim = _ints("limits", lim.reshape(-1), 1, 0).reshape(a.shape)
    n_links = len(caps)
    out = np.ones((n_links, len(b)))
    if n_links == 0 or len(b) == 0:
        return out
    order = np.argsort(-caps, kind="stable")
    cs = caps[order]
    ab = (a * b)[order]
    thr = cs[:, None] - lim[order]  # stream i admitted into state k only if k <= thr
    cmax = int(cs[0])
    q = np.zeros((n_links, cmax + 1))
    q[:, 0] = 1.0
    n_active = np.searchsorted(-cs, -np.arange(cmax + 1), side="right")
    for k in range(1, cmax + 1):
        m = n_active[k]
        s = np.zeros(m)
        for i, bi in enumerate(b):
            if bi <= k:
                s += np.where(k <= thr[:m, i], ab[:m, i] * q[:m, k - bi], 0.0)
        s /= k
        q[:m, k] = s
        big = np.flatnonzero(s > _RESCALE)
        if big.size:
            q[big, : k + 1] /= _RESCALE
    tail = np.cumsum(q[:, ::-1], axis=1)[:, ::-1]  # tail[l, k] = sum_{j >= k} q[l, j]
    total = tail[:, 0]
    rows = np.arange(n_links)
    res = np.ones((n_links, len(b)))
    for i, bi in enumerate(b):
        first = thr[:, i] - bi + 1  # first state in which stream i is blocked
        ok = (first >= 1) & (first <= cs)
        res[ok, i] = tail[rows[ok], first[ok]] / total[ok]
        res[first > cs, i] = 0.0
    out[order] = res
    return out
