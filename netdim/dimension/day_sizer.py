"""Sizing to targets over the day (issue 20): :func:`size_over_day`.

A network file with ``rates`` is sized with the busy-hour machinery first, then the plan is
re-evaluated over the day and adjusted:

1. the MILP loop and local search of :func:`~netdim.dimension.sizer.size_to_targets` at each
   demand's day busy-hour traffic, the peak of its offered load over the day (the period
   that binds; below ``max(rate) x holding`` for a wave of stays);
2. the plan evaluated over the day (:func:`netdim.evaluate.day.evaluate_day`: the exact
   chain for one resource, the carried-load approximation otherwise), every demand judged
   on its ``target_basis``;
3. a module added where a demand misses its day target (on the link of its routes that is
   full longest in its worst period), until every target is met;
4. a module taken away from each link in turn, dearest module first, while every day target
   still holds, until no link can give one up.

No lower bound is claimed. The bounds of :mod:`netdim.dimension.bounds` are proved for
stationary (busy-hour) demand; over a varying day they do not hold, so the plan carries the
trivial bound 0 and says so. For one resource with module 1 the last step shows that one
unit less misses the target (under the exact chain): the plan is the least size.

The same network is also sized the busy-hour way (each demand at ``max(rate) x holding``),
for the comparison the plan reports (``details['busy_hour_cost']``).
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np

from netdim.dimension.choices import SizingChoices
from netdim.dimension.local_search import min_modules
from netdim.dimension.options import SizingOptions
from netdim.dimension.plan import Plan, make_plan
from netdim.dimension.sizer import prepare, size_to_targets
from netdim.errors import ModelTooLargeError
from netdim.evaluate import evaluate
from netdim.vocabulary import PlanStatus

__all__ = ["size_over_day", "DAY_MODELS", "MAX_DAY_EVALUATIONS", "NO_BOUND"]

#: The day method each sizing model uses.
DAY_MODELS = {"fixed-point": "day", "exact": "day-exact"}
#: Most evaluations over the day one sizing may make.
MAX_DAY_EVALUATIONS = 5_000
#: What the plan says about its bound.
NO_BOUND = ("none over the day: netdim's lower bounds are proved for stationary (busy-hour) "
            "demand and do not hold for demand that varies over the day; 0 is the only "
            "bound claimed")


def _busy_hour_network(network):
    """Each demand at its busy-hour figure, ``max(rate) x holding``, without the day."""
    demands = tuple(replace(d, traffic=max(r) * d.holding)
                    for d, r in zip(network.demands, network.day.rates, strict=True))
    return replace(network, demands=demands, day=None)


def size_over_day(network, options: SizingOptions, *, verify=None, progress=None,
                  t_start=None) -> Plan:
    """The least-cost plan found whose day meets every demand's day target.

    Parameters
    ----------
    network : Network
        With ``network.day`` (a file with ``rates``).
    options : SizingOptions
        ``model`` ``'fixed-point'`` (evaluate with ``day``: exact on one resource, the
        carried-load approximation otherwise) or ``'exact'`` (``day-exact``);
        ``objective`` ``'cost'``.
    verify : VerifyOptions, optional
        Simulate the plan over the day (``day-simulate``, ``calls`` and ``seed`` from it)
        and attach it as ``Plan.verification``; no calibration.
    progress : callable(fraction, message) or None
    t_start : float or None

    Returns
    -------
    Plan
        ``model`` is the day method; ``lower_bound`` 0 and ``details['bound']`` says why
        (:data:`NO_BOUND`); ``details`` has ``busy_hour_cost`` and
        ``busy_hour_capacities`` (the busy-hour way of sizing), ``static_cost`` (step 1),
        ``day_evaluations``.

    Raises
    ------
    ValueError
        A model or objective without a day counterpart; the errors of the day methods.
    ModelTooLargeError
        More than :data:`MAX_DAY_EVALUATIONS` evaluations over the day.
    """
    t_start = time.perf_counter() if t_start is None else t_start
    say = progress or (lambda _f, _m: None)
    if options.objective != "cost":
        raise ValueError(f"objective: {options.objective!r} has no counterpart over the day; "
                         "size a day profile for cost (targets)")
    if options.model not in DAY_MODELS:
        raise ValueError(f"model: {options.model!r} has no counterpart over the day; choose "
                         f"one of {', '.join(DAY_MODELS)}")
    method = DAY_MODELS[options.model]
    static_net = replace(network, day=None)
    static_opts = replace(options, model="fixed-point")
    choices, base = prepare(static_net, static_opts)
    say(None, "sizing at each demand's day busy-hour traffic (peak offered load)")
    static = size_to_targets(static_net, static_opts, progress=progress, choices=choices,
                             base=base)
    count = [0]
    seen = {}
    last = [0.0]

    def day_eval(k, why="", net=network):
        # A plan tried twice (the step-down's first trial can be the plan the repair left)
        # is not evaluated again: the same capacities give the same day.
        key = (id(net), np.asarray(k, dtype=np.int64).tobytes())
        if key in seen:  # (the network is kept with it, so its id stays its own)
            return seen[key][1]
        count[0] += 1
        if count[0] > MAX_DAY_EVALUATIONS:
            raise ModelTooLargeError(
                f"sizing over the day: more than {MAX_DAY_EVALUATIONS} evaluations of the "
                "day; give max_capacity to the links or size fewer at once")
        # One line per evaluation (the summary shows one every few seconds): on a large
        # alternate-routed network one day takes seconds and the search needs one per link
        # tried (docs/measurements/daily.md, section 7).
        took = f"; the last took {last[0]:.1f} s" if count[0] > 1 else ""
        say(None, f"over the day: evaluation {count[0]}{why}{took}")
        t0 = time.perf_counter()
        ev = evaluate(net, choices.capacity(k), method=method)
        last[0] = time.perf_counter() - t0
        seen[key] = (net, ev)
        return ev

    k = np.asarray(static.modules, dtype=np.int64).copy()
    floor = _start_modules(network, choices)
    kmin = np.maximum(min_modules(static_net, choices), floor)
    # only the calls in progress at the start force capacity: a link the busy-hour plan
    # left unbuilt stays unbuilt unless the repair needs it
    k = np.maximum(k, floor)
    ev = day_eval(k)
    k, ev, stuck = _repair(network, choices, k, ev, day_eval, say)
    if not stuck:
        k, ev = _step_down(choices, k, ev, kmin, day_eval, say)
    bh_net = _busy_hour_network(network)
    say(None, "sizing the busy-hour way (max rate x holding) for comparison")
    bh = size_to_targets(bh_net, static_opts, progress=progress)
    cost = choices.cost(k)
    details = {
        "day": True,
        "bound": NO_BOUND,
        "day_method": ev.method,
        "day_evaluations": int(count[0]),
        "static_cost": float(choices.cost(static.modules)),
        "busy_hour_cost": float(bh.cost),
        "busy_hour_capacities": [int(c) for c in bh.capacities],
        "busy_hour_feasible": bool(bh.feasible),
    }
    if ev.unmet:
        status = PlanStatus.INFEASIBLE
        message = ("targets over the day cannot be met: "
                   + "; ".join(f"demand '{d}' ({_why(network, choices, k, ev, d)})"
                               for d in ev.unmet[:10]))
    else:
        status = PlanStatus.FEASIBLE
        message = f"every target met over the day ({ev.method}); cost {cost:g}"
        if bh.cost > 0:
            more = f"{100 * (bh.cost - cost) / cost:.1f}% more" if cost > 0 else "more"
            message += (f"; sized the busy-hour way (max rate x holding) it would cost "
                        f"{bh.cost:g}, {more} (this plan saves "
                        f"{100 * (bh.cost - cost) / bh.cost:.1f}% of it)")
    warnings = list(ev.warnings)
    verification = None
    if verify is not None and not ev.unmet:
        k, ev, verification, rounds = _calibrate(network, choices, k, ev, kmin, verify,
                                                 day_eval, say, progress)
        details["verify_seed"] = int(verification.details.get("seed", 0))
        details["verify_days"] = int(verification.details.get("days", 0))
        details["verify_rounds"] = int(rounds)
        details["verify_margin"] = float(verify.margin)
        details["unverified_cost"] = float(cost)
        details["day_evaluations"] = int(count[0])
        cost = choices.cost(k)
        if ev.unmet:
            status = PlanStatus.INFEASIBLE
            message = ("calibrated by simulation over the day, the targets cannot be met "
                       f"within the links' bounds: {', '.join(ev.unmet)}")
        else:
            message = (f"every target met over the day ({ev.method}) and checked by "
                       f"simulation ({rounds} calibration round"
                       f"{'' if rounds == 1 else 's'}); cost {cost:g}; sized the busy-hour "
                       f"way it would cost {bh.cost:g}")
    return make_plan(network, network, choices, k, ev, lower_bound=0.0,
                     gap=1.0 if cost > 0 else 0.0, status=status, message=message,
                     iterations=static.iterations, solver=options.solver,
                     seconds=time.perf_counter() - t_start, baseline=base, model=ev.method,
                     details=details, warnings=warnings, verification=verification)


def _calibrate(network, choices, k, ev, kmin, verify, day_eval, say, progress):
    """Simulate the plan over the day; where a demand's simulated figure is above
    ``target x (1 - margin)``, tighten its working target by the ratio and add modules
    until the approximation meets the working targets; up to ``verify.rounds`` rounds.

    Returns (modules, evaluation against the true targets, last simulation, rounds)."""
    target = np.array([d.target for d in network.demands], dtype=float)
    working = target.copy()
    rounds = 0
    while True:
        say(None, f"simulating the plan over the day (round {rounds})")
        sim = evaluate(network, choices.capacity(k), method="day-simulate",
                       calls=verify.calls, seed=_seed(verify.seed), progress=progress)
        goal = target * (1.0 - verify.margin)
        over = np.asarray(sim.blocking) > goal
        if not over.any() or rounds >= verify.rounds:
            return k, ev, sim, rounds
        rounds += 1
        ratio = np.where(over, goal / np.maximum(np.asarray(sim.blocking), 1e-300), 1.0)
        approx = np.maximum(np.asarray(ev.blocking), 1e-12)
        # the approximation's figure times the simulated excess: where the plan must get to
        working = np.where(over, np.minimum(working, approx * ratio), working)
        tight = replace(network, demands=tuple(
            replace(d, target=float(w)) for d, w in zip(network.demands, working, strict=True)))
        method = ev.method

        def tight_eval(m, why="", net=tight):
            # counted against the work limit (the day of the tight network is computed once,
            # not also that of the network itself as before: its figure was not used)
            return day_eval(m, why, net)

        k, tev, stuck = _repair(tight, choices, k, tight_eval(k), tight_eval, say)
        if not stuck:
            k, tev = _step_down(choices, k, tev, kmin, tight_eval, say)
        ev = evaluate(network, choices.capacity(k), method=method)
        if stuck:
            return k, ev, sim, rounds


def _start_modules(network, choices):
    """Fewest modules per link that hold the calls in progress at the start of the day."""
    need = np.zeros(len(network.links), dtype=np.int64)
    for d, s in zip(network.demands, network.day.start, strict=True):
        if s and d.routes:
            for j in d.routes[0].links:
                need[j] += s
    return np.minimum(choices.modules_for(need), choices.max_modules)


def _seed(seed):
    return seed if isinstance(seed, int) and not isinstance(seed, bool) else None


def _links_of(network, i):
    d = network.demands[i]
    routes = d.routes if network.routing.policy == "alternate" else d.routes[:1]
    return sorted({j for r in routes for j in r.links})


def _excess(ev):
    """How far the demands are above their targets, relative (0 when all are met)."""
    b, t = np.asarray(ev.blocking), np.asarray(ev.target)
    return float(np.sum(np.maximum(b - t, 0.0) / t))


def _repair(network, choices: SizingChoices, k, ev, day_eval, say):
    """Add modules where a day target is missed, each time the module that takes the most
    excess blocking away per unit of cost; (modules, evaluation, stuck)."""
    while ev.unmet:
        now, cost = _excess(ev), choices.cost(k)
        cands = sorted({j for did in ev.unmet
                        for j in _links_of(network, ev.demand_ids.index(did))
                        if k[j] < choices.max_modules[j]})
        if not cands:
            return k, ev, True
        best = None
        for n, j in enumerate(cands, 1):
            trial = k.copy()
            trial[j] += 1
            tev = day_eval(trial, f" (adding a module: link '{network.links[j].id}', "
                                  f"{n} of {len(cands)} tried)")
            gain = (now - _excess(tev)) / max(choices.cost(trial) - cost, 1e-12)
            if best is None or gain > best[0]:
                best = (gain, j, trial, tev)
        _, j, k, ev = best
        say(None, f"over the day: link '{network.links[j].id}' +1 module")
    return k, ev, False


def _step_down(choices: SizingChoices, k, ev, kmin, day_eval, say):
    """Take modules away while every day target holds, dearest module first.

    A link that cannot give up a module is not tried again: taking modules from the others
    only raises the blockings (the monotonicity the whole search relies on), so at most
    one failed trial per link."""
    order = np.argsort(-np.asarray(choices.cost_per_module, dtype=float), kind="stable")
    done = k <= kmin
    while not done.all():
        for j in order:
            if done[j]:
                continue
            trial = k.copy()
            trial[j] -= 1
            tev = day_eval(trial, f" (taking a module away: link {int(j) + 1}, "
                                  f"{int((~done).sum())} left to try)")
            if tev.all_met:
                k, ev = trial, tev
                done[j] = k[j] <= kmin[j]
                say(None, f"over the day: link {int(j) + 1} -1 module")
            else:
                done[j] = True
    return k, ev


def _why(network, choices, k, ev, did):
    i = ev.demand_ids.index(did)
    top = choices.capacity(choices.max_modules)
    caps = choices.capacity(k)
    at_max = [network.links[j].id for j in _links_of(network, i) if caps[j] >= top[j]]
    figure = float(ev.blocking[i])
    links = f"links {', '.join(at_max)} at max_capacity" if at_max else "no link can grow"
    return f"{figure:.4g} > target {float(ev.target[i]):.4g}; {links}"
