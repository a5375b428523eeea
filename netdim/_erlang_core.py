"""Scalar numerics of Erlang's loss formula: one point E(A, n), and the two inverse problems.

Plain Python on floats with the ``math`` module (numpy only for the loops over arrays),
so that the same source runs as Python (the command line's single answers, with no
compiler loaded) and compiled by numba (:mod:`netdim._erlang_kernels` compiles copies of
these functions for arrays and long scalar work). Nothing here checks its arguments:
callers pass ``0 < a``, ``0 < x``, both finite, and targets in (0, 1).

Every path returns ``(e, t, loge)``: ``e = E(A, n)``, ``t = 1/E - 1`` computed without
cancellation (so ``1 - E = t E`` keeps its digits when E is near 1), and ``loge = log E``
where E is below 1e-300 (else NaN: ``log E = -log1p(t)``). The paths, chosen by where each
is short and accurate (see docs/theory/erlang-b.md):

* whole n <= 30: the recursion ``1/E_k = 1 + (k/A)(1/E_{k-1})`` from ``E_0 = 1`` [1]_;
* n <= A: Legendre's continued fraction for ``Gamma(n, A)`` [3]_, then one step of the
  recursion;
* A < n <= 3A: ``E = pmf(n; A) / P(X <= n)``, X Poisson, with ``log pmf`` in
  double-double from the saddle-point form [4]_ and ``P(X > n)`` by its series (which
  needs no more than about 8 sqrt(n) terms, each a multiplication);
* n > 3A: the series at ``n - m <= 3A``, then ``m`` steps of the recursion, with ``1/A``
  carried as an unevaluated sum [5]_; n <= 30: the same steps from the fraction at
  ``s = n - m <= A`` (or the series below);
* small A (< 2) and real n: ``1/E - 1`` at the fractional part from the series of the
  lower incomplete gamma function, then the recursion; and where E is below 1e-300 only
  its logarithm, from the saddle-point form of the Poisson probability.

One file on purpose (it is longer than the guide's 600 lines): numba's disk cache is keyed
on the source file of each compiled entry point, so an entry point here that used helpers
from another file would keep a stale compiled copy of them after that file changed.

References
----------
.. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
   significance in automatic telephone exchanges", Elektroteknikeren 13 (1917) 5-13.
.. [2] D. L. Jagerman, "Some properties of the Erlang loss function", Bell System
   Technical Journal 53 (1974) 525-551.
.. [3] W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, Numerical Recipes:
   The Art of Scientific Computing, 3rd ed., Cambridge University Press (2007), section 6.2.
.. [4] C. Loader, "Fast and accurate computation of binomial probabilities" (2000),
   available from the author; the saddle-point form used by R's dpois.
.. [5] T. J. Dekker, "A floating-point technique for extending the available precision",
   Numerische Mathematik 18 (1971) 224-242.
"""

from __future__ import annotations

import math

import numpy as np

#: The functions called from Python once compiled (the rest are helpers they inline).
ENTRY_POINTS = ("point", "erlang_many", "servers_for_point", "servers_many",
                "traffic_for_point", "traffic_many", "dtraffic_point", "dtraffic_many",
                "table_many", "table_runs", "moe_point", "moe_many")
#: Whole numbers of servers up to this take the recursion from E(A, 0) = 1.
XREC = 30.0
#: 1/E beyond this means E < 1e-300: only log E is kept accurate there.
HUGE = 1e300
#: Upper tail probabilities below 2^-55 do not change P(X <= n) in double precision.
_TAIL = 2.0**-55
_LOG_2PI = math.log(2.0 * math.pi)
_EULER = 0.5772156649015329
# zeta(2) .. zeta(9), for log Gamma(1 + f) at small f (values checked against mpmath.zeta
# in tests/test_erlang_extremes.py)
_ZETA = (1.6449340668482264, 1.2020569031595942, 1.0823232337111382, 1.0369277551433699,
         1.0173430619844492, 1.008349277381923, 1.0040773561979443, 1.0020083928260822)
_NAN = math.nan
_INF = math.inf


# --------------------------------------------------------------------------------------------
# double-double arithmetic (Dekker 1971): a value is an unevaluated sum hi + lo


def two_sum(a, b):
    """(s, e) with s = fl(a + b) and s + e = a + b exactly (Knuth)."""
    s = a + b
    bb = s - a
    return s, (a - (s - bb)) + (b - bb)


