"""The link closures of the day methods (private to :mod:`netdim.daily_loads`).

Formulas of one link, vectorised over links: the offered load behind a carried load
(Erlang B), the reservation chain's law, the factor that scales a two-stream load mix to a
carried total, and the occupancy figures of a link's law. Method notes in
docs/design/daily.md.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from netdim.erlang import erlang_b, log1m_erlang_b
from netdim.errors import ConvergenceError

__all__ = ["offered_for_carried", "invert_carried", "scale_to_occupancy", "occupancy_figures",
           "SATURATION"]

#: Carried load is kept this far below capacity (relative): at capacity the offered load
#: that explains it is infinite.
SATURATION = 1e-12


# --------------------------------------------------------------------------------------------
# the Erlang closure of the carried load


def offered_for_carried(carried, servers, guess=None, tol=1e-12, max_iter=200):
    """Offered traffic ``A`` whose carried traffic ``A (1 - E(A, n))`` is ``carried``.

    Parameters
    ----------
    carried : array_like of float
        Carried erlangs, ``0 <= carried < servers`` (values at or above ``servers`` are
        taken as just below it).
    servers : array_like of int
    guess : array_like of float, optional
        Start values (the previous solution, when stepping in time).
    tol : float
        Relative accuracy of the carried traffic reached.

    Returns
    -------
    ndarray
        ``A`` (0 where ``carried`` or ``servers`` is 0).

    Raises
    ------
    ConvergenceError
        Not solved in ``max_iter`` steps.

    Notes
    -----
    Safeguarded Newton in the bracket ``[c, n c / (n - c)]``: carried traffic is at most the
    offered, and ``E(A, n) <= A / (n + A)`` (from the recursion) makes the carried traffic of
    ``A = n c / (n - c)`` at least ``c``. The slope is ``1 - E - E (n - c)``, from
    ``dE/dA = E (n / A - 1 + E)`` [1]_. The carried traffic rises with ``A`` and is
    concave [2]_, so the root is unique.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 53 (1974) 525-551.
    .. [2] A. A. Messerli, "Proof of a convexity property of the Erlang B formula", Bell
       System Technical Journal 51 (1972) 951-953.
    """
    return invert_carried(carried, servers, guess, tol, max_iter)[0]


def invert_carried(carried, servers, guess=None, tol=1e-12, max_iter=200):
    """(A, E(A, n)) of :func:`offered_for_carried`; E of the last step, so callers need no
    second Erlang B evaluation (E = 1 where n = 0, 0 where only the carried load is 0)."""
    q_all = np.atleast_1d(np.asarray(carried, dtype=float))
    n_all = np.broadcast_to(np.asarray(servers, dtype=float), q_all.shape)
    out = np.zeros(q_all.shape)
    e_out = np.where(n_all > 0, 0.0, 1.0)
    live = (q_all > 0) & (n_all > 0)
    if not live.any():
        return out, e_out
    n = n_all[live]
    q = np.minimum(q_all[live], n * (1.0 - SATURATION))
    lo = q.copy()
    hi = n * q / (n - q)
    x = lo.copy() if guess is None else np.clip(np.asarray(guess, float)[live], lo, hi)
    for _ in range(max_iter):
        e = np.asarray(erlang_b(x, n), dtype=float)
        c = x * (1.0 - e)
        near = e > 0.5
        if near.any():
            # 1 - E from its own accurate log: near saturation 1.0 - e cancels
            c[near] = x[near] * np.exp(np.asarray(log1m_erlang_b(x[near], n[near]), float))
        g = c - q
        done = (np.abs(g) <= tol * q) | (hi - lo <= 1e-14 * x)
        if done.all():
            out[live] = x
            e_out[live] = e
            return out, e_out
        below = g < 0
        lo = np.where(below, x, lo)
        hi = np.where(below, hi, x)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = x - g / ((1.0 - e) - e * (n - c))
        # outside the bracket: bisect, geometrically while the bracket spans decades
        mid = np.where(hi > 4.0 * lo, np.sqrt(lo * hi), 0.5 * (lo + hi))
        step = np.where(np.isfinite(step) & (step >= lo) & (step <= hi), step, mid)
        x = np.where(done, x, step)
    raise ConvergenceError(
        f"offered load for a carried load: not solved in {max_iter} steps", iterations=max_iter
    )


def _reservation_law(a1, a2, caps, thr):
    """Occupancy law of reservation links (birth rate ``a1 + a2`` below ``thr`` busy units,
    ``a1`` above), rows padded to the largest capacity, in log space."""
    k = np.arange(int(caps.max()) + 1)
    lam = np.where(k[None, :-1] < thr[:, None], (a1 + a2)[:, None], a1[:, None])
    with np.errstate(divide="ignore"):
        logw = np.concatenate([np.zeros((len(caps), 1)), np.cumsum(np.log(lam), axis=1)],
                              axis=1)
    logw -= special.gammaln(k + 1.0)[None, :]
    logw[k[None, :] > caps[:, None]] = -np.inf
    p = np.exp(logw - logw.max(axis=1, keepdims=True))
    return p / p.sum(axis=1, keepdims=True)


def scale_to_occupancy(m1, m2, caps, thr, target, guess=None, tol=1e-12, max_iter=100):
    """Per link the factor ``s`` whose reservation law at loads ``(s m1, s m2)`` has mean
    ``target``, with that law's blockings (B1 = P(full), B2 = P(>= thr busy)).

    The mean rises with s from 0 to the capacity (to ``thr`` without first-choice load), and
    ``d mean / d log s = variance`` (the weights go as ``s^k``): Newton in log s, bisecting
    where it leaves the bracket. Links with nothing to scale keep the law at 0 busy units.
    """
    n = len(caps)
    s = np.zeros(n)
    # the law at 0 busy units: full only without capacity, overflow shut if thr <= 0
    b1, b2 = (caps == 0).astype(float), (thr <= 0).astype(float)
    reach = np.where(m1 > 0, caps, np.where(m2 > 0, np.clip(thr, 0, caps), 0))
    live = (target > 0) & (reach > 0)
    if not live.any():
        return s, b1, b2
    cap, th, f, o = caps[live], thr[live], m1[live], m2[live]
    k = np.arange(int(cap.max()) + 1)
    q = np.minimum(target[live], reach[live] * (1.0 - SATURATION))
    u = np.log(q / (f + o)) if guess is None else np.log(np.where(
        guess[live] > 0, guess[live], q / (f + o)))
    lo, hi = np.full(u.size, -np.inf), np.full(u.size, np.inf)
    rows = np.arange(u.size)
    for _ in range(max_iter):
        x = np.exp(u)
        p = _reservation_law(x * f, x * o, cap, th)
        mean = p @ k
        var = np.maximum(p @ (k * k) - mean * mean, 1e-300)
        g = mean - q
        done = (np.abs(g) <= tol * np.maximum(q, 1.0)) | (hi - lo <= 1e-14)
        if done.all():
            s[live] = x
            b1[live] = p[rows, cap]
            b2[live] = np.where(k[None, :] >= th[:, None], p, 0.0).sum(axis=1)
            return s, b1, b2
        lo = np.where(g < 0, u, lo)
        hi = np.where(g < 0, hi, u)
        step = u - np.clip(g / var, -5.0, 5.0)
        inside = (step > lo) & (step < hi)
        mid = np.where(np.isfinite(lo) & np.isfinite(hi), 0.5 * (lo + hi), step)
        u = np.where(done, u, np.where(inside, step, mid))
    raise ConvergenceError(
        f"carried-load closure: the link loads were not matched in {max_iter} steps",
        iterations=max_iter)


# --------------------------------------------------------------------------------------------
# link occupancy laws


def occupancy_figures(first, over, caps, res, level):
    """Mean, ``level`` quantile and P(full) of each link's occupancy law (the reservation
    chain; ``over = 0`` or ``res = 0``: the truncated Poisson law of Erlang B)."""
    if not caps.size:
        return np.zeros(0), np.zeros(0, dtype=np.int64), np.zeros(0)
    p = _reservation_law(first, over, caps, caps - res)
    k = np.arange(p.shape[1])
    qk = np.argmax(np.cumsum(p, axis=1) >= level - 1e-12, axis=1)
    return p @ k, np.minimum(qk, caps), p[np.arange(len(caps)), caps]
