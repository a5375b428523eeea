"""``netdim import TOPOLOGY -o NETWORK.yaml``: a network file from a GraphML or GML topology
and a traffic model."""

from __future__ import annotations

import argparse
import json
import math
import os
import pathlib
import shlex
import sys

from netdim.model import POLICIES
from netdim.topology import (
    ROUTE_MODES,
    WEIGHTS,
    DemandTable,
    Gravity,
    LinkCosts,
    Uniform,
    import_topology,
    write_text,
)

__all__ = ["register", "run"]

_MODELS = ("gravity", "uniform")
_GRAVITY_ONLY = ("total", "weight", "weight_attribute", "decay_km", "pairs")


def _number(kind, low, low_open, high=None):
    def parse(text):
        try:
            value = int(text) if kind is int else float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a {'whole ' if kind is int else ''}"
                                             f"number, got {text!r}") from None
        bad = not math.isfinite(value) or (value <= low if low_open else value < low)
        if bad or (high is not None and value >= high):
            rng = f"in ({low:g}, {high:g})" if high is not None else (
                f"{'>' if low_open else '>='} {low:g}")
            raise argparse.ArgumentTypeError(f"must be {rng}, got {text!r}")
        return value
    return parse


_POS = _number(float, 0, True)
_NONNEG = _number(float, 0, False)
_POS_INT = _number(int, 1, False)
_NONNEG_INT = _number(int, 0, False)


def _lonlat(text):
    parts = [p.strip() for p in text.split(",")]
    if len(parts) != 2 or not all(parts):
        raise argparse.ArgumentTypeError(f"expected LON_ATTR,LAT_ATTR, got {text!r}")
    return tuple(parts)


def register(subparsers):
    p = subparsers.add_parser(
        "import",
        help="make a network file from a GraphML or GML topology and a traffic model",
        description="Read a topology (GraphML or GML): nodes become sites, edges links "
        "(parallel edges merged, self-loops and nodes without edges dropped, length by "
        "great-circle distance where nodes have longitude and latitude). Demands come from a "
        "gravity model, the same traffic for every pair, or a CSV table. What was dropped or "
        "guessed is said on stderr. Exit 0 when the file was written, 2 on bad input or when "
        "the output exists (without --force).",
    )
    p.add_argument("topology", metavar="TOPOLOGY", help="topology file (.graphml or .gml)")
    p.add_argument("-o", "--output", required=True, metavar="NETWORK.yaml",
                   help="network file to write ('-' for standard output)")
    p.add_argument("--force", action="store_true", help="replace the output if it exists")
    p.add_argument("--format", choices=("graphml", "gml"), default=None,
                   help="topology format (default: from the file name)")
    p.add_argument("--json", action="store_true",
                   help="print what was read, kept, dropped and guessed as JSON")
    p.add_argument("--quiet", action="store_true", help="say nothing on stderr but errors")

    g = p.add_argument_group("traffic (one source)")
    g.add_argument("--traffic", choices=_MODELS, default=None,
                   help="gravity: traffic between two sites proportional to the product of "
                   "their weights; uniform: the same traffic for every pair")
    g.add_argument("--total", type=_POS, default=None, metavar="E",
                   help="gravity: erlangs offered in total")
    g.add_argument("--weight", choices=WEIGHTS, default=None,
                   help="gravity: site weights, 1 each (equal, the default) or the number of "
                   "links at the site (degree)")
    g.add_argument("--weight-attribute", default=None, metavar="NAME",
                   help="gravity: take each site's weight from this node attribute (e.g. a "
                   "population)")
    g.add_argument("--decay-km", type=_POS, default=None, metavar="D",
                   help="gravity: damp traffic by exp(-distance / D km)")
    g.add_argument("--pairs", type=_POS_INT, default=None, metavar="K",
                   help="gravity: keep the K largest demands (scaled to the total)")
    g.add_argument("--per-pair", type=_POS, default=None, metavar="E",
                   help="uniform: erlangs between every pair of sites")
    g.add_argument("--demands", default=None, metavar="FILE.csv",
                   help="read the demands from a CSV file with columns origin, destination, "
                   "erlangs (instead of --traffic)")

    g = p.add_argument_group("links")
    g.add_argument("--module", type=_POS_INT, default=1, metavar="N",
                   help="capacity step in units (default 1)")
    g.add_argument("--module-cost", type=_NONNEG, default=1.0, metavar="C",
                   help="cost of one module (default 1)")
    g.add_argument("--cost-per-km", type=_NONNEG, default=0.0, metavar="K",
                   help="added to the cost of one module per km of length (default 0)")
    g.add_argument("--fixed-cost", type=_NONNEG, default=0.0, metavar="F",
                   help="cost of having a link at all (default 0)")
    g.add_argument("--capacity", type=_NONNEG_INT, default=None, metavar="N",
                   help="installed units on every link (default: none, left to sizing)")
    g.add_argument("--max-capacity", type=_NONNEG_INT, default=None, metavar="N",
                   help="most units on any link when sizing")

    g = p.add_argument_group("demands and routing")
    g.add_argument("--target", type=_number(float, 0, True, 1), default=0.01, metavar="P",
                   help="blocking target of every demand (default 0.01)")
    g.add_argument("--policy", choices=POLICIES, default="fixed",
                   help="routing policy (default fixed)")
    g.add_argument("--max-hops", type=_POS_INT, default=None, metavar="N",
                   help="longest route in links (default: enough for every demand)")
    g.add_argument("--max-routes", type=_POS_INT, default=None, metavar="K",
                   help="routes per demand (default 1 under fixed routing, 3 under alternate)")
    g.add_argument("--reservation", type=_NONNEG_INT, default=0, metavar="R",
                   help="trunk reservation under alternate routing (default 0)")
    g.add_argument("--routes", choices=ROUTE_MODES, default="generated",
                   help="generated: netdim lists the routes when it reads the file (default); "
                   "explicit: write each demand's routes in the file")

    g = p.add_argument_group("sites")
    g.add_argument("--site-ids", choices=("label", "node"), default="label",
                   help="site ids from the node labels (default) or the node ids")
    g.add_argument("--coordinates", type=_lonlat, default=None, metavar="LON_ATTR,LAT_ATTR",
                   help="node attributes with longitude and latitude (default: found by name)")
    g.add_argument("--all-parts", action="store_true",
                   help="keep parts of the graph not joined to the largest one")
    g.add_argument("--name", default=None, help="network name (default: the graph's)")
    p.set_defaults(func=run)
    return p


