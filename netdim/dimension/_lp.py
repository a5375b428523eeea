"""The one seam between the sizer and its LP/MILP solvers (through PuLP).

Every model the sizer solves (the secant MILP, the bounds, the loss-flow relaxation, the
net-value MILP) is built with PuLP and solved by :func:`solve`, which translates the
solver's own statuses into :class:`SolveStatus` and reads a proven lower bound on the
optimum. Work limits are deterministic (branch-and-bound nodes, simplex or interior-point
iterations), so one input gives one answer on any machine; a time limit, where one is
given, is a safety stop and is reported as such.

PuLP hands HiGHS the objective without its constant term, so the dual bound HiGHS reports
lacks that constant; :func:`solve` adds it back (the constant is the cost of every link
whose module count the model fixes).
"""

from __future__ import annotations

import os
import re
import sys
import tempfile
import time
import warnings
from dataclasses import dataclass
from enum import Enum

import numpy as np

__all__ = ["SOLVERS", "SolveStatus", "LpOutcome", "check_solver", "make_solver", "solve",
           "add_route_flows"]

#: Solver names accepted wherever the sizer solves a model.
SOLVERS = ("highs", "cbc")


class SolveStatus(str, Enum):
    """How a solve ended.

    ``OPTIMAL``: solved (a MILP to its relative gap); ``WORK_LIMIT``: stopped at a node or
    iteration limit, the same on any machine; ``TIME_LIMIT``: stopped by the time safety
    stop; ``INFEASIBLE``: no solution exists; ``ERROR``: stopped or failed without one.
    """

    OPTIMAL = "optimal"
    WORK_LIMIT = "work-limit"
    TIME_LIMIT = "time-limit"
    INFEASIBLE = "infeasible"
    ERROR = "error"

    def __str__(self) -> str:
        return str(self.value)


@dataclass(frozen=True)
class LpOutcome:
    """What :func:`solve` found.

    Attributes
    ----------
    status : SolveStatus
    has_solution : bool
        The variables hold a feasible point (their ``varValue``).
    objective : float
        Objective at that point, constant included (NaN without one).
    bound : float
        A proven lower bound on the optimum, constant included (NaN when none is known).
    seconds : float
    """

    status: SolveStatus
    has_solution: bool
    objective: float
    bound: float
    seconds: float


def check_solver(name) -> str:
    """``name`` if it is one of :data:`SOLVERS`; else ValueError listing them."""
    if not (isinstance(name, str) and name in SOLVERS):
        raise ValueError(f"solver: unknown solver {name!r}; choose one of {', '.join(SOLVERS)}")
    return name


def make_solver(name, *, integer=True, mip_gap=0.0, time_limit=None, node_limit=None,
                iteration_limit=None, interior_point=False, log_path=None, warm_start=False,
                bound_only=False):
    """The PuLP solver object for ``name`` (``'highs'``, or PuLP's bundled ``'cbc'``).

    HiGHS runs on one thread so that its answers do not depend on the machine; without
    highspy the bundled CBC is used instead. ``warm_start``: the variables' values
    (``setInitialValue``) are handed to the solver as a first solution, and HiGHS runs
    none of its sub-MIP searches (RENS, RINS), for which the first solution stands in
    (docs/measurements/scale.md: the same plan in 60 % of the time). ``bound_only``: a MILP
    solved for its proven bound alone, so HiGHS runs none of its searches for plans (which
    do not move the bound).
    """
    import pulp  # about 0.25 s to import: only sizing needs it

    check_solver(name)
    if name == "highs":
        try:
            _quiet_highs()
        except ImportError:  # highspy missing: PuLP's bundled CBC is the fallback
            name = "cbc"
    if name == "highs":
        opts = {}
        if node_limit is not None:
            opts["mip_max_nodes"] = int(node_limit)
        if iteration_limit is not None:
            opts["simplex_iteration_limit"] = int(iteration_limit)
            opts["ipm_iteration_limit"] = int(iteration_limit)
        if interior_point:
            opts["solver"] = "ipm"
        if warm_start and integer:
            opts.update(mip_heuristic_run_rens=False, mip_heuristic_run_rins=False)
        if bound_only and integer:
            opts.update(mip_heuristic_effort=0.0, mip_heuristic_run_rens=False,
                        mip_heuristic_run_rins=False, mip_heuristic_run_root_reduced_cost=False,
                        mip_heuristic_run_feasibility_jump=False)
        engine = _highs_class()(msg=False, mip=integer, gapRel=mip_gap if integer else None,
                                timeLimit=time_limit, threads=1, **opts)
        engine.netdim_warm_start = bool(warm_start and integer)
        return engine
    with warnings.catch_warnings():
        # PuLP 3 warns that the bundled CBC goes in PuLP 4; it is still the bundled one here.
        warnings.simplefilter("ignore", DeprecationWarning)
        return pulp.PULP_CBC_CMD(msg=False, mip=integer, gapRel=mip_gap if integer else None,
                                 timeLimit=time_limit, maxNodes=node_limit, threads=1,
                                 logPath=log_path, warmStart=bool(warm_start and integer))


