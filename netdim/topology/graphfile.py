"""Reading a topology file (GraphML or GML, through networkx) into sites and links.

What the file gives is taken as it is, and everything that does not fit a network file is
dropped or guessed *and said*: self-loops are dropped, parallel edges (and, in a directed
file, the two directions of a pair) become one link, nodes without edges are dropped, parts
not joined to the largest one are dropped unless asked for, and a node without usable
coordinates keeps no position (its links then have no length).
"""

from __future__ import annotations

import hashlib
import pathlib
import xml.etree.ElementTree as ET
from dataclasses import dataclass, field

import networkx as nx

from netdim.errors import NetworkFileError
from netdim.topology.geo import great_circle_km, valid_lonlat

__all__ = [
    "FORMATS",
    "Finding",
    "Topology",
    "TopologyLink",
    "TopologySite",
    "read_topology",
]

#: Topology file formats, by the file name's suffix.
FORMATS = {".graphml": "graphml", ".xml": "graphml", ".gml": "gml"}

#: Node attributes looked for (ignoring case) when no coordinate names are given.
LON_NAMES = ("longitude", "lon", "lng", "long")
LAT_NAMES = ("latitude", "lat")
LABEL_NAMES = ("label", "name")

#: Items named in one finding's message (the rest are counted).
SHOWN_ITEMS = 8


@dataclass(frozen=True)
class Finding:
    """One thing the import dropped, merged, guessed or chose on the user's behalf.

    Attributes
    ----------
    action : {'dropped', 'merged', 'guessed', 'chosen'}
    what : str
        A fixed key, e.g. ``'self_loops'`` or ``'no_coordinates'`` (JSON contract).
    items : tuple of str
        The nodes, sites, links or pairs concerned (may be empty).
    message : str
        One line for people.
    """

    action: str
    what: str
    items: tuple[str, ...]
    message: str

    def to_dict(self) -> dict:
        return {"action": self.action, "what": self.what, "count": len(self.items),
                "items": list(self.items), "message": self.message}


def finding(action, what, items, text) -> Finding:
    """A :class:`Finding` whose message names the first few items."""
    items = tuple(items)
    shown = ", ".join(items[:SHOWN_ITEMS])
    if len(items) > SHOWN_ITEMS:
        shown += f" and {len(items) - SHOWN_ITEMS} more"
    return Finding(action, what, items, f"{text}: {shown}" if shown else text)


@dataclass(frozen=True)
class TopologySite:
    """A node kept as a site.

    Attributes
    ----------
    id : str
        Site id in the network file.
    node : str
        The node's id in the topology file.
    name : str or None
        Its label, whitespace tidied.
    lon, lat : float or None
        Degrees; None when the file gives no usable coordinates.
    degree : int
        Links at the site (after merging).
    part : int
        Connected part (0 = the largest).
    attributes : dict
        The node's attributes as read (for traffic weights).
    """

    id: str
    node: str
    name: str | None
    lon: float | None
    lat: float | None
    degree: int
    part: int = 0
    attributes: dict = field(default_factory=dict, compare=False, hash=False)

    @property
    def located(self) -> bool:
        return self.lon is not None


@dataclass(frozen=True)
class TopologyLink:
    """An edge (or several parallel ones) kept as a link; ``length`` in km or None."""

    id: str
    ends: tuple[str, str]
    length: float | None
    edges: int = 1


@dataclass(frozen=True)
class Topology:
    """A topology file read and tidied: sites, links and what was changed to get them.

    Attributes
    ----------
    source : str
        The path as given.
    format : {'graphml', 'gml'}
    name : str
        The graph's name (its ``Network``, ``name`` or ``label`` attribute, else the file
        stem).
    digest : str
        SHA-256 of the file's bytes (hex), to tell which file a network came from.
    nodes, edges : int
        Counts as networkx reads the file.
    directed : bool
    sites, links : tuples of TopologySite, TopologyLink
    findings : tuple of Finding
    dropped_nodes : tuple of (str, str or None, str)
        Each node not kept: its id, its label and why (``'no edges'``, ``'other part'``).
    """

    source: str
    format: str
    name: str
    digest: str
    nodes: int
    edges: int
    directed: bool
    sites: tuple[TopologySite, ...]
    links: tuple[TopologyLink, ...]
    findings: tuple[Finding, ...]
    dropped_nodes: tuple[tuple[str, str | None, str], ...] = ()

    @property
    def parts(self) -> int:
        return 1 + max((s.part for s in self.sites), default=0)

    def graph(self) -> nx.Graph:
        """The sites and links as a simple :class:`networkx.Graph` keyed by site id; edges
        carry ``id`` and ``length``."""
        g = nx.Graph()
        g.add_nodes_from(s.id for s in self.sites)
        for link in self.links:
            g.add_edge(*link.ends, id=link.id, length=link.length)
        return g


