"""Network files: read and check a YAML network file, write one back.

The format (see README and the demo files in ``networks/``)::

    name: Example region
    sites:
      - {id: NORTH, name: North exchange, x: 0.0, y: 1.0}
    links:
      - {id: NORTH-SOUTH, ends: [NORTH, SOUTH], capacity: 30, module: 1,
         cost_per_module: 1.0, fixed_cost: 0.0, max_capacity: 1000, installed: 0,
         length: 12.0, reservation: 2}
    demands:
      - id: N-S                      # default "ORIGIN-DEST"
        between: [NORTH, SOUTH]
        traffic: 12.5                # erlangs; or rate (per hour) with holding (hours)
        holding: 1.0                 # default defaults.holding
        bandwidth: 1
        target: 0.01                 # default defaults.target
        value: 3.0                   # value per carried erlang (economic sizing)
        routes:                      # optional: link ids in order, first = preferred
          - [NORTH-SOUTH]
          - [NORTH-HUB, {link: HUB-SOUTH, holding: 0.25}]
    defaults: {target: 0.01, holding: 1.0}
    routing: {policy: fixed, max_hops: 2, reservation: 0, max_routes: 4}

Reading checks the whole file and reports every problem found (up to
:data:`MAX_PROBLEMS`) in one :class:`~netdim.errors.NetworkFileError`, one line each,
``FILE:LINE: ITEM: problem``. Top-level keys starting with ``x-`` and ``description`` /
``notes`` are kept in ``Network.extra`` and written back unchanged. A site may be written as
its bare id. Only ``true``/``false`` are yes/no values (as in YAML 1.2), so ids such as ``NO``
stay text. Writing lives in :mod:`netdim.netwrite` (re-exported here).

Limits taken for typing mistakes: traffic above :data:`MAX_TRAFFIC` erlangs, capacities above
:data:`MAX_UNITS`, holding times above :data:`MAX_HOLDING` hours, routes longer than
:data:`MAX_HOPS` links.
"""

from __future__ import annotations

import difflib
import pathlib
from dataclasses import replace

import yaml

from netdim._netyaml import (
    BAD,
    MAX_PROBLEMS,
    Checker,
    Loader,
    Map,
    Seq,
    kind,
    line_of,
    show,
    unknown,
)
from netdim.errors import NetworkFileError
from netdim.model import POLICIES, Demand, Link, Network, Route, Routing, Site
from netdim.netwrite import dumps_network, network_to_dict, plain_data, write_network
from netdim.routing import candidate_routes, link_graph

__all__ = [
    "read_network",
    "loads_network",
    "write_network",
    "network_to_dict",
    "dumps_network",
    "network_summary",
    "MAX_PROBLEMS",
]

#: Magnitudes above these are taken for typing mistakes.
MAX_TRAFFIC = 1e7
MAX_UNITS = 10_000_000
MAX_HOLDING = 1e4
MAX_HOPS = 20

TOP_KEYS = ("name", "sites", "links", "demands", "defaults", "routing", "description", "notes")
SITE_KEYS = ("id", "name", "x", "y")
LINK_KEYS = (
    "id", "ends", "capacity", "module", "cost_per_module", "fixed_cost", "max_capacity",
    "installed", "length", "reservation",
)
DEMAND_KEYS = (
    "id", "between", "traffic", "rate", "holding", "bandwidth", "target", "value", "routes",
)
DEFAULT_KEYS = ("target", "holding")
ROUTING_KEYS = ("policy", "max_hops", "reservation", "max_routes")
STEP_KEYS = ("link", "holding")
_KEPT_TOP = ("description", "notes")



# --------------------------------------------------------------------------------------------
# Reading
# --------------------------------------------------------------------------------------------
def read_network(path) -> Network:
    """Read and check a network file.

    Parameters
    ----------
    path : str or path-like

    Returns
    -------
    Network
        With ``source`` set to ``str(path)``, and routes resolved to link indices.

    Raises
    ------
    NetworkFileError
        The file cannot be read (one line, ``FILE: cannot read: reason``) or is not a valid
        network file (one line per problem, ``FILE:LINE: ITEM: problem``).
    """
    source = str(path)
    try:
        text = pathlib.Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise NetworkFileError(f"{source}: cannot read: {reason}") from None
    default_name = pathlib.Path(source).stem
    return loads_network(text, source=source, default_name=default_name)


