"""Blocking of smooth and peaked streams sharing one group, with trunk reservation.

A group (trunk group, car park) of ``C`` units is offered first-choice traffic, which is
Poisson (variance = mean), and overflow traffic, whose variance exceeds its mean
(peakedness ``Z = V / M > 1``); overflow calls must leave ``r`` units free (trunk
reservation). These functions give the blocking each stream meets and the peakedness of
what it loses, which is what the next group on its route is offered.

The link model (design notes and measurements: ``docs/theory/peaked-overflow.md``):

1. The overflow traffic is one stream of known mean and variance. Its **equivalent random
   group** ``(A*, N*)`` (Wilkinson 1956), the group whose overflow has those two moments,
   gives it a third moment: the third binomial moment of that group's overflow.
2. An **interrupted Poisson process** (IPP) with those three moments stands for it
   (Kuczura 1973). The chain of (IPP phase, busy units) with the Poisson first-choice
   traffic and the reservation is solved exactly: first-choice calls meet its time
   congestion, overflow calls the congestion of the IPP's on-phases. This is how the lost
   traffic is split between the smooth and the peaked part, and how reservation acts on
   peaked overflow.
3. Within the overflow class every stream meets the class's call congestion ``B``
   (``split='equal'``, the default). ``split='peakedness'`` gives a stream of peakedness
   ``Z_i`` instead ``B Z_i / Z`` [5]_, taken as ``1 - (1 - B)^(Z_i / Z)`` (the same to first
   order in ``B``, below 1 in heavy overload). Both keep the class's lost traffic; in
   networks the equal split measures closer to simulation (the overflow streams a link is
   offered are parts of common losses and rise together, so a thin stream's calls arrive
   when the whole mix does; ``docs/measurements/peaked.md``).
4. What a link loses in each class has Riordan's peakedness of the overflow of the
   equivalent group of the link's whole offered traffic, at the class's threshold.

``model='ert'`` or ``'hayward'`` rescales each class's blocking so that, without
reservation, the whole mix loses on the class's units what the equivalent random method
(or Hayward's approximation, Fredericks 1980) says it loses; one overflow stream alone is
then the equivalent random method itself. That is the trade's formula for the total, but
for a light smooth load mixed with very peaked overflow it is far from the exact figure
(the two-moment summary of the mix loses its shape), which the IPP chain keeps; hence the
default ``'ipp'``.

References
----------
.. [1] R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell System
   Technical Journal 35 (1956) 421-514 (equivalent random method; Riordan's moments).
.. [2] Y. Rapp, "Planning of junction network in a multi-exchange area", Ericsson Technics
   20 (1964) 77-130.
.. [3] A. Kuczura, "The interrupted Poisson process as an overflow process", Bell System
   Technical Journal 52 (1973) 437-448 (the IPP and its three-moment match; from memory).
.. [4] A. A. Fredericks, "Congestion in blocking systems - a simple approximation
   technique", Bell System Technical Journal 59 (1980) 805-827 (Hayward's approximation).
.. [5] The split in proportion to peakedness, ``B_i = B Z_i / Z``: as given for the
   individual blocking of the streams of an overflow mix in the ITU-D/ITC Teletraffic
   Engineering Handbook (V. B. Iversen, 2005), overflow theory chapter (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim._arrays import frozen
from netdim._peaked_kernels import ipp_chain, link_kernel, log_erlang_b_real

__all__ = [
    "LINK_MODELS",
    "SPLITS",
    "EQUIVALENTS",
    "GroupLoss",
    "LinkFactors",
    "LinkBlocking",
    "log_erlang_b_real",
    "equivalent_group",
    "overflow_binomial_moments",
    "ipp_from_moments",
    "ipp_group",
    "peaked_group_loss",
    "link_factors",
    "peaked_link",
]

#: Link models: the IPP chain; the same rescaled to the equivalent random method's or to
#: Hayward's total loss.
LINK_MODELS = ("ipp", "ert", "hayward")
#: How the equivalent random group is found: Wilkinson's equations solved ('exact'), the
#: same interpolated in a table of solutions ('table', fast), or Rapp's closed form.
EQUIVALENTS = ("table", "exact", "rapp")
#: How the overflow class's blocking is shared among its streams: every stream meets it
#: ('equal'), or in proportion to each stream's peakedness ('peakedness').
SPLITS = ("equal", "peakedness")

#: A mix whose variance exceeds its mean by less than this (relative) counts as smooth.
SMOOTH_RTOL = 1e-12


def _check_names(model, equivalent, split="equal"):
    if split not in SPLITS:
        raise ValueError(f"split: unknown rule {split!r}; choose one of {', '.join(SPLITS)}")
    if model not in LINK_MODELS:
        raise ValueError(f"model: unknown model {model!r}; choose one of {', '.join(LINK_MODELS)}")
    if equivalent not in EQUIVALENTS:
        raise ValueError(
            f"equivalent: unknown method {equivalent!r}; choose one of {', '.join(EQUIVALENTS)}"
        )


def _check_moments(m, v, what="stream"):
    bad = ~np.isfinite(m) | (m < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"means: {what} {i} has mean {float(m[i])!r}; must be finite and >= 0")
    bad = ~np.isfinite(v) | (v < m * (1.0 - 1e-9))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"variances: {what} {i} has variance {float(v[i])!r} below its mean "
            f"{float(m[i])!r}; Poisson traffic has variance = mean, and traffic smoother "
            "than Poisson is not covered by these models"
        )


def _whole(name, x):
    if isinstance(x, bool) or not float(x) >= 0 or float(x) != int(float(x)):
        raise ValueError(f"{name}: must be a whole number >= 0, got {x!r}")
    return int(float(x))


# --------------------------------------------------------------------------------------------
# the equivalent random group


def _rapp(m, z):
    a = m * z + 3.0 * z * (z - 1.0)
    return a, np.maximum(a * (m + z) / (m + z - 1.0) - m - 1.0, 0.0)


def _mean_gap(t, m, z):
    """log(A E(A, N)) - log M at A = e^t, with N from Riordan's formula for (M, Z)."""
    a = np.exp(t)
    n = np.maximum(a * (1.0 + 1.0 / (z - 1.0 + m)) - 1.0 - m, 0.0)
    return t + log_erlang_b_real(a, n) - np.log(m)