def read_topology(path, format=None, *, coordinates=None, site_ids="label",
                  all_parts=False) -> Topology:
    """Read a GraphML or GML file into sites and links.

    Parameters
    ----------
    path : str or path-like
    format : {'graphml', 'gml'}, optional
        Default: from the suffix (``.graphml``, ``.xml``, ``.gml``).
    coordinates : tuple of (str, str), optional
        Names of the node attributes holding longitude and latitude (degrees). Default: the
        first attributes named (ignoring case) longitude/lon/lng/long and latitude/lat.
    site_ids : {'label', 'node'}
        Site ids from the node labels (whitespace runs become ``_``; a label shared by several
        nodes gets ``#`` and the node id) or the node ids themselves.
    all_parts : bool
        Keep every connected part; by default only the largest (most sites; the one with
        the first node on a tie) is kept.

    Returns
    -------
    Topology

    Raises
    ------
    NetworkFileError
        The file cannot be read or parsed (``FILE: cannot read as GraphML: reason``), or
        holds fewer than two nodes joined by an edge.
    ValueError
        Bad ``format``, ``coordinates`` or ``site_ids``.

    Notes
    -----
    Link lengths are great-circle distances between the ends' coordinates
    (:func:`netdim.topology.geo.great_circle_km`).

    Examples
    --------
    Two nodes one degree of longitude apart on the equator: the link's length is
    ``2 pi R / 360`` = 111.195 km for the mean radius R = 6371.0088 km.

    >>> import pathlib, tempfile
    >>> gml = '''graph [
    ...   node [ id 0 label "Alder Ford" Longitude 0.0 Latitude 0.0 ]
    ...   node [ id 1 label "Birch Hollow" Longitude 1.0 Latitude 0.0 ]
    ...   edge [ source 0 target 1 ]
    ... ]'''
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     path = pathlib.Path(tmp, "hamlets.gml")
    ...     _ = path.write_text(gml, encoding="utf-8")
    ...     topo = read_topology(path)
    >>> [site.id for site in topo.sites], topo.links[0].id, round(topo.links[0].length, 3)
    (['Alder_Ford', 'Birch_Hollow'], 'Alder_Ford-Birch_Hollow', 111.195)
    """
    source = str(path)
    fmt = _format_of(source, format)
    if site_ids not in ("label", "node"):
        raise ValueError(f"site_ids: must be 'label' or 'node', got {site_ids!r}")
    if coordinates is not None and (len(coordinates) != 2
                                    or not all(isinstance(c, str) and c for c in coordinates)):
        raise ValueError("coordinates: must be two attribute names (longitude, latitude), got "
                         f"{coordinates!r}")
    try:
        raw = pathlib.Path(path).read_bytes()
    except OSError as exc:
        raise NetworkFileError(f"{source}: cannot read: {exc.strerror or exc}") from None
    graph = _parse(raw, source, fmt)
    return _tidy(graph, source, fmt, hashlib.sha256(raw).hexdigest(), coordinates, site_ids,
                 all_parts)


def _format_of(source, format):
    if format is None:
        fmt = FORMATS.get(pathlib.Path(source).suffix.lower())
        if fmt is None:
            raise ValueError(f"{source}: cannot tell the format from the name; give the format "
                             "(graphml or gml)")
        return fmt
    if format not in ("graphml", "gml"):
        raise ValueError(f"format: must be 'graphml' or 'gml', got {format!r}")
    return format