def two_prod(a, b):
    """(p, e) with p = fl(a b) and p + e = a b exactly (Dekker's split; |a|, |b| < 1e290)."""
    p = a * b
    t = 134217729.0 * a
    ah = t - (t - a)
    al = a - ah
    t = 134217729.0 * b
    bh = t - (t - b)
    bl = b - bh
    return p, ((ah * bh - p) + ah * bl + al * bh) + al * bl


def recip(a):
    """1/a as rh + rl: rounding 1/a once would act like a change of A in a long recursion,
    costing (n - A(1 - E)) ulps; the correction keeps the steps' errors random."""
    rh = 1.0 / a
    if a < 1e-280 or a > 1e280 or rh > 1e280:
        return rh, 0.0
    p, e = two_prod(a, rh)
    return rh, ((1.0 - p) - e) / a


# --------------------------------------------------------------------------------------------
# pieces


def lgamma1p(f):
    """log Gamma(1 + f) for 0 <= f <= 1, without rounding 1 + f where f is small:
    ``-gamma f + sum_{k>=2} (-1)^k zeta(k) f^k / k`` (Abramowitz and Stegun 6.1.33), whose
    8 terms reach 1e-19 for f < 0.01."""
    if f < 0.01:
        s = 0.0
        for k in range(9, 1, -1):
            s = s * f + ((-1.0) ** k) * _ZETA[k - 2] / k
        return f * (-_EULER + f * s)
    return math.lgamma(1.0 + f)


def stirlerr(x):
    """lgamma(x + 1) - (x + 1/2) log x + x - log(2 pi)/2 (Stirling's series for x > 15)."""
    if x > 15.0:
        x2 = x * x
        return (1.0 / 12 - (1.0 / 360 - (1.0 / 1260 - (1.0 / 1680 - 1.0 / (1188 * x2)) / x2)
                            / x2) / x2) / x
    return math.lgamma(x + 1.0) - (x + 0.5) * math.log(x) + x - 0.5 * _LOG_2PI


def bd0(x, m):
    """x log(x/m) + m - x without cancellation (Loader's deviance term), in double."""
    if abs(x - m) < 0.1 * (x + m):
        v = (x - m) / (x + m)
        s = (x - m) * v
        ej = 2.0 * x * v
        v2 = v * v
        j = 1
        while j < 1000:
            ej *= v2
            s1 = s + ej / (2 * j + 1)
            if s1 == s:
                return s1
            s = s1
            j += 1
        return s
    return x * math.log(x / m) + m - x


def log_pmf(a, x):
    """log of the Poisson probability a^x e^-a / Gamma(x + 1), relative accuracy a few ulps."""
    if x < 15.0:
        return x * math.log(a) - a - math.lgamma(x + 1.0)
    return -bd0(x, a) - 0.5 * (_LOG_2PI + math.log(x)) - stirlerr(x)


def log_pmf_dd(a, x):
    """log pmf(x; a) as hi + lo for a < x <= 3a, x > 15: the deviance term in double-double.

    ``bd0 = d v + 2x (v^3/3 + v^5/5 + ...)`` with ``d = x - a``, ``v = d / (x + a) <= 1/2``;
    the leading term and ``2x v^3/3`` are carried in double-double, the rest (below 4 % of
    the total) in double, so the logarithm is right to about 1e-16 absolute where it is
    several hundred (E near 1e-300), which its exponential needs.
    """
    dh, dl = two_sum(x, -a)
    sh, sl = two_sum(x, a)
    vh = dh / sh
    p, pe = two_prod(vh, sh)
    vl = (((dh - p) - pe) + dl - vh * sl) / sh
    lh, le = two_prod(dh, vh)
    le += dh * vl + dl * vh
    qh, ql = two_prod(vh, vh)
    ql += 2.0 * vh * vl
    ch, cl = two_prod(qh, vh)
    cl += qh * vl + ql * vh
    x2 = 2.0 * x
    th, tl = two_prod(x2, ch)
    tl += x2 * cl
    t3h = th / 3.0
    p3, p3e = two_prod(t3h, 3.0)
    t3l = (((th - p3) - p3e) + tl) / 3.0
    rest = 0.0
    pw = qh * qh
    j = 2
    while j < 200:
        term = pw / (2 * j + 1)
        rest += term
        if term < 1e-17 * rest:
            break
        pw *= qh
        j += 1
    rest *= x2 * vh
    bh, bl = two_sum(lh, t3h)
    bl += le + t3l + rest
    c = 0.5 * (_LOG_2PI + math.log(x)) + stirlerr(x)
    hh, hl = two_sum(-bh, -c)
    hl -= bl
    h = hh + hl
    return h, hl - (h - hh)


