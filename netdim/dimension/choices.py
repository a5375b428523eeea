"""What a plan may choose per link (modules, bounds, costs), and the link loss tables.

Rules (documented here once, used by every part of the sizer):

- Capacity of link j is ``installed_j + module_j * k_j`` with integer ``k_j >= 0`` added
  modules. When ``installed`` is not a multiple of ``module`` the installed units stay as
  they are and modules are added on top (a brownfield plan never removes equipment).
- Cost of link j is ``cost_per_module_j * k_j`` plus ``fixed_cost_j`` when the link is built
  new, i.e. nothing is installed and the capacity is positive. A link with installed
  capacity already exists: its fixed cost is sunk and not charged again.
- ``max_capacity`` bounds the capacity: ``k_j <= floor((max_capacity - installed) / module)``.
- A link with a fixed cost and nothing installed may be left unbuilt (*droppable*).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim._arrays import frozen
from netdim.erlang import erlang_b_runs
from netdim.errors import ModelTooLargeError

__all__ = ["SizingChoices", "LossTable", "first_route_loads", "offered_bound_loads",
           "check_sizing_work", "DEFAULT_MAX_MODULES", "MAX_TABLE_UNITS", "MAX_TABLE_CELLS"]

#: Upper bound on added modules for a link without ``max_capacity`` (only to keep the
#: tables finite; sizes are found well below it).
DEFAULT_MAX_MODULES = 10**6
#: Most capacity units per link up to which Erlang B is tabulated (one recursion step each).
MAX_TABLE_UNITS = 1_000_000
#: Most module counts held in the loss tables of all links together (8 bytes each).
MAX_TABLE_CELLS = 20_000_000


@dataclass(frozen=True)
class SizingChoices:
    """Per-link choices of a plan (arrays in link order, read-only).

    Attributes
    ----------
    installed, module : ndarray of int
    cost_per_module, fixed_cost : ndarray of float
    max_modules : ndarray of int
        Most modules that may be added.
    """

    installed: np.ndarray
    module: np.ndarray
    cost_per_module: np.ndarray
    fixed_cost: np.ndarray
    max_modules: np.ndarray

    def __post_init__(self):
        for name in ("installed", "module", "max_modules"):
            object.__setattr__(self, name, frozen(getattr(self, name), np.int64))
        for name in ("cost_per_module", "fixed_cost"):
            object.__setattr__(self, name, frozen(getattr(self, name), float))

    @classmethod
    def from_network(cls, network) -> SizingChoices:
        """Read the choices from the links of ``network``.

        Raises
        ------
        ValueError
            A module below 1, negative installed capacity or costs, or a ``max_capacity``
            below the installed capacity (naming the link).
        """
        inst, mod, cpm, fix, kmax = [], [], [], [], []
        for link in network.links:
            if int(link.module) < 1:
                raise ValueError(f"link '{link.id}': module must be >= 1, got {link.module!r}")
            if int(link.installed) < 0:
                raise ValueError(
                    f"link '{link.id}': installed must be >= 0, got {link.installed!r}"
                )
            if link.cost_per_module < 0 or link.fixed_cost < 0:
                raise ValueError(f"link '{link.id}': costs must be >= 0")
            if link.max_capacity is None:
                km = DEFAULT_MAX_MODULES
            else:
                if link.max_capacity < link.installed:
                    raise ValueError(
                        f"link '{link.id}': max_capacity {link.max_capacity} is below the "
                        f"installed capacity {link.installed}"
                    )
                km = (int(link.max_capacity) - int(link.installed)) // int(link.module)
            inst.append(int(link.installed))
            mod.append(int(link.module))
            cpm.append(float(link.cost_per_module))
            fix.append(float(link.fixed_cost))
            kmax.append(km)
        return cls(installed=inst, module=mod, cost_per_module=cpm, fixed_cost=fix,
                   max_modules=kmax)

    @property
    def n_links(self) -> int:
        return len(self.installed)

    @property
    def droppable(self) -> np.ndarray:
        """Per link: it has a fixed cost and nothing installed, so a plan may leave it out."""
        return (self.fixed_cost > 0) & (self.installed == 0)

    def capacity(self, modules) -> np.ndarray:
        """Capacity per link for ``modules`` added modules."""
        return self.installed + self.module * np.asarray(modules, dtype=np.int64)

    def link_costs(self, modules) -> np.ndarray:
        """Cost per link: added modules times their price, plus the fixed cost of a link
        built new."""
        k = np.asarray(modules, dtype=np.int64)
        built_new = (self.installed == 0) & (self.capacity(k) > 0)
        return self.cost_per_module * k + np.where(built_new, self.fixed_cost, 0.0)

    def cost(self, modules) -> float:
        """Total cost of ``modules``."""
        return float(self.link_costs(modules).sum())

    def modules_for(self, capacity) -> np.ndarray:
        """Fewest added modules giving at least ``capacity`` units (0 when installed suffices)."""
        need = np.asarray(capacity, dtype=np.int64) - self.installed
        return np.maximum(0, -(-need // self.module))


def first_route_loads(network) -> np.ndarray:
    """Load (capacity units) each link is offered by the demands' first routes, un-thinned."""
    load = np.zeros(len(network.links))
    for d in network.demands:
        if not d.routes:
            continue
        r = d.routes[0]
        for j, h in zip(r.links, r.holdings, strict=True):
            load[j] += d.traffic * (h / d.holding) * d.bandwidth
    return load


def offered_bound_loads(network) -> np.ndarray:
    """The most load (capacity units) each link can be offered: every route of every demand
    offered the demand's whole traffic."""
    load = np.zeros(len(network.links))
    for d in network.demands:
        for r in d.routes:
            for j, h in zip(r.links, r.holdings, strict=True):
                load[j] += d.traffic * (h / d.holding) * d.bandwidth
    return load


