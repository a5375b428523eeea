"""One sizing MILP at fixed link loads: secant cuts of -log(1 - Erlang B).

For a fixed load ``a_j`` the function ``g_j(n) = -log(1 - E(a_j, n))`` is convex and
decreasing in the integer capacity n, because Erlang B is (Messerli 1972). A demand whose
route r must lose at most ``target`` of its calls, with independent link blocking, needs
``sum_{j in r} g_j(n_j) <= -log(1 - target)``. With ``t_j >= g_j`` written as the secants of
``g_j`` between consecutive integer module counts (exact at every integer point, since g is
convex), the constraints are linear: one integer and one continuous variable per link, no
binary per capacity level.

References
----------
E. J. Messerli, "Proof of a convexity property of the Erlang B formula", Bell System
Technical Journal 51 (1972) 951-953.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

__all__ = ["SOLVERS", "MilpResult", "solve_secant_milp", "make_solver", "add_route_flows"]

#: Solver names accepted by :func:`netdim.dimension.dimension`.
SOLVERS = ("highs", "cbc")

#: Secant pieces stop where a link uses less than this share of the smallest budget over it.
_TAIL = 1e-3


@dataclass(frozen=True)
class MilpResult:
    k: np.ndarray  # added modules per link
    objective: float
    bound: float  # a lower bound on this MILP's optimum
    status: str  # 'optimal', 'time-limit', 'infeasible', 'error'
    seconds: float
    n_cuts: int
    infeasible_demands: tuple  # demand positions no capacity within bounds can satisfy


def make_solver(name, mip_gap, time_limit):
    """The PuLP solver object for ``name`` ('highs' or 'cbc').

    Raises
    ------
    ValueError
        Unknown solver name (the message lists the valid ones).
    """
    import pulp

    if name not in SOLVERS:
        raise ValueError(f"solver: unknown solver {name!r}; choose one of {', '.join(SOLVERS)}")
    if name == "highs":
        try:
            _quiet_highs()
            return pulp.HiGHS(msg=False, gapRel=mip_gap, timeLimit=time_limit, threads=1)
        except ImportError:  # highspy missing: PuLP's bundled CBC is the fallback
            pass
    import warnings

    with warnings.catch_warnings():
        # PuLP 3 warns that the bundled CBC goes in PuLP 4; it is still the bundled one here.
        warnings.simplefilter("ignore", DeprecationWarning)
        return pulp.PULP_CBC_CMD(msg=False, gapRel=mip_gap, timeLimit=time_limit)


def add_route_flows(prob, network, all_routes):
    """Add a carried-traffic variable per demand and route to the PuLP problem ``prob``.

    Returns ``(flows, usage)``: ``flows[i]`` the variables of demand i (its usable routes:
    every route when ``all_routes``, else the first), ``usage[j]`` the ``(variable, units
    per erlang)`` terms of link j, units being bandwidth times the step's holding over the
    demand's holding.
    """
    usage = [[] for _ in network.links]
    flows = []
    for i, d in enumerate(network.demands):
        xs = []
        for r_i, r in enumerate(d.routes if all_routes else d.routes[:1]):
            x = prob.add_variable(f"x{i}_{r_i}", lowBound=0)
            xs.append(x)
            for j, h in zip(r.links, r.holdings, strict=True):
                usage[j].append((x, d.bandwidth * h / d.holding))
        flows.append(xs)
    return flows, usage


_HIGHS_READY = False


def _quiet_highs():
    """Create one HiGHS object with stdout closed: its banner, printed once per process on
    the first construction, would otherwise corrupt the command line's JSON output."""
    global _HIGHS_READY
    if _HIGHS_READY:
        return
    import os
    import sys

    import highspy

    sys.stdout.flush()
    saved = os.dup(1)
    try:
        with open(os.devnull, "w") as null:
            os.dup2(null.fileno(), 1)
            highspy.Highs()
    finally:
        os.dup2(saved, 1)
        os.close(saved)
    _HIGHS_READY = True


