"""Local search on an integer plan under the evaluation the user chose.

Three passes, each bounded in evaluations:

1. repair: while some target is broken, add one module on the link of each broken demand's
   routes that buys the largest drop of ``-log(1 - E)`` per unit cost at its current load;
2. trim: remove one module at a time, dearest link first, keeping it only when every target
   still holds;
3. move: for a link whose module cannot go, remove it and add a module on a cheaper link of a
   demand it breaks, kept when the swap is feasible and saves money.

The MILP already sizes at loads near the final ones, so these passes touch few links; they
turn an almost-right plan into one that meets every target under the chosen model (the
reduced-load approximation, the conservative product bound, or the exact solution).
"""

from __future__ import annotations

import numpy as np

from netdim.dimension.space import LossTable

__all__ = ["Evaluator", "repair", "trim", "move", "polish_plan"]


class Evaluator:
    """Evaluation of an integer module vector under one method, counting calls."""

    def __init__(self, network, space, method, warm=True):
        from netdim.evaluate import evaluate

        self.network = network
        self.space = space
        self.method = method
        self._evaluate = evaluate
        self.calls = 0
        self._cache = {}
        # Under the fixed point, trial plans differ from the last one by a module or two:
        # starting from its link blockings solves once and in few sweeps. The final plan is
        # evaluated afresh (both starts) by the caller.
        self.warm = warm and method == "fixed-point"
        self._last = None

    def __call__(self, k):
        key = np.asarray(k, np.int64).tobytes()
        ev = self._cache.get(key)
        if ev is None:
            self.calls += 1
            opts = {"start": self._last} if self.warm and self._last is not None else {}
            ev = self._evaluate(self.network, self.space.capacity(k), method=self.method,
                                **opts)
            self._last = ev
            if len(self._cache) > 64:
                self._cache.clear()
            self._cache[key] = ev
        return ev


def _demand_links(network, alternate):
    out = []
    for d in network.demands:
        routes = d.routes if alternate else d.routes[:1]
        out.append(sorted({j for r in routes for j in r.links}))
    return out


def _gain(space, ev, k, links):
    """Drop of -log(1 - E) per unit cost when one module is added to each of ``links``."""
    links = np.asarray(links, np.int64)
    table = LossTable(ev.link_offered[links], space.installed[links], space.module[links])
    cap = space.capacity(k)[links]
    idx = np.arange(len(links))
    now = np.array([table.g(i, c) for i, c in zip(idx, cap, strict=True)])
    nxt = np.array([table.g(i, c) for i, c in zip(idx, cap + space.module[links], strict=True)])
    drop = np.where(np.isfinite(now), now - nxt, 1e9)
    price = space.cost_per_module[links] + 1e-12
    return drop / price


def repair(evaluator, k, alternate, max_rounds=200, progress=None):
    """Add modules until every target holds or nothing more can be added.

    Returns
    -------
    k : ndarray
    stuck : list of int
        Demands still broken whose every link is at its bound.
    """
    space = evaluator.space
    k = np.asarray(k, np.int64).copy()
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
                k[j] >= space.kmax[j] and -np.log1p(-min(lb[j], 1 - 1e-12)) > budget
                for j in routes[d][0]
            ):
                # A link of its only route, at its bound, alone loses more than the target.
                stuck.append(int(d))
                continue
            cand = [j for j in dl[d] if k[j] < space.kmax[j]]
            if not cand:
                stuck.append(int(d))
                continue
            score = _gain(space, ev, k, cand)
            add.add(cand[int(np.argmax(score))])
        if not add:
            return k, stuck
        for j in add:
            k[j] += 1
    return k, stuck


def trim(evaluator, k, kmin, max_evals=400, deadline=None):
    """Remove modules, dearest first, while every target still holds."""
    import time

    space = evaluator.space
    k = np.asarray(k, np.int64).copy()
    order = np.argsort(-space.cost_per_module * space.module, kind="stable")
    evals = 0
    improved = True
    alt = evaluator.network.routing.policy == "alternate"
    while improved and evals < max_evals:
        improved = False
        ev = evaluator(k)
        slack = -np.log1p(-ev.target) + np.log1p(-ev.blocking)
        dl = _links_demands(evaluator)
        delta = _removal_cost(space, ev, k)
        for j in order:
            if k[j] <= kmin[j] or space.cost_per_module[j] <= 0:
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


def _removal_cost(space, ev, k):
    table = LossTable(ev.link_offered, space.installed, space.module)
    cap = space.capacity(k)
    lower = np.maximum(cap - space.module, 0)
    with np.errstate(invalid="ignore"):
        d = table.g_all(lower) - table.g_all(cap)
    return np.where(np.isnan(d), np.inf, d)


def _links_demands(evaluator):
    cache = getattr(evaluator, "_ld", None)
    if cache is None:
        net = evaluator.network
        alt = net.routing.policy == "alternate"
        cache = [[] for _ in net.links]
        for d, links in enumerate(_demand_links(net, alt)):
            for j in links:
                cache[j].append(d)
        evaluator._ld = cache
    return cache


def move(evaluator, k, kmin, max_evals=200, deadline=None):
    """Swap a module from a dear link to a cheaper one when feasible and cheaper."""
    import time

    space = evaluator.space
    net = evaluator.network
    alt = net.routing.policy == "alternate"
    dl = _demand_links(net, alt)
    k = np.asarray(k, np.int64).copy()
    order = np.argsort(-space.cost_per_module, kind="stable")
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
             if i != j and trial[i] < space.kmax[i]
             and space.cost_per_module[i] < space.cost_per_module[j]}
        )
        if not cand:
            continue
        score = _gain(space, ev, trial, cand)
        for pos in np.argsort(-score)[:2]:
            i = cand[int(pos)]
            t2 = trial.copy()
            t2[i] += 1
            evals += 1
            if space.cost(t2) < space.cost(k) and evaluator(t2).all_met:
                k = t2
                break
        if evals >= max_evals or (deadline is not None and time.perf_counter() > deadline):
            break
    return k


def polish_plan(evaluator, k, kmin, max_evals=600, deadline=None, progress=None):
    """Repair, trim and move; returns (k, stuck demands, stats)."""
    alt = evaluator.network.routing.policy == "alternate"
    k, stuck = repair(evaluator, k, alt)
    if progress:
        progress(f"polish: repaired, {evaluator.calls} evaluations")
    if stuck:
        return k, stuck, {"evaluations": evaluator.calls}
    k = trim(evaluator, k, kmin, max_evals=max_evals // 2, deadline=deadline)
    k = move(evaluator, k, kmin, max_evals=max_evals // 2, deadline=deadline)
    k = trim(evaluator, k, kmin, max_evals=max_evals // 4, deadline=deadline)
    if progress:
        progress(f"polish: trimmed and moved, {evaluator.calls} evaluations")
    return k, [], {"evaluations": evaluator.calls}