def _solve_exact(m, z, tol=1e-14, max_iter=200):
    """Wilkinson's equations, vectorised: Riordan's variance formula gives N* from A*, and
    the mean equation ``A E(A, N) = M`` is solved in log A by the Illinois method."""
    lo = np.log((1.0 + m) * (z - 1.0 + m) / (z + m))  # N* = 0 there; the mean is too high
    glo = _mean_gap(lo, m, z)
    hi = np.maximum(np.log(_rapp(m, z)[0]), lo + 1e-3)
    ghi = _mean_gap(hi, m, z)
    grow = np.flatnonzero(ghi > 0)
    while grow.size:
        lo[grow], glo[grow] = hi[grow], ghi[grow]
        hi[grow] += np.log(2.0)
        ghi[grow] = _mean_gap(hi[grow], m[grow], z[grow])
        grow = grow[ghi[grow] > 0]
    side = np.zeros(m.shape, dtype=np.int64)
    act = np.arange(m.size)
    for _ in range(max_iter):
        if not act.size:
            break
        lo_a, hi_a, gl, gh = lo[act], hi[act], glo[act], ghi[act]
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (lo_a * gh - hi_a * gl) / (gh - gl)
        bad = ~np.isfinite(t) | (t <= np.minimum(lo_a, hi_a)) | (t >= np.maximum(lo_a, hi_a))
        t[bad] = 0.5 * (lo_a[bad] + hi_a[bad])
        gt = _mean_gap(t, m[act], z[act])
        pos = gt > 0
        lo[act[pos]], glo[act[pos]] = t[pos], gt[pos]
        hi[act[~pos]], ghi[act[~pos]] = t[~pos], gt[~pos]
        s = np.where(pos, 1, -1)
        again = side[act] == s  # Illinois: the same end kept twice halves the other's value
        ghi[act[pos & again]] *= 0.5
        glo[act[~pos & again]] *= 0.5
        side[act] = s
        done = (np.abs(gt) < tol) | (np.abs(hi[act] - lo[act]) < tol * np.maximum(1.0, np.abs(t)))
        act = act[~done]
    t = np.where(np.abs(glo) < np.abs(ghi), lo, hi)
    a = np.exp(t)
    return a, np.maximum(a * (1.0 + 1.0 / (z - 1.0 + m)) - 1.0 - m, 0.0)


