"""Candidate routes generated from the topology, and the rule a given route must follow.

A demand without explicit routes gets the loop-free paths between its ends, in a fixed order:
fewest links first; among paths of equal hop count the shorter total length first (a link
without a length counts 0), then the lower total cost per module, then the link ids (so the
order never depends on dictionary or hash order). Parallel links between the same sites are
separate links and so give separate routes. With ``max_routes`` = k only the first k of that
order are kept, and only the paths needed to know them are looked at (see
:class:`RouteFinder`).

Nothing here knows about demands' traffic, capacities or evaluation.
"""

from __future__ import annotations

import itertools
from collections import OrderedDict

import networkx as nx

__all__ = [
    "candidate_routes",
    "link_graph",
    "check_path",
    "RouteFinder",
    "RouteLimitError",
    "MAX_CANDIDATES",
    "MAX_SEARCH_STEPS",
]

#: Most routes one demand may generate when ``max_routes`` is not set.
MAX_CANDIDATES = 10_000
#: Most search steps (sites tried) spent on one demand's routes.
MAX_SEARCH_STEPS = 2_000_000


class RouteLimitError(ValueError):
    """Route generation for a demand would take more than a stated limit of work."""


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


def check_path(links, route, between) -> str | None:
    """Why a sequence of links is not a route of a demand, or None when it is one.

    Parameters
    ----------
    links : sequence of Link
        The network's links (anything with ``id`` and ``ends``).
    route : sequence of int
        Indices into ``links``, in the order a call crosses them (at least one).
    between : tuple of str
        The demand's two sites; the route may start at either.

    Returns
    -------
    str or None
        The problem (a sentence naming the link or site), None for a loop-free path that
        joins the two sites.
    """
    a, b = between
    first = links[route[0]].ends
    if a in first:
        here, goal = a, b
    elif b in first:
        here, goal = b, a
    else:
        return (f"first link '{links[route[0]].id}' does not touch '{a}' or '{b}' (a route "
                "must join the demand's ends)")
    visited = {here}
    for j in route:
        ends = links[j].ends
        if here not in ends:
            return (f"link '{links[j].id}' does not continue from site '{here}' (the links "
                    "of a route must form a path)")
        here = ends[1] if ends[0] == here else ends[0]
        if here in visited:
            return f"visits site '{here}' twice (a route must be loop-free)"
        visited.add(here)
    if here != goal:
        return f"ends at '{here}', not at '{goal}'"
    return None


def candidate_routes(network_or_graph, origin, dest, max_hops: int, max_routes=None):
    """Loop-free routes between two sites, preferred first.

    Parameters
    ----------
    network_or_graph : Network or networkx.MultiGraph
        A network (its :meth:`~netdim.model.Network.to_graph` is used) or a multigraph whose
        edge keys are link ids (text, or at least mutually comparable), as :func:`link_graph`
        builds. When generating routes for many demands, use one :class:`RouteFinder`.
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
    RouteLimitError
        More than :data:`MAX_CANDIDATES` routes, or more than :data:`MAX_SEARCH_STEPS` steps
        of search, would be needed (lower ``max_hops`` or set ``max_routes``).
    """
    graph = network_or_graph
    if not isinstance(graph, nx.Graph):
        graph = network_or_graph.to_graph()
    return RouteFinder(graph, max_hops, max_routes).routes(origin, dest)


