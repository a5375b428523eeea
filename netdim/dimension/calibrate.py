"""Checking a plan by simulation, and calibrating its working targets until it passes.

Under alternate routing the reduced-load fixed point is optimistic: overflow traffic is
peakier than Poisson and the occupancies of the links a call tries are correlated, neither
of which the fixed point's independent Erlang links see. :func:`calibrate_by_simulation`
simulates the plan and, for every demand whose simulated blocking lies above its goal there
(its target less the margin), tightens that demand's *working* target and sizes again
(:func:`netdim.dimension.local_search.search_and_check` from the plan, or
:func:`netdim.dimension.sizer.size_to_targets`), until no demand lies above its goal or the
rounds run out. The plan's own evaluation stays the one under the
chosen model, against the original targets. The rules are in ``docs/design/sizing.md``.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace

import numpy as np

from netdim.dimension.choices import SizingChoices
from netdim.dimension.local_search import (
    CachedEvaluator,
    evaluation_method,
    min_modules,
    search_and_check,
)
from netdim.dimension.options import SizingOptions, VerifyOptions, silent
from netdim.dimension.plan import Baseline, Plan, make_plan
from netdim.dimension.rules import has_rules, keep_rules
from netdim.dimension.sizer import size_to_targets
from netdim.evaluate.result import verdicts
from netdim.evaluate.simulate import simulate
from netdim.vocabulary import PlanStatus, Verdict

__all__ = ["calibrate_by_simulation", "Calibration", "with_targets"]

#: A working target falls by at most this factor per round.
_MAX_TIGHTEN = 4.0
#: A demand above its goal gets a working target aimed so that its simulated blocking lands
#: at this share of the goal: aiming at the goal itself leaves the next plan a coin toss
#: against the simulation noise.
_AIM_SHARE = 0.95
#: An unclear result is simulated again with 4 times the calls, up to this many times the
#: calls first asked for.
MAX_CALL_FACTOR = 16


def with_targets(network, targets):
    """The network with demand i's target replaced by ``targets[i]``."""
    demands = tuple(replace(d, target=float(t))
                    for d, t in zip(network.demands, targets, strict=True))
    return replace(network, demands=demands)


@dataclass(frozen=True)
class Calibration:
    """What the check by simulation found.

    Attributes
    ----------
    plan : Plan
        The last plan (its own evaluation under the model, against the original targets).
    simulated : Evaluation
        That plan simulated, against the original targets.
    rounds : int
        Re-sizings made.
    working_targets : ndarray
    history : list of (cost, worst simulated blocking / target)
    calls_last : int
        Arrivals of the last simulation.
    seed : int
    calibrated : bool
        Rounds were allowed (a plan sized for cost that met its targets under the model).
    seconds : float
    """

    plan: Plan
    simulated: object
    rounds: int
    working_targets: np.ndarray
    history: list
    calls_last: int
    seed: int
    calibrated: bool
    seconds: float


