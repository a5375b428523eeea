"""``netdim report FILE -o REPORT.html``: one HTML file a planner can forward.

FILE is a network file with capacities, or a plan file written by ``netdim size --out`` (the
same format): it is evaluated (by evaluate's default method unless ``--method``) and reported as one
self-contained HTML page (:mod:`netdim.report.html`). The same page comes from ``--report``
on ``evaluate`` and ``size``; the helpers those commands call are here too
(:func:`add_report_options`, :func:`check_report_args`, :func:`write_evaluation_report`,
:func:`write_plan_report`), so the rules are one: checked before any work, the file written
whole or not at all, an earlier report replaced, any other file only with ``--force``, the
input never.
"""

from __future__ import annotations

import sys
import time

from netdim.cli._files import add_file_options, file_limits
from netdim.evaluate import HOLDING_LAWS, METHOD_OPTIONS, METHODS, default_method, evaluate
from netdim.netfile import read_network
from netdim.report.evaluation import write_csv
from netdim.report.figures import require_matplotlib
from netdim.report.page import check_report_path, write_report
from netdim.report.words import verdict_counts_words
from netdim.vocabulary import Verdict

__all__ = ["register", "run", "add_report_options", "check_report_args",
           "write_evaluation_report", "write_plan_report", "write_sections_report",
           "KIND_CHOICES"]

#: Values of ``--kind``: the words the report (and the caution) speaks in.
KIND_CHOICES = ("telephone", "parking")
_KIND_HELP = ("telephone (trunk groups, circuits) or parking (car parks and shuttles, places): "
              "the units and the cautions of the report; default general words for either")
# Options of some method, by argparse dest (= the library's keyword).
_OPTION_DESTS = ("seed", "calls", "precision", "holding_law")


def register(subparsers):
    p = subparsers.add_parser(
        "report",
        help="one self-contained HTML report (map, tables, plots, cautions) to forward",
        description="Evaluate a network file at its capacities (or a plan file written by "
        "'netdim size --out') and write one self-contained HTML report: the network as a "
        "map, the demands and links worst first, blocking against offered load for the "
        "busiest links, the assumptions and the cautions. It opens with no network access "
        "and no script. The report replaces an earlier netdim report, never the input and "
        "never another file unless --force. Exit 0 when every demand is met, 1 when some "
        "are missed or unclear, 2 on bad input (or a report that cannot be written), 3 when "
        "a computation did not converge.",
    )
    p.add_argument("file", metavar="FILE", help="network or plan file (YAML)")
    p.add_argument("-o", "--output", metavar="REPORT.html", required=True,
                   help="the HTML file to write")
    p.add_argument("--method", choices=METHODS, default=None,
                   help="evaluation method (default as evaluate's: the peaked fixed point "
                   "under alternate routing, the day methods for a day profile, else the "
                   "fixed point)")
    p.add_argument("--kind", choices=KIND_CHOICES, default=None, help=_KIND_HELP)
    p.add_argument("--measure", choices=("utilisation", "blocking"), default="utilisation",
                   help="what colours the links on the map (default utilisation)")
    p.add_argument("--curves", type=int, default=4, metavar="N",
                   help="links drawn in the blocking-against-load plot, busiest first "
                   "(default 4; 0: no plot)")
    p.add_argument("--title", default=None, help="title of the page (default the network's "
                   "name)")
    p.add_argument("--csv", metavar="DIR", help="also write DIR/demands.csv and DIR/links.csv")
    p.add_argument("--force", action="store_true",
                   help="let -o replace an existing file that is not a netdim report")
    g = p.add_argument_group("simulation (--method simulate)")
    g.add_argument("--seed", type=int, default=None,
                   help="random seed (without one a seed is drawn and shown in the report)")
    g.add_argument("--calls", type=int, default=None, metavar="N",
                   help="call arrivals to simulate")
    g.add_argument("--precision", type=float, default=None, metavar="X",
                   help="simulate until every interval is narrower than X relative")
    g.add_argument("--holding-law", choices=HOLDING_LAWS, default=None,
                   help="law of holding times (default exponential)")
    p.add_argument("--quiet", action="store_true", help="no lines on stderr but errors")
    add_file_options(p)
    p.set_defaults(func=run)
    return p


# -- the --report options of other commands -----------------------------------------------
def add_report_options(parser, *, force=True, targets=False):
    """Add ``--report FILE.html`` and ``--kind`` (and ``--force`` unless the command has
    its own; ``--report-targets`` for a sizing command) to ``parser``."""
    g = parser.add_argument_group("HTML report")
    g.add_argument("--report", metavar="FILE.html", default=None,
                   help="also write a self-contained HTML report (map, tables, plots, "
                   "cautions); it replaces an earlier netdim report, another file only with "
                   "--force")
    g.add_argument("--kind", choices=KIND_CHOICES, default=None, help=_KIND_HELP)
    if force:
        g.add_argument("--force", action="store_true",
                       help="let --report replace an existing file that is not a netdim "
                       "report")
    if targets:
        g.add_argument("--report-targets", metavar="T1,T2,...", default=None,
                       help="add a cost-against-target chart to the report: the network "
                       "sized again with every demand given each of these targets (by the "
                       "model alone; one sizing run per target)")
    return g


