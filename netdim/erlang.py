"""Single-resource loss formulas: Erlang B and its relatives.

Every function takes plain Python numbers (fast pure-Python path, no numpy call: the sizer
calls these millions of times) or arrays (numpy broadcasting, result an ndarray).

Numerical plan for ``E(A, n)`` (offered traffic ``A`` erlangs, ``n`` servers):

* integer ``n`` of moderate size: the recursion ``1/E_k = 1 + k/(A E_{k-1})``, ``E_0 = 1``, in
  its inverse form. Its relative rounding errors shrink by the factor ``1 - E_k`` at each step,
  so it is the most accurate method there is. Over arrays it runs as a compiled (numba) loop
  over blocks of elements.
* real ``n`` or large ``n``: a start value at ``s0 = n - m <= A`` (``m`` a whole number) from
  the incomplete-gamma continuation ``E(A, s) = A^s e^-A / Gamma(s + 1, A)`` -- by the Legendre
  continued fraction of ``Gamma(s + 1, A)``, which converges in about ``sqrt(s)`` terms when
  ``s <= A``, or by ``scipy.special.gammaincc`` when ``A < 2`` -- then the same recursion
  forward over the ``m`` remaining steps. The closed form ``pmf / gammaincc`` is never used
  for E itself: it returns NaN where the Poisson tail underflows and loses digits at large n.
* when ``E`` underflows (below about 1e-300) ``log_erlang_b`` switches to the saddle-point
  form of the Poisson probability (Loader's ``bd0`` and Stirling error), never forming
  ``A^n / n!``.

References
----------
A. K. Erlang, "Solution of some problems in the theory of probabilities of significance in
automatic telephone exchanges", Elektroteknikeren 13 (1917).
D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical Journal
53 (1974) 525-551 (recursion, continuation to real n, derivatives).
C. Loader, "Fast and accurate computation of binomial probabilities" (2000).
W. H. Press et al., Numerical Recipes, 3rd ed., section 6.2 (continued fraction of the
incomplete gamma function, modified Lentz method).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = [
    "erlang_b",
    "log_erlang_b",
    "log1m_erlang_b",
    "servers_for",
    "traffic_for",
    "erlang_b_dtraffic",
    "erlang_b_dservers",
    "engset_time",
    "engset_call",
    "overflow_moments",
    "peakedness",
    "rapp",
    "equivalent_random",
    "overflow_blocking",
    "moe_servers",
]

#: Integer servers up to this use the plain recursion from 0 on the scalar path.
_SCALAR_REC_MAX = 1000
#: Integer servers up to this use the compiled block recursion from 0 on arrays.
_VEC_REC_MAX = 5000
_LOG_2PI = math.log(2.0 * math.pi)
_TINY = 1e-300
_BIG = 1e307


# --------------------------------------------------------------------------------------------
# argument checks (one step, before any work)


def _is_scalar(*xs) -> bool:
    return all(type(x) in (int, float) for x in xs)


def _bad_scalar(name, x, what):
    raise ValueError(f"{name}: must be {what}, got {x!r}")


def _check_nonneg(name, x):
    """Raise ValueError unless every value of x is a number >= 0 (NaN fails)."""
    if type(x) in (int, float):
        if not x >= 0:
            _bad_scalar(name, float(x), ">= 0")
        return
    arr = np.asarray(x, dtype=float)
    bad = ~(arr >= 0)
    if bad.any():
        raise ValueError(f"{name}: must be >= 0, got {float(arr[bad].flat[0])!r}")


def _check_target(name, t):
    if type(t) in (int, float):
        if not 0 < t < 1:
            _bad_scalar(name, float(t), "in (0, 1)")
        return
    arr = np.asarray(t, dtype=float)
    bad = ~((arr > 0) & (arr < 1))
    if bad.any():
        raise ValueError(f"{name}: must be in (0, 1), got {float(arr[bad].flat[0])!r}")


def _check_positive(name, x):
    if type(x) in (int, float):
        if not x > 0:
            _bad_scalar(name, float(x), "> 0")
        return
    arr = np.asarray(x, dtype=float)
    bad = ~(arr > 0)
    if bad.any():
        raise ValueError(f"{name}: must be > 0, got {float(arr[bad].flat[0])!r}")


def _finish(out):
    """0-d results come back as float."""
    out = np.asarray(out)
    return float(out) if out.ndim == 0 else out


# --------------------------------------------------------------------------------------------
# scalar kernels


def _cf_scalar(a, s):
    """Denominator D of Gamma(s, a) = e^-a a^s / D (Legendre fraction, modified Lentz).

    Converges in about sqrt(s) terms for a >= s - 1; terminates exactly for integer s.
    """
    b = a + 1.0 - s
    f = b if b != 0.0 else _TINY
    c = f
    d = 0.0
    i = 0
    while True:
        i += 1
        an = i * (s - i)
        b += 2.0
        d = b + an * d
        d = 1.0 / (d if d != 0.0 else _TINY)
        c = b + an / c
        if c == 0.0:
            c = _TINY
        delta = c * d
        f *= delta
        if abs(delta - 1.0) < 1e-16 or i > 100000:
            return f


def _start_scalar(a, x):
    """(s0, m, E(a, s0)) with s0 = x - m the start point of the forward recursion."""
    if a >= 2.0:
        m = 0 if x <= a else math.ceil(x - a)
        s0 = x - m
        if s0 < 0.0:  # only when x < m, i.e. a < 1: not reached for a >= 2
            s0 += 1.0
            m -= 1
        return s0, m, min(1.0, _cf_scalar(a, s0 + 1.0) / a)
    f = x - math.floor(x)
    m = int(round(x - f))
    if f == 0.0:
        return 0.0, m, 1.0
    q = special.gammaincc(f + 1.0, a)
    e0 = math.exp(f * math.log(a) - a - math.lgamma(f + 1.0) - math.log(q))
    return f, m, min(1.0, e0)


def _inv_scalar(a, x):
    """(inv_x, inv_{x-1} or None) with inv = 1/E; inv_x may be inf when E underflows."""
    if x == int(x) and x <= _SCALAR_REC_MAX:
        n = int(x)
        inv = 1.0
        prev = None
        for k in range(1, n + 1):
            prev = inv
            inv = 1.0 + inv * k / a
            if inv > _BIG:
                return math.inf, None
        return inv, prev
    s0, m, e0 = _start_scalar(a, x)
    inv = 1.0 / e0
    prev = None
    k = s0
    for _ in range(m):
        k += 1.0
        prev = inv
        inv = 1.0 + inv * k / a
        if inv > _BIG:
            return math.inf, None
    return inv, prev


def _erlang_b_scalar(a, x):
    if x == 0:
        return 1.0
    if a == 0:
        return 0.0
    if a == math.inf:
        return 1.0
    inv, _ = _inv_scalar(a, x)
    return 1.0 / inv


def _stirlerr(x):
    """lgamma(x + 1) - (x + 1/2) log x + x - log(2 pi)/2 (Stirling's error term)."""
    if x > 15.0:
        x2 = x * x
        return (1.0 / 12 - (1.0 / 360 - (1.0 / 1260 - 1.0 / (1680 * x2)) / x2) / x2) / x
    return math.lgamma(x + 1.0) - (x + 0.5) * math.log(x) + x - 0.5 * _LOG_2PI


def _bd0(x, m):
    """x log(x/m) + m - x without cancellation (Loader 2000)."""
    if abs(x - m) < 0.1 * (x + m):
        v = (x - m) / (x + m)
        s = (x - m) * v
        ej = 2.0 * x * v
        v2 = v * v
        j = 1
        while True:
            ej *= v2
            s1 = s + ej / (2 * j + 1)
            if s1 == s:
                return s1
            s = s1
            j += 1
    return x * math.log(x / m) + m - x


def _log_erlang_tiny(a, x):
    """log E for E below about 1e-300 (then x > a): log pmf - log P(X <= x), X ~ Poisson(a)."""
    if x >= 1.0:
        logpmf = -_bd0(x, a) - 0.5 * (_LOG_2PI + math.log(x)) - _stirlerr(x)
    else:
        logpmf = x * math.log(a) - a - math.lgamma(x + 1.0)
    p = special.gammainc(x + 1.0, a)
    logq = math.log1p(-p) if p < 0.5 else math.log(special.gammaincc(x + 1.0, a))
    return logpmf - logq


def _log_e_minus1_scalar(a, x):
    """log E(a, x - 1) for x in (0, 1): a^(x-1) e^-a / Gamma(x, a)."""
    if a >= 2.0:
        return math.log(_cf_scalar(a, x)) - math.log(a)
    q = special.gammaincc(x, a)
    return (x - 1.0) * math.log(a) - a - math.lgamma(x) - math.log(q)


def _log_t_scalar(a, x, prev):
    """log t, t = 1/E_x - 1 = x / (a E_{x-1}) (from the recursion: no cancellation near E = 1)."""
    if prev is not None:
        log_prev = -math.log(prev)
    elif x >= 1.0:
        # E_{x-1} >= E_x >= 1/3 here, so the plain log of it is accurate
        log_prev = -math.log(_inv_scalar(a, x - 1.0)[0]) if x > 1.0 else 0.0
    else:
        log_prev = _log_e_minus1_scalar(a, x)
    return math.log(x / a) - log_prev


def _log_erlang_b_scalar(a, x):
    if x == 0 or a == math.inf:
        return 0.0
    if a == 0:
        return -math.inf
    inv, prev = _inv_scalar(a, x)
    if inv < 2.0:
        return -math.log1p(math.exp(_log_t_scalar(a, x, prev)))
    if inv < 1e280:
        return -math.log(inv)
    return _log_erlang_tiny(a, x)


def _log1m_erlang_b_scalar(a, x):
    if x == 0 or a == math.inf:
        return -math.inf
    if a == 0:
        return 0.0
    inv, prev = _inv_scalar(a, x)
    if inv == math.inf:
        return 0.0
    if inv > 2.0:
        return math.log1p(-1.0 / inv)
    lt = _log_t_scalar(a, x, prev)
    return lt - math.log1p(math.exp(lt))


# --------------------------------------------------------------------------------------------
# array kernels

_block_kernel = None


def _get_block_kernel():
    """Compiled recursion over blocks of elements grouped by n (numba, cached on disk)."""
    global _block_kernel
    if _block_kernel is None:
        import numba

        @numba.njit(cache=True, nogil=True)
        def kernel(a, x, nmax_rec, inv, prev, fallback):  # pragma: no cover - compiled
            size = a.shape[0]
            n = np.full(size, -1, np.int64)
            counts = np.zeros(nmax_rec + 2, np.int64)
            for i in range(size):
                xi = x[i]
                ai = a[i]
                prev[i] = np.nan
                fallback[i] = False
                if xi == 0.0 or ai == np.inf:
                    inv[i] = 1.0
                elif ai == 0.0:
                    inv[i] = np.inf
                elif xi == np.floor(xi) and xi <= nmax_rec:
                    k = np.int64(xi)
                    n[i] = k
                    counts[k] += 1
                else:
                    fallback[i] = True
            # counting sort of the recursion elements by n, largest first
            starts = np.zeros(nmax_rec + 2, np.int64)
            total = 0
            for k in range(nmax_rec, 0, -1):
                starts[k] = total
                total += counts[k]
            perm = np.empty(total, np.int64)
            for i in range(size):
                k = n[i]
                if k > 0:
                    perm[starts[k]] = i
                    starts[k] += 1
            block = 256
            w_inv = np.empty(block)
            w_rh = np.empty(block)
            w_rl = np.empty(block)
            w_n = np.empty(block, np.int64)
            for b0 in range(0, total, block):
                w = min(block, total - b0)
                for j in range(w):
                    i = perm[b0 + j]
                    w_inv[j] = 1.0
                    # 1/a as an unevaluated sum r_hi + r_lo (Dekker's exact product gives
                    # the residual 1 - a r_hi), so the rounding of 1/a does not act like a
                    # systematic change of A, which would cost (n - A(1-E)) ulps
                    ai = a[i]
                    rh = 1.0 / ai
                    if ai < 1e290 and rh < 1e290:
                        p = ai * rh
                        t = 134217729.0 * ai
                        xh = t - (t - ai)
                        xl = ai - xh
                        t = 134217729.0 * rh
                        yh = t - (t - rh)
                        yl = rh - yh
                        err = ((xh * yh - p) + xh * yl + xl * yh) + xl * yl
                        w_rl[j] = ((1.0 - p) - err) / ai
                    else:
                        w_rl[j] = 0.0
                    w_rh[j] = rh
                    w_n[j] = n[i]
                n_hi = w_n[0]
                n_lo = w_n[w - 1]
                # steps every element of the block takes: a plain, vectorisable loop
                for k in range(1, n_lo):
                    fk = float(k)
                    for j in range(w):
                        t = w_inv[j] * fk
                        w_inv[j] = 1.0 + (t * w_rh[j] + t * w_rl[j])
                # the last steps, element by element
                for j in range(w):
                    i = perm[b0 + j]
                    v = w_inv[j]
                    p = v
                    for k in range(n_lo, w_n[j] + 1):
                        p = v
                        t = v * float(k)
                        v = 1.0 + (t * w_rh[j] + t * w_rl[j])
                    # inf * r_lo gives NaN once 1/E overflows: E has underflowed to 0 there
                    inv[i] = np.inf if v != v else v
                    prev[i] = np.inf if p != p else p
                _ = n_hi
            return inv

        _block_kernel = kernel
    return _block_kernel


def _inv_array(a, x):
    """Elementwise (inv, prev) = (1/E(a, x), 1/E(a, x - 1) or NaN), special values included."""
    inv = np.empty(a.shape)
    prev = np.empty(a.shape)
    fallback = np.empty(a.shape, dtype=np.bool_)
    with np.errstate(over="ignore"):
        _get_block_kernel()(a, x, _VEC_REC_MAX, inv, prev, fallback)
    for i in np.flatnonzero(fallback):
        v, pv = _inv_scalar(float(a[i]), float(x[i]))
        inv[i] = v
        prev[i] = np.nan if pv is None else pv
    return inv, prev


def _prepare(traffic, servers):
    a, x = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(servers, dtype=float))
    return np.ascontiguousarray(a).ravel(), np.ascontiguousarray(x).ravel(), a.shape