def solve(prob, solver="highs", *, integer=True, mip_gap=0.0, time_limit=None,
          node_limit=None, iteration_limit=None, interior_point=False,
          warm_start=False, bound_only=False) -> LpOutcome:
    """Solve the PuLP minimisation ``prob``; the solver's statuses translated here, once.

    Parameters
    ----------
    prob : pulp.LpProblem
        A minimisation.
    solver : {'highs', 'cbc'}
    integer : bool
        Keep integer variables integer (False: solve the LP relaxation).
    mip_gap : float
        Relative gap the MILP is solved to.
    time_limit : float or None
        Safety stop in seconds.
    node_limit, iteration_limit : int or None
        Deterministic work limits: branch-and-bound nodes; simplex and interior-point
        iterations (HiGHS only).
    interior_point : bool
        HiGHS: the interior-point method (with crossover) for an LP.
    warm_start : bool
        A MILP: hand the solver the variables' initial values (``setInitialValue``) as a
        first solution (HiGHS completes or drops a partial or broken one).
    bound_only : bool
        HiGHS: a MILP solved for its proven bound only (no searches for plans).

    Returns
    -------
    LpOutcome
    """
    import pulp  # about 0.25 s to import: only sizing needs it

    if prob.sense != pulp.LpMinimize:
        raise ValueError("solve: only minimisation problems are supported")
    # CBC reports its best bound only in its log (and, like HiGHS, without the constant)
    fd, log_path = tempfile.mkstemp(prefix="netdim-cbc-", suffix=".log")
    os.close(fd)
    try:
        engine = make_solver(solver, integer=integer, mip_gap=mip_gap, time_limit=time_limit,
                             node_limit=node_limit, iteration_limit=iteration_limit,
                             interior_point=interior_point, log_path=log_path,
                             warm_start=warm_start, bound_only=bound_only)
        t0 = time.perf_counter()
        prob.solve(engine)
        seconds = time.perf_counter() - t0
        constant = float(prob.objective.constant) if prob.objective is not None else 0.0
        if isinstance(engine, _highs_class()):
            return _read_highs(prob, integer, constant, seconds)
        with open(log_path, errors="replace") as f:
            log = f.read()
        return _read_cbc(prob, integer, mip_gap, seconds, time_limit, log)
    finally:
        os.unlink(log_path)


def _objective(prob):
    import pulp

    v = pulp.value(prob.objective)
    return float(v) if v is not None else float("nan")


def _read_highs(prob, integer, constant, seconds):
    import highspy

    model = prob.solverModel
    st = model.getModelStatus()
    info = model.getInfo()
    S = highspy.HighsModelStatus
    # primal_solution_status 2 is HiGHS's kSolutionStatusFeasible
    has = int(info.primal_solution_status) == 2
    if st == S.kOptimal:
        status = SolveStatus.OPTIMAL
    elif st in (S.kInfeasible, S.kUnboundedOrInfeasible):
        status = SolveStatus.INFEASIBLE
    elif st == S.kTimeLimit:
        status = SolveStatus.TIME_LIMIT
    elif st in (S.kIterationLimit, S.kSolutionLimit):
        status = SolveStatus.WORK_LIMIT
    else:
        status = SolveStatus.ERROR
    objective = _objective(prob) if has else float("nan")
    bound = float("nan")
    if integer and _has_integers(prob):
        b = float(info.mip_dual_bound)
        if np.isfinite(b):
            bound = b + constant  # HiGHS never saw the constant (module docstring)
    elif status is SolveStatus.OPTIMAL:
        bound = objective  # an LP solved to optimality: its value
    if has and np.isfinite(bound):
        bound = min(bound, objective)
    return LpOutcome(status, has, objective, bound, seconds)


