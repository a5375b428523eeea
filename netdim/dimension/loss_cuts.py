"""Cutting planes below the loss rates of a link, valid at every allowed integer capacity.

A cut ``loss >= alpha + beta nu + gamma c`` (slope ``beta >= 0`` in the offered load nu,
``gamma <= 0`` in the capacity c) is valid for a loss function ``phi_c(nu) >= 0`` when it lies
below ``phi_c`` for every load in ``[0, V]`` and every capacity the plan may take
(installed + module x k, ``0 <= k <= max_modules``). The slopes may be anything; the offset alpha is
computed here so that the inequality holds, by bounding ``phi_c(nu) - beta nu`` from below on a
grid of load cells at each capacity in turn. Two loss functions are covered: the Erlang loss
rate ``Lambda(nu, s) = nu E(nu, s)`` (convex in nu: tangents at the ends of a cell bound it)
and the reservation chain's loss rates at a constant first-choice load (nondecreasing in the
overflow load: the left end of a cell bounds it). :func:`netdim.dimension.loss_flow_bound.
loss_flow_bound` uses them; the proofs of convexity and monotonicity are in
``docs/theory/loss-flow-bound.md``.

References
----------
.. [1] D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical
   Journal 53 (1974) 525-551.
"""

from __future__ import annotations

import numpy as np

from netdim.erlang import erlang_b, erlang_b_table
from netdim.linkmodels import reservation_link_many

__all__ = ["erlang_cut_offsets", "reservation_cut_offsets", "loss_rate", "reservation_losses",
           "reservation_table", "check_weights", "erlang_hull_faces",
           "reservation_hull_faces", "SAFETY"]

#: Cells of the offered-load grid on which a cut's offset is checked.
_GRID = 192
#: Relative and absolute slack taken off every computed offset (rounding of the recursion).
SAFETY = 1e-9
#: Load cells of the grid on which the best slopes of a cut are chosen.
_ENV_GRID = 32
#: Most capacities on that grid (evenly spaced when there are more).
_ENV_LEVELS = 128


def _plane_offsets(cell_min, beta, gamma, vmax, inst, mod, kmax, max_steps=50_000):
    """Largest offsets ``alpha`` with ``alpha + beta nu + gamma c <= phi_c(nu)`` for every
    load ``nu`` in ``[0, vmax]`` and every allowed capacity ``c = inst + mod k``,
    ``0 <= k <= kmax``, for loss functions ``phi_c >= 0``.

    ``cell_min(open)`` yields, for c = 0, 1, 2, ..., the rows still open (``open`` is the
    driver's mask, updated in place) and, for them, a lower bound of
    ``min_nu phi_c(nu) - beta nu`` over ``[0, vmax]``. The capacities are
    taken in increasing order; a plane is done at the first capacity c with
    ``-beta vmax - gamma c >= alpha`` so far, since then every larger allowed capacity c'
    gives ``phi_{c'} - beta nu - gamma c' >= -beta vmax - gamma c >= alpha`` (phi >= 0,
    nu <= vmax, beta >= 0, gamma <= 0).
    """
    p = len(beta)
    alpha = np.full(p, np.inf)
    open_ = np.ones(p, bool)
    floor = -beta * vmax
    kmax_c = inst + mod * kmax.astype(float)
    c = 0
    for c, (rows, low_rows) in enumerate(cell_min(open_)):
        low = np.full(p, np.inf)
        low[rows] = low_rows
        allowed = (c >= inst) & ((c - inst) % mod == 0) & (c <= kmax_c)
        take = open_ & allowed
        alpha = np.where(take, np.minimum(alpha, low - gamma * c), alpha)
        # past the last allowed capacity, or the rest can only give more
        done = (c >= kmax_c) | (floor - gamma * c >= alpha)
        open_ &= ~done
        if not open_.any() or c >= max_steps:
            break
    # planes still open at the step limit: every larger capacity gives at least this
    alpha = np.where(open_, np.minimum(alpha, floor - gamma * (c + 1)), alpha)
    return alpha - SAFETY * (1.0 + np.abs(alpha))