def _parse(raw: bytes, source: str, fmt: str):
    what = "GraphML" if fmt == "graphml" else "GML"
    try:
        if fmt == "graphml":
            graph = nx.parse_graphml(raw, node_type=str)
        else:
            # keyed by the GML id (labels need not be unique); the label stays an attribute
            graph = nx.parse_gml(raw.decode("utf-8").splitlines(), label="id")
    except (ET.ParseError, nx.NetworkXError, KeyError, ValueError, TypeError, IndexError,
            AttributeError, UnicodeDecodeError) as exc:
        reason = " ".join(str(exc).split()) or type(exc).__name__
        raise NetworkFileError(f"{source}: cannot read as {what}: {reason}") from None
    return graph


def _number(value):
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        return float(value)
    if isinstance(value, str):
        try:
            return float(value.strip())
        except ValueError:
            return None
    return None


def _find_attr(attrs, names):
    lower = {str(k).lower(): k for k in attrs}
    for n in names:
        if n in lower:
            return lower[n]
    return None


def _tidy(graph, source, fmt, digest, coordinates, site_ids, all_parts) -> Topology:
    nodes = [str(n) for n in graph.nodes]
    attrs = {str(n): dict(a) for n, a in graph.nodes(data=True)}
    if len(nodes) < 2:
        raise NetworkFileError(f"{source}: has {len(nodes)} node(s); a network needs at least "
                               "two sites joined by an edge")
    pairs, found = _merge_edges(graph, attrs)
    if not pairs:
        raise NetworkFileError(f"{source}: has no edge between two different nodes; nothing "
                               "to link")
    simple = nx.Graph()
    simple.add_nodes_from(nodes)
    simple.add_edges_from(p[0] for p in pairs.values())
    part_of, dropped = _keep_parts(simple, nodes, attrs, all_parts, found)
    kept = [n for n in nodes if n in simple]

    ids = _site_ids(kept, attrs, site_ids)
    lon_lat, bad = {}, []
    for n in kept:
        lon, lat, unusable = _coordinates(attrs[n], coordinates)
        lon_lat[n] = (lon, lat)
        if unusable:
            bad.append(n)
    missing = [ids[n] for n in kept if lon_lat[n][0] is None]
    if missing:
        text = (f"{len(missing)} site(s) without usable coordinates (kept without a position; "
                "their links have no length)")
        if bad:
            text += f"; {len(bad)} of them had values out of range or not numbers"
        found.append(finding("guessed", "no_coordinates", missing, text))

    sites = tuple(
        TopologySite(id=ids[n], node=n, name=_label(attrs[n]), lon=lon_lat[n][0],
                     lat=lon_lat[n][1], degree=simple.degree(n), part=part_of[n],
                     attributes=attrs[n])
        for n in kept
    )
    links, link_ids = [], set()
    merged = {"parallel_edges": {}, "reverse_edges": {}}
    for (u, v), n_par, n_rev in pairs.values():
        if u in simple and v in simple:
            (lo1, la1), (lo2, la2) = lon_lat[u], lon_lat[v]
            length = None if lo1 is None or lo2 is None else great_circle_km(lo1, la1, lo2, la2)
            lid = _unique(f"{ids[u]}-{ids[v]}", link_ids)
            links.append(TopologyLink(lid, (ids[u], ids[v]), length, 1 + n_par + n_rev))
        else:
            lid = f"{u}-{v} (dropped)"
        for what, n in (("parallel_edges", n_par), ("reverse_edges", n_rev)):
            if n:
                merged[what][lid] = n
    for what, text in (
            ("parallel_edges", "merged {n} parallel edge(s) into the link they duplicate"),
            ("reverse_edges", "the file is directed: merged {n} edge(s) with the opposite "
             "direction of the same pair (links are both-way)")):
        counts = merged[what]
        if counts:
            found.append(finding("merged", what, [f"{k} (+{c})" for k, c in counts.items()],
                                 text.format(n=sum(counts.values()))
                                 + f", on {len(counts)} link(s)"))
    return Topology(source=source, format=fmt, name=_graph_name(graph, source), digest=digest,
                    nodes=len(nodes), edges=graph.number_of_edges(),
                    directed=graph.is_directed(), sites=sites, links=tuple(links),
                    findings=tuple(found), dropped_nodes=tuple(dropped))


