"""Benchmark: netdim on large networks, against the scale goals (not collected by pytest).

Every input is built here, deterministically (demo data: invented site names ``S0``...):
a synthetic sparse backbone is a ring of sites on a circle of radius 1000 km with one chord
per 4 sites to a random site, gravity traffic (random site weights, 3000 erlangs in total
unless said), 1 % targets, modules of 30 circuits, cost per module 10 + 0.02 per km. The
shipped real topologies (networks/topozoo-*.graphml) go through ``netdim import`` first.

Sections (``--only``):

- ``goals``: each goal of the scale work at 1000 sites, its median, the goal and their
  ratio (under 1 meets it) side by side: reading a file of 30k demands with given routes,
  ``netdim check`` with 30k generated routes, ``netdim size`` under fixed and alternate
  routing with 30k demands (time and peak memory of the whole command); and route
  generation of this commit against the commit the work started from (``--base``, read
  from git), with a check that both give the same routes;
- ``growth``: sites, links, demands, routes, seconds and peak MB of ``check``,
  ``size`` (writing the plan) and ``evaluate`` (of the plan, else of the file's
  capacities) on backbones growing by 2x steps, and the growth exponent of
  each step's time in the number of routes (slope of log time on log routes);
- ``real``: the same steps, ``import`` first, on the shipped real topologies.

Each command runs as a child process (``sys.executable -m netdim``), so its time is the
whole command (start-up and reading the file included) and its peak memory is its own
(``os.wait4``). Both wall and processor seconds are shown: on a shared machine the processor
seconds are what an idle one would take as wall time (the work is single-threaded), and the
ratios to the goals use them. A command over ``--timeout`` processor seconds (or four times
that in wall time) is stopped and shown as ``>T``.
There is no failure-study command yet, so that step is left out.

Usage: python tests/benchmarks/bench_scale.py [--quick] [--repeat N] [--only SECTION]
       [--timeout S] [--max-sites N] [--min-sites N] [--size-up-to N] [--repo CHECKOUT]
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import math
import os
import pathlib
import random
import signal
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

from netdim.errors import NetworkFileError
from netdim.netfile import read_network
from netdim.routing import RouteFinder, link_graph

ROOT = pathlib.Path(__file__).resolve().parents[2]
BASE_COMMIT = "f4a4912"  # the commit the scale work started from

#: Goals of the scale work: (seconds, peak MB or None).
GOALS = {
    "read 30k demands, routes given": (3.0, None),
    "check 1000 sites, 30k generated routes": (10.0, None),
    "size fixed 1000 / 30k": (30.0, 1536.0),
    "size alternate 1000 / 30k": (60.0, 1536.0),
}


# -- inputs ----------------------------------------------------------------------------------
def backbone_text(n_sites, n_demands, *, seed=1, policy="fixed", max_hops=20, max_routes=1,
                  total=3000.0, given=False):
    """A sparse backbone network file (see the module docstring); ``given``: every demand
    between neighbours on the ring, with its one-link route written out."""
    rng = random.Random(seed)
    pos = [(1000 * math.cos(2 * math.pi * i / n_sites), 1000 * math.sin(2 * math.pi * i / n_sites))
           for i in range(n_sites)]
    out = [f"name: Synthetic backbone of {n_sites} sites", "# demo data, generated",
           "defaults: {target: 0.01, holding: 0.05}",
           f"routing: {{policy: {policy}, max_hops: {max_hops}, max_routes: {max_routes}}}",
           "sites:"]
    out += [f"  - {{id: S{i}, x: {x:.1f}, y: {y:.1f}}}" for i, (x, y) in enumerate(pos)]
    out.append("links:")
    edges = [(i, (i + 1) % n_sites) for i in range(n_sites)]
    edges += [(i, rng.randrange(n_sites)) for i in range(0, n_sites, 4)]
    seen = set()
    for a, b in edges:
        key = (min(a, b), max(a, b))
        if a == b or key in seen:
            continue
        seen.add(key)
        length = math.dist(pos[a], pos[b])
        out.append(f"  - {{id: L{a}-{b}, ends: [S{a}, S{b}], capacity: 30, module: 30, "
                   f"cost_per_module: {10 + 0.02 * length:.2f}, length: {length:.1f}}}")
    out.append("demands:")
    weights = [rng.uniform(0.5, 2.0) for _ in range(n_sites)]
    if given:
        pairs = [(k % n_sites, (k % n_sites + 1) % n_sites) for k in range(n_demands)]
    else:
        chosen = set()
        while len(chosen) < min(n_demands, n_sites * (n_sites - 1) // 2):
            a, b = rng.sample(range(n_sites), 2)
            chosen.add((min(a, b), max(a, b)))
        pairs = sorted(chosen)
    raw = [weights[a] * weights[b] for a, b in pairs]
    scale = total / sum(raw)
    for k, ((a, b), w) in enumerate(zip(pairs, raw, strict=True)):
        routes = f", routes: [[L{min(a, b)}-{max(a, b)}]]" if given else ""
        if given and (a, b) == (n_sites - 1, 0):
            routes = f", routes: [[L{n_sites - 1}-0]]"
        out.append(f"  - {{id: D{k}, between: [S{a}, S{b}], traffic: {w * scale:.4f}"
                   f"{routes}}}")
    return "\n".join(out) + "\n"


# -- measuring -------------------------------------------------------------------------------
def _cpu_of(pid):
    """Processor seconds used so far by a running child (Linux /proc), else 0."""
    try:
        fields = pathlib.Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, IndexError, ValueError):
        return 0.0


def run_command(args, timeout, stdout=None):
    """(wall seconds, processor seconds, peak MB, exit status or 'timeout') of
    ``python -m netdim ARGS``; stopped once it has used ``timeout`` processor seconds (or
    four times that in wall time). ``stdout``: a path its standard output goes to."""
    t0 = time.perf_counter()
    out = open(stdout, "w") if stdout else subprocess.DEVNULL
    try:
        return _wait(subprocess.Popen([sys.executable, "-m", "netdim", *args], stdout=out,
                                      stderr=subprocess.DEVNULL), t0, timeout)
    finally:
        if stdout:
            out.close()


def _wait(proc, t0, timeout):
    while True:
        pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
        if pid:
            break
        if _cpu_of(proc.pid) > timeout or time.perf_counter() - t0 > 4 * timeout:
            proc.send_signal(signal.SIGKILL)
            pid, status, usage = os.wait4(proc.pid, 0)
            proc.returncode = -9
            return (time.perf_counter() - t0, usage.ru_utime + usage.ru_stime,
                    usage.ru_maxrss / 1024, "timeout")
        time.sleep(0.05)
    seconds = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    return seconds, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024, proc.returncode


def run_median(args, timeout, repeat, stdout=None):
    """Median wall and processor seconds, the largest peak MB and the exit statuses of
    ``repeat`` runs (when a run was stopped: the wall seconds until then, and infinite
    processor seconds)."""
    runs = [run_command(args, timeout, stdout) for _ in range(repeat)]
    peak = max(r[2] for r in runs)
    if any(r[3] == "timeout" for r in runs):  # the wall time until it was stopped
        return max(r[0] for r in runs), float("inf"), peak, "timeout"
    return (statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs),
            peak, ",".join(sorted({str(r[3]) for r in runs})))


def median_cpu_wall(fn, repeat):
    """Median wall and processor seconds of ``fn()`` in this process."""
    walls, cpus = [], []
    for _ in range(repeat):
        t, c = time.perf_counter(), time.process_time()
        fn()
        walls.append(time.perf_counter() - t)
        cpus.append(time.process_time() - c)
    return statistics.median(walls), statistics.median(cpus)


def show_time(seconds, timeout):
    return f">{timeout:.0f}" if not math.isfinite(seconds) else f"{seconds:.2f}"


def base_routing(repo):
    """netdim/routing.py as it was at BASE_COMMIT (from git in ``repo``), or None."""
    try:
        text = subprocess.run(["git", "-C", str(repo), "show", f"{BASE_COMMIT}:netdim/routing.py"],
                              capture_output=True, text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return None
    path = pathlib.Path(tempfile.mkdtemp()) / "routing_base.py"
    path.write_text(text)
    spec = importlib.util.spec_from_file_location("routing_base", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


# -- sections --------------------------------------------------------------------------------
def bench_goals(tmp, repeat, timeout, n_demands, repo, size_repeat=1):
    print(f"\n== goals at 1000 sites ({n_demands} demands; medians of {repeat}; ratio = "
          "median / goal, under 1 meets it)")
    rows = []
    given = tmp / "given.yaml"
    given.write_text(backbone_text(1000, n_demands, given=True))
    wall, cpu = median_cpu_wall(lambda: read_network(given), repeat)
    rows.append(("read 30k demands, routes given", wall, cpu, None, "read_network"))
    gen = tmp / "generated.yaml"
    gen.write_text(backbone_text(1000, n_demands, max_routes=3))
    wall, cpu, mb, st = run_median(["check", str(gen)], timeout, repeat)
    rows.append(("check 1000 sites, 30k generated routes", wall, cpu, mb, f"exit {st}"))
    plans = []
    for policy, k in (("fixed", 1), ("alternate", 2)):
        path = tmp / f"size-{policy}.yaml"
        path.write_text(backbone_text(1000, n_demands, policy=policy, max_routes=k))
        out = tmp / f"size-{policy}.json"
        wall, cpu, mb, st = run_median(["size", str(path), "--quiet", "--json"], timeout,
                                       size_repeat, stdout=out)
        rows.append((f"size {policy} 1000 / 30k", wall, cpu, mb,
                     f"exit {st}, {size_repeat} run{'s' if size_repeat > 1 else ''}"))
        plans.append((policy, out))
    print(f"{'goal':>40} {'wall s':>7} {'cpu s':>7} {'goal s':>6} {'ratio':>6} {'peak MB':>8} "
          f"{'goal MB':>8} {'ratio':>6}  note")
    for name, wall, cpu, mb, note in rows:
        goal_s, goal_mb = GOALS[name]
        mb_text = "-" if mb is None else f"{mb:.0f}"
        gmb = "-" if goal_mb is None else f"{goal_mb:.0f}"
        rmb = "-" if (mb is None or goal_mb is None) else f"{mb / goal_mb:.2f}"
        print(f"{name:>40} {show_time(wall, 4 * timeout):>7} {show_time(cpu, timeout):>7} "
              f"{goal_s:>6.0f} {cpu / goal_s:>6.2f} {mb_text:>8} {gmb:>8} {rmb:>6}  {note}")
    print(f"\n{'plan':>10} {'cost':>10} {'lower bound':>12} {'gap %':>6} {'iterations':>10}  "
          "status")
    for policy, out in plans:
        try:
            plan = json.loads(out.read_text())
        except (OSError, ValueError):
            print(f"{policy:>10} {'-':>10} {'-':>12} {'-':>6} {'-':>10}  no plan (stopped)")
            continue
        print(f"{policy:>10} {plan['cost']:>10.2f} {plan['lower_bound']:>12.2f} "
              f"{100 * plan['gap']:>6.2f} {plan['iterations']:>10}  {plan['status']}")

    old = base_routing(repo)
    if old is None:
        print("(git or the base commit not at hand: no route comparison)")
        return
    net = read_network(tmp / "size-fixed.yaml")  # the topology; routes made again below
    graph = link_graph(net.links, [s.id for s in net.sites])
    pairs = [tuple(d.between) for d in net.demands]
    print(f"\n== route generation, {len(pairs)} demands, max_hops 20, max_routes 3: this "
          f"commit against {BASE_COMMIT} (medians of {repeat})")
    new_out = RouteFinder(graph, 20, 3).routes_many(pairs)
    old_out = old.RouteFinder(graph, 20, 3).routes_many(pairs)
    _, t_new = median_cpu_wall(lambda: RouteFinder(graph, 20, 3).routes_many(pairs), repeat)
    _, t_old = median_cpu_wall(lambda: old.RouteFinder(graph, 20, 3).routes_many(pairs),
                               repeat)
    print(f"{'base cpu s':>10} {'now cpu s':>10} {'base / now':>10}  same routes")
    print(f"{t_old:>10.2f} {t_new:>10.2f} {t_old / t_new:>10.2f}  {new_out == old_out}")


def _steps(path, timeout, repeat, size=True, failures=True):
    net = read_network(path, max_size=0)
    routes = sum(len(d.routes) for d in net.demands)
    out = {"sites": len(net.sites), "links": len(net.links), "demands": len(net.demands),
           "routes": routes}
    out["check"] = run_median(["check", str(path)], timeout, repeat)
    plan = path.with_suffix(".plan.yaml")
    if size:
        out["size"] = run_median(["size", str(path), "--quiet", "--json", "--out", str(plan),
                                  "--force"], timeout, 1)
    # the plan where there is one (imported files have no capacities), else the file
    out["evaluate"] = run_median(["evaluate", str(plan if plan.exists() else path), "--json"],
                                 timeout, repeat)
    if failures:  # every single-link cut, serial (so processor seconds count the work)
        out["failures"] = run_median(["failures", str(plan if plan.exists() else path),
                                      "--json", "--quiet"], timeout, 1)
    return out


def _print_steps(label, row, timeout, steps):
    cells = [f"{label:>24} {row['sites']:>6} {row['links']:>6} {row['demands']:>7} "
             f"{row['routes']:>7}"]
    for step in steps:
        if step not in row:
            cells.append(f"{'-':>9} {'-':>7} {'-':>6}")
            continue
        wall, cpu, mb, st = row[step]
        mark = "" if st in ("0", "1") else "!"
        cells.append(f"{show_time(wall, 4 * timeout):>9} {show_time(cpu, timeout) + mark:>7} "
                     f"{mb:>6.0f}")
    print(" ".join(cells))


def _header(first, steps):
    print(f"{first:>24} {'sites':>6} {'links':>6} {'demands':>7} {'routes':>7} "
          + " ".join(f"{s + ' s':>9} {'cpu s':>7} {'MB':>6}" for s in steps))


def bench_growth(tmp, repeat, timeout, max_sites, per_site, size_up_to, min_sites=300,
                 failures_up_to=625):
    sizes = []
    n = max_sites
    while n >= min_sites:
        sizes.append(n)
        n //= 2
    sizes.sort()
    steps = ["check", "size", "evaluate", "failures"]
    print(f"\n== growth: backbones by 2x steps, {per_site} demands a site, fixed routing, "
          f"max_routes 1 (medians of {repeat}; size one run, up to {size_up_to} sites; "
          f"failures one run, every link cut, up to {failures_up_to} sites; "
          "'!' an exit status other than 0 or 1)")
    _header("network", steps)
    rows = []
    for n in sizes:
        path = tmp / f"growth-{n}.yaml"
        # max_hops 40: at 5000 sites some pairs of this backbone are over 20 links apart
        path.write_text(backbone_text(n, per_site * n, total=3.0 * n, max_hops=40))
        try:
            row = _steps(path, timeout, repeat, size=n <= size_up_to,
                         failures=n <= failures_up_to)
        except NetworkFileError as exc:  # a pair further apart than max_hops, say
            print(f"{'backbone ' + str(n):>24} not read: {str(exc).splitlines()[0][:120]}")
            continue
        rows.append(row)
        _print_steps(f"backbone {n}", row, timeout, steps)
    if len(rows) < 2:
        return
    print("growth exponent of processor time in routes (slope of log cpu s on log routes):")
    for step in steps:
        pts = [(r["routes"], r[step][1]) for r in rows if step in r and math.isfinite(r[step][1])]
        if len(pts) >= 2:
            x = np.log([p[0] for p in pts])
            y = np.log([p[1] for p in pts])
            print(f"  {step:>9}: {np.polyfit(x, y, 1)[0]:.2f} over {len(pts)} sizes")


def bench_real(tmp, repeat, timeout):
    steps = ["import", "check", "size", "evaluate", "failures"]
    print(f"\n== real topologies (Internet Topology Zoo, CC BY 4.0; networks/SOURCES.md): "
          f"import with gravity traffic of 3000 E, modules of 30, cost 10 + 0.02 per km a "
          f"module (medians of {repeat}; size one run)")
    _header("file", steps)
    for src in sorted((ROOT / "networks").glob("topozoo-*.graphml")):
        path = tmp / (src.stem + ".yaml")
        imp = run_median(["import", str(src), "-o", str(path), "--force", "--quiet",
                          "--traffic", "gravity", "--total", "3000", "--module", "30",
                          "--module-cost", "10", "--cost-per-km", "0.02"], timeout, repeat)
        row = _steps(path, timeout, repeat)
        row["import"] = imp
        _print_steps(src.stem.removeprefix("topozoo-"), row, timeout, steps)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true",
                    help="3k demands for the goals, backbones up to 1250 sites")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--only", choices=("goals", "growth", "real"))
    ap.add_argument("--timeout", type=float, default=600.0)
    ap.add_argument("--max-sites", type=int, default=5000)
    ap.add_argument("--min-sites", type=int, default=300)
    ap.add_argument("--size-up-to", type=int, default=1250,
                    help="size the growth backbones up to this many sites")
    ap.add_argument("--failures-up-to", type=int, default=625,
                    help="run the failure study on the growth backbones up to this many "
                    "sites (it evaluates once per link)")
    ap.add_argument("--size-repeat", type=int, default=1,
                    help="runs of each goal's `size` (default 1: they are long)")
    ap.add_argument("--repo", default=str(ROOT),
                    help="git checkout to read the base commit's route generator from")
    args = ap.parse_args()
    print(f"netdim scale benchmark, {time.strftime('%Y-%m-%d %H:%M')} UTC, Python "
          f"{sys.version.split()[0]}, load average {os.getloadavg()[0]:.1f}")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = pathlib.Path(tmp)
        if args.only in (None, "goals"):
            bench_goals(tmp, args.repeat, args.timeout, 3000 if args.quick else 30000,
                        args.repo, args.size_repeat)
        if args.only in (None, "growth"):
            bench_growth(tmp, args.repeat, args.timeout,
                         1250 if args.quick else args.max_sites, 30, args.size_up_to,
                         args.min_sites, args.failures_up_to)
        if args.only in (None, "real"):
            bench_real(tmp, args.repeat, args.timeout)


if __name__ == "__main__":
    main()
