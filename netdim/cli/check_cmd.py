"""``netdim check FILE``: validate a network file and summarise it."""

from __future__ import annotations

import json

from netdim.cli._files import add_file_options, file_limits
from netdim.netfile import read_network
from netdim.report.tables_csv import write_check_csv

__all__ = ["register", "run"]


def register(subparsers):
    p = subparsers.add_parser(
        "check",
        help="validate a network file and summarise it",
        description="Read a network file, report every problem in it (one per line, "
        "FILE:LINE: ITEM: problem) or summarise it: sites, links, demands, routes given and "
        "generated, total offered traffic, routing policy. Exit 0 when the file is valid, "
        "2 when it is not.",
    )
    p.add_argument("file", metavar="FILE", help="network file (YAML)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.add_argument("--routes", action="store_true",
                   help="also list every demand's routes in the order they are tried "
                   "(with --json: under 'demand_routes')")
    p.add_argument("--csv", metavar="DIR",
                   help="also write DIR/summary.csv (one row: the --json summary) and, with "
                   "--routes, DIR/routes.csv (one row per route step)")
    add_file_options(p)
    p.set_defaults(func=run)


def _n(count, word):
    return f"{count} {word}" + ("" if count == 1 else "s")


def run(args) -> int:
    net = read_network(args.file, **file_limits(args))
    s = net.summary()
    if args.csv:
        write_check_csv(s, args.csv, net.route_listing() if args.routes else None)
    if args.json:
        out = {"valid": True, **s}
        if args.routes:
            out["demand_routes"] = net.route_listing()
        print(json.dumps(out, indent=2))
        return 0
    print(f"{s['source']}: valid network file '{s['name']}'")
    print(f"  sites    {s['sites']}")
    print(f"  links    {s['links']}" + (
        f" ({len(s['links_without_capacity'])} without capacity: left to sizing)"
        if s["links_without_capacity"] else f" (total capacity {s['capacity_total']} units)"))
    extras = []
    if s["multirate"]:
        extras.append("multi-rate")
    if s["holding_overrides"]:
        extras.append("per-link holding times")
    if s["economic"]:
        extras.append(f"{s['economic']} with a value per erlang")
    more = f" ({', '.join(extras)})" if extras else ""
    print(f"  demands  {s['demands']}{more}")
    parts = []
    if s["routes_given"] or not s["routes_generated"]:
        parts.append(f"{s['routes_given']} given" + (
            f" (longest {_n(s['longest_route_given'], 'link')})" if s["routes_given"] else ""))
    if s["routes_generated"]:
        parts.append(f"{s['routes_generated']} generated for "
                     f"{_n(s['demands_generated'], 'demand')} (longest "
                     f"{_n(s['longest_route_generated'], 'link')})")
    print(f"  routes   {s['routes']}: {', '.join(parts)}")
    print(f"  offered  {s['offered_traffic']:.6g} erlangs in total")
    routing = f"  routing  {s['policy']}, reservation {s['reservation']}"
    if s["demands_generated"]:
        limit = "" if s["max_routes"] is None else f", at most {s['max_routes']} per demand"
        routing += f"; routes generated with at most {_n(s['max_hops'], 'link')}{limit}"
    print(routing)
    if args.routes:
        print("routes, in the order they are tried:")
        for d, entry in zip(net.demands, net.route_listing(), strict=True):
            how = "generated" if entry["generated"] else "given"
            print(f"  {entry['demand']} ({entry['between'][0]} - {entry['between'][1]}, "
                  f"{how})")
            if not entry["routes"]:
                print("    (none)")
            for k, route in enumerate(entry["routes"], start=1):
                hold = _holdings(route, d.holding)
                print(f"    {k}. {' > '.join(route['links'])}{hold}")
    return 0


def _holdings(route, holding):
    """' (SHUTTLE held 0.25 h)' for steps whose holding differs from the demand's."""
    odd = [f"{lid} held {h:g} h" for lid, h in zip(route["links"], route["holdings"],
                                                    strict=True) if h != holding]
    return f" ({', '.join(odd)})" if odd else ""
