"""The immutable network model: sites, links, demands and their routes.

A :class:`Network` is built once (by :mod:`netdim.netfile` or by hand) and never changed;
variants (other capacities, more traffic, a failed link) are new networks made with
:func:`dataclasses.replace` through the helpers below. Capacities travel separately as one
integer array in link order.

Units: traffic in erlangs, times in hours, capacity in units (circuits, spaces, seats).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

from netdim.errors import NetworkFileError
from netdim.routing import check_path, link_graph

__all__ = [
    "Site",
    "Link",
    "Route",
    "Demand",
    "Routing",
    "Network",
    "Incidence",
    "incidence",
    "POLICIES",
    "DayProfile",
]

#: Routing policies understood by every evaluator.
POLICIES = ("fixed", "alternate")


@dataclass(frozen=True)
class Site:
    """A place where links end and demands start or finish."""

    id: str
    name: str | None = None
    x: float | None = None
    y: float | None = None


@dataclass(frozen=True)
class Link:
    """An undirected resource of ``capacity`` units shared by every route over it.

    Attributes
    ----------
    id : str
    ends : tuple of str
        The two site ids.
    capacity : int or None
        Installed units; None when the file leaves it to the sizer.
    module : int
        Sizing step: capacity is a multiple of ``module`` (plus ``installed``).
    cost_per_module : float
    fixed_cost : float
        Cost of having the link at all (capacity > 0).
    max_capacity : int or None
        Upper bound when sizing.
    installed : int
        Capacity already in place (a brownfield plan may only add to it).
    length : float or None
        Optional length, used to order generated routes of equal hop count.
    reservation : int or None
        Units kept back from alternate-route calls on this link; None means the network's
        ``routing.reservation``.
    line : int or None
        Line of the network file the link was read from (for messages).
    min_capacity : int or None
        Design rule: a group the plan builds new (nothing installed) has at least this many
        units, or none at all; None or 0: no rule.
    """

    id: str
    ends: tuple[str, str]
    capacity: int | None = None
    module: int = 1
    cost_per_module: float = 1.0
    fixed_cost: float = 0.0
    max_capacity: int | None = None
    installed: int = 0
    length: float | None = None
    reservation: int | None = None
    line: int | None = field(default=None, compare=False)
    min_capacity: int | None = None


@dataclass(frozen=True)
class Route:
    """One way a demand's calls can travel: link indices in order, with holding times.

    Attributes
    ----------
    links : tuple of int
        Indices into ``Network.links``.
    holdings : tuple of float
        Mean holding time (hours) of a call on each link of the route, same length as
        ``links``. Equal to the demand's holding time unless the file overrides a step.
    """

    links: tuple[int, ...]
    holdings: tuple[float, ...]

    def __post_init__(self):
        if len(self.links) != len(self.holdings):
            raise ValueError("route: links and holdings differ in length")

    @property
    def hops(self) -> int:
        return len(self.links)


@dataclass(frozen=True)
class Demand:
    """Busy-hour traffic between two sites with its grade-of-service target.

    Attributes
    ----------
    id : str
    between : tuple of str
        Origin and destination site ids.
    traffic : float
        Offered traffic in erlangs (arrival rate per hour times ``holding``).
    holding : float
        Mean holding time in hours of the demand (1.0 when the file gives erlangs only).
    bandwidth : int
        Units held on every link of the route that carries a call.
    target : float
        End-to-end blocking target, in (0, 1).
    routes : tuple of Route
        Candidate routes, first = preferred.
    value : float or None
        Value per carried erlang (economic sizing); None when the demand has a target only.
    line : int or None
        Line of the network file (for messages; not compared).
    routes_generated : bool
        True when the routes were generated from the topology rather than given in the file
        (not compared).
    diversity : int
        Design rule: the plan keeps built every link of at least this many link-disjoint
        candidate routes of the demand (1: no rule beyond having a route).
    """

    id: str
    between: tuple[str, str]
    traffic: float
    holding: float = 1.0
    bandwidth: int = 1
    target: float = 0.01
    routes: tuple[Route, ...] = ()
    value: float | None = None
    line: int | None = field(default=None, compare=False)
    routes_generated: bool = field(default=False, compare=False)
    diversity: int = 1

    @property
    def rate(self) -> float:
        """Arrival rate in calls per hour."""
        return self.traffic / self.holding


@dataclass(frozen=True)
class Routing:
    """How calls choose among their routes.

    Attributes
    ----------
    policy : {'fixed', 'alternate'}
        ``fixed``: first route only. ``alternate``: routes tried in order; a later route only
        if every link on it keeps at least ``reservation`` units free after admitting the call.
    max_hops : int
        Longest generated route, in links.
    reservation : int
        Units kept back from alternate-route calls on each link (a link may override it).
    max_routes : int or None
        Most candidate routes generated per demand (None: all up to ``max_hops``).
    """

    policy: str = "fixed"
    max_hops: int = 2
    reservation: int = 0
    max_routes: int | None = None


@dataclass(frozen=True)
class Network:
    """A network of sites, links and demands. Immutable.

    Attributes
    ----------
    name : str
    sites, links, demands : tuples of Site, Link, Demand
    routing : Routing
    default_target : float
    source : str or None
        Path of the file it was read from, for messages (not compared).
    default_holding : float
        Holding time (hours) of demands that give none (the file's ``defaults.holding``).
    extra : dict
        Top-level fields of the file that netdim keeps but does not interpret.
    """

    name: str
    sites: tuple[Site, ...]
    links: tuple[Link, ...]
    demands: tuple[Demand, ...]
    routing: Routing = field(default_factory=Routing)
    default_target: float = 0.01
    source: str | None = field(default=None, compare=False)
    default_holding: float = 1.0
    extra: dict = field(default_factory=dict, compare=False, hash=False)
    #: Demand over the day (issue 20): None when every demand gives one busy-hour figure.
    day: DayProfile | None = None
    # Arrays the evaluators derive from this (immutable) network, built on first use and
    # kept with it, so a sizer's many evaluations of one network prepare them once. Owned
    # by netdim.evaluate; a copy made with dataclasses.replace starts empty.
    _memo: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    # -- look-ups ---------------------------------------------------------------------------
    @cached_property
    def _link_pos(self) -> dict[str, int]:
        return {link.id: i for i, link in enumerate(self.links)}

    @cached_property
    def _site_pos(self) -> dict[str, int]:
        return {site.id: i for i, site in enumerate(self.sites)}

    def link_index(self, link_id: str) -> int:
        """Index of the link with id ``link_id``; KeyError naming it if absent."""
        try:
            return self._link_pos[link_id]
        except KeyError:
            raise KeyError(f"link '{link_id}' is not defined") from None

    def site_index(self, site_id: str) -> int:
        try:
            return self._site_pos[site_id]
        except KeyError:
            raise KeyError(f"site '{site_id}' is not defined") from None

    @property
    def link_ids(self) -> tuple[str, ...]:
        return tuple(link.id for link in self.links)

    @property
    def demand_ids(self) -> tuple[str, ...]:
        return tuple(d.id for d in self.demands)

    @property
    def is_multirate(self) -> bool:
        return any(d.bandwidth != 1 for d in self.demands)

    @property
    def has_holding_overrides(self) -> bool:
        return any(
            h != d.holding for d in self.demands for r in d.routes for h in r.holdings
        )

    def reservations(self) -> np.ndarray:
        """Reservation level of every link, in link order (int array)."""
        base = self.routing.reservation
        return np.array(
            [base if link.reservation is None else link.reservation for link in self.links],
            dtype=np.int64,
        )

    # -- capacities -------------------------------------------------------------------------
    def capacities(self) -> np.ndarray:
        """Installed capacities from the file, in link order.

        Raises
        ------
        ValueError
            When a link has no capacity (the file leaves it to the sizer).
        """
        missing = [link.id for link in self.links if link.capacity is None]
        if missing:
            more = f" (and {len(missing) - 1} more)" if len(missing) > 1 else ""
            raise ValueError(
                f"link '{missing[0]}'{more} has no capacity: give one in the file, "
                "pass capacities, or size the network first"
            )
        return np.array([link.capacity for link in self.links], dtype=np.int64)

    def with_capacities(self, capacities) -> Network:
        """A copy whose links carry ``capacities`` (one integer per link, in link order)."""
        caps = np.asarray(capacities)
        if caps.shape != (len(self.links),):
            raise ValueError(
                f"capacities: expected {len(self.links)} values, got shape {caps.shape}"
            )
        links = tuple(
            replace(link, capacity=int(c)) for link, c in zip(self.links, caps, strict=True)
        )
        return replace(self, links=links)

    def scaled(self, factor: float) -> Network:
        """A copy with every demand's traffic multiplied by ``factor`` (traffic growth)."""
        if not factor >= 0:
            raise ValueError(f"factor: must be >= 0, got {factor!r}")
        demands = tuple(replace(d, traffic=d.traffic * factor) for d in self.demands)
        day = self.day if self.day is None else replace(
            self.day, rates=tuple(tuple(r * factor for r in row) for row in self.day.rates))
        return replace(self, demands=demands, day=day)

    def usable_links(self) -> np.ndarray:
        """Per link (bool array), whether a route the routing policy uses crosses it: every
        route under alternate routing, the first one under fixed routing."""
        alt = self.routing.policy == "alternate"
        used = np.zeros(len(self.links), bool)
        for d in self.demands:
            for r in (d.routes if alt else d.routes[:1]):
                used[list(r.links)] = True
        return used

    def without_links(self, ids) -> Network | None:
        """A copy with every route over a link in ``ids`` (link ids) taken away, as when
        those links are not built; None when some demand would be left with no route.

        Raises
        ------
        KeyError
            A link id that is not defined.
        """
        gone = {self.link_index(i) for i in ids}
        if not gone:
            return self
        demands = []
        for d in self.demands:
            routes = tuple(r for r in d.routes if not gone & set(r.links))
            if not routes:
                return None
            demands.append(replace(d, routes=routes))
        return replace(self, demands=tuple(demands))

    def to_graph(self):
        """The sites and links as a :class:`networkx.MultiGraph`.

        Nodes carry the site attributes; edges are keyed by link id and carry ``index`` (the
        link's position), ``capacity``, ``length`` and ``cost_per_module`` (built on
        :func:`netdim.routing.link_graph`).
        """
        g = link_graph(self.links)
        g.graph["name"] = self.name
        for s in self.sites:
            g.add_node(s.id, name=s.name, x=s.x, y=s.y)
        for link in self.links:
            g.edges[link.ends[0], link.ends[1], link.id]["capacity"] = link.capacity
        return g

    # -- checks and summaries -----------------------------------------------------------------
    def validate(self) -> None:
        """Check what a network built in Python could get wrong and a file reader would not.

        Checks: ids unique; links join two distinct known sites; every demand joins two
        distinct known sites and has at least one route; every route is a loop-free path
        between the demand's ends (:func:`netdim.routing.check_path`) with a positive,
        finite holding time per link; traffic and targets in range.

        Raises
        ------
        NetworkFileError
            One line per problem, ``NAME: ITEM: problem`` (NAME is ``source`` when set).
        """
        where = self.source or f"network '{self.name}'"
        problems = []

        def add(item, text):
            problems.append(f"{where}: {item}: {text}")

        site_ids = set()
        for s in self.sites:
            if s.id in site_ids:
                add(f"site '{s.id}'", "duplicate id")
            site_ids.add(s.id)
        link_ids = set()
        for link in self.links:
            item = f"link '{link.id}'"
            if link.id in link_ids:
                add(item, "duplicate id")
            link_ids.add(link.id)
            if len(link.ends) != 2 or link.ends[0] == link.ends[1]:
                add(item, f"ends must be two distinct sites, got {link.ends!r}")
            elif not set(link.ends) <= site_ids:
                add(item, f"ends {list(link.ends)} name a site that is not defined")
        seen = set()
        n_links = len(self.links)
        for d in self.demands:
            item = f"demand '{d.id}'"
            if d.id in seen:
                add(item, "duplicate id")
            seen.add(d.id)
            if len(d.between) != 2 or d.between[0] == d.between[1] or not (
                    set(d.between) <= site_ids):
                add(item, f"between must be two distinct known sites, got {d.between!r}")
                continue
            if not (math.isfinite(d.traffic) and d.traffic >= 0):
                add(item, f"traffic must be a finite number >= 0, got {d.traffic!r}")
            if not 0 < d.target < 1:
                add(item, f"target must be in (0, 1), got {d.target!r}")
            if not d.routes:
                add(item, "has no route")
            for r, route in enumerate(d.routes, start=1):
                if not route.links or not all(0 <= j < n_links for j in route.links):
                    add(f"{item}: route {r}", "link indices must be in "
                        f"0..{n_links - 1}, got {list(route.links)}")
                    continue
                problem = check_path(self.links, route.links, d.between)
                if problem is not None:
                    add(f"{item}: route {r}", problem)
                if not all(math.isfinite(h) and h > 0 for h in route.holdings):
                    add(f"{item}: route {r}", "holding times must be finite and > 0")
        if problems:
            raise NetworkFileError(problems)

    def summary(self) -> dict:
        """Counts and totals, as ``netdim check`` shows them.

        Returns
        -------
        dict
            ``name``, ``source``, ``sites``, ``links``, ``demands``, ``routes`` (all
            candidate routes), ``routes_generated`` / ``routes_given`` (routes of demands
            whose routes were generated / given in the file), ``demands_generated`` (demands
            with generated routes), ``longest_route`` (links), ``longest_route_given`` and
            ``longest_route_generated`` (links; 0 when there are none), ``offered_traffic``
            (total erlangs), ``policy``, ``max_hops`` (the limit on generated routes),
            ``reservation``, ``max_routes``, ``links_without_capacity`` (ids),
            ``capacity_total``, ``multirate``, ``holding_overrides``, ``economic`` (demands
            with a value).
        """
        gen = [d for d in self.demands if d.routes_generated]
        routes_gen = sum(len(d.routes) for d in gen)
        routes_all = sum(len(d.routes) for d in self.demands)

        def longest(demands):
            return max((rt.hops for d in demands for rt in d.routes), default=0)

        r = self.routing
        return {
            "name": self.name,
            "source": self.source,
            "sites": len(self.sites),
            "links": len(self.links),
            "demands": len(self.demands),
            "routes": routes_all,
            "routes_generated": routes_gen,
            "routes_given": routes_all - routes_gen,
            "demands_generated": len(gen),
            "longest_route": longest(self.demands),
            "offered_traffic": float(sum(d.traffic for d in self.demands)),
            "policy": r.policy,
            "max_hops": r.max_hops,
            "reservation": r.reservation,
            "max_routes": r.max_routes,
            "links_without_capacity": [k.id for k in self.links if k.capacity is None],
            "capacity_total": int(sum(k.capacity or 0 for k in self.links)),
            "multirate": self.is_multirate,
            "holding_overrides": self.has_holding_overrides,
            "economic": sum(1 for d in self.demands if d.value is not None),
            "longest_route_given": longest(d for d in self.demands if not d.routes_generated),
            "longest_route_generated": longest(gen),
        }

    def route_listing(self) -> list[dict]:
        """Every demand's routes in preference order, by link id.

        Returns
        -------
        list of dict
            One per demand: ``demand``, ``between``, ``generated`` (bool), ``routes``: a
            list of ``{"links": [ids], "holdings": [hours per link]}``.
        """
        ids = self.link_ids
        return [
            {
                "demand": d.id,
                "between": list(d.between),
                "generated": bool(d.routes_generated),
                "routes": [{"links": [ids[j] for j in rt.links],
                            "holdings": [float(h) for h in rt.holdings]} for rt in d.routes],
            }
            for d in self.demands
        ]


@dataclass(frozen=True)
class Incidence:
    """Every (demand, route, link) step of a network as flat arrays (COO form).

    One entry per step of every candidate route of every demand. Evaluators and the sizer
    build their sparse matrices from these arrays instead of looping over demands.

    Attributes
    ----------
    route_demand : ndarray of int, shape (n_routes,)
        Demand index of each route (routes numbered demand by demand, in preference order).
    route_rank : ndarray of int, shape (n_routes,)
        Position of the route in its demand's list (0 = first choice).
    step_route, step_link : ndarray of int, shape (n_steps,)
        Route and link index of each step.
    step_factor : ndarray of float, shape (n_steps,)
        Holding time on this step divided by the demand's holding time: the link is offered
        ``traffic * step_factor`` erlangs of this route's admitted calls.
    bandwidth : ndarray of int, shape (n_demands,)
    traffic : ndarray of float, shape (n_demands,)
    first_route : ndarray of int, shape (n_demands + 1,)
        Routes of demand d are ``first_route[d]:first_route[d + 1]``.
    n_links : int
    """

    route_demand: np.ndarray
    route_rank: np.ndarray
    step_route: np.ndarray
    step_link: np.ndarray
    step_factor: np.ndarray
    bandwidth: np.ndarray
    traffic: np.ndarray
    first_route: np.ndarray
    n_links: int

    @property
    def n_routes(self) -> int:
        return len(self.route_demand)

    def matrix(self, values=None):
        """Routes x links sparse matrix (CSR) with ``values`` per step (default 1)."""
        from scipy import sparse  # heavy, and only this method needs it

        vals = np.ones(len(self.step_link)) if values is None else values
        return sparse.csr_matrix(
            (vals, (self.step_route, self.step_link)), shape=(self.n_routes, self.n_links)
        )


def incidence(network: Network, first_only: bool = False) -> Incidence:
    """Flatten a network's routes into an :class:`Incidence`.

    Parameters
    ----------
    network : Network
    first_only : bool
        Keep only each demand's first route (fixed routing).
    """
    route_demand, route_rank, step_route, step_link, step_factor = [], [], [], [], []
    first_route = [0]
    r = 0
    for d_idx, d in enumerate(network.demands):
        routes = d.routes[:1] if first_only else d.routes
        for k, route in enumerate(routes):
            route_demand.append(d_idx)
            route_rank.append(k)
            for j, h in zip(route.links, route.holdings, strict=True):
                step_route.append(r)
                step_link.append(j)
                step_factor.append(h / d.holding)
            r += 1
        first_route.append(r)

    def arr(x, dtype):
        a = np.asarray(x, dtype=dtype)
        a.setflags(write=False)
        return a

    return Incidence(
        route_demand=arr(route_demand, np.int64),
        route_rank=arr(route_rank, np.int64),
        step_route=arr(step_route, np.int64),
        step_link=arr(step_link, np.int64),
        step_factor=arr(step_factor, float),
        bandwidth=arr([d.bandwidth for d in network.demands], np.int64),
        traffic=arr([d.traffic for d in network.demands], float),
        first_route=arr(first_route, np.int64),
        n_links=len(network.links),
    )


@dataclass(frozen=True)
class DayProfile:
    """Demand that varies over the day: one arrival rate per demand and period.

    Attributes
    ----------
    rates : tuple of tuple of float
        Arrivals per hour, one row per demand (network order), one value per period; a
        demand the file gives one ``rate`` or ``traffic`` for repeats it in every period.
    period : float
        Hours per period (one clock for the whole network).
    cyclic : bool
        The day repeats: the state at its start equals the state at its end.
    start : tuple of int
        Calls of each demand in progress at the start of the day (all 0 when cyclic).
    target_basis : tuple of str
        Per demand, what its ``target`` applies to: ``'peak'`` (the worst period) or
        ``'day'`` (the share of the day's arrivals lost).
    """

    rates: tuple[tuple[float, ...], ...]
    period: float = 1.0
    cyclic: bool = False
    start: tuple[int, ...] = ()
    target_basis: tuple[str, ...] = ()

    @property
    def n_periods(self) -> int:
        return len(self.rates[0]) if self.rates else 0

    def rate_array(self) -> np.ndarray:
        """Rates as a (demands, periods) float array."""
        return np.array(self.rates, dtype=float).reshape(len(self.rates), -1)