def _erlang_b_array(traffic, servers):
    a, x, shape = _prepare(traffic, servers)
    inv, _ = _inv_array(a, x)
    return (1.0 / inv).reshape(shape)


# --------------------------------------------------------------------------------------------
# public API


def erlang_b(traffic, servers):
    """Erlang's loss formula E(A, n): probability that all ``servers`` are busy.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic A in erlangs, >= 0.
    servers : float or array_like
        Number of servers n >= 0; real values use the incomplete-gamma continuation
        ``E(A, n) = A^n e^-A / Gamma(n + 1, A)``.

    Returns
    -------
    float or ndarray
        Blocking in [0, 1]; a float when both arguments are Python numbers. ``E(0, n) = 0``
        for n > 0 and ``E(A, 0) = 1``.

    Raises
    ------
    ValueError
        Negative or NaN traffic or servers.

    Notes
    -----
    See the module notes for the numerical plan. Relative error about 1e-14 against
    50-digit values for blocking down to 1e-300; below that the value underflows (use
    :func:`log_erlang_b`).

    References
    ----------
    A. K. Erlang (1917); D. L. Jagerman, Bell System Technical Journal 53 (1974).
    """
    if _is_scalar(traffic, servers):
        _check_nonneg("traffic", traffic)
        _check_nonneg("servers", servers)
        return _erlang_b_scalar(float(traffic), float(servers))
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    return _finish(_erlang_b_array(traffic, servers))


