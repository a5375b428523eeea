"""Accuracy and speed of the day methods, measured side by side in one run (not a test).

    python tests/benchmarks/bench_daily.py [--repeats 3] [--quick]

Prints:

1. the issue's park (arrivals 5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0 per hour, mean
   stay 2 h, empty at the start) at 70, 76 and 78 spaces: worst period and lost fraction
   of the exact chain (uniformization and ODE) and of the two network methods, with the
   ratios method / exact (goal: within 15 % at 70 and 76) and the times;
2. the least size for 1 % in the worst period and for 1 % of the day's arrivals, exact and
   by each network method, against Erlang B at the busy hour;
3. a tandem of two links with a transit demand, heavily and lightly loaded, against its
   exact transient chain (every route state enumerated; scipy.sparse.linalg.expm_multiply
   on the generator augmented with one column per demand gathering its loss probability),
   ratios per demand;
4. the exact chain's time for 100 to 1000 units and 24 or 96 periods, both solvers, from
   empty and cyclic (goal: fast enough to be the default for one resource);
5. the network methods' time on the bundled networks (alternate routing) and on the
   regional network with first routes only;
6. the simulation over the day (thinning) against the exact chain on the issue's park, and
   against the network methods on the campus day (examples/campus_day.yaml) at its file's
   capacities and at a tighter plan: point, 95 % interval, ratio method / simulated, inside
   or not; times (``--sim-days`` days per run).

Medians of ``--repeats`` runs; ``--quick`` skips the slow ODE timings at 1000 units.
"""

from __future__ import annotations

import argparse
import dataclasses
import itertools
import pathlib
import statistics
import time

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import expm_multiply

from netdim import read_network
from netdim.daily_loads import day_reduced_load, day_single_resource
from netdim.erlang import servers_for
from netdim.evaluate import evaluate
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.netfile import loads_network
from netdim.transient import day_loss, day_servers

WAVE = [5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]
ROOT = pathlib.Path(__file__).resolve().parents[2]


def timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return out, statistics.median(times)


def park(capacity):
    return Network("park", (Site("G"), Site("P")), (Link("P", ("G", "P"), capacity),),
                   (Demand("cars", ("G", "P"), 90.0, 2.0, routes=(Route((0,), (2.0,)),)),))


# --------------------------------------------------------------------------------------------
# 1-2: the park


def park_figures(repeats):
    print("1. The issue's park: worst period and lost fraction, method / exact")
    print(f"{'spaces':>6} {'method':>15} {'peak':>9} {'period':>6} {'lost':>9} "
          f"{'peak/ex':>8} {'lost/ex':>8} {'seconds':>8}")
    for n in (70, 76, 78):
        ex, t_ex = timed(lambda n=n: day_loss(WAVE, n, 2.0), repeats)
        rows = [("exact-uniform", ex.peak_blocking, ex.peak_period, ex.lost_fraction, t_ex)]
        od, t_od = timed(lambda n=n: day_loss(WAVE, n, 2.0, method="ode"), repeats)
        rows.append(("exact-ode", od.peak_blocking, od.peak_period, od.lost_fraction, t_od))
        for m in ("fpa", "mol"):
            r, t = timed(lambda n=n, m=m: day_reduced_load(park(n), [WAVE], method=m), repeats)
            rows.append((m, float(r.peak_blocking[0]), int(r.peak_period[0]),
                         float(r.lost_fraction[0]), t))
        for name, pk, per, lost, t in rows:
            print(f"{n:>6} {name:>15} {pk:>9.5f} {per:>6} {lost:>9.6f} "
                  f"{pk / ex.peak_blocking:>8.3f} {lost / ex.lost_fraction:>8.3f} {t:>8.3f}")
    print()
    print("2. Least spaces for 1 %")
    for basis in ("peak", "day"):
        s, t = timed(lambda b=basis: day_servers(WAVE, 2.0, 0.01, target_basis=b), repeats)
        line = f"  {basis:>4}: exact {s.servers} ({t:.3f} s, {s.evaluations} days)"
        for m in ("fpa", "mol"):
            line += f", {m} {least_by_method(m, basis)}"
        print(line + f"; Erlang B at the busy hour (90 E) {s.busy_hour_servers}")
    print()