def calibrate_by_simulation(network, plan: Plan, sizing: SizingOptions,
                            verify: VerifyOptions, *, progress=None, t_start=None) -> Plan:
    """Simulate ``plan``; tighten the working targets of demands above their goal, size again.

    Parameters
    ----------
    network : Network
        The network as given to :func:`netdim.dimension.dimension` (original targets).
    plan : Plan
        The plan sized without verification.
    sizing : SizingOptions
        How to size again.
    verify : VerifyOptions
    progress : callable(fraction, message) or None
    t_start : float or None
        ``time.perf_counter()`` at the start of the sizing (for ``Plan.seconds``).

    Returns
    -------
    Plan
        With ``verification`` the simulated Evaluation of the returned plan, judged against
        the targets (``met``: the whole interval at or below). Status ``feasible`` or
        ``optimal-within-gap`` when no demand misses its target in simulation (some may be
        unclear after the longest run, named in the message and warnings); else
        ``feasible``, naming the demands that still miss.
    """
    progress = progress or silent
    t_start = time.perf_counter() if t_start is None else t_start
    t0 = time.perf_counter()
    seed = _seed(verify.seed)
    orig = np.array([d.target for d in network.demands], dtype=float)
    choices = SizingChoices.from_network(network)
    level = [verify.calls]

    def simulated(p, calls):
        net = with_targets(p.network if p.network is not None else network, orig)
        progress(None, f"verifying by simulation ({calls} calls, seed {seed})")
        return simulate(net, p.capacities, seed=seed, calls=calls)

    # The calibration's goal: each demand's simulated blocking at most target x (1 - margin).
    # A demand whose whole interval lies above its goal is sized again; one whose interval
    # contains its goal or its target is first simulated longer. A demand then ends unclear
    # only when its interval is wider than the margin: chasing point estimates instead buys
    # capacity against the simulation's own noise.
    goal = orig * (1.0 - verify.margin)

    def judged(ver):
        verdict = ver.verdicts()
        against_goal = verdicts(ver.blocking, goal, ver.blocking_interval)
        clear = against_goal == Verdict.MISSED.value  # the whole interval above the goal
        unsure = (verdict == Verdict.UNCLEAR.value) | (against_goal == Verdict.UNCLEAR.value)
        return verdict, clear, unsure

    def settled(p):
        """Simulate ``p``; more calls while some demand is unclear (against its target or its
        goal) and none lies wholly above its goal. Returns the simulation, its verdicts and
        the demands above their goal. A later round starts at the calls the last one
        needed."""
        ver = simulated(p, level[0])
        while True:
            verdict, clear, unsure = judged(ver)
            if clear.any() or not unsure.any() or \
                    level[0] * 4 > verify.calls * MAX_CALL_FACTOR:
                return ver, verdict, clear
            level[0] *= 4
            ver = simulated(p, level[0])

    def longest(p, ver, verdict):
        """The last plan's verdicts against the targets, simulated longer while some demand
        is unclear and none missed."""
        while ((verdict == Verdict.UNCLEAR.value).any()
               and not (verdict == Verdict.MISSED.value).any()
               and level[0] * 4 <= verify.calls * MAX_CALL_FACTOR):
            level[0] *= 4
            ver = simulated(p, level[0])
            verdict = ver.verdicts()
        return ver, verdict

    calibrate = plan.objective == "cost" and plan.status in (PlanStatus.OPTIMAL_WITHIN_GAP,
                                                             PlanStatus.FEASIBLE)
    work = orig.copy()
    cur = plan
    ver, verdict, above = settled(cur)
    done = 0
    history = [(float(cur.cost), _worst(ver))]
    aim = _AIM_SHARE * (1.0 - verify.margin)
    while calibrate and above.any() and done < verify.rounds:
        done += 1
        s = np.asarray(ver.blocking, float)
        b = np.asarray(cur.evaluation.blocking, float)
        base = np.where(b > 0, np.minimum(work, b), work)
        aimed = base * aim * orig / np.maximum(s, 1e-300)
        work = np.where(above, np.minimum(work, np.maximum(aimed, work / _MAX_TIGHTEN)), work)
        # A demand within its goal keeps its working target at or above its present blocking
        # under the model (so the plan still meets it), but no higher than the simulated
        # ratio allows: otherwise the trim of the next round takes back its margin.
        keep = (~above) & (s > 0) & (b > 0)
        held = b * goal / np.maximum(s, 1e-300)
        work = np.where(keep, np.minimum(work, np.maximum(held, b)), work)
        names = [network.demand_ids[i] for i in np.flatnonzero(above)]
        progress(None, f"verify round {done}: {len(names)} demands above their goal in "
                 f"simulation ({', '.join(names[:5])}{' ...' if len(names) > 5 else ''}); "
                 "sizing again")
        nxt = _resize(network, cur, choices, work, orig, sizing, verify, progress)
        if nxt is None:
            # Tighter working targets the bounds cannot meet: keep the last plan.
            progress(None, f"verify round {done}: the {sizing.model} model cannot meet the "
                     "working targets")
            break
        cur = nxt
        ver, verdict, above = settled(cur)
        history.append((float(cur.cost), _worst(ver)))
    ver, verdict = longest(cur, ver, verdict)
    result = Calibration(cur, ver, done, work, history, int(ver.details.get("calls", level[0])),
                         seed, calibrate, time.perf_counter() - t0)
    return _finish(network, plan, result, sizing, verify, t_start)


def _seed(seed) -> int:
    """One int drawn once: it seeds every round alike (common random numbers)."""
    if isinstance(seed, (int, np.integer)) and not isinstance(seed, bool):
        return int(seed)
    return int(np.random.default_rng(seed).integers(2**62))


def _resize(network, cur, choices, work, orig, sizing, verify, progress):
    """``cur`` sized again for working targets ``work``, evaluated against ``orig``; None
    when the model cannot meet them."""
    if verify.restart == "warm":
        net_w = with_targets(cur.network, work)
        found = search_and_check(net_w, choices, cur.modules, min_modules(net_w, choices),
                                 sizing.model, True, sizing.time_limit, progress)
        k, ev = found.modules, found.evaluation
        if has_rules(network):  # the design rules, as size_to_targets keeps them
            kept = keep_rules(network, net_w, choices, k)
            if not np.array_equal(kept, k):
                k = kept
                ev = CachedEvaluator(net_w, choices, evaluation_method(sizing.model),
                                     warm=False)(k)
    else:
        p = size_to_targets(with_targets(network, work), sizing, progress=progress)
        net_w, k, ev = p.network, p.modules, p.evaluation
    if not ev.all_met:
        return None
    ev = replace(ev, target=orig)
    return make_plan(network, with_targets(net_w, orig), choices, k, ev,
                     lower_bound=cur.lower_bound, status=cur.status, message=cur.message,
                     iterations=cur.iterations, solver=cur.solver, seconds=cur.seconds,
                     baseline=_baseline_of(cur), model=cur.model, details=cur.details,
                     warnings=cur.warnings, objective=cur.objective)


