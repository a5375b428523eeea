"""Design rules a plan keeps: a minimum size for a group built new, and route diversity.

- ``min_capacity`` (per link): a link with nothing installed that the plan builds
  (capacity > 0) has at least ``min_capacity`` units; leaving it unbuilt (0) is allowed.
  The rule is semi-continuous: capacity in ``{0} | [min_capacity, max_capacity]``.
- ``diversity`` K (per demand): the plan keeps built (capacity > 0) every link of at least
  K link-disjoint candidate routes of the demand.

How the sizer honours them (the choice is documented here once): per demand with K > 1 the
K link-disjoint candidate routes with the fewest links in all are chosen once, before
sizing, and their links are *forced*: each gets a floor of modules (at least one unit, and
``min_capacity`` when it has one) and is never tried for leaving out. A link on a first
route with traffic is built by every plan, so ``min_capacity`` there is a floor too; the
MILP's floors then make its semi-continuous constraint exact (a used link is built). A
link only the later steps build (an alternate route the local search raised from 0) is
raised to its ``min_capacity`` afterwards (:func:`raise_to_min_capacity`); more capacity
only lowers blocking, and the plan is evaluated again after it.

Choosing the routes in advance can cost more than choosing them inside the MILP; lower
bounds are computed without the rules, which keeps them valid (adding constraints only
raises the optimum).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from netdim.dimension.choices import SizingChoices

__all__ = ["RuleCheck", "disjoint_routes", "forced_links", "rule_floor",
           "raise_to_min_capacity", "keep_rules", "check_rules", "has_rules"]

#: Most search steps spent choosing the disjoint routes of one demand (beyond it the best
#: set found so far is used; the routes are few in practice).
_MAX_STEPS = 100_000


@dataclass(frozen=True)
class RuleCheck:
    """One design rule on one link or demand of a plan.

    Attributes
    ----------
    rule : {'min_capacity', 'diversity'}
    item : str
        ``link 'ID'`` or ``demand 'ID'``.
    met : bool
    why : str
        What was found (the reason when not met).
    """

    rule: str
    item: str
    met: bool
    why: str

    def to_dict(self) -> dict:
        return {"rule": self.rule, "item": self.item, "met": bool(self.met), "why": self.why}


def has_rules(network) -> bool:
    """Whether any link has a ``min_capacity`` or any demand a diversity above 1."""
    return (any(link.min_capacity for link in network.links)
            or any(d.diversity > 1 for d in network.demands))


def disjoint_routes(routes, k, usable=None) -> tuple[tuple[int, ...], int]:
    """The ``k`` link-disjoint routes with the fewest links in all, by exhaustive search.

    Parameters
    ----------
    routes : sequence of Route
    k : int
    usable : callable(Route) -> bool, optional
        Routes it rejects are left out.

    Returns
    -------
    chosen : tuple of int
        Indices into ``routes`` of the chosen set; empty when fewer than ``k`` exist.
    most : int
        The most link-disjoint routes found (at least ``k`` when ``chosen`` is not empty;
        exact unless the search hit its step limit).
    """
    cand = sorted((i for i, r in enumerate(routes) if usable is None or usable(r)),
                  key=lambda i: (routes[i].hops, i))
    sets = [frozenset(routes[i].links) for i in cand]
    best: list = [None, float("inf")]
    most = [0]
    steps = [0]

    def walk(start, taken, used, links):
        steps[0] += 1
        most[0] = max(most[0], len(taken))
        if len(taken) >= k:
            if links < best[1]:
                best[0], best[1] = tuple(taken), links
            return
        for p in range(start, len(cand)):
            if steps[0] > _MAX_STEPS:
                return
            # sorted by hops: the rest cannot beat the best found
            if links + len(sets[p]) * (k - len(taken)) >= best[1]:
                return
            if used & sets[p]:
                continue
            walk(p + 1, taken + [cand[p]], used | sets[p], links + len(sets[p]))

    walk(0, [], frozenset(), 0)
    if best[0] is None:
        # the most disjoint routes (for the message), without the size cut-off
        most[0] = max(most[0], _most_disjoint(sets))
        return (), min(most[0], k - 1)
    return tuple(sorted(best[0])), max(most[0], k)


def _most_disjoint(sets) -> int:
    top = [0]
    steps = [0]

    def walk(start, n, used):
        steps[0] += 1
        top[0] = max(top[0], n)
        if steps[0] > _MAX_STEPS or n + len(sets) - start <= top[0]:
            return
        for p in range(start, len(sets)):
            if not used & sets[p]:
                walk(p + 1, n + 1, used | sets[p])

    walk(0, 0, frozenset())
    return top[0]


def forced_links(network) -> np.ndarray:
    """Per link (bool array): a link of the chosen disjoint routes of some demand."""
    forced = np.zeros(len(network.links), bool)
    for d in network.demands:
        if d.diversity > 1:
            chosen, _ = disjoint_routes(d.routes, d.diversity)
            for i in chosen:
                forced[list(d.routes[i].links)] = True
    return forced


def rule_floor(network, choices: SizingChoices, forced) -> np.ndarray:
    """Fewest modules per link the rules ask for: forced links at least one unit, and a
    link with nothing installed that is forced or on a first route with traffic (so built
    by every plan) at least its ``min_capacity``; capped at the link's bound."""
    need = np.zeros(choices.n_links, np.int64)
    on_first = np.zeros(choices.n_links, bool)
    for d in network.demands:
        if d.routes and d.traffic > 0:
            on_first[list(d.routes[0].links)] = True
    for j, link in enumerate(network.links):
        built = bool(forced[j]) or on_first[j]
        if forced[j]:
            need[j] = 1
        if built and link.min_capacity and choices.installed[j] == 0:
            need[j] = max(need[j], int(link.min_capacity))
    return np.minimum(choices.modules_for(need), choices.max_modules)


