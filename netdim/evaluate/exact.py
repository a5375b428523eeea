"""Exact blocking of small networks: product form, or the Markov chain of calls in progress.

Two solvers share one state space, the numbers of calls in progress:

* **product form** (fixed routing, every route holding all its links for the same time): the
  stationary distribution of a loss network is proportional to ``prod_d rho_d^n_d / n_d!``
  over the states that fit every link (Kelly 1979, ch. 8; Kelly 1991), whatever the law of
  the holding times;
* **Markov chain** (alternate routing with trunk reservation, or per-link holding times):
  a continuous-time Markov chain over calls in progress per (demand, route, holding phase),
  with exponential holding times, solved from its global balance equations.

A *holding phase* is needed only when a route's links carry different holding times: the
links of a route that share the same mean holding time are released together, links with
different means independently, each group after its own exponential time. The phase of a call
is the set of groups it still holds.

The state count is estimated before anything is built; above ``max_states`` the method
refuses with :class:`~netdim.errors.ModelTooLargeError`.
"""

from __future__ import annotations

import math
import warnings as _warnings

import numpy as np
from scipy.special import gammaln, logsumexp

from netdim.errors import ConvergenceError, ModelTooLargeError
from netdim.evaluate._network import resolve_capacities, route_groups
from netdim.evaluate.result import Evaluation
from netdim.vocabulary import EvaluationStatus

__all__ = ["exact", "count_states", "route_groups", "OPTIONS", "SOLVERS"]

#: Keyword options of :func:`exact` (the command line takes its checks from here).
OPTIONS = ("max_states", "solver")
#: Values of ``solver``.
SOLVERS = ("auto", "product", "markov")
#: Most memory the state arrays may take (states x variables and links), bytes.
MAX_BYTES = 1 << 30
#: Random walks of the state-count estimate (Knuth's estimator).
_WALKS = 4096

#: Balance residual (relative) above which the exact result carries a warning.
RESIDUAL_WARN = 1e-11
#: Balance residual (relative) above which the exact method raises ConvergenceError. A
#: solve that converges ends near 1e-15; one that stagnates can stop at a small residual
#: and a wrong answer: at 4.2e-8 a stiff chain's blocking was 0.27 % off the direct LU
#: solution (docs/measurements/evaluate.md), so "exact" is promised only below 1e-9.
RESIDUAL_FAIL = 1e-9
#: Largest chain solved by a direct sparse LU (beyond: BiCGSTAB).
DIRECT_LIMIT = 3000
#: Work allowed to the iterative solver, in nonzeros of the chain touched (an iteration
#: touches each nonzero about twice), with at least ``MIN_ITERATIONS`` iterations: a count,
#: not a time, so one input gives one answer (or one refusal) on any machine. Well-scaled
#: chains converge in tens of iterations (three villages: 66 on 11,402 states); a stiff one
#: (holding times 1e5 apart) stagnates, and went on for 20,000 iterations before.
SOLVER_WORK = 400_000_000
MIN_ITERATIONS = 1_000
MAX_ITERATIONS = 20_000
#: Largest ratio of holding times the iterative solve is trusted with. Beyond it the chain
#: nearly falls apart into fast and slow parts and BiCGSTAB can end at a tiny residual and
#: a wrong distribution (holding 1e-15 h beside 0.05 h: residual 2e-14, blockings 1e-18
#: where the direct LU gives 4e-3); at 1e4 it agreed with LU to 1e-8 (evaluate.md).
STIFF_LIMIT = 1e4


