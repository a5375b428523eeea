"""Least-cost integer sizing of a network to per-demand blocking targets.

The method (see :func:`dimension`): a secant MILP at fixed link loads
(:mod:`netdim.dimension.milp`), iterated on the loads as in ITU-T E.529, then a local search
under the chosen evaluation (:mod:`netdim.dimension.polish`), a greedy search over which
links with a fixed cost to build, and a lower bound on the least cost, which on small
networks becomes the least cost itself by evaluating every cheaper plan
(:mod:`netdim.dimension.exhaustive`).
"""

from __future__ import annotations

import time

import numpy as np

from netdim.dimension.baseline import baseline
from netdim.dimension.exhaustive import (
    least_cost_by_enumeration,
    usable_links,
    without_links,
)
from netdim.dimension.milp import SOLVERS, solve_secant_milp
from netdim.dimension.plan import Plan
from netdim.dimension.polish import Evaluator, polish_plan, repair
from netdim.dimension.space import LinkSpace, LossTable, first_route_loads

__all__ = ["dimension", "MODELS"]

#: What a plan can be made to satisfy.
MODELS = ("fixed-point", "conservative", "exact")

_MAX_EFFECTIVE_TARGET = 0.5
#: Seconds the trim and move passes of the local search may take (repair is not cut short).
_POLISH_SECONDS = 120.0