def _erlang_up(e, load, s, s_prev):
    """One step of the Erlang recursion, in place, on the rows whose server count rose from
    ``s_prev`` to ``s`` (by one): ``e = E(load, s_prev)`` becomes ``E(load, s)``; returns s."""
    up = s > s_prev
    if up.any():
        ae = load[up] * e[up]
        e[up] = ae / (s[up, None] + ae)
    return s


def _check_slopes(beta, gamma):
    if np.any(beta < 0) or np.any(gamma > 0):
        raise ValueError("plane slopes: need beta >= 0 (load) and gamma <= 0 (capacity)")


def erlang_cut_offsets(beta, gamma, vmax, installed, module, max_modules, shift, grid=_GRID):
    """Largest offsets ``alpha`` with ``alpha + beta nu + gamma c <= Lambda(nu, s(c))``.

    ``Lambda(nu, s) = nu E(nu, s)`` is the loss rate of an Erlang loss system of s servers
    offered nu erlangs and ``s(c) = max(c - shift, 0)``. The inequality holds for every
    ``nu`` in ``[0, vmax]`` and every allowed capacity ``c = inst + mod k``,
    ``0 <= k <= max_modules``, one plane per entry of the arrays.

    Parameters
    ----------
    beta, gamma : array_like
        Slopes in the load (>= 0) and in the capacity (<= 0).
    vmax : array_like
        Largest load the link can be offered.
    installed, module, max_modules : array_like of int
        Installed capacity, module and most added modules of the link.
    shift : array_like of int
        Units taken off the capacity (the reservation, for the overflow stream), else 0.
    grid : int
        Cells of the load grid.

    Returns
    -------
    ndarray

    Raises
    ------
    ValueError
        A slope of the wrong sign.

    Notes
    -----
    For each integer s, ``Lambda(., s)`` is convex (``docs/theory/loss-flow-bound.md``,
    step 6), so on a grid cell ``[a, b]`` the function ``f = Lambda - beta nu`` is at least
    the larger of its tangents at a and b, whose least value over the cell bounds f there
    from below. Erlang B by its recursion [1]_, its load derivative
    ``dE/dnu = E (s/nu - 1 + E)``; a relative slack of 1e-9 covers rounding.
    """
    beta, gamma, vmax = (np.asarray(v, float) for v in (beta, gamma, vmax))
    _check_slopes(beta, gamma)
    shift = np.asarray(shift, np.int64)
    nu = vmax[:, None] * np.linspace(0.0, 1.0, grid + 1)[None, :]
    a, b = nu[:, :-1], nu[:, 1:]
    bcol = beta[:, None]

    def cells(open_):
        rows = np.arange(len(beta))
        e = np.ones_like(nu)
        nu_, a_, b_, bc, sh = nu, a, b, bcol, shift
        s_prev = np.zeros(len(beta), np.int64)
        c = 0
        while True:
            keep = open_[rows]
            if not keep.all():
                rows, e, nu_, a_, b_, bc, sh, s_prev = (v[keep] for v in (
                    rows, e, nu_, a_, b_, bc, sh, s_prev))
            s = s_prev = _erlang_up(e, nu_, np.maximum(c - sh, 0), s_prev)
            f = nu_ * e - bc * nu_
            d = e * (1.0 + s[:, None] - nu_ * (1.0 - e)) - bc
            fa, fb, da, db = f[:, :-1], f[:, 1:], d[:, :-1], d[:, 1:]
            # where da < 0 < db the tangents cross inside the cell; at any x of the cell
            # the lower of the two tangents is at most their value at the crossing, so a
            # rounded x still gives a valid bound
            with np.errstate(divide="ignore", invalid="ignore"):
                x = np.clip((fb - fa + da * a_ - db * b_) / (da - db), a_, b_)
                mid = np.minimum(fa + da * (x - a_), fb + db * (x - b_))
            low = np.where(da >= 0, fa, np.where(db <= 0, fb, mid))
            low = np.where(np.isfinite(low), low, -bc * b_)  # Lambda >= 0
            low = np.minimum(low, np.minimum(fa, fb)).min(axis=1)
            yield rows, low - SAFETY * (1.0 + np.abs(f).max(axis=1))
            c += 1

    return _plane_offsets(cells, beta, gamma, vmax, np.asarray(installed, np.int64),
                          np.asarray(module, np.int64), np.asarray(max_modules, np.int64))


