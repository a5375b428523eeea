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

import dataclasses
import time
from dataclasses import dataclass

import numpy as np

from netdim.dimension._lp import SolveStatus, solve
from netdim.dimension.choices import LossTable, SizingChoices

__all__ = ["MilpResult", "solve_secant_milp", "LARGE_DEMANDS", "LARGE_NODES", "is_large"]

#: Demands above which a network's secant MILPs are "large" (a rule of the input's size,
#: docs/measurements/scale.md): the sizing loop's MILPs and the bound's stop at
#: :data:`LARGE_NODES` branch-and-bound nodes, and each of the loop's MILPs after the first
#: starts from the plan before. The bundled networks and the tests' have far fewer.
LARGE_DEMANDS = 5000
#: Branch-and-bound nodes of a large secant MILP: the root (its cuts and searches), which
#: at 1000 sites and 30 000 demands took 9 s and found a plan within 0.34 % of its proven
#: bound, where the default gap took 600 s.
LARGE_NODES = 1


def is_large(n_demands) -> bool:
    """Whether a network of ``n_demands`` demands has large secant MILPs."""
    return int(n_demands) > LARGE_DEMANDS


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
        Building the model and solving it.
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
                      relax=False, node_limit=None, start=None,
                      bound_only=False) -> MilpResult:
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
        Safety stop, seconds, building the model included.
    min_modules : array_like of int, optional
        Fewest modules per link (e.g. to carry the largest bandwidth).
    relax : bool
        Solve the LP relaxation instead (integers become continuous).
    node_limit : int or None
        Most branch-and-bound nodes (a deterministic work limit).
    start : array_like of int, optional
        Added modules per link to hand the solver as a first plan (a warm start; ignored
        where it breaks a constraint, which the solver then repairs or drops).
    bound_only : bool
        Solved for its proven bound only (HiGHS searches for no plans; ``modules`` may then
        be the window's floor, with status ``'error'``).

    Returns
    -------
    MilpResult
        ``modules`` is the plan; a demand whose constraint cannot hold even at every link's
        bound is listed in ``infeasible_demands``; its constraint is dropped and each of its
        links that alone breaks its budget is set to its bound.
    """
    budgets = np.asarray(budgets, dtype=float)
    klo, khi, gfix, bad = _windows(choices, table, routes, budgets, min_modules)
    rows, rhs = _rows(routes, budgets, klo, khi, gfix, bad)
    free = np.flatnonzero(klo < khi)
    const = 0.0
    for j in np.flatnonzero(klo == khi):  # summed in link order, as always
        const += choices.cost_per_module[j] * klo[j]
    const = float(const)
    n_cuts = int(np.sum(khi[free] - klo[free]))
    if not len(free):
        return MilpResult(np.asarray(klo, np.int64), const, const,
                          SolveStatus.OPTIMAL.value, 0.0, 0, tuple(bad))
    kw = dict(solver=solver, relax=relax, mip_gap=mip_gap, time_limit=time_limit,
              node_limit=node_limit, bound_only=bound_only)
    out, values = _solve_rows(choices, table, klo, khi, const, rows, rhs, start, **kw)
    seconds = out.seconds
    k = klo.copy()
    if out.has_solution:
        status = out.status.value
        if relax:
            kf = klo.astype(float)
            kf[free] = values
            k = np.ceil(kf - 1e-9).astype(np.int64)
        else:
            k[free] = values
    else:
        status = (SolveStatus.INFEASIBLE if out.status is SolveStatus.INFEASIBLE
                  else SolveStatus.ERROR).value
    objective, bound = out.objective, out.bound
    return MilpResult(
        modules=np.asarray(k, np.int64),
        objective=objective,
        bound=bound,
        status=status,
        seconds=seconds,
        n_cuts=n_cuts,
        infeasible_demands=tuple(bad),
    )


def _windows(choices, table, routes, budgets, min_modules):
    """Each link's window of module counts, g at its top, and the demands out of reach.

    The window runs from the fewest modules meeting the smallest budget over the link alone
    to where its blocking is negligible (or the bound)."""
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
    return klo, khi, gfix, bad


def _rows(routes, budgets, klo, khi, gfix, bad):
    """The demand constraints ``sum of t_j over the route's free links <= rhs``: per row its
    free links (in route order) and its right-hand side (the budget less the g of the links
    the windows fix)."""
    bad_set = set(bad)
    free = klo < khi
    rows, rhs = [], []
    for d, r in enumerate(routes):
        if not len(r) or d in bad_set:
            continue
        fixed_part = sum(gfix[j] for j in r if not free[j])
        terms = [j for j in r if free[j]]
        if not terms:
            continue
        rows.append(terms)
        rhs.append(float(budgets[d] - fixed_part))
    return rows, np.asarray(rhs, float)


def _solve_rows(choices, table, klo, khi, const, rows, rhs, start, *, solver,
                relax, mip_gap, time_limit, node_limit, bound_only):
    """The secant MILP: the outcome and the module counts of the free links (link order)."""
    import pulp  # about 0.25 s to import: only sizing needs it

    t0 = time.perf_counter()
    prob = pulp.LpProblem("size", pulp.LpMinimize)
    cat = pulp.LpContinuous if relax else pulp.LpInteger
    kvar, tvar = {}, {}
    for j in np.flatnonzero(klo < khi):
        j = int(j)
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
        if start is not None:
            # t_j at g(k_j), the least the cuts allow at whole k_j
            kj = int(min(max(start[j], klo[j]), khi[j]))
            kvar[j].setInitialValue(kj)
            tvar[j].setInitialValue(float(table.g(j, inst + mod * kj)))
    for terms, b in zip(rows, rhs, strict=True):
        prob += pulp.LpAffineExpression([(tvar[j], 1.0) for j in terms]) <= float(b)
    # Fixed costs of links every route needs are constants here; the sizer decides elsewhere
    # which links to build. The links the window fixes are a constant too (see _lp: HiGHS
    # never sees it, and its bound must not lose it).
    prob += pulp.LpAffineExpression(
        [(kvar[j], float(choices.cost_per_module[j])) for j in kvar]
    ) + float(const)
    # The safety stop counts the time spent building the model (3 s of PuLP at 30 000
    # demands), and so do the seconds reported.
    built = time.perf_counter() - t0
    left = None if time_limit is None else max(time_limit - built, 1e-3)
    out = solve(prob, solver, integer=not relax, mip_gap=mip_gap, time_limit=left,
                node_limit=node_limit, warm_start=start is not None, bound_only=bound_only)
    out = dataclasses.replace(out, seconds=out.seconds + built)
    if not out.has_solution:
        return out, None
    values = [v.varValue if relax else int(round(v.varValue)) for v in kvar.values()]
    return out, np.asarray(values, float if relax else np.int64)