def _baseline_of(plan):
    return Baseline(plan.baseline_capacities, plan.baseline_cost)


def _worst(ev):
    r = np.divide(ev.blocking, ev.target, out=np.zeros(len(ev.target)), where=ev.target > 0)
    return float(r.max()) if len(r) else 0.0


def _plural(n, word):
    return f"{n} {word}{'' if n == 1 else 's'}"


def _finish(network, first: Plan, cal: Calibration, sizing, verify, t_start) -> Plan:
    plan, ver = cal.plan, cal.simulated
    verdict = ver.verdicts()
    ids = network.demand_ids
    miss = [ids[i] for i in np.flatnonzero(verdict == Verdict.MISSED.value)]
    unclear = [ids[i] for i in np.flatnonzero(verdict == Verdict.UNCLEAR.value)]
    met = [ids[i] for i in np.flatnonzero(verdict == Verdict.MET.value)]
    details = dict(plan.details)
    details.update({
        "verify": "simulate",
        "verify_calls": int(verify.calls),
        "verify_calls_last": int(cal.calls_last),
        "verify_seed": int(cal.seed),
        "verify_rounds": int(cal.rounds),
        "verify_restart": verify.restart,
        "verify_margin": float(verify.margin),
        "verify_seconds": float(cal.seconds),
        "unverified_cost": float(first.cost),
        "verify_history": [[c, w] for c, w in cal.history],
        "working_targets": [float(t) for t in cal.working_targets],
        "verify_met": met,
        "verify_missed": miss,
        "verify_unclear": unclear,
    })
    warnings = list(plan.warnings)
    n_last = cal.calls_last
    extra = (f"checked by simulation ({n_last} calls, seed {cal.seed}, "
             f"{100 * ver.confidence:.0f}% intervals)")
    iv = ver.blocking_interval
    for i in np.flatnonzero(verdict == Verdict.UNCLEAR.value):
        lo, hi = iv[i]
        warnings.append(f"simulation: demand '{ids[i]}' blocking {ver.blocking[i]:.4g} "
                        f"[{lo:.4g}, {hi:.4g}] against target {ver.target[i]:.4g}: the "
                        f"interval contains the target after {n_last} calls (unclear)")
    for i in np.flatnonzero(verdict == Verdict.MISSED.value):
        lo, hi = iv[i] if iv is not None else (ver.blocking[i], ver.blocking[i])
        warnings.append(f"simulation: demand '{ids[i]}' blocking {ver.blocking[i]:.4g} "
                        f"[{lo:.4g}, {hi:.4g}] > target {ver.target[i]:.4g} (missed)")
    tally = (f"in simulation {len(met)} met, {len(unclear)} unclear, {len(miss)} missed "
             f"of {len(ids)}")
    if not cal.calibrated:
        status, message = plan.status, f"{plan.message}; {tally}; {extra}"
    elif not miss:
        status = (PlanStatus.OPTIMAL_WITHIN_GAP if plan.gap <= max(sizing.mip_gap, 1e-9)
                  else PlanStatus.FEASIBLE)
        how = ("the plan as sized" if cal.rounds == 0 else
               f"after {_plural(cal.rounds, 'round')} of tightened working targets")
        noise = (f"; {_plural(len(unclear), 'demand')} unclear (the simulation's interval "
                 "contains the target after the longest run)" if unclear else "")
        message = (f"every target met under the {plan.model} model and none missed in "
                   f"simulation {how} ({tally}{noise}); cost {plan.cost:g} (unverified plan "
                   f"{first.cost:g}), lower bound {plan.lower_bound:g} "
                   f"({plan.details.get('bound', '')}); {extra}")
    else:
        status = PlanStatus.FEASIBLE
        message = (f"every target met under the {plan.model} model, but in simulation "
                   f"{_plural(len(miss), 'demand')} still miss after "
                   f"{_plural(cal.rounds, 'round')}: {', '.join(miss[:10])}"
                   f"{' ...' if len(miss) > 10 else ''} ({tally}); cost {plan.cost:g}; "
                   f"{extra}")
    return replace(plan, status=status, message=message, verification=ver,
                   warnings=tuple(warnings), details=details,
                   seconds=time.perf_counter() - t_start)