def least_by_method(method, basis, start=60):
    n = start
    while True:
        r = day_reduced_load(park(n), [WAVE], method=method)
        value = r.peak_blocking[0] if basis == "peak" else r.lost_fraction[0]
        if value <= 0.01:
            return n
        n += 1


# --------------------------------------------------------------------------------------------
# 3: a tandem against its exact chain


def exact_network_day(net, caps, rates, hours):
    """Exact transient chain of a small network (one holding time per demand).

    State: calls in progress on every route. A call tries its demand's routes in order
    (under fixed routing the first only); a later route is taken only while each of its
    links has more than the link's reservation free. Returns blocking per demand and
    period.
    """
    alternate = net.routing.policy == "alternate"
    res = net.reservations() if alternate else np.zeros(len(caps), dtype=int)
    routes, owner = [], []
    for d, dem in enumerate(net.demands):
        for k, r in enumerate(dem.routes if alternate else dem.routes[:1]):
            routes.append((r.links, k))
            owner.append(d)
    D, R = len(net.demands), len(routes)
    hold = [net.demands[d].holding for d in owner]
    ranges = [range(min(caps[j] for j in links) + 1) for links, _ in routes]
    on = [[r for r in range(R) if j in routes[r][0]] for j in range(len(caps))]
    states = [s for s in itertools.product(*ranges)
              if all(sum(s[r] for r in on[j]) <= caps[j] for j in range(len(caps)))]
    index = {s: i for i, s in enumerate(states)}
    S = len(states)

    def admit(s, d):
        busy = [sum(s[r] for r in on[j]) for j in range(len(caps))]
        for r in range(R):
            if owner[r] != d:
                continue
            links, rank = routes[r]
            limit = [caps[j] - (res[j] if rank > 0 else 0) for j in links]
            if all(busy[j] < lim for j, lim in zip(links, limit, strict=True)):
                return r
        return None

    choice = [[admit(s, d) for d in range(D)] for s in states]
    blocked = np.array([[1.0 if choice[i][d] is None else 0.0 for i in range(S)]
                        for d in range(D)])
    p = np.zeros(S)
    p[index[(0,) * R]] = 1.0
    out = np.zeros((D, rates.shape[1]))
    for per in range(rates.shape[1]):
        rows, cols, vals = [], [], []
        for i, s in enumerate(states):
            for d in range(D):
                r = choice[i][d]
                if r is not None and rates[d, per] > 0:
                    t = list(s)
                    t[r] += 1
                    rows.append(i)
                    cols.append(index[tuple(t)])
                    vals.append(rates[d, per])
            for r in range(R):
                if s[r] > 0:
                    t = list(s)
                    t[r] -= 1
                    rows.append(i)
                    cols.append(index[tuple(t)])
                    vals.append(s[r] / hold[r])
        q = sparse.csr_matrix((vals, (rows, cols)), shape=(S, S))
        q = q - sparse.diags(np.asarray(q.sum(axis=1)).ravel())
        # augmented: columns S.. S+D-1 gather P(demand d blocked)
        aug = sparse.bmat([[q, sparse.csr_matrix(blocked.T)],
                           [None, sparse.csr_matrix((D, D))]], format="csr")
        y = expm_multiply(aug.T * hours[per], np.append(p, np.zeros(D)))
        p = y[:S]
        out[:, per] = y[S:] / hours[per]
    return out


