"""Sizing for net value: maximise value carried minus cost (Moe's principle on a network).

Moe's principle for one trunk group: add circuits while the value of the traffic the next
circuit carries, ``v a (E(a, n) - E(a, n + 1))``, is at least its cost. On a network the
value of a call is shared by the links of its route and the loads are thinned, so the plan
starts from Moe's size per link (at the un-thinned load, with the route value split evenly
over its links) and then a local search adds or removes one module at a time while
``sum_d value_d x carried_d - cost`` under the chosen evaluation increases.

The plan's net value is compared with an upper bound (:func:`objective_bound`), which gives
the gap reported for this objective. No target is enforced.

References
----------
.. [1] A. Jensen, "Moe's principle: an econometric investigation intended as an aid in
   dimensioning and managing telephone plant", Copenhagen Telephone Company (1950).
.. [2] E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell System
   Technical Journal 51 (1972) 951-953.
"""

from __future__ import annotations

import time

import numpy as np

from netdim.dimension._lp import SolveStatus, add_route_flows, solve
from netdim.dimension.choices import SizingChoices, first_route_loads
from netdim.dimension.local_search import CachedEvaluator, evaluation_method
from netdim.dimension.options import silent
from netdim.dimension.plan import Baseline, Plan, make_plan
from netdim.erlang import erlang_b, moe_servers
from netdim.vocabulary import PlanStatus

__all__ = ["size_for_net_value", "objective", "objective_bound", "check_values"]

#: Secants of a link's carried-load curve stop where its blocking falls below this.
_NEGLIGIBLE = 1e-10


def check_values(network) -> None:
    """Raise ValueError naming the demands without a ``value`` (net value needs them all)."""
    missing = [d.id for d in network.demands if d.value is None]
    if missing or not network.demands:
        shown = ", ".join(f"'{m}'" for m in missing[:5])
        more = f" and {len(missing) - 5} more" if len(missing) > 5 else ""
        many = len(missing) > 1
        what = (f"demand{'s' if many else ''} {shown}{more} {'have' if many else 'has'} no "
                "value" if missing else "no demands")
        raise ValueError(f"objective 'net-value': {what}; give every demand a value "
                         "(per erlang carried), or size for cost")


def objective(network, choices, ev, k) -> float:
    """Value carried minus cost (demands without a value count for nothing)."""
    value = np.array([0.0 if d.value is None else float(d.value) for d in network.demands])
    return float(np.sum(value * ev.carried)) - choices.cost(k)


def objective_bound(network, choices, model="fixed-point", solver="highs", mip_gap=1e-6,
                    time_limit=None):
    """An upper bound on value carried minus cost over every integer plan.

    Returns ``(bound, kind)``.

    Notes
    -----
    A MILP relaxation: per demand and usable route a carried traffic ``x >= 0``, the
    demand's total at most its offered traffic ``A``; on every link the traffic its routes
    carry (times bandwidth and holding ratio) at most ``h_j``; maximise ``sum value x`` minus
    the cost of the modules (and fixed costs of links built new). Two caps on ``h_j``:

    - *Any model:* a loss system never carries more than its capacity, ``h_j <= n_j``.
    - *Single-rate, fixed-point or conservative model:* the load a link is offered is at
      most its un-thinned load ``U_j`` (every route's traffic in full; under alternate
      routing each route offered at most the demand's whole traffic), and an Erlang link's
      carried load ``a (1 - E(a, n))`` grows with ``a``. A trunk-reservation link carries
      no more than the Erlang link of the same total load (its arrival rates are lower in
      the reserved states, so its occupancy is stochastically smaller; common practice, no
      source). So ``h_j <= U_j (1 - E(U_j, n_j))``, which is concave in integer ``n_j``
      (E is convex, Messerli 1972): its secants between consecutive module counts, extended,
      lie above it at every integer point and are exact at their ends, so they are valid
      linear cuts.

    Every plan, with the carried traffic of each route under the model, is feasible for the
    relaxation with the same objective, so the relaxation's optimum (the solver's proven
    bound on it) bounds the objective of every plan.
    """
    import pulp  # about 0.25 s to import: only sizing needs it

    nl = choices.n_links
    alt = network.routing.policy == "alternate"
    curve = model in ("fixed-point", "conservative") and not network.is_multirate
    prob = pulp.LpProblem("economic_bound", pulp.LpMinimize)
    flows, usage = add_route_flows(prob, network, alt)
    # every route offered its demand's whole traffic: coefficient times that traffic
    traffic = {id(x): d.traffic for d, xs in zip(network.demands, flows, strict=True)
               for x in xs}
    unthinned = np.array([sum(f * traffic[id(x)] for x, f in terms) for terms in usage])
    value_terms = []
    for d, xs in zip(network.demands, flows, strict=True):
        if xs:
            prob += pulp.lpSum(xs) <= float(d.traffic)
            if d.value:
                value_terms += [(x, -float(d.value)) for x in xs]
    cost_terms = []
    n_cuts = 0
    for j in range(nl):
        if not usage[j]:
            continue
        inst, mod = int(choices.installed[j]), int(choices.module[j])
        kmax = int(choices.max_modules[j])
        k = prob.add_variable(f"k{j}", lowBound=0, upBound=kmax, cat=pulp.LpInteger)
        h = prob.add_variable(f"h{j}", lowBound=0)
        prob += pulp.LpAffineExpression(usage[j]) <= h
        prob += pulp.LpAffineExpression([(h, 1.0), (k, -float(mod))]) <= float(inst)
        cost_terms.append((k, float(choices.cost_per_module[j])))
        if choices.fixed_cost[j] > 0 and inst == 0:
            z = prob.add_variable(f"z{j}", cat=pulp.LpBinary)
            prob += pulp.LpAffineExpression([(k, 1.0), (z, -float(kmax))]) <= 0
            cost_terms.append((z, float(choices.fixed_cost[j])))
        a = unthinned[j]
        if curve and a > 0:
            prob += h <= float(a)
            # carried a (1 - E(a, n)) at n = inst + mod k, k = 0 .. where E is negligible
            ks = [0]
            carried = [a * (1.0 - float(erlang_b(a, inst)))]
            while ks[-1] < kmax and carried[-1] < a * (1.0 - _NEGLIGIBLE):
                ks.append(ks[-1] + 1)
                carried.append(a * (1.0 - float(erlang_b(a, inst + mod * ks[-1]))))
            for i in range(len(ks) - 1):
                slope = carried[i + 1] - carried[i]
                prob += pulp.LpAffineExpression([(h, 1.0), (k, -slope)]) <= float(
                    carried[i] - slope * ks[i])
                n_cuts += 1
    prob += pulp.LpAffineExpression(cost_terms + value_terms)
    out = solve(prob, solver, mip_gap=mip_gap, time_limit=time_limit)
    if out.status is not SolveStatus.OPTIMAL or not out.has_solution:
        return float("inf"), "none (the bound MILP did not solve)"
    low = out.bound
    if not np.isfinite(low):
        return float("inf"), "none (no proven bound)"
    kind = ("MILP: carried <= Erlang carried at un-thinned loads" if curve
            else "MILP: capacity >= carried load")
    return -float(low), kind


