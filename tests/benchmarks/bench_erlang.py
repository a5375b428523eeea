"""Speed and accuracy of netdim.erlang, each row beside a reference timed in the same run.

    python tests/benchmarks/bench_erlang.py [--points 1000000] [--repeats 3] [--quick]

Rows (medians of ``--repeats`` rounds, netdim's and the reference's interleaved; ratios are
netdim's time over the reference's):

* wide grid: ``--points`` pairs, A log-uniform in [1e-3, 1e5], n log-uniform in [0, 1e5]
  (whole numbers; then the same with real n), against the closed form
  ``pmf(n; A) / gammaincc(n + 1, A)`` (scipy.special). Goal: ratio <= 3. Accuracy against
  mpmath (50 digits) on a random sample of the grid, where E >= 1e-300; goal <= 1e-13. The
  closed form's own error on the same sample is printed too.
* scalar n < 30 against a plain Python loop of the recursion (goal: ratio <= 1), and scalar
  calls on the wide grid (goal: >= 1e5 calls/s).
* traffic_for on the 167 whole numbers ``unique(round(logspace(0, 5, 200)))`` (target 1 %),
  vectorised and as scalar calls, against a vectorised Newton step on log E of the closed
  form run for 8 iterations (goal: ratio <= 2).
* servers_for on 1e4 traffics uniform in [0, 1e5] and log-uniform in [1e-3, 1e5] (target
  1 %). Goal: >= 2e5 per second.
* the older rows: n <= 200 on 1e6 pairs against gammaincc alone, and the accuracy grid;
  and one call on arrays of a network's size (10, 200, 5000 links), as the fixed point
  makes it.

``--quick`` times the slow rows on a sub-sample (a tenth of the points) and says so; the
per-point figures are then scaled, so compare them as rates.
"""

from __future__ import annotations

import argparse
import math
import pathlib
import statistics
import sys
import time

import mpmath as mp
import numpy as np
from scipy import special

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))

from erlang_mpmath import mp_erlang

from netdim.erlang import erlang_b, log_erlang_b, servers_for, traffic_for


def median_time(fn, repeats=3):
    return median_times([fn], repeats)[0]


def median_times(fns, repeats=3):
    """Median time of each function, the rounds interleaved (A B A B ...) so that a change
    in the machine's load falls on both sides of a ratio."""
    times = [[] for _ in fns]
    for _ in range(repeats):
        for fn, out in zip(fns, times, strict=True):
            t0 = time.perf_counter()
            fn()
            out.append(time.perf_counter() - t0)
    return [statistics.median(t) for t in times]


def closed_form(a, n):
    """E = pmf(n; A) / P(X <= n) straight from scipy.special (the reference, not exact)."""
    with np.errstate(all="ignore"):
        logpmf = n * np.log(a) - a - special.gammaln(n + 1.0)
        return np.exp(logpmf) / special.gammaincc(n + 1.0, a)


def wide_grid(rng, size, whole):
    a = np.exp(rng.uniform(math.log(1e-3), math.log(1e5), size))
    n = np.exp(rng.uniform(0.0, math.log(1e5 + 1.0), size)) - 1.0
    return a, (np.floor(n) if whole else n)


def worst_error(a, n, got, ref_fn=mp_erlang):
    """Largest relative error where mpmath's E >= 1e-300; count of points beyond 1e-13."""
    mp.mp.dps = 50
    worst = 0.0
    bad = 0
    for x, k, g in zip(a, n, got, strict=True):
        ex = ref_fn(x, k)
        if ex < mp.mpf("1e-300"):
            continue
        err = float(abs((mp.mpf(float(g)) - ex) / ex)) if g == g else math.inf
        worst = max(worst, err)
        bad += err > 1e-13
    return worst, bad


def row(label, t_ours, t_ref, goal):
    print(f"  {label:<46} netdim {t_ours * 1e3:9.2f} ms  reference {t_ref * 1e3:9.2f} ms  "
          f"ratio {t_ours / t_ref:6.2f}  ({goal})")


