"""Local search on an integer plan under the evaluation the user chose.

Three passes, each bounded in evaluations:

1. repair: while some target is broken, add one module on the link of each broken demand's
   routes that buys the largest drop of ``-log(1 - E)`` per unit cost at its current load;
2. trim: remove one module at a time, dearest link first, keeping it only when every target
   still holds;
3. move: for a link whose module cannot go, remove it and add a module on a cheaper link of a
   demand it breaks, kept when the swap is feasible and saves money.

The MILP already sizes at loads near the final ones, so these passes touch few links; they
turn an almost-right plan into one that meets every target under the chosen model.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from netdim.dimension.choices import LossTable, SizingChoices
from netdim.dimension.options import silent
from netdim.evaluate import Evaluation, evaluate
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED

__all__ = ["CachedEvaluator", "SearchResult", "repair", "trim", "move", "local_search",
           "search_and_check", "min_modules", "evaluation_method", "search_evaluations",
           "trial_tolerance"]

#: Evaluations of the trim and move passes (at most :data:`SEARCH_EVALUATIONS`) times
#: demands: a large network's passes get fewer evaluations, each costing in proportion to
#: its demands (a rule of the input's size; docs/measurements/scale.md).
SEARCH_WORK = 3_000_000
#: Most evaluations of the trim and move passes.
SEARCH_EVALUATIONS = 600
#: Fewest evaluations of the trim and move passes, however large the network.
MIN_SEARCH_EVALUATIONS = 60


def search_evaluations(n_demands) -> int:
    """Evaluations the trim and move passes may make on a network of ``n_demands``."""
    return int(min(SEARCH_EVALUATIONS,
                   max(MIN_SEARCH_EVALUATIONS, SEARCH_WORK // max(int(n_demands), 1))))


#: Tolerance of the search's evaluations, relative to the smallest target: a trial plan
#: differs from the last by a module or two, and whether it meets the targets is read to
#: this accuracy; the plan the search ends with is evaluated afresh at the method's own
#: tolerance, and repaired if that disagrees (:func:`search_and_check`).
TRIAL_RTOL = 1e-5
#: The search's tolerance stays within these (the fixed points' own default is the floor).
TRIAL_TOL_RANGE = (1e-10, 1e-7)


def trial_tolerance(network) -> float:
    """Tolerance of the local search's evaluations of ``network`` (see :data:`TRIAL_RTOL`)."""
    targets = [d.target for d in network.demands if d.target is not None and d.target > 0]
    lo, hi = TRIAL_TOL_RANGE
    return float(min(max(TRIAL_RTOL * min(targets, default=0.0), lo), hi))


#: Seconds the trim and move passes may take (a safety stop: the passes are bounded in
#: evaluations; repair is never cut short).
SEARCH_SECONDS = 120.0


def evaluation_method(model) -> str:
    """The evaluation method a sizing model is checked with."""
    return {"conservative": "conservative", "exact": "exact",
            PEAKED: PEAKED}.get(model, "fixed-point")


class CachedEvaluator:
    """Evaluation of an integer module vector under one method, counting calls.

    ``warm``: each evaluation under a fixed point starts from the last one's solution;
    ``tol``: the fixed points' tolerance for those warm-started evaluations (None: the
    method's own), as the local search's trials use :func:`trial_tolerance`.
    """

    def __init__(self, network, choices: SizingChoices, method, warm=True, tol=None):
        self.network = network
        self.choices = choices
        self.method = method
        self.calls = 0
        self._cache = {}
        # Under the fixed point, trial plans differ from the last one by a module or two:
        # starting from its link blockings solves once and in few sweeps. The final plan is
        # evaluated afresh (both starts) by the caller.
        self.warm = warm and method in ("fixed-point", PEAKED)
        # ``tol``: the local search's trials read the targets to trial_tolerance (a fresh
        # evaluation of the plan it ends with keeps the method's own)
        self._opts = {"tol": float(tol)} if tol is not None and self.warm else {}
        self._last = None
        self._links_demands = None

    def __call__(self, modules) -> Evaluation:
        key = np.asarray(modules, np.int64).tobytes()
        ev = self._cache.get(key)
        if ev is None:
            self.calls += 1
            opts = dict(self._opts)
            if self.warm and self._last is not None:
                opts["start"] = self._last
            ev = evaluate(self.network, self.choices.capacity(modules), method=self.method,
                          **opts)
            self._last = ev
            if len(self._cache) > 64:
                self._cache.clear()
            self._cache[key] = ev
        return ev

    def links_demands(self):
        """Per link, the demands whose usable routes cross it."""
        if self._links_demands is None:
            net = self.network
            out = [[] for _ in net.links]
            for d, links in enumerate(_demand_links(net, _alternate(net))):
                for j in links:
                    out[j].append(d)
            self._links_demands = out
        return self._links_demands


