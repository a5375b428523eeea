"""Speed of the reduced-load evaluator on full meshes (a benchmark, not a test).

Run: ``python tests/benchmarks/bench_fixed_point.py [--sites 50 100 200] [--repeats 3]``

For every mesh (each pair of sites has a direct link and a demand routed direct first, then
over up to 3 two-link routes via other sites), at a load near the 1 % targets and in overload,
under fixed and alternate routing, it prints side by side (medians of repeats):

- iterations and total time of ``fixed_point``: cold (routes flattened first) and warm (the
  route arrays memoised on the network, as in a sizer's loop over capacities);
- time per iteration and its ratio to the floor: one sparse product over all route steps plus
  one vectorised link-model evaluation (Erlang B, or the reservation chain under alternate
  routing) on every link;
- time per iteration of a straightforward per-demand loop over Python dicts doing the same
  sweep, and the speed-up against it.

Goals at 200 sites: within 2x of the per-iteration floor, at least 20x faster than the loop.

``--repeat-calls``: the sizer's case, one network evaluated again and again from the last
solution (``FixedPoint(network)(capacities, start=previous)``): per call, the whole time,
the iteration's (the damped sweeps until the change is below tol, and the one sweep that
gives the figures at the solution) and the rest (capacities, result); also
``evaluate(network, start=previous)`` with the network's own capacities. Goal: the rest
under 1 ms at 200 sites.

``--multirate``: also the same meshes with every third demand a 4-unit class, single-rate
against two-class times per iteration, fixed and alternate routing (multi-rate under
alternate routing evaluates the reservation link one link at a time).

``--reservation-link``: also the single-rate reservation link on its own, the log-space path
(taken on at most 256 links) against the loop over states, per call (medians), on link sets
of several sizes, and the whole evaluation of the bundled campus network (5 links of up to
400 spaces) both ways.
"""

from __future__ import annotations

import argparse
import itertools
import statistics
import time

import numpy as np
from scipy import sparse

from netdim.erlang import erlang_b
from netdim.evaluate import FixedPoint, evaluate
from netdim.evaluate._reduced_load import ReducedLoad, RouteArrays
from netdim.evaluate.fixed_point import fixed_point
from netdim.model import Demand, Link, Network, Route, Routing, Site


def problem(net):
    """The reduced-load equations of ``net`` at its own capacities."""
    return ReducedLoad(RouteArrays.of(net), net.capacities())


def mesh(n_sites, traffic, capacity, n_alt=3, policy="fixed", reservation=2):
    sites = tuple(Site(f"S{i:03d}") for i in range(n_sites))
    pairs = list(itertools.combinations(range(n_sites), 2))
    index = {p: j for j, p in enumerate(pairs)}

    def li(i, j):
        return index[(min(i, j), max(i, j))]

    links = tuple(Link(f"L{i}-{j}", (sites[i].id, sites[j].id), capacity) for i, j in pairs)
    rng = np.random.default_rng(1)
    demands = []
    for i, j in pairs:
        routes = [Route((li(i, j),), (1.0,))]
        others = [k for k in range(n_sites) if k not in (i, j)]
        for k in rng.choice(others, size=min(n_alt, len(others)), replace=False):
            routes.append(Route((li(i, int(k)), li(int(k), j)), (1.0, 1.0)))
        demands.append(Demand(f"D{i}-{j}", (sites[i].id, sites[j].id), traffic,
                              routes=tuple(routes)))
    return Network(f"mesh{n_sites}", sites, links, tuple(demands),
                   routing=Routing(policy=policy, reservation=reservation))


def multirate(net, every=3, width=4):
    """The mesh with every ``every``-th demand a ``width``-unit call class."""
    from dataclasses import replace

    ds = tuple(replace(d, bandwidth=width, traffic=d.traffic / width) if i % every == 0 else d
               for i, d in enumerate(net.demands))
    return replace(net, demands=ds)


def multirate_section(sites, repeats):
    head = (f"{'sites':>5} {'policy':>9} {'classes':>7} {'iter':>5} {'total s':>8} "
            f"{'ms/iter':>8} {'x single':>8}")
    print()
    print(head)
    print("-" * len(head))
    for n in sites:
        for policy in ("fixed", "alternate"):
            single = None
            for label, net in (("1", mesh(n, 20.0, 30, policy=policy)),
                               ("1+4", multirate(mesh(n, 20.0, 30, policy=policy)))):
                t, ev = median_time(lambda net=net: fixed_point(net, start="idle"), repeats)
                per_it = t / ev.iterations
                single = per_it if single is None else single
                print(f"{n:>5} {policy:>9} {label:>7} {ev.iterations:>5} {t:>8.3f} "
                      f"{per_it * 1e3:>8.2f} {per_it / single:>8.1f}", flush=True)


#: The clock of every timing: wall time, or this process's CPU time (``--clock cpu``: steadier
#: on a machine shared with other work, where waiting for a core inflates wall time).
CLOCK = time.perf_counter