def bench_wide(rng, points, repeats, quick, sample):
    print(f"wide grid: A log-uniform 1e-3..1e5, n log-uniform 0..1e5 ({points:,} points)")
    for whole in (True, False):
        a, n = wide_grid(rng, points, whole)
        erlang_b(a[:10], n[:10])  # compile or load the kernels outside the timing
        sub = points // 10 if quick else points
        t_ours, t_ref = median_times([lambda a=a, n=n, sub=sub: erlang_b(a[:sub], n[:sub]),
                                      lambda a=a, n=n: closed_form(a, n)], repeats)
        t_ours *= points / sub
        kind = "whole n" if whole else "real n"
        note = " (timed on a tenth, scaled)" if quick else ""
        row(f"erlang_b, {kind}{note}", t_ours, t_ref, "goal <= 3")
        idx = rng.choice(points, sample, replace=False)
        worst, bad = worst_error(a[idx], n[idx], erlang_b(a[idx], n[idx]))
        cf_worst, cf_bad = worst_error(a[idx], n[idx], closed_form(a[idx], n[idx]))
        print(f"    vs mpmath on {sample} sampled points with E >= 1e-300: netdim worst "
              f"{worst:.2e} ({bad} beyond 1e-13); closed form worst {cf_worst:.2e} "
              f"({cf_bad} beyond 1e-13)")


def plain_loop(a, n):
    inv = 1.0
    for k in range(1, n + 1):
        inv = 1.0 + inv * k / a
    return 1.0 / inv


def bench_scalar(rng, repeats, quick):
    print("scalar calls")
    size = 20000
    a = rng.uniform(0.1, 250.0, size).tolist()
    n = rng.integers(0, 30, size).tolist()
    pairs = list(zip(a, n, strict=True))

    def ours():
        for x, k in pairs:
            erlang_b(x, k)

    def ref():
        for x, k in pairs:
            plain_loop(x, k)

    t_ours, t_ref = median_times([ours, ref], repeats)
    row(f"erlang_b(A, n), n < 30, {size} calls", t_ours, t_ref,
        f"goal <= 1; {size / t_ours:,.0f} calls/s against {size / t_ref:,.0f}")
    # scalar calls in a process that has used the array API (the compiled kernels loaded;
    # a first scalar call alone runs as plain Python)
    erlang_b(np.array([50.0]), np.array([60.5]))
    for whole in (True, False):
        count = 2000 if quick else 20000
        ga, gn = wide_grid(rng, count, whole)
        gp = list(zip(ga.tolist(), gn.tolist(), strict=True))
        erlang_b(*gp[0])

        def wide(gp=gp):
            for x, k in gp:
                erlang_b(x, k)

        t = median_time(wide, repeats)
        kind = "whole" if whole else "real"
        print(f"  erlang_b(A, n) on the wide grid, {kind} n <= 1e5: {count / t:12,.0f} calls/s "
              f"(goal >= 1e5)")


def ref_traffic_for(ns, target, iterations=8):
    """Newton's method on log E(e^u, n) = log target with the closed form, fixed iterations."""
    logt = math.log(target)
    u = np.log(ns) + 0.0 * ns  # start at A = n
    for _ in range(iterations):
        a = np.exp(u)
        e = closed_form(a, ns)
        g = np.log(e) - logt
        u = u - g / (ns - a * (1.0 - e))
    return np.exp(u)


def bench_inverse(rng, repeats, quick):
    print("inverse problems")
    ns = np.unique(np.round(np.logspace(0, 5, 200)))
    traffic_for(ns[:3], 0.01)
    nl = ns.tolist()
    t_vec, t_sca, t_ref = median_times([lambda: traffic_for(ns, 0.01),
                                        lambda: [traffic_for(k, 0.01) for k in nl],
                                        lambda: ref_traffic_for(ns, 0.01)], repeats)
    row(f"traffic_for, {ns.size} n up to 1e5, vectorised", t_vec, t_ref, "goal <= 2")
    row(f"traffic_for, {ns.size} n up to 1e5, scalar calls", t_sca, t_ref, "goal <= 2")
    count = 2000 if quick else 10000
    for label, traffic in (
        ("uniform 0..1e5", rng.uniform(0.0, 1e5, count)),
        ("log-uniform 1e-3..1e5", np.exp(rng.uniform(math.log(1e-3), math.log(1e5), count))),
    ):
        servers_for(traffic[:3], 0.01)
        t = median_time(lambda traffic=traffic: servers_for(traffic, 0.01), repeats)
        print(f"  servers_for, {count} traffics {label}: {t * 1e3:9.2f} ms "
              f"({count / t:12,.0f} per s, goal >= 2e5)")


