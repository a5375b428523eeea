"""Benchmark of lower bounds under alternate routing: the LP bound against the loss-flow bound.

On the alternate-routing meshes of ``bench_size.mesh`` (full mesh, direct first route,
3 two-hop alternatives, reservation 2, traffic U(2, 30) E, targets 1 %) prints, per size,
the sizer's LP bound "capacity >= carried load" and :func:`netdim.dimension.altbound.
alternate_bound`, their times (median of ``--repeat`` runs) and, with ``--plans`` (slow,
10 and 20 sites by default), the cost of the plan from :func:`netdim.dimension.dimension`
and the gap of each bound to it. Goal (issue 5): gap <= 0.5 % at 50 sites within 60 s.

Run: python tests/benchmarks/bench_bound.py [--sizes 10,20,30,50] [--plans 10,20]
     [--time-limit 50] [--res auto|on|off] [--integer] [--repeat 1]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from bench_size import mesh  # noqa: E402

from netdim.dimension import dimension  # noqa: E402
from netdim.dimension.altbound import alternate_bound  # noqa: E402
from netdim.dimension.sizer import _flow_bound  # noqa: E402
from netdim.dimension.space import LinkSpace  # noqa: E402


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
    ap.add_argument("--time-limit", type=float, default=50.0)
    ap.add_argument("--res", choices=("auto", "on", "off"), default="auto",
                    help="reservation-chain cuts (auto: on up to 500 links)")
    ap.add_argument("--integer", action="store_true", help="end with the MILP")
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    plans = {int(s) for s in args.plans.split(",") if s}
    for n in [int(s) for s in args.sizes.split(",") if s]:
        net = mesh(n, policy="alternate")
        space = LinkSpace.of(net)
        res = {"auto": None, "on": True, "off": False}[args.res]

        def flow(net=net, space=space):
            return _flow_bound(net, space, True)

        def loss_flow(net=net, space=space, res=res):
            return alternate_bound(net, space, time_limit=args.time_limit,
                                   reservation_cuts=res, integer=args.integer)

        lp, t_lp = timed(flow, args.repeat)
        (alt, kind), t_alt = timed(loss_flow, args.repeat)
        line = (f"mesh {n:3d} alternate links={len(net.links):5d} LP bound={lp:11.1f} "
                f"({t_lp:6.2f} s)  loss-flow bound={alt:11.1f} ({t_alt:6.2f} s, {kind})  "
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
