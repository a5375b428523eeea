"""Lower bounds on the least cost of a plan meeting every target, and the choice among them.

Three bounds, each valid where :func:`lower_bound` uses it (proofs in
``docs/theory/lower-bounds.md``):

- :func:`carried_load_bound`: every link carries at most its capacity, every demand at least
  ``A (1 - t)``; with whole modules and the fixed cost of each link built. True of any plan
  under every model, but weak where blocking, not capacity, sets the size.
- :func:`thinned_load_bound`: fixed routing, one-unit calls, the reduced-load or
  conservative model: the secant MILP at the least load any plan meeting the targets can
  offer each link, ``A (1 - t)`` per route (``A`` on a one-link route, and under the
  conservative model). Where links may be left unbuilt, one MILP per choice of links to
  build, since that choice decides each demand's route.
- :func:`netdim.dimension.loss_flow_bound.loss_flow_bound`: alternate routing, one-unit
  calls.

Every solve has a deterministic work limit (nodes, rounds, choices of links), so one input
gives one bound on any machine; time is a safety stop and is reported when it fires.
"""

from __future__ import annotations

import itertools

import numpy as np

from netdim.dimension._lp import add_route_flows, solve
from netdim.dimension.choices import LossTable, SizingChoices
from netdim.dimension.loss_flow_bound import loss_flow_bound
from netdim.dimension.options import silent
from netdim.dimension.plan import Bound
from netdim.dimension.secant_milp import LARGE_NODES, MilpResult, is_large, solve_secant_milp
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED
from netdim.evaluate.peaked_fixed_point import applies as peaked_applies

__all__ = ["lower_bound", "carried_load_bound", "thinned_load_bound", "fixed_costs",
           "MAX_BUILD_CHOICES", "BOUND_NODES", "CARRIED_NODES", "NO_PEAKED_BOUND"]

#: Most choices of links to build for which :func:`thinned_load_bound` solves a MILP each.
MAX_BUILD_CHOICES = 64
#: Branch-and-bound nodes of each bound MILP (a deterministic work limit).
BOUND_NODES = 2000
#: Branch-and-bound nodes of the carried-load MILP: its root bound comes early, and on the
#: 20-site benchmark mesh 2,000 nodes took minutes for 0.3 %.
CARRIED_NODES = 200


#: What :func:`lower_bound` gives under the peaked model with overflow: no bound. The
#: bounds here rest on each link carrying at most its capacity in the model's own figures,
#: true of Erlang's formula but not proven for the peaked link model (its split of a loss
#: among streams keeps the lost traffic only to first order); nor does a plan meeting the
#: targets under the peaked model meet them under the plain fixed point. Listing every
#: cheaper plan (small networks) still gives a true bound: it evaluates them under the model.
NO_PEAKED_BOUND = Bound(0.0, "no lower bound proven under the peaked model")


def fixed_costs(network, choices: SizingChoices) -> float:
    """Fixed costs of the links the network's routes use that are not yet installed."""
    used = network.usable_links()
    return float(np.sum(np.where(used & (choices.installed == 0), choices.fixed_cost, 0.0)))


def carried_load_bound(network, choices: SizingChoices, *, all_routes, integer=True,
                       solver="highs", node_limit=CARRIED_NODES, time_limit=None) -> Bound:
    """Least cost of capacities that carry ``A (1 - t)`` of every demand.

    Valid under every model: a loss system never carries more than its capacity, and a plan
    meeting the targets carries at least ``A (1 - t)`` of each demand over its routes.

    Parameters
    ----------
    network : Network
    choices : SizingChoices
    all_routes : bool
        Every route of a demand may carry it (alternate routing, or fixed routing where
        links may be left unbuilt so that a later route becomes the first); else the first.
    integer : bool
        Whole modules, and the fixed cost of every link built new (a MILP); else the LP
        with neither.
    solver : {'highs', 'cbc'}
    node_limit : int
        Branch-and-bound nodes (the MILP's proven bound counts whatever its status).
    time_limit : float or None
        Safety stop, seconds.

    Returns
    -------
    Bound
        Value 0 when the solver proves nothing.
    """
    import pulp  # about 0.25 s to import: only sizing needs it

    prob = pulp.LpProblem("carried_load_bound", pulp.LpMinimize)
    flows, usage = add_route_flows(prob, network, all_routes)
    most = np.zeros(choices.n_links)  # the most any link needs to carry
    for d, xs in zip(network.demands, flows, strict=True):
        if xs:
            prob += pulp.lpSum(xs) >= d.traffic * (1.0 - d.target)
        for r in (d.routes if all_routes else d.routes[:1]):
            for j, h in zip(r.links, r.holdings, strict=True):
                most[j] += d.traffic * d.bandwidth * h / d.holding
    cat = pulp.LpInteger if integer else pulp.LpContinuous
    objective = []
    for j in range(choices.n_links):
        if not usage[j]:
            continue
        mod, inst = float(choices.module[j]), float(choices.installed[j])
        # a plan never needs more modules than carry everything over the link
        top = min(float(choices.max_modules[j]), float(np.ceil(max(most[j] - inst, 0.0) / mod)))
        y = prob.add_variable(f"y{j}", lowBound=0, upBound=top, cat=cat)
        prob += pulp.LpAffineExpression(usage[j]) - mod * y <= inst
        objective.append((y, float(choices.cost_per_module[j])))
        if integer and choices.droppable[j] and choices.fixed_cost[j] > 0:
            u = prob.add_variable(f"u{j}", cat=pulp.LpBinary)
            prob += pulp.LpAffineExpression([(y, 1.0), (u, -max(top, 1.0))]) <= 0
            objective.append((u, float(choices.fixed_cost[j])))
    prob += pulp.LpAffineExpression(objective)
    out = solve(prob, solver, integer=integer, mip_gap=1e-6, time_limit=time_limit,
                node_limit=node_limit if integer else None)
    value = out.bound if np.isfinite(out.bound) else 0.0
    kind = ("MILP: capacity >= carried load, whole modules and fixed costs" if integer
            else "LP: capacity >= carried load")
    return Bound(float(max(value, 0.0)), kind, rounds=1, seconds=out.seconds,
                 stopped_by_time=out.status.value == "time-limit")