def cf_gamma(a, s):
    """(D, T) with Gamma(s, a) = e^-a a^s / D: Legendre's continued fraction [3]_
    ``D = b0 + a1/(b1 + a2/(b2 + ...))``, ``b_i = a + 1 - s + 2i``, ``a_i = i (s - i)``, by
    the modified Lentz method; ``T = D - b0`` is kept apart (free of cancellation). For
    a >= s it converges in at most about 1.4 sqrt(s) + 30 terms."""
    tiny = 1e-300
    b0 = a + 1.0 - s
    b = b0 + 2.0
    f = b if b != 0.0 else tiny
    c = f
    d = 0.0
    i = 1.0
    limit = 100.0 + 20.0 * math.sqrt(s + a)
    while i < limit:
        i += 1.0
        an = i * (s - i)
        b += 2.0
        d = b + an * d
        d = 1.0 / (d if d != 0.0 else tiny)
        c = b + an / c
        if c == 0.0:
            c = tiny
        delta = c * d
        f *= delta
        if abs(delta - 1.0) < 1e-16:
            break
    tail = (s - 1.0) / f
    return b0 + tail, tail


def start_series(a, f):
    """(1/E, t) at 0 < f < 1 for a < 2: ``t = f Gamma(f, a) e^a a^-f`` from the series of
    the lower incomplete gamma function, ``t = e^a [expm1(lgamma(1 + f) - f log a)
    - f sum_{k>=1} (-a)^k / (k! (f + k))]``; t is inf where E underflows."""
    u = lgamma1p(f) - f * math.log(a)
    s = 0.0
    term = 1.0
    k = 1.0
    while k < 80.0:
        term *= -a / k
        c = term / (f + k)
        s += c
        if abs(c) <= 1e-17 * abs(s):
            break
        k += 1.0
    if u > 709.0:
        return _INF, _INF
    t = math.exp(a) * (math.expm1(u) - f * s)
    return 1.0 + t, t


def steps(inv, t, k, m, rh, rl):
    """m steps of 1/E_k = 1 + (k/A)(1/E_{k-1}) from inv = 1/E_{k-1} (and t = inv - 1), at
    k, k + 1, ...; returns (inv, t), t = inv - 1 being the last product (no cancellation),
    both inf once E drops below 1e-300."""
    j = 0.0
    while j < m:
        p = inv * k
        t = p * rh + p * rl
        inv = 1.0 + t
        if not inv <= HUGE:  # also NaN: inf * rh + inf * rl once p overflows
            return _INF, _INF
        k += 1.0
        j += 1.0
    return inv, t


def steps_dd(inv, t, k, m, rh, rl):
    """:func:`steps` in double-double, for runs over 500 steps: the roundings of a slowly
    varying product are correlated, so they add up (1e-13 after 3000 steps near A = 2e6,
    1e-12 after 1e5 near 1e10); these keep the error near 1e-16, at about twice the time a
    step."""
    ih = inv
    il = 0.0
    j = 0.0
    while j < m:
        ph, pe = two_prod(ih, k)
        pl = pe + il * k
        th, te = two_prod(ph, rh)
        tl = te + (ph * rl + pl * rh)
        sh, se = two_sum(1.0, th)
        se += tl
        ih = sh + se
        il = se - (ih - sh)
        t = th + tl
        if not ih <= HUGE:
            return _INF, _INF
        k += 1.0
        j += 1.0
    return ih, t


def recursion(inv, t, k, m, a):
    """m steps of the recursion from 1/E_{k-1} = inv (t = inv - 1) at k: in double-double
    beyond 500 steps (see :func:`steps_dd`)."""
    rh, rl = recip(a)
    if m > 500.0:
        return steps_dd(inv, t, k, m, rh, rl)
    return steps(inv, t, k, m, rh, rl)


# --------------------------------------------------------------------------------------------
# one point


def tiny(a, x):
    """E below 1e-300 (x > a): log E = log pmf - log P(X <= x), the last term 0 there."""
    le = log_pmf(a, x)
    return math.exp(le), _INF, le