def loads_network(text: str, source: str = "<string>", default_name: str = "network") -> Network:
    """Read a network from YAML text; see :func:`read_network`.

    Parameters
    ----------
    text : str
        The YAML document.
    source : str
        Name used in messages and kept as ``Network.source``.
    default_name : str
        Network name when the file gives none.
    """
    chk = Checker(source)
    loader = Loader(text)
    try:
        data = loader.get_single_data()
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark is not None else 1
        what = " ".join(str(exc.problem or exc).split())
        if exc.context:
            what = f"{what} ({' '.join(str(exc.context).split())})"
        raise NetworkFileError(f"{source}:{line}: YAML: {what}") from None
    except yaml.YAMLError as exc:
        raise NetworkFileError(f"{source}:1: YAML: {' '.join(str(exc).split())}") from None
    finally:
        loader.dispose()
    for line, what in loader.key_problems:
        chk.add(line, "YAML", what)
    if data is None:
        chk.add(1, "file", "is empty (expected a mapping with sites, links and demands)")
        chk.raise_if_any()
    if not isinstance(data, Map):
        chk.add(1, "file", f"must be a mapping with sites, links and demands, got {kind(data)}")
        chk.raise_if_any()
    net = _Builder(chk, data, default_name).build()
    chk.raise_if_any()
    return replace(net, source=source)