def median_time(fn, repeats):
    times = []
    out = None
    for _ in range(repeats):
        t0 = CLOCK()
        out = fn()
        times.append(CLOCK() - t0)
    return statistics.median(times), out


def floor_per_iteration(net, repeats):
    """One sparse product over every step plus one vectorised link-model evaluation."""
    prob = problem(net)
    a = prob.a
    n_steps = len(a.step_slot)
    m = sparse.csr_matrix((np.ones(n_steps), (a.step_slot, np.arange(n_steps))),
                          shape=(a.n_slots, n_steps))
    x = np.random.default_rng(0).random(n_steps)
    loads = np.asarray(m @ x).reshape(a.n_links, a.n_streams)
    caps = prob.caps

    if a.alternate:
        from netdim.linkmodels import reservation_link_many

        res = net.reservations()

        def model():
            return reservation_link_many(loads[:, 0] * 20, loads[:, 1] * 5, caps, res)
    else:
        def model():
            return erlang_b(loads[:, 0] * 20, caps)

    def once():
        m @ x
        model()

    t, _ = median_time(lambda: [once() for _ in range(10)], repeats)
    return t / 10


def reservation_scalar(first, over, c, r):
    """Birth-death chain of one link with trunk reservation, plain Python."""
    p = [1.0]
    for k in range(c):
        lam = first + (over if k + 1 <= c - r else 0.0)
        p.append(p[-1] * lam / (k + 1))
    total = sum(p)
    return p[c] / total, sum(p[max(c - r, 0):]) / total