def from_below(a, x):
    """(1/E, t) by the recursion from a start at or below A (x > A, or a < 2)."""
    if a < 2.0:
        f = x - math.floor(x)
        if f > 0.0:
            inv, t = start_series(a, f)
        else:
            inv, t = 1.0, 0.0
        if inv > HUGE:
            return _INF, _INF
        m = x - f
        k = f + 1.0
    else:
        m = math.ceil(x - a)
        s = x - m  # in (a - 1, a]: the fraction converges there
        t = s / cf_gamma(a, s)[0]
        inv = 1.0 + t
        k = s + 1.0
    return recursion(inv, t, k, m, a)


def series_above(a, x):
    """(E, t, log E) for a < x <= 3a, x > 15: pmf / (1 - P(X > x))."""
    lh, ll = log_pmf_dd(a, x)
    if lh < -708.0:
        # pmf below the smallest normal double; P(X > x) < 1e-300 does not change log Q
        le = lh + ll
        return math.exp(le), _INF, le
    pmf = math.exp(lh) * (1.0 + ll)
    # S = sum_{j>=1} prod_{i<=j} a/(x + i), four terms at a time with one division:
    # a/b0 (1 + a/b1 (1 + a/b2 (1 + a/b3))) = (b1 b2 b3 + a (b2 b3 + a (b3 + a))) a / b0b1b2b3
    s = 0.0
    term = 1.0
    b0 = x + 1.0
    # a^3 in double-double: rounded once and used in every block, its error would act like
    # a change of A, growing with the number of blocks (1e5 of them near A = 1e10)
    a2h, a2l = two_prod(a, a)
    a3h, a3e = two_prod(a2h, a)
    a3l = a3e + a2l * a
    while b0 < x + 1e8:
        b1 = b0 + 1.0
        b2 = b0 + 2.0
        b3 = b0 + 3.0
        b23 = b2 * b3
        b123 = b1 * b23
        r = a / (b0 * b123)
        block = term * (b123 + a * (b23 + a * (b3 + a))) * r
        s += block
        term *= a3h * r + a3l * r
        # what is left is below term q / (1 - q), q = a / (b3 + 1): stop once it cannot
        # change 1 - pmf S in double precision
        if term * pmf * a < _TAIL * (b3 + 1.0 - a):
            break
        b0 += 4.0
    upper = pmf * s
    e = pmf / (1.0 - upper)
    return e, 1.0 / e - 1.0, (lh + ll) - math.log1p(-upper)


def point(a, x):
    """(E, t, log E or NaN) for finite a > 0, x > 0."""
    if x <= XREC and x == math.floor(x):
        inv = 1.0
        t = 0.0
        k = 1.0
        while k <= x:
            t = inv * k / a
            inv = 1.0 + t
            k += 1.0
        if inv > HUGE:
            return tiny(a, x)
        return 1.0 / inv, t, _NAN
    if a < 2.0:
        if x > 3.0 * a + 3.0 and x * math.log(a) - a - math.lgamma(x + 1.0) < -720.0:
            return tiny(a, x)
        inv, t = from_below(a, x)
    elif x <= a:
        t = x / cf_gamma(a, x)[0]
        inv = 1.0 + t
    elif x <= XREC or (x > 1e6 and x - a < 2.0 * math.sqrt(x)):
        # above a million, close above A: the series would take 1e5 blocks whose roundings
        # add up to 1e-12 where P(X > n) is near 1/2; the fraction and the steps do not
        inv, t = from_below(a, x)
    elif x <= 3.0 * a:
        return series_above(a, x)
    elif x * math.log(a) - a - math.lgamma(x + 1.0) < -720.0:
        return tiny(a, x)
    elif a > 10.0:
        # the series at s = x - m <= 3a, then m steps: fewer steps than from A
        m = math.ceil(x - 3.0 * a)
        e, t, le = series_above(a, x - m)
        if le < -690.0:
            return tiny(a, x)
        inv, t = recursion(1.0 + t, t, x - m + 1.0, m, a)
    else:
        inv, t = from_below(a, x)
    if inv > HUGE:
        return tiny(a, x)
    return 1.0 / inv, t, _NAN


def point_log(a, x):
    """log E from point's triple."""
    e, t, le = point(a, x)
    if le == le:
        return le
    return -math.log1p(t)