class _Builder:
    def __init__(self, chk, data, default_name):
        self.chk = chk
        self.data = data
        self.default_name = default_name

    def build(self):
        chk, data = self.chk, self.data
        chk.keys(data, TOP_KEYS, "file", keep="x-")
        name = chk.text(data, "name", "name", default=self.default_name)
        defaults = self._defaults()
        routing = self._routing()
        sites = self._sites()
        # without a usable sites section, site names cannot be checked: say so once only
        site_ids = {s.id for s in sites} if self._section_ok("sites", "list") else None
        links = self._links(site_ids)
        demands = self._demands(site_ids, links, defaults, routing)
        extra = {k: v for k, v in data.items()
                 if k in _KEPT_TOP or (isinstance(k, str) and k.startswith("x-"))}
        return Network(
            name=name,
            sites=tuple(sites),
            links=tuple(links),
            demands=tuple(demands),
            routing=routing,
            default_target=defaults["target"],
            default_holding=defaults["holding"],
            extra=plain_data(extra),
        )

    def _section_ok(self, key, shape):
        value = self.data.get(key)
        return isinstance(value, Map) if shape == "mapping" else isinstance(value, Seq)

    def _section(self, key, shape):
        data = self.data
        if key not in data or data[key] is None:
            return None
        value = data[key]
        ok = isinstance(value, Map) if shape == "mapping" else isinstance(value, Seq)
        if not ok:
            self.chk.add(data.lines[key], key, f"must be a {shape}, got {kind(value)}")
            return None
        return value

    # -- defaults and routing ---------------------------------------------------------------
    def _defaults(self):
        out = {"target": 0.01, "holding": 1.0}
        m = self._section("defaults", "mapping")
        if m is None:
            return out
        self.chk.keys(m, DEFAULT_KEYS, "defaults")
        target = self.chk.number(m, "target", "defaults", 0.01, low=0, low_open=True, high=1,
                                 high_open=True)
        holding = self._holding(m, "holding", "defaults", 1.0)
        if target is not BAD:
            out["target"] = float(target)
        if holding is not BAD:
            out["holding"] = float(holding)
        return out

    def _holding(self, m, key, item, default):
        return self.chk.number(m, key, item, default, low=0, low_open=True, high=MAX_HOLDING,
                               high_note=f"more than {MAX_HOLDING:g} hours; holding is in hours")

    def _routing(self):
        m = self._section("routing", "mapping")
        if m is None:
            return Routing()
        chk = self.chk
        chk.keys(m, ROUTING_KEYS, "routing")
        policy = Routing.policy
        if "policy" in m and m["policy"] is not None:
            raw = m["policy"]
            if raw in POLICIES:
                policy = raw
            else:
                close = difflib.get_close_matches(str(raw), POLICIES, n=1)
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                chk.add(m.lines["policy"], "routing",
                        f"unknown policy {show(raw)}{hint}; valid policies: "
                        + ", ".join(POLICIES))
        max_hops = chk.number(m, "max_hops", "routing", Routing.max_hops, integer=True, low=1,
                              high=MAX_HOPS, high_note=f"more than {MAX_HOPS} links per route")
        reservation = chk.number(m, "reservation", "routing", Routing.reservation,
                                 integer=True, low=0, high=MAX_UNITS)
        max_routes = chk.number(m, "max_routes", "routing", None, integer=True, low=1,
                                high=10_000)
        return Routing(
            policy=policy,
            max_hops=Routing.max_hops if max_hops is BAD else max_hops,
            reservation=Routing.reservation if reservation is BAD else reservation,
            max_routes=None if max_routes is BAD else max_routes,
        )

    # -- sites ------------------------------------------------------------------------------
    def _sites(self):
        chk = self.chk
        seq = self._section("sites", "list")
        if seq is None:
            if "sites" not in self.data or self.data["sites"] is None:
                chk.add(line_of(self.data, "sites"), "sites", "missing (a list of sites)")
            return []
        sites, seen = [], {}
        for i, raw in enumerate(seq):
            line = seq.lines[i]
            item = f"sites[{i + 1}]"
            if isinstance(raw, (str, int)) and not isinstance(raw, bool):
                sid, name, x, y = str(raw), None, None, None
            else:
                m = chk.mapping(raw, line, item, "a site")
                if m is None:
                    continue
                chk.keys(m, SITE_KEYS, item)
                sid = chk.ident(m, "id", item)
                if sid is None:
                    continue
                item = f"site '{sid}'"
                name = chk.text(m, "name", item)
                x = chk.number(m, "x", item)
                y = chk.number(m, "y", item)
                x = None if x is BAD else (None if x is None else float(x))
                y = None if y is BAD else (None if y is None else float(y))
            if sid in seen:
                chk.add(line, f"site '{sid}'", f"duplicate id (first on line {seen[sid]})")
                continue
            seen[sid] = line
            sites.append(Site(sid, name, x, y))
        return sites

    # -- links ------------------------------------------------------------------------------
    def _links(self, site_ids):
        chk = self.chk
        seq = self._section("links", "list")
        if seq is None:
            if "links" not in self.data or self.data["links"] is None:
                chk.add(line_of(self.data, "links"), "links", "missing (a list of links)")
            return []
        links, seen = [], {}
        self.bad_links = set()
        for i, raw in enumerate(seq):
            line = seq.lines[i]
            item = f"links[{i + 1}]"
            m = chk.mapping(raw, line, item, "a link")
            if m is None:
                continue
            chk.keys(m, LINK_KEYS, item)
            lid = chk.ident(m, "id", item)
            if lid is None:
                continue
            item = f"link '{lid}'"
            if lid in seen:
                chk.add(line, item, f"duplicate id (first on line {seen[lid]})")
                continue
            seen[lid] = line
            ends = chk.pair(m, "ends", item, site_ids)
            units = {"integer": True, "low": 0, "high": MAX_UNITS}
            capacity = chk.number(m, "capacity", item, None, **units)
            installed = chk.number(m, "installed", item, 0, **units)
            max_cap = chk.number(m, "max_capacity", item, None, **units)
            module = chk.number(m, "module", item, 1, integer=True, low=1, high=MAX_UNITS)
            cost = chk.number(m, "cost_per_module", item, 1.0, low=0, high=1e15)
            fixed = chk.number(m, "fixed_cost", item, 0.0, low=0, high=1e15)
            length = chk.number(m, "length", item, None, low=0, high=1e9)
            reservation = chk.number(m, "reservation", item, None, integer=True, low=0,
                                     high=MAX_UNITS)
            ok = BAD not in (capacity, installed, max_cap, module, cost, fixed, length,
                              reservation)
            if ok and max_cap is not None and max_cap < installed:
                chk.add(line_of(m, "max_capacity"), item,
                        f"max_capacity {max_cap} is below installed {installed}")
                ok = False
            if ok and capacity is not None and capacity < installed:
                chk.add(line_of(m, "capacity"), item,
                        f"capacity {capacity} is below installed {installed}")
                ok = False
            if ok and capacity is not None and max_cap is not None and capacity > max_cap:
                chk.add(line_of(m, "capacity"), item,
                        f"capacity {capacity} is above max_capacity {max_cap}")
                ok = False
            if ends is None:
                # left out of routes (reported here); links with other faults stay in so
                # that routes over them do not add problems of their own
                self.bad_links.add(lid)
                ends = ("?", "?")
            links.append(Link(
                id=lid, ends=ends,
                capacity=None if capacity is BAD else capacity,
                module=1 if module is BAD else module,
                cost_per_module=1.0 if cost is BAD else float(cost),
                fixed_cost=0.0 if fixed is BAD else float(fixed),
                max_capacity=None if max_cap is BAD else max_cap,
                installed=0 if installed is BAD else installed,
                length=None if length in (None, BAD) else float(length),
                reservation=None if reservation is BAD else reservation,
                line=line,
            ))
        return links

    # -- demands ----------------------------------------------------------------------------
    def _demands(self, site_ids, links, defaults, routing):
        chk = self.chk
        seq = self._section("demands", "list")
        if seq is None:
            if "demands" not in self.data or self.data["demands"] is None:
                chk.add(line_of(self.data, "demands"), "demands", "missing (a list of demands)")
            return []
        link_pos = {link.id: i for i, link in enumerate(links)}
        good_links = [link for link in links if link.id not in self.bad_links]
        graph = link_graph(good_links, sites=site_ids or ())
        demands, seen = [], {}
        for i, raw in enumerate(seq):
            line = seq.lines[i]
            item = f"demands[{i + 1}]"
            m = chk.mapping(raw, line, item, "a demand")
            if m is None:
                continue
            chk.keys(m, DEMAND_KEYS, item)
            did = chk.ident(m, "id", item, required=False)
            if did is not None:
                item = f"demand '{did}'"
            between = chk.pair(m, "between", item, site_ids)
            if did is None and between is not None:
                did = f"{between[0]}-{between[1]}"
            if did is not None:
                item = f"demand '{did}'"
                if did in seen:
                    hint = "" if "id" in m else "; give each demand between the same sites an id"
                    chk.add(line, item, f"duplicate id (first on line {seen[did]}){hint}")
                    continue
                seen[did] = line
            holding = self._holding(m, "holding", item, defaults["holding"])
            traffic = self._traffic(m, item, holding)
            bandwidth = chk.number(m, "bandwidth", item, 1, integer=True, low=1, high=MAX_UNITS)
            target = chk.number(m, "target", item, defaults["target"], low=0, low_open=True,
                                high=1, high_open=True)
            value = chk.number(m, "value", item, None, low=0, high=1e15)
            if between is None or did is None:
                continue
            hold = 1.0 if holding is BAD else float(holding)
            routes, generated = self._routes(m, item, between, hold, links, link_pos, graph,
                                             routing)
            if routes and bandwidth is not BAD:
                self._check_bandwidth(m, item, routes, links, bandwidth)
            demands.append(Demand(
                id=did, between=between,
                traffic=0.0 if traffic is BAD else float(traffic),
                holding=hold,
                bandwidth=1 if bandwidth is BAD else bandwidth,
                target=0.01 if target is BAD else float(target),
                routes=tuple(routes),
                value=None if value in (None, BAD) else float(value),
                line=line,
                routes_generated=generated,
            ))
        return demands

    def _traffic(self, m, item, holding):
        chk = self.chk
        has_t = m.get("traffic") is not None
        has_r = m.get("rate") is not None
        if has_t and has_r:
            chk.add(line_of(m, "rate"), item,
                    "give traffic (erlangs) or rate (per hour), not both")
            return BAD
        if not has_t and not has_r:
            chk.add(m.line, item, "'traffic' is missing (erlangs, or give rate and holding)")
            return BAD
        if has_t:
            return chk.number(m, "traffic", item, low=0, high=MAX_TRAFFIC,
                              high_note=f"more than {MAX_TRAFFIC:g} erlangs")
        rate = chk.number(m, "rate", item, low=0, high=MAX_TRAFFIC * 1e3,
                          high_note="calls per hour")
        if rate is BAD or holding is BAD:
            return BAD
        traffic = float(rate) * float(holding)
        if traffic > MAX_TRAFFIC:
            chk.add(line_of(m, "rate"), item,
                    f"rate x holding = {traffic:g} erlangs is too large "
                    f"(more than {MAX_TRAFFIC:g} erlangs)")
            return BAD
        return traffic

    def _routes(self, m, item, between, holding, links, link_pos, graph, routing):
        chk = self.chk
        if "routes" not in m or m["routes"] is None:
            if between[0] not in graph or between[1] not in graph:
                return [], True  # no sites section (reported once)
            try:
                found = candidate_routes(graph, between[0], between[1], routing.max_hops,
                                         routing.max_routes)
            except ValueError as exc:  # pragma: no cover - ends were checked above
                chk.add(m.line, item, str(exc))
                return [], True
            if not found and not self.bad_links:  # else the unreadable link may be why
                chk.add(m.line, item,
                        f"no possible route: no path of at most {routing.max_hops} links "
                        f"joins '{between[0]}' and '{between[1]}' (add a link, give routes, "
                        "or raise routing.max_hops)")
            routes = [Route(tuple(link_pos[k] for k in ids), (holding,) * len(ids))
                      for ids in found]
            return routes, True
        raw = m["routes"]
        line = line_of(m, "routes")
        if not isinstance(raw, Seq) or not raw:
            what = "is empty" if isinstance(raw, list) else f"must be a list, got {kind(raw)}"
            chk.add(line, item, f"routes {what} (omit it to generate routes)")
            return [], False
        routes, seen = [], {}
        for r, route_raw in enumerate(raw):
            rline = raw.lines[r]
            ritem = f"{item}: route {r + 1}"
            if not isinstance(route_raw, Seq) or not route_raw:
                chk.add(rline, ritem, f"must be a list of link ids, got {kind(route_raw)} "
                        "(routes is a list of routes: [[A-B], [A-C, C-B]])")
                continue
            steps = self._steps(route_raw, ritem, holding, links, link_pos)
            if steps is None:
                continue
            idx = tuple(j for j, _ in steps)
            if not self._is_path(rline, ritem, idx, links, between):
                continue
            if idx in seen:
                chk.add(rline, ritem, f"repeats route {seen[idx]}")
                continue
            seen[idx] = r + 1
            routes.append(Route(idx, tuple(h for _, h in steps)))
        return routes, False

    def _steps(self, seq, ritem, holding, links, link_pos):
        chk = self.chk
        steps, ok = [], True
        for s, raw in enumerate(seq):
            sline = seq.lines[s]
            step_holding = holding
            if isinstance(raw, Map):
                misspelt = chk.keys(raw, STEP_KEYS, ritem)
                # a misspelt 'link' is reported once, as the unknown key
                lid = chk.ident(raw, "link", ritem, required=not misspelt)
                h = self._holding(raw, "holding", ritem, holding)
                if h is BAD:
                    ok = False
                else:
                    step_holding = float(h)
            else:
                lid = chk.id_value(raw, sline, ritem, "link id")
            if lid is None:
                ok = False
                continue
            if lid not in link_pos:
                chk.add(sline, ritem, unknown(f"link '{lid}' is not defined", lid, link_pos))
                ok = False
                continue
            if lid in self.bad_links:
                ok = False  # reported with the link itself
                continue
            steps.append((link_pos[lid], step_holding))
        return steps if ok else None

    def _is_path(self, line, ritem, idx, links, between):
        chk = self.chk
        a, b = between
        first = links[idx[0]].ends
        if a in first:
            here, goal = a, b
        elif b in first:
            here, goal = b, a
        else:
            chk.add(line, ritem, f"first link '{links[idx[0]].id}' does not touch "
                                 f"'{a}' or '{b}' (a route must join the demand's ends)")
            return False
        visited = [here]
        for j in idx:
            ends = links[j].ends
            if here not in ends:
                chk.add(line, ritem, f"link '{links[j].id}' does not continue from site "
                                     f"'{here}' (the links of a route must form a path)")
                return False
            here = ends[1] if ends[0] == here else ends[0]
            if here in visited:
                chk.add(line, ritem, f"visits site '{here}' twice (a route must be loop-free)")
                return False
            visited.append(here)
        if here != goal:
            chk.add(line, ritem, f"ends at '{here}', not at '{goal}'")
            return False
        return True

    def _check_bandwidth(self, m, item, routes, links, bandwidth):
        def limit(link):
            # the most the link could ever hold: its sizing bound, else its capacity; a
            # capacity of 0 is a link out of service (blocks every call), not a size limit
            if link.max_capacity is not None:
                return link.max_capacity
            return link.capacity if link.capacity else None

        def usable(route):
            return all(limit(links[j]) is None or bandwidth <= limit(links[j])
                       for j in route.links)

        if not any(usable(r) for r in routes):
            worst = min((limit(links[j]), links[j].id) for r in routes for j in r.links
                        if limit(links[j]) is not None)
            self.chk.add(line_of(m, "bandwidth"), item,
                         f"bandwidth {bandwidth} fits no route: every route has a link that "
                         f"cannot hold it (e.g. link '{worst[1]}' with at most {worst[0]} units)")


