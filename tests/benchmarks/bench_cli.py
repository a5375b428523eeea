"""Start-up and whole-process times of the ``netdim`` command line (a benchmark, not a test).

    python tests/benchmarks/bench_cli.py [--repeats 7] [--calls 1000000]

Each row runs the command as a fresh process (the installed ``netdim`` script next to this
interpreter) ``--repeats`` times and prints the median wall time, beside two floors timed
in the same run: the interpreter alone (``python -c pass``) and ``import numpy``, and the
median CPU time (user + system) of the process, which waiting for a core does not inflate.
Goals (issue 17): ``netdim erlang --traffic 10 --target 0.01`` under 0.3 s on a quiet machine;
``netdim evaluate --method simulate`` within 1.5 s of the same run through the API in one
process (timed here too, compile or cache load included, then warm).
"""

from __future__ import annotations

import argparse
import os
import pathlib
import resource
import statistics
import subprocess
import sys
import time

ROOT = pathlib.Path(__file__).resolve().parents[2]
NETDIM = pathlib.Path(sys.executable).with_name("netdim")
NETWORK = "networks/regional-telephone.yaml"


def median_wall(argv, repeats):
    """Median and best wall time of the command, and its median CPU time (user + system of
    the child): on a loaded machine the wall time includes waiting for a core, the CPU
    time does not."""
    times, cpus = [], []
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        proc = subprocess.run(argv, cwd=ROOT, stdout=subprocess.DEVNULL,
                              stderr=subprocess.PIPE, text=True)
        times.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
        if proc.returncode not in (0, 1):
            raise SystemExit(f"{' '.join(map(str, argv))}: exit {proc.returncode}\n"
                             f"{proc.stderr}")
    return statistics.median(times), min(times), statistics.median(cpus)


def api_simulate(calls):
    """The same simulation in this process: first call (compile or cache load) and warm,
    each as (wall, CPU) seconds."""
    from netdim import evaluate, read_network

    net = read_network(ROOT / NETWORK)
    out = []
    for _ in range(2):
        t0, c0 = time.perf_counter(), time.process_time()
        evaluate(net, method="simulate", seed=1, calls=calls)
        out.append((time.perf_counter() - t0, time.process_time() - c0))
    return out


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--repeats", type=int, default=7)
    p.add_argument("--calls", type=int, default=1_000_000)
    p.add_argument("--no-simulate", action="store_true", help="skip the simulation rows")
    args = p.parse_args(argv)
    py = sys.executable
    rows = [
        ("python -c pass (floor)", [py, "-c", "pass"]),
        ("python -c 'import numpy' (floor)", [py, "-c", "import numpy"]),
        ("netdim --version", [NETDIM, "--version"]),
        ("netdim erlang --traffic 10 --target 0.01", [NETDIM, "erlang", "--traffic", "10",
                                                      "--target", "0.01"]),
        ("netdim erlang --servers 100 --target 0.01", [NETDIM, "erlang", "--servers", "100",
                                                       "--target", "0.01"]),
        ("netdim erlang --traffic 5000 --servers 5050", [NETDIM, "erlang", "--traffic", "5000",
                                                         "--servers", "5050"]),
        ("netdim erlang --traffic 1:200:1 --target 0.01",
         [NETDIM, "erlang", "--traffic", "1:200:1", "--target", "0.01"]),
        (f"netdim check {NETWORK}", [NETDIM, "check", NETWORK]),
        (f"netdim evaluate {NETWORK}", [NETDIM, "evaluate", NETWORK]),
    ]
    if not args.no_simulate:
        rows.append((f"netdim evaluate --method simulate --calls {args.calls:.0e}",
                     [NETDIM, "evaluate", NETWORK, "--method", "simulate", "--seed", "1",
                      "--calls", str(args.calls)]))
    print(f"whole processes, median of {args.repeats} (load average "
          f"{os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    floor = None
    for label, cmd in rows:
        med, best, cpu = median_wall(cmd, args.repeats)
        floor = med if floor is None else floor
        print(f"  {label:<48} median {med:7.3f} s   best {best:7.3f} s   "
              f"(interpreter x{med / floor:5.1f})   CPU {cpu:6.3f} s")
    if not args.no_simulate:
        (first, first_cpu), (warm, warm_cpu) = api_simulate(args.calls)
        print(f"  API evaluate(method='simulate', calls={args.calls:.0e}) in one process: "
              f"first call {first:.3f} s (CPU {first_cpu:.3f} s), warm {warm:.3f} s "
              f"(CPU {warm_cpu:.3f} s)")
        print(f"  process - API first call: wall {med - first:.3f} s, CPU "
              f"{cpu - first_cpu:.3f} s (goal <= 1.5 s)")


if __name__ == "__main__":
    main()