def pick(e, t, le, want):
    """E (want 0), log E (1) or log(1 - E) (2) from a point's triple."""
    if want == 0:
        return e
    if want == 1:
        return le if le == le else -math.log1p(t)
    if e < 0.5:
        return math.log1p(-e)
    return math.log(t) - math.log1p(t)


def special_point(a, x, want):
    """What :func:`pick` gives at the ends: no servers (E = 1) or no traffic (E = 0)."""
    if x == 0.0:
        return 1.0 if want == 0 else (0.0 if want == 1 else -_INF)
    return 0.0 if want == 0 else (-_INF if want == 1 else 0.0)


# --------------------------------------------------------------------------------------------
# loops over arrays (compiled by netdim._erlang_kernels; flat float64 arrays, one pass each)


#: Whole n up to this (with A >= n/4) run the recursion from E_0 = 1 over arrays in blocks
#: of elements sorted by n, the steps of a block vectorised across its elements: about 1 ns
#: a step, against 0.1-0.4 us for one point by the other paths at these n.
NBATCH = 256
_LANES = 256


def erlang_many(a, x, want, out):
    """out[i] = E, log E or log(1 - E) at (a[i], x[i]) (want 0, 1, 2)."""
    size = a.shape[0]
    n_of = np.full(size, -1, np.int64)
    counts = np.zeros(NBATCH + 1, np.int64)
    for i in range(size):
        ai = a[i]
        xi = x[i]
        if xi == 0.0 or ai == 0.0:
            out[i] = special_point(ai, xi, want)
        elif xi <= NBATCH and xi == math.floor(xi) and ai >= 0.25 * xi and ai > 1e-280:
            k = int(xi)
            n_of[i] = k
            counts[k] += 1
        else:
            e, t, le = point(ai, xi)
            out[i] = pick(e, t, le, want)
    # counting sort of the batch by n, largest first
    starts = np.zeros(NBATCH + 1, np.int64)
    total = 0
    for k in range(NBATCH, 0, -1):
        starts[k] = total
        total += counts[k]
    perm = np.empty(total, np.int64)
    for i in range(size):
        k = n_of[i]
        if k > 0:
            perm[starts[k]] = i
            starts[k] += 1
    w_inv = np.empty(_LANES)
    w_rh = np.empty(_LANES)
    w_rl = np.empty(_LANES)
    for b0 in range(0, total, _LANES):
        w = min(_LANES, total - b0)
        for j in range(w):
            w_inv[j] = 1.0
            rh, rl = recip(a[perm[b0 + j]])
            w_rh[j] = rh
            w_rl[j] = rl
        n_lo = n_of[perm[b0 + w - 1]]
        # the steps every element of the block takes: a plain loop the compiler vectorises
        for k in range(1, n_lo):
            fk = float(k)
            for j in range(w):
                p = w_inv[j] * fk
                w_inv[j] = 1.0 + (p * w_rh[j] + p * w_rl[j])
        # the last steps, element by element (the last product is t = 1/E - 1)
        for j in range(w):
            i = perm[b0 + j]
            inv = w_inv[j]
            t = inv - 1.0
            for k in range(n_lo, n_of[i] + 1):
                p = inv * float(k)
                t = p * w_rh[j] + p * w_rl[j]
                inv = 1.0 + t
            if inv <= HUGE:
                out[i] = pick(1.0 / inv, t, _NAN, want)
            else:
                e, t, le = point(a[i], x[i])
                out[i] = pick(e, t, le, want)
    return out


# --------------------------------------------------------------------------------------------
# servers for a target


def log_phi(z):
    """log of the standard normal distribution function (its tail form far below 0)."""
    if z > -30.0:
        return math.log(0.5 * math.erfc(-z / math.sqrt(2.0)))
    z2 = z * z
    return -0.5 * z2 - math.log(-z) - 0.5 * _LOG_2PI + math.log1p(-1.0 / z2 + 3.0 / (z2 * z2))


def mills(z):
    """phi(z) / Phi(z) for the standard normal law."""
    if z > -30.0:
        return math.exp(-0.5 * z * z) / math.sqrt(2.0 * math.pi) / (
            0.5 * math.erfc(-z / math.sqrt(2.0)))
    return -z / (1.0 - 1.0 / (z * z) + 3.0 / (z * z) ** 2)