def _merge_edges(graph, attrs):
    """One entry per pair of distinct nodes, in file order: ``[ends, parallel edges,
    opposite-direction edges]``; and the finding about self-loops."""
    loops, pairs = [], {}
    for u, v in ((str(u), str(v)) for u, v, *_ in graph.edges):
        if u == v:
            loops.append(u)
            continue
        key = frozenset((u, v))
        if key in pairs:
            first = pairs[key]
            first[2 if graph.is_directed() and first[0][0] == v else 1] += 1
        else:
            pairs[key] = [(u, v), 0, 0]
    found = []
    if loops:
        found.append(finding("dropped", "self_loops",
                             [f"node {_show_node(n, attrs)}" for n in loops],
                             f"dropped {len(loops)} self-loop(s) (edges from a node to itself)"))
    return pairs, found


def _keep_parts(simple, nodes, attrs, all_parts, found):
    """Drop nodes without edges and (unless ``all_parts``) the parts not joined to the
    largest, from ``simple`` in place; return each kept node's part and the dropped nodes."""
    isolated = [n for n in nodes if simple.degree(n) == 0]
    dropped = [(n, _label(attrs[n]), "no edges") for n in isolated]
    if isolated:
        found.append(finding("dropped", "isolated_nodes", [_show_node(n, attrs) for n in isolated],
                             f"dropped {len(isolated)} node(s) without edges"))
        simple.remove_nodes_from(isolated)
    order = {n: i for i, n in enumerate(nodes)}
    parts = sorted((sorted(c, key=order.get) for c in nx.connected_components(simple)),
                   key=lambda c: (-len(c), order[c[0]]))
    if len(parts) > 1 and not all_parts:
        gone = [n for c in parts[1:] for n in c]
        dropped += [(n, _label(attrs[n]), "not joined to the largest part") for n in gone]
        found.append(finding("dropped", "other_parts", [_show_node(n, attrs) for n in gone],
                             f"dropped {len(parts) - 1} part(s) not joined to the largest "
                             f"({len(gone)} node(s), "
                             f"{sum(simple.degree(n) for n in gone) // 2} edge(s))"))
        simple.remove_nodes_from(gone)
        parts = parts[:1]
    elif len(parts) > 1:
        found.append(finding("chosen", "several_parts", [],
                             f"kept {len(parts)} parts not joined to each other; demands only "
                             "within a part"))
    return {n: i for i, c in enumerate(parts) for n in c}, dropped


def _unique(base, taken):
    name, k = base, 2
    while name in taken:
        name = f"{base}#{k}"
        k += 1
    taken.add(name)
    return name


def _label(a):
    key = _find_attr(a, LABEL_NAMES)
    if key is None or a[key] is None:
        return None
    text = " ".join(str(a[key]).split())
    return text or None


def _show_node(n, attrs):
    label = _label(attrs[n])
    return f"{n} ({label})" if label and label != n else n


def _site_ids(kept, attrs, mode):
    if mode == "node":
        return {n: n for n in kept}
    base = {n: "_".join((_label(attrs[n]) or n).split()) for n in kept}
    count = {}
    for b in base.values():
        count[b] = count.get(b, 0) + 1
    taken, out = set(), {}
    for n in kept:
        b = base[n] if count[base[n]] == 1 else f"{base[n]}#{n}"
        out[n] = _unique(b, taken)
    return out


def _coordinates(a, names):
    """(lon, lat, unusable): degrees, or None and whether values were there but unusable."""
    if names is None:
        klon, klat = _find_attr(a, LON_NAMES), _find_attr(a, LAT_NAMES)
    else:
        klon, klat = (names[0] if names[0] in a else None), (names[1] if names[1] in a else None)
    if klon is None and klat is None:
        return None, None, False
    lon = _number(a.get(klon)) if klon is not None else None
    lat = _number(a.get(klat)) if klat is not None else None
    if lon is not None and lat is not None and valid_lonlat(lon, lat):
        return lon, lat, False
    return None, None, True


def _graph_name(graph, source):
    for key in ("Network", "name", "label"):
        value = graph.graph.get(key)
        if isinstance(value, str) and value.strip():
            return " ".join(value.split())
    return pathlib.Path(source).stem
