"""The sections of a network file, each read by a plain function.

Private to :mod:`netdim.netfile`. Every function takes the :class:`FieldReader` that collects
problems and the parts of the file it needs, and returns what it read; what one section
passes to the next (site ids, the links that could not be read) is an argument, never
hidden state.
"""

from __future__ import annotations

import difflib

from netdim.model import POLICIES, Demand, Link, Route, Routing, Site
from netdim.netfile._fields import BAD, kind, show, unknown
from netdim.netfile._yaml import Map, Seq, line_of
from netdim.routing import RouteFinder, RouteLimitError, check_path, link_graph

__all__ = [
    "parse_defaults",
    "parse_routing",
    "parse_sites",
    "parse_links",
    "parse_demands",
    "parse_routes",
    "MAX_TRAFFIC",
    "MAX_UNITS",
    "MAX_HOLDING",
    "MAX_HOPS",
    "MAX_COST",
    "MAX_LENGTH",
    "MAX_COORDINATE",
]

#: Magnitudes above these are taken for typing mistakes.
MAX_TRAFFIC = 1e7
MAX_UNITS = 10_000_000
MAX_HOLDING = 1e4
MAX_HOPS = 64
MAX_COST = 1e15
MAX_LENGTH = 1e9
MAX_COORDINATE = 1e15

SITE_KEYS = ("id", "name", "x", "y")
LINK_KEYS = (
    "id", "ends", "capacity", "module", "cost_per_module", "fixed_cost", "max_capacity",
    "installed", "length", "reservation", "min_capacity",
)
DEMAND_KEYS = (
    "id", "between", "traffic", "rate", "holding", "bandwidth", "target", "value", "routes",
    # demand over the day (read by netdim.netfile._day)
    "rates", "period", "start", "cyclic", "target_basis",
    # design rules
    "diversity",
)
DEFAULT_KEYS = ("target", "holding", "period", "cyclic", "target_basis", "min_capacity",
                "diversity")
#: Most link-disjoint routes a demand may ask for (more is taken for a typing mistake).
MAX_DIVERSITY = 100
ROUTING_KEYS = ("policy", "max_hops", "reservation", "max_routes")
STEP_KEYS = ("link", "holding")


# --------------------------------------------------------------------------------------------
# Shared pieces
# --------------------------------------------------------------------------------------------
def section(reader, data, key, shape):
    """``data[key]`` when it has the right shape ('list' or 'mapping'); None when absent
    or wrong (reported)."""
    if key not in data or data[key] is None:
        return None
    value = data[key]
    ok = isinstance(value, Map) if shape == "mapping" else isinstance(value, Seq)
    if not ok:
        reader.add(line_of(data, key), key, f"must be a {shape}, got {kind(value)}")
        return None
    return value


def _items(reader, data, key, what, keys, *, bare_ids=False, id_required=True):
    """The entries of a list section: yields ``(line, item, mapping, id)``.

    Reports a missing or misshapen section, entries that are not mappings, unknown keys,
    missing ids and (for required ids) duplicate ids, and skips those entries. ``mapping``
    is None for a bare id (``bare_ids``); ``id`` is None when an optional id is absent.
    """
    seq = section(reader, data, key, "list")
    if seq is None:
        if key not in data or data[key] is None:
            reader.add(line_of(data, key), key, f"missing (a list of {key})")
        return
    seen = {}
    for i, raw in enumerate(seq):
        line = line_of(seq, i)
        item = f"{key}[{i + 1}]"
        if bare_ids and isinstance(raw, (str, int)) and not isinstance(raw, bool):
            m, ident = None, str(raw)
        else:
            m = reader.mapping(raw, line, item, f"a {what}")
            if m is None:
                continue
            reader.keys(m, keys, item)
            ident = reader.ident(m, "id", item, required=id_required)
            if ident is None and id_required:
                continue
        if ident is not None and id_required:
            if ident in seen:
                reader.add(line, f"{what} {show(ident)}",
                           f"duplicate id (first on line {seen[ident]})")
                continue
            seen[ident] = line
        yield line, item, m, ident