def log_erlang_b(traffic, servers):
    """Natural log of E(A, n), accurate (relatively) also when E underflows.

    Parameters and rules as :func:`erlang_b`; returns ``-inf`` for ``E = 0``.

    Notes
    -----
    Below 1e-280 the value is ``log pmf(n; A) - log P(X <= n)`` for ``X ~ Poisson(A)``, the
    Poisson probability taken in saddle-point form (Loader 2000).
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _log_erlang_b_scalar(float(traffic), float(servers))
    a, x, shape = _prepare(traffic, servers)
    out = np.empty(a.shape)
    one = (x == 0) | (a == np.inf)
    zero = (a == 0) & ~one
    out[one] = 0.0
    out[zero] = -np.inf
    work = np.flatnonzero(~(one | zero))
    if work.size:
        inv, prev = _inv_array(a[work], x[work])
        out[work] = -np.log(inv)
        for i in work[inv >= 1e280]:
            out[i] = _log_erlang_tiny(float(a[i]), float(x[i]))
        near = inv < 2.0
        ok = near & np.isfinite(prev)
        idx = work[ok]
        out[idx] = -np.log1p(x[idx] * prev[ok] / a[idx])
        for i in work[near & ~ok]:
            out[i] = _log_erlang_b_scalar(float(a[i]), float(x[i]))
    return _finish(out.reshape(shape))


def log1m_erlang_b(traffic, servers):
    """Natural log of 1 - E(A, n), accurate when E is tiny and when E is close to 1.

    Parameters and rules as :func:`erlang_b`; ``-inf`` where E = 1.

    Notes
    -----
    For E >= 1/2 it uses ``1 - E_n = n E_n / (A E_{n-1})``, which follows from the
    recursion and has no cancellation (Jagerman 1974).
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _log1m_erlang_b_scalar(float(traffic), float(servers))
    a, x, shape = _prepare(traffic, servers)
    out = np.empty(a.shape)
    one = (x == 0) | (a == np.inf)
    zero = (a == 0) & ~one
    out[one] = -np.inf
    out[zero] = 0.0
    work = np.flatnonzero(~(one | zero))
    if work.size:
        inv, prev = _inv_array(a[work], x[work])
        with np.errstate(divide="ignore"):
            e = 1.0 / inv
            out[work] = np.log1p(-e)
        hi = inv <= 2.0
        ok = hi & np.isfinite(prev)
        idx = work[ok]
        t = x[idx] * prev[ok] / a[idx]
        out[idx] = np.log(t) - np.log1p(t)
        for i in work[hi & ~ok]:
            out[i] = _log1m_erlang_b_scalar(float(a[i]), float(x[i]))
    return _finish(out.reshape(shape))