def check_report_args(args, *, inputs=(), outputs=(), path=None) -> None:
    """Before any work: matplotlib is there and the report's path (``path``, default
    ``args.report``) loses nothing.

    Raises
    ------
    NetdimError
        matplotlib is not installed.
    ValueError, OSError
        The path is an input, another output, a directory, an existing file that is not a
        report (without ``--force``), or in a directory that does not exist.
    """
    path = path or getattr(args, "report", None)
    if getattr(args, "report_targets", None):
        if not path:
            raise ValueError("--report-targets: needs --report FILE.html")
        if getattr(args, "objective", "cost") != "cost":
            raise ValueError("--report-targets: applies to --objective cost only")
        try:
            _sweep().parse_targets(args.report_targets)
        except ValueError as exc:
            raise ValueError(f"--report-targets: {str(exc).split(': ', 1)[1]}") from None
    if not path:
        return
    require_matplotlib()
    check_report_path(path, inputs=inputs, outputs=outputs,
                      force=bool(getattr(args, "force", False)))


# The page builders import the sizing package (PuLP and the solver seam, 0.2-0.3 s): they are
# imported when a report is written, so that `evaluate` without --report starts no slower.
def _html():
    import netdim.report.html as html

    return html


def _sweep():
    import netdim.report.sweep as sweep

    return sweep


def _seed(ev):
    seed = ev.details.get("seed") if isinstance(ev.details, dict) else None
    return None if seed is None else int(seed)


def write_evaluation_report(args, network, ev, *, path=None, sections=()) -> str | None:
    """Write the report of ``ev`` to ``path`` (default ``args.report``); the path or None.

    ``sections``: more :class:`~netdim.report.page.Section` objects (a study's tables and
    charts, see :func:`~netdim.report.page.chart_section`), placed before the assumptions.
    """
    path = path or getattr(args, "report", None)
    if not path:
        return None
    page = _html().evaluation_html(network, ev, kind=args.kind, seed=_seed(ev), source=args.file,
                           measure=getattr(args, "measure", "utilisation"),
                           curves=getattr(args, "curves", 4), title=getattr(args, "title", None),
                           sections=sections)
    return write_report(page, path)


def write_plan_report(args, plan, *, sections=(), sizing=None) -> str | None:
    """Write the report of a sizing plan to ``args.report``; the path or None.

    ``sections`` as :func:`write_evaluation_report`. With ``args.report_targets``, the plan's
    network is sized again at each target (with the options of ``sizing``, a
    :class:`~netdim.dimension.SizingOptions`) for a cost-against-target section.
    """
    if not getattr(args, "report", None):
        return None
    sections = list(sections)
    if getattr(args, "report_targets", None):
        kw = {} if sizing is None else {
            name: getattr(sizing, name) for name in ("model", "solver", "mip_gap",
                                                     "time_limit", "bound_time")}
        sweeps = _sweep()
        sweep = sweeps.cost_against_targets(plan.network, sweeps.parse_targets(args.report_targets),
                                     progress=_sweep_progress(args), **kw)
        sections.insert(0, sweeps.sweep_section(sweep))
    page = _html().plan_html(plan, kind=args.kind, source=args.file, sections=sections)
    return write_report(page, args.report)


def _sweep_progress(args):
    if getattr(args, "quiet", False):
        return None

    def progress(fraction, message):
        print(f"netdim {args.command}: {message}", file=sys.stderr, flush=True)

    return progress


def write_sections_report(args, title, sections, *, lead=None) -> str | None:
    """Write a page of ``sections`` alone to ``args.report`` (a study with no one
    evaluation to lead with); the path or None. The cautions of ``args.kind`` close it."""
    if not getattr(args, "report", None):
        return None
    html = _html()
    body = list(sections) + [html.cautions_section(args.kind)]
    return write_report(html.html_document(title, body, lead=lead), args.report)


# -- netdim report --------------------------------------------------------------------------
def _flag(dest) -> str:
    return "--" + dest.replace("_", "-")


def _check_flags(args) -> dict:
    opts = {}
    for dest in _OPTION_DESTS:
        value = getattr(args, dest)
        if value is None:
            continue
        if dest not in METHOD_OPTIONS[args.method]:
            takes = " or ".join(m for m in METHODS if dest in METHOD_OPTIONS[m])
            raise ValueError(f"{_flag(dest)}: applies to --method {takes} only, not "
                             f"--method {args.method}")
        opts[dest] = value
    if args.curves < 0:
        raise ValueError(f"--curves: must be 0 or more, got {args.curves}")
    return opts


def _progress(args):
    if args.quiet:
        return None
    start = time.monotonic()
    last = [start]

    # Long runs only: the first line after 2 s, then at most one every 2 s.
    def progress(fraction, message):
        now = time.monotonic()
        if now - start < 2.0 or now - last[0] < 2.0:
            return
        last[0] = now
        share = "" if fraction is None else f"{100 * fraction:.0f}% "
        print(f"netdim report: {share}{message}", file=sys.stderr, flush=True)

    return progress


def run(args) -> int:
    outputs = [args.csv] if args.csv else []
    check_report_args(args, inputs=[args.file], outputs=outputs, path=args.output)
    network = read_network(args.file, **file_limits(args))
    if args.method is None:  # the method evaluate would use
        args.method = "day" if network.day is not None else default_method(network)
    opts = _check_flags(args)
    if args.method in ("simulate", "day-simulate"):
        opts["progress"] = _progress(args)
    ev = evaluate(network, method=args.method, **opts)
    write_evaluation_report(args, network, ev, path=args.output)
    if args.csv:
        write_csv(ev, args.csv)
    # The verdicts the page shows: a demand two fixed-point solutions disagree on is unclear.
    verdicts = _html().combined_verdicts(ev)
    print(f"{args.output}: {verdict_counts_words(verdicts)}")
    return 0 if all(v == Verdict.MET.value for v in verdicts) else 1
