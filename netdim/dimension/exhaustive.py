"""Least cost on small networks by listing every cheaper plan, cheapest first.

Between a valid lower bound ``lo`` on the least cost and the cost ``hi`` of a plan in hand,
a small network has few enough plans to list them all. Evaluated one by one in increasing
cost under the model the plan must satisfy, the first that meets every target is a
least-cost plan; when none does, the plan in hand is one. Stopped early (time, an
evaluation that fails), every plan cheaper than the next one on the list has failed, so the
cost of that next plan is a lower bound. Nothing here is an approximation: the figures are
those of the evaluation itself.

The plans are those the sizer can return (:func:`netdim.dimension.dimension`): added
modules ``0..max_modules`` per link, links no usable route needs left at 0, and for the
links with a fixed cost and nothing installed, the choice of leaving them unbuilt with every
route over them taken away (each subset of them: a network of its own).

The work is bounded by counts (plans listed, all of them evaluated), so the result does not
depend on the machine; a deadline is only a safety stop, reported when it fires.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from enum import Enum

import numpy as np

from netdim.dimension.choices import SizingChoices
from netdim.errors import NetdimError
from netdim.evaluate import evaluate

__all__ = ["Enumeration", "ListingStatus", "least_cost_by_enumeration", "plans_by_cost",
           "listing_limit",
           "MAX_PLANS", "MAX_EXACT_PLANS", "MAX_LINKS", "MAX_DROPPABLE"]

#: Most plans listed (over every choice of unbuilt links) under the fixed point or the
#: conservative model (each evaluation takes milliseconds on the networks listed).
MAX_PLANS = 20_000
#: Most plans listed under the exact model (each evaluation solves a Markov chain).
MAX_EXACT_PLANS = 2_500
#: Most links, and most links that may be left unbuilt, for which plans are listed.
MAX_LINKS = 40
MAX_DROPPABLE = 6
#: Plans within this relative amount of ``hi`` count as costing ``hi`` (not cheaper).
_REL = 1e-9


class ListingStatus(str, Enum):
    """How listing the cheaper plans ended (``details.listing`` of a plan)."""

    IMPROVED = "improved"
    OPTIMAL = "optimal"
    PARTIAL = "partial"
    TOO_MANY = "too-many"
    NOT_APPLICABLE = "not-applicable"

    def __str__(self) -> str:
        return str(self.value)


@dataclass(frozen=True)
class Enumeration:
    """What listing the cheaper plans found.

    Attributes
    ----------
    status : ListingStatus
        ``'improved'`` (a cheaper plan meets every target: ``modules``, ``dropped``),
        ``'optimal'`` (every cheaper plan fails: the plan in hand is a least-cost plan),
        ``'partial'`` (stopped early by the safety deadline or an evaluation that failed:
        ``bound`` holds), ``'too-many'`` (more plans than allowed; nothing evaluated) or
        ``'not-applicable'`` (the reason in ``message``).
    bound : float
        Every plan costing less fails (the least cost itself for 'improved' and 'optimal').
    modules : ndarray of int or None
        The cheapest plan found meeting every target ('improved' only).
    dropped : tuple of int
        Links that plan leaves unbuilt, their routes taken away.
    cost : float
        Its cost ('improved'), else ``hi``.
    plans, evaluated : int
        Plans listed, and evaluated.
    message : str
    stopped_by_time : bool
        The safety deadline stopped the evaluations.
    """

    status: ListingStatus
    bound: float
    modules: np.ndarray | None = None
    dropped: tuple = ()
    cost: float = float("nan")
    plans: int = 0
    evaluated: int = 0
    message: str = ""
    stopped_by_time: bool = False


def listing_limit(method) -> int:
    """Most plans listed under evaluation ``method``."""
    return MAX_EXACT_PLANS if method == "exact" else MAX_PLANS


def plans_by_cost(choices: SizingChoices, lo, hi, free, limit=MAX_PLANS, max_nodes=None):
    """Every plan with ``lo <= cost < hi`` that adds modules only on the links in ``free``.

    Parameters
    ----------
    choices : SizingChoices
    lo, hi : float
        The cost window (fixed costs included, as :meth:`SizingChoices.cost`).
    free : array_like of bool
        Links that may take modules; the others stay at 0 added modules.
    limit : int
        Most plans; more gives None.
    max_nodes : int or None
        Most steps of the search (default ``50 * limit``); more gives None.

    Returns
    -------
    list of (cost, ndarray of int) or None
        Cheapest first; None when there are more than ``limit`` (or the search takes more
        than ``max_nodes`` steps).
    """
    free = np.asarray(free, bool)
    idx = [int(j) for j in np.flatnonzero(free)]
    # dearest links first: fewer choices near the root of the search
    idx.sort(key=lambda j: -float(choices.cost_per_module[j]))
    if any(choices.cost_per_module[j] <= 0 for j in idx):
        return None  # a free link of no cost has no end of plans
    fixed = [float(choices.fixed_cost[j]) if choices.installed[j] == 0 else 0.0 for j in idx]
    price = [float(choices.cost_per_module[j]) for j in idx]
    kmax = [int(choices.max_modules[j]) for j in idx]
    # the most the links from position i on can add: to give up on a branch below lo
    most = [0.0] * (len(idx) + 1)
    for i in range(len(idx) - 1, -1, -1):
        most[i] = most[i + 1] + price[i] * kmax[i] + fixed[i]
    max_nodes = 50 * limit if max_nodes is None else max_nodes
    out: list = []
    k = [0] * len(idx)
    nodes = 0
    top = hi * (1 - _REL) if hi > 0 else hi

    def walk(i, acc):
        nonlocal nodes
        nodes += 1
        if nodes > max_nodes or len(out) > limit:
            return
        if i == len(idx):
            if acc >= lo - _REL * abs(lo):
                out.append(tuple(k))
            return
        if acc + most[i] < lo - _REL * abs(lo):
            return
        for n in range(kmax[i] + 1):
            c = acc + price[i] * n + (fixed[i] if n > 0 else 0.0)
            if c >= top:
                break
            k[i] = n
            walk(i + 1, c)
        k[i] = 0

    walk(0, 0.0)
    if nodes > max_nodes or len(out) > limit:
        return None
    plans = []
    for ks in out:
        full = np.zeros(choices.n_links, np.int64)
        full[idx] = ks
        plans.append((float(choices.cost(full)), full))
    plans.sort(key=lambda p: p[0])
    return plans


def least_cost_by_enumeration(network, choices: SizingChoices, method, lo, hi,
                              limit=MAX_PLANS, deadline=None):
    """Evaluate every plan costing between ``lo`` and ``hi``, cheapest first.

    Parameters
    ----------
    network : Network
        As read (before the sizer takes any link away).
    choices : SizingChoices
    method : {'fixed-point', 'conservative', 'exact'}
        The evaluation a plan must meet every target under (the sizer's model). Under the
        fixed point the solution from idle links decides, as in the sizer.
    lo : float
        A valid lower bound on the least cost (plans cheaper than it are not listed).
    hi : float
        The cost of a plan in hand that meets every target.
    limit : int
        Most plans to list; with more, nothing is evaluated (status 'too-many').
    deadline : float or None
        ``time.perf_counter()`` value after which no further plan is evaluated (a safety
        stop).

    Returns
    -------
    Enumeration

    Notes
    -----
    Exhaustive search with the same evaluation as the plan's own check, so the statement
    "every plan listed before the first feasible one fails" is exact, not estimated. The
    plans costing less than ``lo`` fail by the bound that gave ``lo``; those at ``hi`` or
    above are no improvement. A link at capacity 0 is not built: the evaluation takes its
    routes away (a demand's next route becomes its first choice,
    :func:`netdim.evaluate._network.built_network`), as the sizer does when it leaves a link
    unbuilt, so one listing covers every design; ``dropped`` names the links with a fixed
    cost and nothing installed that the plan leaves at 0.
    """
    if not hi > lo:
        return Enumeration(ListingStatus.OPTIMAL, float(hi), cost=float(hi),
                           message="the bound already equals the cost")
    if choices.n_links > MAX_LINKS:
        return Enumeration(ListingStatus.NOT_APPLICABLE, float(lo), cost=float(hi),
                           message=f"more than {MAX_LINKS} links")
    droppable = [int(j) for j in np.flatnonzero(choices.droppable)]
    if len(droppable) > MAX_DROPPABLE:
        return Enumeration(ListingStatus.NOT_APPLICABLE, float(lo), cost=float(hi),
                           message=f"more than {MAX_DROPPABLE} links may be left unbuilt")
    free = network.usable_links() & (choices.max_modules > 0)
    plans = plans_by_cost(choices, lo, hi, free, limit=limit)
    if plans is None:
        return Enumeration(ListingStatus.TOO_MANY, float(lo), cost=float(hi),
                           message=f"more than {limit} plans between {lo:g} and {hi:g}")
    listed = sorted(((c, i, k) for i, (c, k) in enumerate(plans)), key=lambda p: p[:2])
    opts = {"start": "idle"} if method == "fixed-point" else {}
    for done, (cost, _, k) in enumerate(listed):
        if deadline is not None and time.perf_counter() > deadline:
            return Enumeration(ListingStatus.PARTIAL, float(max(lo, cost)), cost=float(hi),
                               plans=len(listed), evaluated=done, stopped_by_time=True,
                               message=f"the safety stop fired after {done} of "
                               f"{len(listed)} plans")
        try:
            ev = evaluate(network, choices.capacity(k), method=method, **opts)
        except NetdimError as exc:
            return Enumeration(ListingStatus.PARTIAL, float(max(lo, cost)), cost=float(hi),
                               plans=len(listed), evaluated=done,
                               message=f"plan {done + 1} of {len(listed)} could not be "
                               f"evaluated ({exc})")
        if ev.all_met:
            cap = choices.capacity(k)
            gone = tuple(j for j in droppable if cap[j] == 0)
            return Enumeration(ListingStatus.IMPROVED, float(cost), modules=np.asarray(k),
                               dropped=gone, cost=float(cost), plans=len(listed),
                               evaluated=done + 1,
                               message=f"a plan costing {cost:g} meets every target")
    what = (f"each of the {len(listed)} plans costing from {lo:g} to less than {hi:g} misses "
            "a target" if listed else f"no plan costs from {lo:g} to less than {hi:g}")
    return Enumeration(ListingStatus.OPTIMAL, float(hi), cost=float(hi), plans=len(listed),
                       evaluated=len(listed), message=what)