def compare(title, net, rates, hours, repeats):
    print(title)
    ex, t_ex = timed(lambda: exact_network_day(net, net.capacities(), rates, hours), 1)
    offered = rates * hours
    ex_lost = (ex * offered).sum(axis=1) / offered.sum(axis=1)
    ex_peak = ex.max(axis=1)
    print(f"   exact chain: {t_ex:.2f} s")
    print(f"{'demand':>8} {'method':>6} {'peak':>9} {'exact':>9} {'ratio':>7} {'lost':>9} "
          f"{'exact':>9} {'ratio':>7} {'seconds':>8}")
    for m in ("fpa", "mol"):
        r, t = timed(lambda m=m: day_reduced_load(net, rates, period=hours, method=m), repeats)
        for d, did in enumerate(net.demand_ids):
            print(f"{did:>8} {m:>6} {r.peak_blocking[d]:>9.5f} {ex_peak[d]:>9.5f} "
                  f"{r.peak_blocking[d] / ex_peak[d]:>7.3f} {r.lost_fraction[d]:>9.6f} "
                  f"{ex_lost[d]:>9.6f} {r.lost_fraction[d] / ex_lost[d]:>7.3f} {t:>8.3f}")
    print()


def two_parks(repeats, scale):
    sites = (Site("ROAD"), Site("CAMPUS"))
    links = (Link("NORTH", ("ROAD", "CAMPUS"), 12), Link("SOUTH", ("ROAD", "CAMPUS"), 10))
    net = Network("two parks", sites, links, (
        Demand("north-visitors", ("ROAD", "CAMPUS"), 1.0, 2.0,
               routes=(Route((0,), (2.0,)), Route((1,), (2.0,)))),
        Demand("south-visitors", ("ROAD", "CAMPUS"), 1.0, 3.0,
               routes=(Route((1,), (3.0,)), Route((0,), (3.0,)))),
    ), routing=Routing(policy="alternate", reservation=2))
    wave = np.array([0.5, 2, 5, 7, 6, 4, 3, 2, 1, 0.5, 0.2, 0])
    rates = scale * np.vstack([wave, 0.6 * wave])
    compare(f"3b. Two parks of 12 and 10 spaces, each overflowing to the other (reservation 2),"
            f"\n    a wave x {scale} over 12 one-hour periods; exact chain against the methods",
            net, rates, np.ones(12), repeats)


def tandem_figures(repeats, scale):
    sites = (Site("A"), Site("B"), Site("C"))
    links = (Link("AB", ("A", "B"), 14), Link("BC", ("B", "C"), 16))
    net = Network("tandem", sites, links, (
        Demand("AB", ("A", "B"), 1.0, 1.0, routes=(Route((0,), (1.0,)),)),
        Demand("BC", ("B", "C"), 1.0, 1.5, routes=(Route((1,), (1.5,)),)),
        Demand("AC", ("A", "C"), 1.0, 1.0, routes=(Route((0, 1), (1.0, 1.0)),)),
    ))
    wave = np.array([1, 3, 8, 14, 16, 14, 10, 6, 3, 1], float)
    rates = scale * np.vstack([wave, 0.7 * wave, 0.5 * wave])
    compare(f"3. Tandem A-B-C (links of 14 and 16), demands AB, BC and the transit AC, a "
            f"morning\n   wave x {scale} over 10 half-hour periods; exact transient chain "
            "against the two methods", net, rates, np.full(10, 0.5), repeats)


