"""Benchmark: reading network files, generating routes, writing plans (not collected by pytest).

Prints medians of repeated runs, measured side by side in one run:

- ``read``: ``netdim.netfile.read_network`` on synthetic sparse backbones (a ring of sites with
  chords, coordinates on a circle, lengths by distance; demo data) with generated routes,
  and on a file of 30k demands with routes given; the YAML part alone against PyYAML's own
  C loader (``yaml.load(..., CSafeLoader)``), which keeps no line numbers;
- ``routes``: the route generator against the old way (every simple path up to max_hops by
  ``networkx.all_simple_edge_paths``, sorted) and against ``networkx.shortest_simple_paths``
  (Yen's algorithm) stopped at k, on the same demands;
- ``plan``: writing a plan into the bundled files' text (patching the capacity scalars)
  against a round-trip YAML library (ruamel.yaml, when installed), with the lines each
  changes;
- ``memory``: peak resident memory of ``netdim check`` on files of growing size (a child
  process each, ``resource.getrusage``).

Usage: python tests/benchmarks/bench_netfile.py [--quick] [--repeat N]
"""

from __future__ import annotations

import argparse
import difflib
import io
import math
import os
import pathlib
import random
import statistics
import subprocess
import sys
import tempfile
import time

import networkx as nx
import numpy as np
import yaml

from netdim.netfile import dumps_plan, loads_network, read_network
from netdim.netfile._yaml import load
from netdim.routing import RouteFinder, _edge_attr, link_graph

ROOT = pathlib.Path(__file__).resolve().parents[2]


def backbone_text(n_sites, n_demands, *, seed=1, max_hops=20, max_routes=3, given=False):
    """A sparse backbone: a ring plus one chord per 4 sites; demands between random pairs."""
    rng = random.Random(seed)
    pos = [(math.cos(2 * math.pi * i / n_sites) * 100, math.sin(2 * math.pi * i / n_sites)
            * 100) for i in range(n_sites)]
    out = [f"name: backbone {n_sites}", "# demo data, generated",
           f"routing: {{policy: fixed, max_hops: {max_hops}, max_routes: {max_routes}}}",
           "sites:"]
    out += [f"  - {{id: S{i}, x: {x:.3f}, y: {y:.3f}}}" for i, (x, y) in enumerate(pos)]
    out.append("links:")
    edges = [(i, (i + 1) % n_sites) for i in range(n_sites)]
    edges += [(i, rng.randrange(n_sites)) for i in range(0, n_sites, 4)]
    seen = set()
    for a, b in edges:
        if a == b or (min(a, b), max(a, b)) in seen:
            continue
        seen.add((min(a, b), max(a, b)))
        length = math.dist(pos[a], pos[b])
        out.append(f"  - {{id: L{a}-{b}, ends: [S{a}, S{b}], capacity: 60, module: 30, "
                   f"cost_per_module: {10 + length:.2f}, length: {length:.2f}}}")
    out.append("demands:")
    for k in range(n_demands):
        a, b = rng.sample(range(n_sites), 2)
        extra = f", routes: [[L{a}-{(a + 1) % n_sites}]]" if given else ""
        if given:
            b = (a + 1) % n_sites
        out.append(f"  - {{id: D{k}, between: [S{a}, S{b}], traffic: {rng.uniform(0.1, 5):.3f}"
                   f"{extra}}}")
    return "\n".join(out) + "\n"


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


# -- route generation, three ways ------------------------------------------------------------
def all_paths_sorted(graph, origin, dest, max_hops, k):
    """The old way: every simple path up to max_hops, sorted, first k."""
    adj = graph._adj
    keyed = []
    for path in nx.all_simple_edge_paths(graph, origin, dest, cutoff=max_hops):
        steps = [(key, adj[u][v][key]) for u, v, key in path]
        keyed.append((len(steps), sum(_edge_attr(d, "length") for _, d in steps),
                      sum(_edge_attr(d, "cost_per_module") for _, d in steps),
                      tuple(key for key, _ in steps)))
    keyed.sort()
    return [item[3] for item in keyed[:k]]


