"""Economic sizing: maximise value carried minus cost (Moe's principle on a network).

Moe's principle for one trunk group: add circuits while the value of the traffic the next
circuit carries, ``v a (E(a, n) - E(a, n + 1))``, is at least its cost. On a network the
value of a call is shared by the links of its route and the loads are thinned, so the plan
starts from Moe's size per link (at the un-thinned load, with the route value split evenly
over its links) and then a local search adds or removes one module at a time while
``sum_d value_d x carried_d - cost`` under the chosen evaluation increases.

References
----------
A. Jensen, "Moe's principle: an econometric investigation intended as an aid in
dimensioning and managing telephone plant", Copenhagen Telephone Company (1950).
"""

from __future__ import annotations

import time

import numpy as np

from netdim.dimension.plan import Plan
from netdim.dimension.polish import Evaluator
from netdim.dimension.space import first_route_loads

__all__ = ["size_economic", "objective"]


def objective(network, space, ev, k) -> float:
    """Value carried minus cost (demands without a value count for nothing)."""
    value = np.array([0.0 if d.value is None else float(d.value) for d in network.demands])
    return float(np.sum(value * ev.carried)) - space.cost(k)


def size_economic(network, space, model="fixed-point", progress=None, t_start=None,
                  baseline=None, solver="highs", max_evals=2000):
    """Plan maximising value carried minus cost; see the module notes."""
    from netdim.erlang import moe_servers

    t_start = time.perf_counter() if t_start is None else t_start
    say = progress or (lambda s: None)
    nl = space.n_links
    loads = first_route_loads(network)
    vsum = np.zeros(nl)
    wsum = np.zeros(nl)
    for d in network.demands:
        if not d.routes or d.value is None:
            continue
        r = d.routes[0]
        for j in r.links:
            vsum[j] += d.traffic * float(d.value) / r.hops
            wsum[j] += d.traffic
    k = np.zeros(nl, np.int64)
    used = np.flatnonzero((loads > 0) & (wsum > 0))
    if len(used):
        v = vsum[used] / wsum[used]
        per_circuit = space.cost_per_module[used] / space.module[used]
        n = np.asarray(moe_servers(loads[used], per_circuit, v), dtype=np.int64)
        k[used] = np.minimum(space.modules_for(n), space.kmax[used])
    method = {"conservative": "conservative", "exact": "exact"}.get(model, "fixed-point")
    evaluator = Evaluator(network, space, method)
    best = objective(network, space, evaluator(k), k)
    say(f"economic: Moe start, objective {best:g}")
    def moves():
        # One module up or down on a link; then, on small networks, on two links at once
        # (the objective couples links through thinning, so single steps can stall).
        for j in np.argsort(-space.cost_per_module, kind="stable"):
            for step in (+1, -1):
                yield ((j, step),)
        if nl <= 30:
            for i in range(nl):
                for j in range(i + 1, nl):
                    for si, sj in ((1, -1), (-1, 1), (1, 1), (-1, -1)):
                        yield ((i, si), (j, sj))

    improved = True
    while improved and evaluator.calls < max_evals:
        improved = False
        for move in moves():
            trial = k.copy()
            for j, step in move:
                trial[j] += step
            if np.any(trial < 0) or np.any(trial > space.kmax):
                continue
            val = objective(network, space, evaluator(trial), trial)
            if val > best + 1e-9:
                k, best, improved = trial, val, True
                break
            if evaluator.calls >= max_evals:
                break
    say(f"economic: local search done, objective {best:g}, {evaluator.calls} evaluations")
    ev = evaluator(k)
    caps = space.capacity(k)
    cost = space.cost(k)
    base_caps, base_cost = baseline if baseline is not None else (caps, cost)
    return Plan(
        capacities=caps,
        modules=k,
        link_costs=space.link_costs(k),
        cost=cost,
        lower_bound=0.0,
        gap=1.0 if cost > 0 else 0.0,
        status="economic",
        message=(f"economic plan: value carried minus cost {best:g} under the {model} model "
                 "(no lower bound on cost in this mode; targets not enforced)"),
        evaluation=ev,
        iterations=1,
        solver="local search",
        seconds=time.perf_counter() - t_start,
        baseline_cost=base_cost,
        baseline_capacities=base_caps,
        dropped_links=tuple(link.id for j, link in enumerate(network.links)
                            if caps[j] == 0 and link.installed == 0),
        model=model,
        network=network.with_capacities(caps),
        details={"objective": best, "evaluations": evaluator.calls},
    )
