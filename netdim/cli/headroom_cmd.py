"""``netdim headroom FILE``: how far traffic can grow on the installed capacities."""

from __future__ import annotations

import json
import sys

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._study_options import add_common, fraction, progress_for
from netdim.cli.report_cmd import add_report_options, check_report_args, write_sections_report
from netdim.netfile import read_network
from netdim.report.studies import headroom_page
from netdim.studies.headroom import DEFAULT_TOL, HEADROOM_METHODS, headroom_study
from netdim.studies.tables import headroom_csv, headroom_text, write_csv

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "headroom",
        help="largest traffic multiplier at which every target still holds",
        description="For the installed capacities, find the largest uniform traffic "
        "multiplier at which every demand still meets its target (fixed point by default), "
        "and the demand that fails first; then, for each demand alone, how far it can grow. "
        "Targets hold at the multiplier shown and fail at the one beside it (within "
        "--tol). Exit 0 when every target holds at today's traffic, 1 when some does not, 2 "
        "on bad input, 3 when an evaluation did not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network file with capacities, or a plan file")
    p.add_argument("--method", choices=HEADROOM_METHODS, default="fixed-point",
                   help="evaluation method (default fixed-point)")
    p.add_argument("--tol", type=fraction, default=DEFAULT_TOL, metavar="X",
                   help=f"relative width of the final bracket (default {DEFAULT_TOL:g})")
    p.add_argument("--no-per-demand", action="store_true",
                   help="only the uniform multiplier")
    add_common(p)
    add_report_options(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


def run(args) -> int:
    check_report_args(args, inputs=[args.file], outputs=[args.csv])
    network = read_network(args.file, **file_limits(args))
    try:
        study = headroom_study(network, method=args.method, tol=args.tol,
                               per_demand=not args.no_per_demand, workers=args.workers,
                               scheduler=args.scheduler,
                               progress=progress_for(args, "headroom"))
    except ValueError as exc:
        text = str(exc)
        for name, flag in (("tol", "--tol"), ("workers", "--workers")):
            if text.startswith(name + ":"):
                raise ValueError(f"{args.file}: {flag}{text[len(name):]}") from None
        if text.startswith(args.file):
            raise
        raise ValueError(f"{args.file}: {text}") from None
    if args.report:
        page = headroom_page(study, title=f"{network.name}: headroom")
        write_sections_report(args, page.title, page.sections, lead=page.lead)
    if args.csv:
        write_csv(args.csv, "headroom.csv", *headroom_csv(study))
    if args.json:
        print(json.dumps(study.to_dict(), indent=2))
    else:
        print(headroom_text(study, title=f"{network.name} ({args.file})",
                            offered=[d.traffic for d in network.demands]), end="")
    if str(study.verdict) != "met":
        print(f"netdim headroom: some target fails at today's traffic "
              f"({study.uniform.fails_first} first)", file=sys.stderr)
        return 1
    return 0
