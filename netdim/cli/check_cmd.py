"""``netdim check FILE``: validate a network file and summarise it."""

from __future__ import annotations

import json

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
    p.set_defaults(func=run)


def run(args) -> int:
    from netdim.netfile import network_summary, read_network

    net = read_network(args.file)
    s = network_summary(net)
    if args.json:
        print(json.dumps({"valid": True, **s}, indent=2))
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
    print(f"  routes   {s['routes']}: {s['routes_given']} given, {s['routes_generated']} "
          f"generated for {s['demands_generated']} demands; longest {s['longest_route']} links")
    print(f"  offered  {s['offered_traffic']:.6g} erlangs in total")
    limit = "" if s["max_routes"] is None else f", at most {s['max_routes']} routes per demand"
    print(f"  routing  {s['policy']}, reservation {s['reservation']}, "
          f"max_hops {s['max_hops']}{limit}")
    return 0