def _read_cbc(prob, integer, mip_gap, seconds, time_limit, log):
    import pulp

    has = prob.sol_status in (pulp.LpSolutionOptimal, pulp.LpSolutionIntegerFeasible)
    result = re.search(r"^Result - (.*)$", log, re.M)
    result = result.group(1).lower() if result else ""
    # PuLP reads CBC stopped at a node or time limit with a solution as 'Optimal': the
    # solution status and CBC's own result line tell them apart
    if prob.status == pulp.LpStatusInfeasible or "infeasible" in result:
        status = SolveStatus.INFEASIBLE
    elif prob.status == pulp.LpStatusOptimal and prob.sol_status == pulp.LpSolutionOptimal \
            and "stopped" not in result:
        status = SolveStatus.OPTIMAL
    elif "time" in result or (time_limit is not None and seconds >= 0.95 * time_limit):
        status = SolveStatus.TIME_LIMIT
    elif has or "stopped" in result:
        status = SolveStatus.WORK_LIMIT
    else:
        status = SolveStatus.ERROR
    objective = _objective(prob) if has else float("nan")
    bound = float("nan")
    if not (integer and _has_integers(prob)):
        if status is SolveStatus.OPTIMAL:
            bound = objective  # an LP solved to optimality: its value
        return LpOutcome(status, has, objective, bound, seconds)
    own = _log_number(log, "Objective value")
    # the constant CBC did not see: PuLP's objective less CBC's
    constant = objective - own if np.isfinite(own) and has else float(prob.objective.constant)
    low = _log_number(log, "Lower bound")
    if np.isfinite(low):
        # printed with few digits: keep clear of the rounding
        bound = low + constant - 1e-4 * (1.0 + abs(low))
    elif status is SolveStatus.OPTIMAL:
        # solved to its gap: (objective - bound) <= gapRel |objective| on CBC's objective
        ref = own if np.isfinite(own) else objective
        bound = objective - mip_gap * abs(ref)
    if has and np.isfinite(bound):
        bound = min(bound, objective)
    return LpOutcome(status, has, objective, bound, seconds)


def _log_number(log, label) -> float:
    m = re.search(rf"^{label}:\s*(\S+)", log, re.M)
    try:
        return float(m.group(1)) if m else float("nan")
    except ValueError:
        return float("nan")


def _has_integers(prob) -> bool:
    import pulp

    return any(v.cat == pulp.LpInteger for v in prob.variables())


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
_HIGHS_CLASS = None


def _highs_class():
    """PuLP's HiGHS interface, taught the statuses PuLP 3 does not map (a node limit ends
    in HiGHS's ``kSolutionLimit``, which PuLP answers with a KeyError)."""
    global _HIGHS_CLASS
    if _HIGHS_CLASS is None:
        import pulp

        class _HiGHS(pulp.HiGHS):
            netdim_warm_start = False

            def callSolver(self, lp):
                # PuLP 3's HiGHS interface has no warm start: hand HiGHS the values here
                # (highspy's sparse setSolution), after PuLP has numbered the columns.
                if self.netdim_warm_start:
                    given = [(v.index, float(v.varValue)) for v in lp.variables()
                             if v.varValue is not None]
                    if given:
                        idx, val = zip(*given, strict=True)
                        lp.solverModel.setSolution(len(idx), np.asarray(idx, np.int32),
                                                   np.asarray(val, float))
                super().callSolver(lp)

            def findSolutionValues(self, lp):
                try:
                    return super().findSolutionValues(lp)
                except KeyError:  # the values are assigned before PuLP looks the status up
                    feasible = int(lp.solverModel.getInfo().primal_solution_status) == 2
                    return (pulp.LpStatusNotSolved, pulp.LpSolutionIntegerFeasible if feasible
                            else pulp.LpSolutionNoSolutionFound)

        _HIGHS_CLASS = _HiGHS
    return _HIGHS_CLASS


def _quiet_highs():
    """Create one HiGHS object with stdout closed: its banner, printed once per process on
    the first construction, would otherwise corrupt the command line's JSON output."""
    global _HIGHS_READY
    if _HIGHS_READY:
        return
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
