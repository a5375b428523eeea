"""From a topology file and a traffic model to a network file a person can read and edit."""

from __future__ import annotations

import dataclasses
import pathlib
import statistics
from dataclasses import dataclass

import networkx as nx

from netdim.model import POLICIES, Network
from netdim.netfile import MAX_HOPS, MAX_UNITS, loads_network
from netdim.topology.emit import comment_block, flow_item, flow_mapping_line, scalar
from netdim.topology.graphfile import Finding, Topology, finding, read_topology
from netdim.topology.traffic import DemandTable, Gravity, Uniform, pair_traffic

__all__ = ["LinkCosts", "ImportReport", "ImportResult", "import_topology", "ROUTE_MODES"]

#: How routes reach the file: left to netdim to generate, or written out.
ROUTE_MODES = ("generated", "explicit")


def _count(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _sig(x: float, digits: int = 6) -> float:
    return float(f"{x:.{digits}g}")


@dataclass(frozen=True)
class LinkCosts:
    """What every imported link costs and how it is sized.

    Attributes
    ----------
    module : int
        Capacity step in units (e.g. 30 circuits).
    module_cost : float
        Cost of one module, before the part that grows with length.
    cost_per_km : float
        Added to the cost of one module per km of link length.
    fixed_cost : float
        Cost of having the link at all.
    capacity : int or None
        Installed units written on every link (None: left to sizing).
    max_capacity : int or None
        Sizing bound written on every link.
    """

    module: int = 1
    module_cost: float = 1.0
    cost_per_km: float = 0.0
    fixed_cost: float = 0.0
    capacity: int | None = None
    max_capacity: int | None = None

    def __post_init__(self):
        for name in ("module", "capacity", "max_capacity"):
            v = getattr(self, name)
            low = 1 if name == "module" else 0
            if v is None and name != "module":
                continue
            if isinstance(v, bool) or not isinstance(v, int) or not low <= v <= MAX_UNITS:
                raise ValueError(f"{name}: must be a whole number in [{low}, {MAX_UNITS}], "
                                 f"got {v!r}")
        for name in ("module_cost", "cost_per_km", "fixed_cost"):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not 0 <= v <= 1e12:
                raise ValueError(f"{name}: must be a number in [0, 1e12], got {v!r}")
        if (self.capacity is not None and self.max_capacity is not None
                and self.capacity > self.max_capacity):
            raise ValueError(f"capacity {self.capacity} is above max_capacity "
                             f"{self.max_capacity}")


@dataclass(frozen=True)
class ImportReport:
    """What an import read, kept, dropped and guessed.

    Attributes
    ----------
    source : str
    format : str
    sha256 : str
    name : str
    nodes, edges : int
        As networkx reads the file.
    sites, links, demands : int
        As written.
    parts : int
        Connected parts kept.
    offered_traffic : float
        Erlangs written, in total.
    traffic : str
        What the traffic is (one sentence).
    traffic_model : dict
        The model and its parameters: ``model`` (``'gravity'``, ``'uniform'`` or
        ``'table'``) and the fields of :class:`Gravity`, :class:`Uniform` or
        :class:`DemandTable`.
    routing : dict
        ``policy``, ``max_hops``, ``max_routes``, ``reservation``, ``routes``
        (``'generated'`` or ``'explicit'``).
    findings : tuple of Finding
    """

    source: str
    format: str
    sha256: str
    name: str
    nodes: int
    edges: int
    sites: int
    links: int
    demands: int
    parts: int
    offered_traffic: float
    traffic: str
    traffic_model: dict
    routing: dict
    findings: tuple[Finding, ...]

    def to_dict(self) -> dict:
        return {
            "source": self.source, "format": self.format, "sha256": self.sha256,
            "name": self.name, "nodes": self.nodes, "edges": self.edges,
            "sites": self.sites, "links": self.links, "demands": self.demands,
            "parts": self.parts, "offered_traffic": self.offered_traffic,
            "traffic": self.traffic, "traffic_model": dict(self.traffic_model),
            "routing": dict(self.routing),
            "findings": [f.to_dict() for f in self.findings],
        }


@dataclass(frozen=True)
class ImportResult:
    """The network-file text, the network it reads as, and the report."""

    text: str
    network: Network
    report: ImportReport


def import_topology(path, traffic, *, format=None, costs=None, target=0.01, policy="fixed",
                    max_hops=None, max_routes=None, reservation=0, routes="generated",
                    all_parts=False, site_ids="label", coordinates=None, name=None,
                    command=None) -> ImportResult:
    """Read a GraphML or GML topology and make a network file of it with a traffic model.

    Parameters
    ----------
    path : str or path-like
        The topology file (see :func:`netdim.topology.read_topology`).
    traffic : Gravity, Uniform or DemandTable
        Where the demands come from.
    format : {'graphml', 'gml'}, optional
        Default: from the file name.
    costs : LinkCosts, optional
        Link sizing and costs (default: modules of 1 unit at cost 1, nothing per km).
    target : float
        Blocking target of every demand, in (0, 1).
    policy : {'fixed', 'alternate'}
    max_hops : int, optional
        Longest route. Default: the most links on any demand's shortest path (one more
        under alternate routing), so that every demand has a route.
    max_routes : int, optional
        Routes per demand. Default 1 under fixed routing (only the first is used), 3 under
        alternate.
    reservation : int
        Trunk reservation under alternate routing.
    routes : {'generated', 'explicit'}
        ``generated``: the file gives ``routing`` only and netdim lists each demand's routes
        when it reads the file (short file; routes follow edits of the links).
        ``explicit``: each demand's routes are written out, found as the ``max_routes``
        shortest loop-free paths [1]_ by hop count, then length.
    all_parts, site_ids, coordinates
        See :func:`netdim.topology.read_topology`.
    name : str, optional
        Network name (default: the graph's).
    command : str, optional
        A command line to quote in the header, to make the file again.

    Returns
    -------
    ImportResult
        ``text`` is the network file; ``network`` is that text read back with
        :func:`netdim.netfile.loads_network`; ``report`` says what was dropped or guessed.

    Raises
    ------
    NetworkFileError
        The topology or demand file cannot be used (each problem named).
    ValueError
        Bad options, or a ``max_hops`` some demand cannot be routed within.

    References
    ----------
    .. [1] J. Y. Yen, "Finding the K shortest loopless paths in a network", Management
       Science 17(11):712-716, 1971.

    Examples
    --------
    >>> from netdim.topology import Gravity, LinkCosts, import_topology, write_text
    >>> result = import_topology("networks/topozoo-Abilene.graphml", Gravity(300.0),
    ...                          costs=LinkCosts(module=30, cost_per_km=0.02))
    >>> len(result.network.sites), len(result.network.links), len(result.network.demands)
    (11, 14, 55)
    >>> write_text(result.text, "abilene.yaml")  # doctest: +SKIP
    """
    costs = LinkCosts() if costs is None else costs
    _check_options(traffic, target, policy, max_hops, max_routes, reservation, routes)
    topo = read_topology(path, format, coordinates=coordinates, site_ids=site_ids,
                         all_parts=all_parts)
    demands, traffic_found, traffic_text = pair_traffic(topo, traffic)
    found = list(topo.findings) + list(traffic_found)
    graph = topo.graph()
    hops_needed, worst = _hops_needed(graph, demands)
    chosen = []
    if max_hops is None:
        max_hops = hops_needed + (1 if policy == "alternate" else 0)
        max_hops = max(1, min(max_hops, MAX_HOPS))
        chosen.append(f"max_hops {max_hops} (the most links on a demand's shortest path"
                      + (", plus one for alternatives)" if policy == "alternate" else ")"))
    if hops_needed > max_hops:
        a, b = worst
        raise ValueError(f"max_hops {max_hops}: no route of at most {max_hops} links joins "
                         f"'{a}' and '{b}' (the shortest has {hops_needed}); raise max_hops")
    if max_routes is None:
        max_routes = 1 if policy == "fixed" else 3
        chosen.append(f"max_routes {max_routes} (the default under {policy} routing)")
    if chosen:
        found.append(Finding("chosen", "routing", (), "chose " + "; ".join(chosen)))

    lengths = [link.length for link in topo.links if link.length is not None]
    unknown = [link.id for link in topo.links if link.length is None]
    stand_in = None
    if unknown and costs.cost_per_km > 0:
        if not lengths:
            raise ValueError("cost_per_km: no link has a length (no site has coordinates), so "
                             "costs cannot grow with length")
        stand_in = round(statistics.median(lengths), 1)
        found.append(finding("guessed", "link_length", unknown,
                             f"{len(unknown)} link(s) without a length: costed as if "
                             f"{stand_in} km long, the median of the others"))

    explicit = None
    if routes == "explicit":
        explicit = _shortest_routes(graph, demands, max_hops, max_routes)
    text = _render(topo, demands, costs, target, policy, max_hops, max_routes, reservation,
                   routes, stand_in, traffic_text, found, name or topo.name, command, explicit)
    net = loads_network(text, source=f"<import of {pathlib.Path(topo.source).name}>",
                        default_name=topo.name)
    report = ImportReport(
        source=topo.source, format=topo.format, sha256=topo.digest, name=net.name,
        nodes=topo.nodes, edges=topo.edges, sites=len(net.sites), links=len(net.links),
        demands=len(net.demands), parts=topo.parts,
        offered_traffic=float(sum(d.traffic for d in net.demands)), traffic=traffic_text,
        traffic_model=_model_dict(traffic),
        routing={"policy": policy, "max_hops": max_hops, "max_routes": max_routes,
                 "reservation": reservation, "routes": routes},
        findings=tuple(found),
    )
    return ImportResult(text=text, network=net, report=report)


def _model_dict(traffic) -> dict:
    kind = {Gravity: "gravity", Uniform: "uniform", DemandTable: "table"}[type(traffic)]
    return {"model": kind, **dataclasses.asdict(traffic)}


def _check_options(traffic, target, policy, max_hops, max_routes, reservation, routes):
    if not isinstance(traffic, (Gravity, Uniform, DemandTable)):
        raise ValueError(f"traffic: expected Gravity, Uniform or DemandTable, got {traffic!r}")
    if not (isinstance(target, (int, float)) and 0 < target < 1):
        raise ValueError(f"target: must be in (0, 1), got {target!r}")
    if policy not in POLICIES:
        raise ValueError(f"policy: must be one of {', '.join(POLICIES)}, got {policy!r}")
    if routes not in ROUTE_MODES:
        raise ValueError(f"routes: must be one of {', '.join(ROUTE_MODES)}, got {routes!r}")
    for label, v, low, high in (("max_hops", max_hops, 1, MAX_HOPS),
                                ("max_routes", max_routes, 1, 10_000),
                                ("reservation", reservation, 0, MAX_UNITS)):
        if v is None and label != "reservation":
            continue
        if isinstance(v, bool) or not isinstance(v, int) or not low <= v <= high:
            raise ValueError(f"{label}: must be a whole number in [{low}, {high}], got {v!r}")


def _hops_needed(graph, demands):
    """The most links on any demand's shortest path, and that demand's ends."""
    by_origin = {}
    for d in demands:
        by_origin.setdefault(d.between[0], []).append(d.between[1])
    worst, pair = 0, None
    for a, dests in by_origin.items():
        dist = nx.single_source_shortest_path_length(graph, a)
        for b in dests:
            if dist[b] > worst:
                worst, pair = dist[b], (a, b)
    return worst, pair


def _shortest_routes(graph, demands, max_hops, max_routes):
    """Each demand's routes (link ids), fewest links first, then shortest."""
    total = sum(d["length"] or 0.0 for _, _, d in graph.edges(data=True))
    hop = total + 1.0  # one more link always outweighs any difference in length
    for _, _, d in graph.edges(data=True):
        d["_w"] = hop + (d["length"] or 0.0)
    out = []
    for dem in demands:
        found = []
        for path in nx.shortest_simple_paths(graph, *dem.between, weight="_w"):
            if len(path) - 1 > max_hops or len(found) == max_routes:
                break
            steps = zip(path[:-1], path[1:], strict=True)
            found.append([graph.edges[u, v]["id"] for u, v in steps])
        out.append(found)
    return out


def _render(topo: Topology, demands, costs, target, policy, max_hops, max_routes, reservation,
            routes, stand_in, traffic_text, found, name, command, explicit) -> str:
    src = pathlib.Path(topo.source).name
    what = "GraphML" if topo.format == "graphml" else "GML"
    cost_rule = f"{costs.module_cost:g} per module of {_count(costs.module, 'unit')}"
    if costs.cost_per_km:
        cost_rule += f", plus {costs.cost_per_km:g} per module per km of length"
    if costs.fixed_cost:
        cost_rule += f"; {costs.fixed_cost:g} fixed per link"
    route_rule = ("generated by netdim when it reads the file" if routes == "generated"
                  else "written out for each demand (fewest links first, then shortest)")
    head = [
        f"{name}: a network file made by netdim import from {src} ({what}, sha256 "
        f"{topo.digest[:16]}...): {topo.nodes} nodes and {topo.edges} edges read; "
        f"{len(topo.sites)} sites and {len(topo.links)} links kept.",
        "Sites are the nodes, x = longitude and y = latitude in degrees. Links join the nodes "
        "that edges join; length = great-circle distance in km (not a cable length).",
        f"Link costs: {cost_rule}.",
        f"Traffic: {traffic_text}. Busy-hour offered traffic in erlangs; every demand has a "
        f"blocking target of {target:g}.",
        f"Routing: {policy}, at most {_count(max_hops, 'link')} and "
        f"{_count(max_routes, 'route')} per demand; "
        f"routes {route_rule}.",
    ]
    head += [f"Import: {f.message}." for f in found]
    if command:
        head.append(f"Made with: {command}")
    out = [comment_block(head), f"name: {scalar(name)}",
           f"description: {scalar(f'Imported from {src} (sha256 {topo.digest[:16]}...)')}",
           "sites:"]
    for s in topo.sites:
        item = {"id": s.id}
        if s.name and s.name != s.id:
            item["name"] = s.name
        note = None
        if s.located:
            item["x"], item["y"] = float(s.lon), float(s.lat)
        else:
            note = "no coordinates in the source file"
        out.append(flow_item(item, comment=note))
    out.append("links:")
    for link in topo.links:
        length = None if link.length is None else round(link.length, 1)
        item = {"id": link.id, "ends": list(link.ends)}
        if costs.capacity is not None:
            item["capacity"] = costs.capacity
        item["module"] = costs.module
        per_km_length = length if length is not None else stand_in
        cost = costs.module_cost + costs.cost_per_km * (per_km_length or 0.0)
        item["cost_per_module"] = _sig(cost)
        if costs.fixed_cost:
            item["fixed_cost"] = _sig(costs.fixed_cost)
        if costs.max_capacity is not None:
            item["max_capacity"] = costs.max_capacity
        if length is not None:
            item["length"] = length
        notes = []
        if link.edges > 1:
            notes.append(f"{link.edges} edges in the source")
        if length is None:
            notes.append("no length: an end has no coordinates"
                         + (f"; costed as {stand_in} km" if stand_in is not None else ""))
        out.append(flow_item(item, comment="; ".join(notes) or None))
    out.append("demands:")
    taken = set()
    for k, d in enumerate(demands):
        a, b = d.between
        item = {"between": [a, b], "traffic": _sig(d.erlangs)}
        default = f"{a}-{b}"
        did, n = default, 2
        while did in taken:
            did = f"{default}#{n}"
            n += 1
        taken.add(did)
        if did != default:
            item = {"id": did, **item}
        if explicit is not None:
            item["routes"] = explicit[k]
        out.append(flow_item(item))
    out.append(flow_mapping_line("defaults", {"target": float(target)}))
    out.append(flow_mapping_line("routing", {"policy": policy, "max_hops": max_hops,
                                             "max_routes": max_routes,
                                             "reservation": reservation}))
    return "\n".join(out) + "\n"
