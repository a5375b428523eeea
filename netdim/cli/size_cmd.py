"""``netdim size FILE``: least-cost integer capacities meeting every target."""

from __future__ import annotations

import json
import sys
import time

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._rows import add_rows_option, rows_note, rows_shown, some_names
from netdim.cli._survive import add_survive_options, run_survivable
from netdim.cli.report_cmd import add_report_options, check_report_args, write_plan_report
from netdim.dimension import (
    DEFAULT_BOUND_TIME,
    DEFAULT_MARGIN,
    DEFAULT_VERIFY_CALLS,
    MODELS,
    OBJECTIVES,
    SOLVERS,
    SizingOptions,
    VerifyOptions,
    dimension,
)
from netdim.evaluate import default_method
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED
from netdim.evaluate.peaked_fixed_point import multirate_problem
from netdim.netfile import check_plan_path, read_network, write_plan
from netdim.report.day_text import day_plan_text
from netdim.report.plan import format_plan, write_plan_csv
from netdim.report.progress import ProgressSummary

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "size",
        help="least-cost integer capacities meeting every demand's blocking target",
        description="Choose integer capacities (in modules) for every link so that every "
        "demand meets its blocking target at least cost. Exit 0 when every target is met "
        "(with --verify: and none is missed in simulation; unclear ones are named), 1 when "
        "some is not (naming them), 2 on bad input or work refused over a stated limit, 3 "
        "when an evaluation does not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--model", choices=MODELS, default=None,
                   help="what the plan must satisfy (default: peaked-fixed-point under "
                   "alternate routing with single-unit calls when sizing for cost, "
                   "fixed-point otherwise; exact: small networks only)")
    p.add_argument("--solver", choices=SOLVERS, default="highs",
                   help="solver of every MILP and LP (default highs)")
    p.add_argument("--objective", choices=OBJECTIVES, default="cost",
                   help="cost: least cost meeting every target (default); net-value: most "
                   "value carried minus cost (every demand needs a value; targets are not "
                   "enforced)")
    p.add_argument("--json", action="store_true", help="print the plan as JSON")
    p.add_argument("--out", metavar="PLAN.yaml",
                   help="write the plan: the network file as written, with only the "
                   "capacities changed (refused when PLAN.yaml is FILE itself, unless --force)")
    p.add_argument("--csv", metavar="DIR", help="also write DIR/links.csv and DIR/demands.csv "
                   "(the plan's tables, plain numbers)")
    p.add_argument("--force", action="store_true",
                   help="let --out replace the input FILE with the plan, and --report "
                   "replace a file that is not a netdim report")
    p.add_argument("--gap", "--mip-gap", type=float, default=1e-4, metavar="X",
                   help="relative gap each MILP is solved to (default 1e-4; on networks "
                   "of over 5000 demands the sizing loop's MILPs and the bound's stop at "
                   "the root node instead, and the plan's gap is from proven bounds)")
    p.add_argument("--time-limit", type=float, default=None, metavar="S",
                   help="safety stop of each MILP, seconds (default none)")
    p.add_argument("--verify", action="store_true",
                   help="check the plan by simulation and, where a demand misses its target "
                   "there, tighten its working target and size again")
    p.add_argument("--seed", type=int, default=0, metavar="N",
                   help="seed of the verification runs (default 0)")
    p.add_argument("--verify-calls", type=int, default=None, metavar="N",
                   help=f"arrivals per verification run (default {DEFAULT_VERIFY_CALLS})")
    p.add_argument("--verify-rounds", type=int, default=8, metavar="N",
                   help="most calibration rounds after the first check (default 8; 0 checks "
                   "the plan without changing it)")
    p.add_argument("--margin", type=float, default=DEFAULT_MARGIN, metavar="X",
                   help="with --verify: calibrate until every demand's simulated interval "
                   "reaches below its target x (1 - X), so that few demands end unclear "
                   f"(default {DEFAULT_MARGIN:g}; 0 calibrates to the targets themselves)")
    p.add_argument("--bound-time", type=float, default=DEFAULT_BOUND_TIME, metavar="S",
                   help="safety stop of the lower bound's work, seconds (default "
                   f"{DEFAULT_BOUND_TIME:g}). The work is bounded by counts (cut rounds, "
                   "solver nodes, plans listed), so the bound is the same on any machine; "
                   "a warning says when this stop fires, and only then does more time "
                   "give a tighter bound")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    p.add_argument("-v", "--verbose", action="store_true",
                   help="every progress line (the full trace); default a few summary lines")
    add_report_options(p, force=False, targets=True)
    add_rows_option(p)
    add_survive_options(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


#: Library argument names as the command line spells them, for error messages.
_OPTION_NAMES = {"mip_gap": "--gap", "time_limit": "--time-limit", "bound_time": "--bound-time",
                 "verify_calls": "--verify-calls", "verify_rounds": "--verify-rounds",
                 "margin": "--margin", "objective": "--objective"}


def _default_model(args, network) -> str:
    """The model when none is named: as ``evaluate`` picks its method, for cost sizing."""
    if args.model is not None:
        return args.model
    if network.day is not None:  # the day sizer works on the plain fixed point over the day
        return "fixed-point"
    return default_method(network) if args.objective == "cost" else "fixed-point"


def _options(args, model="fixed-point"):
    """The library's options from the arguments; its messages with the option's name."""
    try:
        verify = (VerifyOptions(calls=args.verify_calls, rounds=args.verify_rounds,
                                seed=args.seed, margin=args.margin) if args.verify else None)
        sizing = SizingOptions(model=model, solver=args.solver, mip_gap=args.gap,
                               time_limit=args.time_limit, objective=args.objective,
                               bound_time=args.bound_time)
    except ValueError as exc:
        text = str(exc)
        name = text.split(":", 1)[0]
        raise ValueError(_OPTION_NAMES.get(name, name) + text[len(name):]) from None
    return sizing, verify


def run(args) -> int:
    t_command = time.perf_counter()
    _options(args, args.model or "fixed-point")  # bad options before any reading
    if args.out:  # before any work: a plan that cannot be written is not worth sizing
        check_plan_path(args.file, args.out, args.force)
    check_report_args(args, inputs=[args.file], outputs=[args.out, args.csv])
    network = read_network(args.file, **file_limits(args))
    sizing, verify = _options(args, _default_model(args, network))
    if sizing.model == PEAKED and multirate_problem(network):
        raise ValueError(f"{args.file}: --model {PEAKED}: {multirate_problem(network)}")
    if args.survive is not None:
        return run_survivable(args, network, sizing)
    if not args.verify and network.routing.policy == "alternate" and not args.quiet \
            and sizing.objective == "cost":
        what = ("the peaked model follows the bursts of overflow but is an approximation"
                if sizing.model == "peaked-fixed-point" else "the fixed point is optimistic")
        print(f"netdim size: note: under alternate routing {what}; add --verify to check "
              "the plan by simulation and calibrate it", file=sys.stderr)

    def emit(line):
        print(f"netdim size: {line}", file=sys.stderr, flush=True)

    progress = ProgressSummary(emit, verbose=args.verbose)
    plan = dimension(network, model=sizing.model, solver=sizing.solver, mip_gap=sizing.mip_gap,
                     time_limit=sizing.time_limit, objective=sizing.objective,
                     bound_time=sizing.bound_time, verify=verify,
                     progress=None if args.quiet else progress)
    progress.close()
    if args.out:
        write_plan(network, args.out, plan.capacities, force=args.force)
    write_plan_report(args, plan, sizing=sizing)
    if args.csv:
        write_plan_csv(plan, args.csv)
    if args.json:
        print(json.dumps(plan.to_dict(), indent=2))
    elif plan.details.get("day"):
        print(day_plan_text(format_plan(plan, max_rows=rows_shown(args), kind=args.kind,
                                        seconds=time.perf_counter() - t_command),
                            plan).rstrip("\n"))
    else:
        print(format_plan(plan, max_rows=rows_shown(args), kind=args.kind,
                          seconds=time.perf_counter() - t_command))
    note = rows_note(args, len(plan.capacities), len(plan.evaluation.demand_ids))
    if note and not args.json:
        print(note)
    for w in plan.warnings:
        print(f"netdim size: warning: {w}", file=sys.stderr)
    if not plan.feasible:
        names = some_names(plan.evaluation.unmet)
        print(f"netdim size: targets not met for {names}", file=sys.stderr)
        return 1
    if not plan.rules_met:
        for r in plan.rules:
            if not r.met:
                print(f"netdim size: design rule not met: {r.why}", file=sys.stderr)
        return 1
    if plan.simulated_misses:
        names = some_names(plan.simulated_misses)
        print(f"netdim size: targets not met in simulation for {names}", file=sys.stderr)
        return 1
    if plan.simulated_unclear:
        names = some_names(plan.simulated_unclear)
        print(f"netdim size: unclear in simulation (interval contains the target): {names}",
              file=sys.stderr)
    return 0
