"""Benchmark of least-cost sizing (`netdim.dimension`): quality and time.

Full meshes of 10, 20, 30 and 50 sites (100 with --big) with direct first routes and 2-hop
alternatives, built directly with the model dataclasses, and the demo networks in
networks/*.yaml. Prints cost, lower bound, gap, baseline cost, saving, time and outer
iterations. Goals (issue 5): gap <= 0.5 % at 50 sites within 60 s, 100 sites within 10
minutes, cost below the baseline on every case.

With ``--margin-study`` it sizes each demo network and the alternate meshes of ``--sizes``
once, then calibrates that plan by simulation with each of ``--margins`` and ``--seeds``,
printing how many demands end met, unclear and missed, and the calibrated cost.

Run: python tests/benchmarks/bench_size.py [--big] [--alternate] [--sizes 10,20]
     [--verify] [--margins 0,0.1,0.2] [--margin-study --seeds 0,1]
"""

from __future__ import annotations

import argparse
import glob
import time

import numpy as np

from netdim.dimension import SizingOptions, VerifyOptions, dimension
from netdim.dimension.calibrate import calibrate_by_simulation
from netdim.model import Demand, Link, Network, Route, Routing, Site


def mesh(n, seed=1, policy="fixed", alternatives=3, load=(2.0, 30.0),
         tandem_below=8.0):
    """A full mesh of n sites on a unit square, cost per circuit = 1 + 4 x distance."""
    rng = np.random.default_rng(seed)
    xy = rng.random((n, 2))
    sites = tuple(Site(f"S{i}", x=float(xy[i, 0]), y=float(xy[i, 1])) for i in range(n))
    links, pos = [], {}
    for i in range(n):
        for j in range(i + 1, n):
            dist = float(np.hypot(*(xy[i] - xy[j])))
            pos[(i, j)] = pos[(j, i)] = len(links)
            links.append(Link(f"S{i}-S{j}", (f"S{i}", f"S{j}"), cost_per_module=1 + 4 * dist,
                              length=dist))
    demands = []
    for i in range(n):
        for j in range(i + 1, n):
            direct = Route((pos[(i, j)],), (1.0,))
            vias = sorted((m for m in range(n) if m not in (i, j)),
                          key=lambda m: links[pos[(i, m)]].length + links[pos[(m, j)]].length)
            alts = tuple(Route((pos[(i, m)], pos[(m, j)]), (1.0, 1.0))
                         for m in vias[:alternatives])
            traffic = float(rng.uniform(*load))
            routes = (direct,) + alts
            if policy == "fixed" and traffic < tandem_below and alts:
                # Small demands go through a tandem (their best 2-hop route) under fixed
                # routing, as in a hierarchical network; the direct link stays unused.
                routes = alts[:1]
            demands.append(Demand(f"S{i}-S{j}", (f"S{i}", f"S{j}"), traffic, routes=routes))
    return Network(f"mesh{n}", sites, tuple(links), tuple(demands),
                   routing=Routing(policy=policy, reservation=2 if policy == "alternate" else 0))