def dimension(network, model="fixed-point", solver="highs", mip_gap=1e-4, time_limit=None,
              max_iter=20, polish=True, progress=None, economic=None, verify=None, seed=0,
              verify_calls=None, verify_rounds=8, verify_restart="warm",
              bound_time=20.0) -> Plan:
    """Choose integer capacities meeting every demand's blocking target at least cost.

    Parameters
    ----------
    network : Network
    model : {'fixed-point', 'conservative', 'exact'}
        What the plan must satisfy: the reduced-load approximation, the conservative
        product bound (un-thinned loads), or the exact solution (small networks only).
    solver : {'highs', 'cbc'}
        MILP solver through PuLP: HiGHS (highspy) or PuLP's bundled CBC.
    mip_gap : float
        Relative gap each MILP is solved to.
    time_limit : float or None
        Seconds allowed to each MILP.
    max_iter : int
        Most outer iterations (MILP, then the loads re-evaluated).
    polish : bool
        Run the local search after the MILP iterations.
    progress : callable(str) or None
        Called with one line per step of a long run.
    economic : bool or None
        Maximise value carried minus cost instead of meeting targets. None: when every
        demand has a ``value``.
    verify : {None, 'none', 'simulate'}
        ``'simulate'``: check the plan by simulation and, where a demand misses its target
        there, tighten that demand's working target and size again (see
        :func:`netdim.dimension.verify.verify_plan`). None or ``'none'``: no check.
    seed : int, Generator or None
        Seed of the verification runs (the same stream in every round).
    verify_calls : int or None
        Arrivals per verification run (default
        :data:`netdim.dimension.verify.DEFAULT_VERIFY_CALLS`).
    verify_rounds : int
        Most re-sizings with tightened working targets.
    verify_restart : {'warm', 'full'}
        How a verification round sizes again: the local search from the current plan
        (``'warm'``, cheaper in time and sure to add capacity where it is missing) or the
        whole sizing (``'full'``, sometimes cheaper, may not converge).
    bound_time : float
        Seconds allowed to the cutting-plane lower bound under alternate routing
        (:func:`netdim.dimension.altbound.alternate_bound`), and as many again to
        evaluating the cheaper plans of a small network one by one; longer gives a tighter
        bound.

    Returns
    -------
    Plan

    Raises
    ------
    ValueError
        Unknown model, solver or verify value (listing the valid ones), bad ``mip_gap`` /
        ``max_iter`` / ``verify_calls`` / ``verify_rounds``, or a link whose bounds
        contradict each other.
    ModelTooLargeError
        ``model='exact'`` on a network too large for the exact method.

    Notes
    -----
    Capacities, modules and costs follow :mod:`netdim.dimension.space`: capacity =
    installed + module x added modules; only added modules cost; a link's fixed cost is paid
    when it is built new (nothing installed, capacity > 0).

    *Loads.* For fixed loads ``a_j``, ``g_j(n) = -log(1 - E(a_j, n))`` is convex decreasing
    (Messerli 1972) and each demand needs ``sum_{j in route} g_j(n_j) <= -log(1 - target)``;
    the MILP writes ``g_j`` by its secants. The first MILP uses un-thinned loads, which
    gives the conservative plan (with ``model='conservative'`` and fixed routing the
    iteration stops there). Then loads are re-evaluated with the fixed point and the MILP
    solved again; from the third iteration a link's load is never allowed to fall (the max
    of the previous and the new thinned load), which makes the loads monotone and stops the
    2-cycles plain recomputation falls into. The loop ends when the plan repeats.

    *Alternate routing.* The MILP constrains the first route of each demand at the total
    (first-choice plus overflow) load of each link, to the relaxed target ``target / q``
    where ``q`` is the share of first-route losses the alternatives failed to carry at the
    last evaluation (the relaxed target at most 0.5). Loads and ``q`` are running means over
    the evaluations so far (step ``1/it``; ``q`` in log space): recomputing them plainly
    swung between lean and fat plans and never settled (on the 10-site benchmark mesh MILP
    costs 1365 to 3619 over 20 iterations). The loop stops when the plan repeats or the MILP
    cost moved less than 0.1 % in each of the last 3 iterations. The last plan (or a
    cheaper one of the loop that met every target) starts the local search, whose repair
    makes every target hold under the chosen evaluation.

    *Multi-rate.* The MILP works on the one-unit scale (Erlang B at the link's load in
    units) and divides a b-unit demand's budget by b, since class blocking ratios tend to
    the bandwidth ratios on large links (Labourdette and Hart 1992); the local search makes
    the targets hold under the evaluation (Kaufman-Roberts per link).

    *Fixed costs.* The MILP sizes a given route set. Links with a fixed cost and nothing
    installed are then tried for dropping, dearest first: routes over a dropped link become
    unusable (a demand's first usable route becomes its first choice), the network is
    re-sized, and the drop is kept when the total cost falls and every demand keeps a route.

    *Lower bound.* Fixed routing, single-rate, no link that may be dropped:
    ``model='conservative'``: the first MILP's proven bound (its loads are exactly what
    that model uses). ``model='fixed-point'``: the MILP at loads ``sum_r A_r (1 - t_r)``
    over the routes r through each link. In any plan meeting the targets, route r's
    survival ``prod_k (1 - B_k) >= 1 - t_r``, so the thinned load it offers link j,
    ``A_r prod_{k != j} (1 - B_k)``, is at least ``A_r (1 - t_r)`` (and exactly ``A_r``
    on a one-link route); Erlang B grows with the
    load, so each demand's constraint at these loads is implied by the true one, and the
    MILP's proven bound is a bound on the least cost. Alternate routing, single-rate,
    fixed-point or conservative model: the loss-flow relaxation with cutting planes of
    :func:`netdim.dimension.altbound.alternate_bound` (or the LP below when that is
    larger), 9-12 % above the LP on the benchmark meshes. Otherwise (the exact model,
    multi-rate, droppable links under fixed routing): the LP bound that every link's
    capacity is at least the load it carries, ``sum_r x_r b f_rj <= capacity_j``, with each demand
    carrying at least ``A (1 - t)`` over its usable routes: true of any plan under every
    model (a loss system never carries more than its capacity), but weak.

    *Small networks.* When few plans (at most 20,000 over at most 40 links) cost from the
    bound to less than the plan, they are evaluated one by one, cheapest first, under the
    chosen model (:func:`netdim.dimension.exhaustive.least_cost_by_enumeration`). The
    first that meets every target replaces the plan; when none does the plan is a
    least-cost plan. Either way the bound becomes the least cost itself (gap 0); stopped by
    ``bound_time``, the bound rises to the cost of the first plan not evaluated. On the
    bundled campus and three-village networks this certifies the plans (5577 and 421
    plans), and under the exact model the three-village plan (1256 plans).

    References
    ----------
    E. J. Messerli, "Proof of a convexity property of the Erlang B formula", BSTJ 51 (1972).
    ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS objectives".
    J.-F. P. Labourdette and G. W. Hart, "Blocking probabilities in multitraffic loss
    systems: insensitivity, asymptotic behavior, and approximations", IEEE Transactions on
    Communications 40 (1992) 1355-1366.
    F. P. Kelly, "Blocking probabilities in large circuit-switched networks", Advances in
    Applied Probability 18 (1986) 473-505.
    """
    t_start = time.perf_counter()
    if model not in MODELS:
        raise ValueError(f"model: unknown model {model!r}; choose one of {', '.join(MODELS)}")
    if solver not in SOLVERS:
        raise ValueError(f"solver: unknown solver {solver!r}; choose one of {', '.join(SOLVERS)}")
    if not (0 <= mip_gap < 1):
        raise ValueError(f"mip_gap: must lie in [0, 1), got {mip_gap!r}")
    if int(max_iter) < 1:
        raise ValueError(f"max_iter: must be >= 1, got {max_iter!r}")
    if time_limit is not None and not time_limit > 0:
        raise ValueError(f"time_limit: must be > 0 seconds, got {time_limit!r}")
    if isinstance(bound_time, bool) or not (isinstance(bound_time, (int, float))
                                            and bound_time > 0):
        raise ValueError(f"bound_time: must be > 0 seconds, got {bound_time!r}")
    from netdim.dimension.verify import check_verify_options, verify_plan

    verify = check_verify_options(verify, verify_calls, verify_rounds, verify_restart)
    say = progress or (lambda s: None)
    if verify is not None:
        plan = dimension(network, model=model, solver=solver, mip_gap=mip_gap,
                         time_limit=time_limit, max_iter=max_iter, polish=polish,
                         progress=progress, economic=economic, bound_time=bound_time)
        resize = dict(model=model, solver=solver, mip_gap=mip_gap, time_limit=time_limit,
                      max_iter=max_iter, polish=polish, say=say)
        return verify_plan(network, plan, resize, seed=seed, calls=verify_calls,
                           rounds=int(verify_rounds), t_start=t_start,
                           restart=verify_restart)
    space = LinkSpace.of(network)
    base_caps, base_cost = baseline(network, space)
    if model == "exact":
        _check_exact_size(network, base_caps)
    if economic is None:
        economic = bool(network.demands) and all(d.value is not None for d in network.demands)
    if economic:
        from netdim.dimension.economic import size_economic

        return size_economic(network, space, model=model, progress=say, t_start=t_start,
                             baseline=(base_caps, base_cost), solver=solver)

    opts = dict(model=model, solver=solver, mip_gap=mip_gap, time_limit=time_limit,
                max_iter=int(max_iter), say=say, fallback=space.modules_for(base_caps))
    run = _size_routes(network, space, **opts)
    best_net, best = network, run
    dropped: list[str] = []
    candidates = [j for j, link in enumerate(network.links)
                  if link.fixed_cost > 0 and link.installed == 0 and run.k[j] >= 0]
    candidates.sort(key=lambda j: -network.links[j].fixed_cost)
    for j in candidates[:40]:
        trial_net = without_links(best_net, [j])
        if trial_net is None:
            continue
        say(f"trying without link '{network.links[j].id}'")
        trial = _size_routes(trial_net, space, **opts)
        if trial.feasible_guess and space.cost(trial.k) < space.cost(best.k) - 1e-9:
            best_net, best = trial_net, trial
            dropped.append(network.links[j].id)

    net = best_net
    k, ev, stuck, polish_stats, calls = polish_and_check(
        net, space, best.k, best.kmin, model, polish or model != "fixed-point", time_limit, say)
    caps = space.capacity(k)
    cost = space.cost(k)
    bound, bound_kind = _lower_bound(network, net, space, model, solver, mip_gap, time_limit,
                                     best, bool(candidates), bound_time, say)
    bound = max(bound, 0.0) if np.isfinite(bound) else 0.0
    listing = None
    if ev.all_met and bound < cost * (1 - 1e-9):
        listing = _list_cheaper(network, space, model, bound, cost, bound_time, say)
        if listing.status == "improved":
            net = without_links(network, listing.dropped)
            k = listing.modules
            ev = Evaluator(net, space, _method(model), warm=False)(k)
            caps, cost = space.capacity(k), space.cost(k)
        if listing.status in ("improved", "optimal", "partial") and listing.bound > bound:
            bound = listing.bound
            bound_kind = ("least cost: every cheaper plan listed and evaluated"
                          if listing.status != "partial" else
                          f"{bound_kind}, raised by listing the cheaper plans "
                          f"({listing.evaluated} of {listing.plans} evaluated)")
    bound = min(bound, cost)
    gap = (cost - bound) / cost if cost > 0 else 0.0
    dropped_all = tuple(
        link.id for j, link in enumerate(network.links) if caps[j] == 0 and link.installed == 0
    )
    unmet = list(ev.unmet)
    if unmet:
        status = "infeasible"
        message = _infeasible_message(net, space, ev, sorted(set(stuck) | set(best.bad)))
    else:
        status = "optimal-within-gap" if gap <= max(mip_gap, 1e-9) else "feasible"
        message = (f"every target met under the {model} model; cost {cost:g}, "
                   f"lower bound {bound:g} ({bound_kind})")
    return Plan(
        capacities=caps,
        modules=k,
        link_costs=space.link_costs(k),
        cost=cost,
        lower_bound=bound,
        gap=gap,
        status=status,
        message=message,
        evaluation=ev,
        iterations=best.iterations,
        solver=solver,
        seconds=time.perf_counter() - t_start,
        baseline_cost=base_cost,
        baseline_capacities=base_caps,
        dropped_links=dropped_all,
        model=model,
        network=net.with_capacities(caps),
        details={
            "milp_seconds": float(best.milp_seconds),
            "milp_cuts": int(best.cuts),
            "bound": bound_kind,
            "evaluations": int(polish_stats.get("evaluations", calls)),
            "dropped_by_search": list(dropped),
            "milp_cost": float(space.cost(best.k)),
            # the cheaper plans listed and evaluated (netdim.dimension.exhaustive)
            "listing": "none" if listing is None else listing.status,
            "listing_plans": 0 if listing is None else int(listing.plans),
            "listing_evaluated": 0 if listing is None else int(listing.evaluated),
        },
        warnings=_no_solution_warning(time_limit) if best.no_solution else (),
    )