def check_weights(weights):
    """``(w_first, w_overflow)`` as floats: both >= 0, not both 0; else ValueError."""
    try:
        w1, w2 = (float(w) for w in weights)
    except (TypeError, ValueError):
        raise ValueError(f"weights: need two numbers (first-choice, overflow), got "
                         f"{weights!r}") from None
    if not (w1 >= 0 and w2 >= 0 and w1 + w2 > 0):
        raise ValueError(f"weights: need two numbers >= 0, not both 0, got {weights!r}")
    return w1, w2


def reservation_cut_offsets(weights, beta, gamma, first, reservation, vmax, installed, module,
                            max_modules, grid=4 * _GRID):
    """Offsets of planes below a weighted sum of the reservation chain's loss rates.

    The function is ``w1 F B1(F, o, c) + w2 o B2(F, o, c)`` for ``weights = (w1, w2)``
    (``(1, 0)`` the first-choice loss, ``(0, 1)`` the overflow loss, ``(1, 1)`` their
    sum), as a function of the overflow load o in ``[0, vmax]`` at the constant
    first-choice load F, for the chain of :func:`netdim.linkmodels.reservation_link_many`
    (capacity c, reservation r). It is nondecreasing in o (B1 and B2 are), so on a grid
    cell ``[a, b]`` the function minus ``beta o`` is at least its value at a minus
    ``beta b``. Other arguments as :func:`erlang_cut_offsets`.

    Raises
    ------
    ValueError
        A slope of the wrong sign, or weights that are not two numbers >= 0.
    """
    w1, w2 = check_weights(weights)
    beta, gamma, vmax, first = (np.asarray(v, float) for v in (beta, gamma, vmax, first))
    _check_slopes(beta, gamma)
    res = np.asarray(reservation, np.int64)
    o = vmax[:, None] * np.linspace(0.0, 1.0, grid + 1)[None, :]
    s = first[:, None] + o
    fcol = first[:, None]
    bcol = beta[:, None]

    def cells(open_):
        rows = np.arange(len(beta))
        e = np.ones_like(o)  # E(F + o, m), m = max(c - r, 0)
        o_, s_, fc, bc, r_, bv = o, s, fcol, bcol, res, beta * vmax
        m_prev = np.zeros(len(beta), np.int64)
        c = 0
        while True:
            keep = open_[rows]
            if not keep.all():
                rows, e, o_, s_, fc, bc, r_, bv, m_prev = (v[keep] for v in (
                    rows, e, o_, s_, fc, bc, r_, bv, m_prev))
            m = m_prev = _erlang_up(e, s_, np.maximum(c - r_, 0), m_prev)
            top = c - m  # states above m, entered by first-choice calls only
            tau = np.ones_like(o_)
            tsum = np.zeros_like(o_)
            for i in range(1, int(top.max()) + 1):
                on = (i <= top)[:, None]
                tau = np.where(on, tau * fc / (m[:, None] + i), tau)
                tsum = tsum + np.where(on, tau, 0.0)
            pos = e > 1e-300
            den = np.where(pos, 1.0 / np.where(pos, e, 1.0) + tsum, np.inf)
            b1 = np.where(pos, tau / den, 0.0)  # tau = 1 when top = 0: B1 = E(F + o, c)
            b2 = np.where(pos, (1.0 + tsum) / den, 0.0)
            f = w1 * fc * b1 + w2 * o_ * b2
            low = (f[:, :-1] - bc * o_[:, 1:]).min(axis=1)
            yield rows, low - SAFETY * (1.0 + np.abs(f).max(axis=1) + bv)
            c += 1

    return _plane_offsets(cells, beta, gamma, vmax, np.asarray(installed, np.int64),
                          np.asarray(module, np.int64), np.asarray(max_modules, np.int64))


def loss_rate(nu, s):
    """Lambda(nu, s) = nu E(nu, s) and its derivative in nu, elementwise (integer s >= 0)."""
    nu = np.asarray(nu, float)
    s = np.asarray(s, float)
    e = np.asarray(erlang_b(np.maximum(nu, 0.0), np.maximum(s, 0.0)), float)
    return nu * e, e * (1.0 + s - nu * (1.0 - e))


