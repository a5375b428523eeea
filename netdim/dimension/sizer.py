"""Least-cost integer sizing to per-demand blocking targets: :func:`size_to_targets`.

The method (``docs/design/sizing.md``): a secant MILP at fixed link loads
(:mod:`netdim.dimension.secant_milp`), iterated on the loads as in ITU-T E.529 [1]_; a
greedy search over which links with a fixed cost to build; a local search under the chosen
evaluation (:mod:`netdim.dimension.local_search`); a lower bound
(:mod:`netdim.dimension.bounds`), which on small networks becomes the least cost itself by
evaluating every cheaper plan (:mod:`netdim.dimension.exhaustive`).

References
----------
.. [1] ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS objectives".
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from netdim.dimension.baseline import baseline
from netdim.dimension.bounds import lower_bound
from netdim.dimension.choices import (
    LossTable,
    SizingChoices,
    check_sizing_work,
    first_route_loads,
)
from netdim.dimension.exhaustive import least_cost_by_enumeration, listing_limit
from netdim.dimension.local_search import (
    CachedEvaluator,
    evaluation_method,
    min_modules,
    search_and_check,
)
from netdim.dimension.options import SizingOptions, silent
from netdim.dimension.plan import Baseline, Plan, make_plan
from netdim.dimension.rules import (
    forced_links,
    has_rules,
    keep_rules,
    rule_floor,
)
from netdim.dimension.secant_milp import LARGE_NODES, MilpResult, is_large, solve_secant_milp
from netdim.errors import ModelTooLargeError
from netdim.evaluate import evaluate
from netdim.evaluate.exact import count_states
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED
from netdim.evaluate.peaked_fixed_point import multirate_problem
from netdim.vocabulary import PlanStatus

__all__ = ["size_to_targets", "prepare"]

_MAX_EFFECTIVE_TARGET = 0.5
#: Most links with a fixed cost tried for leaving out, dearest first.
_MAX_DROP_TRIALS = 40
#: Most states the exact model may need at the baseline's capacities.
_MAX_EXACT_STATES = 200_000


def prepare(network, options: SizingOptions):
    """The choices and baseline of ``network``, after refusing work out of reach.

    Raises
    ------
    ValueError
        A link whose bounds contradict each other.
    ModelTooLargeError
        Loss tables out of reach, or the exact model on a network too large for it.
    """
    choices = SizingChoices.from_network(network)
    check_sizing_work(network, choices)
    base = baseline(network, choices)
    if options.model == "exact":
        _check_exact_size(network, base.capacities)
    if options.model == PEAKED:
        _check_peaked(network)
    return choices, base


def size_to_targets(network, options: SizingOptions, *, progress=None, t_start=None,
                    choices: SizingChoices | None = None, base: Baseline | None = None) -> Plan:
    """The least-cost plan found for ``network`` meeting every target under the model.

    Parameters
    ----------
    network : Network
    options : SizingOptions
    progress : callable(fraction, message) or None
    t_start : float or None
        ``time.perf_counter()`` when the sizing began (for ``Plan.seconds``).
    choices, base : optional
        From :func:`prepare` (computed here when not given).

    Returns
    -------
    Plan
        Status ``infeasible`` (with the demands and why) when some target cannot be met
        within the links' bounds.
    """
    t_start = time.perf_counter() if t_start is None else t_start
    progress = progress or silent
    if choices is None or base is None:
        choices, base = prepare(network, options)
    model = options.model
    # Design rules (netdim.dimension.rules): the links of each demand's chosen disjoint
    # routes are forced, never tried for leaving out.
    ruled = has_rules(network)
    forced = forced_links(network)
    run = _sizing_loop(network, choices, options, progress,
                       fallback=choices.modules_for(base.capacities), forced=forced)
    best_net, best = network, run
    dropped: list[str] = []
    candidates = [int(j) for j in np.flatnonzero(choices.droppable & ~forced)]
    candidates.sort(key=lambda j: -network.links[j].fixed_cost)
    for j in candidates[:_MAX_DROP_TRIALS]:
        trial_net = best_net.without_links([network.links[j].id])
        if trial_net is None:
            continue
        progress(None, f"trying without link '{network.links[j].id}'")
        trial = _sizing_loop(trial_net, choices, options, progress, forced=forced)
        cheaper = choices.cost(trial.modules) < choices.cost(best.modules) - 1e-9
        if trial.believed_feasible and cheaper:
            best_net, best = trial_net, trial
            dropped.append(network.links[j].id)

    net = best_net
    found = search_and_check(net, choices, best.modules, best.min_modules, model,
                             options.local_search or model != "fixed-point",
                             options.time_limit, progress)
    k, ev = found.modules, found.evaluation
    if ruled:
        # The search leaves unbuilt the links no usable route needs (a forced link on a
        # standby route under fixed routing, say): the rules put them back.
        raised = keep_rules(network, net, choices, k, forced)
        if not np.array_equal(raised, k):
            k = raised
            ev = CachedEvaluator(net, choices, evaluation_method(model), warm=False)(k)
    cost = choices.cost(k)
    # The bound is computed without the design rules (floors of the rule-free problem, no
    # MILP run under the rules): a bound of the problem without them is still a valid lower
    # bound with them, since adding constraints only raises the optimum.
    bound = lower_bound(network, net, choices, model=model, solver=options.solver,
                        mip_gap=options.mip_gap, time_limit=options.time_limit,
                        bound_time=options.bound_time,
                        min_modules=min_modules(net, choices) if ruled else best.min_modules,
                        unthinned_milp=None if ruled else best.unthinned_milp,
                        progress=progress)
    value = max(bound.value, 0.0) if np.isfinite(bound.value) else 0.0
    kind = bound.kind
    stopped = bound.stopped_by_time
    listing = None
    # The listing of cheaper plans knows nothing of the rules: not run under them.
    if ev.all_met and value < cost * (1 - 1e-9) and not ruled:
        listing = _list_cheaper(network, choices, model, value, cost, options.bound_time, progress)
        stopped = stopped or listing.stopped_by_time
        if listing.status == "improved":
            net = network.without_links([network.links[j].id for j in listing.dropped])
            k = listing.modules
            ev = CachedEvaluator(net, choices, evaluation_method(model), warm=False)(k)
            cost = choices.cost(k)
        if listing.status in ("improved", "optimal", "partial") and listing.bound > value:
            value = listing.bound
            kind = ("least cost: every cheaper plan listed and evaluated"
                    if listing.status != "partial" else
                    f"{kind}, raised by listing the cheaper plans "
                    f"({listing.evaluated} of {listing.plans} evaluated)")
    value = min(value, cost)
    gap = (cost - value) / cost if cost > 0 else 0.0
    if ev.unmet:
        status = PlanStatus.INFEASIBLE
        message = _infeasible_message(net, choices, ev,
                                      sorted(set(found.stuck) | set(best.infeasible_demands)))
    else:
        status = (PlanStatus.OPTIMAL_WITHIN_GAP if gap <= max(options.mip_gap, 1e-9)
                  else PlanStatus.FEASIBLE)
        message = (f"every target met under the {model} model; cost {cost:g}, "
                   f"lower bound {value:g} ({kind})")
    warnings = list(_no_solution_warning(options.time_limit) if best.no_solution else ())
    if stopped:
        warnings.append(f"the lower bound's work was cut short by its safety stop "
                        f"({options.bound_time:g} s), so the bound depends on this machine's "
                        "speed: allow more (--bound-time) to reproduce it elsewhere")
    if not best.settled:
        alt = network.routing.policy == "alternate"
        warnings.append(f"the sizing loop stopped at its limit of {options.max_iter} "
                        f"iterations without settling ({_unsettled_why(alt)}); "
                        f"{_unsettled_what(alt)}")
    if found.stopped_by_time:
        warnings.append("the local search was cut short by its safety stop, so the plan "
                        "depends on this machine's speed")
    return make_plan(
        network, net, choices, k, ev, lower_bound=value, gap=gap, status=status,
        message=message, iterations=best.iterations, solver=options.solver,
        seconds=time.perf_counter() - t_start, baseline=base, model=model,
        details={
            "milp_seconds": float(best.milp_seconds),
            "milp_cuts": int(best.cuts),
            "bound": kind,
            "bound_stopped_by_time": bool(stopped),
            "evaluations": int(found.evaluations),
            "dropped_by_search": list(dropped),
            "milp_cost": float(choices.cost(best.modules)),
            # the cheaper plans listed and evaluated (netdim.dimension.exhaustive)
            "listing": "none" if listing is None else str(listing.status),
            "listing_plans": 0 if listing is None else int(listing.plans),
            "listing_evaluated": 0 if listing is None else int(listing.evaluated),
        },
        warnings=warnings,
    )


def _list_cheaper(network, choices, model, bound, cost, seconds, progress):
    """Every plan costing from ``bound`` to less than ``cost``, evaluated cheapest first
    (small networks; see :mod:`netdim.dimension.exhaustive`)."""
    method = evaluation_method(model)
    progress(None, f"listing the plans costing from {bound:g} to less than {cost:g}")
    found = least_cost_by_enumeration(network, choices, method, bound, cost,
                                      limit=listing_limit(method),
                                      deadline=time.perf_counter() + seconds)
    progress(None, f"listing: {found.message}")
    return found


def _no_solution_warning(time_limit):
    why = ("the MILP solver stopped without a plan" if time_limit is None else
           f"the MILP stopped at its time limit ({time_limit:g} s) before it found any plan")
    return (why + "; this plan comes from the local search and may cost well above the "
            "least: allow more time",)


# -- the outer loop ---------------------------------------------------------------------------
@dataclass(frozen=True)
class _SizingLoop:
    """What the MILP iterations ended with."""

    modules: np.ndarray
    min_modules: np.ndarray
    iterations: int
    milp_seconds: float
    cuts: int
    infeasible_demands: tuple
    believed_feasible: bool
    unthinned_milp: MilpResult | None  # the first MILP, at un-thinned loads
    no_solution: bool = False  # the MILP stopped before it had any plan
    settled: bool = True  # False: stopped at max_iter with the plans still changing


def _sizing_loop(network, choices, options, progress, fallback=None,
                 forced=None) -> _SizingLoop:
    alt = network.routing.policy == "alternate"
    model = options.model
    # the peaked model in the loop too: its loads and overflow failures set the budgets, so
    # that calibration by simulation is a final check rather than the way to meet targets
    loop_method = model if model in ("conservative", PEAKED) else "fixed-point"
    routes = [d.routes[0].links if d.routes else () for d in network.demands]
    target = np.array([d.target for d in network.demands], dtype=float)
    bw = np.array([d.bandwidth for d in network.demands], dtype=float)
    kmin = min_modules(network, choices)
    if forced is not None:
        kmin = np.maximum(kmin, rule_floor(network, choices, forced))
    loads = first_route_loads(network)
    q = np.ones(len(target))
    prev = None
    seconds = 0.0
    cuts = 0
    first = None
    bad = ()
    it = 0
    believed = False
    no_solution = False
    best_ok = None
    costs: list[float] = []
    k = kmin
    settled = False
    # Large networks (a rule of their size, netdim.dimension.secant_milp.is_large): each
    # MILP stops at the root and, after the first, starts from the plan before. The loads
    # change again after it, so it need not close the gap; the bound and the plan's gap
    # are computed from proven bounds only.
    large = is_large(len(network.demands))
    for it in range(1, options.max_iter + 1):
        eff = np.minimum(target / np.maximum(q, 1e-12), _MAX_EFFECTIVE_TARGET)
        # Multi-rate: a call of b units is blocked about b times as often as a one-unit call
        # on a large link (Labourdette and Hart 1992), so its budget on the one-unit scale
        # g_j is divided by b; the local search then checks with Kaufman-Roberts.
        budgets = -np.log1p(-eff) / bw
        table = LossTable(loads, choices.installed, choices.module)
        res = solve_secant_milp(choices, table, routes, budgets, solver=options.solver,
                                mip_gap=options.mip_gap, time_limit=options.time_limit,
                                min_modules=kmin, node_limit=LARGE_NODES if large else None,
                                start=prev if large else None)
        seconds += res.seconds
        cuts = res.n_cuts
        bad = res.infeasible_demands
        if first is None:
            first = res
        k = res.modules
        progress(None, f"iteration {it}: MILP cost {choices.cost(k):g} ({res.status}, "
            f"{res.seconds:.2f} s, {res.n_cuts} cuts)")
        if res.status == "error" and prev is None and fallback is not None:
            # Stopped (time limit) before any plan: the local search starts from the
            # baseline instead, which meets the targets as far as it can.
            no_solution = settled = True  # said by its own warning
            k = np.minimum(choices.max_modules, np.maximum(kmin, fallback))
            break
        if res.status in ("infeasible", "error"):
            no_solution = no_solution or res.status == "error"
            k = prev if prev is not None else np.minimum(choices.max_modules,
                                                         np.maximum(kmin, k))
            settled = True  # stopped for its own reason, said elsewhere
            break
        if loop_method == "conservative" and not alt:
            believed = settled = True
            break
        ev = evaluate(network, choices.capacity(k), method=loop_method)
        believed = ev.all_met
        if ev.all_met and (best_ok is None or choices.cost(k) < choices.cost(best_ok)):
            best_ok = k
        if prev is not None and np.array_equal(k, prev):
            settled = True
            break
        new = np.asarray(ev.link_offered, dtype=float)
        if alt:
            # Overflow moves load between links as the first-choice links change: plain
            # recomputation swings between lean plans (much overflow, heavy loads) and fat
            # ones. The loads and the share q of first-route losses the alternatives fail to
            # carry are therefore running means over the evaluations so far (step 1/it, in
            # log space for q), which settles.
            w = 1.0 / it
            loads = loads + w * (new - loads)
            qn = np.maximum(_overflow_failure(network, ev), 1e-6)
            q = np.exp(np.log(q) + w * (np.log(qn) - np.log(q)))
            costs.append(choices.cost(k))
            if _settled(costs):
                settled = True
                break
            how = _cost_settled(costs, res)
            if how:  # a MILP stopped at its node limit (large networks only)
                progress(None, f"the MILP cost has settled at {costs[-1]:g} in iteration "
                         f"{it} ({how})")
                settled = True
                break
        else:
            costs.append(choices.cost(k))
            how = _cost_settled(costs, res)
            if how:
                # Plans of about equal cost that tie differently at loads still rising:
                # settled in cost, which is what the local search and the bound need.
                progress(None, f"the MILP cost has settled at {costs[-1]:g} in iteration "
                         f"{it} ({how}); the capacities differ among plans of about that "
                         "cost, and the local search starts from this one")
                settled = True
                break
            loads = new if it == 1 else np.maximum(loads, new)
        prev = k
    if not settled:
        progress(None, f"the MILP iterations stopped at their limit of {options.max_iter} "
                 f"without settling ({_unsettled_why(alt)}); {_unsettled_what(alt)}")
    if alt and prev is not None:
        # Start the local search from the last plan (its repair adds capacity where a
        # target is missed), or from a cheaper plan of the loop that met every target.
        if best_ok is not None and choices.cost(best_ok) <= choices.cost(k):
            k = best_ok
        believed = True
    return _SizingLoop(np.asarray(k, np.int64), kmin, it, seconds, cuts, bad, believed,
                       first, no_solution, settled)


def _unsettled_why(alt):
    return (f"the MILP cost still moved by more than {100 * _SETTLE_TOL:g} % in one of the "
            f"last {_SETTLE_RUN} iterations" if alt else
            "each MILP still chose other capacities than the one before")


def _unsettled_what(alt):
    return ("the local search starts from the cheapest plan of the iterations that met "
            "every target, else from the last one" if alt else
            "the local search starts from the last iteration's plan")


#: The alternate-routing loop has settled when the MILP cost moved less than this (relative)
#: in each of the last _SETTLE_RUN iterations.
_SETTLE_TOL = 1e-3
_SETTLE_RUN = 3


def _cost_settled(costs, res):
    """Why the loop's MILP cost has settled ('' when it has not): it moved less
    than :data:`_SETTLE_TOL` in each of the last :data:`_SETTLE_RUN` iterations, or, for a
    MILP stopped at its work limit, less than that MILP's proven gap (objective less bound),
    within which it cannot tell the two plans apart."""
    if _settled(costs):
        return (f"it moved less than {100 * _SETTLE_TOL:g} % in each of the last "
                f"{_SETTLE_RUN} iterations")
    if len(costs) >= 2 and res.status == "work-limit" and np.isfinite(res.bound):
        proven = res.objective - res.bound
        moved = abs(costs[-1] - costs[-2])
        if moved <= proven:
            return (f"it moved {100 * moved / max(costs[-1], 1e-12):.2g} %, less than the "
                    f"{100 * proven / max(res.objective, 1e-12):.2g} % gap proven by the "
                    "MILP, stopped at its node limit")
    return ""


def _settled(costs):
    if len(costs) <= _SETTLE_RUN:
        return False
    last = np.asarray(costs[-_SETTLE_RUN - 1:], float)
    return bool(np.all(np.abs(np.diff(last)) <= _SETTLE_TOL * np.maximum(last[1:], 1e-12)))


def _overflow_failure(network, ev):
    """Share of first-route losses that the alternative routes did not carry, per demand."""
    lb = np.asarray(ev.link_blocking, float)
    out = np.ones(len(network.demands))
    for i, d in enumerate(network.demands):
        if len(d.routes) < 2:
            continue
        surv = np.prod(1.0 - lb[list(d.routes[0].links)])
        first_loss = 1.0 - surv
        if first_loss > 1e-15:
            out[i] = min(1.0, float(ev.blocking[i]) / first_loss)
    return out


def _infeasible_message(net, choices, ev, hint):
    names = list(ev.unmet)
    parts = []
    top = choices.capacity(choices.max_modules)
    for did in names[:10]:
        i = ev.demand_ids.index(did)
        d = net.demands[i]
        at_max = [net.links[j].id for r in d.routes for j in r.links
                  if top[j] <= ev.capacity[j]]
        why = (f"links {', '.join(sorted(set(at_max)))} at max_capacity" if at_max
               else "no plan found within the bounds")
        parts.append(f"demand '{did}' blocking {ev.blocking[i]:.4g} > target "
                     f"{ev.target[i]:.4g} ({why})")
    more = f" and {len(names) - 10} more" if len(names) > 10 else ""
    return "targets cannot be met: " + "; ".join(parts) + more


def _check_peaked(network):
    """The peaked model has no multi-rate form: refuse before any work."""
    problem = multirate_problem(network)
    if problem:
        raise ValueError(f"model {PEAKED!r}: {problem}")


def _check_exact_size(network, caps, max_states=_MAX_EXACT_STATES):
    """Fail early when the exact method could not evaluate plans near the baseline's size."""
    n = count_states(network, caps, limit=max_states)
    if n > max_states:
        raise ModelTooLargeError(
            f"model 'exact': network '{network.name}' has about {n:.3g} states at the "
            f"baseline capacities, more than {max_states}; size with model 'fixed-point' "
            "and check the plan by simulation"
        )
