"""Run many mutated network files through netdim and count the outcomes (not collected by pytest).

Each file (see tests/fuzz/mutations.py) goes through ``check``, ``evaluate`` with each method
(small call counts and state limits) and ``size`` (small time budgets), all with ``--json``,
in worker processes that import netdim once. When ``check`` gives a clean error the other
commands are not run (they read the file with the same reader first) and count the same.
Each (file, command) is judged, and each file counted by its worst outcome, worst first:

- ``traceback``: an exception escaped ``netdim.cli.main``;
- ``hang``: no answer within the time limit (10 s of processor time a command, or of
  elapsed time with ``--clock wall``; the worker is killed and replaced when it does not
  come back);
- ``memory``: MemoryError under the address-space limit;
- ``unnamed error``: exit 2 with a message naming neither the file nor an item in quotes;
- ``bad output``: exit 0, 1 or 3 without valid JSON, or JSON holding NaN or Infinity; or an
  exit status other than 0-3;
- ``clean error``: exit 2 with a message naming the file or the item;
- ``normal answer``: exit 0, 1 or 3 with valid JSON.

Usage::

    python tests/fuzz/run_fuzz.py --files 500 --out /tmp/fuzz-after.json
    PYTHONPATH=/path/to/other/checkout python tests/fuzz/run_fuzz.py ...   # another tree

The worst (file, command) of each class is printed with the file kept under ``--keep``.
"""

from __future__ import annotations

import argparse
import collections
import contextlib
import io
import json
import os
import pathlib
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import time
import traceback

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

ORDER = ("traceback", "hang", "memory", "unnamed error", "bad output", "clean error",
         "normal answer")

COMMANDS = {
    "check": ["check", "{f}", "--json"],
    "fixed-point": ["evaluate", "{f}", "--method", "fixed-point", "--json"],
    "conservative": ["evaluate", "{f}", "--method", "conservative", "--json"],
    "exact": ["evaluate", "{f}", "--method", "exact", "--max-states", "200000", "--json"],
    "simulate": ["evaluate", "{f}", "--method", "simulate", "--calls", "3000", "--seed", "1",
                 "--json", "--quiet"],
    "size": ["size", "{f}", "--json", "--quiet", "--bound-time", "0.5", "--time-limit", "3"],
}


# -- judging one command --------------------------------------------------------------------
def judge(path, status, out, err):
    """The outcome class of one command's exit status and output."""
    if status == 2:
        first = err.strip().splitlines()[0] if err.strip() else ""
        if str(path) in err or ("'" in first) or ('"' in first):
            return "clean error"
        return "unnamed error"
    if status in (0, 1, 3):
        try:
            json.loads(out, parse_constant=_no_constant)
        except (ValueError, TypeError):
            if status == 3 and not out.strip():
                return "normal answer"  # did not converge: said on stderr, no JSON
            return "bad output"
        return "normal answer"
    return "bad output"


def _no_constant(name):
    raise ValueError(f"JSON holds {name}")


# -- the worker (one process, many files) ----------------------------------------------------
class _Alarm(Exception):
    pass


def _on_alarm(signum, frame):
    raise _Alarm


def run_in_process(argv, seconds, clock="cpu"):
    """(status, stdout, stderr, outcome override or None) of ``netdim.cli.main(argv)``.

    ``clock``: 'cpu' stops the command after ``seconds`` of processor time (a busy machine
    does not turn a slow answer into a hang), 'wall' after ``seconds`` of elapsed time.
    """
    from netdim.cli import main

    out, err = io.StringIO(), io.StringIO()
    which, sig = ((signal.ITIMER_PROF, signal.SIGPROF) if clock == "cpu"
                  else (signal.ITIMER_REAL, signal.SIGALRM))
    signal.signal(sig, _on_alarm)
    signal.setitimer(which, seconds)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            status = main(argv)
        return int(status or 0), out.getvalue(), err.getvalue(), None
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else 2
        return code, out.getvalue(), err.getvalue(), None
    except _Alarm:
        return -1, out.getvalue(), err.getvalue(), "hang"
    except MemoryError:
        return -1, out.getvalue(), err.getvalue(), "memory"
    except BaseException as exc:
        tb = traceback.format_exception(exc)
        return -1, out.getvalue(), err.getvalue() + "".join(tb[-3:]), "traceback"
    finally:
        signal.setitimer(which, 0)


def worker(seconds, memory_gb, clock):
    limit = int(memory_gb * 2**30)
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    for line in sys.stdin:
        path = line.strip()
        results = {}
        for name, argv in COMMANDS.items():
            first = results.get("check")
            if first is not None and first["status"] == 2 and first["outcome"] == "clean error":
                # every command reads the file with the same reader first: same error
                results[name] = dict(first, seconds=0.0)
                continue
            argv = [a.replace("{f}", path) for a in argv]
            t = time.perf_counter()
            status, out, err, forced = run_in_process(argv, seconds, clock)
            outcome = forced or judge(path, status, out, err)
            results[name] = {"outcome": outcome, "status": status,
                             "seconds": round(time.perf_counter() - t, 3),
                             "err": err.strip()[-400:]}
            if forced == "memory":
                break
        print(json.dumps({"path": path, "results": results}), flush=True)


# -- the parent ------------------------------------------------------------------------------
def make_files(n, directory):
    from mutations import BASES, MUTATIONS, mutated

    directory = pathlib.Path(directory)
    files = []
    seed = 0
    while len(files) < n:
        for base in BASES:
            for name in MUTATIONS:
                if name == "big_file" and seed >= 1:
                    continue
                path = directory / f"{base}.{name}.{seed}.yaml"
                path.write_bytes(mutated(base, name, seed))
                files.append((f"{name}", path))
        seed += 1
    files = files[:n]
    fifo = directory / "fifo.yaml"
    os.mkfifo(fifo)
    (directory / "a-directory.yaml").mkdir()
    files += [("odd path", fifo), ("odd path", pathlib.Path("/dev/zero")),
              ("odd path", directory / "a-directory.yaml"),
              ("odd path", directory / "missing.yaml")]
    return files