def bench_small_n(rng, repeats):
    print("n <= 200 (the earlier row)")
    size = 1_000_000
    n = rng.integers(0, 201, size).astype(float)
    a = rng.uniform(0.1, 250.0, size)
    erlang_b(a[:10], n[:10])
    t_vec, t_gam = median_times([lambda: erlang_b(a, n),
                                 lambda: special.gammaincc(n + 1.0, a)], repeats)
    row("erlang_b, 1e6 pairs, n <= 200, A <= 250", t_vec, t_gam, "gammaincc alone")


def bench_network_sized(rng, repeats):
    print("arrays of a network's size (A 5..100, n A..1.5A, whole): one call")
    for size in (10, 200, 5000):
        a = rng.uniform(5.0, 100.0, size)
        n = np.round(a * rng.uniform(1.0, 1.5, size))
        erlang_b(a, n)

        times = []
        for _ in range(30):
            t0 = time.perf_counter()
            for _ in range(50):
                erlang_b(a, n)
            times.append((time.perf_counter() - t0) / 50)
        print(f"  {size:5d} elements: median {statistics.median(times) * 1e6:8.1f} us, best "
              f"{min(times) * 1e6:8.1f} us per call (30 rounds of 50 calls)")


def accuracy_grid():
    mp.mp.dps = 50
    worst = 0.0
    worst_log = 0.0
    grid_a = [1e-6, 1e-2, 0.7, 3.3, 17.0, 99.9, 512.0, 4e3, 3e4, 2e5, 1e6]
    grid_n = [0.5, 1, 3, 9.25, 30, 101, 333.3, 1000, 1001, 6000, 4e4, 3e5, 1e6]
    aa = np.array([x for x in grid_a for _ in grid_n])
    nn = np.array([float(k) for _ in grid_a for k in grid_n])
    vec = erlang_b(aa, nn)
    vlog = log_erlang_b(aa, nn)
    for x, k, v, lv in zip(aa, nn, vec, vlog, strict=True):
        ex = mp_erlang(x, k)
        lex = mp.log(ex)
        if lex != 0:
            worst_log = max(worst_log, float(abs((lv - lex) / lex)))
        if ex < mp.mpf("1e-300"):
            continue
        s = erlang_b(float(x), float(k))
        worst = max(worst, float(abs((s - ex) / ex)), float(abs((v - ex) / ex)))
    print(f"accuracy grid ({len(aa)} points): worst relative error of E (E >= 1e-300) "
          f"{worst:.2e}, of log E {worst_log:.2e}")


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--points", type=int, default=1_000_000)
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--sample", type=int, default=2000, help="points checked against mpmath")
    p.add_argument("--quick", action="store_true", help="time slow rows on a tenth")
    p.add_argument("--only", choices=("wide", "scalar", "inverse", "small", "network",
                                      "accuracy"))
    args = p.parse_args(argv)
    rng = np.random.default_rng(12345)
    rows = {
        "wide": lambda: bench_wide(rng, args.points, args.repeats, args.quick, args.sample),
        "scalar": lambda: bench_scalar(rng, args.repeats, args.quick),
        "inverse": lambda: bench_inverse(rng, args.repeats, args.quick),
        "small": lambda: bench_small_n(rng, args.repeats),
        "network": lambda: bench_network_sized(rng, args.repeats),
        "accuracy": accuracy_grid,
    }
    for name, fn in rows.items():
        if args.only in (None, name):
            fn()


if __name__ == "__main__":
    main()