class _Table:
    """Equivalent random groups interpolated in a grid of exact solutions: log10 M in
    [-8, 4] and log10(Z - 1) in [-4, 2], step 0.1, built once on first use (about half a
    second). Kept: log A* and log(1 + N*) as corrections to Rapp's closed form, and the
    third-moment ratio ``b3 / b2`` of the group's overflow over M (all smooth there)."""

    U = (-8.0, 4.0)
    V = (-4.0, 2.0)
    STEP = 0.1
    _grid = None

    @classmethod
    def grid(cls):
        if cls._grid is None:
            u = np.arange(cls.U[0], cls.U[1] + 1e-9, cls.STEP)
            v = np.arange(cls.V[0], cls.V[1] + 1e-9, cls.STEP)
            uu, vv = np.meshgrid(u, v, indexing="ij")
            m, z = 10.0 ** uu.ravel(), 1.0 + 10.0 ** vv.ravel()
            a, n = _solve_exact(m, z)
            ar, nr = _rapp(m, z)
            _, b2, b3 = overflow_binomial_moments(a, n)
            cls._grid = ((np.log(a) - np.log(ar)).reshape(uu.shape),
                         (np.log1p(n) - np.log1p(nr)).reshape(uu.shape),
                         (np.log(b3 / b2) - np.log(m)).reshape(uu.shape))
        return cls._grid

    @classmethod
    def kernel_args(cls):
        qa, qn, qs = cls.grid()
        return qa, qn, qs, cls.U[0], cls.V[0], cls.STEP

    @classmethod
    def inside(cls, m, z):
        u, v = np.log10(m), np.log10(z - 1.0)
        return (u >= cls.U[0]) & (u <= cls.U[1]) & (v >= cls.V[0]) & (v <= cls.V[1])

    @classmethod
    def lookup(cls, m, z):
        qa, qn, _ = cls.grid()
        fu = (np.log10(m) - cls.U[0]) / cls.STEP
        fv = (np.log10(z - 1.0) - cls.V[0]) / cls.STEP
        i = np.clip(np.floor(fu).astype(np.int64), 0, qa.shape[0] - 2)
        j = np.clip(np.floor(fv).astype(np.int64), 0, qa.shape[1] - 2)
        du, dv = fu - i, fv - j

        def bilinear(q):
            return ((1 - du) * (1 - dv) * q[i, j] + du * (1 - dv) * q[i + 1, j]
                    + (1 - du) * dv * q[i, j + 1] + du * dv * q[i + 1, j + 1])

        ar, nr = _rapp(m, z)
        return ar * np.exp(bilinear(qa)), np.maximum(np.expm1(np.log1p(nr) + bilinear(qn)), 0.0)


def equivalent_group(mean, variance, equivalent="exact"):
    """Equivalent random group ``(A*, N*)`` of traffic of given moments (vectorised).

    The Poisson traffic ``A*`` and the real number of servers ``N*`` whose overflow has
    mean ``mean`` and variance ``variance`` by Riordan's formulas.

    Parameters
    ----------
    mean, variance : array_like
        ``mean > 0``, ``variance >= mean``; smooth traffic gets ``(mean, 0)``.
    equivalent : {'exact', 'table', 'rapp'}
        ``exact``: Wilkinson's equations solved (Illinois method on one equation in
        ``log A*``, ``N*`` from Riordan's variance); ``table``: the same interpolated in
        a table of solutions (relative error below 3e-3 in ``A*`` and ``N*``, 1e-3 in the
        third moment of the overflow; measured in the tests), solved exactly outside it;
        ``rapp``: Rapp's closed form.

    Returns
    -------
    traffic, servers : ndarray

    Raises
    ------
    ValueError
        Negative means, a variance below its mean, an unknown method.

    References
    ----------
    Wilkinson (1956) [1]_; Rapp (1964) [2]_.

    Examples
    --------
    The overflow of 10 erlangs on 10 circuits has the group itself as its equivalent:

    >>> from netdim.overflow import overflow_moments
    >>> a, n = equivalent_group(*overflow_moments(10.0, 10))
    >>> round(float(a), 6), round(float(n), 6)
    (10.0, 10.0)
    """
    if equivalent not in EQUIVALENTS:
        raise ValueError(
            f"equivalent: unknown method {equivalent!r}; choose one of {', '.join(EQUIVALENTS)}"
        )
    m, v = np.broadcast_arrays(np.asarray(mean, dtype=float), np.asarray(variance, dtype=float))
    _check_moments(m.ravel(), v.ravel())
    m = m.astype(float)
    v = np.maximum(v, m)
    a, n = m.copy(), np.zeros(m.shape)
    rough = (v > m * (1.0 + SMOOTH_RTOL)) & (m > 0)
    if rough.any():
        a[rough], n[rough] = _equivalent(m[rough], v[rough] / m[rough], equivalent)
    return a, n