# --------------------------------------------------------------------------------------------
# Summary
# --------------------------------------------------------------------------------------------
def network_summary(network: Network) -> dict:
    """Counts and totals of a network, as ``netdim check`` shows them.

    Returns
    -------
    dict
        ``name``, ``source``, ``sites``, ``links``, ``demands``, ``routes`` (all candidate
        routes), ``routes_generated`` / ``routes_given`` (routes of demands whose routes were
        generated / given in the file), ``demands_generated`` (demands with generated
        routes), ``longest_route`` (links), ``offered_traffic`` (total erlangs),
        ``policy``, ``max_hops``, ``reservation``, ``max_routes``, ``links_without_capacity``
        (ids), ``capacity_total``, ``multirate``, ``holding_overrides``, ``economic``
        (demands with a value).
    """
    routes_gen = sum(len(d.routes) for d in network.demands if d.routes_generated)
    routes_all = sum(len(d.routes) for d in network.demands)
    missing = [link.id for link in network.links if link.capacity is None]
    r = network.routing
    return {
        "name": network.name,
        "source": network.source,
        "sites": len(network.sites),
        "links": len(network.links),
        "demands": len(network.demands),
        "routes": routes_all,
        "routes_generated": routes_gen,
        "routes_given": routes_all - routes_gen,
        "demands_generated": sum(1 for d in network.demands if d.routes_generated),
        "longest_route": max((rt.hops for d in network.demands for rt in d.routes), default=0),
        "offered_traffic": float(sum(d.traffic for d in network.demands)),
        "policy": r.policy,
        "max_hops": r.max_hops,
        "reservation": r.reservation,
        "max_routes": r.max_routes,
        "links_without_capacity": missing,
        "capacity_total": int(sum(link.capacity or 0 for link in network.links)),
        "multirate": network.is_multirate,
        "holding_overrides": network.has_holding_overrides,
        "economic": sum(1 for d in network.demands if d.value is not None),
    }