# --------------------------------------------------------------------------------------------
# inverse problems


def _servers_for_scalar(a, t):
    if a == 0.0:
        return 0
    # E(A, n) > 1 - n/A (carried traffic is below n), so E > t at n_lo = A(1 - t) - 1.
    n = max(0, math.floor(a * (1.0 - t)) - 1)
    inv = 1.0 / _erlang_b_scalar(a, float(n)) if n > 0 else 1.0
    goal = 1.0 / t
    while inv < goal:
        n += 1
        inv = 1.0 + inv * n / a
    return n


def servers_for(traffic, target):
    """Smallest whole number of servers n with E(traffic, n) <= target.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic in erlangs, >= 0 (zero traffic needs 0 servers).
    target : float or array_like
        Blocking target in (0, 1).

    Returns
    -------
    int or ndarray of int64

    Raises
    ------
    ValueError
        Negative or NaN traffic; target outside (0, 1).

    Notes
    -----
    Starts below the answer at ``A (1 - target) - 1`` (where ``E > 1 - n/A`` guarantees
    blocking above the target) and steps the recursion up; the work is about the distance
    from there to the answer, ``O(sqrt(A))`` for small targets.
    """
    _check_nonneg("traffic", traffic)
    _check_target("target", target)
    if _is_scalar(traffic, target):
        return _servers_for_scalar(float(traffic), float(target))
    a, t = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(target, dtype=float))
    shape = a.shape
    a = a.ravel()
    t = t.ravel()
    n = np.zeros(a.shape, dtype=np.int64)
    live = a > 0
    n[live] = np.maximum(0, np.floor(a[live] * (1.0 - t[live])) - 1).astype(np.int64)
    inv = np.ones(a.shape)
    pos = live & (n > 0)
    inv[pos] = 1.0 / _erlang_b_array(a[pos], n[pos].astype(float))
    goal = 1.0 / t
    idx = np.flatnonzero(live & (inv < goal))
    while idx.size:
        n[idx] += 1
        inv[idx] = 1.0 + inv[idx] * n[idx] / a[idx]
        idx = idx[inv[idx] < goal[idx]]
    out = n.reshape(shape)
    return int(out) if out.ndim == 0 else out


