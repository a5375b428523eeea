"""The peaked link model's kernels, compiled by numba (private to :mod:`netdim._peaked_kernels`).

Module-level functions, so that numba's on-disk cache holds them between processes (a
function built inside another is compiled afresh in every process: 1.6 s on each
``netdim evaluate`` of the regional network). Imported only when a peaked model is first
used, since numba takes about a second to import. The methods' references are in
:mod:`netdim._peaked_kernels`.
"""

from __future__ import annotations

import math

import numba
import numpy as np

jit = numba.njit(cache=True, error_model="numpy")


@jit
def legendre_cf(a, s):  # pragma: no cover - compiled
    # denominator D of Gamma(s, a) = e^-a a^s / D; about sqrt(s) terms for a >= s - 1
    tiny = 1e-300
    b = a + 1.0 - s
    f = b if b != 0.0 else tiny
    c = f
    d = 0.0
    i = 0
    while True:
        i += 1
        an = i * (s - i)
        b += 2.0
        d = b + an * d
        d = 1.0 / (d if d != 0.0 else tiny)
        c = b + an / c
        if c == 0.0:
            c = tiny
        delta = c * d
        f *= delta
        if abs(delta - 1.0) < 1e-16 or i > 100000:
            return f

@jit
def log_e_small(a, s):  # pragma: no cover - compiled
    # log E(a, s) for a < 2, 0 < s < 1: Gamma(s+1, a) = Gamma(s+1) - gamma(s+1, a), the
    # lower one by its series (terms fall like a^k / k!; at most a digit lost to the
    # difference, since Gamma(s+1, a) > 0.13 Gamma(s+1) here)
    term = 1.0 / (s + 1.0)
    tot = term
    k = 1
    while k < 200:
        term *= a / (s + 1.0 + k)
        tot += term
        if term < tot * 1e-17:
            break
        k += 1
    lower = math.exp((s + 1.0) * math.log(a) - a) * tot
    upper = math.exp(math.lgamma(s + 1.0)) - lower
    return s * math.log(a) - a - math.log(upper)

@jit
def log_e(a, x):  # pragma: no cover - compiled
    if x <= 0.0:
        return 0.0
    if a <= 0.0:
        return -np.inf
    if a >= 2.0:
        m = 0 if x <= a else int(math.ceil(x - a))
        s = x - m
        e0 = legendre_cf(a, s + 1.0) / a
        loge0 = math.log(e0) if e0 < 1.0 else 0.0
    else:
        m = int(math.floor(x))
        s = x - m
        loge0 = min(log_e_small(a, s), 0.0) if s > 0.0 else 0.0
    if m == 0:
        return loge0
    # forward recursion 1/E_{s+1} = 1 + (s + 1) / (A E_s) on X = 1/E, rescaled
    big = math.exp(-loge0)
    one = 1.0
    acc = 0.0
    t = 0.0
    for _ in range(m):
        s += 1.0
        t = big * s / a
        big = one + t
        if big > 1e250:
            big *= 1e-250
            t *= 1e-250
            one *= 1e-250
            acc += 575.6462732485114  # log(1e250)
    return -math.log1p(t) if acc == 0.0 else -(math.log(big) + acc)

@jit
def log_erlang_vec(a, x, out):  # pragma: no cover - compiled
    for i in range(a.size):
        out[i] = log_e(a[i], x[i])