def _equivalent(m, z, how):
    """(A*, N*) for means m > 0 and peakedness z > 1 (no checks)."""
    if how == "rapp":
        return _rapp(m, z)
    a, n = np.empty(m.shape), np.empty(m.shape)
    # all but Poisson, or next to no traffic: the shape hardly matters
    near = (z - 1.0 < 10.0 ** _Table.V[0]) | (m < 10.0 ** _Table.U[0])
    rest = ~near
    if near.any():
        a[near], n[near] = _rapp(m[near], z[near])
    if how == "table":
        tab = rest & _Table.inside(m, z)
        a[tab], n[tab] = _Table.lookup(m[tab], z[tab])
        rest &= ~tab
    if rest.any():
        a[rest], n[rest] = _solve_exact(m[rest], z[rest])
    return a, n


# --------------------------------------------------------------------------------------------
# one mix on a group: its total loss (equivalent random, Hayward)


@dataclass(frozen=True)
class GroupLoss:
    """Loss of a traffic mix on groups (arrays, one entry per group).

    Attributes
    ----------
    blocking : ndarray
        Fraction of the offered mean lost.
    overflow_mean, overflow_variance : ndarray
        Moments of the lost traffic (what a next group would be offered).
    """

    blocking: np.ndarray
    overflow_mean: np.ndarray
    overflow_variance: np.ndarray

    def to_dict(self) -> dict:
        return {k: np.asarray(getattr(self, k)).tolist()
                for k in ("blocking", "overflow_mean", "overflow_variance")}


def _loss_terms(m, v, servers, hayward, eq):
    """(log B, Riordan peakedness of the loss) of moments (m > 0, v) on ``servers``."""
    z = np.maximum(v / m, 1.0)
    c = np.maximum(np.asarray(servers, dtype=float), 0.0)
    if hayward:
        a = m / z
        le = log_erlang_b_real(a, c / z)
        mo = a * np.exp(le)
        zo = z * (1.0 - mo + a / (c / z + 1.0 - a + mo))
        return le, np.maximum(zo, 1.0)
    a, n = eq
    le = log_erlang_b_real(a, n + c)
    mo = a * np.exp(le)
    zo = 1.0 - mo + a / (n + c + 1.0 - a + mo)
    return np.minimum(np.log(a) + le - np.log(m), 0.0), np.maximum(zo, 1.0)


def peaked_group_loss(mean, variance, servers, model="ert", equivalent="exact") -> GroupLoss:
    """Loss of traffic of given mean and variance on groups of ``servers`` (no reservation).

    Parameters
    ----------
    mean, variance : array_like
        Moments of the offered traffic: ``mean >= 0``, ``variance >= mean``.
    servers : array_like
        Servers in each group, real ``>= 0``.
    model : {'ert', 'hayward'}
        ``ert``: ``B = A* E(A*, N* + n) / M`` with the equivalent random group.
        ``hayward``: ``B = E(M / Z, n / Z)``, ``Z = V / M``.
    equivalent : {'exact', 'table', 'rapp'}
        How ``(A*, N*)`` is found (ignored by ``hayward``).

    Returns
    -------
    GroupLoss
        Overflow moments by Riordan's formula on ``(A*, N* + n)`` (``hayward``: on
        ``(M/Z, n/Z)``, the mean times Z, the variance times Z^2).

    Raises
    ------
    ValueError
        Negative means or servers, variance below the mean, unknown model.

    References
    ----------
    Wilkinson (1956) [1]_, Rapp (1964) [2]_, Fredericks (1980) [4]_.

    Examples
    --------
    One overflow stream (of 10 E on 10 circuits) on 5 more circuits loses
    ``E(10, 15) / E(10, 10)`` of itself:

    >>> from netdim.overflow import overflow_moments
    >>> r = peaked_group_loss(*overflow_moments(10.0, 10), 5)
    >>> round(float(r.blocking), 4)
    0.1701
    """
    if model not in ("ert", "hayward"):
        raise ValueError(f"model: unknown model {model!r}; choose one of ert, hayward")
    _check_names("ipp", equivalent)
    m, v, c = np.broadcast_arrays(np.asarray(mean, dtype=float),
                                  np.asarray(variance, dtype=float),
                                  np.asarray(servers, dtype=float))
    _check_moments(m.ravel(), v.ravel())
    if not np.all(c >= 0):
        raise ValueError(f"servers: must be >= 0, got {float(c[~(c >= 0)].flat[0])!r}")
    shape = m.shape
    m, v, c = (np.ravel(x).astype(float) for x in (m, v, c))
    b = np.zeros(m.shape)
    zo = np.ones(m.shape)
    live = m > 0
    if live.any():
        hay = model == "hayward"
        eq = None if hay else equivalent_group(m[live], v[live], equivalent)
        lb, zl = _loss_terms(m[live], v[live], c[live], hay, eq)
        b[live], zo[live] = np.exp(lb), zl
    mo = m * b
    return GroupLoss(frozen(b.reshape(shape)), frozen(mo.reshape(shape)),
                     frozen((mo * zo).reshape(shape)))


