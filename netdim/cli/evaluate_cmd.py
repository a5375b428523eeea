"""``netdim evaluate FILE``: end-to-end blocking of every demand, and link figures."""

from __future__ import annotations

import json
import sys
import time

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._rows import add_rows_option, rows_note, rows_shown, some_names
from netdim.cli.report_cmd import add_report_options, check_report_args, write_evaluation_report
from netdim.evaluate import (
    COMPARE_OPTIONS,
    HOLDING_LAWS,
    METHOD_OPTIONS,
    METHODS,
    compare_methods,
    default_method,
    evaluate,
)
from netdim.evaluate.day_compare import CHECK_OPTIONS as DAY_CHECK_OPTIONS
from netdim.evaluate.day_compare import compare_day_methods
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED
from netdim.evaluate.peaked_fixed_point import multirate_problem
from netdim.netfile import read_network
from netdim.report.comparison import comparison_text, write_comparison_csv
from netdim.report.day_text import day_check_text, with_day_text
from netdim.report.evaluation import evaluation_text, write_csv
from netdim.vocabulary import Verdict

__all__ = ["register", "run"]

# The flags that are options of some method, by argparse dest (= the library's keyword).
_OPTION_DESTS = ("seed", "calls", "precision", "holding_law", "cv", "max_states", "tol",
                 "max_iter", "days")