class RouteFinder:
    """Candidate routes of many demands over one graph (see :func:`candidate_routes`).

    Parameters
    ----------
    graph : networkx.MultiGraph
        As :func:`link_graph` builds.
    max_hops : int
        Longest route, in links.
    max_routes : int, optional
        Routes kept per demand (None: every route of at most ``max_hops`` links).
    max_candidates, max_steps : int
        Work limits per demand (:data:`MAX_CANDIDATES`, :data:`MAX_SEARCH_STEPS`).

    Notes
    -----
    The search is a depth-first listing of simple paths (no site twice) pruned by hop
    distance: a site is entered only when the links used so far plus its breadth-first
    distance to the destination fit in the hop limit, and the last link is looked up
    directly. With ``max_routes`` = k the hop limit grows from the shortest distance one
    link at a time until k paths are found (each prefix filed once under its bound, see
    :meth:`_paths_by_bound`, rather than searching each limit afresh); since hop count is
    the first sort key, the paths of at most that many links hold the first k of the full
    order, which is the same answer as listing every path (as
    :func:`networkx.all_simple_edge_paths` would) and sorting. Distances are kept for
    the last 64 destinations (files usually list demands site by site).
    :func:`networkx.shortest_simple_paths` (Yen's algorithm) gives the same paths but was
    measured slower here (docs/measurements/netfile.md).
    """

    _CACHE = 64

    def __init__(self, graph, max_hops, max_routes=None, *, max_candidates=MAX_CANDIDATES,
                 max_steps=MAX_SEARCH_STEPS):
        if isinstance(max_hops, bool) or int(max_hops) != max_hops or max_hops < 1:
            raise ValueError(f"max_hops: must be an integer >= 1, got {max_hops!r}")
        if max_routes is not None and (
            isinstance(max_routes, bool) or int(max_routes) != max_routes or max_routes < 1
        ):
            raise ValueError(f"max_routes: must be an integer >= 1 or None, got {max_routes!r}")
        self.graph = graph
        # the plain dict-of-dicts behind graph.adj: views cost a call per look-up
        self._adj = getattr(graph, "_adj", None) or graph.adj
        self.max_hops = int(max_hops)
        self.max_routes = None if max_routes is None else int(max_routes)
        self.max_candidates = max_candidates
        self.max_steps = max_steps
        self._dist = OrderedDict()
        # length and cost per edge, by the identity of the edge's data dict (keys need not be
        # unique across a multigraph)
        self._attrs = {id(d): (_edge_attr(d, "length"), _edge_attr(d, "cost_per_module"))
                       for _, _, d in graph.edges(data=True)}

    def routes(self, origin, dest):
        """Routes from ``origin`` to ``dest`` as tuples of link ids, preferred first."""
        graph = self.graph
        for name, site in (("origin", origin), ("dest", dest)):
            if site not in graph:
                raise ValueError(f"{name}: site '{site}' is not in the network")
        if origin == dest:
            raise ValueError(f"origin and dest are the same site '{origin}'")
        start, goal, dist = self._oriented(origin, dest)
        if dist is not None and start not in dist:
            return []
        low = 1 if dist is None else dist[start]
        k = self.max_routes
        budget = [self.max_steps]
        if k is not None and dist is not None:
            paths = self._paths_by_bound(start, goal, dist, k, budget)
        else:
            for hops in (range(low, self.max_hops + 1) if k is not None else (self.max_hops,)):
                paths = self._paths(start, goal, dist, hops, budget)
                if k is not None and len(paths) >= k:
                    break
        attrs = self._attrs
        keyed = []
        for steps in paths:
            if start != origin:
                steps = steps[::-1]
            ids = tuple(key for key, _ in steps)
            # summed from the origin on, as every caller compares them (float sums depend on
            # the order)
            keyed.append((
                len(steps),
                sum(attrs[id(d)][0] for _, d in steps),
                sum(attrs[id(d)][1] for _, d in steps),
                ids,
            ))
        keyed.sort()
        routes = [item[3] for item in keyed]
        return routes if k is None else routes[:k]

    def routes_many(self, pairs):
        """:meth:`routes` of every ``(origin, dest)`` pair, in the order given.

        The pairs are worked through grouped by origin, so that each site's distances are
        found once. A pair over a work limit gets its :class:`RouteLimitError` in place of
        its routes.
        """
        out = [None] * len(pairs)
        for i in sorted(range(len(pairs)), key=lambda i: pairs[i][0]):
            try:
                out[i] = self.routes(*pairs[i])
            except RouteLimitError as exc:
                out[i] = exc
        return out

    # -- internals --------------------------------------------------------------------------
    def _oriented(self, origin, dest):
        """(start, goal, hop distances to goal or None); searches from either end."""
        if self.max_hops <= 2:
            return origin, dest, None  # the last-link look-up prunes enough
        for start, goal in ((origin, dest), (dest, origin)):
            if goal in self._dist:
                self._dist.move_to_end(goal)
                return start, goal, self._dist[goal]
        dist = _bfs(self._adj, origin, self.max_hops)
        self._dist[origin] = dist
        if len(self._dist) > self._CACHE:
            self._dist.popitem(last=False)
        return dest, origin, dist

    def _paths(self, start, goal, dist, hops, budget):
        """Every simple path of at most ``hops`` links, as lists of (link id, data)."""
        adj = self._adj
        found = []
        chosen = []  # per step: the parallel links to the next site, {id: data}

        def reached(keyed):
            for combo in itertools.product(*(c.items() for c in chosen), keyed.items()):
                found.append(list(combo))
            if len(found) > self.max_candidates:
                raise RouteLimitError(self._too_many("routes", self.max_candidates))

        direct = adj[start].get(goal)
        if direct:
            reached(direct)
        if hops < 2:
            return found
        path = [start]
        on_path = {start}
        stack = [iter(adj[start].items())]
        steps = budget[0]
        while stack:
            depth = len(chosen)  # links used to reach path[-1]
            for there, keyed in stack[-1]:  # noqa: B007 (used after the break)
                steps -= 1
                if there in on_path or there == goal:
                    continue
                if dist is not None:
                    d = dist.get(there)
                    if d is None or depth + 1 + d > hops:
                        continue
                break
            else:  # every neighbour tried: step back
                stack.pop()
                on_path.discard(path.pop())
                if chosen:
                    chosen.pop()
                continue
            if steps < 0:
                raise RouteLimitError(self._too_many("search steps", self.max_steps))
            chosen.append(keyed)
            onward = adj[there].get(goal)
            if onward:
                reached(onward)
            if depth + 3 <= hops:  # room for another site before the goal
                path.append(there)
                on_path.add(there)
                stack.append(iter(adj[there].items()))
            else:
                chosen.pop()
        budget[0] = steps
        return found

    def _paths_by_bound(self, start, goal, dist, k, budget):
        """Every simple path of at most h links, h the least hop count that gives k paths
        (or ``max_hops``), as lists of (link id, data).

        The same paths as :meth:`_paths` at h, found without listing the shorter levels
        again: a path prefix ending at site u after d links is filed under its bound
        d + dist(u), the fewest links of any path through it. A bound never falls along a
        path (dist changes by at most one a link), and a prefix whose bound is b completes
        by its last link in exactly b links, so taking the bounds 1, 2, ... in turn
        meets every path in order of hop count and each prefix once.
        """
        adj = self._adj
        max_hops = self.max_hops
        limit = self.max_candidates
        found = []
        # buckets[b]: prefixes (sites visited, parallel links per step) with bound b
        buckets = [[] for _ in range(max_hops + 1)]
        buckets[dist[start]].append(((start,), ()))
        steps = budget[0]
        for bound in range(dist[start], max_hops + 1):
            todo = buckets[bound]
            while todo:
                sites, chosen = todo.pop()
                here = sites[-1]
                depth = len(chosen)
                nbrs = adj[here]
                last = nbrs.get(goal)
                if last:
                    for combo in itertools.product(*(c.items() for c in chosen),
                                                   last.items()):
                        found.append(list(combo))
                    if len(found) > limit:
                        raise RouteLimitError(self._too_many("routes", limit))
                if depth + 2 > max_hops:
                    continue
                for there, keyed in nbrs.items():
                    steps -= 1
                    if there == goal or there in sites:
                        continue
                    d = dist.get(there)
                    if d is None:
                        continue
                    b = depth + 1 + d
                    if b <= max_hops:
                        buckets[b].append((sites + (there,), chosen + (keyed,)))
                if steps < 0:
                    raise RouteLimitError(self._too_many("search steps", self.max_steps))
            if len(found) >= k:
                break
        budget[0] = steps
        return found

    def _too_many(self, what, limit):
        return (f"more than {limit} {what} for routes of at most {self.max_hops} links "
                "(the limit on generated routes); set routing.max_routes, lower "
                "routing.max_hops, or give this demand's routes")


def _bfs(adj, root, limit):
    """Hop distances from ``root``, up to ``limit`` links."""
    dist = {root: 0}
    frontier = [root]
    level = 0
    while frontier and level < limit:
        level += 1
        nxt = []
        for u in frontier:
            for v in adj[u]:
                if v not in dist:
                    dist[v] = level
                    nxt.append(v)
        frontier = nxt
    return dist


def _edge_attr(data, name) -> float:
    value = data.get(name)
    return 0.0 if value is None else float(value)
