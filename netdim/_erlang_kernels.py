"""Private kernels behind :mod:`netdim.erlang`: argument checks, scalar and compiled paths.

Nothing here is public API; :mod:`netdim.erlang`, :mod:`netdim.engset` and
:mod:`netdim.overflow` import these helpers. The numerical plan (inverse recursion, start
values from the incomplete-gamma continuation, saddle-point form below 1e-300) is described
in the :mod:`netdim.erlang` module notes.

References
----------
D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical Journal
53 (1974) 525-551 (recursion, continuation to real n).
C. Loader, "Fast and accurate computation of binomial probabilities" (2000).
W. H. Press et al., Numerical Recipes, 3rd ed., section 6.2 (continued fraction of the
incomplete gamma function, modified Lentz method).
T. J. Dekker, "A floating-point technique for extending the available precision",
Numerische Mathematik 18 (1971) 224-242 (exact product used for the residual of 1/A).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

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