def _least_loads(network, routes, model):
    """Least load (capacity units) each link can be offered when demand i takes
    ``routes[i]``: ``A (1 - t)`` per route of several links under the fixed point (its other
    links pass at least that share), ``A`` on a one-link route and under the conservative
    model."""
    loads = np.zeros(len(network.links))
    for d, r in zip(network.demands, routes, strict=True):
        if r is None:
            continue
        for j, h in zip(r.links, r.holdings, strict=True):
            keep = 1.0 if (r.hops == 1 or model == "conservative") else 1.0 - d.target
            loads[j] += d.traffic * (h / d.holding) * keep
    return loads


def thinned_load_bound(network, choices: SizingChoices, *, model="fixed-point",
                       solver="highs", mip_gap=1e-4, min_modules=None, time_limit=None,
                       node_limit=BOUND_NODES, max_choices=MAX_BUILD_CHOICES,
                       bound_only=False) -> Bound | None:
    """The secant MILP at the least loads any plan meeting the targets offers each link.

    Fixed routing with one-unit calls, ``model`` ``'fixed-point'`` or ``'conservative'``.
    In a plan meeting every target, route r's survival is at least ``1 - t``, so the load
    it offers each of its links is at least ``A (1 - t)``; Erlang B grows with the load, so
    each demand's constraint at these loads is implied by the true one [1]_ [2]_. Where
    links with a fixed cost may be left unbuilt, the links built decide each demand's route
    (its first route over built links): one MILP per choice of links to build, each built
    link with at least one module and its fixed cost, and the least of them.

    Parameters
    ----------
    network : Network
    choices : SizingChoices
    model : {'fixed-point', 'conservative'}
    solver : {'highs', 'cbc'}
    mip_gap : float
    min_modules : array_like of int, optional
        Fewest modules per link (each first route's bandwidth).
    time_limit : float or None
        Safety stop of each MILP, seconds.
    node_limit : int
        Branch-and-bound nodes of each MILP.
    max_choices : int
        Most choices of links to build (more: None).
    bound_only : bool
        Solve each MILP for its proven bound alone (no searches for plans).

    Returns
    -------
    Bound or None
        None when it does not apply, has more than ``max_choices`` choices, or a MILP
        proves no bound.

    References
    ----------
    .. [1] E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell
       System Technical Journal 51 (1972) 951-953.
    .. [2] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Advances in Applied Probability 18 (1986) 473-505.
    """
    if (network.routing.policy != "fixed" or network.is_multirate
            or model not in ("fixed-point", "conservative")):
        return None
    nl = choices.n_links
    kmin = np.zeros(nl, np.int64) if min_modules is None else np.asarray(min_modules, np.int64)
    on_routes = np.zeros(nl, bool)
    for d in network.demands:
        for r in d.routes:
            on_routes[list(r.links)] = True
    optional = [int(j) for j in np.flatnonzero(choices.droppable & on_routes)]
    if 2 ** len(optional) > max_choices:
        return None
    budgets = -np.log1p(-np.array([d.target for d in network.demands], float))
    needs = [d.traffic > 0 and d.target < 1 for d in network.demands]
    # every choice of links to build, cheapest first by what building alone costs
    options = []
    for n in range(len(optional) + 1):
        for built in itertools.combinations(optional, n):
            floor = sum(choices.fixed_cost[j] + choices.cost_per_module[j] * max(kmin[j], 1)
                        for j in built)
            options.append((float(floor), built))
    options.sort(key=lambda o: o[0])
    best = np.inf
    solved = 0
    seconds = 0.0
    stopped = False
    for floor, built in options:
        if floor >= best:
            break  # this choice and every later one cost at least the best bound so far
        unbuilt = set(optional) - set(built)
        routes = []
        for d, need in zip(network.demands, needs, strict=True):
            r = next((r for r in d.routes if not unbuilt & set(r.links)), None)
            if r is None and need:
                break  # a demand left without a route: no plan builds exactly these links
            routes.append(r)
        else:
            k_low = kmin.copy()
            k_low[list(built)] = np.maximum(k_low[list(built)], 1)
            table = LossTable(_least_loads(network, routes, model), choices.installed,
                              choices.module)
            res = solve_secant_milp(choices, table,
                                    [r.links if r is not None else () for r in routes],
                                    budgets, solver=solver, mip_gap=mip_gap,
                                    time_limit=time_limit, min_modules=k_low,
                                    node_limit=node_limit, bound_only=bound_only)
            solved += 1
            seconds += res.seconds
            stopped = stopped or res.status == "time-limit"
            if res.status == "infeasible":
                continue  # no plan builds exactly these links
            if not np.isfinite(res.bound):
                return None
            fixed = sum(choices.fixed_cost[j] for j in built)
            best = min(best, fixed + res.bound)
    if not np.isfinite(best):
        return None
    kind = "MILP at least thinned loads A(1 - t)" if model == "fixed-point" else (
        "MILP at un-thinned loads")
    if optional:
        kind += f", {solved} of {len(options)} choices of links to build solved"
    return Bound(float(best), kind, rounds=solved, seconds=seconds, stopped_by_time=stopped)