def traffic_for(servers, target):
    """Largest offered traffic A with E(A, servers) <= target, to 1e-12 relative or better.

    Parameters
    ----------
    servers : float or array_like
        Servers n >= 0 (real values allowed); 0 servers carry nothing (returns 0).
    target : float or array_like
        Blocking target in (0, 1).

    Returns
    -------
    float or ndarray

    Raises
    ------
    ValueError
        Negative or NaN servers; target outside (0, 1).

    Notes
    -----
    E increases in A, and ``d log E / d log A = n - A (1 - E) > 0`` (Jagerman 1974), so
    Newton's method on ``log E(e^u, n) = log target`` in ``u = log A`` converges quickly; it is
    kept inside the bracket ``(0, n / (1 - target)]`` (E >= 1 - n/A gives the upper end) and
    falls back to bisection when a step leaves it.
    """
    _check_nonneg("servers", servers)
    _check_target("target", target)
    scalar = _is_scalar(servers, target)
    x, t = np.broadcast_arrays(np.asarray(servers, dtype=float), np.asarray(target, dtype=float))
    shape = x.shape
    x = x.ravel().copy()
    t = t.ravel().copy()
    out = np.zeros(x.shape)
    live = np.flatnonzero(x > 0)
    if live.size:
        xs, ts = x[live], t[live]
        logt = np.log(ts)
        hi = np.log(xs / (1.0 - ts))
        lo = np.full(xs.shape, -np.inf)
        # start: the Poisson tail bound E ~ pmf for small A gives log A ~ (log t + lgamma(n+1))/n
        u = np.minimum(hi, (logt + special.gammaln(xs + 1.0)) / xs)
        u = np.where(np.isfinite(u), u, hi)
        active = np.arange(xs.size)
        for _ in range(200):
            if active.size == 0:
                break
            uu = u[active]
            aa = np.exp(uu)
            le = np.asarray(log_erlang_b(aa, xs[active]), dtype=float)
            g = le - logt[active]
            over = g > 0
            hi[active] = np.where(over, uu, hi[active])
            lo[active] = np.where(over, lo[active], uu)
            e = np.exp(le)
            slope = xs[active] - aa * (1.0 - e)
            step = g / slope
            new = uu - step
            bad = ~((new > lo[active]) & (new < hi[active])) | ~np.isfinite(new)
            lo_a = lo[active]
            mid = np.where(np.isfinite(lo_a), 0.5 * (lo_a + hi[active]), hi[active] - 1.0)
            new = np.where(bad, mid, new)
            new = np.where(g == 0, uu, new)
            u[active] = new
            done = (np.abs(new - uu) <= 1e-15 * np.maximum(1.0, np.abs(uu))) | (g == 0)
            active = active[~done]
        a_final = np.exp(u)
        # the answer must satisfy E <= t: step down by ulps if rounding put it just above
        # (checked with the same path, scalar or array, the caller will use)
        def check(f):
            if scalar:
                return np.array([f(float(p), float(q)) for p, q in zip(a_final, xs, strict=True)])
            return np.asarray(f(a_final, xs), dtype=float)

        for _ in range(8):
            tiny = ts < 1e-307
            le = check(log_erlang_b)
            e = check(erlang_b)
            above = np.where(tiny, le > logt, e > ts)
            if not above.any():
                break
            slope = np.maximum(xs - a_final * (1.0 - np.minimum(e, 1.0)), 1e-300)
            over = np.where(tiny, le - logt, np.log(e / ts))
            shrink = np.exp(-np.maximum(over, 0.0) / slope) * (1.0 - 4.5e-16)
            a_final = np.where(above, a_final * shrink, a_final)
        out[live] = a_final
    out = out.reshape(shape)
    if scalar or out.ndim == 0:
        return float(out)
    return out