def _alternate(network) -> bool:
    return network.routing.policy == "alternate"


def min_modules(network, choices: SizingChoices) -> np.ndarray:
    """Fewest modules per link so that every first route can carry its bandwidth."""
    need = np.zeros(choices.n_links, np.int64)
    for d in network.demands:
        if d.routes and d.traffic > 0:
            for j in d.routes[0].links:
                need[j] = max(need[j], d.bandwidth)
    return np.minimum(choices.modules_for(need), choices.max_modules)


def _demand_links(network, alternate):
    out = []
    for d in network.demands:
        routes = d.routes if alternate else d.routes[:1]
        out.append(sorted({j for r in routes for j in r.links}))
    return out


def _gain(choices, ev, k, links):
    """Drop of -log(1 - E) per unit cost when one module is added to each of ``links``."""
    links = np.asarray(links, np.int64)
    table = LossTable(ev.link_offered[links], choices.installed[links], choices.module[links])
    cap = choices.capacity(k)[links]
    idx = np.arange(len(links))
    now = np.array([table.g(i, c) for i, c in zip(idx, cap, strict=True)])
    nxt = np.array([table.g(i, c)
                    for i, c in zip(idx, cap + choices.module[links], strict=True)])
    drop = np.where(np.isfinite(now), now - nxt, 1e9)
    price = choices.cost_per_module[links] + 1e-12
    return drop / price


def repair(evaluator: CachedEvaluator, modules, alternate, max_rounds=200):
    """Add modules until every target holds or nothing more can be added.

    Returns
    -------
    modules : ndarray
    stuck : list of int
        Demands still broken whose every link is at its bound.
    """
    choices = evaluator.choices
    k = np.asarray(modules, np.int64).copy()
    dl = _demand_links(evaluator.network, alternate)
    routes = [[r.links for r in (d.routes if alternate else d.routes[:1])]
              for d in evaluator.network.demands]
    stuck = []
    best_excess, idle = np.inf, 0
    for _ in range(max_rounds):
        ev = evaluator(k)
        broken = np.flatnonzero(~ev.met)
        if not len(broken):
            return k, []
        # Stop when the excess -log survival over the budgets no longer falls: the broken
        # demands are held by links at their bounds.
        lost = np.minimum(ev.blocking[broken], 1 - 1e-12)  # a demand losing every call
        excess = float(np.sum(np.log1p(-ev.target[broken]) - np.log1p(-lost)))
        if excess < best_excess * (1 - 1e-6):
            best_excess, idle = excess, 0
        else:
            idle += 1
            if idle >= 3:
                return k, [int(d) for d in broken]
        add = set()
        stuck = []
        lb = np.asarray(ev.link_blocking, float)
        for d in broken:
            budget = -np.log1p(-ev.target[d])
            if len(routes[d]) == 1 and any(
                k[j] >= choices.max_modules[j] and -np.log1p(-min(lb[j], 1 - 1e-12)) > budget
                for j in routes[d][0]
            ):
                # A link of its only route, at its bound, alone loses more than the target.
                stuck.append(int(d))
                continue
            cand = [j for j in dl[d] if k[j] < choices.max_modules[j]]
            if not cand:
                stuck.append(int(d))
                continue
            score = _gain(choices, ev, k, cand)
            add.add(cand[int(np.argmax(score))])
        if not add:
            return k, stuck
        for j in add:
            k[j] += 1
    return k, stuck


def trim(evaluator: CachedEvaluator, modules, kmin, max_evals=400, deadline=None):
    """Remove modules, dearest first, while every target still holds."""
    choices = evaluator.choices
    k = np.asarray(modules, np.int64).copy()
    order = np.argsort(-choices.cost_per_module * choices.module, kind="stable")
    evals = 0
    improved = True
    alt = _alternate(evaluator.network)
    while improved and evals < max_evals:
        improved = False
        ev = evaluator(k)
        slack = -np.log1p(-ev.target) + np.log1p(-ev.blocking)
        dl = evaluator.links_demands()
        delta = _removal_cost(choices, ev, k)
        for j in order:
            if k[j] <= kmin[j] or choices.cost_per_module[j] <= 0:
                continue
            ds = dl[j]
            # Screen: at the present loads, one module less raises -log(1 - E) on j by
            # delta[j]; under fixed routing that is roughly what every demand over j loses
            # of its slack (the evaluation decides).
            if ds and not alt and delta[j] > 1.05 * np.min(slack[ds]):
                continue
            trial = k.copy()
            trial[j] -= 1
            evals += 1
            if evaluator(trial).all_met:
                k = trial
                improved = True
                ev = evaluator(k)
                slack = -np.log1p(-ev.target) + np.log1p(-ev.blocking)
            if evals >= max_evals or (deadline is not None and time.perf_counter() > deadline):
                return k
    return k


