"""Benchmark: the lower bound and gap of fixed-routing plans on real topologies.

Topologies from /work/shared/data/real (see its SOURCES.md): SNDlib (S. Orlowski,
R. Wessaely, M. Pioro, A. Tomaszewski, "SNDlib 1.0 - Survivable Network Design Library",
Networks 55(3):276-286, 2010), with their demand matrices, and the Internet Topology Zoo
(S. Knight et al., IEEE JSAC 29(9):1765-1775, 2011), with gravity demands. The traffic,
costs and modules are invented for the benchmark: each demand's value scaled so that the
largest is 20 erlangs, fixed routing over the shortest path by length, links in modules of
30 circuits at 1 + length / 100 per module; with ``--fixed-costs`` every link that is no
demand's only way gets a fixed cost of 2 modules, so the sizer may leave it out.

Prints per topology: the plan's cost, the reported lower bound, the gap, and the time. Uses
only ``netdim.dimension(network)``, so the same script measures an older tree
(``PYTHONPATH=old_tree python tests/benchmarks/bench_real_gaps.py``).

Run: python tests/benchmarks/bench_real_gaps.py [--fixed-costs] [--only NAME] [--max-demands N]
"""

from __future__ import annotations

import argparse
import glob
import json
import os
import time

import networkx as nx
import numpy as np

from netdim import dimension
from netdim.model import Demand, Link, Network, Route, Routing, Site

DATA = "/work/shared/data/real"


def build(path, fixed_costs=False):
    raw = json.load(open(path))
    sites = [Site(s["id"]) for s in raw["sites"]]
    g = nx.Graph()
    links = []
    for i, link in enumerate(raw["links"]):
        a, b = link["ends"]
        km = float(link.get("length_km") or 0.0)
        g.add_edge(a, b, weight=km + 1.0, index=i)
        links.append((link["id"], (a, b), km))
    demands_raw = raw.get("demands") or []
    if not demands_raw:  # gravity: one unit between every pair
        ids = [s["id"] for s in raw["sites"]]
        demands_raw = [{"between": [a, b], "value": 1.0}
                       for k, a in enumerate(ids) for b in ids[k + 1:]]
    merged = {}
    for d in demands_raw:
        a, b = d["between"]
        if a == b or a not in g or b not in g:
            continue
        key = tuple(sorted((a, b)))
        merged[key] = merged.get(key, 0.0) + float(d["value"])
    top = max(merged.values())
    demands, on_paths = [], []
    for (a, b), v in sorted(merged.items()):
        try:
            hops = nx.shortest_path(g, a, b, weight="weight")
        except nx.NetworkXNoPath:
            continue
        idx = tuple(g.edges[u, w]["index"] for u, w in zip(hops, hops[1:], strict=False))
        on_paths.append(idx)
        demands.append(Demand(f"{a}-{b}", (a, b), max(20.0 * v / top, 0.05),
                              routes=(Route(idx, (1.0,) * len(idx)),)))
    used = {j for idx in on_paths for j in idx}
    out_links = []
    for j, (lid, ends, km) in enumerate(links):
        cpm = 1.0 + km / 100.0
        fix = 2 * cpm if fixed_costs and j in used else 0.0
        out_links.append(Link(lid, ends, module=30, cost_per_module=cpm, fixed_cost=fix))
    return Network(os.path.basename(path), tuple(sites), tuple(out_links), tuple(demands),
                   routing=Routing("fixed"))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--fixed-costs", action="store_true")
    ap.add_argument("--only", default="")
    ap.add_argument("--max-demands", type=int, default=1500,
                    help="skip larger topologies (the first MILP of the 2485-demand TW "
                    "Telecom graph takes minutes)")
    args = ap.parse_args()
    gaps = []
    for path in sorted(glob.glob(os.path.join(DATA, "*.json"))):
        if args.only and args.only not in path:
            continue
        net = build(path, args.fixed_costs)
        if len(net.demands) > args.max_demands:
            print(f"{os.path.basename(path):28s} skipped: {len(net.demands)} demands")
            continue
        t = time.perf_counter()
        plan = dimension(net)
        s = time.perf_counter() - t
        gaps.append(plan.gap)
        print(f"{os.path.basename(path):28s} sites={len(net.sites):3d} links={len(net.links):4d} "
              f"demands={len(net.demands):4d} cost={plan.cost:10.2f} "
              f"bound={plan.lower_bound:10.2f} gap={100 * plan.gap:7.3f}% time={s:6.1f}s "
              f"({plan.details.get('bound', '')})", flush=True)
    if gaps:
        print(f"gaps: median {100 * float(np.median(gaps)):.3f}%, largest "
              f"{100 * max(gaps):.3f}% over {len(gaps)} topologies")


if __name__ == "__main__":
    main()
