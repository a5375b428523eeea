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
``notes`` are kept in ``Network.extra`` and written back unchanged.
"""

from __future__ import annotations

import difflib
import math
import os
import pathlib
import re
import tempfile
from dataclasses import replace

import yaml

from netdim.errors import NetworkFileError
from netdim.model import POLICIES, Demand, Link, Network, Route, Routing, Site
from netdim.routing import candidate_routes, link_graph

__all__ = [
    "read_network",
    "loads_network",
    "write_network",
    "network_to_dict",
    "dumps_network",
    "MAX_PROBLEMS",
]

#: Most problems reported from one file (the rest are counted).
MAX_PROBLEMS = 50
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

_BAD = object()  # a field that was present but wrong (already reported)


# --------------------------------------------------------------------------------------------
# YAML with line numbers
# --------------------------------------------------------------------------------------------
class _Map(dict):
    """A mapping that remembers its line and the line of each key (1-based)."""

    line = 1
    lines: dict


class _Seq(list):
    """A sequence that remembers its line and the line of each item (1-based)."""

    line = 1
    lines: list


class _Loader(yaml.SafeLoader):
    """SafeLoader that builds :class:`_Map` / :class:`_Seq` and notes duplicate keys."""

    def __init__(self, stream):
        super().__init__(stream)
        self.key_problems = []  # (line, text)


def _construct_map(loader, node):
    loader.flatten_mapping(node)
    out = _Map()
    out.line = node.start_mark.line + 1
    out.lines = {}
    for knode, vnode in node.value:
        key = loader.construct_object(knode, deep=True)
        kline = knode.start_mark.line + 1
        try:
            hash(key)
        except TypeError:
            loader.key_problems.append((kline, "a key must be plain text"))
            continue
        if key in out:
            loader.key_problems.append(
                (kline, f"duplicate key '{key}' (first on line {out.lines[key]})")
            )
            continue
        out[key] = loader.construct_object(vnode, deep=True)
        out.lines[key] = kline
    return out


def _construct_seq(loader, node):
    out = _Seq(loader.construct_object(child, deep=True) for child in node.value)
    out.line = node.start_mark.line + 1
    out.lines = [child.start_mark.line + 1 for child in node.value]
    return out


# Only true/false are yes/no values (as in YAML 1.2): ids such as NO or ON stay text.
_Loader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
_Loader.add_implicit_resolver(
    "tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
_Loader.add_constructor("tag:yaml.org,2002:map", _construct_map)
_Loader.add_constructor("tag:yaml.org,2002:seq", _construct_seq)


def _line_of(container, key, default=1):
    if isinstance(container, _Map):
        return container.lines.get(key, container.line)
    if isinstance(container, _Seq):
        if isinstance(key, int) and 0 <= key < len(container.lines):
            return container.lines[key]
        return container.line
    return default


# --------------------------------------------------------------------------------------------
# Problem collection and field readers
# --------------------------------------------------------------------------------------------
class _Checker:
    def __init__(self, source):
        self.source = source
        self.problems = []

    def add(self, line, item, text):
        self.problems.append(f"{self.source}:{line}: {item}: {text}")

    def raise_if_any(self):
        if self.problems:
            # stable sort by line, so the list reads top to bottom like the file
            self.problems.sort(key=lambda text: int(text[len(self.source) + 1:].split(":")[0]))
            shown = self.problems[:MAX_PROBLEMS]
            if len(self.problems) > MAX_PROBLEMS:
                shown.append(
                    f"{self.source}: and {len(self.problems) - MAX_PROBLEMS} more problems "
                    "not shown"
                )
            raise NetworkFileError(shown)

    # -- keys ---------------------------------------------------------------------------------
    def keys(self, m, valid, item, keep=()):
        for key in m:
            if key in valid or (isinstance(key, str) and key.startswith(keep or "\0")):
                continue
            self.add(m.lines[key], item, _unknown(f"unknown key '{key}'", key, valid))

    def mapping(self, value, line, item, what):
        if isinstance(value, _Map):
            return value
        self.add(line, item, f"{what} must be a mapping (key: value), got {_kind(value)}")
        return None

    # -- scalars ------------------------------------------------------------------------------
    def number(self, m, key, item, default=None, *, integer=False, low=None, low_open=False,
               high=None, high_open=False, high_note="", required=False):
        """Read a number; report and return ``_BAD`` when it is wrong."""
        line = _line_of(m, key)
        if key not in m or m[key] is None:
            if required:
                self.add(line, item, f"'{key}' is missing")
                return _BAD
            return default
        raw = m[key]
        value = _as_number(raw)
        if value is None:
            self.add(line, item, f"{key} must be a number, got {_show(raw)}")
            return _BAD
        if integer:
            if not float(value).is_integer():
                self.add(line, item, f"{key} must be a whole number, got {_show(raw)}")
                return _BAD
            value = int(value)
        if low is not None and (value <= low if low_open else value < low):
            rel = ">" if low_open else ">="
            if high is not None and high_open and low_open:
                self.add(line, item, f"{key} must be in ({low:g}, {high:g}), got {_show(raw)}")
            else:
                self.add(line, item, f"{key} must be {rel} {low:g}, got {_show(raw)}")
            return _BAD
        if high is not None and (value >= high if high_open else value > high):
            if high_open and low_open and low is not None:
                self.add(line, item, f"{key} must be in ({low:g}, {high:g}), got {_show(raw)}")
            else:
                note = high_note or "an absurd magnitude; check the units"
                self.add(line, item, f"{key} {_show(raw)} is too large ({note})")
            return _BAD
        return value

    def ident(self, m, key, item, required=True):
        """Read an id (text, or a whole number taken as text)."""
        line = _line_of(m, key)
        if key not in m or m[key] is None:
            if required:
                self.add(line, item, f"'{key}' is missing")
            return None
        raw = m[key]
        return self.id_value(raw, line, item, key)

    def id_value(self, raw, line, item, what):
        if isinstance(raw, bool):
            self.add(line, item, f"{what} must be text, got the yes/no value {raw!r} "
                     "(quote it)")
            return None
        if isinstance(raw, int):
            return str(raw)
        if isinstance(raw, str) and raw.strip():
            return raw
        self.add(line, item, f"{what} must be text, got {_show(raw)}")
        return None

    def text(self, m, key, item, default=None):
        if key not in m or m[key] is None:
            return default
        raw = m[key]
        if isinstance(raw, (str, int, float)) and not isinstance(raw, bool):
            return str(raw)
        self.add(_line_of(m, key), item, f"{key} must be text, got {_show(raw)}")
        return default

    def pair(self, m, key, item, site_ids):
        """Two distinct known site ids; None when wrong (reported)."""
        line = _line_of(m, key)
        if key not in m or m[key] is None:
            self.add(line, item, f"'{key}' is missing (two site ids)")
            return None
        raw = m[key]
        if not isinstance(raw, list) or len(raw) != 2:
            self.add(line, item, f"{key} must be a list of two site ids, got {_show(raw)}")
            return None
        ends = []
        for value in raw:
            sid = self.id_value(value, line, item, "site id")
            if sid is None:
                return None
            if site_ids is not None and sid not in site_ids:
                self.add(line, item, _unknown(f"site '{sid}' is not defined", sid, site_ids))
                return None
            ends.append(sid)
        if ends[0] == ends[1]:
            self.add(line, item, f"{key} names the same site '{ends[0]}' twice")
            return None
        return tuple(ends)


def _as_number(raw):
    if isinstance(raw, bool):
        return None
    if isinstance(raw, (int, float)):
        value = raw
    elif isinstance(raw, str):
        # PyYAML reads '1e5' (no dot) as text; accept any plain decimal notation
        try:
            value = float(raw.strip())
        except ValueError:
            return None
    else:
        return None
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _show(raw) -> str:
    if isinstance(raw, str):
        return repr(raw)
    if isinstance(raw, (list, dict)):
        return f"a {_kind(raw)}"
    return repr(raw)


def _kind(raw) -> str:
    if raw is None:
        return "nothing"
    if isinstance(raw, dict):
        return "mapping"
    if isinstance(raw, list):
        return "list"
    if isinstance(raw, bool):
        return "yes/no value"
    if isinstance(raw, str):
        return f"text {raw!r}"
    return f"{type(raw).__name__} {raw!r}"


def _unknown(what, name, valid) -> str:
    close = difflib.get_close_matches(str(name), [str(v) for v in valid], n=1, cutoff=0.6)
    if close:
        return f"{what} (did you mean '{close[0]}'?)"
    names = sorted(map(str, valid)) if isinstance(valid, (set, dict)) else list(map(str, valid))
    if 0 < len(names) <= 12:
        return f"{what} (valid: {', '.join(names)})"
    return what


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
    chk = _Checker(source)
    loader = _Loader(text)
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
    if not isinstance(data, _Map):
        chk.add(1, "file", f"must be a mapping with sites, links and demands, got {_kind(data)}")
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
            extra=_plain(extra),
        )

    def _section_ok(self, key, kind):
        value = self.data.get(key)
        return isinstance(value, _Map) if kind == "mapping" else isinstance(value, _Seq)

    def _section(self, key, kind):
        data = self.data
        if key not in data or data[key] is None:
            return None
        value = data[key]
        ok = isinstance(value, _Map) if kind == "mapping" else isinstance(value, _Seq)
        if not ok:
            self.chk.add(data.lines[key], key, f"must be a {kind}, got {_kind(value)}")
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
        if target is not _BAD:
            out["target"] = float(target)
        if holding is not _BAD:
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
                        f"unknown policy {_show(raw)}{hint}; valid policies: "
                        + ", ".join(POLICIES))
        max_hops = chk.number(m, "max_hops", "routing", Routing.max_hops, integer=True, low=1,
                              high=MAX_HOPS, high_note=f"more than {MAX_HOPS} links per route")
        reservation = chk.number(m, "reservation", "routing", Routing.reservation,
                                 integer=True, low=0, high=MAX_UNITS)
        max_routes = chk.number(m, "max_routes", "routing", None, integer=True, low=1,
                                high=10_000)
        return Routing(
            policy=policy,
            max_hops=Routing.max_hops if max_hops is _BAD else max_hops,
            reservation=Routing.reservation if reservation is _BAD else reservation,
            max_routes=None if max_routes is _BAD else max_routes,
        )

    # -- sites ------------------------------------------------------------------------------
    def _sites(self):
        chk = self.chk
        seq = self._section("sites", "list")
        if seq is None:
            if "sites" not in self.data or self.data["sites"] is None:
                chk.add(_line_of(self.data, "sites"), "sites", "missing (a list of sites)")
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
                x = None if x is _BAD else (None if x is None else float(x))
                y = None if y is _BAD else (None if y is None else float(y))
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
                chk.add(_line_of(self.data, "links"), "links", "missing (a list of links)")
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
            ok = _BAD not in (capacity, installed, max_cap, module, cost, fixed, length,
                              reservation)
            if ok and max_cap is not None and max_cap < installed:
                chk.add(_line_of(m, "max_capacity"), item,
                        f"max_capacity {max_cap} is below installed {installed}")
                ok = False
            if ok and capacity is not None and capacity < installed:
                chk.add(_line_of(m, "capacity"), item,
                        f"capacity {capacity} is below installed {installed}")
                ok = False
            if ok and capacity is not None and max_cap is not None and capacity > max_cap:
                chk.add(_line_of(m, "capacity"), item,
                        f"capacity {capacity} is above max_capacity {max_cap}")
                ok = False
            if ends is None:
                # left out of routes (reported here); links with other faults stay in so
                # that routes over them do not add problems of their own
                self.bad_links.add(lid)
                ends = ("?", "?")
            links.append(Link(
                id=lid, ends=ends,
                capacity=None if capacity is _BAD else capacity,
                module=1 if module is _BAD else module,
                cost_per_module=1.0 if cost is _BAD else float(cost),
                fixed_cost=0.0 if fixed is _BAD else float(fixed),
                max_capacity=None if max_cap is _BAD else max_cap,
                installed=0 if installed is _BAD else installed,
                length=None if length in (None, _BAD) else float(length),
                reservation=None if reservation is _BAD else reservation,
                line=line,
            ))
        return links

    # -- demands ----------------------------------------------------------------------------
    def _demands(self, site_ids, links, defaults, routing):
        chk = self.chk
        seq = self._section("demands", "list")
        if seq is None:
            if "demands" not in self.data or self.data["demands"] is None:
                chk.add(_line_of(self.data, "demands"), "demands", "missing (a list of demands)")
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
            hold = 1.0 if holding is _BAD else float(holding)
            routes, generated = self._routes(m, item, between, hold, links, link_pos, graph,
                                             routing)
            if routes and bandwidth is not _BAD:
                self._check_bandwidth(m, item, routes, links, bandwidth)
            demands.append(Demand(
                id=did, between=between,
                traffic=0.0 if traffic is _BAD else float(traffic),
                holding=hold,
                bandwidth=1 if bandwidth is _BAD else bandwidth,
                target=0.01 if target is _BAD else float(target),
                routes=tuple(routes),
                value=None if value in (None, _BAD) else float(value),
                line=line,
                routes_generated=generated,
            ))
        return demands

    def _traffic(self, m, item, holding):
        chk = self.chk
        has_t = m.get("traffic") is not None
        has_r = m.get("rate") is not None
        if has_t and has_r:
            chk.add(_line_of(m, "rate"), item,
                    "give traffic (erlangs) or rate (per hour), not both")
            return _BAD
        if not has_t and not has_r:
            chk.add(m.line, item, "'traffic' is missing (erlangs, or give rate and holding)")
            return _BAD
        if has_t:
            return chk.number(m, "traffic", item, low=0, high=MAX_TRAFFIC,
                              high_note=f"more than {MAX_TRAFFIC:g} erlangs")
        rate = chk.number(m, "rate", item, low=0, high=MAX_TRAFFIC * 1e3,
                          high_note="calls per hour")
        if rate is _BAD or holding is _BAD:
            return _BAD
        traffic = float(rate) * float(holding)
        if traffic > MAX_TRAFFIC:
            chk.add(_line_of(m, "rate"), item,
                    f"rate x holding = {traffic:g} erlangs is too large "
                    f"(more than {MAX_TRAFFIC:g} erlangs)")
            return _BAD
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
        line = _line_of(m, "routes")
        if not isinstance(raw, _Seq) or not raw:
            what = "is empty" if isinstance(raw, list) else f"must be a list, got {_kind(raw)}"
            chk.add(line, item, f"routes {what} (omit it to generate routes)")
            return [], False
        routes, seen = [], {}
        for r, route_raw in enumerate(raw):
            rline = raw.lines[r]
            ritem = f"{item}: route {r + 1}"
            if not isinstance(route_raw, _Seq) or not route_raw:
                chk.add(rline, ritem, f"must be a list of link ids, got {_kind(route_raw)} "
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
            if isinstance(raw, _Map):
                chk.keys(raw, STEP_KEYS, ritem)
                lid = chk.ident(raw, "link", ritem)
                h = self._holding(raw, "holding", ritem, holding)
                if h is _BAD:
                    ok = False
                else:
                    step_holding = float(h)
            else:
                lid = chk.id_value(raw, sline, ritem, "link id")
            if lid is None:
                ok = False
                continue
            if lid not in link_pos:
                chk.add(sline, ritem, _unknown(f"link '{lid}' is not defined", lid, link_pos))
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
            if link.max_capacity is not None:
                return link.max_capacity
            return link.capacity

        def usable(route):
            return all(limit(links[j]) is None or bandwidth <= limit(links[j])
                       for j in route.links)

        if not any(usable(r) for r in routes):
            worst = min((limit(links[j]), links[j].id) for r in routes for j in r.links
                        if limit(links[j]) is not None)
            self.chk.add(_line_of(m, "bandwidth"), item,
                         f"bandwidth {bandwidth} fits no route: every route has a link that "
                         f"cannot hold it (e.g. link '{worst[1]}' with at most {worst[0]} units)")


def _plain(value):
    """Strip the line-number containers (for ``Network.extra``)."""
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_plain(v) for v in value]
    return value


# --------------------------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------------------------
class _FlowList(list):
    pass


class _FlowMap(dict):
    pass


class _Dumper(yaml.SafeDumper):
    pass


_Dumper.add_representer(
    _FlowList, lambda d, v: d.represent_sequence("tag:yaml.org,2002:seq", v, flow_style=True)
)
_Dumper.add_representer(
    _FlowMap, lambda d, v: d.represent_mapping("tag:yaml.org,2002:map", v.items(),
                                               flow_style=True)
)


def _num(x):
    """A plain Python int or float (numpy scalars do not dump)."""
    if isinstance(x, int) or getattr(getattr(x, "dtype", None), "kind", "") in ("i", "u"):
        return int(x)
    return float(x)


def network_to_dict(network: Network, capacities=None) -> dict:
    """The network as plain data in the network-file layout.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        Replace the links' capacities (one per link, in link order).

    Returns
    -------
    dict
        Readable by :func:`loads_network` (after YAML dumping) to an equal network. Fields at
        their defaults are left out; routes equal to the generated ones are left out; a step's
        holding time only where it differs from the demand's.

    Raises
    ------
    ValueError
        Wrong number of capacities, negative or non-integer capacities, or a demand with no
        routes (such a network cannot be written as a valid file).
    """
    if capacities is not None:
        network = network.with_capacities(_check_caps(network, capacities))
    out = {"name": network.name}
    out.update(_plain(network.extra))
    out["defaults"] = _FlowMap(target=_num(network.default_target),
                               holding=_num(network.default_holding))
    r = network.routing
    routing = {"policy": r.policy, "max_hops": int(r.max_hops),
               "reservation": int(r.reservation)}
    if r.max_routes is not None:
        routing["max_routes"] = int(r.max_routes)
    out["routing"] = _FlowMap(routing)
    sites = []
    for s in network.sites:
        entry = _FlowMap(id=s.id)
        for key in ("name", "x", "y"):
            value = getattr(s, key)
            if value is not None:
                entry[key] = value if key == "name" else _num(value)
        sites.append(entry)
    out["sites"] = sites
    out["links"] = [_link_dict(link) for link in network.links]

    graph = link_graph(network.links, sites=[s.id for s in network.sites])
    ids = network.link_ids
    out["demands"] = [_demand_dict(network, d, graph, ids) for d in network.demands]
    return out


def _check_caps(network, capacities):
    import numpy as np

    caps = np.asarray(capacities)
    if caps.shape != (len(network.links),):
        raise ValueError(f"capacities: expected {len(network.links)} values (one per link), "
                         f"got shape {caps.shape}")
    if caps.dtype.kind not in "iuf" or np.any(caps != np.round(caps)) or np.any(caps < 0):
        raise ValueError("capacities: must be whole numbers >= 0")
    return caps.astype(np.int64)


def _link_dict(link: Link) -> dict:
    entry = {"id": link.id, "ends": _FlowList(link.ends)}
    if link.capacity is not None:
        entry["capacity"] = int(link.capacity)
    if link.installed:
        entry["installed"] = int(link.installed)
    if link.module != 1:
        entry["module"] = int(link.module)
    if link.cost_per_module != 1.0:
        entry["cost_per_module"] = _num(link.cost_per_module)
    if link.fixed_cost != 0.0:
        entry["fixed_cost"] = _num(link.fixed_cost)
    if link.max_capacity is not None:
        entry["max_capacity"] = int(link.max_capacity)
    if link.length is not None:
        entry["length"] = _num(link.length)
    if link.reservation is not None:
        entry["reservation"] = int(link.reservation)
    return entry


def _demand_dict(network, d: Demand, graph, ids) -> dict:
    if not d.routes:
        raise ValueError(f"demand '{d.id}' has no routes: a network file cannot say that")
    entry = {"id": d.id, "between": _FlowList(d.between), "traffic": _num(d.traffic)}
    if d.holding != network.default_holding:
        entry["holding"] = _num(d.holding)
    if d.bandwidth != 1:
        entry["bandwidth"] = int(d.bandwidth)
    if d.target != network.default_target:
        entry["target"] = _num(d.target)
    if d.value is not None:
        entry["value"] = _num(d.value)
    r = network.routing
    generated = candidate_routes(graph, d.between[0], d.between[1], r.max_hops, r.max_routes)
    given = [tuple(ids[j] for j in route.links) for route in d.routes]
    plain = all(h == d.holding for route in d.routes for h in route.holdings)
    if not (plain and given == generated):
        entry["routes"] = [_route_list(route, d, ids) for route in d.routes]
    return entry


def _route_list(route: Route, d: Demand, ids):
    steps = _FlowList()
    for j, h in zip(route.links, route.holdings, strict=True):
        if h == d.holding:
            steps.append(ids[j])
        else:
            steps.append(_FlowMap(link=ids[j], holding=_num(h)))
    return steps


def dumps_network(network: Network, capacities=None) -> str:
    """The network file text (see :func:`network_to_dict`)."""
    data = network_to_dict(network, capacities)
    head = f"# netdim network file: {network.name}\n"
    return head + yaml.dump(data, Dumper=_Dumper, sort_keys=False, allow_unicode=True,
                            default_flow_style=False, width=100)


def write_network(network: Network, path, capacities=None) -> None:
    """Write ``network`` as a network file, whole or not at all.

    Parameters
    ----------
    network : Network
    path : str or path-like
    capacities : array_like of int, optional
        Capacities to write instead of the links' own (e.g. a sizing plan's).

    Raises
    ------
    ValueError
        See :func:`network_to_dict`.
    OSError
        The file cannot be written (named in the error); an existing file is left as it was.

    Notes
    -----
    The text goes to a temporary file in the same directory, is flushed to disk, and then
    replaces ``path`` in one :func:`os.replace` step, so readers see the old file or the new
    one, never a partial one.
    """
    text = dumps_network(network, capacities)
    target = pathlib.Path(path)
    directory = target.parent if str(target.parent) else pathlib.Path(".")
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(dir=directory, prefix=f".{target.name}.",
                                        suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        if target.exists():
            os.chmod(tmp_name, target.stat().st_mode & 0o7777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp_name, 0o666 & ~umask)
        os.replace(tmp_name, target)
        tmp_name = None
    except OSError as exc:
        raise OSError(exc.errno, f"cannot write: {exc.strerror or exc}", str(path)) from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass
