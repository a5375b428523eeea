"""``netdim size FILE``: least-cost integer capacities meeting every target."""

from __future__ import annotations

import json
import sys

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "size",
        help="least-cost integer capacities meeting every demand's blocking target",
        description="Choose integer capacities (in modules) for every link so that every "
        "demand meets its blocking target at least cost. Exit 0 when every target is met, 1 "
        "when some cannot be (naming them), 2 on bad input.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--model", choices=("fixed-point", "conservative", "exact"),
                   default="fixed-point",
                   help="what the plan must satisfy (exact: small networks only)")
    p.add_argument("--solver", choices=("highs", "cbc"), default="highs",
                   help="MILP solver (default highs)")
    p.add_argument("--json", action="store_true", help="print the plan as JSON")
    p.add_argument("--out", metavar="PLAN.yaml",
                   help="write the plan: the network file as written, with only the "
                   "capacities changed (refused when PLAN.yaml is FILE itself, unless --force)")
    p.add_argument("--force", action="store_true",
                   help="let --out replace the input FILE with the plan")
    p.add_argument("--gap", type=float, default=1e-4, metavar="X",
                   help="relative MILP gap (default 1e-4)")
    p.add_argument("--time-limit", type=float, default=None, metavar="S",
                   help="seconds allowed to each MILP")
    p.add_argument("--verify", action="store_true",
                   help="check the plan by simulation and, where a demand misses its target "
                   "there, tighten its working target and size again")
    p.add_argument("--seed", type=int, default=0, metavar="N",
                   help="seed of the verification runs (default 0)")
    p.add_argument("--verify-calls", type=int, default=None, metavar="N",
                   help="arrivals per verification run (default 1000000)")
    p.add_argument("--verify-rounds", type=int, default=8, metavar="N",
                   help="most calibration rounds after the first check (default 8; 0 checks "
                   "the plan without changing it)")
    p.add_argument("--bound-time", type=float, default=20.0, metavar="S",
                   help="seconds for each part of the lower bound: cutting planes under "
                   "alternate routing, then evaluating the cheaper plans of a small network "
                   "one by one (default 20; longer is tighter)")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    p.set_defaults(func=run)
    return p


def run(args) -> int:
    from netdim.dimension import dimension
    from netdim.netfile import check_plan_path, read_network, write_plan
    from netdim.report.plan import format_plan

    if not 0 <= args.gap < 1:
        raise ValueError(f"--gap: must lie in [0, 1), got {args.gap!r}")
    if args.time_limit is not None and not args.time_limit > 0:
        raise ValueError(f"--time-limit: must be > 0 seconds, got {args.time_limit!r}")
    if args.verify_calls is not None and args.verify_calls <= 0:
        raise ValueError(f"--verify-calls: must be a positive integer, got {args.verify_calls}")
    if not args.bound_time > 0:
        raise ValueError(f"--bound-time: must be > 0 seconds, got {args.bound_time!r}")
    if args.verify_rounds < 0:
        raise ValueError(f"--verify-rounds: must be >= 0, got {args.verify_rounds}")
    if args.out:  # before any work: a plan that cannot be written is not worth sizing
        check_plan_path(args.file, args.out, args.force)
    network = read_network(args.file)
    if not args.verify and network.routing.policy == "alternate" and not args.quiet:
        print("netdim size: note: under alternate routing the fixed point is optimistic; "
              "add --verify to check the plan by simulation and calibrate it",
              file=sys.stderr)

    def progress(line):
        print(f"netdim size: {line}", file=sys.stderr, flush=True)

    plan = dimension(network, model=args.model, solver=args.solver, mip_gap=args.gap,
                     time_limit=args.time_limit, progress=None if args.quiet else progress,
                     verify="simulate" if args.verify else None, seed=args.seed,
                     verify_calls=args.verify_calls, verify_rounds=args.verify_rounds,
                     bound_time=args.bound_time)
    if args.out:
        write_plan(network, args.out, plan.capacities, force=args.force)
    if args.json:
        print(json.dumps(plan.to_dict(), indent=2))
    else:
        print(format_plan(plan))
    for w in plan.warnings:
        print(f"netdim size: warning: {w}", file=sys.stderr)
    if not plan.feasible:
        names = ", ".join(plan.evaluation.unmet)
        print(f"netdim size: targets not met for {names}", file=sys.stderr)
        return 1
    if plan.simulated_misses:
        names = ", ".join(plan.simulated_misses)
        print(f"netdim size: targets not met in simulation for {names}", file=sys.stderr)
        return 1
    return 0