# --------------------------------------------------------------------------------------------
# the interrupted Poisson process


def overflow_binomial_moments(traffic, servers):
    """First three binomial moments of the traffic a group overflows (real servers).

    Parameters
    ----------
    traffic, servers : array_like
        Offered Poisson traffic ``A > 0`` and servers ``n >= 0`` (real).

    Returns
    -------
    b1, b2, b3 : ndarray
        ``b_k = E[C(J, k)]`` for the busy servers ``J`` of an infinite group fed by the
        overflow: ``b1 = A E(A, n)``, ``b2 = A b1 / (2 (n + 1 - A + b1))`` (Riordan's
        variance is ``2 b2 + b1 - b1^2``) and ``3 b3 = A / ((n + 2 - A) / (2 b2) + 1 / b1)``.

    Notes
    -----
    ``1 / b_k = k int_0^inf e^{-A y} y^{k-1} (1 + y)^n dy`` (for ``k = 1``, Jagerman's
    integral for ``1 / (A E(A, n))``); with ``y = (1 + y) - 1`` each is a combination of
    Erlang B at ``n``, ``n + 1``, ``n + 2``, which the Erlang recursion turns into the closed
    forms above. The tests check them against the Markov chain of a primary group and its
    overflow.

    References
    ----------
    Wilkinson (1956) [1]_ (Riordan's moments); D. L. Jagerman, "Some properties of the
    Erlang loss function", Bell System Technical Journal 53 (1974) 525-551.
    """
    a, n = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(servers, dtype=float))
    b1 = a * np.exp(log_erlang_b_real(a, n))
    b2 = a * b1 / (2.0 * (n + 1.0 - a + b1))
    b3 = a / (3.0 * ((n + 2.0 - a) / (2.0 * b2) + 1.0 / b1))
    return b1, b2, b3


def ipp_from_moments(b1, b2, b3):
    """Interrupted Poisson process with the given first three binomial moments.

    The IPP offers calls at ``rate`` while on; it turns on at ``on_rate`` and off at
    ``off_rate`` (per mean holding time). Offered to an infinite group (``g`` = on_rate,
    ``s = g + off_rate``, ``p = g / s``): ``b1 = rate p``,
    ``b2 = rate^2 p (g + 1) / (2 (1 + s))``,
    ``b3 = rate^3 p (g + 1)(g + 2) / (6 (1 + s)(2 + s))``.

    Parameters
    ----------
    b1, b2, b3 : array_like
        Binomial moments of a peaked stream.

    Returns
    -------
    rate, on_rate, off_rate : ndarray
        NaN where no IPP has these moments.

    Notes
    -----
    With ``r2 = 2 b2 / b1``, ``r3 = 3 b3 / b2``: ``s = 2 (r3 - r2) / (2 r2 - b1 - r3)``,
    ``rate = r2 + s (r2 - b1)``, ``on_rate = b1 s / rate``.

    References
    ----------
    Kuczura (1973) [3]_; the moment formulas are checked in the tests against the chain
    of an IPP on an infinite group.
    """
    b1, b2, b3 = (np.asarray(x, dtype=float) for x in (b1, b2, b3))
    with np.errstate(divide="ignore", invalid="ignore"):
        r2 = 2.0 * b2 / b1
        r3 = 3.0 * b3 / b2
        s = 2.0 * (r3 - r2) / (2.0 * r2 - b1 - r3)
        rate = r2 + s * (r2 - b1)
        on = b1 * s / rate
    ok = np.isfinite(s) & (s > 0) & (rate > 0) & (on > 0) & (on < s)
    nan = np.full(np.shape(s), np.nan)
    return np.where(ok, rate, nan), np.where(ok, on, nan), np.where(ok, s - on, nan)