def raise_to_min_capacity(network, choices: SizingChoices, modules) -> np.ndarray:
    """``modules`` with every link built new below its ``min_capacity`` raised to it."""
    k = np.asarray(modules, np.int64).copy()
    caps = choices.capacity(k)
    for j, link in enumerate(network.links):
        if (link.min_capacity and choices.installed[j] == 0
                and 0 < caps[j] < link.min_capacity):
            k[j] = min(_modules_for(choices, j, link.min_capacity),
                       int(choices.max_modules[j]))
    return k


def keep_rules(network, net, choices: SizingChoices, modules, forced=None) -> np.ndarray:
    """``modules`` raised where the rules ask: the floors of :func:`rule_floor` (on ``net``,
    the network the plan is for) and :func:`raise_to_min_capacity`. ``network`` is the
    network as given (its demands' candidate routes choose the forced links)."""
    forced = forced_links(network) if forced is None else forced
    k = np.maximum(np.asarray(modules, np.int64), rule_floor(net, choices, forced))
    return raise_to_min_capacity(network, choices, k)


def _modules_for(choices, j, units) -> int:
    need = int(units) - int(choices.installed[j])
    return max(0, -(-need // int(choices.module[j])))


def check_rules(network, choices: SizingChoices, modules) -> tuple[RuleCheck, ...]:
    """Every rule of ``network`` (the network as given) judged on ``modules``.

    Diversity counts the candidate routes of the network as given whose links all have
    capacity > 0 in the plan.
    """
    caps = choices.capacity(modules)
    out = []
    for j, link in enumerate(network.links):
        if not link.min_capacity:
            continue
        item = f"link '{link.id}'"
        c, m = int(caps[j]), int(link.min_capacity)
        if choices.installed[j] > 0:
            out.append(RuleCheck("min_capacity", item, True,
                                 f"{c} units; already installed, so not built new"))
        elif c == 0:
            out.append(RuleCheck("min_capacity", item, True, "not built"))
        elif c >= m:
            out.append(RuleCheck("min_capacity", item, True, f"built with {c} >= {m} units"))
        else:
            top = int(choices.capacity(choices.max_modules)[j])
            why = (f"{item}: built with {c} units, below min_capacity {m}"
                   + (f" (at most {top} units fit within max_capacity in modules of "
                      f"{int(choices.module[j])})" if top < m else ""))
            out.append(RuleCheck("min_capacity", item, False, why))
    for d in network.demands:
        if d.diversity <= 1:
            continue
        item = f"demand '{d.id}'"
        k = d.diversity
        _, possible = disjoint_routes(d.routes, k)
        if possible < k:
            s = "" if possible == 1 else "s"
            out.append(RuleCheck("diversity", item, False,
                                 f"demand '{d.id}': only {possible} link-disjoint candidate "
                                 f"route{s}, diversity {k} cannot be met"))
            continue
        chosen, built = disjoint_routes(d.routes, k,
                                        usable=lambda r: bool(np.all(caps[list(r.links)] > 0)))
        if chosen:
            out.append(RuleCheck("diversity", item, True,
                                 f"{k} link-disjoint routes built"))
        else:
            s = "" if built == 1 else "s"
            out.append(RuleCheck("diversity", item, False,
                                 f"demand '{d.id}': only {built} link-disjoint route{s} "
                                 f"built, diversity {k} not met"))
    return tuple(out)