def servers_guess(a, logt):
    """A real n near the answer: Newton's method on log pmf(n; A) - log Phi(z) = log target,
    z = (n + 1/2 - A) / sqrt(A) (P(X <= n) in its normal approximation; a start only)."""
    sa = math.sqrt(a)
    n = a + sa
    for _ in range(40):
        z = (n + 0.5 - a) / sa
        f = log_pmf(a, n) - log_phi(z) - logt
        df = math.log(a / n) - 0.5 / n - mills(z) / sa
        step = f / df
        new = n - step
        if new < 0.5 * n:
            new = 0.5 * n
        if abs(new - n) < 0.05:
            return new
        n = new
    return n


def _meets(e, t, le, target, logt):
    """E <= target, in log space where the target is below 1e-300 (E may underflow)."""
    if target >= 1e-300:
        return e <= target
    return pick(e, t, le, 1) <= logt


def _near(e, t, le, target, logt):
    """E within 1e-12 (relatively) of the target: recomputed by :func:`point` to decide."""
    if target >= 1e-300:
        return abs(e - target) <= 1e-12 * target
    return abs(pick(e, t, le, 1) - logt) <= 1e-12 * abs(logt)


def _state(a, n):
    if n == 0.0:
        return 1.0, 0.0, 0.0
    return point(a, n)


def _walk_up(a, n, e, t, le, target, logt, limit):
    """From n with E_n > target, the recursion upwards to the first k with E_k <= target, at
    most ``limit`` steps. Returns (k, found, near, e, t, le) at k (near: E_k or E_{k-1} is
    within rounding of the target)."""
    rh, rl = recip(a)
    inv = 1.0 + t
    k = n
    j = 0.0
    near = _near(e, t, le, target, logt)
    while j < limit:
        k += 1.0
        j += 1.0
        p = inv * k
        tn = p * rh + p * rl
        if tn <= HUGE:
            t = tn
            inv = 1.0 + t
            e = 1.0 / inv
            le = _NAN
        else:
            # E below 1e-300: log E_k = log E_{k-1} - log(k/A + E_{k-1})
            if le != le:
                le = -math.log(inv)
            le -= math.log(k / a + e)
            e = math.exp(le)
            t = _INF
            inv = _INF
        if _meets(e, t, le, target, logt):
            return k, True, near or _near(e, t, le, target, logt), e, t, le
        near = _near(e, t, le, target, logt)
    return k, False, near, e, t, le


def _log_e(e, t, le):
    return le if le == le else -math.log1p(t)


def servers_for_point(a, target):
    """Smallest whole n with E(a, n) <= target, for a > 0 and 0 < target < 1.

    A start near the answer (the normal approximation of :func:`servers_guess`), one
    evaluation there, then the recursion step by step up to the answer; where a walk would
    be long, Newton's step on log E with the exact discrete slope
    ``log E_n - log E_{n+1} = log(E_n + (n + 1)/A)`` jumps, and a start found above the
    answer is halved back towards the lower bound ``A (1 - target) - 1``.
    """
    logt = math.log(target)
    lo = math.floor(a * (1.0 - target)) - 1.0  # E(a, n) > 1 - n/a >= target up to here
    if lo < 0.0:
        lo = 0.0
    n = lo
    # the guess serves where the answer lies above A - 3 sqrt(A); below it, E is close to
    # 1 - n/A and the lower bound is already near the answer
    if a > 20.0 and target * math.sqrt(a) < 3.0:
        g = math.floor(servers_guess(a, logt)) - 2.0
        if g > n:
            n = g
    hi = _INF
    walk = 64.0 + 2.0 * math.sqrt(a)
    for _ in range(400):
        e, t, le = _state(a, n)
        if _meets(e, t, le, target, logt):
            hi = n
            n = lo if hi - lo <= walk else hi - math.floor(0.5 * (hi - lo))
            continue
        lo = n
        limit = hi - n if hi - n <= walk else walk
        k, found, near, e, t, le = _walk_up(a, n, e, t, le, target, logt, limit)
        if found:
            return _settle(a, k, target, logt) if near else k
        # far below the answer: Newton's step (log E is concave in n: it overshoots)
        lo = k
        slope = math.log(e + (k + 1.0) / a)
        n = k + math.ceil((_log_e(e, t, le) - logt) / slope)
        if n >= hi:
            n = k + math.floor(0.5 * (hi - k))
    return _settle(a, hi, target, logt)


