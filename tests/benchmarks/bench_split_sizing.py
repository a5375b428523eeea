"""Plans sized under the peaked model with either split of a link's overflow blocking (a
benchmark, not a test).

Run: ``python tests/benchmarks/bench_split_sizing.py [--calls 4000000] [--sites 10 20 50]``

Sizes the bundled networks and the meshes of ``bench_accuracy.py`` (normal load, targets 1 %)
under ``--model peaked-fixed-point`` twice: with the default split (every overflow stream
meets the class's blocking) and with the split in proportion to peakedness, which the sizer
cannot be asked for, so this script switches the link model's rule for the second run. Each
plan is simulated (seed 0); it prints cost, met / unclear / missed and the model / simulation
median over the demands simulated at 1e-3 or more.
"""

from __future__ import annotations

import argparse
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

import netdim.peaked as pk
from netdim.dimension import dimension
from netdim.evaluate import evaluate
from netdim.netfile import read_network

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_accuracy import _with_targets, mesh  # noqa: E402

_DEFAULT = pk.LinkFactors.stream_blocking


def _by_peakedness(self, link, is_overflow, peakedness):
    return _DEFAULT(replace(self, split="peakedness"), link, is_overflow, peakedness)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--calls", type=int, default=4_000_000)
    ap.add_argument("--sites", type=int, nargs="+", default=[10, 20, 50])
    args = ap.parse_args(argv)
    nets = [(n, read_network(ROOT / "networks" / f"{n}.yaml"))
            for n in ("three-villages", "campus-parking", "regional-telephone")]
    nets += [(f"mesh {n} sites", _with_targets(mesh(n), 0.01)) for n in args.sites]
    print(f"{'network':20} {'split':10} {'cost':>9} {'met/unclear/missed':>19} "
          f"{'model/sim':>9} {'size cpu s':>10}")
    for name, net in nets:
        for split, rule in (("equal", _DEFAULT), ("peakedness", _by_peakedness)):
            pk.LinkFactors.stream_blocking = rule
            try:
                t = time.process_time()
                plan = dimension(net, model="peaked-fixed-point")
                t = time.process_time() - t
            finally:
                pk.LinkFactors.stream_blocking = _DEFAULT
            sim = evaluate(net, plan.capacities, method="simulate", calls=args.calls, seed=0)
            v = sim.verdicts()
            sel = sim.blocking >= 1e-3
            r = np.median(plan.evaluation.blocking[sel] / sim.blocking[sel]) if sel.any() \
                else float("nan")
            counts = "/".join(str(int(np.sum(v == w))) for w in ("met", "unclear", "missed"))
            print(f"{name:20} {split:10} {plan.cost:9g} {counts:>19} {r:9.2f} {t:10.1f}",
                  flush=True)


if __name__ == "__main__":
    main()
