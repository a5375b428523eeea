"""Speed of the event-driven simulation (a benchmark, not a test).

Run: ``python tests/benchmarks/bench_simulate.py [--calls 1000000] [--repeats 3] [--big]``

Prints simulated call arrivals per second, warm-up included (after compilation, medians of
repeats) on the
bundled networks and on full meshes of 20 and 100 sites (direct link first, then up to three
two-link routes, alternate routing with reservation 2, capacities near a 1 % grade of service).
The first call's compile time (or cache load) is printed separately.

Goals on one core: at least 5e5 arrivals/s on the bundled networks and the 20-site mesh,
2.5e5 at 100 sites.

``--startup``: the whole process against the library, side by side (medians of repeats):
``python -c pass``, ``netdim evaluate FILE`` (fixed point), ``netdim evaluate FILE --method
simulate --seed 1 --calls N`` as a process, and the same simulation through the API in a warm
process. Goal: the process within 1.5 s of the API.
"""

from __future__ import annotations

import argparse
import pathlib
import resource
import statistics
import subprocess
import sys
import time

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))

from bench_fixed_point import mesh

from netdim.erlang import servers_for
from netdim.evaluate.simulate import simulate
from netdim.netfile import read_network

NETWORKS = pathlib.Path(__file__).resolve().parents[2] / "networks"


def sized_mesh(n_sites, traffic=10.0):
    caps = servers_for(traffic, 0.01)
    return mesh(n_sites, traffic, int(caps), n_alt=3, policy="alternate", reservation=2)


def rate(net, calls, repeats):
    times = []
    for r in range(repeats):
        t0 = time.perf_counter()
        ev = simulate(net, seed=r + 1, calls=calls)
        times.append(time.perf_counter() - t0)
    total = calls + ev.details.get("warmup", 0)
    return total / statistics.median(times), statistics.median(times), ev


def process_time(cmd, repeats):
    """Median wall time of a whole process, and of its CPU time (user + system: steadier
    on a machine shared with other work)."""
    walls, cpus = [], []
    for _ in range(repeats):
        r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(cmd, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        walls.append(time.perf_counter() - t0)
        r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(r1.ru_utime - r0.ru_utime + r1.ru_stime - r0.ru_stime)
    return statistics.median(walls), statistics.median(cpus)


def startup(calls, repeats):
    """The command line's start-up against the library's work, for one simulation."""
    path = NETWORKS / "regional-telephone.yaml"
    netdim = [sys.executable, "-m", "netdim"]  # as the console script does, on any tree
    sim_cmd = netdim + ["evaluate", str(path), "--method", "simulate", "--seed", "1",
                        "--calls", str(calls), "--quiet", "--json"]
    subprocess.run(sim_cmd, check=False, stdout=subprocess.DEVNULL)  # compile cache warm
    rows = [
        ("python -c pass", process_time([sys.executable, "-c", "pass"], repeats)),
        ("netdim evaluate (fixed point)",
         process_time(netdim + ["evaluate", str(path), "--json"], repeats)),
        ("netdim evaluate --method simulate", process_time(sim_cmd, repeats)),
    ]
    net = read_network(path)
    simulate(net, seed=1, calls=1000)  # imports and the kernel loaded, as in a warm process
    walls, cpus = [], []
    for _ in range(repeats):
        t0, c0 = time.perf_counter(), time.process_time()
        simulate(net, seed=1, calls=calls)
        walls.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    api = (statistics.median(walls), statistics.median(cpus))
    rows.append(("simulate() in a warm process", api))
    print(f"start-up, {calls} calls on {path.name} (medians of {repeats})")
    print(f"  {'':<36} {'wall s':>7} {'CPU s':>7}")
    for name, (wall, cpu) in rows:
        print(f"  {name:<36} {wall:7.3f} {cpu:7.3f}")
    for i, clock in enumerate(("wall", "CPU")):
        gap = rows[2][1][i] - api[i]
        print(f"  process - API ({clock}): {gap:.3f} s (goal: under 1.5 s) "
              f"{'met' if gap < 1.5 else 'MISSED'}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--calls", type=int, default=1_000_000)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--startup", action="store_true",
                    help="only the command line's start-up against the API")
    args = ap.parse_args(argv)
    if args.startup:
        startup(args.calls, max(args.repeats, 5))
        return

    cases = [(p.stem, read_network(p)) for p in sorted(NETWORKS.glob("*.yaml"))]
    cases += [("mesh-20", sized_mesh(20)), ("mesh-100", sized_mesh(100))]

    t0 = time.perf_counter()
    simulate(cases[0][1], seed=0, calls=1000)
    print(f"first call (compile or cache load): {time.perf_counter() - t0:.2f} s")
    print(f"{'network':<22} {'links':>6} {'demands':>8} {'calls':>9} {'median s':>9} "
          f"{'arrivals/s':>12}  goal")
    for name, net in cases:
        per_s, secs, ev = rate(net, args.calls, args.repeats)
        goal = 2.5e5 if name == "mesh-100" else 5e5
        flag = "met" if per_s >= goal else "MISSED"
        print(f"{name:<22} {len(net.links):>6} {len(net.demands):>8} {args.calls:>9} "
              f"{secs:>9.3f} {per_s:>12,.0f}  {goal:,.0f} {flag}")


if __name__ == "__main__":
    main()
