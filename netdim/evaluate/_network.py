"""What every evaluator reads from a network: capacities checked once, labels, route groups.

A :class:`~netdim.model.Network` is immutable, so figures derived from it (its own
capacities, its ids, the arrays an evaluator prepares) are built on first use and kept in
the network's private ``_memo`` dict: a sizer that evaluates one network hundreds of times
walks its link and demand objects once. Nothing here depends on capacities passed in.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from netdim._arrays import frozen

__all__ = ["built_network", "resolve_capacities", "Labels", "labels", "memo", "route_groups"]


def memo(network, key: str, build: Callable[[Any], Any]):
    """``build(network)``, computed once per network and kept in its ``_memo``."""
    store = network._memo
    try:
        return store[key]
    except KeyError:
        value = store[key] = build(network)
        return value


@dataclass(frozen=True)
class Labels:
    """The per-demand and per-link figures every :class:`Evaluation` repeats.

    Attributes
    ----------
    demand_ids, link_ids : tuple of str
    offered : ndarray
        Offered traffic per demand, erlangs (read-only).
    target : ndarray
        Blocking target per demand (read-only).
    """

    demand_ids: tuple
    link_ids: tuple
    offered: np.ndarray
    target: np.ndarray

    @classmethod
    def from_network(cls, network) -> Labels:
        return cls(
            demand_ids=tuple(d.id for d in network.demands),
            link_ids=tuple(link.id for link in network.links),
            offered=frozen([d.traffic for d in network.demands]),
            target=frozen([d.target for d in network.demands]),
        )


def labels(network) -> Labels:
    """The network's :class:`Labels` (memoised)."""
    return memo(network, "evaluate.labels", Labels.from_network)


def _own_capacities(network) -> np.ndarray:
    return frozen(network.capacities(), np.int64)


def resolve_capacities(network, capacities=None) -> np.ndarray:
    """Capacities as a new int64 array in link order, from the argument or from the network.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link; default: the capacities in the network file.

    Returns
    -------
    ndarray of int64
        A fresh (writable) array.

    Raises
    ------
    ValueError
        Wrong length, negative, non-integer or non-finite values, or no capacities anywhere.
    """
    if capacities is None:
        return memo(network, "evaluate.capacities", _own_capacities).copy()
    caps = np.asarray(capacities)
    if caps.shape != (len(network.links),):
        raise ValueError(
            f"capacities: expected {len(network.links)} values (one per link), "
            f"got shape {caps.shape}"
        )
    if caps.dtype.kind == "f":
        bad = ~np.isfinite(caps) | (caps != np.round(caps))
        if bad.any():
            j = int(np.flatnonzero(bad)[0])
            raise ValueError(f"capacities: link '{network.links[j].id}' has non-integer "
                             f"capacity {float(caps[j])!r}")
        big = np.abs(caps) >= 2.0**62
        if big.any():
            j = int(np.flatnonzero(big)[0])
            raise ValueError(f"capacities: link '{network.links[j].id}' has capacity "
                             f"{float(caps[j])!r}, beyond 2**62")
    elif caps.dtype.kind == "O":
        # Python ints beyond int64 arrive as objects; say which link rather than overflow.
        try:
            caps = caps.astype(np.int64)
        except (OverflowError, TypeError, ValueError):
            raise ValueError("capacities: expected integers below 2**63 (one per link)") from None
    elif caps.dtype.kind not in "iub":
        raise ValueError(f"capacities: expected integers, got dtype {caps.dtype}")
    caps = caps.astype(np.int64)
    if np.any(caps < 0):
        j = int(np.flatnonzero(caps < 0)[0])
        raise ValueError(
            f"capacities: link '{network.links[j].id}' has negative capacity {int(caps[j])}"
        )
    return caps


def route_groups(route) -> list[tuple[float, tuple[int, ...]]]:
    """Group a route's links by holding time: ``[(holding, (link, ...)), ...]``.

    Links of the route with the same mean holding time are released together (one call on a
    telephone route frees every circuit at once); links with different means are released
    independently. Groups are in order of first appearance along the route.
    """
    groups: dict[float, list[int]] = {}
    for j, h in zip(route.links, route.holdings, strict=True):
        groups.setdefault(float(h), []).append(int(j))
    return [(h, tuple(links)) for h, links in groups.items()]


def built_network(network, capacities):
    """The network as built at ``capacities``: routes over a link of capacity 0 taken away.

    A link of capacity 0 is not built, so a route over it is not offered any call: the
    demand's next route takes its calls as first choice (no trunk reservation against them),
    as in the network the sizer evaluates when it leaves a link unbuilt. A demand whose every
    route crosses such a link keeps its routes, and all its calls are lost.

    Parameters
    ----------
    network : Network
    capacities : ndarray of int
        One per link (as from :func:`resolve_capacities`).

    Returns
    -------
    Network
        ``network`` itself when no route changes; else a copy, kept per set of unbuilt
        links in the network's memo (a search evaluates the same set many times).
    """
    zero = np.flatnonzero(np.asarray(capacities) == 0)
    if not len(zero):
        return network
    cache = memo(network, "evaluate.built", lambda _net: {})
    key = zero.tobytes()
    if key not in cache:
        if len(cache) > 64:
            cache.clear()
        cache[key] = _without_routes_over(network, set(zero.tolist()))
    return cache[key]


def _without_routes_over(network, gone):
    demands, changed = [], False
    for d in network.demands:
        routes = tuple(r for r in d.routes if not gone.intersection(r.links))
        if routes and len(routes) < len(d.routes):
            demands.append(replace(d, routes=routes))
            changed = True
        else:
            demands.append(d)
    return replace(network, demands=tuple(demands)) if changed else network
