"""``netdim failures FILE``: every single link (or site) failure, worst first."""

from __future__ import annotations

import sys

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._rows import some_names
from netdim.cli._study_options import add_common, fraction, id_list, positive_int, progress_for
from netdim.cli.report_cmd import add_report_options, check_report_args, write_sections_report
from netdim.evaluate import METHODS
from netdim.netfile import read_network
from netdim.report.studies import failures_page
from netdim.studies.diversity import route_diversity
from netdim.studies.failures import failure_study
from netdim.studies.tables import diversity_text, failures_csv, failures_text, write_csv

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "failures",
        help="each link (or site) failed in turn: rerouted traffic and its blocking",
        description="Take each link out of service in turn (--links to choose, --sites for "
        "site failures), reroute every demand over its remaining candidate routes and "
        "evaluate at the file's capacities (a plan file has them). Rows are listed worst "
        "first: the failed element, demands left with no route, worst and mean blocking, the "
        "demands over the failure target. Exit 0 when the network survives every failure, 1 "
        "when some failure leaves a demand over its target (or unclear), 2 on bad input, 3 "
        "when an evaluation did not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network file with capacities, or a plan file")
    p.add_argument("--links", type=id_list, default=None, metavar="A,B",
                   help="fail only these links (default: every link)")
    p.add_argument("--sites", type=id_list, default=None, metavar="S,T",
                   help="fail these sites (each takes every link at it)")
    p.add_argument("--target", type=fraction, default=None, metavar="X",
                   help="blocking every demand must stay within after a failure, e.g. 5%% "
                   "(default: each demand's own target)")
    p.add_argument("--method", choices=METHODS, default="fixed-point",
                   help="evaluation method (default fixed-point)")
    p.add_argument("--seed", type=int, default=None,
                   help="with --method simulate: the seed of every failure's run")
    p.add_argument("--diversity", type=positive_int, default=None, metavar="K",
                   help="also name the demands with fewer than K link-disjoint candidate "
                   "routes (and what the links would allow)")
    add_common(p)
    add_report_options(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


def run(args) -> int:
    check_report_args(args, inputs=[args.file], outputs=[args.csv])
    options = {}
    if args.seed is not None:
        if args.method != "simulate":
            raise ValueError("--seed: applies to --method simulate only")
        options["seed"] = args.seed
    try:
        from_target = args.target
        network = read_network(args.file, **file_limits(args))
        study = failure_study(network, links=args.links, sites=args.sites, method=args.method,
                              target=from_target, workers=args.workers, scheduler=args.scheduler,
                              progress=progress_for(args, "failures"), **options)
    except ValueError as exc:
        text = str(exc)
        for name, flag in (("target", "--target"), ("links", "--links"), ("sites", "--sites"),
                           ("workers", "--workers")):
            if text.startswith(name + ":"):
                raise ValueError(f"{args.file}: {flag}{text[len(name):]}") from None
        if text.startswith(args.file):
            raise
        raise ValueError(f"{args.file}: {text}") from None
    short = []
    if args.diversity is not None:
        short = [d for d in route_diversity(network) if d.disjoint_routes < args.diversity]
    if args.report:
        page = failures_page(study, title=f"{network.name}: single failures")
        write_sections_report(args, page.title, page.sections, lead=page.lead)
    if args.csv:
        write_csv(args.csv, "failures.csv", *failures_csv(study))
    if args.json:
        extra = {}
        if args.diversity is not None:
            extra["diversity"] = {"required": args.diversity,
                                  "short": [d.to_dict() for d in short]}
        for chunk in study.json_chunks(extra):  # row by row: large studies are large
            sys.stdout.write(chunk)
        sys.stdout.write("\n")
    else:
        print(failures_text(study, title=f"{network.name} ({args.file})"), end="")
        if args.diversity is not None:
            print(diversity_text(short, args.diversity))
    if short:
        print(f"netdim failures: {len(short)} demands have fewer than {args.diversity} "
              f"link-disjoint routes: {some_names([d.demand for d in short])}", file=sys.stderr)
    bad = [r.element for r in study.rows if str(r.verdict) == "missed"]
    if bad:
        print(f"netdim failures: {len(bad)} of {len(study.rows)} failures leave a demand over "
              f"its target: {some_names(bad, 'failure')}", file=sys.stderr)
        return 1
    if short:
        return 1
    if study.not_converged:
        print(f"netdim failures: did not converge for {some_names(study.not_converged, 'failure')}",
              file=sys.stderr)
        return 3
    unclear = [r.element for r in study.rows if str(r.verdict) == "unclear"]
    if unclear:
        print(f"netdim failures: unclear (an interval contains the target, or two fixed-point "
              f"solutions disagree): {some_names(unclear, 'failure')}", file=sys.stderr)
        return 1
    return 0