def _diversity(reader, m, item, default):
    return reader.number(m, "diversity", item, default, integer=True, low=1,
                         high=MAX_DIVERSITY,
                         high_note=f"more than {MAX_DIVERSITY} link-disjoint routes")


def _holding(reader, m, key, item, default):
    return reader.number(m, key, item, default, low=0, low_open=True, high=MAX_HOLDING,
                         high_note=f"more than {MAX_HOLDING:g} hours; holding is in hours")


# --------------------------------------------------------------------------------------------
# Defaults and routing
# --------------------------------------------------------------------------------------------
def parse_defaults(reader, data) -> dict:
    """``{'target', 'holding', 'holding_given', 'min_capacity', 'diversity'}`` from the
    ``defaults`` section."""
    out = {"target": 0.01, "holding": 1.0, "holding_given": False, "min_capacity": None,
           "diversity": 1}
    m = section(reader, data, "defaults", "mapping")
    if m is None:
        return out
    reader.keys(m, DEFAULT_KEYS, "defaults")
    target = reader.number(m, "target", "defaults", 0.01, low=0, low_open=True, high=1,
                           high_open=True)
    holding = _holding(reader, m, "holding", "defaults", 1.0)
    if target is not BAD:
        out["target"] = float(target)
    if holding is not BAD:
        out["holding"] = float(holding)
    min_cap = reader.number(m, "min_capacity", "defaults", None, integer=True, low=0,
                            high=MAX_UNITS)
    if min_cap is not BAD:
        out["min_capacity"] = min_cap
    diversity = _diversity(reader, m, "defaults", 1)
    if diversity is not BAD:
        out["diversity"] = diversity
    # a wrong defaults.holding is reported once, not again for every rate without holding
    out["holding_given"] = m.get("holding") is not None
    return out


def parse_routing(reader, data) -> Routing:
    """The ``routing`` section (defaults for what it leaves out)."""
    m = section(reader, data, "routing", "mapping")
    if m is None:
        return Routing()
    reader.keys(m, ROUTING_KEYS, "routing")
    policy = Routing.policy
    if "policy" in m and m["policy"] is not None:
        raw = m["policy"]
        if isinstance(raw, str) and raw in POLICIES:
            policy = raw
        else:
            close = difflib.get_close_matches(str(raw)[:100], POLICIES, n=1)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            reader.add(line_of(m, "policy"), "routing",
                       f"unknown policy {show(raw)}{hint}; valid policies: "
                       + ", ".join(POLICIES))
    max_hops = reader.number(m, "max_hops", "routing", Routing.max_hops, integer=True, low=1,
                             high=MAX_HOPS, high_note=f"more than {MAX_HOPS} links per route")
    reservation = reader.number(m, "reservation", "routing", Routing.reservation,
                                integer=True, low=0, high=MAX_UNITS)
    max_routes = reader.number(m, "max_routes", "routing", None, integer=True, low=1,
                               high=10_000)
    return Routing(
        policy=policy,
        max_hops=Routing.max_hops if max_hops is BAD else max_hops,
        reservation=Routing.reservation if reservation is BAD else reservation,
        max_routes=None if max_routes is BAD else max_routes,
    )


# --------------------------------------------------------------------------------------------
# Sites and links
# --------------------------------------------------------------------------------------------
def parse_sites(reader, data) -> list[Site]:
    """The ``sites`` section; a site may be written as its bare id."""
    sites = []
    coord = {"low": -MAX_COORDINATE, "high": MAX_COORDINATE}
    for _line, _item, m, sid in _items(reader, data, "sites", "site", SITE_KEYS,
                                        bare_ids=True):
        if m is None:
            sites.append(Site(sid))
            continue
        item = f"site {show(sid)}"
        name = reader.text(m, "name", item)
        x = reader.number(m, "x", item, **coord)
        y = reader.number(m, "y", item, **coord)
        sites.append(Site(sid, name, None if x in (None, BAD) else float(x),
                          None if y in (None, BAD) else float(y)))
    return sites


