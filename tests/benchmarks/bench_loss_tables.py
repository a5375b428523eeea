"""Time of the sizer's Erlang B tables, this tree beside another checkout, in one run.

    python tests/benchmarks/bench_loss_tables.py --against /path/to/other/checkout [--repeats 7]

The tables that issue 13 rebuilt on :func:`netdim.erlang.erlang_b_table` /
:func:`netdim.erlang.erlang_b_runs` (same values to the last bit): ``LossTable`` (the
secant MILP's and the local search's per-link tables) and the loss cuts' hull tables.
Each round runs one child process per tree (this one and ``--against``, alternately, so that
the machine's load falls on both), which builds every table once to compile and load, then
times each case; the printed figures are medians over the rounds of each case's time, and
the ratio is this tree's over the other's; "values" says whether the two trees' results
(every array, as bytes) are identical. Cases:

* ``LossTable``, 19,900 links (the 200-site mesh's count) offered 5-60 E, modules 1-4;
* ``LossTable``, 2,001 links, one of them offered 5e4 E (its window alone is 5e4 long);
* ``LossTable.g`` at 20,000 capacities between module counts (computed on demand);
* ``erlang_hull_faces`` and ``reservation_hull_faces`` of a link offered up to 800 E.
"""

from __future__ import annotations

import argparse
import json
import os
import pathlib
import statistics
import subprocess
import sys

HERE = pathlib.Path(__file__).resolve().parents[2]

CHILD = r"""
import hashlib, json, sys, time
import numpy as np
from netdim.dimension import loss_cuts as lc
from netdim.dimension.choices import LossTable

rng = np.random.default_rng(7)
mesh = (rng.uniform(5, 60, 19_900), rng.integers(0, 30, 19_900), rng.integers(1, 5, 19_900))
heavy = np.r_[5e4, np.ones(2000)]
odd_t = LossTable(rng.uniform(5, 60, 100), np.zeros(100, int), np.full(100, 3))
odd_j = rng.integers(0, 100, 20_000)
odd_n = 3 * rng.integers(1, 20, 20_000) + 1

def odd():
    return [odd_t.g(j, odd_n[odd_j == j]) for j in range(100)]


def digest(value):  # sha256 of every array of a result, to compare two trees
    h = hashlib.sha256()
    if isinstance(value, LossTable):
        value = [value._values, value.g_all(value.installed + 3 * value.module)]
    for part in value if isinstance(value, (list, tuple)) else [value]:
        h.update(np.ascontiguousarray(part).tobytes())
    return h.hexdigest()[:16]

cases = {
    "LossTable, 19,900 links": lambda: LossTable(*mesh),
    "LossTable, 2,001 links, one heavy": lambda: LossTable(heavy),
    "LossTable.g between module counts": odd,
    "erlang_hull_faces": lambda: lc.erlang_hull_faces(800.0, 0, 1, 2000, shift=2),
    "reservation_hull_faces": lambda: lc.reservation_hull_faces((1, 1), 300.0, 0, 1, 2000,
                                                                400.0, 3),
}
values = {name: digest(fn()) for name, fn in cases.items()}  # compile, load, warm
out = {}
for name, fn in cases.items():
    t0 = time.perf_counter()
    fn()
    out[name] = time.perf_counter() - t0
print(json.dumps({"times": out, "values": values}))
"""


def run_child(tree):
    env = dict(os.environ, PYTHONPATH=str(tree))
    res = subprocess.run([sys.executable, "-c", CHILD], cwd=tree, env=env, check=True,
                         capture_output=True, text=True)
    return json.loads(res.stdout.strip().splitlines()[-1])


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--against", required=True, type=pathlib.Path, help="the other checkout")
    p.add_argument("--repeats", type=int, default=7)
    args = p.parse_args(argv)
    trees = {"this": HERE, "other": args.against.resolve()}
    times = {k: [] for k in trees}
    for _ in range(args.repeats):
        for key, tree in trees.items():
            times[key].append(run_child(tree))
    print(f"medians of {args.repeats} rounds, ms (this: {trees['this']}, other: "
          f"{trees['other']})")
    print(f"{'case':40s} {'this':>9s} {'other':>9s} {'ratio':>6s}  values")
    for case in times["this"][0]["times"]:
        a = statistics.median(r["times"][case] for r in times["this"]) * 1e3
        b = statistics.median(r["times"][case] for r in times["other"]) * 1e3
        same = times["this"][0]["values"][case] == times["other"][0]["values"][case]
        print(f"{case:40s} {a:9.2f} {b:9.2f} {a / b:6.2f}  "
              f"{'identical' if same else 'DIFFERENT'}")


if __name__ == "__main__":
    main()