def size_for_net_value(network, choices: SizingChoices, *, model="fixed-point",
                       solver="highs", base: Baseline | None = None, progress=None,
                       t_start=None, max_evals=2000) -> Plan:
    """Plan maximising value carried minus cost; see the module notes.

    Raises
    ------
    ValueError
        A demand without a ``value``.
    """
    check_values(network)
    t_start = time.perf_counter() if t_start is None else t_start
    progress = progress or silent
    nl = choices.n_links
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
        per_circuit = choices.cost_per_module[used] / choices.module[used]
        n = np.zeros(nl, np.int64)
        n[used] = np.asarray(moe_servers(loads[used], per_circuit, v), dtype=np.int64)
        k = np.where(np.isin(np.arange(nl), used),
                     np.minimum(choices.modules_for(n), choices.max_modules), 0)
    evaluator = CachedEvaluator(network, choices, evaluation_method(model))
    best = objective(network, choices, evaluator(k), k)
    progress(None, f"net value: Moe start, {best:g}")

    def moves():
        # One module up or down on a link; then, on small networks, on two links at once
        # (the objective couples links through thinning, so single steps can stall).
        for j in np.argsort(-choices.cost_per_module, kind="stable"):
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
            if np.any(trial < 0) or np.any(trial > choices.max_modules):
                continue
            val = objective(network, choices, evaluator(trial), trial)
            if val > best + 1e-9:
                k, best, improved = trial, val, True
                break
            if evaluator.calls >= max_evals:
                break
    progress(None, f"net value: local search done, {best:g}, {evaluator.calls} evaluations")
    ev = evaluator(k)
    ub, kind = objective_bound(network, choices, model=model, solver=solver)
    ub = max(ub, best)
    gap = (ub - best) / abs(ub) if np.isfinite(ub) and abs(ub) > 1e-12 else (
        0.0 if np.isfinite(ub) else 1.0)
    if base is None:
        base = Baseline(choices.capacity(k), choices.cost(k))
    return make_plan(
        network, network, choices, k, ev, lower_bound=0.0, gap=gap,
        status=PlanStatus.ECONOMIC,
        message=(f"sized for net value: value carried minus cost {best:g} under the {model} "
                 f"model, upper bound {ub:g} ({kind}), gap {100 * gap:.2f}%; blocking "
                 "targets are not enforced"),
        iterations=1, solver="local search", seconds=time.perf_counter() - t_start,
        baseline=base, model=model, objective="net-value",
        details={"objective": best, "objective_bound": ub, "bound": kind,
                 "evaluations": evaluator.calls},
    )