def reservation_losses(first, reservation, o, c):
    """(F B1, o B2) of the reservation chain, elementwise (integer capacities c)."""
    b1, b2 = reservation_link_many(first, o, np.asarray(c).astype(np.int64), reservation)
    return first * b1, o * b2


def reservation_table(first, reservation, o, cs):
    """(F B1, o B2) of the reservation chain at first-choice load F for every capacity in
    ``cs`` (rows) and overflow load in ``o`` (columns), by one Erlang recursion."""
    res = int(reservation)
    cs = np.asarray(cs, np.int64)
    o = np.asarray(o, float)
    ms = np.maximum(cs - res, 0)
    e = erlang_b_table(first + o, int(ms.max()), servers=ms).T  # e[i]: capacity cs[i]
    fl, ov = np.empty((len(cs), len(o))), np.empty((len(cs), len(o)))
    with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
        for i, c in enumerate(cs):
            m = int(ms[i])
            tau, tsum = 1.0, 0.0
            for k in range(1, int(c) - m + 1):  # states above m: first-choice calls only
                tau = tau * first / (m + k)
                tsum += tau
            den = 1.0 / e[i] + tsum
            fl[i] = np.where(np.isfinite(den), first * tau / den, 0.0)
            ov[i] = np.where(np.isfinite(den), o * (1.0 + tsum) / den, 0.0)
    return fl, ov


def erlang_hull_faces(vmax, installed, module, max_modules, shift=0):
    """Faces ``(alpha, beta, gamma)`` of the lower convex hull of the Erlang loss rate
    ``nu E(nu, max(c - shift, 0))`` on a grid of loads and capacities, those with
    ``beta >= 0`` and ``gamma <= 0``; None when the grid is flat or has none.

    The faces only guide the choice of a cut's slopes (scipy's Qhull); its offset is
    computed by :func:`erlang_cut_offsets`, so any face gives a valid cut.
    """
    cs, nus = _hull_grid(vmax, installed, module, max_modules, 0.0)
    servers = np.maximum(cs - shift, 0)
    e = erlang_b_table(nus, int(servers.max()), servers=servers).T
    return _lower_faces(cs, nus, nus[None, :] * e)


def reservation_hull_faces(weights, vmax, installed, module, max_modules, first, reservation):
    """As :func:`erlang_hull_faces`, for ``w1 F B1 + w2 o B2`` of the reservation chain at
    the constant first-choice load ``first`` (see :func:`reservation_cut_offsets`)."""
    w1, w2 = check_weights(weights)
    cs, nus = _hull_grid(vmax, installed, module, max_modules, first)
    a, b = reservation_table(first, reservation, nus, cs)
    return _lower_faces(cs, nus, w1 * a + w2 * b)


def _hull_grid(vmax, inst, mod, kmax, first):
    top = inst + mod * int(kmax)
    hi = min(top, int(np.ceil(first + vmax + 8 * np.sqrt(first + vmax + 1) + 20)))
    # never past the link's last allowed module count: a module larger than the link's
    # headroom (kmax 0) would otherwise put a capacity of a whole module on the grid
    top_k = min(max((hi - inst) // mod, 1), int(kmax))
    kk = np.unique(np.r_[np.arange(0, top_k + 1, max(1, top_k // _ENV_LEVELS)), top_k])
    return inst + mod * kk, np.linspace(0.0, vmax, _ENV_GRID + 1)


def _lower_faces(cs, nus, phi):
    from scipy.spatial import ConvexHull  # scipy.spatial loads Qhull: only the bound needs it

    C, N = np.meshgrid(cs, nus, indexing="ij")
    try:
        eq = ConvexHull(np.column_stack([N.ravel(), C.ravel().astype(float),
                                         np.asarray(phi, float).ravel()])).equations
    except Exception:  # a flat or degenerate grid: no faces
        return None
    low = eq[:, 2] < -1e-12
    a, b, cz, dd = eq[low].T
    al, be, ga = -dd / cz, -a / cz, -b / cz
    ok = (be >= -1e-12) & (ga <= 1e-12)
    if not ok.any():
        return None
    return al[ok], np.maximum(be[ok], 0.0), np.minimum(ga[ok], 0.0)
