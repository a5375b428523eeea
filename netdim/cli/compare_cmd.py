"""``netdim compare FILE [FILE ...]``: designs for the same demands, each sized, side by side."""

from __future__ import annotations

import json
import os
import sys

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._study_options import add_common, fraction, progress_for
from netdim.cli.report_cmd import add_report_options, check_report_args, write_sections_report
from netdim.dimension import MODELS, SOLVERS, SizingOptions
from netdim.netfile import read_network
from netdim.report.studies import common_target, compare_page
from netdim.studies.compare import compare_designs
from netdim.studies.tables import compare_csv, compare_text, write_csv
from netdim.studies.variants import build_variant, parse_variants

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "compare",
        help="size several designs for the same demands and compare them in one table",
        description="Size each network file (the same demands on different sites or links) "
        "and print one table: cost, capacity, links built, worst and mean blocking, cost per "
        "erlang carried, the worst single-link failure, the plan's gap, and the cheapest "
        "design. --variants builds standard designs from one file's sites and demands "
        "(mesh, star:HUB, ring, two-tandem:A,B). A site pair some design does not carry is "
        "named. Exit 0 when every design meets every target and carries every pair, 1 when "
        "some does not, 2 on bad input, 3 when an evaluation did not converge.",
    )
    p.add_argument("files", metavar="FILE", nargs="+", help="network files (YAML)")
    p.add_argument("--variants", default=None, metavar="LIST",
                   help="with one FILE: also compare standard designs built from its sites "
                   "and demands, e.g. mesh,star:HUB,ring,two-tandem:A,B")
    p.add_argument("--failure-target", type=fraction, default=None, metavar="X",
                   help="target after a link failure, e.g. 5%% (default: each demand's own)")
    p.add_argument("--no-failures", action="store_true",
                   help="skip the single-link failures of each plan")
    p.add_argument("--model", choices=MODELS, default="fixed-point",
                   help="what each plan must satisfy (default fixed-point)")
    p.add_argument("--solver", choices=SOLVERS, default="highs")
    p.add_argument("--gap", type=float, default=1e-4, metavar="X",
                   help="relative gap each MILP is solved to (default 1e-4)")
    p.add_argument("--time-limit", type=float, default=None, metavar="S",
                   help="safety stop of each MILP, seconds")
    add_common(p)
    add_report_options(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


def _names(files):
    """Each file's name without folder and suffix; the path where two would clash."""
    stems = [os.path.splitext(os.path.basename(f))[0] for f in files]
    return [s if stems.count(s) == 1 else f for s, f in zip(stems, files, strict=True)]


def run(args) -> int:
    check_report_args(args, inputs=args.files, outputs=[args.csv])
    try:
        sizing = SizingOptions(model=args.model, solver=args.solver, mip_gap=args.gap,
                               time_limit=args.time_limit)
    except ValueError as exc:
        text = str(exc)
        raise ValueError(text.replace("mip_gap:", "--gap:", 1)
                         .replace("time_limit:", "--time-limit:", 1)) from None
    if args.variants is not None and len(args.files) != 1:
        raise ValueError("--variants: give exactly one FILE to build the variants from")
    try:
        variants = parse_variants(args.variants) if args.variants is not None else ()
    except ValueError as exc:
        raise ValueError("--" + str(exc)) from None
    networks = [read_network(f, **file_limits(args)) for f in args.files]
    designs = list(zip(_names(args.files), networks, strict=True))
    for v in variants:
        try:
            net, _ = build_variant(networks[0], v)
        except ValueError as exc:
            raise ValueError(f"{args.files[0]}: {exc}") from None
        designs.append((v.name, net))
    try:
        result = compare_designs(designs, sizing=sizing, failure_target=args.failure_target,
                                 failures=not args.no_failures, workers=args.workers,
                                 scheduler=args.scheduler,
                                 progress=progress_for(args, "compare"))
    except ValueError as exc:
        text = str(exc)
        for name, flag in (("failure_target", "--failure-target"), ("workers", "--workers")):
            if text.startswith(name + ":"):
                raise ValueError(flag + text[len(name):]) from None
        raise
    if args.report:
        targets = {common_target(n) for n in networks}
        page = compare_page(result, target=targets.pop() if len(targets) == 1 else None)
        write_sections_report(args, page.title, page.sections, lead=page.lead)
    if args.csv:
        write_csv(args.csv, "compare.csv", *compare_csv(result))
    if args.json:
        print(json.dumps(result.to_dict(), indent=2))
    else:
        print(compare_text(result), end="")
    bad = [r.name for r in result.rows if str(r.verdict) != "met" or r.missing]
    if bad:
        print(f"netdim compare: some target not met or some pair not carried by "
              f"{', '.join(bad)}", file=sys.stderr)
        return 1
    return 0