def register(subparsers):
    p = subparsers.add_parser(
        "evaluate",
        help="end-to-end blocking of every demand and the state of every link",
        description="Evaluate the blocking of every demand of a network file at its "
        "capacities: by the reduced-load fixed point (default), the conservative product "
        "bound, exactly (small networks) or by simulation. Demands and links are listed "
        "worst first, each demand with its verdict: met, missed, or (simulation) unclear "
        "when the confidence interval contains the target. Exit 0 when every demand is met, "
        "1 when some are missed or unclear (naming them on stderr), 2 on bad input or work "
        "beyond a stated limit, 3 when a computation did not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--method", choices=METHODS, default=None,
                   help="evaluation method (default: peaked-fixed-point under alternate "
                   "routing with single-unit calls, where it follows the bursts of overflow "
                   "traffic; fixed-point otherwise)")
    p.add_argument("--conservative", action="store_true",
                   help="same as --method conservative: un-thinned link loads (product bound)")
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--csv", metavar="DIR", help="also write DIR/demands.csv and DIR/links.csv "
                   "(with --check: DIR/comparison.csv)")
    p.add_argument("--check", "--compare", dest="check", action="store_true",
                   help="accuracy check: the fixed point (and under alternate routing the "
                   "peaked fixed point) beside simulation, and exact where small")
    g = p.add_argument_group("simulation (--method simulate, --check)")
    g.add_argument("--seed", type=int, default=None,
                   help="random seed (reproducible run; without one a seed is drawn and "
                   "printed)")
    g.add_argument("--calls", type=int, default=None, metavar="N",
                   help="call arrivals to simulate")
    g.add_argument("--precision", type=float, default=None, metavar="X",
                   help="simulate until every interval is narrower than X relative")
    g.add_argument("--holding-law", choices=HOLDING_LAWS, default=None,
                   help="law of holding times (default exponential)")
    g.add_argument("--cv", type=float, default=None,
                   help="coefficient of variation of the lognormal law (with --holding-law "
                   "lognormal only)")
    g = p.add_argument_group("exact method (--method exact, --check)")
    g.add_argument("--max-states", type=int, default=None, metavar="N",
                   help="refuse networks with more states than this")
    g = p.add_argument_group("fixed point (plain and peaked)")
    g.add_argument("--tol", type=float, default=None, help="convergence tolerance (1e-10)")
    g.add_argument("--max-iter", type=int, default=None, metavar="N",
                   help="most iterations (1000)")
    g = p.add_argument_group("demand over the day (a file with rates: --method day, the "
                             "default there, day-exact, day-fpa, day-mol, day-simulate)")
    g.add_argument("--days", type=int, default=None, metavar="N",
                   help="days to simulate (--method day-simulate; default: enough for "
                   "--calls arrivals)")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    add_report_options(p)
    add_rows_option(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


def _flag(dest) -> str:
    return "--" + dest.replace("_", "-")


def _method(args, network) -> str:
    if args.conservative:
        if args.method not in (None, "conservative"):
            raise ValueError(f"--conservative: conflicts with --method {args.method}")
        return "conservative"
    if args.method:
        return args.method
    # a day profile is evaluated over the day; else the peaked fixed point where it applies
    return "day" if network.day is not None else default_method(network)


def _progress(args):
    if args.quiet:
        return None

    # Long runs only: the first line after 2 s, then at most one every 2 s.
    start = time.monotonic()
    last = [start]

    def progress(fraction, message):
        now = time.monotonic()
        done = fraction is not None and fraction >= 1.0
        if now - start < 2.0 or (now - last[0] < 2.0 and not done):
            return
        last[0] = now
        share = "" if fraction is None else f"{100 * fraction:.0f}% "
        print(f"netdim evaluate: {share}{message}", file=sys.stderr, flush=True)

    return progress


def _given(args) -> list[str]:
    return sorted(dest for dest in _OPTION_DESTS if getattr(args, dest) is not None)


def _check_flags(args, method):
    given = _given(args)
    if args.check:
        if args.method is not None or args.conservative:
            raise ValueError("--check: compares the methods itself; leave out --method")
        wrong = [d for d in given if d not in COMPARE_OPTIONS]
        if wrong:
            raise ValueError(f"{_flag(wrong[0])}: does not apply to --check")
        return given
    for dest in given:
        if dest not in METHOD_OPTIONS[method]:
            takers = [m for m in METHODS if dest in METHOD_OPTIONS[m]]
            # name the takers of the same kind (busy-hour or over the day) where there are
            same = [m for m in takers if m.startswith("day") == method.startswith("day")]
            takers = same or takers
            ok = " or ".join(f"--method {m}" for m in takers)
            raise ValueError(f"{_flag(dest)}: applies to {ok} only, not --method {method}")
    return given


def _report_verdicts(ids, verdicts) -> int:
    """Name the missed and the unclear demands on stderr; the exit status."""
    n = len(ids)
    missed = [i for i, v in zip(ids, verdicts, strict=True) if v == Verdict.MISSED.value]
    unclear = [i for i, v in zip(ids, verdicts, strict=True) if v == Verdict.UNCLEAR.value]
    of = f"of {n} demand{'' if n == 1 else 's'}"
    if missed:
        print(f"netdim evaluate: {len(missed)} {of} missed the target: {some_names(missed)}",
              file=sys.stderr)
    if unclear:
        print(f"netdim evaluate: {len(unclear)} {of} unclear (the interval contains the "
              f"target): {some_names(unclear)}", file=sys.stderr)
    return 1 if missed or unclear else 0


def _day_check(args, network) -> int:
    """``--check`` on a file with demand over the day: the day methods beside the day's
    simulation."""
    if args.method is not None or args.conservative:
        raise ValueError("--check: compares the methods itself; leave out --method")
    wrong = [d for d in _given(args) if d not in DAY_CHECK_OPTIONS]
    if wrong:
        raise ValueError(f"{_flag(wrong[0])}: does not apply to --check on a day profile "
                         f"(it takes {', '.join(_flag(d) for d in DAY_CHECK_OPTIONS)})")
    if args.csv:
        raise ValueError("--csv: does not apply to --check")
    opts = {d: getattr(args, d) for d in DAY_CHECK_OPTIONS if getattr(args, d) is not None}
    result = compare_day_methods(network, network.capacities(), progress=_progress(args),
                                 **opts)
    if args.json:
        print(json.dumps(result.to_dict(), indent=2))
    else:
        print(day_check_text(result, title=f"{network.name} ({args.file})"), end="")
    return _report_verdicts(result.demand_ids, result.verdicts())


def run(args) -> int:
    if args.check and args.report:
        raise ValueError("--report: does not apply to --check")
    check_report_args(args, inputs=[args.file], outputs=[args.csv])
    network = read_network(args.file, **file_limits(args))
    if args.check and network.day is not None:
        return _day_check(args, network)
    method = _method(args, network)
    given = _check_flags(args, method)
    if method == PEAKED and multirate_problem(network):
        raise ValueError(f"{args.file}: --method {PEAKED}: {multirate_problem(network)}")
    opts = {dest: getattr(args, dest) for dest in given}

    if args.check:
        sim = {k: v for k, v in opts.items() if k != "max_states"}
        more = {"max_states": opts["max_states"]} if "max_states" in opts else {}
        result = compare_methods(network, network.capacities(), sim,
                                 progress=_progress(args), **more)
        if args.csv:
            write_comparison_csv(result, args.csv)
        if args.json:
            print(json.dumps(result.to_dict(), indent=2))
        else:
            text = comparison_text(result, kind=args.kind)
            print(text, end="" if text.endswith("\n") else "\n")
        return _report_verdicts(result.demand_ids, result.verdicts())

    if method in ("simulate", "day-simulate"):
        opts["progress"] = _progress(args)
    ev = evaluate(network, method=method, **opts)
    write_evaluation_report(args, network, ev)
    if args.csv:
        write_csv(ev, args.csv)
    if args.json:
        print(json.dumps(ev.to_dict(), indent=2))
    else:
        title = f"{network.name} ({args.file})"
        text = evaluation_text(ev, title=title, limit=rows_shown(args), kind=args.kind,
                               network=network)
        print(text if ev.day is None else with_day_text(text, ev), end="")
        note = rows_note(args, len(ev.link_ids), len(ev.demand_ids))
        if note:
            print(note)
    return _report_verdicts(ev.demand_ids, ev.verdicts())
