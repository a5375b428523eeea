"""Candidate routes generated from the topology.

A demand without explicit routes gets the loop-free paths between its ends, in a fixed order:
direct links first, then longer paths up to ``max_hops`` links; among paths of equal hop count
the shorter total length first, then the lower total cost per module, then the link ids (so the
order never depends on dictionary or hash order). Parallel links between the same sites are
separate links and so give separate routes.

Nothing here knows about demands' traffic, capacities or evaluation.
"""

from __future__ import annotations

import networkx as nx

__all__ = ["candidate_routes", "link_graph"]


def link_graph(links, sites=()) -> nx.MultiGraph:
    """A :class:`networkx.MultiGraph` with one edge per link, keyed by link id.

    Parameters
    ----------
    links : iterable of Link
        Anything with ``id``, ``ends``, ``length`` and ``cost_per_module``.
    sites : iterable of str, optional
        Site ids to add as nodes even when no link touches them.

    Returns
    -------
    networkx.MultiGraph
        Edges carry ``index`` (position in ``links``), ``length`` and ``cost_per_module``.
    """
    g = nx.MultiGraph()
    g.add_nodes_from(sites)
    for i, link in enumerate(links):
        g.add_edge(
            link.ends[0],
            link.ends[1],
            key=link.id,
            index=i,
            length=link.length,
            cost_per_module=link.cost_per_module,
        )
    return g


def _edge_attr(data, name) -> float:
    value = data.get(name)
    return 0.0 if value is None else float(value)


def candidate_routes(network_or_graph, origin, dest, max_hops: int, max_routes=None):
    """Loop-free routes between two sites, preferred first.

    Parameters
    ----------
    network_or_graph : Network or networkx.MultiGraph
        A network (its :meth:`~netdim.model.Network.to_graph` is used) or a multigraph whose
        edge keys are link ids (text, or at least mutually comparable), as :func:`link_graph`
        builds. When generating routes for many demands, build the graph once and pass it.
    origin, dest : str
        Site ids (distinct).
    max_hops : int
        Longest route, in links (>= 1).
    max_routes : int, optional
        Keep only this many routes (the first in the order below).

    Returns
    -------
    list of tuple of str
        Each route as the link ids in order from ``origin`` to ``dest``. Ordered by hop count,
        then total ``length`` (a missing length counts as 0), then total ``cost_per_module``,
        then the link ids. Empty when no path of at most ``max_hops`` links exists.

    Raises
    ------
    ValueError
        Unknown site, ``origin == dest``, or ``max_hops`` / ``max_routes`` below 1.

    Notes
    -----
    Paths are enumerated with :func:`networkx.all_simple_edge_paths` (simple paths: no site
    visited twice); for ``max_hops <= 2`` the direct and two-link paths are read off the
    adjacency directly, which gives the same set far faster on dense meshes.
    """
    graph = network_or_graph
    if not isinstance(graph, nx.Graph):
        graph = network_or_graph.to_graph()
    for name, site in (("origin", origin), ("dest", dest)):
        if site not in graph:
            raise ValueError(f"{name}: site '{site}' is not in the network")
    if origin == dest:
        raise ValueError(f"origin and dest are the same site '{origin}'")
    if isinstance(max_hops, bool) or int(max_hops) != max_hops or max_hops < 1:
        raise ValueError(f"max_hops: must be an integer >= 1, got {max_hops!r}")
    if max_routes is not None and (
        isinstance(max_routes, bool) or int(max_routes) != max_routes or max_routes < 1
    ):
        raise ValueError(f"max_routes: must be an integer >= 1 or None, got {max_routes!r}")

    # the plain dict-of-dicts behind graph.adj: views cost a call per look-up, and dense
    # meshes make millions of them
    adj = getattr(graph, "_adj", None) or graph.adj
    if max_hops <= 2:
        keyed = _short_paths(adj, origin, dest, max_hops)
    else:
        keyed = [
            _keyed([(k, adj[u][v][k]) for u, v, k in path])
            for path in nx.all_simple_edge_paths(graph, origin, dest, cutoff=int(max_hops))
        ]
    keyed.sort()
    routes = [item[3] for item in keyed]
    if max_routes is not None:
        routes = routes[: int(max_routes)]
    return routes


def _keyed(steps):
    """(hops, total length, total cost per module, ids): the sort key, ids last."""
    ids = tuple(k for k, _ in steps)
    return (
        len(steps),
        sum(_edge_attr(d, "length") for _, d in steps),
        sum(_edge_attr(d, "cost_per_module") for _, d in steps),
        ids,
        ids,
    )


def _short_paths(adj, origin, dest, max_hops):
    """Sort keys of the direct and (when ``max_hops == 2``) two-link paths."""
    out = []
    for k, d in adj[origin].get(dest, {}).items():
        out.append((1, _edge_attr(d, "length"), _edge_attr(d, "cost_per_module"), (k,), (k,)))
    if max_hops >= 2:
        for mid, keys in adj[origin].items():
            if mid == dest or mid == origin:
                continue
            onward = adj[mid].get(dest)
            if not onward:
                continue
            for k1, d1 in keys.items():
                l1, c1 = _edge_attr(d1, "length"), _edge_attr(d1, "cost_per_module")
                for k2, d2 in onward.items():
                    ids = (k1, k2)
                    out.append((2, l1 + _edge_attr(d2, "length"),
                                c1 + _edge_attr(d2, "cost_per_module"), ids, ids))
    return out