@jit
def chain_one(cap, t_s, t_p, f, la, g, w, up, rr, ss, p):  # pragma: no cover - compiled
    # States (phase, k): phase 1 = on (the IPP offers calls at rate la), 0 = off; k busy
    # units. Poisson calls admitted while k < t_s, IPP calls while on and k < t_p.
    # Linear level reduction towards the level m nearest the mean load, from both ends:
    # above m pi_{k+1} = pi_k R_k (R_{k-1} = -U_{k-1} (L_k + (k+1) R_k)^-1, from the
    # top), below it pi_{k-1} = pi_k S_k (S_{k+1} = -(k+1) (L_k + S_k U_{k-1})^-1, from
    # 0). Each recursion runs where the probabilities fall away from m, so neither
    # amplifies rounding (one recursion through an overloaded chain would).
    if cap <= 0:
        return 1.0, 1.0, 1.0
    mean = f + la * g / (g + w)
    top = max(min(t_s, cap) if f > 0.0 else 0, min(t_p, cap) if la > 0.0 else 0)
    m = max(0, min(top, int(mean)))
    for k in range(cap):
        up[k, 0] = f if k < t_s else 0.0
        up[k, 1] = up[k, 0] + (la if k < t_p else 0.0)
    up[cap, 0] = 0.0
    up[cap, 1] = 0.0
    for i in range(2):
        for i2 in range(2):
            rr[cap, i, i2] = 0.0
    for k in range(cap, m, -1):
        kk = k + 1.0
        n00 = -(up[k, 0] + k + g) + kk * rr[k, 0, 0]
        n01 = g + kk * rr[k, 0, 1]
        n10 = w + kk * rr[k, 1, 0]
        n11 = -(up[k, 1] + k + w) + kk * rr[k, 1, 1]
        det = n00 * n11 - n01 * n10
        d0, d1 = up[k - 1, 0], up[k - 1, 1]
        rr[k - 1, 0, 0] = -d0 * n11 / det
        rr[k - 1, 0, 1] = d0 * n01 / det
        rr[k - 1, 1, 0] = d1 * n10 / det
        rr[k - 1, 1, 1] = -d1 * n00 / det
    for k in range(m):
        n00 = -(up[k, 0] + k + g)
        n01 = g
        n10 = w
        n11 = -(up[k, 1] + k + w)
        if k > 0:
            n00 += ss[k, 0, 0] * up[k - 1, 0]
            n01 += ss[k, 0, 1] * up[k - 1, 1]
            n10 += ss[k, 1, 0] * up[k - 1, 0]
            n11 += ss[k, 1, 1] * up[k - 1, 1]
        det = n00 * n11 - n01 * n10
        kk = k + 1.0
        ss[k + 1, 0, 0] = -kk * n11 / det
        ss[k + 1, 0, 1] = kk * n01 / det
        ss[k + 1, 1, 0] = kk * n10 / det
        ss[k + 1, 1, 1] = -kk * n00 / det
    n00 = -(up[m, 0] + m + g)
    n01 = g
    n10 = w
    n11 = -(up[m, 1] + m + w)
    if m < cap:
        kk = m + 1.0
        n00 += kk * rr[m, 0, 0]
        n01 += kk * rr[m, 0, 1]
        n10 += kk * rr[m, 1, 0]
        n11 += kk * rr[m, 1, 1]
    if m > 0:
        n00 += ss[m, 0, 0] * up[m - 1, 0]
        n01 += ss[m, 0, 1] * up[m - 1, 1]
        n10 += ss[m, 1, 0] * up[m - 1, 0]
        n11 += ss[m, 1, 1] * up[m - 1, 1]
    # pi_m N_m = 0: the left null vector, from the larger column
    if abs(n10) + abs(n00) >= abs(n11) + abs(n01):
        x0, x1 = n10, -n00
    else:
        x0, x1 = n11, -n01
    if x0 + x1 < 0.0:
        x0, x1 = -x0, -x1
    p[m, 0] = max(x0, 0.0)
    p[m, 1] = max(x1, 0.0)
    for k in range(m, cap):
        p[k + 1, 0] = p[k, 0] * rr[k, 0, 0] + p[k, 1] * rr[k, 1, 0]
        p[k + 1, 1] = p[k, 0] * rr[k, 0, 1] + p[k, 1] * rr[k, 1, 1]
    for k in range(m, 0, -1):
        p[k - 1, 0] = p[k, 0] * ss[k, 0, 0] + p[k, 1] * ss[k, 1, 0]
        p[k - 1, 1] = p[k, 0] * ss[k, 0, 1] + p[k, 1] * ss[k, 1, 1]
    tot = 0.0
    on = 0.0
    s_blk = 0.0
    p_blk = 0.0
    for k in range(cap + 1):
        tot += p[k, 0] + p[k, 1]
        on += p[k, 1]
        if k >= t_s:
            s_blk += p[k, 0] + p[k, 1]
        if k >= t_p:
            p_blk += p[k, 1]
    bs = s_blk / tot
    bp = p_blk / on if on > 0.0 else 1.0
    if t_p <= 0:
        bp = 1.0
    offered = f + la * on / tot
    loss = (f * bs + la * p_blk / tot) / offered if offered > 0.0 else bs
    return bs, bp, loss