def _settle(a, n, target, logt):
    """n, moved by whole steps until E(n) <= target < E(n - 1) holds as :func:`point`
    computes them (the recursion's values can differ from them in the last bits)."""
    for _ in range(8):
        e, t, le = _state(a, n)
        if not _meets(e, t, le, target, logt):
            n += 1.0
            continue
        if n == 0.0:
            return n
        e, t, le = _state(a, n - 1.0)
        if _meets(e, t, le, target, logt):
            n -= 1.0
            continue
        return n
    return n


def servers_many(a, target, out):
    """out[i] = smallest n with E(a[i], n) <= target[i] (0 for no traffic)."""
    for i in range(a.shape[0]):
        out[i] = 0 if a[i] == 0.0 else int(servers_for_point(a[i], target[i]))
    return out


# --------------------------------------------------------------------------------------------
# traffic for a target


def traffic_guess(x, logt):
    """log A near the answer of :func:`traffic_for_point`: for few servers the small-traffic
    form E ~ A^n / Gamma(n + 1), else Newton's method on the normal approximation
    log pmf(n; A) - log Phi((n + 1/2 - A)/sqrt(A)) = log target (a start only)."""
    small = (logt + math.lgamma(x + 1.0)) / x
    if math.exp(logt) * math.sqrt(x) > 3.0:
        # E well above 1/sqrt(n): A well above n, where E ~ 1 - n/A + n/A^2
        return math.log(max(x - 1.0, 0.5 * x) / (1.0 - math.exp(logt)))
    if x < 8.0:
        return small
    u = math.log(x)
    for _ in range(30):
        a = math.exp(u)
        sa = math.sqrt(a)
        z = (x + 0.5 - a) / sa
        f = log_pmf(a, x) - log_phi(z) - logt
        df = (x - a) + mills(z) * (x + 0.5 + a) / (2.0 * sa)
        if not df > 0.0:
            break
        step = f / df
        if step > 2.0:
            step = 2.0
        elif step < -2.0:
            step = -2.0
        u -= step
        if abs(step) < 1e-4:
            break
    return u if u > small else small


def traffic_for_point(x, target):
    """(largest A with E(A, x) <= target, iterations) for x > 0, 0 < target < 1.

    Halley's method on ``g(u) = log E(e^u, x) - log target``, u = log A, with the exact
    derivatives ``g' = s = x - A (1 - E)`` and ``g'' = -A (1 - E) + A E s`` [2], kept in
    the bracket ``(0, x / (1 - target))`` (``E >= 1 - x/A`` gives the upper end) by
    geometric bisection where a step would leave it. A is updated as ``A e^-step``, never
    through ``exp(u)``, so it keeps its last digits when it is tiny. Then ulps off until
    E(A, x) <= target as :func:`point` computes it.
    """
    logt = math.log(target)
    hi = x / (1.0 - target)
    lo = 0.0
    u = traffic_guess(x, logt)
    a = math.exp(u) if u > -744.0 else 5e-324
    if not a < hi:
        a = hi * 0.999
    iters = 0
    last = 0.0
    for _ in range(100):
        iters += 1
        e, t, le = point(a, x)
        # log(E / target) without the rounding of two large logarithms where both are normal
        if e > 1e-307 and target > 1e-307:
            g = math.log1p((e - target) / target)
        else:
            g = _log_e(e, t, le) - logt
        if g == 0.0:
            break
        if g > 0.0:
            hi = a
        else:
            lo = a
        one_m = 1.0 if t == _INF else t / (1.0 + t)
        s = x - a * one_m
        step = _NAN
        if s > 0.0:
            step = g / s
            den = 1.0 - 0.5 * step * (-a * one_m + a * e * s) / s
            if den > 0.5:
                step /= den
            # converged, or turning back and forth at the rounding level of E itself
            # (about |log E| ulps where E is tiny)
            if abs(step) <= 1e-14 or (abs(step) < 1e-12 and step * last < 0.0):
                break
            last = step
        new = a * math.exp(-step) if step == step else _NAN
        if new == a or hi - lo <= 4e-16 * hi:
            break
        if not (lo < new < hi):
            if lo > 0.0:
                new = math.exp(0.5 * (math.log(lo) + math.log(hi)))
            else:
                new = a * 0.125
        if new < 5e-324:
            if a <= 5e-324 and g > 0.0:
                return 0.0, iters
            new = 5e-324
        a = new
    # steps growing from one ulp: where A is tiny, E moves only once log A does (|log A| ulps)
    step = 2.0**-52
    for _ in range(48):
        e, t, le = point(a, x)
        if _meets(e, t, le, target, logt):
            break
        a *= 1.0 - step
        step *= 2.0
    return a, iters