def ipp_group(first, rate, on_rate, off_rate, capacity, reservation=0):
    """Blocking of a Poisson stream and an interrupted Poisson stream sharing one group.

    Parameters
    ----------
    first : float
        Poisson traffic (erlangs), admitted while a unit is free.
    rate, on_rate, off_rate : float
        The IPP (see :func:`ipp_from_moments`); ``off_rate = 0``: always on (Poisson).
    capacity : int
    reservation : int
        Units the IPP's calls must leave free.

    Returns
    -------
    poisson, ipp, loss : float
        Blocking of the Poisson calls (time congestion), call congestion of the IPP's
        calls (the share of on-phase time in blocking states), fraction of all traffic lost.

    Raises
    ------
    ValueError
        Negative or non-finite rates, capacity or reservation not whole numbers >= 0.

    Notes
    -----
    Exact for these inputs: the Markov chain over (phase, busy units), solved by linear
    level reduction towards the level of the mean load from both ends (two phases per
    level), so that no recursion runs against the fall of the probabilities.
    """
    cap = _whole("capacity", capacity)
    res = _whole("reservation", reservation)
    for name, x in (("first", first), ("rate", rate), ("on_rate", on_rate),
                    ("off_rate", off_rate)):
        if not (np.isfinite(x) and x >= 0):
            raise ValueError(f"{name}: must be a finite number >= 0, got {x!r}")
    if off_rate > 0 and not on_rate > 0:
        raise ValueError(f"on_rate: must be > 0 when off_rate > 0, got {on_rate!r}")
    out = ipp_chain([cap], [cap], [cap - res], [first], [rate],
                    [on_rate if off_rate > 0 else 1.0], [off_rate])
    return float(out[0, 0]), float(out[0, 1]), float(out[0, 2])


# --------------------------------------------------------------------------------------------
# first-choice traffic and overflow on many links


@dataclass(frozen=True)
class LinkFactors:
    """Per-link figures of the link model (see :func:`link_factors`).

    Attributes
    ----------
    first : ndarray
        Blocking of first-choice calls (admitted while a unit is free).
    overflow : ndarray
        Call congestion ``B`` of the overflow class as a whole (its calls leave the
        reservation free); under ``split='peakedness'`` a stream of it of peakedness
        ``Z_i`` meets ``1 - (1 - B)^(Z_i / Z)``, about ``B Z_i / Z``; under ``'equal'``
        every stream meets ``B``.
    overflow_peakedness : ndarray
        ``Z`` of the whole overflow class.
    lost_peakedness : ndarray, shape (n_links, 2)
        Peakedness of what each class (first-choice, overflow) loses.
    """

    first: np.ndarray
    overflow: np.ndarray
    overflow_peakedness: np.ndarray
    lost_peakedness: np.ndarray
    split: str = "equal"

    def stream_blocking(self, link, is_overflow, peakedness):
        """Blocking of streams on ``link``: first-choice, or overflow of ``peakedness``."""
        if self.split == "equal":
            return np.where(is_overflow, self.overflow[link], self.first[link])
        # B Z_i / Z, taken as 1 - (1 - B)^(Z_i / Z): the same to first order in B, and below
        # 1 where B Z_i / Z would pass it (heavy overload); smooth, so the fixed point is
        ratio = peakedness / self.overflow_peakedness[link]
        over = -np.expm1(ratio * np.log1p(-np.minimum(self.overflow[link], 1.0 - 1e-16)))
        over = np.where(self.overflow[link] >= 1.0, 1.0, over)
        return np.where(is_overflow, over, self.first[link])