class _Space:
    """The variables of the state space: one per (demand, route, phase)."""

    def __init__(self, network, caps, product_form):
        self.network = network
        self.caps = np.asarray(caps, dtype=np.int64)
        n_links = len(network.links)
        alternate = network.routing.policy == "alternate"
        self.routes = []  # per demand: list of (route, groups, {phase mask: var})
        usage, ub, var_route = [], [], []
        for d_idx, d in enumerate(network.demands):
            used = d.routes if alternate else d.routes[:1]
            per_demand = []
            for k, route in enumerate(used):
                groups = route_groups(route)
                if product_form:
                    groups = [(groups[0][0], tuple(int(j) for j in route.links))]
                n_g = len(groups)
                phases = {}
                for mask in range(1, 1 << n_g):
                    u = np.zeros(n_links, dtype=np.int64)
                    for g in range(n_g):
                        if mask >> g & 1:
                            u[list(groups[g][1])] += d.bandwidth
                    held = u > 0
                    bound = int(np.min(self.caps[held] // u[held])) if d.traffic > 0 else 0
                    phases[mask] = len(usage)
                    usage.append(u)
                    ub.append(bound)
                    var_route.append((d_idx, k, mask))
                per_demand.append((route, groups, phases))
            self.routes.append(per_demand)
        self.usage = np.array(usage, dtype=np.int64).reshape(len(usage), n_links)
        self.ub = np.array(ub, dtype=np.int64)
        self.var_route = var_route

    @property
    def n_vars(self) -> int:
        return len(self.ub)


def _most(free, u, bound):
    """Per partial state, the most calls of a variable with usage ``u`` that still fit."""
    held = np.flatnonzero(u > 0)
    most = np.min(free[:, held] // u[held], axis=1) if len(held) else np.zeros(len(free),
                                                                                np.int64)
    return np.minimum(most, bound)


def _expand(usage, caps, ub, limit, rng=None):
    """All count vectors ``n >= 0`` with ``n @ usage <= caps`` (and ``n <= ub``).

    Returns ``(states, count)``: the states (int array, one row per state), or, as soon as
    the count would pass ``limit`` or the arrays ``MAX_BYTES``, ``(None, estimate)``. Nothing
    larger than the limit is ever built: the estimate comes from random walks down the
    rest of the enumeration tree (Knuth's estimator, see :func:`_estimate`).
    """
    n_vars, n_links = usage.shape
    states = np.zeros((1, 0), dtype=np.int32)
    free = caps[None, :].copy()
    for v in range(n_vars):
        u = usage[v]
        counts = _most(free, u, ub[v]) + 1
        total = int(counts.sum())
        if total > limit or total * (4 * n_vars + 8 * n_links) > MAX_BYTES:
            return None, _estimate(usage[v:], free, ub[v:], rng)
        rep = np.repeat(np.arange(len(free)), counts)
        starts = np.repeat(np.cumsum(counts) - counts, counts)
        vals = (np.arange(len(rep)) - starts).astype(np.int64)
        states = np.concatenate([states[rep], vals[:, None].astype(np.int32)], axis=1)
        free = free[rep] - vals[:, None] * u[None, :]
    return states, len(states)


def _estimate(usage, free, ub, rng=None) -> float:
    """Number of completions of the partial states ``free``, estimated without building them.

    Each walk starts from a partial state drawn at random and picks, variable by variable,
    a count uniformly among those that fit; the product of the numbers of choices along
    the walk is an unbiased estimate of the leaves below its start [1]_. Summed in logs, so
    the estimate may exceed any float (then ``inf``).

    References
    ----------
    .. [1] D. E. Knuth, "Estimating the efficiency of backtrack programs", Math. Comp. 29
       (1975) 121-136.
    """
    rng = np.random.default_rng(12345) if rng is None else rng
    f = free[rng.integers(len(free), size=_WALKS)].astype(np.int64)
    logw = np.full(_WALKS, math.log(len(free)))
    for v in range(len(usage)):
        most = _most(f, usage[v], ub[v])
        logw += np.log1p(most.astype(float))
        f -= rng.integers(0, most + 1)[:, None] * usage[v][None, :]
    log_n = float(logsumexp(logw) - math.log(_WALKS))
    return math.exp(log_n) if log_n < 709.0 else math.inf


def _count_text(n: float) -> str:
    return f"about {n:.3g}" if math.isfinite(n) else "more than 1e308"


def count_states(network, capacities=None, limit=10**7) -> int:
    """Number of states the exact method would use (an estimate when above ``limit``).

    Nothing larger than ``limit`` states is built; an estimate too large for a float is
    returned as ``10**309``.
    """
    caps = resolve_capacities(network, capacities)
    space = _Space(network, caps, _product_form_applies(network))
    states, n = _expand(space.usage, caps, space.ub, limit)
    return int(round(n)) if math.isfinite(n) else 10**309


def _product_form_applies(network) -> bool:
    alternate = network.routing.policy == "alternate"
    for d in network.demands:
        if alternate and len(d.routes) > 1:
            return False
        if d.routes and len(set(d.routes[0].holdings)) > 1:
            return False
    return True


def _encode(states, ub):
    """Integer key per state (mixed radix); None when the keys would overflow int64."""
    radix = [int(b) + 1 for b in ub]
    total = 1
    strides = []
    for r in radix:
        strides.append(total)
        total *= r
    if total >= 2**62:
        return None, None
    strides = np.array(strides, dtype=np.int64)
    return states.astype(np.int64) @ strides, strides


def _generator(space, states, keys, strides):
    """Sparse generator matrix Q (rates per hour) of the chain over ``states``."""
    # scipy.sparse takes about 0.2 s to import: only the Markov chain needs it
    from scipy import sparse

    net = space.network
    order = np.argsort(keys)
    sorted_keys = keys[order]

    def find(k):
        pos = np.searchsorted(sorted_keys, k)
        pos = np.minimum(pos, len(sorted_keys) - 1)
        if np.any(sorted_keys[pos] != k):
            raise AssertionError("exact: transition leaves the state space")
        return order[pos]

    n = len(states)
    free = space.caps[None, :] - states.astype(np.int64) @ space.usage
    res = net.reservations()
    rows, cols, vals = [], [], []
    idx = np.arange(n)
    for d_idx, d in enumerate(net.demands):
        lam = d.rate
        if lam <= 0:
            continue
        refused = np.ones(n, dtype=bool)
        for k, (route, groups, phases) in enumerate(space.routes[d_idx]):
            ok = _admits(free, route, d.bandwidth, res, k)
            take = refused & ok
            refused &= ~ok
            v = phases[(1 << len(groups)) - 1]
            src = idx[take]
            rows.append(src)
            cols.append(find(keys[src] + strides[v]))
            vals.append(np.full(len(src), lam))
    for v, (d_idx, k, mask) in enumerate(space.var_route):
        busy = np.flatnonzero(states[:, v] > 0)
        if len(busy) == 0:
            continue
        _, groups, phases = space.routes[d_idx][k]
        for g, (h, _) in enumerate(groups):
            if not mask >> g & 1:
                continue
            rest = mask & ~(1 << g)
            target = keys[busy] - strides[v] + (strides[phases[rest]] if rest else 0)
            rows.append(busy)
            cols.append(find(target))
            vals.append(states[busy, v] / h)
    rows = np.concatenate(rows) if rows else np.zeros(0, dtype=np.int64)
    cols = np.concatenate(cols) if cols else np.zeros(0, dtype=np.int64)
    vals = np.concatenate(vals) if vals else np.zeros(0)
    out = np.bincount(rows, weights=vals, minlength=n)
    q = sparse.coo_matrix(
        (np.concatenate([vals, -out]), (np.concatenate([rows, idx]), np.concatenate([cols, idx]))),
        shape=(n, n),
    ).tocsr()
    return q, out


def _admits(free, route, bandwidth, res, rank):
    """Boolean per state: route ``rank`` of a demand admits one more call."""
    links = list(route.links)
    if rank == 0:
        return np.all(free[:, links] >= bandwidth, axis=1)
    return np.all(free[:, links] - bandwidth >= res[links], axis=1)


def iteration_limit(nnz: int) -> int:
    """Iterations the chain's iterative solver may take on a matrix of ``nnz`` nonzeros."""
    return int(min(MAX_ITERATIONS, max(MIN_ITERATIONS, SOLVER_WORK // max(2 * nnz, 1))))


def _solve_chain(q, out):
    """Stationary distribution from global balance ``pi Q = 0``, ``sum(pi) = 1``.

    The first state's probability is fixed at 1 and its balance equation dropped (no dense
    normalisation row, which would ruin sparsity); the rest is solved directly for small
    chains and by BiCGSTAB with a Jacobi preconditioner for larger ones (a direct sparse LU
    of a many-dimensional chain fills in badly). Returns ``(pi, residual, iterations)``.
    """
    # scipy.sparse.linalg takes about 0.35 s to import: only the Markov chain needs it
    from scipy.sparse.linalg import LinearOperator, bicgstab, spsolve

    n = q.shape[0]
    if n == 1:
        return np.ones(1), 0.0, 0
    qt = q.T.tocsr()
    a = qt[1:, 1:].tocsc()
    rhs = -np.asarray(qt[1:, 0].todense()).ravel()

    def finish(x):
        pi = np.concatenate([[1.0], x])
        if not np.all(np.isfinite(pi)):
            return None, np.inf
        pi = np.clip(pi, 0.0, None)
        pi /= pi.sum()
        scale = float((pi * out).sum()) or 1.0
        return pi, float(np.abs(qt @ pi).sum() / scale)

    if n <= DIRECT_LIMIT:
        pi, res = finish(spsolve(a, rhs))
        if res <= RESIDUAL_FAIL:
            return pi, res, 1
    diag = a.diagonal()
    diag = np.where(diag != 0, diag, 1.0)
    prec = LinearOperator(a.shape, lambda v: v / diag)
    count = [0]

    def tick(_):
        count[0] += 1

    x, _ = bicgstab(a.tocsr(), rhs, M=prec, rtol=1e-13, atol=0.0,
                    maxiter=iteration_limit(a.nnz), callback=tick)
    pi, res = finish(x)
    if pi is None:
        raise ConvergenceError(
            "exact: the balance equations could not be solved (non-finite solution); "
            "use method 'simulate'",
            iterations=count[0],
        )
    return pi, res, count[0]


def exact(network, capacities=None, max_states: int = 200_000, solver: str = "auto") -> Evaluation:
    """Exact end-to-end blocking of a small network.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link; default: the network's capacities.
    max_states : int
        Largest state space the method will build.
    solver : {'auto', 'product', 'markov'}
        ``auto``: the product form where it applies (fixed routing, each route holding all
        its links equally long), else the Markov chain. ``markov`` forces the chain (used to
        check one against the other); ``product`` raises ValueError where it does not apply.

    Returns
    -------
    Evaluation
        ``method='exact'``, ``status='exact'``; ``residual`` is the relative balance residual
        ``sum|pi Q| / sum(pi |q_ii|)`` of the chain (0 for the product form);
        ``details`` gives ``states`` and ``solver``. Link figures, in capacity units
        (erlangs x bandwidth), weighting each route step by ``rate x holding on the link x
        bandwidth``:

        * ``link_offered``: load of the route attempts for which every *other* link of the
          route has room (the reduced load of the fixed point);
        * ``link_carried``: time-average number of units busy;
        * ``link_blocking``: share of the first-choice attempts that find the link without
          room (fewer than ``bandwidth`` free units); time congestion for one unit where no
          first-choice route uses the link;
        * ``link_blocking_alternate``: the same for alternate-route attempts, with the
          reservation (``free - bandwidth < reservation``); equal to ``link_blocking`` under
          fixed routing.

    Raises
    ------
    ModelTooLargeError
        More than ``max_states`` states (or more than ``MAX_BYTES`` of state arrays).
    ConvergenceError
        The balance equations could not be solved accurately.
    ValueError
        Bad arguments.

    Notes
    -----
    Blocking is call congestion; with Poisson arrivals it equals the probability of the states
    in which no route admits a call (arrivals see time averages). The Markov chain uses
    exponential holding times; under fixed routing with equal holdings the product form makes
    the answer hold for any holding-time law.

    The state count is found before anything is built: enumerated up to ``max_states``,
    beyond it estimated by random walks (Knuth's estimator [4]_).

    References
    ----------
    .. [1] F. P. Kelly, *Reversibility and Stochastic Networks*, Wiley 1979, ch. 8.
    .. [2] F. P. Kelly, "Loss networks", Ann. Appl. Probab. 1 (1991) 319-378.
    .. [3] J. S. Kaufman, "Blocking in a shared resource environment", IEEE Trans. Commun.
       29 (1981) 1474-1481.
    .. [4] D. E. Knuth, "Estimating the efficiency of backtrack programs", Math. Comp. 29
       (1975) 121-136.

    Examples
    --------
    One link of 10 circuits, 5 E: the product form gives Erlang B, E(5, 10) = 0.01838.

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B"), 10),),
    ...               (Demand("AB", ("A", "B"), 5.0, routes=(Route((0,), (1.0,)),)),))
    >>> ev = exact(net)
    >>> round(float(ev.blocking[0]), 5), ev.details["states"]
    (0.01838, 11)
    """
    if solver not in SOLVERS:
        raise ValueError(f"solver: unknown solver {solver!r}; choose one of {', '.join(SOLVERS)}")
    if (not isinstance(max_states, (int, np.integer)) or isinstance(max_states, bool)
            or max_states < 1):
        raise ValueError(f"max_states: must be a positive integer, got {max_states!r}")
    caps = resolve_capacities(network, capacities)
    product = _product_form_applies(network)
    if solver == "product" and not product:
        raise ValueError(
            "solver: the product form needs fixed routing and equal holding times along each "
            "route; use solver 'markov'"
        )
    if solver == "markov":
        product = False
    space = _Space(network, caps, product)
    states, count = _expand(space.usage, caps, space.ub, int(max_states))
    if states is None:
        if count > max_states:
            raise ModelTooLargeError(
                f"exact: network '{network.name}' has {_count_text(count)} states, "
                f"more than the limit {max_states}; use method 'simulate' (or raise "
                "max_states)"
            )
        raise ModelTooLargeError(
            f"exact: network '{network.name}' has {_count_text(count)} states over "
            f"{space.n_vars} call types, more than {MAX_BYTES >> 20} MiB of state arrays; "
            "use method 'simulate'"
        )
    warns = []
    residual = 0.0
    iterations = 1
    if product:
        rho = np.array(
            [
                d.rate * d.routes[0].holdings[0] if d.routes else 0.0
                for d in network.demands
            ]
        )
        rho_v = np.array([rho[d] for d, _, _ in space.var_route])
        with np.errstate(divide="ignore"):
            log_rho = np.where(rho_v > 0, np.log(np.where(rho_v > 0, rho_v, 1.0)), 0.0)
        logw = states @ log_rho - gammaln(states + 1.0).sum(axis=1)
        pi = np.exp(logw - logsumexp(logw))
        name = "product-form"
    else:
        keys, strides = _encode(states, space.ub)
        if keys is None:
            raise ModelTooLargeError(
                f"exact: network '{network.name}' has too many call types ({space.n_vars}) "
                "for the Markov chain; use method 'simulate'"
            )
        _refuse_stiff(network, len(states))
        q, out = _generator(space, states, keys, strides)
        pi, residual, iterations = _solve_chain(q, out)
        name = "markov-chain"
        if residual > RESIDUAL_FAIL:
            raise ConvergenceError(
                f"exact: balance residual {residual:.2e} after {iterations} iterations on "
                f"{len(pi)} states, above {RESIDUAL_FAIL:g}{_stiffness(network)}; use "
                "method 'simulate'",
                iterations=iterations,
                residual=residual,
            )
        if residual > RESIDUAL_WARN:
            msg = f"exact: balance residual {residual:.2e} is larger than expected"
            warns.append(msg)
            _warnings.warn(msg, RuntimeWarning, stacklevel=2)
    return _measure(network, caps, space, states, pi, residual, name, warns, iterations)


def _holding_span(network):
    """Shortest and longest mean holding time (hours) of the demands that offer traffic."""
    held = [h for d in network.demands if d.traffic > 0 for r in d.routes for h in r.holdings
            if h > 0]
    return (min(held), max(held)) if held else (1.0, 1.0)


def _stiffness(network) -> str:
    """A note on holding times far apart (what makes the chain hard to solve), or ''."""
    lo, hi = _holding_span(network)
    if hi < 100 * lo:
        return ""
    return f" (holding times from {lo:.3g} h to {hi:.3g} h make the chain stiff)"


def _refuse_stiff(network, n_states: int) -> None:
    """Refuse a chain too large for the direct solve whose holding times are too far apart
    for the iterative one to be trusted (see STIFF_LIMIT)."""
    lo, hi = _holding_span(network)
    if n_states <= DIRECT_LIMIT or hi <= STIFF_LIMIT * lo:
        return
    raise ModelTooLargeError(
        f"exact: network '{network.name}' has holding times from {lo:.3g} h to {hi:.3g} h, "
        f"more than {STIFF_LIMIT:.0e} apart, on {n_states} states (beyond the direct "
        f"solver's {DIRECT_LIMIT}): the iterative solve cannot be trusted on so stiff a "
        "chain; use method 'fixed-point' (or evaluate the fast and slow demands as separate "
        "networks)"
    )


def _measure(network, caps, space, states, pi, residual, solver, warns, iterations=1):
    """Blocking and link figures from a distribution ``pi`` over ``states``."""
    n_links = len(network.links)
    occ = states.astype(np.int64) @ space.usage
    free = caps[None, :] - occ
    res = network.reservations()
    alternate = network.routing.policy == "alternate"
    blocking = np.ones(len(network.demands))
    fc_att, fc_blk = np.zeros(n_links), np.zeros(n_links)
    alt_att, alt_blk = np.zeros(n_links), np.zeros(n_links)
    offered = np.zeros(n_links)
    for d_idx, d in enumerate(network.demands):
        refused = np.ones(len(pi), dtype=bool)
        for k, (route, _, _) in enumerate(space.routes[d_idx]):
            links = np.array(route.links)
            if k == 0:
                fail = free[:, links] < d.bandwidth
            else:
                fail = free[:, links] - d.bandwidth < res[links]
            p_try = pi * refused
            nfail = fail.sum(axis=1)
            for i, j in enumerate(links):
                w = d.rate * route.holdings[i] * d.bandwidth
                p_blk = float(p_try @ fail[:, i])
                if k == 0:
                    fc_att[j] += w * p_try.sum()
                    fc_blk[j] += w * p_blk
                else:
                    alt_att[j] += w * p_try.sum()
                    alt_blk[j] += w * p_blk
                offered[j] += w * float(p_try @ ((nfail - fail[:, i]) == 0))
            refused &= nfail > 0
        blocking[d_idx] = float(pi @ refused)
    time_cong = pi @ (free < 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        link_b = np.where(fc_att > 0, fc_blk / np.where(fc_att > 0, fc_att, 1), time_cong)
        if alternate:
            alt_time = pi @ (free - 1 < res[None, :])
            link_alt = np.where(alt_att > 0, alt_blk / np.where(alt_att > 0, alt_att, 1), alt_time)
        else:
            link_alt = link_b
    return Evaluation.from_link_state(
        network, caps,
        method="exact",
        status=EvaluationStatus.EXACT,
        blocking=np.clip(blocking, 0.0, 1.0),
        link_offered=offered,
        link_carried=pi @ occ,
        link_blocking=link_b,
        link_blocking_alternate=link_alt,
        iterations=int(iterations),
        residual=residual,
        message=f"exact ({solver}, {len(pi)} states)",
        warnings=tuple(warns),
        details={"states": int(len(pi)), "solver": solver},
    )
