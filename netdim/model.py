"""The immutable network model: sites, links, demands and their routes.

A :class:`Network` is built once (by :mod:`netdim.netfile` or by hand) and never changed;
variants (other capacities, more traffic, a failed link) are new networks made with
:func:`dataclasses.replace` through the helpers below. Capacities travel separately as one
integer array in link order.

Units: traffic in erlangs, times in hours, capacity in units (circuits, spaces, seats).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

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
        return replace(self, demands=demands)

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
        link's position), ``capacity``, ``length`` and ``cost_per_module``.
        """
        import networkx as nx

        g = nx.MultiGraph(name=self.name)
        for s in self.sites:
            g.add_node(s.id, name=s.name, x=s.x, y=s.y)
        for i, link in enumerate(self.links):
            g.add_edge(
                link.ends[0],
                link.ends[1],
                key=link.id,
                index=i,
                capacity=link.capacity,
                length=link.length,
                cost_per_module=link.cost_per_module,
            )
        return g


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
        from scipy import sparse

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
