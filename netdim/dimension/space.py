"""What a plan may choose per link (modules, bounds, costs) and the link loss tables.

Rules (documented here once, used by every part of the sizer):

- Capacity of link j is ``installed_j + module_j * k_j`` with integer ``k_j >= 0`` added
  modules. When ``installed`` is not a multiple of ``module`` the installed units stay as
  they are and modules are added on top (a brownfield plan never removes equipment).
- Cost of link j is ``cost_per_module_j * k_j`` plus ``fixed_cost_j`` when the link is built
  new, i.e. nothing is installed and the capacity is positive. A link with installed
  capacity already exists: its fixed cost is sunk and not charged again.
- ``max_capacity`` bounds the capacity: ``k_j <= floor((max_capacity - installed) / module)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["LinkSpace", "LossTable", "first_route_loads", "DEFAULT_MAX_MODULES"]

#: Upper bound on added modules for a link without ``max_capacity`` (only to keep the
#: tables finite; sizes are found well below it).
DEFAULT_MAX_MODULES = 10**6


@dataclass(frozen=True)
class LinkSpace:
    """Per-link choice space of a network (arrays in link order)."""

    installed: np.ndarray
    module: np.ndarray
    cost_per_module: np.ndarray
    fixed_cost: np.ndarray
    kmax: np.ndarray

    @classmethod
    def of(cls, network) -> LinkSpace:
        """Read the choice space from the links of ``network``.

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
        return cls(
            installed=np.array(inst, dtype=np.int64),
            module=np.array(mod, dtype=np.int64),
            cost_per_module=np.array(cpm, dtype=float),
            fixed_cost=np.array(fix, dtype=float),
            kmax=np.array(kmax, dtype=np.int64),
        )

    @property
    def n_links(self) -> int:
        return len(self.installed)

    def capacity(self, k) -> np.ndarray:
        return self.installed + self.module * np.asarray(k, dtype=np.int64)

    def link_costs(self, k) -> np.ndarray:
        k = np.asarray(k, dtype=np.int64)
        built_new = (self.installed == 0) & (self.capacity(k) > 0)
        return self.cost_per_module * k + np.where(built_new, self.fixed_cost, 0.0)

    def cost(self, k) -> float:
        return float(self.link_costs(k).sum())

    def modules_for(self, capacity) -> np.ndarray:
        """Fewest added modules giving at least ``capacity`` units (0 when installed suffices)."""
        need = np.asarray(capacity, dtype=np.int64) - self.installed
        return np.maximum(0, -(-need // self.module))


def first_route_loads(network, unthinned=True) -> np.ndarray:
    """Load (capacity units) each link is offered by the demands' first routes, un-thinned."""
    load = np.zeros(len(network.links))
    for d in network.demands:
        if not d.routes:
            continue
        r = d.routes[0]
        for j, h in zip(r.links, r.holdings, strict=True):
            load[j] += d.traffic * (h / d.holding) * d.bandwidth
    return load


class LossTable:
    """``g_j(n) = -log(1 - E(load_j, n))`` for n in a window ``n0_j .. n0_j + width - 1``.

    Built with the stable Erlang B recursion ``E(n) = a E(n-1) / (n + a E(n-1))``
    (Jagerman 1974), every link at once, storing only each link's window; ``log1p`` keeps
    the precision of small blockings. Values below the window are +inf (they are never
    wanted: the window starts where blocking is still above every budget), values above it
    are taken as 0.

    References
    ----------
    D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical
    Journal 53 (1974) 525-551.
    """

    def __init__(self, loads, installed=None, module=None):
        a = np.maximum(np.asarray(loads, dtype=float), 0.0)
        nl = len(a)
        inst = np.zeros(nl, np.int64) if installed is None else np.asarray(installed)
        mod = np.ones(nl, np.int64) if module is None else np.asarray(module)
        n0 = np.where(a < 50, 0, np.floor(0.3 * a)).astype(np.int64)
        n0 = np.minimum(n0, inst)
        n1 = np.ceil(a + 12 * np.sqrt(a) + 40).astype(np.int64)
        n1 = np.maximum(n1, inst + 2 * mod)
        width = int((n1 - n0).max()) + 1 if nl else 1
        table = np.full((width, nl), np.inf)
        e = np.ones(nl)
        top = int(n1.max()) if nl else 0
        cols = np.arange(nl)
        m = n0 == 0
        table[0, m] = np.inf
        for n in range(1, top + 1):
            ae = a * e
            e = ae / (n + ae)
            inside = (n >= n0) & (n <= n1)
            if inside.any():
                table[n - n0[inside], cols[inside]] = -np.log1p(-e[inside])
        self.loads = a
        self.n0 = n0
        self.n1 = n1
        self.table = table

    def g(self, j, n):
        """g of link j at capacities ``n`` (array or int)."""
        n = np.asarray(n, dtype=np.int64)
        i = n - self.n0[j]
        out = np.where(i < 0, np.inf, 0.0)
        ok = (i >= 0) & (n <= self.n1[j])
        if np.ndim(n) == 0:
            return float(self.table[i, j]) if ok else float(out)
        out[ok] = self.table[i[ok], j]
        return out

    def g_all(self, caps) -> np.ndarray:
        """g of every link at its capacity ``caps[j]``."""
        caps = np.asarray(caps, dtype=np.int64)
        i = caps - self.n0
        out = np.where(i < 0, np.inf, 0.0)
        ok = (i >= 0) & (caps <= self.n1)
        cols = np.flatnonzero(ok)
        out[cols] = self.table[i[cols], cols]
        return out
