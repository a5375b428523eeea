"""One sizing MILP at fixed link loads: secant cuts of -log(1 - Erlang B).

For a fixed load ``a_j`` the function ``g_j(n) = -log(1 - E(a_j, n))`` is convex and
decreasing in the integer capacity n, because Erlang B is [1]_. A demand whose route r must
lose at most ``target`` of its calls, with independent link blocking, needs
``sum_{j in r} g_j(n_j) <= -log(1 - target)``. With ``t_j >= g_j`` written as the secants of
``g_j`` between consecutive module counts (exact at every integer point, since g is convex),
the constraints are linear: one integer and one continuous variable per link, no binary per
capacity level.

References
----------
.. [1] E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell System
   Technical Journal 51 (1972) 951-953.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim.dimension._lp import SolveStatus, solve
from netdim.dimension.choices import LossTable, SizingChoices

__all__ = ["MilpResult", "solve_secant_milp"]

#: Secant pieces stop where a link uses less than this share of the smallest budget over it.
_SECANT_TAIL_SHARE = 1e-3


@dataclass(frozen=True)
class MilpResult:
    """The plan of one secant MILP.

    Attributes
    ----------
    modules : ndarray of int
        Added modules per link.
    objective : float
    bound : float
        A proven lower bound on this MILP's optimum (NaN when none is known).
    status : str
        A :class:`netdim.dimension._lp.SolveStatus` value.
    seconds : float
    n_cuts : int
    infeasible_demands : tuple of int
        Demand positions no capacity within bounds can satisfy.
    """

    modules: np.ndarray
    objective: float
    bound: float
    status: str
    seconds: float
    n_cuts: int
    infeasible_demands: tuple


def solve_secant_milp(choices: SizingChoices, table: LossTable, routes, budgets,
                      solver="highs", mip_gap=1e-4, time_limit=None, min_modules=None,
                      relax=False, node_limit=None) -> MilpResult:
    """Least-cost added modules so that every route keeps ``sum g_j <= budget``.

    Parameters
    ----------
    choices : SizingChoices
    table : LossTable
        ``g_j`` at the loads of this MILP.
    routes : sequence of sequence of int
        The constrained route of each demand (link indices); an empty route is skipped.
    budgets : array_like
        ``-log(1 - target)`` per demand.
    solver : {'highs', 'cbc'}
    mip_gap : float
    time_limit : float or None
        Safety stop, seconds.
    min_modules : array_like of int, optional
        Fewest modules per link (e.g. to carry the largest bandwidth).
    relax : bool
        Solve the LP relaxation instead (integers become continuous).
    node_limit : int or None
        Most branch-and-bound nodes (a deterministic work limit).

    Returns
    -------
    MilpResult
        ``modules`` is the plan; a demand whose constraint cannot hold even at every link's
        bound is listed in ``infeasible_demands``; its constraint is dropped and each of its
        links that alone breaks its budget is set to its bound.
    """
    import pulp  # about 0.25 s to import: only sizing needs it

    budgets = np.asarray(budgets, dtype=float)
    nl = choices.n_links
    kmin = (np.zeros(nl, np.int64) if min_modules is None
            else np.asarray(min_modules, np.int64).copy())
    kmax = choices.max_modules
    used = np.zeros(nl, bool)
    tmin = np.full(nl, np.inf)
    for d, r in enumerate(routes):
        for j in r:
            used[j] = True
            tmin[j] = min(tmin[j], budgets[d])

    # The window of module counts each link can take: from the fewest meeting the smallest
    # budget over it alone to where its blocking is negligible (or the bound).
    klo = kmin.copy()
    khi = kmin.copy()
    for j in np.flatnonzero(used):
        inst, mod = choices.installed[j], choices.module[j]
        top = min(int(kmax[j]), max(2, int((table.n1[j] - inst) // mod)))
        ks = np.arange(kmin[j], max(top, kmin[j]) + 1)
        g = table.g(j, inst + mod * ks)
        ok = np.flatnonzero(g <= tmin[j] * (1 + 1e-12))
        if len(ok) == 0:
            klo[j] = khi[j] = ks[-1]
            continue
        klo[j] = ks[ok[0]]
        tail = np.flatnonzero(g <= _SECANT_TAIL_SHARE * tmin[j])
        khi[j] = ks[tail[0]] if len(tail) else ks[-1]

    # Demands that no capacity within the bounds can satisfy: fix their links at the bound.
    gfix = table.g_all(choices.installed + choices.module * khi)
    bad = []
    for d, r in enumerate(routes):
        if len(r) and gfix[list(r)].sum() > budgets[d] * (1 + 1e-9):
            bad.append(d)
            # Its constraint is dropped; a link that alone breaks the budget goes to its
            # bound (the best that link can do), the others stay sized for other demands.
            for j in r:
                if gfix[j] > budgets[d]:
                    klo[j] = khi[j]

    prob = pulp.LpProblem("size", pulp.LpMinimize)
    cat = pulp.LpContinuous if relax else pulp.LpInteger
    kvar, tvar = {}, {}
    const = 0.0
    n_cuts = 0
    for j in range(nl):
        if klo[j] == khi[j]:
            const += choices.cost_per_module[j] * klo[j]
            continue
        kvar[j] = prob.add_variable(f"k{j}", lowBound=int(klo[j]), upBound=int(khi[j]), cat=cat)
        tvar[j] = prob.add_variable(f"t{j}", lowBound=0)
        inst, mod = choices.installed[j], choices.module[j]
        ks = np.arange(klo[j], khi[j] + 1)
        g = table.g(j, inst + mod * ks)
        for i in range(len(ks) - 1):
            slope = g[i + 1] - g[i]
            # t_j >= g(k_i) + slope (k_j - k_i)
            prob += pulp.LpAffineExpression([(tvar[j], 1.0), (kvar[j], -slope)]) >= float(
                g[i] - slope * ks[i]
            )
            n_cuts += 1
    bad_set = set(bad)
    for d, r in enumerate(routes):
        if not len(r) or d in bad_set:
            continue
        fixed_part = sum(gfix[j] for j in r if j not in tvar)
        terms = [(tvar[j], 1.0) for j in r if j in tvar]
        if not terms:
            continue
        prob += pulp.LpAffineExpression(terms) <= float(budgets[d] - fixed_part)
    # Fixed costs of links every route needs are constants here; the sizer decides elsewhere
    # which links to build. The links the window fixes are a constant too (see _lp: HiGHS
    # never sees it, and its bound must not lose it).
    prob += pulp.LpAffineExpression(
        [(kvar[j], float(choices.cost_per_module[j])) for j in kvar]
    ) + float(const)

    k = klo.copy()
    status = SolveStatus.OPTIMAL.value
    seconds = 0.0
    if kvar:
        out = solve(prob, solver, integer=not relax, mip_gap=mip_gap, time_limit=time_limit,
                    node_limit=node_limit)
        seconds = out.seconds
        if out.has_solution:
            status = out.status.value
            for j, v in kvar.items():
                k[j] = int(round(v.varValue)) if not relax else v.varValue
            if relax:
                k = np.ceil(np.asarray(k, float) - 1e-9).astype(np.int64)
        else:
            status = (SolveStatus.INFEASIBLE if out.status is SolveStatus.INFEASIBLE
                      else SolveStatus.ERROR).value
        objective, bound = out.objective, out.bound
    else:
        objective = bound = float(const)
    return MilpResult(
        modules=np.asarray(k, np.int64),
        objective=objective,
        bound=bound,
        status=status,
        seconds=seconds,
        n_cuts=n_cuts,
        infeasible_demands=tuple(bad),
    )