def _window_top(loads) -> np.ndarray:
    """Capacity above which a link's blocking at ``loads`` is taken as 0 (Erlang B there is
    below about 1e-20 of its value at the load itself)."""
    a = np.maximum(np.asarray(loads, dtype=float), 0.0)
    return np.ceil(a + 12 * np.sqrt(a) + 40).astype(np.int64)


def check_sizing_work(network, choices: SizingChoices) -> None:
    """Refuse, before any work, a network whose loss tables would be out of reach.

    Raises
    ------
    ModelTooLargeError
        A link whose load needs Erlang B beyond :data:`MAX_TABLE_UNITS` units, or tables of
        more than :data:`MAX_TABLE_CELLS` module counts in all (naming the link, the figure,
        the limit and the way round it).
    """
    loads = offered_bound_loads(network)
    if not len(loads):
        return
    if not np.all(np.isfinite(loads)):
        j = int(np.flatnonzero(~np.isfinite(loads))[0])
        raise ModelTooLargeError(f"link '{network.links[j].id}': offered load is not finite")
    top = _window_top(loads)
    j = int(np.argmax(top))
    if top[j] > MAX_TABLE_UNITS:
        raise ModelTooLargeError(
            f"link '{network.links[j].id}': a load of up to {loads[j]:.4g} erlangs needs "
            f"Erlang B up to about {int(top[j])} circuits, beyond the sizer's limit of "
            f"{MAX_TABLE_UNITS} per link; express traffic and capacity in larger units "
            "(e.g. one unit per 10 circuits)"
        )
    counts = np.maximum(top - choices.installed, 0) // choices.module + 1
    if counts.sum() > MAX_TABLE_CELLS:
        j = int(np.argmax(counts))
        raise ModelTooLargeError(
            f"network '{network.name}': sizing would tabulate {int(counts.sum())} module "
            f"counts over {len(loads)} links (link '{network.links[j].id}' alone "
            f"{int(counts[j])}), beyond the sizer's limit of {MAX_TABLE_CELLS}; give the "
            "busiest links larger modules"
        )


class LossTable:
    """``g_j(n) = -log(1 - E(load_j, n))`` at the capacities ``n = installed_j + module_j k``.

    Built with the stable Erlang B recursion ``E(n) = a E(n-1) / (n + a E(n-1))``
    [1]_ (:func:`netdim.erlang.erlang_b_runs`), every link at once, holding only each link's
    module counts up to the capacity
    where its blocking is negligible (above it g is taken as 0); ``log1p`` keeps the
    precision of small blockings. Capacities below the installed one are +inf (a plan never
    goes there).

    References
    ----------
    .. [1] D. L. Jagerman, "Some properties of the Erlang loss function", Bell System
       Technical Journal 53 (1974) 525-551.
    """

    def __init__(self, loads, installed=None, module=None):
        a = np.maximum(np.asarray(loads, dtype=float), 0.0)
        nl = len(a)
        inst = np.zeros(nl, np.int64) if installed is None else np.asarray(installed, np.int64)
        mod = np.ones(nl, np.int64) if module is None else np.asarray(module, np.int64)
        n1 = _window_top(a)
        if nl and int(n1.max()) > MAX_TABLE_UNITS:
            j = int(np.argmax(n1))
            raise ModelTooLargeError(
                f"loss table: a load of {a[j]:.4g} erlangs needs Erlang B up to about "
                f"{int(n1[j])} circuits, beyond the sizer's limit of {MAX_TABLE_UNITS}")
        count = np.where(n1 >= inst, (n1 - inst) // mod + 1, 0)
        start = np.concatenate([[0], np.cumsum(count)]).astype(np.int64)
        values = np.zeros(int(start[-1]))
        # Each link's recursion runs up to its own window only, so that one heavy link
        # among many light ones costs its own window, not the window times the links.
        if nl:
            values = erlang_b_runs(a, inst, mod, count)  # Erlang B at the module counts
            with np.errstate(divide="ignore"):  # capacity 0: E = 1, g = inf
                values = -np.log1p(-values)
        self.loads = a
        self.installed = inst
        self.module = mod
        self.n1 = n1
        self._start = start
        self._count = count
        self._values = values

    def g(self, j, n):
        """g of link j at capacities ``n`` (array or int)."""
        scalar = np.ndim(n) == 0
        n = np.atleast_1d(np.asarray(n, dtype=np.int64))
        out = self._lookup(np.full(len(n), int(j)), n)
        return float(out[0]) if scalar else out

    def g_all(self, caps) -> np.ndarray:
        """g of every link at its capacity ``caps[j]``."""
        caps = np.asarray(caps, dtype=np.int64)
        return self._lookup(np.arange(len(caps)), caps)

    def _lookup(self, links, n):
        inst, mod = self.installed[links], self.module[links]
        k, off = np.divmod(np.maximum(n - inst, 0), mod)
        out = np.where(n < inst, np.inf, 0.0)
        inside = (n >= inst) & (k < self._count[links])
        aligned = inside & (off == 0)
        out[aligned] = self._values[self._start[links[aligned]] + k[aligned]]
        odd = inside & (off != 0)
        if odd.any():  # not a module count of the link: Erlang B itself
            out[odd] = _g_direct(self.loads[links[odd]], n[odd])
        return out


def _g_direct(loads, n):
    e = erlang_b_runs(loads, n, np.zeros_like(n), np.ones_like(n))
    with np.errstate(divide="ignore"):  # E = 1 (no capacity): g = inf
        return -np.log1p(-e)