def _list_cheaper(network, space, model, bound, cost, seconds, say):
    """Every plan costing from ``bound`` to less than ``cost``, evaluated cheapest first
    (small networks; see :mod:`netdim.dimension.exhaustive`)."""
    say(f"listing the plans costing from {bound:g} to less than {cost:g} (up to {seconds:g} s)")
    found = least_cost_by_enumeration(network, space, _method(model), bound, cost,
                                      deadline=time.perf_counter() + seconds)
    say(f"listing: {found.message}")
    return found


def _no_solution_warning(time_limit):
    why = ("the MILP solver stopped without a plan" if time_limit is None else
           f"the MILP stopped at its time limit ({time_limit:g} s) before it found any plan")
    return (why + "; this plan comes from the local search and may cost well above the "
            "least: allow more time",)


def polish_and_check(net, space, k, kmin, model, polish, time_limit, say):
    """Local search under ``model``, then a fresh evaluation (and repair when it disagrees).

    Returns ``(k, evaluation, stuck demands, polish stats, evaluations)``.
    """
    evaluator = Evaluator(net, space, _method(model))
    stuck: list[int] = []
    polish_stats = {}
    if polish:
        say("polishing under the " + model + " model")
        # Keep the search bounded in time too: trial evaluations grow with the network.
        budget = _POLISH_SECONDS if time_limit is None else max(4 * time_limit, 5.0)
        deadline = time.perf_counter() + budget
        k, stuck, polish_stats = polish_plan(evaluator, k, kmin, deadline=deadline,
                                             progress=say)
    # Links no usable route needs are not built.
    used = usable_links(net)
    k = np.where(used | (space.installed > 0), k, 0)
    ev = Evaluator(net, space, _method(model), warm=False)(k)
    if not ev.all_met and evaluator.warm and not stuck:
        # The warm-started search tracked another solution of the fixed-point equations:
        # repair under the full evaluation.
        say("repairing under the fresh evaluation")
        cold = Evaluator(net, space, _method(model), warm=False)
        k, extra = repair(cold, k, net.routing.policy == "alternate")
        stuck = sorted(set(stuck) | set(extra))
        ev = cold(k)
    return k, ev, stuck, polish_stats, evaluator.calls


