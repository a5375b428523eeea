"""``netdim evaluate FILE``: end-to-end blocking of every demand, and link figures."""

from __future__ import annotations

import json
import sys
import time

__all__ = ["register", "run"]

_METHODS = ("fixed-point", "conservative", "exact", "simulate")
_LAWS = ("exponential", "deterministic", "lognormal")

# option (argparse dest) -> (keyword, methods it applies to)
_OPTIONS = {
    "seed": ("seed", ("simulate",)),
    "calls": ("calls", ("simulate",)),
    "precision": ("precision", ("simulate",)),
    "holding_law": ("holding_law", ("simulate",)),
    "cv": ("cv", ("simulate",)),
    "max_states": ("max_states", ("exact",)),
    "tol": ("tol", ("fixed-point", "conservative")),
    "max_iter": ("max_iter", ("fixed-point",)),
}
# what --check passes on to the comparison
_CHECK_OPTIONS = ("seed", "calls", "precision", "holding_law", "cv", "max_states")


def register(subparsers):
    p = subparsers.add_parser(
        "evaluate",
        help="end-to-end blocking of every demand and the state of every link",
        description="Evaluate the blocking of every demand of a network file at its "
        "capacities: by the reduced-load fixed point (default), the conservative product "
        "bound, exactly (small networks) or by simulation. Demands and links are listed "
        "worst first. Exit 0 when every target is met, 1 when some are not (naming them on "
        "stderr), 2 on bad input.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--method", choices=_METHODS, default=None,
                   help="evaluation method (default fixed-point)")
    p.add_argument("--conservative", action="store_true",
                   help="same as --method conservative: un-thinned link loads (product bound)")
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--csv", metavar="DIR", help="also write DIR/demands.csv and DIR/links.csv")
    p.add_argument("--check", action="store_true",
                   help="accuracy check: fixed point beside simulation (and exact where small)")
    g = p.add_argument_group("simulation (--method simulate, --check)")
    g.add_argument("--seed", type=int, default=None, help="random seed (reproducible run)")
    g.add_argument("--calls", type=int, default=None, metavar="N",
                   help="call arrivals to simulate")
    g.add_argument("--precision", type=float, default=None, metavar="X",
                   help="simulate until every interval is narrower than X relative")
    g.add_argument("--holding-law", choices=_LAWS, default=None,
                   help="law of holding times (default exponential)")
    g.add_argument("--cv", type=float, default=None,
                   help="coefficient of variation of the lognormal law")
    g = p.add_argument_group("exact method (--method exact, --check)")
    g.add_argument("--max-states", type=int, default=None, metavar="N",
                   help="refuse networks with more states than this")
    g = p.add_argument_group("fixed point")
    g.add_argument("--tol", type=float, default=None, help="convergence tolerance (1e-10)")
    g.add_argument("--max-iter", type=int, default=None, metavar="N",
                   help="most iterations (1000)")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    p.set_defaults(func=run)
    return p


def _flag(dest) -> str:
    return "--" + dest.replace("_", "-")


def _method(args) -> str:
    if args.conservative:
        if args.method not in (None, "conservative"):
            raise ValueError(f"--conservative: conflicts with --method {args.method}")
        return "conservative"
    return args.method or "fixed-point"


def _progress(args):
    if args.quiet:
        return None

    # Long runs only: the first line after 2 s, then at most one every 2 s.
    start = time.monotonic()
    last = [start]

    def progress(fraction, message):
        now = time.monotonic()
        if now - start < 2.0 or (now - last[0] < 2.0 and fraction < 1.0):
            return
        last[0] = now
        print(f"netdim evaluate: {100 * fraction:.0f}% {message}", file=sys.stderr, flush=True)

    return progress


def run(args) -> int:
    from netdim.netfile import read_network

    method = _method(args)
    given = {dest for dest in _OPTIONS if getattr(args, dest) is not None}
    if args.check:
        if args.method is not None or args.conservative:
            raise ValueError("--check: compares the methods itself; leave out --method")
        wrong = given - set(_CHECK_OPTIONS)
        if wrong:
            d = sorted(wrong)[0]
            raise ValueError(f"{_flag(d)}: does not apply to --check")
        if args.csv:
            raise ValueError("--csv: does not apply to --check")
    else:
        for dest in sorted(given):
            if method not in _OPTIONS[dest][1]:
                ok = " or ".join(f"--method {m}" for m in _OPTIONS[dest][1])
                raise ValueError(f"{_flag(dest)}: applies to {ok} only, not --method {method}")
    network = read_network(args.file)

    if args.check:
        from netdim.evaluate.compare import compare_methods
        from netdim.report.comparison import comparison_text

        opts = {dest: getattr(args, dest) for dest in _CHECK_OPTIONS if dest in given}
        result = compare_methods(network, network.capacities(), progress=_progress(args),
                                 **opts)
        if args.json:
            print(json.dumps(result.to_dict(), indent=2))
        else:
            text = comparison_text(result)
            print(text, end="" if text.endswith("\n") else "\n")
        return 0

    from netdim.evaluate import evaluate
    from netdim.report.evaluation import evaluation_text, write_csv

    opts = {_OPTIONS[dest][0]: getattr(args, dest) for dest in given}
    if method == "simulate":
        opts["progress"] = _progress(args)
    ev = evaluate(network, method=method, **opts)
    if args.csv:
        write_csv(ev, args.csv)
    if args.json:
        print(json.dumps(ev.to_dict(), indent=2))
    else:
        title = f"{network.name} ({args.file})"
        print(evaluation_text(ev, title=title), end="")
    if not ev.all_met:
        unmet = ev.unmet
        print(f"netdim evaluate: {len(unmet)} of {len(ev.demand_ids)} demands miss their "
              f"target: {', '.join(unmet)}", file=sys.stderr)
        return 1
    return 0
