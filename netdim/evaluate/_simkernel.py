"""The compiled event loop of the loss-network simulation (numba).

Kept apart from :mod:`netdim.evaluate.simulate` so that the Python side (options, batches,
intervals) reads plainly. Every array is prepared there; this module only moves calls.

The departure calendar is an array-based binary heap ordered by (time, sequence number): the
sequence number is unique and increasing, so two releases due at the same instant (possible
with deterministic holding times) always leave in the same order and a seed always replays the
same run. Arrivals need no heap entries: the superposition of the demands' Poisson streams is
one Poisson stream whose next call picks its demand in proportion to the rates (both drawn in
advance, in chunks, from the caller's numpy Generator).

The functions are compiled on first use and cached on disk (``cache=True``): the first call in
a fresh install takes a few seconds, later processes load the cached machine code.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["run_chunk", "LAW_EXPONENTIAL", "LAW_DETERMINISTIC", "LAW_LOGNORMAL"]

LAW_EXPONENTIAL = 0
LAW_DETERMINISTIC = 1
LAW_LOGNORMAL = 2


@njit(cache=True, inline="always")
def _less(ht, hs, a, b):
    return ht[a] < ht[b] or (ht[a] == ht[b] and hs[a] < hs[b])


@njit(cache=True, inline="always")
def _swap(ht, hs, hg, a, b):
    ht[a], ht[b] = ht[b], ht[a]
    hs[a], hs[b] = hs[b], hs[a]
    hg[a], hg[b] = hg[b], hg[a]


@njit(cache=True)
def _push(ht, hs, hg, n, t, s, g):
    i = n
    ht[i] = t
    hs[i] = s
    hg[i] = g
    while i > 0:
        p = (i - 1) >> 1
        if _less(ht, hs, i, p):
            _swap(ht, hs, hg, i, p)
            i = p
        else:
            break
    return n + 1


@njit(cache=True)
def _pop(ht, hs, hg, n):
    """Remove the root; return the new size (the root's group is read by the caller)."""
    n -= 1
    ht[0] = ht[n]
    hs[0] = hs[n]
    hg[0] = hg[n]
    i = 0
    while True:
        left = 2 * i + 1
        if left >= n:
            break
        c = left
        right = left + 1
        if right < n and _less(ht, hs, right, left):
            c = right
        if _less(ht, hs, c, i):
            _swap(ht, hs, hg, c, i)
            i = c
        else:
            break
    return n


@njit(cache=True)
def run_chunk(
    t, gaps, dem, draws, law, sigma, max_groups,
    d_bw, d_rptr, n_try, r_lptr, r_links, r_w, r_gptr, g_hold, g_lptr, g_links, g_bw, res,
    free, ht, hs, hg, state,
    arrivals, blocked, admitted, fc_att, fc_att2, fc_blk, alt_att, alt_blk, offered,
):
    """Simulate the arrivals ``gaps``, ``dem``, ``draws`` from time ``t``.

    Returns ``(time of the last arrival simulated, arrivals simulated)``: fewer than
    ``len(gaps)`` when the departure heap has no room for ``max_groups`` more entries (the
    caller grows it and goes on from there). ``state`` holds ``[heap size, next sequence
    number]``; ``free``, the heap and the counters are updated in place. ``n_try`` is 1
    under fixed routing, else the number of routes. ``fc_att2`` sums the squared weights of
    first-choice attempts (for the effective number of attempts per link).
    """
    n = state[0]
    seq = state[1]
    shift = -0.5 * sigma * sigma
    room = len(ht) - max_groups
    for i in range(len(gaps)):
        if n > room:
            state[0] = n
            state[1] = seq
            return t, i
        t += gaps[i]
        while n > 0 and ht[0] <= t:
            g = hg[0]
            n = _pop(ht, hs, hg, n)
            b = g_bw[g]
            for s in range(g_lptr[g], g_lptr[g + 1]):
                free[g_links[s]] += b
        d = dem[i]
        arrivals[d] += 1
        b = d_bw[d]
        r0 = d_rptr[d]
        nr = min(d_rptr[d + 1] - r0, n_try)
        chosen = -1
        for k in range(nr):
            r = r0 + k
            nfail = 0
            failing = -1
            for s in range(r_lptr[r], r_lptr[r + 1]):
                j = r_links[s]
                w = r_w[s]
                if k == 0:
                    f = free[j] < b
                    fc_att[j] += w
                    fc_att2[j] += w * w
                    if f:
                        fc_blk[j] += w
                else:
                    f = free[j] - b < res[j]
                    alt_att[j] += w
                    if f:
                        alt_blk[j] += w
                if f:
                    nfail += 1
                    failing = s
            if nfail == 0:
                for s in range(r_lptr[r], r_lptr[r + 1]):
                    offered[r_links[s]] += r_w[s]
                chosen = r
                break
            if nfail == 1:
                offered[r_links[failing]] += r_w[failing]
        if chosen < 0:
            blocked[d] += 1
            continue
        admitted[chosen] += 1
        for s in range(r_lptr[chosen], r_lptr[chosen + 1]):
            free[r_links[s]] -= b
        q = 0
        for g in range(r_gptr[chosen], r_gptr[chosen + 1]):
            h = g_hold[g]
            if law == 0:
                h *= draws[i, q]
            elif law == 2:
                h *= np.exp(sigma * draws[i, q] + shift)
            q += 1
            n = _push(ht, hs, hg, n, t + h, seq, g)
            seq += 1
    state[0] = n
    state[1] = seq
    return t, len(gaps)
