"""Speed-up of a failure study on 2 worker processes over 1 (a benchmark, not a test).

Run: ``python tests/benchmarks/bench_studies.py [--repeats 3] [--workers 1 2]``

The network: SNDlib germany50 (50 sites, 88 links, 662 demands; /work/shared/data/real/,
see its SOURCES.md: S. Orlowski, R. Wessaely, M. Pioro, A. Tomaszewski, "SNDlib 1.0 -
Survivable Network Design Library", Networks 55(3), 2010). Its demand values are read as
erlangs (the file states no unit); routes are generated under alternate routing, up to 3
per demand within the most hops any demand's shortest path needs; each link gets the
fewest circuits that give 1 % blocking on its first-choice load alone (Erlang B). Every
link is then failed in turn by :func:`netdim.studies.failure_study`, serially and on a
pool; the script prints each setting's median wall time and CPU time (this process and its
ended workers) over ``--repeats`` runs, the ratio to the serial run measured in the same
run, and checks the results are identical. On a machine busier than its cores the CPU time
shows the work and the wall time what the machine granted.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import time
from pathlib import Path

import networkx as nx

from netdim.erlang import servers_for
from netdim.model import Demand, Link, Network, Route, Routing, Site
from netdim.routing import RouteFinder, link_graph
from netdim.studies import failure_study

DATA = Path(os.environ.get("NETDIM_REAL_DATA", "/work/shared/data/real"))


def germany50() -> Network:
    raw = json.loads((DATA / "sndlib-germany50.json").read_text())
    sites = tuple(Site(s["id"], x=s.get("x"), y=s.get("y")) for s in raw["sites"])
    links = [Link(k["id"], tuple(k["ends"]), length=k.get("length_km")) for k in raw["links"]]
    graph = link_graph(links, [s.id for s in sites])
    simple = nx.Graph(graph)
    pairs = {}
    for d in raw["demands"]:
        key = tuple(sorted(d["between"]))
        pairs[key] = pairs.get(key, 0.0) + float(d["value"])
    hops = max(nx.shortest_path_length(simple, a, b) for a, b in pairs)
    finder = RouteFinder(graph, hops, 3)
    index = {k.id: j for j, k in enumerate(links)}
    demands = []
    load = [0.0] * len(links)
    for (a, b), traffic in pairs.items():
        routes = tuple(Route(tuple(index[i] for i in r), (1.0,) * len(r))
                       for r in finder.routes(a, b))
        demands.append(Demand(f"{a}-{b}", (a, b), traffic, routes=routes))
        for j in routes[0].links:
            load[j] += traffic
    links = [Link(k.id, k.ends, servers_for(max(a, 1e-9), 0.01), length=k.length)
             for k, a in zip(links, load, strict=True)]
    return Network("germany50", sites, tuple(links), tuple(demands),
                   routing=Routing(policy="alternate", max_hops=hops, reservation=2,
                                   max_routes=3))


def _cpu() -> float:
    """CPU seconds of this process and of its children that have ended (pool workers)."""
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2])
    args = ap.parse_args(argv)
    net = germany50()
    print(f"network: {net.name}, {len(net.sites)} sites, {len(net.links)} links, "
          f"{len(net.demands)} demands; {os.cpu_count()} cores")
    failure_study(net, links=net.link_ids[:2])  # warm: kernels compiled, routes flattened
    load = os.getloadavg()[0]
    times, cpus, results = {}, {}, {}
    for _ in range(args.repeats):
        for w in args.workers:  # interleaved, so that load on the machine hits all alike
            t, c = time.perf_counter(), _cpu()
            study = failure_study(net, workers=w)
            times.setdefault(w, []).append(time.perf_counter() - t)
            cpus.setdefault(w, []).append(_cpu() - c)
            results[w] = study.to_dict()
    base = statistics.median(times[args.workers[0]])
    print(f"load average (1 min): {load:.1f} before the runs, {os.getloadavg()[0]:.1f} after")
    print(f"{'workers':>7}  {'median s':>9}  {'cpu s':>7}  {'runs':>5}  {'speed-up':>8}  "
          "same result")
    for w in args.workers:
        med = statistics.median(times[w])
        same = results[w] == results[args.workers[0]]
        print(f"{w:>7}  {med:>9.2f}  {statistics.median(cpus[w]):>7.2f}  {len(times[w]):>5}  "
              f"{base / med:>8.2f}  {same}")
    worst = results[args.workers[0]]["failures"][0]
    print(f"worst failure: {worst['element']} ({worst['worst_demand']} "
          f"{worst['worst_blocking']:.4f}); {results[args.workers[0]]['survivors']} of "
          f"{results[args.workers[0]]['count']} survive")


if __name__ == "__main__":
    main()