@jit
def scratch(caps):  # pragma: no cover - compiled
    c = 1
    for j in range(caps.size):
        c = max(c, caps[j] + 1)
    return np.zeros((c, 2)), np.zeros((c, 2, 2)), np.zeros((c, 2, 2)), np.zeros((c, 2))

@jit
def chain_vec(caps, ts, tp, first, lam, gam, om, out):  # pragma: no cover - compiled
    up, rr, ss, p = scratch(caps)
    for j in range(caps.size):
        out[j, 0], out[j, 1], out[j, 2] = chain_one(caps[j], ts[j], tp[j], first[j],
                                                    lam[j], gam[j], om[j], up, rr, ss, p)

@jit
def rapp(m, z):  # pragma: no cover - compiled
    a = m * z + 3.0 * z * (z - 1.0)
    return a, max(a * (m + z) / (m + z - 1.0) - m - 1.0, 0.0)

@jit
def bilinear(q, m, z, u0, v0, step):  # pragma: no cover - compiled
    fu = (math.log10(m) - u0) / step
    fv = (math.log10(z - 1.0) - v0) / step
    i = min(max(int(math.floor(fu)), 0), q.shape[0] - 2)
    j = min(max(int(math.floor(fv)), 0), q.shape[1] - 2)
    du = fu - i
    dv = fv - j
    return ((1 - du) * (1 - dv) * q[i, j] + du * (1 - dv) * q[i + 1, j]
            + (1 - du) * dv * q[i, j + 1] + du * dv * q[i + 1, j + 1])

@jit
def table_group(m, z, qa, qn, u0, v0, step):  # pragma: no cover - compiled
    ar, nr = rapp(m, z)
    ca = bilinear(qa, m, z, u0, v0, step)
    cn = bilinear(qn, m, z, u0, v0, step)
    return ar * math.exp(ca), max(math.expm1(math.log1p(nr) + cn), 0.0)

