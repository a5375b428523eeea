"""``netdim growth FILE --rate 5% --years 5``: the plan year by year as traffic grows."""

from __future__ import annotations

import json
import sys

from netdim.cli._files import add_file_options, file_limits
from netdim.cli._study_options import add_common, fraction, positive_int, progress_for
from netdim.cli.report_cmd import add_report_options, check_report_args, write_sections_report
from netdim.dimension import MODELS, SOLVERS, SizingOptions
from netdim.netfile import read_network
from netdim.report.studies import growth_page
from netdim.studies.growth import STARTS, file_rates, growth_study
from netdim.studies.tables import growth_csv, growth_text, write_csv

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "growth",
        help="the plan year by year as traffic grows: capacity never falling",
        description="Grow every demand's traffic by --rate a year (or by the per-demand "
        "rates of the file's x-growth field) and size each year on top of the year before, "
        "so capacity never falls and a module is bought in the year it is needed. Prints "
        "each year's cost (discounted with --discount), each link's capacity by year and "
        "the year it needs its next module. Exit 0 when every year meets every target, 1 "
        "when some year does not, 2 on bad input, 3 when an evaluation did not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--rate", type=fraction, default=None, metavar="X",
                   help="yearly growth of every demand, e.g. 5%% (demands in the file's "
                   "x-growth field keep their own rate)")
    p.add_argument("--years", type=positive_int, default=5, metavar="N",
                   help="years after year 0 (default 5)")
    p.add_argument("--discount", type=fraction, default=0.0, metavar="X",
                   help="yearly discount rate of the costs, e.g. 8%% (default 0)")
    p.add_argument("--start", choices=STARTS, default=None,
                   help="in place before year 0: the file's capacities (default when every "
                   "link has one) or only its installed units")
    p.add_argument("--model", choices=MODELS, default="fixed-point",
                   help="what each year's plan must satisfy (default fixed-point)")
    p.add_argument("--solver", choices=SOLVERS, default="highs")
    p.add_argument("--gap", type=float, default=1e-4, metavar="X",
                   help="relative gap each MILP is solved to (default 1e-4)")
    p.add_argument("--time-limit", type=float, default=None, metavar="S",
                   help="safety stop of each MILP, seconds")
    add_common(p, workers=False)
    add_report_options(p)
    add_file_options(p)
    p.set_defaults(func=run)
    return p


_FLAGS = {"rate": "--rate", "years": "--years", "discount": "--discount", "mip_gap": "--gap",
          "time_limit": "--time-limit", "start": "--start"}


def _flagged(exc, where):
    text = str(exc)
    name = text.split(":", 1)[0]
    if name in _FLAGS:
        return ValueError(f"{where}: {_FLAGS[name]}{text[len(name):]}")
    return exc if text.startswith(where) else ValueError(f"{where}: {text}")


def run(args) -> int:
    check_report_args(args, inputs=[args.file], outputs=[args.csv])
    try:
        sizing = SizingOptions(model=args.model, solver=args.solver, mip_gap=args.gap,
                               time_limit=args.time_limit)
    except ValueError as exc:
        raise _flagged(exc, args.file) from None
    network = read_network(args.file, **file_limits(args))
    rates = file_rates(network)
    if args.rate is None and not rates:
        raise ValueError(f"{args.file}: --rate: give a yearly growth rate (or per-demand "
                         "rates in the file's x-growth field)")
    try:
        study = growth_study(network, rate=args.rate or 0.0, years=args.years, rates=rates,
                             discount=args.discount, start=args.start, sizing=sizing,
                             progress=progress_for(args, "growth"))
    except ValueError as exc:
        raise _flagged(exc, args.file) from None
    if args.report:
        page = growth_page(study, network=network, title=f"{network.name}: growth plan")
        write_sections_report(args, page.title, page.sections, lead=page.lead)
    if args.csv:
        write_csv(args.csv, "growth.csv", *growth_csv(study))
    if args.json:
        print(json.dumps(study.to_dict(), indent=2))
    else:
        print(growth_text(study, title=f"{network.name} ({args.file})"), end="")
    bad = [str(y.year) for y in study.years if not y.met]
    if bad:
        print(f"netdim growth: targets not met in year {', '.join(bad)}", file=sys.stderr)
        return 1
    return 0
