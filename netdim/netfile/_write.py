"""Writing a network as a fresh network file (see :mod:`netdim.netfile`).

Private to :mod:`netdim.netfile`. This writer serves networks built in Python, which have no
text of their own; a network read from a file is written back by :mod:`netdim.netfile._plan`,
which keeps the file's text.
"""

from __future__ import annotations

import os
import pathlib
import tempfile

import numpy as np
import yaml

from netdim.model import Demand, Link, Network, Route
from netdim.routing import RouteFinder, link_graph

__all__ = ["write_network", "write_atomic", "check_capacities", "dumps_network",
           "network_to_dict", "plain_data"]


def plain_data(value):
    """Strip the line-number containers (for ``Network.extra``)."""
    if isinstance(value, dict):
        return {k: plain_data(v) for k, v in value.items()}
    if isinstance(value, list):
        return [plain_data(v) for v in value]
    return value


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
        network = network.with_capacities(check_capacities(network, capacities))
    out = {"name": network.name}
    out.update(plain_data(network.extra))
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
    finder = RouteFinder(graph, r.max_hops, r.max_routes)
    ids = network.link_ids
    out["demands"] = [_demand_dict(network, d, finder, ids) for d in network.demands]
    if network.day is not None:
        _day_fields(out, network.day)
    return out


def _day_fields(out, day):
    """The day profile (issue 20): rates for every demand, the clock in defaults."""
    out["defaults"]["period"] = _num(day.period)
    if day.cyclic:
        out["defaults"]["cyclic"] = True
    for i, entry in enumerate(out["demands"]):
        entry.pop("traffic", None)
        entry["rates"] = _FlowList(_num(x) for x in day.rates[i])
        if day.start and day.start[i]:
            entry["start"] = int(day.start[i])
        if day.target_basis and day.target_basis[i] != "peak":
            entry["target_basis"] = day.target_basis[i]


def check_capacities(network, capacities):
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
    if link.min_capacity:
        entry["min_capacity"] = int(link.min_capacity)
    return entry


def _demand_dict(network, d: Demand, finder, ids) -> dict:
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
    if d.diversity != 1:
        entry["diversity"] = int(d.diversity)
    given = [tuple(ids[j] for j in route.links) for route in d.routes]
    plain = all(h == d.holding for route in d.routes for h in route.holdings)
    if not (plain and given == finder.routes(d.between[0], d.between[1])):
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

    Examples
    --------
    A network written with 12 circuits instead of its own 10, in a temporary directory,
    and read back.

    >>> import pathlib, tempfile
    >>> from netdim.netfile import loads_network, read_network
    >>> net = loads_network('''
    ... name: Two hamlets
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... ''')
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     path = pathlib.Path(tmp, "plan.yaml")
    ...     write_network(net, path, capacities=[12])
    ...     again = read_network(path)
    ...     head = path.read_text(encoding="utf-8").splitlines()[0]
    >>> head, again.name, again.links[0].capacity, again.demands[0].traffic
    ('# netdim network file: Two hamlets', 'Two hamlets', 12, 5.0)
    """
    write_atomic(path, dumps_network(network, capacities))


def write_atomic(path, text: str) -> None:
    """Write ``text`` to ``path`` whole or not at all (see :func:`write_network`, Notes).

    A new file gets mode 0666 less the umask (0644 under the usual umask 022); a file
    written over keeps its mode.
    """
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