def two_parks_constant(repeats):
    print("3c. The two parks at constant demand (0.5, 0.7, 1.0 x the wave's peak): exact chain")
    print("    at the end of 20 hours (over 6 holding times), the static reduced-load fixed point")
    print("    (netdim.evaluate) and the day methods on a cyclic day; ratios to the exact chain")
    sites = (Site("ROAD"), Site("CAMPUS"))
    links = (Link("NORTH", ("ROAD", "CAMPUS"), 12), Link("SOUTH", ("ROAD", "CAMPUS"), 10))
    for k in (0.5, 0.7, 1.0):
        net = Network("two parks", sites, links, (
            Demand("north-visitors", ("ROAD", "CAMPUS"), k * 7 * 2.0, 2.0,
                   routes=(Route((0,), (2.0,)), Route((1,), (2.0,)))),
            Demand("south-visitors", ("ROAD", "CAMPUS"), k * 4.2 * 3.0, 3.0,
                   routes=(Route((1,), (3.0,)), Route((0,), (3.0,)))),
        ), routing=Routing(policy="alternate", reservation=2))
        rates = np.array([[k * 7.0] * 20, [k * 4.2] * 20])
        ex = exact_network_day(net, [12, 10], rates, np.ones(20))[:, -1]
        static = evaluate(net).blocking
        line = f"   x {k}: exact {np.round(ex, 4)}, fixed point / exact {np.round(static / ex, 3)}"
        for m in ("fpa", "mol"):
            r = day_reduced_load(net, rates[:, :4], period=5.0, cyclic=True, method=m)
            line += f", {m} / exact {np.round(r.blocking[:, -1] / ex, 3)}"
        print(line)
    print()


# --------------------------------------------------------------------------------------------
# 4-5: speed


def speed_exact(repeats, quick):
    print("4. Exact chain, seconds (median): the wave stretched over the day, scaled to the size")
    base = np.array(WAVE, float)
    print(f"{'units':>6} {'periods':>7} {'uniform':>9} {'cyclic':>9} {'ode':>9} {'ode/unif':>9}")
    for n, P in ((100, 24), (300, 96), (1000, 24), (1000, 96)):
        rates = np.interp(np.linspace(0, 11, P), np.arange(12), base) * n / 80
        per = 24.0 / P
        _, t_u = timed(lambda n=n, r=rates, p=per: day_loss(r, n, 2.0, p), repeats)
        _, t_c = timed(lambda n=n, r=rates, p=per: day_loss(r, n, 2.0, p, cyclic=True), repeats)
        if quick and n >= 1000:
            t_o = float("nan")
        else:
            _, t_o = timed(lambda n=n, r=rates, p=per: day_loss(r, n, 2.0, p, method="ode"), 1)
        print(f"{n:>6} {P:>7} {t_u:>9.3f} {t_c:>9.3f} {t_o:>9.2f} {t_o / t_u:>9.1f}")
    print()


def speed_networks(repeats):
    print("5. Network methods, seconds (median), 24 one-hour periods, rates = the file's rate")
    print("   times a wave peaking at 1 (x 1.5 where marked), the files' own capacities")
    wave = np.interp(np.arange(24), [0, 6, 9, 12, 15, 18, 23], [0.05, 0.3, 1, 0.7, 0.9, 0.4, 0.05])
    cases = []
    for name, scale in (("campus-parking", 1.0), ("campus-parking", 1.5),
                        ("regional-telephone", 1.0), ("three-villages", 1.0)):
        net = read_network(ROOT / "networks" / f"{name}.yaml")
        cases.append((f"{name} x {scale}", net, scale))
    reg = read_network(ROOT / "networks" / "regional-telephone.yaml")
    cases.append(("regional, first routes", dataclasses.replace(reg, routing=Routing()), 1.0))
    print(f"{'network':>26} {'method':>6} {'links':>5} {'demands':>7} {'seconds':>8} "
          f"{'worst peak':>10} {'worst lost':>10}")
    for name, net, scale in cases:
        rates = scale * np.array([d.rate for d in net.demands])[:, None] * wave[None, :]
        for m in ("fpa", "mol"):
            r, t = timed(lambda n=net, r=rates, m=m: day_reduced_load(n, r, method=m), repeats)
            print(f"{name:>26} {m:>6} {len(net.links):>5} {len(net.demands):>7} {t:>8.3f} "
                  f"{r.peak_blocking.max():>10.4f} {r.lost_fraction.max():>10.4f}")
    single, t = timed(lambda: day_single_resource(park(76), [WAVE]), repeats)
    print(f"{'park, exact (one link)':>26} {'exact':>6} {1:>5} {1:>7} {t:>8.3f} "
          f"{single.peak_blocking.max():>10.4f} {single.lost_fraction.max():>10.4f}")
    print()