def traffic_many(x, target, out):
    """out[i] = largest A with E(A, x[i]) <= target[i] (0 for no servers)."""
    for i in range(x.shape[0]):
        out[i] = 0.0 if x[i] == 0.0 else traffic_for_point(x[i], target[i])[0]
    return out


# --------------------------------------------------------------------------------------------
# derivative in the traffic, and the table of every E up to n


def dlog_dlog_traffic(a, x, e, t):
    """s = d log E / d log A = x - A (1 - E) [2]_, > 0; for x < A from the fraction's tail,
    ``s = x (1 + T) / (D + x)``, which has none of the cancellation of the plain form."""
    if x < a and a >= 2.0:
        d, tail = cf_gamma(a, x)
        return x * (1.0 + tail) / (d + x)
    one_m = 1.0 if t == _INF else t / (1.0 + t)
    return x - a * one_m


def dtraffic_point(a, x):
    """dE/dA = E s / A at finite a > 0, x > 0 (0 where E underflows)."""
    e, t, le = point(a, x)
    return e * dlog_dlog_traffic(a, x, e, t) / a


def dtraffic_many(a, x, out):
    for i in range(a.shape[0]):
        ai = a[i]
        xi = x[i]
        if xi == 0.0:
            out[i] = 0.0
        elif ai == 0.0:
            out[i] = 1.0 if xi == 1.0 else (_INF if xi < 1.0 else 0.0)
        else:
            out[i] = dtraffic_point(ai, xi)
    return out


def advance(a, e, n, s):
    """E(a, s) from ``e = E(a, n)``, ``n <= s`` whole, by E_k = a E_{k-1} / (k + a E_{k-1}):
    the one copy of the forward recursion behind every table (its rounding errors shrink by
    1 - E_k each step)."""
    while n < s:
        n += 1
        ae = a * e
        e = ae / (n + ae)
    return e


def table_many(a, servers, out):
    """out[i, k] = E(a[i], servers[k]) for nondecreasing whole ``servers``, one recursion
    per load."""
    for i in range(a.shape[0]):
        e = 1.0
        n = 0
        for k in range(servers.shape[0]):
            e = advance(a[i], e, n, servers[k])
            n = servers[k]
            out[i, k] = e
    return out


def table_runs(a, first, step, count, out):
    """Run i of ``out`` (the runs one after another) holds E(a[i], first[i] + step[i] k)
    for k = 0..count[i]-1, one recursion per load."""
    pos = 0
    for i in range(a.shape[0]):
        e = 1.0
        n = 0
        for k in range(count[i]):
            s = first[i] + step[i] * k
            e = advance(a[i], e, n, s)
            n = s
            out[pos] = e
            pos += 1
    return out


# --------------------------------------------------------------------------------------------
# Moe's principle


def marginal_traffic(a, n):
    """A [E(A, n) - E(A, n + 1)], the traffic a circuit n + 1 would carry, as
    ``A E (s + 1) / (n + 1 + A E)`` with s = n - A (1 - E) kept free of cancellation."""
    if n == 0.0:
        return a / (1.0 + a)
    e, t, le = point(a, n)
    s = dlog_dlog_traffic(a, n, e, t)
    return a * e * (s + 1.0) / (n + 1.0 + a * e)


def moe_point(a, ratio):
    """Fewest circuits n whose next circuit would carry no more than ``ratio`` erlangs:
    bisection on n (the marginal traffic falls as n grows), O(log A) evaluations."""
    if not marginal_traffic(a, 0.0) > ratio:
        return 0.0
    lo = 0.0
    hi = math.ceil(a + 10.0 * math.sqrt(a) + 10.0)
    while marginal_traffic(a, hi) > ratio:
        lo = hi
        hi *= 2.0
    while hi - lo > 1.0:
        mid = math.floor(0.5 * (lo + hi))
        if marginal_traffic(a, mid) > ratio:
            lo = mid
        else:
            hi = mid
    return hi


def moe_many(a, ratio, out):
    for i in range(a.shape[0]):
        out[i] = 0 if a[i] == 0.0 or not ratio[i] < _INF else int(moe_point(a[i], ratio[i]))
    return out