def parse_links(reader, data, site_ids, defaults=None) -> tuple[list[Link], set[str]]:
    """The ``links`` section.

    Parameters
    ----------
    site_ids : set of str or None
        Known sites; None when the sites section itself is unusable (ends are then not
        checked against it).
    defaults : dict, optional
        What :func:`parse_defaults` returned (its ``min_capacity`` applies to every link
        that gives none).

    Returns
    -------
    links : list of Link
        Every link with an id; a field that was wrong takes its default (the problem is
        reported), so that routes over the link add no problems of their own.
    unreadable : set of str
        Ids of links whose ends could not be read: routes over them are left out.
    """
    links, unreadable = [], set()
    units = {"integer": True, "low": 0, "high": MAX_UNITS}
    for line, _item, m, lid in _items(reader, data, "links", "link", LINK_KEYS):
        item = f"link {show(lid)}"
        ends = reader.pair(m, "ends", item, site_ids)
        capacity = reader.number(m, "capacity", item, None, **units)
        installed = reader.number(m, "installed", item, 0, **units)
        max_cap = reader.number(m, "max_capacity", item, None, **units)
        module = reader.number(m, "module", item, 1, integer=True, low=1, high=MAX_UNITS)
        cost = reader.number(m, "cost_per_module", item, 1.0, low=0, high=MAX_COST)
        fixed = reader.number(m, "fixed_cost", item, 0.0, low=0, high=MAX_COST)
        length = reader.number(m, "length", item, None, low=0, high=MAX_LENGTH)
        reservation = reader.number(m, "reservation", item, None, integer=True, low=0,
                                    high=MAX_UNITS)
        min_cap = reader.number(m, "min_capacity", item,
                                (defaults or {}).get("min_capacity"), **units)
        ok = BAD not in (capacity, installed, max_cap, module, cost, fixed, length,
                         reservation)
        if (min_cap not in (None, BAD) and max_cap not in (None, BAD)
                and min_cap > max_cap):
            where = "min_capacity" if "min_capacity" in m else "max_capacity"
            reader.add(line_of(m, where), item,
                       f"min_capacity {min_cap} is above max_capacity {max_cap}")
        if ok and max_cap is not None and max_cap < installed:
            reader.add(line_of(m, "max_capacity"), item,
                       f"max_capacity {max_cap} is below installed {installed}")
            ok = False
        if ok and capacity is not None and capacity < installed:
            reader.add(line_of(m, "capacity"), item,
                       f"capacity {capacity} is below installed {installed}")
            ok = False
        if ok and capacity is not None and max_cap is not None and capacity > max_cap:
            reader.add(line_of(m, "capacity"), item,
                       f"capacity {capacity} is above max_capacity {max_cap}")
        if ends is None:
            unreadable.add(lid)
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
            min_capacity=None if min_cap in (None, BAD, 0) else min_cap,
        ))
    return links, unreadable