class Worker:
    def __init__(self, args):
        cmd = [sys.executable, __file__, "--worker", "--seconds", str(args.seconds),
               "--memory-gb", str(args.memory_gb), "--clock", args.clock]
        self.proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                     stderr=subprocess.DEVNULL, text=True, bufsize=1)

    def ask(self, path, deadline):
        self.proc.stdin.write(f"{path}\n")
        self.proc.stdin.flush()
        import selectors

        sel = selectors.DefaultSelector()
        sel.register(self.proc.stdout, selectors.EVENT_READ)
        if not sel.select(timeout=deadline):
            return None
        line = self.proc.stdout.readline()
        return json.loads(line) if line else None

    def kill(self):
        self.proc.kill()
        self.proc.wait()


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--files", type=int, default=500)
    ap.add_argument("--seconds", type=float, default=10, help="per command (default 10)")
    ap.add_argument("--clock", choices=("cpu", "wall"), default="cpu",
                    help="what --seconds counts: processor time (default) or elapsed time")
    ap.add_argument("--memory-gb", type=float, default=3.0)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--out", default=None, help="write every result as JSON here")
    ap.add_argument("--keep", default=None, help="copy the worst files into this folder")
    ap.add_argument("--skip", type=int, default=0, help="leave out the first K files")
    ap.add_argument("--jsonl", default=None, help="append each file's result here as it ends")
    ap.add_argument("--summarize", nargs="+", default=None, metavar="FILE",
                    help="only print the counts of earlier --jsonl / --out files")
    ap.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        return worker(args.seconds, args.memory_gb, args.clock)
    if args.summarize:
        records = []
        for name in args.summarize:
            text = pathlib.Path(name).read_text()
            if text.lstrip().startswith("["):
                records += json.loads(text)
            else:
                records += [json.loads(line) for line in text.splitlines() if line.strip()]
        report(records, 0.0, None)
        return 0
    import concurrent.futures as cf
    import threading

    tmp = tempfile.mkdtemp(prefix="netdim-fuzz-")
    files = make_files(args.files, tmp)[args.skip:]
    local = threading.local()
    records = []
    lock = threading.Lock()
    deadline = args.seconds * len(COMMANDS) * (6 if args.clock == "cpu" else 1) + 30

    def one(item):
        mutation, path = item
        w = getattr(local, "w", None) or Worker(args)
        local.w = w
        answer = w.ask(path, deadline)
        if answer is None:
            w.kill()
            local.w = None
            answer = {"path": str(path), "results": {"?": {"outcome": "hang", "status": -1,
                                                            "seconds": deadline, "err": ""}}}
        answer["mutation"] = mutation
        with lock:
            records.append(answer)
            if args.jsonl:
                with open(args.jsonl, "a") as fh:
                    fh.write(json.dumps(answer) + "\n")
            if len(records) % 50 == 0:
                print(f"  {len(records)} of {len(files)} files", file=sys.stderr, flush=True)

    t0 = time.perf_counter()
    with cf.ThreadPoolExecutor(args.workers) as pool:
        list(pool.map(one, files))
    elapsed = time.perf_counter() - t0
    report(records, elapsed, args.keep)
    if args.out:
        pathlib.Path(args.out).write_text(json.dumps(records, indent=1))
    return 0


def report(records, elapsed, keep_dir):
    """Print the counts by worst outcome per file, per command, and the smallest examples."""
    by_file = collections.Counter()
    by_command = collections.defaultdict(collections.Counter)
    examples = {}
    for rec in records:
        outcomes = {name: r["outcome"] for name, r in rec["results"].items()}
        worst = min(outcomes.values(), key=ORDER.index)
        rec["worst"] = worst
        by_file[worst] += 1
        for name, outcome in outcomes.items():
            by_command[name][outcome] += 1
            if outcome in ORDER[:5]:
                key = (outcome, name, rec["mutation"])
                size = _size(rec["path"])
                if key not in examples or size < examples[key][0]:
                    examples[key] = (size, rec["path"], rec["results"][name]["err"])
    print(f"{len(records)} files in {elapsed:.0f} s; worst outcome per file:")
    for outcome in ORDER:
        print(f"  {outcome:<14} {by_file[outcome]}")
    print("per command:")
    for name in list(COMMANDS) + (["?"] if "?" in by_command else []):
        counts = ", ".join(f"{o} {by_command[name][o]}" for o in ORDER if by_command[name][o])
        print(f"  {name:<13} {counts}")
    print("smallest example of each failure (outcome, command, mutation):")
    for (outcome, name, mutation), (size, path, err) in sorted(examples.items()):
        last = err.strip().splitlines()[-1] if err.strip() else ""
        print(f"  {outcome:<13} {name:<13} {mutation:<16} {size:>8} B  {path}\n"
              f"      {last[:160]}")
        if keep_dir:
            keep = pathlib.Path(keep_dir)
            keep.mkdir(parents=True, exist_ok=True)
            if os.path.isfile(path):
                shutil.copy(path, keep / f"{outcome.replace(' ', '-')}.{name}."
                                         f"{pathlib.Path(path).name}")


def _size(path):
    try:
        return os.stat(path).st_size if os.path.isfile(path) else 0
    except OSError:
        return 0


if __name__ == "__main__":
    sys.exit(main())