# -- the outer loop ---------------------------------------------------------------------------
class _Run:
    def __init__(self, k, kmin, iterations, milp_seconds, cuts, bad, feasible_guess, first,
                 no_solution=False):
        self.k = k
        self.kmin = kmin
        self.iterations = iterations
        self.milp_seconds = milp_seconds
        self.cuts = cuts
        self.bad = bad
        self.feasible_guess = feasible_guess
        self.first = first  # MilpResult at un-thinned loads
        self.no_solution = no_solution  # the MILP stopped before it had any plan


def _method(model):
    return "conservative" if model == "conservative" else (
        "exact" if model == "exact" else "fixed-point")


def _kmin(network, space):
    """Fewest modules per link so that every first route can carry its bandwidth."""
    need = np.zeros(space.n_links, np.int64)
    for d in network.demands:
        if d.routes and d.traffic > 0:
            for j in d.routes[0].links:
                need[j] = max(need[j], d.bandwidth)
    return np.minimum(space.modules_for(need), space.kmax)


def _size_routes(network, space, model, solver, mip_gap, time_limit, max_iter, say,
                 fallback=None):
    alt = network.routing.policy == "alternate"
    loop_method = "conservative" if model == "conservative" else "fixed-point"
    from netdim.evaluate import evaluate

    routes = [d.routes[0].links if d.routes else () for d in network.demands]
    target = np.array([d.target for d in network.demands], dtype=float)
    bw = np.array([d.bandwidth for d in network.demands], dtype=float)
    kmin = _kmin(network, space)
    loads = first_route_loads(network)
    q = np.ones(len(target))
    prev = None
    seconds = 0.0
    cuts = 0
    first = None
    bad = ()
    it = 0
    feasible_guess = False
    no_solution = False
    best_ok = None
    costs: list[float] = []
    for it in range(1, max_iter + 1):
        eff = np.minimum(target / np.maximum(q, 1e-12), _MAX_EFFECTIVE_TARGET)
        # Multi-rate: a call of b units is blocked about b times as often as a one-unit call
        # on a large link (Labourdette and Hart 1992), so its budget on the one-unit scale
        # g_j is divided by b; the local search then checks with Kaufman-Roberts.
        budgets = -np.log1p(-eff) / bw
        table = LossTable(loads, space.installed, space.module)
        res = solve_secant_milp(space, table, routes, budgets, solver=solver, mip_gap=mip_gap,
                                time_limit=time_limit, kmin=kmin)
        seconds += res.seconds
        cuts = res.n_cuts
        bad = res.infeasible_demands
        if first is None:
            first = res
        k = res.k
        say(f"iteration {it}: MILP cost {space.cost(k):g} ({res.status}, {res.seconds:.2f} s, "
            f"{res.n_cuts} cuts)")
        if res.status == "error" and prev is None and fallback is not None:
            # Stopped (time limit) before any plan: the local search starts from the
            # baseline instead, which meets the targets as far as it can.
            no_solution = True
            k = np.minimum(space.kmax, np.maximum(kmin, fallback))
            break
        if res.status in ("infeasible", "error"):
            no_solution = no_solution or res.status == "error"
            k = prev if prev is not None else np.minimum(space.kmax, np.maximum(kmin, k))
            break
        if loop_method == "conservative" and not alt:
            feasible_guess = True
            break
        ev = evaluate(network, space.capacity(k), method=loop_method)
        feasible_guess = ev.all_met
        if ev.all_met and (best_ok is None or space.cost(k) < space.cost(best_ok)):
            best_ok = k
        if prev is not None and np.array_equal(k, prev):
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
            costs.append(space.cost(k))
            if _settled(costs):
                break
        else:
            loads = new if it == 1 else np.maximum(loads, new)
        prev = k
    if alt and prev is not None:
        # Start the local search from the last plan (its repair adds capacity where a
        # target is missed), or from a cheaper plan of the loop that met every target.
        if best_ok is not None and space.cost(best_ok) <= space.cost(k):
            k = best_ok
        feasible_guess = True
    return _Run(k, kmin, it, seconds, cuts, bad, feasible_guess, first, no_solution)