# --------------------------------------------------------------------------------------------
# Demands and their routes
# --------------------------------------------------------------------------------------------
def parse_demands(reader, data, site_ids, links, unreadable, defaults, routing):
    """The ``demands`` section, with every demand's routes given or generated.

    Parameters
    ----------
    site_ids : set of str or None
        As for :func:`parse_links`.
    links, unreadable
        What :func:`parse_links` returned.
    defaults : dict
        What :func:`parse_defaults` returned.
    routing : Routing

    Notes
    -----
    Routes are generated after the whole section is read, all demands at once (grouped by
    site, see :meth:`~netdim.routing.RouteFinder.routes_many`).
    """
    link_pos = {link.id: i for i, link in enumerate(links)}
    good = [link for link in links if link.id not in unreadable]
    finder = RouteFinder(link_graph(good, sites=site_ids or ()), routing.max_hops,
                         routing.max_routes)
    context = (links, link_pos, unreadable, finder)
    rows, pending, seen = [], [], {}
    for line, item, m, did in _items(reader, data, "demands", "demand", DEMAND_KEYS,
                                     id_required=False):
        if did is not None:
            item = f"demand {show(did)}"
        between = reader.pair(m, "between", item, site_ids)
        if did is None and between is not None:
            did = f"{between[0]}-{between[1]}"
        if did is not None:
            item = f"demand {show(did)}"
            if did in seen:
                hint = "" if "id" in m else "; give each demand between the same sites an id"
                reader.add(line, item, f"duplicate id (first on line {seen[did]}){hint}")
                continue
            seen[did] = line
        holding = _holding(reader, m, "holding", item, defaults["holding"])
        traffic = _traffic(reader, m, item, holding, defaults)
        bandwidth = reader.number(m, "bandwidth", item, 1, integer=True, low=1, high=MAX_UNITS)
        target = reader.number(m, "target", item, defaults["target"], low=0, low_open=True,
                               high=1, high_open=True)
        value = reader.number(m, "value", item, None, low=0, high=MAX_COST)
        diversity = _diversity(reader, m, item, defaults.get("diversity", 1))
        if between is None or did is None:
            continue
        hold = 1.0 if holding is BAD else float(holding)
        if m.get("routes") is None and between[0] in finder.graph and (
                between[1] in finder.graph):
            routes = None  # generated below
            pending.append((len(rows), between))
        else:
            routes = parse_routes(reader, m, item, between, hold, routing, context)[0]
        rows.append([line, item, m, did, between, hold, traffic, bandwidth, target, value,
                     routes, diversity])
    found = finder.routes_many([between for _, between in pending])
    for (row, _between), ids in zip(pending, found, strict=True):
        rows[row][10] = _generated(reader, rows[row], ids, routing, link_pos, unreadable)
    limits = [_limit(link) for link in links]
    smallest = min((x for x in limits if x is not None), default=None)
    demands = []
    for (line, item, m, did, between, hold, traffic, bandwidth, target, value, routes,
         diversity) in rows:
        generated = m.get("routes") is None
        if routes and bandwidth is not BAD and smallest is not None and bandwidth > smallest:
            _check_bandwidth(reader, m, item, routes, links, limits, bandwidth)
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
            diversity=1 if diversity is BAD else diversity,
        ))
    return demands


def _generated(reader, row, found, routing, link_pos, unreadable):
    """The Route objects of a demand's generated routes (``found``: ids, or the error)."""
    _line, item, m, _did, between, hold = row[:6]
    if isinstance(found, RouteLimitError):
        reader.add(m.line, item, str(found))
        return []
    if not found and not unreadable:  # else the unreadable link may be why
        reader.add(m.line, item,
                   f"no possible route: no path of at most {routing.max_hops} links "
                   f"joins '{between[0]}' and '{between[1]}' (add a link, give routes, "
                   "or raise routing.max_hops)")
    return [Route(tuple(link_pos[k] for k in ids), (hold,) * len(ids)) for ids in found]


def _traffic(reader, m, item, holding, defaults):
    has_t = m.get("traffic") is not None
    has_r = m.get("rate") is not None
    if m.get("rates") is not None:
        # a day profile: netdim.netfile._day reads it and sets the traffic
        if has_t or has_r:
            reader.add(line_of(m, "rates"), item,
                       "give rates (arrivals per hour in each period) or "
                       f"{'traffic' if has_t else 'rate'}, not both")
            return BAD
        if m.get("holding") is None and not defaults["holding_given"]:
            reader.add(line_of(m, "rates"), item,
                       "rates needs holding (mean hours per call): add holding here or "
                       "defaults.holding")
            return BAD
        return 0.0
    if has_t and has_r:
        reader.add(line_of(m, "rate"), item,
                   "give traffic (erlangs) or rate (per hour), not both")
        return BAD
    if not has_t and not has_r:
        reader.add(m.line, item, "'traffic' is missing (erlangs, or give rate and holding)")
        return BAD
    if has_t:
        return reader.number(m, "traffic", item, low=0, high=MAX_TRAFFIC,
                             high_note=f"more than {MAX_TRAFFIC:g} erlangs")
    rate = reader.number(m, "rate", item, low=0, high=MAX_TRAFFIC * 1e3,
                         high_note="calls per hour")
    if m.get("holding") is None and not defaults["holding_given"]:
        reader.add(line_of(m, "rate"), item,
                   "rate needs holding (mean hours per call) to give the traffic: add "
                   "holding here or defaults.holding, or give traffic in erlangs")
        return BAD
    if rate is BAD or holding is BAD:
        return BAD
    traffic = float(rate) * float(holding)
    if traffic > MAX_TRAFFIC:
        reader.add(line_of(m, "rate"), item,
                   f"rate x holding = {traffic:g} erlangs is too large "
                   f"(more than {MAX_TRAFFIC:g} erlangs)")
        return BAD
    return traffic