def lower_bound(network, net, choices: SizingChoices, *, model, solver="highs",
                mip_gap=1e-4, time_limit=None, bound_time=None, min_modules=None,
                unthinned_milp: MilpResult | None = None, progress=None) -> Bound:
    """The best lower bound that applies to ``network`` under ``model``.

    Parameters
    ----------
    network : Network
        As given to the sizer.
    net : Network
        The network the plan is for (routes over links the sizer left unbuilt taken away).
    choices : SizingChoices
    model : {'fixed-point', 'conservative', 'exact', 'peaked-fixed-point'}
    solver : {'highs', 'cbc'}
    mip_gap : float
    time_limit : float or None
        Safety stop of each bound MILP.
    bound_time : float or None
        Safety stop of the loss-flow bound's rounds.
    min_modules : array_like of int, optional
    unthinned_milp : MilpResult, optional
        The sizer's first MILP (un-thinned loads): under fixed routing and the
        conservative model, with no link that may be left unbuilt, its bound is the bound.
    progress : callable(fraction, message) or None

    Returns
    -------
    Bound
    """
    progress = progress or silent
    if model == PEAKED:
        if peaked_applies(network):
            return NO_PEAKED_BOUND
        # without overflow the peaked model's equations are the plain fixed point's
        model = "fixed-point"
    alt = network.routing.policy == "alternate"
    droppable = bool(np.any(choices.droppable & _on_any_route(network)))
    if alt and not network.is_multirate and model in ("fixed-point", "conservative"):
        # Valid for the conservative model too: its blocking is at or above every solution
        # of the fixed point, so a plan meeting it meets the fixed point as well.
        progress(None, "lower bound: cutting planes under alternate routing")
        flow = loss_flow_bound(network, choices, solver=solver, time_limit=bound_time,
                               integer=True, progress=progress)
        # the loss-flow relaxation holds the carried-load LP and has its own integer
        # rounds: the LP is there only in case the relaxation is not solved
        carried = carried_load_bound(network, choices, all_routes=True, solver=solver,
                                     integer=False, time_limit=time_limit)
        return flow if flow is not None and flow.value >= carried.value else carried
    if not alt and not network.is_multirate and model != "exact":
        if model == "conservative" and not droppable and unthinned_milp is not None:
            b = unthinned_milp.bound
            if np.isfinite(b):
                return Bound(float(b) + fixed_costs(net, choices), "MILP at un-thinned loads")
        # A large network's bound MILP stops at the root (secant_milp.is_large), solved
        # for its proven bound alone: that bound is valid wherever it stops.
        large = is_large(len(network.demands))
        thinned = thinned_load_bound(network, choices, model=model,
                                     solver=solver, mip_gap=mip_gap, min_modules=min_modules,
                                     time_limit=time_limit,
                                     node_limit=LARGE_NODES if large else BOUND_NODES,
                                     bound_only=large)
        if thinned is not None and not droppable:
            return thinned
        carried = carried_load_bound(network, choices, all_routes=droppable, solver=solver,
                                     time_limit=time_limit)
        return thinned if thinned is not None and thinned.value >= carried.value else carried
    return carried_load_bound(network, choices, all_routes=alt or droppable, solver=solver,
                              time_limit=time_limit)


def _on_any_route(network):
    on = np.zeros(len(network.links), bool)
    for d in network.demands:
        for r in d.routes:
            on[list(r.links)] = True
    return on