#: The alternate-routing loop has settled when the MILP cost moved less than this (relative)
#: in each of the last _SETTLE_RUN iterations.
_SETTLE_TOL = 1e-3
_SETTLE_RUN = 3


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


# -- the lower bound --------------------------------------------------------------------------
def _lower_bound(network, net, space, model, solver, mip_gap, time_limit, run, droppable,
                 bound_time=20.0, say=None):
    alt = network.routing.policy == "alternate"
    if alt and not network.is_multirate and model in ("fixed-point", "conservative"):
        # Valid for the conservative model too: its blocking is at or above every solution
        # of the fixed point, so a plan meeting it meets the fixed point as well. Valid
        # with droppable links: the routes that may become first choices when one is left
        # unbuilt are of unknown stream there (see alternate_bound, Notes), and fixed costs
        # only add to a plan's cost.
        from netdim.dimension.altbound import alternate_bound

        if say:
            say(f"lower bound: cutting planes under alternate routing (up to {bound_time:g} s)")
        value, kind = alternate_bound(network, space, solver=solver, time_limit=bound_time,
                                      integer=True)
        flow = _flow_bound(network, space, True)
        if value >= flow:
            return value, kind
        return flow, "LP: capacity >= carried load"
    strong = not alt and not network.is_multirate and not droppable and model != "exact"
    fixed_part = _fixed_costs(net, space)
    if strong and model == "conservative":
        b = run.first.bound
        if np.isfinite(b):
            return b + fixed_part, "MILP at un-thinned loads"
    if strong:
        loads = np.zeros(space.n_links)
        for d in net.demands:
            r = d.routes[0]
            for j, h in zip(r.links, r.holdings, strict=True):
                # A one-link route offers its whole traffic: nothing else thins it.
                keep = 1.0 if r.hops == 1 else 1.0 - d.target
                loads[j] += d.traffic * (h / d.holding) * keep
        table = LossTable(loads, space.installed, space.module)
        routes = [d.routes[0].links for d in net.demands]
        budgets = -np.log1p(-np.array([d.target for d in net.demands]))
        res = solve_secant_milp(space, table, routes, budgets, solver=solver, mip_gap=mip_gap,
                                time_limit=time_limit, kmin=run.kmin)
        if np.isfinite(res.bound) and res.status in ("optimal", "time-limit"):
            return res.bound + fixed_part, "MILP at least thinned loads A(1 - t)"
    return _flow_bound(network, space, alt or droppable), "LP: capacity >= carried load"


