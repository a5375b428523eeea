"""The simple baseline every plan is compared with: each link sized alone.

Every link is given the fewest modules such that Erlang B at its un-thinned load (all the
first-route traffic over it) is at most the strictest ``target / hops`` of the demands whose
first route uses it; on a link carrying calls of several bandwidths, every class's
Kaufman-Roberts blocking is held to that share instead. Splitting a target evenly over
the hops is the old rule of thumb for a tandem connection (common practice, no source);
it ignores that links are shared and that loads are thinned, which is what the least-cost
sizer exploits.
"""

from __future__ import annotations

import numpy as np

from netdim.dimension.choices import SizingChoices, first_route_loads
from netdim.dimension.plan import Baseline
from netdim.erlang import servers_for
from netdim.linkmodels import kaufman_roberts

__all__ = ["baseline"]


def baseline(network, choices: SizingChoices | None = None) -> Baseline:
    """Capacities and cost of the per-link baseline.

    Parameters
    ----------
    network : Network
    choices : SizingChoices, optional

    Returns
    -------
    Baseline

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B")),),
    ...               (Demand("AB", ("A", "B"), 10.0, routes=(Route((0,), (1.0,)),)),))
    >>> b = baseline(net)
    >>> int(b.capacities[0]), b.cost   # Erlang B(10, 18) = 0.0071 <= 1 % < B(10, 17)
    (18, 18.0)
    """
    choices = SizingChoices.from_network(network) if choices is None else choices
    nl = choices.n_links
    loads = first_route_loads(network)
    share = np.full(nl, np.inf)
    bw = np.zeros(nl, np.int64)
    for d in network.demands:
        if not d.routes:
            continue
        r = d.routes[0]
        for j in r.links:
            share[j] = min(share[j], d.target / r.hops)
            bw[j] = max(bw[j], d.bandwidth)
    need = np.zeros(nl, np.int64)
    used = np.flatnonzero(np.isfinite(share))
    if len(used):
        n = np.asarray(servers_for(loads[used], share[used]), dtype=np.int64)
        need[used] = np.maximum(n, bw[used])
    _multirate(network, share, need)
    k = np.minimum(choices.modules_for(need), choices.max_modules)
    return Baseline(choices.capacity(k), choices.cost(k))


def _multirate(network, share, need):
    """Raise ``need`` on multi-rate links until every class meets ``share`` (Kaufman-Roberts)."""
    classes: dict[int, dict[int, float]] = {}
    for d in network.demands:
        if not d.routes:
            continue
        r = d.routes[0]
        for j, h in zip(r.links, r.holdings, strict=True):
            cl = classes.setdefault(j, {})
            cl[d.bandwidth] = cl.get(d.bandwidth, 0.0) + d.traffic * h / d.holding
    for j, cl in classes.items():
        if len(cl) < 2 and 1 in cl:
            continue
        bws = np.array(sorted(cl), dtype=np.int64)
        loads = np.array([cl[b] for b in bws])
        n = int(need[j])
        while np.max(kaufman_roberts(loads, bws, n)) > share[j]:
            n += 1
        need[j] = n