def simulation_checks(days):
    print(f"6. Simulation over the day ({days} days a run, seed 1): 95 % intervals")
    sim_net = loads_network(PARK_FILE)
    ex = day_loss(WAVE, 70, 2.0)
    t0 = time.perf_counter()
    sim = evaluate(sim_net, method="day-simulate", seed=1, days=days).day
    t_sim = time.perf_counter() - t0
    print(f"   park at 70 spaces, simulated in {t_sim:.1f} s ({sim.arrivals} arrivals)")
    rows = [("worst period 5", ex.blocking[5], sim.blocking[0, 5], sim.blocking_interval[0, 5]),
            ("lost fraction", ex.lost_fraction, sim.lost_fraction[0],
             sim.lost_fraction_interval[0])]
    for name, e, s_, iv in rows:
        inside = "inside" if iv[0] <= e <= iv[1] else "OUTSIDE"
        print(f"   {name:>15}: exact {e:.5f}  simulated {s_:.5f} [{iv[0]:.5f}, {iv[1]:.5f}] "
              f"exact {inside}")
    campus = read_network(ROOT / "examples" / "campus_day.yaml")
    for label, caps in (("file capacities", campus.capacities()),
                        ("plan 80/80/140/0/0", np.array([80, 80, 140, 0, 0]))):
        t0 = time.perf_counter()
        sim = evaluate(campus, caps, method="day-simulate", seed=1, days=days)
        t_sim = time.perf_counter() - t0
        figures = {}
        for m in ("day-fpa", "day-mol"):
            t0 = time.perf_counter()
            figures[m] = (evaluate(campus, caps, method=m), time.perf_counter() - t0)
        print(f"   campus day, {label}: simulated {t_sim:.1f} s, fpa "
              f"{figures['day-fpa'][1]:.2f} s, mol {figures['day-mol'][1]:.2f} s")
        print(f"{'demand':>20} {'simulated':>9} {'95% interval':>20} {'fpa':>8} {'ratio':>6} "
              f"{'in':>3} {'mol':>8} {'ratio':>6} {'in':>3}")
        for i, did in enumerate(campus.demand_ids):
            lo, hi = sim.blocking_interval[i]
            line = f"{did:>20} {sim.blocking[i]:>9.5f} [{lo:.5f}, {hi:.5f}]"
            for m in ("day-fpa", "day-mol"):
                b = float(figures[m][0].blocking[i])
                ratio = b / sim.blocking[i] if sim.blocking[i] > 0 else float("nan")
                line += f" {b:>8.5f} {ratio:>6.3f} {'yes' if lo <= b <= hi else 'no':>3}"
            print(line)
    print()


PARK_FILE = ("name: park\nsites: [G, P]\nlinks:\n  - {id: P, ends: [G, P], capacity: 70}\n"
             f"demands:\n  - {{id: cars, between: [G, P], rates: {WAVE}, holding: 2}}\n")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--sim-days", type=int, default=1000)
    ap.add_argument("--only-simulation", action="store_true",
                    help="print section 6 only")
    args = ap.parse_args()
    if args.only_simulation:
        simulation_checks(args.sim_days)
        return
    day_loss([1.0], 2, 1.0)  # compile (or load) the numba kernel outside the timings
    print(f"Erlang B at the busy hour, 90 E, 1 %: {servers_for(90.0, 0.01)} servers\n")
    park_figures(args.repeats)
    tandem_figures(args.repeats, 1.0)
    tandem_figures(args.repeats, 0.5)
    two_parks(args.repeats, 1.0)
    two_parks(args.repeats, 1.6)
    two_parks_constant(args.repeats)
    speed_exact(args.repeats, args.quick)
    speed_networks(args.repeats)
    simulation_checks(args.sim_days)


if __name__ == "__main__":
    main()