def parse_routes(reader, m, item, between, holding, routing, context):
    """A demand's routes: as given in ``m['routes']``, else generated.

    Parameters
    ----------
    context : tuple
        ``(links, link_pos, unreadable, finder)``: the links, their positions by id, the ids
        of unreadable links, and the :class:`~netdim.routing.RouteFinder` for generation.

    Returns
    -------
    routes : list of Route
    generated : bool
    """
    links, link_pos, unreadable, finder = context
    if "routes" not in m or m["routes"] is None:
        graph = finder.graph
        if between[0] not in graph or between[1] not in graph:
            return [], True  # no sites section (reported once)
        try:
            found = finder.routes(between[0], between[1])
        except RouteLimitError as exc:
            reader.add(m.line, item, str(exc))
            return [], True
        if not found and not unreadable:  # else the unreadable link may be why
            reader.add(m.line, item,
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
        reader.add(line, item, f"routes {what} (omit it to generate routes)")
        return [], False
    routes, seen = [], {}
    for r, route_raw in enumerate(raw):
        rline = line_of(raw, r)
        ritem = f"{item}: route {r + 1}"
        if not isinstance(route_raw, Seq) or not route_raw:
            reader.add(rline, ritem, f"must be a list of link ids, got {kind(route_raw)} "
                       "(routes is a list of routes: [[A-B], [A-C, C-B]])")
            continue
        steps = _steps(reader, route_raw, ritem, holding, link_pos, unreadable)
        if steps is None:
            continue
        idx = tuple(j for j, _ in steps)
        problem = check_path(links, idx, between)
        if problem is not None:
            reader.add(rline, ritem, problem)
            continue
        if idx in seen:
            reader.add(rline, ritem, f"repeats route {seen[idx]}")
            continue
        seen[idx] = r + 1
        routes.append(Route(idx, tuple(h for _, h in steps)))
    return routes, False


def _steps(reader, seq, ritem, holding, link_pos, unreadable):
    steps, ok = [], True
    for s, raw in enumerate(seq):
        sline = line_of(seq, s)
        step_holding = holding
        if isinstance(raw, Map):
            misspelt = reader.keys(raw, STEP_KEYS, ritem)
            # a misspelt 'link' is reported once, as the unknown key
            lid = reader.ident(raw, "link", ritem, required=not misspelt)
            h = _holding(reader, raw, "holding", ritem, holding)
            if h is BAD:
                ok = False
            else:
                step_holding = float(h)
        else:
            lid = reader.id_value(raw, sline, ritem, "link id")
        if lid is None:
            ok = False
            continue
        if lid not in link_pos:
            reader.add(sline, ritem, unknown(f"link {show(lid)} is not defined", lid,
                                             link_pos))
            ok = False
            continue
        if lid in unreadable:
            ok = False  # reported with the link itself
            continue
        steps.append((link_pos[lid], step_holding))
    return steps if ok else None


def _limit(link):
    """The most a link could ever hold: its sizing bound, else its capacity (a capacity of
    0 is a link out of service, which blocks every call, not a size limit); None: no limit."""
    if link.max_capacity is not None:
        return link.max_capacity
    return link.capacity if link.capacity else None


def _check_bandwidth(reader, m, item, routes, links, limits, bandwidth):
    def usable(route):
        return all(limits[j] is None or bandwidth <= limits[j] for j in route.links)

    if not any(usable(r) for r in routes):
        worst = min((limits[j], links[j].id) for r in routes for j in r.links
                    if limits[j] is not None)
        reader.add(line_of(m, "bandwidth"), item,
                   f"bandwidth {bandwidth} fits no route: every route has a link that "
                   f"cannot hold it (e.g. link '{worst[1]}' with at most {worst[0]} units)")