def _fixed_costs(net, space):
    used = usable_links(net)
    return float(np.sum(np.where(used & (space.installed == 0), space.fixed_cost, 0.0)))


def _flow_bound(network, space, all_routes):
    """LP bound: capacity carries at least ``A (1 - t)`` of every demand (any model)."""
    import pulp

    prob = pulp.LpProblem("bound", pulp.LpMinimize)
    y = [prob.add_variable(f"y{j}", lowBound=0, upBound=float(space.kmax[j]))
         for j in range(space.n_links)]
    from netdim.dimension.milp import add_route_flows, make_solver

    flows, usage = add_route_flows(prob, network, all_routes)
    for d, xs in zip(network.demands, flows, strict=True):
        if xs:
            prob += pulp.lpSum(xs) >= d.traffic * (1.0 - d.target)
    for j in range(space.n_links):
        if usage[j]:
            prob += (pulp.LpAffineExpression(usage[j])
                     - float(space.module[j]) * y[j] <= float(space.installed[j]))
    prob += pulp.lpSum(float(space.cost_per_module[j]) * y[j] for j in range(space.n_links))
    prob.solve(make_solver("highs", 1e-6, None))
    v = pulp.value(prob.objective)
    return float(v) if v is not None else 0.0


def _infeasible_message(net, space, ev, hint):
    names = list(ev.unmet)
    parts = []
    for did in names[:10]:
        i = ev.demand_ids.index(did)
        d = net.demands[i]
        at_max = [net.links[j].id for r in d.routes for j in r.links
                  if space.capacity(space.kmax)[j] <= ev.capacity[j]]
        why = (f"links {', '.join(sorted(set(at_max)))} at max_capacity" if at_max
               else "no plan found within the bounds")
        parts.append(f"demand '{did}' blocking {ev.blocking[i]:.4g} > target "
                     f"{ev.target[i]:.4g} ({why})")
    more = f" and {len(names) - 10} more" if len(names) > 10 else ""
    return "targets cannot be met: " + "; ".join(parts) + more


def _check_exact_size(network, caps, max_states=200_000):
    """Fail early when the exact method could not evaluate plans near the baseline's size."""
    from netdim.errors import ModelTooLargeError
    from netdim.evaluate.exact import count_states

    n = count_states(network, caps, limit=max_states)
    if n > max_states:
        raise ModelTooLargeError(
            f"model 'exact': network '{network.name}' has about {n:.3g} states at the "
            f"baseline capacities, more than {max_states}; size with model 'fixed-point' "
            "and check the plan by simulation"
        )