def loop_per_iteration(net, repeats, sweeps=2):
    """A straightforward sweep: per-demand Python loop over dicts, scalar link models."""
    caps = {link.id: link.capacity for link in net.links}
    ids = [link.id for link in net.links]
    alternate = net.routing.policy == "alternate"
    res = dict(zip(ids, net.reservations(), strict=True))
    b1 = dict.fromkeys(ids, 0.0)
    b2 = dict.fromkeys(ids, 0.0)
    def sweep():
        first = dict.fromkeys(ids, 0.0)
        over = dict.fromkeys(ids, 0.0)
        for d in net.demands:
            routes = d.routes if alternate else d.routes[:1]
            reach = 1.0
            for k, r in enumerate(routes):
                bl = b1 if k == 0 else b2
                route_ids = [ids[j] for j in r.links]
                q = 1.0
                for lid in route_ids:
                    q *= 1.0 - bl[lid]
                for lid, h in zip(route_ids, r.holdings, strict=True):
                    rest = 1.0
                    for other in route_ids:
                        if other != lid:
                            rest *= 1.0 - bl[other]
                    load = d.traffic * reach * (h / d.holding) * rest
                    if k == 0:
                        first[lid] += load
                    else:
                        over[lid] += load
                reach *= 1.0 - q
        for lid in ids:
            if alternate:
                b1[lid], b2[lid] = reservation_scalar(first[lid], over[lid], caps[lid],
                                                      int(res[lid]))
            else:
                b1[lid] = b2[lid] = float(erlang_b(first[lid], caps[lid]))

    t, _ = median_time(lambda: [sweep() for _ in range(sweeps)], max(1, repeats // 2))
    return t / sweeps


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sites", type=int, nargs="+", default=[50, 100, 200])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--policies", nargs="+", default=["fixed", "alternate"])
    ap.add_argument("--multirate", action="store_true",
                    help="also time two call classes against one")
    ap.add_argument("--reservation-link", action="store_true",
                    help="also time the reservation link's two paths")
    ap.add_argument("--repeat-calls", action="store_true",
                    help="only the per-call time of repeated evaluations (a sizer's loop)")
    ap.add_argument("--clock", choices=("wall", "cpu"), default="wall",
                    help="time by the wall clock (default) or by this process's CPU time")
    args = ap.parse_args(argv)
    global CLOCK
    CLOCK = time.process_time if args.clock == "cpu" else time.perf_counter
    if args.repeat_calls:
        repeat_section(args.sites, max(args.repeats, 15), args.policies)
        return
    head = (f"{'sites':>5} {'policy':>9} {'load':>5} {'links':>6} {'steps':>7} {'iter':>5} "
            f"{'cold s':>7} {'warm s':>7} {'ms/iter':>8} {'floor ms':>8} {'x floor':>7} "
            f"{'loop ms':>9} {'speed-up':>8}")
    print(head)
    print("-" * len(head))
    # 20 E on 30 circuits: E(20, 30) ~ 0.0085, near a 1 % target; 1.5x and 3x: overload
    for n in args.sites:
        for policy in args.policies:
            for label, traffic in (("near", 20.0), ("1.5x", 30.0), ("3x", 60.0)):
                net = mesh(n, traffic, 30, policy=policy)
                t0 = time.perf_counter()
                ev = fixed_point(net, start="idle")  # a fresh network: nothing memoised
                cold = time.perf_counter() - t0
                t, ev = median_time(lambda net=net: fixed_point(net, start="idle"), args.repeats)
                prob = problem(net)
                zero = np.zeros((prob.a.n_links, prob.a.n_streams))
                t_solve, _ = median_time(lambda p=prob, z=zero: p.solve(z, 1e-10, 1000, "b"),
                                         args.repeats)
                per_it = t_solve / ev.iterations
                floor = floor_per_iteration(net, args.repeats)
                loop = loop_per_iteration(net, args.repeats)
                a = prob.a
                print(f"{n:>5} {policy:>9} {label:>5} {a.n_links:>6} {len(a.step_slot):>7} "
                      f"{ev.iterations:>5} {cold:>7.3f} {t:>7.3f} {per_it * 1e3:>8.2f} "
                      f"{floor * 1e3:>8.2f} {per_it / floor:>7.2f} {loop * 1e3:>9.1f} "
                      f"{loop / per_it:>8.1f}",
                      flush=True)
    if args.multirate:
        multirate_section(args.sites, args.repeats)
    if args.reservation_link:
        reservation_section(max(args.repeats, 5))


def repeat_section(sites, repeats, policies):
    """Per call of a sizer's loop: one network, capacities changed a little, warm start.

    ``call``: ``FixedPoint(net)(trial, start=previous)``, the sizer's step. The rest (all but
    the iteration) is measured where the iteration is shortest, so that its noise does not
    swamp it: a call started from the solution at the same capacities (one sweep and one
    link-model evaluation to see the change is below tol), less that iteration and the
    sweep that gives the figures, timed alone.
    """
    head = (f"{'sites':>5} {'policy':>9} {'iter':>4} {'call ms':>8} {'1-iter call':>11} "
            f"{'iteration':>9} {'rest ms':>8} {'evaluate() ms':>13}")
    print(f"repeated calls on one network (medians of {repeats}, "
          f"{'CPU' if CLOCK is time.process_time else 'wall'} time)")
    print(head)
    print("-" * len(head))
    for n in sites:
        for policy in policies:
            net = mesh(n, 20.0, 30, policy=policy)
            caps = net.capacities()
            fp = FixedPoint(net)
            prev = fp(caps)
            # the sizer's trial plans differ from the last one by a module or two
            trial = caps.copy()
            trial[::7] += 1
            t_call, ev = median_time(lambda fp=fp, k=trial, p=prev: fp(k, start=p), repeats)
            sol = fp(trial, start=prev)
            t_one, one = median_time(lambda fp=fp, k=trial, p=sol: fp(k, start=p), repeats)
            t_eval, _ = median_time(lambda net=net, p=prev: evaluate(net, start=p), repeats)
            prob = ReducedLoad(RouteArrays.of(net), trial)
            state = sol.details["link_state"]

            def iteration(prob=prob, state=state):
                B, q, lq, *_ = prob.solve(state, 1e-10, 1000, "b")
                prob.sweep(q, logq=lq)  # the figures at the solution

            t_it, _ = median_time(iteration, repeats)
            print(f"{n:>5} {policy:>9} {ev.iterations:>4} {t_call * 1e3:>8.2f} "
                  f"{t_one * 1e3:>11.2f} {t_it * 1e3:>9.2f} {(t_one - t_it) * 1e3:>8.2f} "
                  f"{t_eval * 1e3:>13.2f}", flush=True)
            assert one.iterations == 1


def reservation_section(repeats):
    """The reservation link's log-space path against its loop over states, side by side."""
    import netdim.linkmodels as lm
    from netdim.netfile import read_network

    def both(fn):
        times, saved = [], lm._LOG_LINKS
        try:
            for limit in (saved, 0):  # the log-space path, then the loop over states
                lm._LOG_LINKS = limit
                fn()  # warm (imports, caches)
                times.append(median_time(fn, repeats)[0])
        finally:
            lm._LOG_LINKS = saved
        return times

    print()
    head = f"{'links':>6} {'capacity':>9} {'log ms':>8} {'loop ms':>8} {'loop/log':>8}"
    print("reservation link, one call (medians)")
    print(head)
    print("-" * len(head))
    rng = np.random.default_rng(0)
    for n, cmax in ((5, 150), (5, 400), (45, 40), (190, 45), (256, 60)):
        f = rng.uniform(1, 0.8 * cmax, n)
        o = rng.uniform(0, 10, n)
        c = rng.integers(cmax // 2, cmax + 1, n)
        r = np.full(n, 2)
        t_log, t_loop = both(lambda f=f, o=o, c=c, r=r: lm.reservation_link_many(f, o, c, r))
        print(f"{n:>6} {cmax:>9} {t_log * 1e3:>8.3f} {t_loop * 1e3:>8.3f} "
              f"{t_loop / t_log:>8.1f}")
    net = read_network("networks/campus-parking.yaml")
    t_log, t_loop = both(lambda: fixed_point(net))
    print(f"campus-parking evaluation (both starts): log {t_log * 1e3:.1f} ms, loop "
          f"{t_loop * 1e3:.1f} ms, ratio {t_loop / t_log:.1f}")


if __name__ == "__main__":
    main()