def solve_secant_milp(space, table, routes, budgets, solver="highs", mip_gap=1e-4,
                      time_limit=None, kmin=None, relax=False):
    """Least-cost added modules so that every route keeps ``sum g_j <= budget``.

    Parameters
    ----------
    space : LinkSpace
    table : LossTable
        ``g_j`` at the loads of this MILP.
    routes : sequence of sequence of int
        The constrained route of each demand (link indices); an empty route is skipped.
    budgets : array_like
        ``-log(1 - target)`` per demand.
    solver : {'highs', 'cbc'}
    mip_gap : float
    time_limit : float or None
    kmin : array_like of int, optional
        Fewest modules per link (e.g. to carry the largest bandwidth).
    relax : bool
        Solve the LP relaxation instead (integers become continuous).

    Returns
    -------
    MilpResult
        ``k`` is the plan; a demand whose constraint cannot hold even at every link's bound
        is listed in ``infeasible_demands``; its constraint is dropped and each of its links
        that alone breaks its budget is set to its bound.
    """
    import pulp

    t0 = time.perf_counter()
    budgets = np.asarray(budgets, dtype=float)
    nl = space.n_links
    kmin = np.zeros(nl, np.int64) if kmin is None else np.asarray(kmin, np.int64).copy()
    kmax = space.kmax
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
        inst, mod = space.installed[j], space.module[j]
        top = min(int(kmax[j]), max(0, int((table.n1[j] - inst) // mod)))
        ks = np.arange(kmin[j], max(top, kmin[j]) + 1)
        g = table.g(j, inst + mod * ks)
        ok = np.flatnonzero(g <= tmin[j] * (1 + 1e-12))
        if len(ok) == 0:
            klo[j] = khi[j] = ks[-1]
            continue
        klo[j] = ks[ok[0]]
        tail = np.flatnonzero(g <= _TAIL * tmin[j])
        khi[j] = ks[tail[0]] if len(tail) else ks[-1]

    # Demands that no capacity within the bounds can satisfy: fix their links at the bound.
    gfix = np.array([table.g(j, space.installed[j] + space.module[j] * khi[j]) for j in range(nl)])
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
            const += space.cost_per_module[j] * klo[j]
            continue
        kvar[j] = prob.add_variable(f"k{j}", lowBound=int(klo[j]), upBound=int(khi[j]), cat=cat)
        tvar[j] = prob.add_variable(f"t{j}", lowBound=0)
        inst, mod = space.installed[j], space.module[j]
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
    # which links to build.
    prob += pulp.LpAffineExpression(
        [(kvar[j], float(space.cost_per_module[j])) for j in kvar]
    ) + float(const)

    k = klo.copy()
    status = "optimal"
    bound = float("nan")
    if kvar:
        solver_obj = make_solver(solver, mip_gap, time_limit)
        code = prob.solve(solver_obj)
        text = pulp.LpStatus.get(code, "Undefined")
        if text in ("Optimal", "Not Solved"):
            text = _highs_status(prob, solver_obj, text)
        values = {j: v.varValue for j, v in kvar.items()}
        have = all(v is not None for v in values.values()) and text != "Undefined"
        if text == "Optimal" and have:
            status = "optimal"
        elif have:
            status = "time-limit"
        elif text == "Infeasible":
            status = "infeasible"
        else:
            status = "error"
        if have:
            for j, v in values.items():
                k[j] = int(round(v)) if not relax else v
            if relax:
                k = np.ceil(np.asarray(k, float) - 1e-9).astype(np.int64)
        obj = pulp.value(prob.objective)
        objective = float(obj) if obj is not None else float("nan")
        if relax:
            bound = objective
        else:
            bound = _dual_bound(prob, solver, objective, mip_gap, status)
    else:
        objective = float(const)
        bound = objective
    return MilpResult(
        k=np.asarray(k, np.int64),
        objective=objective,
        bound=bound,
        status=status,
        seconds=time.perf_counter() - t0,
        n_cuts=n_cuts,
        infeasible_demands=tuple(bad),
    )


def _highs_status(prob, engine, text):
    """PuLP's status checked against HiGHS's own.

    PuLP reads a HiGHS stop at the time limit as 'Optimal' when it has an objective and
    as 'Not Solved' when it has none, and in both cases fills every variable (with 0 when
    HiGHS has no solution). Returns 'Optimal', 'Not Solved' (stopped with a feasible
    solution) or 'Undefined' (stopped without one). Other solvers: ``text`` unchanged.
    """
    import pulp

    if not isinstance(engine, getattr(pulp, "HiGHS", ())):
        return text
    try:
        import highspy

        model = prob.solverModel
        if model.getModelStatus() == highspy.HighsModelStatus.kOptimal:
            return "Optimal"
        # primal_solution_status 2: a feasible solution (HiGHS's kSolutionStatusFeasible)
        return "Not Solved" if model.getInfo().primal_solution_status == 2 else "Undefined"
    except Exception:  # noqa: BLE001 - no status to read: trust PuLP's
        return text


def _dual_bound(prob, solver, objective, mip_gap, status):
    """The solver's proven lower bound on the MILP optimum (NaN when none is known)."""
    if solver == "highs":
        try:
            info = prob.solverModel.getInfo()
            b = float(info.mip_dual_bound)
            if np.isfinite(b):
                return min(b, objective)
        except Exception:  # noqa: BLE001 - fall through to the gap rule
            pass
    if status == "optimal" and np.isfinite(objective):
        # CBC stops when (objective - bound) <= gapRel * |objective|.
        return objective - mip_gap * abs(objective)
    return float("nan")