# --------------------------------------------------------------------------------------------
# derivatives


def erlang_b_dtraffic(traffic, servers):
    """Derivative dE/dA of Erlang's formula with respect to the offered traffic.

    Parameters and rules as :func:`erlang_b`.

    Returns
    -------
    float or ndarray

    Notes
    -----
    ``dE/dA = E (n/A - 1 + E)`` for integer and real n (Jagerman 1974). At A = 0 the limit is
    used: 0 for n = 0 or n > 1, 1 for n = 1, +inf for 0 < n < 1.
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    scalar = _is_scalar(traffic, servers)
    a, x = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(servers, dtype=float))
    e = np.asarray(erlang_b(a, x), dtype=float)
    # 1 - E from log(1 - E) where E is near 1, so n/A - (1 - E) keeps its digits
    one_minus = np.where(e > 0.5, np.exp(np.asarray(log1m_erlang_b(a, x), dtype=float)), 1 - e)
    with np.errstate(divide="ignore", invalid="ignore"):
        d = e * (x / a - one_minus)
    zero = a == 0
    if zero.any():
        lim = np.where(x == 1, 1.0, np.where((x > 0) & (x < 1), np.inf, 0.0))
        d = np.where(zero, lim, d)
    d = np.where(x == 0, 0.0, d)
    d = np.where(np.isinf(a), 0.0, d)
    return float(d) if scalar or np.ndim(d) == 0 else d


def _dservers_scalar(a, x):
    from scipy import integrate

    if a == 0.0 or a == math.inf:
        return 0.0
    e = _erlang_b_scalar(a, x)
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

    Notes
    -----
    From the integral form ``1/E(A, n) = int_0^inf e^-u (1 + u/A)^n du`` (Jagerman 1974):
    ``dE/dn = -E * <log(1 + u/A)>``, the mean of ``log(1 + u/A)`` under the weight
    ``e^-u (1 + u/A)^n``, computed by adaptive quadrature (scipy.integrate.quad) around the
    weight's peak, scaled by its maximum so nothing overflows.
    """
    _check_nonneg("traffic", traffic)
    _check_nonneg("servers", servers)
    if _is_scalar(traffic, servers):
        return _dservers_scalar(float(traffic), float(servers))
    a, x, shape = _prepare(traffic, servers)
    out = np.array([_dservers_scalar(float(ai), float(xi)) for ai, xi in zip(a, x, strict=True)])
    return _finish(out.reshape(shape))