@jit
def link_kernel(f, o, ov, caps, thr, smooth_rtol, eq_o, eq_l, use_table, qa, qn, qs,
                u0, v0, step, near, out, lost_z, ipp, logb):  # pragma: no cover - compiled
    # The link model of netdim.peaked.link_factors, one link at a time. eq_o / eq_l:
    # equivalent groups (A*, N*) of the overflow class / of the whole mix given by the
    # caller (NaN: from the table or Rapp's formula here).
    up, rr, ss, p = scratch(caps)
    for j in range(f.size):
        fj, oj = f[j], o[j]
        vj = max(ov[j], oj)
        cap, tj = caps[j], thr[j]
        zo = vj / oj if oj > 0.0 else 1.0
        rate, gon, goff = oj, 1.0, 0.0
        if oj > 0.0 and vj > oj * (1.0 + smooth_rtol):
            a, n = eq_o[j, 0], eq_o[j, 1]
            if a == a:
                e1 = a * math.exp(log_e(a, n))
                e2 = a * e1 / (2.0 * (n + 1.0 - a + e1))
                e3 = a / (3.0 * ((n + 2.0 - a) / (2.0 * e2) + 1.0 / e1))
                shape = e3 / e2
            elif use_table and zo - 1.0 >= near and math.log10(oj) >= u0:
                shape = oj * math.exp(bilinear(qs, oj, zo, u0, v0, step))
            else:
                a, n = rapp(oj, zo)
                e1 = a * math.exp(log_e(a, n))
                e2 = a * e1 / (2.0 * (n + 1.0 - a + e1))
                e3 = a / (3.0 * ((n + 2.0 - a) / (2.0 * e2) + 1.0 / e1))
                shape = e3 / e2
            b1 = oj
            b2 = (vj - b1 + b1 * b1) / 2.0
            b3 = b2 * shape
            r2 = 2.0 * b2 / b1
            r3 = 3.0 * b3 / b2
            s = 2.0 * (r3 - r2) / (2.0 * r2 - b1 - r3)
            lam = r2 + s * (r2 - b1)
            g = b1 * s / lam
            if s > 0.0 and lam > 0.0 and 0.0 < g < s:
                rate, gon, goff = lam, g, s - g
        ipp[j, 0], ipp[j, 1], ipp[j, 2] = rate, gon, goff
        bs, bp, _ = chain_one(cap, cap, tj, fj, rate, gon, goff, up, rr, ss, p)
        out[j, 0] = bs
        out[j, 1] = 1.0 if tj <= 0 else bp
        out[j, 2] = zo
        tm = fj + oj
        lost_z[j, 0] = 1.0
        lost_z[j, 1] = 1.0
        logb[j, 0] = 0.0
        logb[j, 1] = 0.0
        if tm <= 0.0:
            continue
        zl = (fj + vj) / tm
        a, n = tm, 0.0
        inv = 1.0  # 1 / E(A*, N*): the group's overflow mean is the mix's mean, E = M / A*
        if zl > 1.0 + smooth_rtol:
            a, n = eq_l[j, 0], eq_l[j, 1]
            if a == a:
                inv = a / tm
            elif use_table and zl - 1.0 >= near and math.log10(tm) >= u0:
                a, n = table_group(tm, zl, qa, qn, u0, v0, step)
                inv = a / tm
            else:  # Rapp's group has another overflow mean: its own E
                a, n = rapp(tm, zl)
                inv = math.exp(-log_e(a, n))
        # E(A*, N* + C - r) and E(A*, N* + C) by the recursion on from E(A*, N*)
        lo = max(tj, 0)
        hi = max(cap, 0)
        srv = n
        for _ in range(lo):
            srv += 1.0
            inv = 1.0 + inv * srv / a
        le_lo = -math.log(inv) if inv < 1e300 else log_e(a, n + lo)
        for _ in range(hi - lo):
            srv += 1.0
            inv = 1.0 + inv * srv / a
        le_hi = -math.log(inv) if inv < 1e300 else log_e(a, n + hi)
        for c in range(2):
            lec = le_hi if c == 0 else le_lo
            srv = float(hi if c == 0 else lo)
            mo = a * math.exp(lec)
            lost_z[j, c] = max(1.0 - mo + a / (n + srv + 1.0 - a + mo), 1.0)
            logb[j, c] = min(math.log(a) + lec - math.log(tm), 0.0)

@jit
def stream_peakedness(m, b, zo, step_factor, step_route, slot, blocks, group, n_routes,
                      n_groups, out):  # pragma: no cover - compiled
    # netdim.evaluate.peaked_fixed_point._Problem.peakedness: per block (a route and the
    # route before), every step of it with every step of the one before, in the order of
    # the pair numbering of ``group``; sums in that order, as np.bincount would make them.
    ns = m.size
    lost = np.empty(ns)
    tot = np.zeros(n_routes)
    src_rate = np.zeros(zo.size)
    for s in range(ns):
        lost[s] = m[s] * b[s] / step_factor[s]
        tot[step_route[s]] += lost[s]
        src_rate[slot[s]] += lost[s]
    w = np.zeros(ns)
    for s in range(ns):
        t = tot[step_route[s]]
        if t > 0.0:
            w[s] = lost[s] / t
    share = np.zeros(n_groups)
    p = 0
    for q in range(blocks.shape[0]):
        for s in range(blocks[q, 0], blocks[q, 1]):
            ms = m[s] / step_factor[s]
            for k in range(blocks[q, 2], blocks[q, 3]):
                src = src_rate[slot[k]]
                if src > 0.0:
                    share[group[p]] += ms * w[k] / src
                p += 1
    for g in range(n_groups):
        share[g] = min(share[g], 1.0)
    acc = np.zeros(ns)
    p = 0
    for q in range(blocks.shape[0]):
        for s in range(blocks[q, 0], blocks[q, 1]):
            for k in range(blocks[q, 2], blocks[q, 3]):
                acc[s] += w[k] * (share[group[p]] * (zo[slot[k]] - 1.0))
                p += 1
    for s in range(ns):
        out[s] = 1.0 + acc[s]


KERNELS = {"log_erlang": log_erlang_vec, "chain": chain_vec, "link": link_kernel,
           "log_e": log_e, "peakedness": stream_peakedness}