def _removal_cost(choices, ev, k):
    table = LossTable(ev.link_offered, choices.installed, choices.module)
    cap = choices.capacity(k)
    lower = np.maximum(cap - choices.module, 0)
    with np.errstate(invalid="ignore"):
        d = table.g_all(lower) - table.g_all(cap)
    return np.where(np.isnan(d), np.inf, d)


def move(evaluator: CachedEvaluator, modules, kmin, max_evals=200, deadline=None):
    """Swap a module from a dear link to a cheaper one when feasible and cheaper."""
    choices = evaluator.choices
    net = evaluator.network
    dl = _demand_links(net, _alternate(net))
    k = np.asarray(modules, np.int64).copy()
    order = np.argsort(-choices.cost_per_module, kind="stable")
    evals = 0
    for j in order:
        if k[j] <= kmin[j]:
            continue
        trial = k.copy()
        trial[j] -= 1
        ev = evaluator(trial)
        evals += 1
        if ev.all_met:
            k = trial
            continue
        broken = np.flatnonzero(~ev.met)
        cand = sorted(
            {i for d in broken for i in dl[d]
             if i != j and trial[i] < choices.max_modules[i]
             and choices.cost_per_module[i] < choices.cost_per_module[j]}
        )
        if not cand:
            continue
        score = _gain(choices, ev, trial, cand)
        for pos in np.argsort(-score)[:2]:
            i = cand[int(pos)]
            t2 = trial.copy()
            t2[i] += 1
            evals += 1
            if choices.cost(t2) < choices.cost(k) and evaluator(t2).all_met:
                k = t2
                break
        if evals >= max_evals or (deadline is not None and time.perf_counter() > deadline):
            break
    return k


def local_search(evaluator: CachedEvaluator, modules, kmin, max_evals=600, deadline=None,
                 progress=None):
    """Repair, trim and move; returns ``(modules, stuck demands)``."""
    alt = _alternate(evaluator.network)
    progress = progress or silent
    k, stuck = repair(evaluator, modules, alt)
    progress(None, f"local search: repaired, {evaluator.calls} evaluations")
    if stuck:
        return k, stuck
    k = trim(evaluator, k, kmin, max_evals=max_evals // 2, deadline=deadline)
    k = move(evaluator, k, kmin, max_evals=max_evals // 2, deadline=deadline)
    k = trim(evaluator, k, kmin, max_evals=max_evals // 4, deadline=deadline)
    progress(None, f"local search: trimmed and moved, {evaluator.calls} evaluations")
    return k, []


@dataclass(frozen=True)
class SearchResult:
    """A plan after the local search and its fresh evaluation.

    Attributes
    ----------
    modules : ndarray of int
    evaluation : Evaluation
        The plan evaluated afresh (not warm-started).
    stuck : tuple of int
        Demands the search could not repair (links at their bounds).
    evaluations : int
        Evaluations the search made.
    stopped_by_time : bool
        The safety stop of :data:`SEARCH_SECONDS` (or the caller's) cut the search short.
    """

    modules: np.ndarray
    evaluation: Evaluation
    stuck: tuple
    evaluations: int
    stopped_by_time: bool = False


def search_and_check(network, choices: SizingChoices, modules, kmin, model, search=True,
                     time_limit=None, progress=None) -> SearchResult:
    """Local search under ``model``, then a fresh evaluation (and repair when it disagrees).

    Links no usable route needs are not built.
    """
    progress = progress or silent
    method = evaluation_method(model)
    evaluator = CachedEvaluator(network, choices, method, tol=trial_tolerance(network))
    stuck: list[int] = []
    k = np.asarray(modules, np.int64)
    stopped = False
    if search:
        progress(None, "local search under the " + model + " model")
        # The passes are bounded in evaluations; this is a safety stop on slow machines.
        budget = SEARCH_SECONDS if time_limit is None else max(4 * time_limit, 5.0)
        deadline = time.perf_counter() + budget
        k, stuck = local_search(evaluator, k, kmin, deadline=deadline, progress=progress,
                                max_evals=search_evaluations(len(network.demands)))
        stopped = time.perf_counter() > deadline
    used = network.usable_links()
    k = np.where(used | (choices.installed > 0), k, 0)
    ev = CachedEvaluator(network, choices, method, warm=False)(k)
    if not ev.all_met and evaluator.warm and not stuck:
        # The warm-started search tracked another solution of the fixed-point equations:
        # repair under the full evaluation.
        progress(None, "repairing under the fresh evaluation")
        cold = CachedEvaluator(network, choices, method, warm=False)
        k, extra = repair(cold, k, _alternate(network))
        stuck = sorted(set(stuck) | set(extra))
        ev = cold(k)
    return SearchResult(np.asarray(k, np.int64), ev, tuple(stuck), evaluator.calls, stopped)