def link_factors(first, overflow, overflow_variance, capacities, reservations, model="ipp",
                 equivalent="table", checked=False, split="equal") -> LinkFactors:
    """The link model on many links: Poisson first-choice traffic and peaked overflow.

    Parameters
    ----------
    first : array_like, (n_links,)
        First-choice (Poisson) traffic offered to each link, erlangs.
    overflow, overflow_variance : array_like, (n_links,)
        Mean and variance of the overflow traffic offered (summed over its streams).
    capacities, reservations : array_like of int, (n_links,)
        Units, and the units overflow calls must leave free.
    model : {'ipp', 'ert', 'hayward'}
        See the module notes.
    equivalent : {'table', 'exact', 'rapp'}
        How equivalent random groups are found (see :func:`equivalent_group`).
    checked : bool
        Skip the argument checks (the network evaluator's inner loop).
    split : {'equal', 'peakedness'}
        How the overflow class's blocking is shared among its streams (module notes,
        step 3).

    Returns
    -------
    LinkFactors

    Raises
    ------
    ValueError
        Bad values or shapes, unknown names.

    Notes
    -----
    The module notes, steps 1-4. Where no IPP has the overflow's moments (not met on
    overflow of a group) or the overflow is smooth, it is taken as Poisson, and the chain
    is the birth-death chain of the reservation link. For ``model='ert'`` (``'hayward'``)
    each class's blocking is multiplied by the ratio of the loss of the whole mix by the
    equivalent random method (Hayward's approximation) to the chain's loss, both on the
    class's ``C`` or ``C - r`` units with no reservation.
    """
    f = np.asarray(first, dtype=float)
    o = np.asarray(overflow, dtype=float)
    ov = np.asarray(overflow_variance, dtype=float)
    caps = np.asarray(capacities)
    res = np.asarray(reservations)
    if not checked:
        _check_names(model, equivalent, split)
        if f.ndim != 1:
            raise ValueError(f"first: expected a 1-d array (one per link), got shape {f.shape}")
        for name, x in (("overflow", o), ("overflow_variance", ov), ("capacities", caps),
                        ("reservations", res)):
            if np.shape(x) != f.shape:
                raise ValueError(
                    f"{name}: expected shape {f.shape} (one per link), got {np.shape(x)}")
        _check_moments(f, f, "link")
        _check_moments(o, ov, "link")
        for name, x in (("capacities", caps), ("reservations", res)):
            xf = x.astype(float)
            if not np.all((xf >= 0) & (xf == np.floor(xf))):
                raise ValueError(f"{name}: must be whole numbers >= 0")
    caps = caps.astype(np.int64)
    thr = caps - res.astype(np.int64)
    n = len(f)
    ov = np.maximum(ov, o)
    # equivalent groups the compiled pass does not take from the table (or Rapp): the
    # 'exact' method's, and those outside the table
    eq = np.full((2, n, 2), np.nan)
    for c, (mm, vv) in enumerate(((o, ov), (f + o, f + ov))):
        rough = (vv > mm * (1.0 + SMOOTH_RTOL)) & (mm > 0)
        if equivalent == "rapp" or not rough.any():
            continue
        idx = np.flatnonzero(rough)
        z = vv[idx] / mm[idx]
        # below the table's smallest mean or peakedness: Rapp's formula (the kernel's
        # choice where no group is given): so little traffic, or so smooth, that its
        # shape does not matter
        keep = (z - 1.0 >= 10.0 ** _Table.V[0]) & (mm[idx] >= 10.0 ** _Table.U[0])
        if equivalent == "table":
            keep &= ~_Table.inside(mm[idx], z)
        idx, z = idx[keep], z[keep]
        if idx.size:
            eq[c, idx, 0], eq[c, idx, 1] = _solve_exact(mm[idx], z)
    table = _Table.kernel_args() if equivalent == "table" else None
    out, lost_z, ipp, logb = link_kernel(f, o, ov, caps, thr, SMOOTH_RTOL, eq[0], eq[1],
                                         table, 10.0 ** _Table.V[0])
    b_first, b_over = out[:, 0], out[:, 1]
    if model != "ipp":
        # rescale each class to the total loss at its threshold, without reservation
        ri = np.flatnonzero(ipp[:, 2] > 0)  # links whose overflow is an IPP (not Poisson)
        for c, t in enumerate((caps, thr)):
            tc = np.maximum(t[ri], 0)
            plain = ipp_chain(tc, tc, tc, f[ri], ipp[ri, 0], ipp[ri, 1], ipp[ri, 2])[:, 2]
            if model == "hayward":
                lb, _ = _loss_terms(f[ri] + o[ri], f[ri] + ov[ri], tc, True, None)
            else:
                lb = logb[ri, c]
            k = np.ones(ri.size)
            np.divide(np.exp(lb), plain, out=k, where=(plain > 0) & (t[ri] > 0))
            col = b_first if c == 0 else b_over
            col[ri] = np.minimum(col[ri] * k, 1.0)
    return LinkFactors(first=b_first, overflow=b_over, overflow_peakedness=out[:, 2],
                       lost_peakedness=lost_z, split=split)


# --------------------------------------------------------------------------------------------
# one group, any streams


