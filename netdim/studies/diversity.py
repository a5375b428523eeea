"""Route diversity: how many link-disjoint candidate routes each demand has.

A demand with ``k`` pairwise link-disjoint candidate routes keeps a route under any
``k - 1`` link failures; the topology allows at most the local edge connectivity of its two
ends (Menger's theorem), which the candidate routes may fall short of when ``max_hops`` or
``max_routes`` cut them.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations

import networkx as nx

__all__ = ["DemandDiversity", "route_diversity", "MAX_EXACT_ROUTES"]

#: Most candidate routes of one demand searched exhaustively; above it a greedy packing
#: gives a lower bound (``exact`` False).
MAX_EXACT_ROUTES = 16


@dataclass(frozen=True)
class DemandDiversity:
    """Link-disjoint routes of one demand.

    Attributes
    ----------
    demand : str
    disjoint_routes : int
        Most candidate routes no two of which share a link.
    topology_bound : int
        Link-disjoint paths the links allow between the ends (any length).
    exact : bool
        False when ``disjoint_routes`` is a greedy lower bound (many routes).
    """

    demand: str
    disjoint_routes: int
    topology_bound: int
    exact: bool = True

    def to_dict(self) -> dict:
        return {"demand": self.demand, "disjoint_routes": self.disjoint_routes,
                "topology_bound": self.topology_bound, "exact": self.exact}


def _packing(route_sets) -> tuple[int, bool]:
    routes = [frozenset(r) for r in route_sets]
    if len(routes) > MAX_EXACT_ROUTES:
        used, count = set(), 0
        for r in sorted(routes, key=len):
            if not used & r:
                used |= r
                count += 1
        return count, False
    for k in range(len(routes), 0, -1):
        for combo in combinations(routes, k):
            seen = set()
            ok = True
            for r in combo:
                if seen & r:
                    ok = False
                    break
                seen |= r
            if ok:
                return k, True
    return 0, True


def route_diversity(network) -> tuple:
    """Per demand, its link-disjoint candidate routes and what the topology allows.

    Parameters
    ----------
    network : Network

    Returns
    -------
    tuple of DemandDiversity
        In demand order.

    References
    ----------
    .. [1] K. Menger, "Zur allgemeinen Kurventheorie", Fundamenta Mathematicae 10 (1927)
       96-115 (edge form: the most edge-disjoint paths equal the smallest edge cut).

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("tri", (Site("A"), Site("B"), Site("C")),
    ...               (Link("AB", ("A", "B")), Link("AC", ("A", "C")), Link("CB", ("C", "B"))),
    ...               (Demand("AB", ("A", "B"), 1.0,
    ...                       routes=(Route((0,), (1.0,)), Route((1, 2), (1.0, 1.0)))),))
    >>> [(d.disjoint_routes, d.topology_bound) for d in route_diversity(net)]
    [(2, 2)]
    """
    g = nx.Graph()
    g.add_nodes_from(s.id for s in network.sites)
    for link in network.links:
        a, b = link.ends
        if g.has_edge(a, b):
            g[a][b]["capacity"] += 1
        else:
            g.add_edge(a, b, capacity=1)
    out = []
    for d in network.demands:
        count, exact = _packing(r.links for r in d.routes)
        bound = int(nx.maximum_flow_value(g, *d.between)) if g.number_of_edges() else 0
        out.append(DemandDiversity(d.id, count, bound, exact))
    return tuple(out)
