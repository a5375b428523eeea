"""Speed and accuracy figures of netdim.erlang, measured side by side in one run.

    /work/venv/bin/python tests/benchmarks/bench_erlang.py

Prints: evaluations per second of the scalar path and of the vectorised path (1e6 pairs
with n <= 200), their ratio to one scipy.special.gammaincc call over the same arrays (goal:
vectorised/gammaincc >= 0.7), the speed of servers_for over 1e4 traffics up to 1e5, and the
largest relative error against mpmath (50 digits) on a grid. Median of several repeats.
"""

from __future__ import annotations

import statistics
import time

import mpmath as mp
import numpy as np
from scipy import special

from netdim.erlang import erlang_b, log_erlang_b, servers_for, traffic_for


def median_time(fn, repeats=5):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main():
    rng = np.random.default_rng(12345)
    size = 1_000_000
    n = rng.integers(0, 201, size)
    a = rng.uniform(0.1, 250.0, size)
    nf = n.astype(float)
    erlang_b(a[:10], nf[:10])  # compile the numba kernel outside the timing

    # scalar path
    pairs = list(zip(a[:20000].tolist(), n[:20000].tolist(), strict=True))

    def scalar():
        for x, k in pairs:
            erlang_b(x, k)

    t_scalar = median_time(scalar) / len(pairs)
    pairs_small = [(x, k % 30) for x, k in pairs]

    def scalar_small():
        for x, k in pairs_small:
            erlang_b(x, k)

    t_scalar_small = median_time(scalar_small) / len(pairs_small)

    t_vec = median_time(lambda: erlang_b(a, nf))
    t_gam = median_time(lambda: special.gammaincc(nf + 1.0, a))
    print(f"scalar path, n <= 200:        {1 / t_scalar:12,.0f} evaluations/s")
    print(f"scalar path, n < 30:          {1 / t_scalar_small:12,.0f} evaluations/s")
    print(f"vectorised, 1e6 pairs n<=200: {size / t_vec:12,.0f} evaluations/s "
          f"({t_vec * 1e3:.1f} ms)")
    print(f"scipy gammaincc, same arrays: {size / t_gam:12,.0f} evaluations/s "
          f"({t_gam * 1e3:.1f} ms)")
    print(f"ratio vectorised / gammaincc speed: {t_gam / t_vec:.2f} (goal >= 0.7)")

    traffic = rng.uniform(0.0, 1e5, 10_000)
    t_sf = median_time(lambda: servers_for(traffic, 0.01), repeats=3)
    print(f"servers_for, 1e4 traffics up to 1e5 (target 1%): {t_sf:.3f} s "
          f"({traffic.size / t_sf:,.0f} per s)")
    some = traffic[:200].tolist()
    t_sfs = median_time(lambda: [servers_for(x, 0.01) for x in some], repeats=3) / len(some)
    print(f"servers_for scalar, traffic up to 1e5: {t_sfs * 1e3:.2f} ms per call")
    ns = np.arange(1, 201, dtype=float)
    t_tf = median_time(lambda: traffic_for(ns, 0.01), repeats=3)
    print(f"traffic_for, 200 server counts 1..200: {t_tf * 1e3:.1f} ms")

    mp.mp.dps = 50
    worst = 0.0
    worst_log = 0.0
    grid_a = [1e-6, 1e-2, 0.7, 3.3, 17.0, 99.9, 512.0, 4e3, 3e4, 2e5, 1e6]
    grid_n = [0.5, 1, 3, 9.25, 30, 101, 333.3, 1000, 1001, 6000, 4e4, 3e5, 1e6]
    aa = np.array([x for x in grid_a for _ in grid_n])
    nn = np.array([k for _ in grid_a for k in grid_n])
    vec = erlang_b(aa, nn)
    vlog = log_erlang_b(aa, nn)
    for x, k, v, lv in zip(aa, nn, vec, vlog, strict=True):
        ex = mp.exp(k * mp.log(x) - x - mp.log(mp.gammainc(mp.mpf(k) + 1, mp.mpf(x))))
        lex = mp.log(ex)
        if lex != 0:
            worst_log = max(worst_log, float(abs((lv - lex) / lex)))
        if ex < mp.mpf("1e-300"):
            continue
        s = erlang_b(float(x), float(k))
        worst = max(worst, float(abs((s - ex) / ex)), float(abs((v - ex) / ex)))
    print(f"largest relative error vs mpmath, {len(aa)} grid points, E >= 1e-300: {worst:.2e}")
    print(f"largest relative error of log E vs mpmath (all points): {worst_log:.2e}")


if __name__ == "__main__":
    main()