@dataclass(frozen=True)
class LinkBlocking:
    """Per-stream figures of one group (see :func:`peaked_link`).

    Attributes
    ----------
    blocking : ndarray, (K,)
        Call congestion each stream meets.
    overflow_mean, overflow_variance : ndarray, (K,)
        Moments of what each stream loses (a random part of what its class loses).
    mean, variance, peakedness : float
        Of the whole offered mix.
    model, equivalent : str
    """

    blocking: np.ndarray
    overflow_mean: np.ndarray
    overflow_variance: np.ndarray
    mean: float
    variance: float
    peakedness: float
    model: str
    equivalent: str

    def to_dict(self) -> dict:
        return {
            "blocking": self.blocking.tolist(),
            "overflow_mean": self.overflow_mean.tolist(),
            "overflow_variance": self.overflow_variance.tolist(),
            "mean": self.mean,
            "variance": self.variance,
            "peakedness": self.peakedness,
            "model": self.model,
            "equivalent": self.equivalent,
        }


def peaked_link(means, variances, capacity, reservation=0, overflow=None, model="ipp",
                equivalent="exact", split="equal") -> LinkBlocking:
    """Blocking of each of several smooth and peaked streams offered to one group.

    Parameters
    ----------
    means, variances : array_like, shape (K,)
        Each stream's mean and variance (erlangs; variance = mean for a Poisson stream,
        variance > mean for overflow traffic).
    capacity : int
        Units of the group.
    reservation : int
        Units overflow calls must leave free after admission (trunk reservation).
    overflow : array_like of bool, shape (K,), optional
        Which streams are overflow (default: those with variance > mean). First-choice
        streams must be smooth.
    model : {'ipp', 'ert', 'hayward'}
    equivalent : {'exact', 'table', 'rapp'}
    split : {'equal', 'peakedness'}
        How the overflow class's blocking is shared among its streams (module notes).

    Returns
    -------
    LinkBlocking

    Raises
    ------
    ValueError
        Negative or non-finite means, a variance below its mean, a peaked first-choice
        stream, capacity or reservation not whole numbers >= 0, lengths that differ,
        unknown names.

    Notes
    -----
    The model of :func:`link_factors`. With ``model='ert'``, one overflow stream alone is
    the equivalent random method itself: ``B = A* E(A*, N* + C - r) / M``.

    References
    ----------
    Wilkinson (1956) [1]_, Kuczura (1973) [3]_, the split rule [5]_.

    Examples
    --------
    Ten erlangs of first-choice traffic and an overflow stream of mean 2 and variance 4 on
    15 circuits, one kept back from the overflow:

    >>> r = peaked_link([10.0, 2.0], [10.0, 4.0], 15, reservation=1)
    >>> bool(r.blocking[1] > 2 * r.blocking[0])
    True
    """
    _check_names(model, equivalent, split)
    m = np.atleast_1d(np.asarray(means, dtype=float))
    v = np.atleast_1d(np.asarray(variances, dtype=float))
    if m.ndim != 1 or v.shape != m.shape:
        raise ValueError(f"variances: expected {m.size} values (one per mean), got {v.size}")
    _check_moments(m, v)
    cap = _whole("capacity", capacity)
    res = _whole("reservation", reservation)
    v = np.maximum(v, m)
    peaked = v > m * (1.0 + SMOOTH_RTOL)
    over = peaked if overflow is None else np.asarray(overflow, dtype=bool)
    if over.shape != m.shape:
        raise ValueError(f"overflow: expected {m.size} values (one per mean), got {over.size}")
    if (peaked & ~over).any():
        i = int(np.flatnonzero(peaked & ~over)[0])
        raise ValueError(
            f"overflow: stream {i} is peaked (variance {float(v[i])!r} > mean "
            f"{float(m[i])!r}) but marked first-choice; first-choice streams must be smooth"
        )
    f = link_factors(np.array([m[~over].sum()]), np.array([m[over].sum()]),
                     np.array([v[over].sum()]), np.array([cap]), np.array([res]), model,
                     equivalent, checked=True, split=split)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(m > 0, v / np.where(m > 0, m, 1.0), 1.0)
    link = np.zeros(m.size, dtype=np.int64)
    b = f.stream_blocking(link, over, z)
    lost = m * b
    cls = over.astype(np.int64)
    tot = np.bincount(cls, weights=lost, minlength=2)[cls]
    with np.errstate(divide="ignore", invalid="ignore"):
        p = np.where(tot > 0, lost / np.where(tot > 0, tot, 1.0), 0.0)
    zl = 1.0 + p * (f.lost_peakedness[0, cls] - 1.0)
    tm, tv = float(m.sum()), float(v.sum())
    return LinkBlocking(
        blocking=frozen(b), overflow_mean=frozen(lost), overflow_variance=frozen(lost * zl),
        mean=tm, variance=tv, peakedness=tv / tm if tm > 0 else 1.0, model=model,
        equivalent=equivalent,
    )
