"""Standard topologies built from one network's sites and demands: mesh, star, ring,
two tandems.

Each variant keeps the sites, demands, targets and routing policy of the network it is made
from and replaces its links. Link costs come from the sites' distances when every site has
coordinates (the Euclidean distance, turned into the file's length unit by the median
length per coordinate unit of the file's links, times the file's median cost per module per
unit length), else from the file's links (their median module, cost per module and fixed
cost). Routes are generated as the network file reader does, up to the file's
``max_hops`` or, where a variant needs longer routes, the most links on any demand's
shortest path.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import networkx as nx
import numpy as np

from netdim.model import Link, Network, Route, Routing
from netdim.routing import RouteFinder, link_graph

__all__ = ["Variant", "parse_variants", "build_variant", "KINDS"]

#: Variant kinds and how many sites each names.
KINDS = {"mesh": 0, "star": 1, "ring": 0, "two-tandem": 2}


@dataclass(frozen=True)
class Variant:
    """A standard topology: ``kind`` and the sites it names (the hub, the tandems)."""

    kind: str
    sites: tuple = ()

    @property
    def name(self) -> str:
        return self.kind + (":" + ",".join(self.sites) if self.sites else "")


def parse_variants(text: str) -> tuple:
    """``'mesh,star:HUB,ring,two-tandem:A,B'`` as :class:`Variant` objects.

    A word that is not a kind continues the sites of the kind before it (so the two
    tandems' ``A,B`` reads as one variant).

    Raises
    ------
    ValueError
        An unknown kind, a kind with the wrong number of sites.
    """
    groups = []
    for word in (w.strip() for w in text.split(",")):
        if not word:
            continue
        kind, _, first = word.partition(":")
        if kind in KINDS:
            groups.append([kind, [first] if first else []])
        elif groups and ":" not in word:
            groups[-1][1].append(word)
        else:
            raise ValueError(f"variants: unknown variant {kind!r}; choose from "
                             f"mesh, star:HUB, ring, two-tandem:A,B")
    if not groups:
        raise ValueError("variants: name at least one variant (mesh, star:HUB, ring, "
                         "two-tandem:A,B)")
    out = []
    for kind, sites in groups:
        if len(sites) != KINDS[kind]:
            want = {0: "no site", 1: "one site (star:HUB)", 2: "two sites (two-tandem:A,B)"}
            raise ValueError(f"variants: {kind} takes {want[KINDS[kind]]}, got "
                             f"{','.join(sites) or 'none'}")
        out.append(Variant(kind, tuple(sites)))
    return tuple(out)


def _pairs(network, variant):
    ids = [s.id for s in network.sites]
    for s in variant.sites:
        network.site_index(s)  # KeyError naming it
    if variant.kind == "mesh":
        return [(a, b) for i, a in enumerate(ids) for b in ids[i + 1:]]
    if variant.kind == "star":
        hub = variant.sites[0]
        return [(hub, s) for s in ids if s != hub]
    if variant.kind == "ring":
        if len(ids) == 2:
            return [(ids[0], ids[1])]
        order = _ring_order(network)
        return list(zip(order, order[1:] + order[:1], strict=True))
    a, b = variant.sites
    if a == b:
        raise ValueError(f"variants: two-tandem needs two different sites, got {a},{b}")
    return [(a, b)] + [(t, s) for t in (a, b) for s in ids if s not in (a, b)]


def _ring_order(network):
    """Sites around their centroid by angle when all have coordinates, else file order."""
    sites = network.sites
    if all(s.x is not None and s.y is not None for s in sites):
        cx = sum(s.x for s in sites) / len(sites)
        cy = sum(s.y for s in sites) / len(sites)
        return [s.id for s in sorted(sites, key=lambda s: (math.atan2(s.y - cy, s.x - cx),
                                                           s.id))]
    return [s.id for s in sites]


def _median(values, default):
    values = [v for v in values if v is not None and math.isfinite(v)]
    return float(np.median(values)) if values else default


def _link_template(network):
    links = network.links
    per_len = [k.cost_per_module / k.length for k in links if k.length]
    fix_len = [k.fixed_cost / k.length for k in links if k.length]
    caps = [k.max_capacity for k in links if k.max_capacity is not None]
    return {
        "module": int(round(_median([k.module for k in links], 1.0))),
        "cost_per_module": _median([k.cost_per_module for k in links], 1.0),
        "fixed_cost": _median([k.fixed_cost for k in links], 0.0),
        "cost_per_length": _median(per_len, None) if per_len else None,
        "fixed_per_length": _median(fix_len, 0.0) if fix_len else None,
        "max_capacity": max(caps) if caps else None,
    }


def _length_scale(network, pos) -> float:
    """Length per unit of coordinate distance: the median over the file's links that give a
    length (coordinates and lengths may be in different units), else 1."""
    ratios = []
    for k in network.links:
        a, b = pos[k.ends[0]], pos[k.ends[1]]
        d = math.hypot(a.x - b.x, a.y - b.y)
        if k.length and d > 0:
            ratios.append(k.length / d)
    return _median(ratios, 1.0)


def build_variant(network: Network, variant: Variant) -> tuple:
    """The network with the links of ``variant``, and the demands it cannot route.

    Parameters
    ----------
    network : Network
    variant : Variant

    Returns
    -------
    (Network, tuple of str)
        The variant (links named ``A-B``, capacities left to the sizer, routes generated)
        and the ids of the demands left out because no route joins their ends.

    Raises
    ------
    ValueError
        A site the variant names that is not defined, or a network with fewer than two
        sites.

    Examples
    --------
    A star on hub A over three sites: two links, and B-C's one route now goes through the
    hub (the only path, as networkx's shortest path on the star would give).

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("three", (Site("A"), Site("B"), Site("C")),
    ...               (Link("A-B", ("A", "B"), 5, cost_per_module=1.0),
    ...                Link("B-C", ("B", "C"), 5, cost_per_module=1.0)),
    ...               (Demand("BC", ("B", "C"), 2.0, target=0.01,
    ...                       routes=(Route((1,), (1.0,)),)),))
    >>> star, left_out = build_variant(net, Variant("star", ("A",)))
    >>> [k.id for k in star.links], left_out
    (['A-B', 'A-C'], ())
    >>> [[star.links[i].id for i in r.links] for r in star.demands[0].routes]
    [['A-B', 'A-C']]
    """
    if len(network.sites) < 2:
        raise ValueError(f"variants: network '{network.name}' has fewer than two sites")
    try:
        pairs = _pairs(network, variant)
    except KeyError as exc:
        raise ValueError(f"variants: {variant.name}: {exc.args[0]}") from None
    t = _link_template(network)
    pos = {s.id: s for s in network.sites}
    located = all(s.x is not None and s.y is not None for s in network.sites)
    scale = _length_scale(network, pos) if located else 1.0
    links = []
    for a, b in pairs:
        length = (scale * math.hypot(pos[a].x - pos[b].x, pos[a].y - pos[b].y)
                  if located else None)
        if length is not None and t["cost_per_length"] is not None:
            cost = t["cost_per_length"] * length
            fixed = (t["fixed_per_length"] or 0.0) * length
        else:
            cost, fixed = t["cost_per_module"], t["fixed_cost"]
        links.append(Link(id=f"{a}-{b}", ends=(a, b), module=t["module"],
                          cost_per_module=round(cost, 6), fixed_cost=round(fixed, 6),
                          max_capacity=t["max_capacity"],
                          length=None if length is None else round(length, 6)))
    graph = link_graph(links, [s.id for s in network.sites])
    hops = 1
    for d in network.demands:
        try:
            hops = max(hops, nx.shortest_path_length(graph, *d.between))
        except nx.NetworkXNoPath:
            pass
    max_hops = max(network.routing.max_hops, hops)
    finder = RouteFinder(graph, max_hops, network.routing.max_routes)
    index = {k.id: j for j, k in enumerate(links)}
    demands, unroutable = [], []
    for d in network.demands:
        found = finder.routes(*d.between)
        if not found:
            unroutable.append(d.id)
            continue
        routes = tuple(Route(tuple(index[i] for i in r), (d.holding,) * len(r))
                       for r in found)
        demands.append(replace(d, routes=routes, routes_generated=True))
    name = f"{network.name} [{variant.name}]"
    net = replace(network, name=name, links=tuple(links), demands=tuple(demands),
                  routing=Routing(policy=network.routing.policy, max_hops=max_hops,
                                  reservation=network.routing.reservation,
                                  max_routes=network.routing.max_routes),
                  source=None)
    return net, tuple(unroutable)