def yen_sorted(graph, origin, dest, max_hops, k):
    """networkx.shortest_simple_paths (Yen) by hop count on a graph with one node per link
    (multigraphs are not supported), stopped once the k-th path's hop count is passed."""
    g = nx.Graph()
    for u, v, key in graph.edges(keys=True):
        g.add_edge(u, ("link", key))
        g.add_edge(("link", key), v)
    adj = graph._adj
    found, limit = [], None
    for path in nx.shortest_simple_paths(g, origin, dest):
        hops = (len(path) - 1) // 2
        if hops > max_hops or (limit is not None and hops > limit):
            break
        keys = [node[1] for node in path[1::2]]
        sites = path[0::2]
        steps = [(key, adj[a][b][key]) for key, a, b in zip(keys, sites, sites[1:],
                                                              strict=False)]
        found.append((hops, sum(_edge_attr(d, "length") for _, d in steps),
                      sum(_edge_attr(d, "cost_per_module") for _, d in steps), tuple(keys)))
        if len(found) >= k and limit is None:
            limit = hops
    found.sort()
    return [item[3] for item in found[:k]]


def bench_routes(repeat, quick):
    print("\n== routes: generated candidates, per demand (median of demands' totals)")
    print(f"{'sites':>6} {'demands':>8} {'hops':>5} {'k':>3} {'finder s':>9} {'yen s':>8} "
          f"{'all-paths s':>12} {'yen/finder':>10} {'all/finder':>10}  same")
    for n_sites, n_dem, max_hops, k in ([(50, 200, 8, 3), (200, 300, 20, 3)]
                                        + ([] if quick else [(1000, 300, 20, 3)])):
        net = loads_network(backbone_text(n_sites, 1, max_hops=max_hops, max_routes=k),
                            source="bench")
        graph = link_graph(net.links, [s.id for s in net.sites])
        rng = random.Random(7)
        pairs = [tuple(f"S{i}" for i in rng.sample(range(n_sites), 2)) for _ in range(n_dem)]

        def finder(graph=graph, pairs=pairs, max_hops=max_hops, k=k):
            f = RouteFinder(graph, max_hops, k)
            return [f.routes(a, b) for a, b in pairs]

        def yen(graph=graph, pairs=pairs, max_hops=max_hops, k=k):
            return [yen_sorted(graph, a, b, max_hops, k) for a, b in pairs]

        t_f = median_time(finder, repeat)
        t_y = median_time(yen, max(1, repeat // 2))
        same = finder() == yen()
        t_a, all_same = float("nan"), "-"
        if max_hops <= 8:  # every path up to 20 links does not finish at these sizes
            few = pairs[:20]
            f_few = RouteFinder(graph, max_hops, k)
            t0 = time.perf_counter()
            old = [all_paths_sorted(graph, a, b, max_hops, k) for a, b in few]
            t_a = (time.perf_counter() - t0) * len(pairs) / len(few)
            all_same = old == [f_few.routes(a, b) for a, b in few]
        print(f"{n_sites:>6} {n_dem:>8} {max_hops:>5} {k:>3} {t_f:>9.3f} {t_y:>8.3f} "
              f"{t_a:>12.2f} {t_y / t_f:>10.1f} {t_a / t_f:>10.1f}  yen={same} "
              f"all={all_same}")


# -- reading ---------------------------------------------------------------------------------
def bench_read(repeat, quick):
    print("\n== read: read_network (generated routes, max_hops 20, max_routes 3), and the "
          "YAML part alone")
    print(f"{'file':>28} {'MB':>6} {'read s':>8} {'yaml s':>8} {'pyyaml-C s':>10} "
          f"{'ratio':>6}")
    cases = [("backbone 200 / 3k", 200, 3000, False), ("backbone 1000 / 3k", 1000, 3000,
                                                         False)]
    if not quick:
        cases += [("backbone 1000 / 30k", 1000, 30000, False),
                  ("1000 sites, 30k given", 1000, 30000, True)]
    with tempfile.TemporaryDirectory() as tmp:
        for label, n_sites, n_dem, given in cases:
            text = backbone_text(n_sites, n_dem, given=given)
            path = pathlib.Path(tmp) / "n.yaml"
            path.write_text(text)
            t_read = median_time(lambda path=path: read_network(path), repeat)
            t_yaml = median_time(lambda text=text: load(text), repeat)
            t_py = median_time(lambda text=text: yaml.load(text, Loader=yaml.CSafeLoader),
                               max(1, repeat // 2))
            print(f"{label:>28} {len(text) / 2**20:>6.2f} {t_read:>8.2f} {t_yaml:>8.2f} "
                  f"{t_py:>10.2f} {t_py / t_yaml:>6.1f}")


# -- plan files ------------------------------------------------------------------------------
def bench_plan(repeat):
    print("\n== plan: write the bundled networks back with new capacities")
    try:
        from ruamel.yaml import YAML
    except ImportError:
        YAML = None
        print("(ruamel.yaml not installed: round-trip column left out)")
    print("(lines: lines removed plus lines added, by difflib)")
    print(f"{'file':>24} {'patch ms':>9} {'lines':>6} {'ruamel ms':>10} {'lines':>6} "
          f"{'ratio':>6}")
    files = sorted((ROOT / "networks").glob("*.yaml"))
    samples = [(p.name, p.read_text()) for p in files]
    samples.append(("flow sample (inline)", FLOW_SAMPLE))
    for name, text in samples:
        net = loads_network(text)
        caps = np.array([(link.capacity or 0) + link.module for link in net.links])
        t_p = median_time(lambda text=text, net=net, caps=caps: dumps_plan(text, net, caps),
                          repeat)
        patched = dumps_plan(text, net, caps)
        n_p = _changed(text, patched)
        if YAML is None:
            print(f"{name:>24} {t_p * 1e3:>9.2f} {n_p:>6}")
            continue

        def ruamel(text=text, caps=caps):
            y = YAML()
            y.preserve_quotes = True
            y.width = 4096
            y.indent(mapping=2, sequence=4, offset=2)  # the bundled files' layout
            data = y.load(text)
            for link, c in zip(data["links"], caps, strict=True):
                link["capacity"] = int(c)
            buf = io.StringIO()
            y.dump(data, buf)
            return buf.getvalue()

        t_r = median_time(ruamel, repeat)
        n_r = _changed(text, ruamel())
        print(f"{name:>24} {t_p * 1e3:>9.2f} {n_p:>6} {t_r * 1e3:>10.2f} {n_r:>6} "
              f"{t_r / t_p:>6.1f}")


FLOW_SAMPLE = """\
# a flow-style file as people write them (demo data)
name: flow
sites: [A, B, C]
links: [{id: A-B, ends: [A, B], capacity: 5},   # first
        {id: B-C, ends: [B, C],
         capacity: 6, cost_per_module: 2.0},
        {id: A-C, ends: [A, C], capacity: 7}]
demands: [{between: [A, C], traffic: 1.5, routes: [[A-C], [A-B, {link: B-C, holding: 0.5}]]}]
"""


def _changed(before, after):
    diff = difflib.unified_diff(before.splitlines(), after.splitlines(), lineterm="", n=0)
    return sum(1 for line in diff if line[:1] in "+-" and line[:3] not in ("+++", "---"))


# -- memory ----------------------------------------------------------------------------------
_CHILD = """
import resource, sys, time
from netdim.netfile import read_network
t = time.perf_counter()
net = read_network(sys.argv[1], max_size=0)
print(len(net.demands), time.perf_counter() - t,
      resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)
"""


def bench_memory(quick):
    print("\n== memory: peak resident set of reading a file of demands with given routes "
          "(child process each)")
    print(f"{'MB':>6} {'demands':>8} {'read s':>8} {'peak MB':>8} {'MB per MB':>9}")
    sizes = (10_000, 100_000) if quick else (10_000, 100_000, 300_000, 680_000)
    with tempfile.TemporaryDirectory() as tmp:
        path = pathlib.Path(tmp) / "m.yaml"
        base = None
        for n_dem in sizes:
            text = backbone_text(1000, n_dem, given=True)
            path.write_text(text)
            del text
            r = subprocess.run([sys.executable, "-c", _CHILD, str(path)], capture_output=True,
                               text=True, check=True)
            count, secs, peak = r.stdout.split()
            mb = path.stat().st_size / 2**20
            base = base or float(peak)
            print(f"{mb:>6.1f} {count:>8} {float(secs):>8.2f} {float(peak):>8.0f} "
                  f"{float(peak) / mb:>9.1f}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller cases only")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--only", choices=("routes", "read", "plan", "memory"), default=None)
    args = ap.parse_args(argv)
    print(f"python {sys.version.split()[0]}, pyyaml {yaml.__version__} "
          f"(libyaml: {hasattr(yaml, 'CSafeLoader')}), networkx {nx.__version__}, "
          f"cores {os.cpu_count()}")
    steps = {"routes": lambda: bench_routes(args.repeat, args.quick),
             "read": lambda: bench_read(args.repeat, args.quick),
             "plan": lambda: bench_plan(max(args.repeat, 5)),
             "memory": lambda: bench_memory(args.quick)}
    for name, step in steps.items():
        if args.only in (None, name):
            step()


if __name__ == "__main__":
    main()