def _traffic(args):
    given = [k for k in _GRAVITY_ONLY if getattr(args, k) is not None]
    if args.demands is not None:
        if args.traffic is not None:
            raise ValueError("give --traffic or --demands, not both")
        extra = given + (["per_pair"] if args.per_pair is not None else [])
        if extra:
            raise ValueError(f"--{extra[0].replace('_', '-')} applies to --traffic, not to "
                             "--demands")
        return DemandTable(args.demands)
    if args.traffic is None:
        raise ValueError("no traffic: give --traffic gravity --total E, --traffic uniform "
                         "--per-pair E, or --demands FILE.csv")
    if args.traffic == "uniform":
        if given:
            raise ValueError(f"--{given[0].replace('_', '-')} applies to --traffic gravity "
                             "only")
        if args.per_pair is None:
            raise ValueError("--traffic uniform needs --per-pair E")
        return Uniform(args.per_pair)
    if args.per_pair is not None:
        raise ValueError("--per-pair applies to --traffic uniform only")
    if args.total is None:
        raise ValueError("--traffic gravity needs --total E")
    return Gravity(args.total, weight=args.weight or "equal",
                   weight_attribute=args.weight_attribute, decay_km=args.decay_km,
                   pairs=args.pairs)


def _command(args) -> str:
    """The command line that makes the same file (file names without directories)."""
    words = ["netdim", "import", pathlib.Path(args.topology).name]
    if args.demands is not None:
        words += ["--demands", pathlib.Path(args.demands).name]
    defaults = {"module": 1, "module_cost": 1.0, "cost_per_km": 0.0, "fixed_cost": 0.0,
                "target": 0.01, "policy": "fixed", "reservation": 0, "routes": "generated",
                "site_ids": "label"}
    for key in ("format", "traffic", "total", "per_pair", "weight", "weight_attribute",
                "decay_km", "pairs", "module", "module_cost", "cost_per_km", "fixed_cost",
                "capacity", "max_capacity", "target", "policy", "max_hops", "max_routes",
                "reservation", "routes", "site_ids", "coordinates", "name"):
        value = getattr(args, key)
        if value is None or defaults.get(key, object()) == value:
            continue
        if key == "coordinates":
            value = ",".join(value)
        words += [f"--{key.replace('_', '-')}", f"{value:g}" if isinstance(value, float)
                  else str(value)]
    if args.all_parts:
        words.append("--all-parts")
    return " ".join(shlex.quote(w) for w in words)


def run(args) -> int:
    traffic = _traffic(args)
    to_stdout = args.output == "-"
    if to_stdout and args.json:
        raise ValueError("--json prints to standard output: give -o a file name")
    if not to_stdout:
        out = pathlib.Path(args.output)
        if out.exists() and not args.force:
            raise ValueError(f"{args.output}: already exists (add --force to replace it)")
        if out.exists() and os.path.exists(args.topology) and os.path.samefile(out,
                                                                                args.topology):
            raise ValueError(f"{args.output}: is the topology file itself; choose another "
                             "output")
    costs = LinkCosts(module=args.module, module_cost=args.module_cost,
                      cost_per_km=args.cost_per_km, fixed_cost=args.fixed_cost,
                      capacity=args.capacity, max_capacity=args.max_capacity)
    result = import_topology(
        args.topology, traffic, format=args.format, costs=costs, target=args.target,
        policy=args.policy, max_hops=args.max_hops, max_routes=args.max_routes,
        reservation=args.reservation, routes=args.routes, all_parts=args.all_parts,
        site_ids=args.site_ids, coordinates=args.coordinates, name=args.name,
        command=_command(args))
    report = result.report
    if not args.quiet:
        for f in report.findings:
            print(f"netdim import: {f.message}", file=sys.stderr)
    if to_stdout:
        sys.stdout.write(result.text)
        return 0
    try:
        write_text(result.text, args.output, force=args.force)
    except FileExistsError:
        raise ValueError(f"{args.output}: already exists (add --force to replace it)") from None
    if args.json:
        print(json.dumps({"output": args.output, **report.to_dict()}, indent=2))
        return 0
    r = report.routing
    print(f"wrote {args.output}: {report.sites} sites, {report.links} links, "
          f"{report.demands} demands, {report.offered_traffic:.6g} erlangs offered")
    print(f"  from {pathlib.Path(report.source).name}: {report.nodes} nodes, {report.edges} "
          f"edges ({report.format})")
    print(f"  traffic  {report.traffic}")
    print(f"  routing  {r['policy']}, max_hops {r['max_hops']}, max_routes {r['max_routes']}, "
          f"reservation {r['reservation']}; routes {r['routes']}")
    return 0
