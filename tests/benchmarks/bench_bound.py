"""Benchmark of lower bounds under alternate routing: the LP bound against the loss-flow bound.

On the alternate-routing meshes of ``bench_size.mesh`` (full mesh, direct first route,
3 two-hop alternatives, reservation 2, traffic U(2, 30) E, targets 1 %) prints, per size,
the LP bound "capacity >= carried load" (:func:`netdim.dimension.carried_load_bound`) and
:func:`netdim.dimension.loss_flow_bound`, their times (median of ``--repeat`` runs), whether
the time safety stop fired, and, with ``--plans`` (slow, 10 and 20 sites by default), the
cost of the plan from :func:`netdim.dimension.dimension` and the gap of each bound to it.
The loss-flow bound's work is bounded by rounds and solver nodes, so ``--repeat`` runs give
one value; ``--time-limit`` is its safety stop.

Run: python tests/benchmarks/bench_bound.py [--sizes 10,20,30,50] [--plans 10,20]
     [--time-limit 300] [--res auto|on|off] [--integer] [--repeat 1] [--nodes 500]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from bench_size import mesh

from netdim.dimension import (
    SizingChoices,
    carried_load_bound,
    dimension,
    loss_flow_bound,
)


def timed(fn, repeat):
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return out, statistics.median(times)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="10,20,30,50")
    ap.add_argument("--plans", default="10,20", help="sizes to also size (slow); '' for none")
    ap.add_argument("--time-limit", type=float, default=300.0, help="safety stop, seconds")
    ap.add_argument("--nodes", type=int, default=500, help="nodes of each MILP round")
    ap.add_argument("--res", choices=("auto", "on", "off"), default="auto",
                    help="reservation-chain cuts (auto: on up to 500 links)")
    ap.add_argument("--integer", action="store_true", help="end with the MILP")
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    plans = {int(s) for s in args.plans.split(",") if s}
    for n in [int(s) for s in args.sizes.split(",") if s]:
        net = mesh(n, policy="alternate")
        space = SizingChoices.from_network(net)
        res = {"auto": None, "on": True, "off": False}[args.res]

        def flow(net=net, space=space):
            return carried_load_bound(net, space, all_routes=True, integer=False).value

        def loss_flow(net=net, space=space, res=res):
            return loss_flow_bound(net, space, time_limit=args.time_limit,
                                   reservation_cuts=res, integer=args.integer,
                                   node_limit=args.nodes)

        lp, t_lp = timed(flow, args.repeat)
        bounds = []

        def many(fn=loss_flow, bounds=bounds):
            b = fn()
            bounds.append(b.value)
            return b

        b, t_alt = timed(many, args.repeat)
        alt = b.value
        same = "one value" if len(set(bounds)) == 1 else f"values {sorted(set(bounds))}"
        line = (f"mesh {n:3d} alternate links={len(net.links):5d} LP bound={lp:11.1f} "
                f"({t_lp:6.2f} s)  loss-flow bound={alt:11.1f} ({t_alt:6.2f} s, {b.kind}, "
                f"time stop {'fired' if b.stopped_by_time else 'not fired'}, {same})  "
                f"ratio={alt / lp:.4f}")
        if n in plans:
            t = time.perf_counter()
            plan = dimension(net)
            t_plan = time.perf_counter() - t
            line += (f"  plan={plan.cost:11.1f} ({t_plan:6.1f} s)  "
                     f"gap LP={100 * (1 - lp / plan.cost):5.2f}% "
                     f"gap loss-flow={100 * (1 - alt / plan.cost):5.2f}%")
        print(line, flush=True)


if __name__ == "__main__":
    main()