def run(name, net, **kw):
    t = time.perf_counter()
    p = dimension(net, **kw)
    s = time.perf_counter() - t
    print(f"{name:28s} {p.model:12s} links={len(net.links):5d} cost={p.cost:12.1f} "
          f"bound={p.lower_bound:12.1f} gap={100 * p.gap:6.3f}% baseline={p.baseline_cost:12.1f} "
          f"saving={100 * p.saving:6.2f}% time={s:7.1f}s iter={p.iterations} "
          f"milp={p.details.get('milp_seconds', 0):.1f}s evals={p.details.get('evaluations')} "
          f"status={p.status}", flush=True)
    return p


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--big", action="store_true", help="also 100 sites (long)")
    ap.add_argument("--alternate", action="store_true", help="also alternate routing")
    ap.add_argument("--sizes", default="10,20,30,50")
    ap.add_argument("--solver", default="highs")
    ap.add_argument("--no-demo", action="store_true")
    ap.add_argument("--verify", action="store_true",
                    help="also the demos with verify='simulate' (cost and simulated "
                    "worst blocking/target before and after calibration)")
    ap.add_argument("--margins", default="0.05",
                    help="verification margins to compare, e.g. 0,0.05,0.1")
    ap.add_argument("--margin-study", action="store_true",
                    help="only: size each demo and the alternate meshes of --sizes once, then "
                    "calibrate that plan with each of --margins and --seeds (how many demands "
                    "end met, unclear, missed, and what it costs)")
    ap.add_argument("--seeds", default="0")
    args = ap.parse_args()
    if args.margin_study:
        _margin_study(args)
        return
    margins = [float(m) for m in args.margins.split(",") if m]
    sizes = [int(s) for s in args.sizes.split(",") if s]
    if args.big:
        sizes.append(100)
    for n in sizes:
        run(f"mesh {n} fixed", mesh(n), solver=args.solver)
    if args.alternate:
        for n in sizes:
            run(f"mesh {n} alternate", mesh(n, policy="alternate"), solver=args.solver)
        if args.verify:
            for n in (n for n in sizes if n <= 20):
                for m in margins:
                    p = run(f"mesh {n} alternate verify m={m:g}", mesh(n, policy="alternate"),
                            solver=args.solver, verify=VerifyOptions(margin=m))
                    _verify_line(p)
    if not args.no_demo:
        from netdim.netfile import read_network

        for path in sorted(glob.glob("networks/*.yaml")):
            net = read_network(path)
            for model in ("fixed-point", "conservative"):
                run(path, net, model=model, solver=args.solver)
            if args.verify:
                for restart in ("warm", "full"):
                    for m in margins:
                        p = run(f"{path} verify/{restart} m={m:g}", net, solver=args.solver,
                                verify=VerifyOptions(restart=restart, margin=m))
                        _verify_line(p)


def _margin_study(args):
    from netdim.netfile import read_network

    margins = [float(m) for m in args.margins.split(",") if m]
    seeds = [int(x) for x in args.seeds.split(",") if x]
    nets = [(path, read_network(path)) for path in sorted(glob.glob("networks/*.yaml"))]
    nets += [(f"mesh {n} alternate", mesh(n, policy="alternate"))
             for n in (int(x) for x in args.sizes.split(",") if x)]
    for name, net in nets:
        plan = run(name, net, solver=args.solver)
        for m in margins:
            for seed in seeds:
                t = time.perf_counter()
                p = calibrate_by_simulation(net, plan, SizingOptions(solver=args.solver),
                                            VerifyOptions(margin=m, seed=seed))
                d = p.details
                print(f"{'':4s}{name:28s} margin={m:<5g} seed={seed} cost={p.cost:10.1f} "
                      f"(+{100 * (p.cost / plan.cost - 1):5.2f}% on the plan) "
                      f"met={len(d['verify_met'])} unclear={len(d['verify_unclear'])} "
                      f"missed={len(d['verify_missed'])} of {len(net.demands)} "
                      f"rounds={d['verify_rounds']} calls(last)={d['verify_calls_last']} "
                      f"time={time.perf_counter() - t:.1f}s", flush=True)


def _verify_line(p):
    d = p.details
    hist = d["verify_history"]
    print(f"{'':28s} unverified cost={d['unverified_cost']:.1f} verified cost={p.cost:.1f} "
          f"(+{100 * (p.cost / d['unverified_cost'] - 1):.2f}%) "
          f"simulated worst blocking/target {hist[0][1]:.3f} -> {hist[-1][1]:.3f} "
          f"rounds={d['verify_rounds']} calls(last)={d['verify_calls_last']} "
          f"met={len(d['verify_met'])} missed={len(d['verify_missed'])} "
          f"unclear={len(d['verify_unclear'])} verify time={d['verify_seconds']:.1f}s",
          flush=True)


if __name__ == "__main__":
    main()