# --------------------------------------------------------------------------------------------
# Engset (finite sources)


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


# --------------------------------------------------------------------------------------------
# overflow traffic (equivalent random method)


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


# --------------------------------------------------------------------------------------------
# economic sizing


def _moe_scalar(a, cost, value):
    if a == 0.0 or value == 0.0:
        return 0
    ratio = cost / value
    n = 0
    e = 1.0
    while True:
        # marginal carried traffic of circuit n + 1: A (E_n - E_{n+1}), without cancellation
        marginal = a * e * (n + 1 - a * (1.0 - e)) / (n + 1 + a * e)
        if not marginal > ratio:
            return n
        e = a * e / (n + 1 + a * e)
        n += 1


def moe_servers(traffic, cost_per_circuit, value_per_erlang):
    """Circuits by Moe's principle: add one while its carried traffic is worth its cost.

    Circuit n + 1 is added while ``A [E(A, n) - E(A, n + 1)] * value_per_erlang >
    cost_per_circuit``. The marginal carried traffic falls as n grows, so the answer also
    maximises ``value * A (1 - E(A, n)) - cost * n``.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic, erlangs, >= 0.
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
        Negative or NaN traffic or value; cost not > 0.

    References
    ----------
    E. Jensen, "Moe's principle" (1950); see also R. Syski, Introduction to Congestion
    Theory in Telephone Systems, 2nd ed., North-Holland (1986).
    """
    _check_nonneg("traffic", traffic)
    _check_positive("cost_per_circuit", cost_per_circuit)
    _check_nonneg("value_per_erlang", value_per_erlang)
    if _is_scalar(traffic, cost_per_circuit, value_per_erlang):
        return _moe_scalar(float(traffic), float(cost_per_circuit), float(value_per_erlang))
    a, c, v = np.broadcast_arrays(
        np.asarray(traffic, dtype=float), np.asarray(cost_per_circuit, dtype=float),
        np.asarray(value_per_erlang, dtype=float),
    )
    out = np.array(
        [_moe_scalar(float(x), float(y), float(z))
         for x, y, z in zip(a.ravel(), c.ravel(), v.ravel(), strict=True)],
        dtype=np.int64,
    ).reshape(a.shape)
    return int(out) if out.ndim == 0 else out
