"""End-to-end blocking by the reduced-load (Erlang fixed-point) approximation.

Each link is treated as an independent loss system offered the traffic of every route over it,
thinned by the blocking of the route's other links. The link blockings that make this
consistent are found by repeated substitution with adaptive damping. The same code covers
fixed and alternate routing, single- and multi-rate calls and per-link holding times; the
``conservative`` variant offers every link its un-thinned load (the product bound; under
alternate routing with the overflow those loads cause, see :func:`fixed_point`).

The iteration runs on flat per-step arrays (one entry per (route, link) step, from
:func:`netdim.model.incidence`): the product of ``1 - B`` over each route by
``multiply.reduceat`` (steps come route by route; a sum of logs by ``bincount`` otherwise),
the own link excluded per step as ``Q_r / q_j``, loads gathered onto links by ``bincount``.
Final route blockings come from sums of ``log(1 - B)`` (``1 - exp(S_r)`` by ``expm1``) for
full relative precision. No Python loop over demands runs inside the iteration.
"""

from __future__ import annotations

import weakref

import numpy as np

from netdim.errors import ConvergenceError
from netdim.evaluate.result import Evaluation
from netdim.model import POLICIES, incidence

__all__ = ["fixed_point", "Q_FLOOR", "BISTABLE_GAP"]

#: Floor of 1 - B in the iteration (B = 1 on a link of capacity 0). A route over such a link
#: still carries nothing to any useful precision, and the own-link exclusion Q_r / q_j never
#: divides by zero; products of a few floored factors stay clear of underflow trouble.
Q_FLOOR = 1e-130

#: Two solutions closer than this (largest difference in any blocking) count as one.
BISTABLE_GAP = 1e-6

_ALPHA_MIN = 1.0 / 256.0


# Static arrays of the last few networks evaluated: a sizer calls fixed_point many times on
# one network with other capacities, and flattening the routes is the costly part. Keyed by
# id() and checked with a weak reference, so a dead network's entry is never reused.
_STATIC_CACHE: dict = {}
_CACHE_SIZE = 4


def _static(network):
    key = id(network)
    hit = _STATIC_CACHE.get(key)
    if hit is not None and hit[0]() is network:
        return hit[1]
    st = _build_static(network)
    if len(_STATIC_CACHE) >= _CACHE_SIZE:
        _STATIC_CACHE.pop(next(iter(_STATIC_CACHE)))
    _STATIC_CACHE[key] = (weakref.ref(network), st)
    return st


def _build_static(network):
    policy = network.routing.policy
    if policy not in POLICIES:
        raise ValueError(
            f"routing policy: unknown policy {policy!r}; choose one of {', '.join(POLICIES)}"
        )
    st = {}
    alternate = policy == "alternate"
    st["alternate"] = alternate
    inc = incidence(network, first_only=not alternate)
    st["inc"] = inc
    st["n_links"] = n_links = len(network.links)
    st["n_demands"] = len(network.demands)
    st["n_routes"] = n_routes = inc.n_routes
    traffic = np.asarray(inc.traffic, dtype=float)
    bad = ~np.isfinite(traffic) | (traffic < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"demand '{network.demands[i].id}': traffic must be a finite number >= 0, "
            f"got {traffic[i]!r}"
        )
    st["traffic"] = traffic
    st["target"] = np.array([d.target for d in network.demands], dtype=float)
    st["demand_ids"] = network.demand_ids
    st["link_ids"] = network.link_ids

    # Call classes = distinct bandwidths; streams per link = classes (x first/overflow).
    bw = np.asarray(inc.bandwidth, dtype=np.int64)
    classes = np.unique(bw) if len(bw) else np.array([1], dtype=np.int64)
    st["classes"] = classes
    st["n_classes"] = n_classes = len(classes)
    demand_class = np.searchsorted(classes, bw)
    per_class = 2 if alternate else 1
    st["n_streams"] = n_streams = n_classes * per_class
    # bandwidth of every stream, in stream order (class-major, first then overflow)
    st["stream_bw_int"] = np.repeat(classes, per_class).astype(np.int64)
    st["stream_bw"] = st["stream_bw_int"].astype(float)
    st["stream_overflow"] = np.tile(np.arange(per_class) > 0, n_classes)

    step_route = np.asarray(inc.step_route, dtype=np.int64)
    step_demand = inc.route_demand[step_route]
    stream = demand_class[step_demand] * per_class
    if alternate:
        stream = stream + (inc.route_rank[step_route] > 0)
    st["step_route"] = step_route
    st["step_slot"] = np.asarray(inc.step_link, dtype=np.int64) * n_streams + stream
    # erlangs a route's admitted calls offer the step's link, before thinning
    st["step_base"] = traffic[step_demand] * np.asarray(inc.step_factor, dtype=float)
    st["n_slots"] = n_links * n_streams
    st["max_rank"] = max_rank = int(inc.route_rank.max()) + 1 if n_routes else 1
    st["route_flat"] = inc.route_demand * max_rank + inc.route_rank
    # first step of every route, for products by reduceat (steps come route by route)
    starts = np.searchsorted(step_route, np.arange(n_routes))
    ok = n_routes > 0 and np.all(np.diff(np.append(starts, len(step_route))) > 0)
    st["route_start"] = starts if ok else None
    st["rank_routes"] = [np.flatnonzero(inc.route_rank == k) for k in range(1, max_rank)]
    st["reservations"] = network.reservations() if alternate else None
    return st


class _Problem:
    """Everything static about one evaluation, built once outside the iteration."""

    def __init__(self, network, caps):
        self.__dict__.update(_static(network))
        self.network = network
        self.caps = np.asarray(caps, dtype=np.int64)
        if self.alternate:
            res_b = np.repeat(self.reservations, self.n_streams).reshape(
                self.n_links, self.n_streams
            )
            # units each stream must leave free: 0 for first-choice calls, r for overflow
            self.limits = np.where(self.stream_overflow[None, :], res_b, 0)
        self.zero_cap = self.caps == 0
        self.any_zero_cap = bool(self.zero_cap.any())

    # -- one link model evaluation ----------------------------------------------------------
    def link_blocking(self, loads):
        """Blocking per (link, stream) and 1 - blocking (floored), from loads in erlangs."""
        if not self.alternate and self.n_classes == 1:
            from netdim.erlang import erlang_b

            # E itself is accurate to full relative precision, and log1p(-E) keeps about
            # 1e-16 / (1 - E) relative accuracy: ample unless E is within 1e-6 of 1. There use
            # the recursion's 1 - E_n = n E_n / (A E_{n-1}), in which every factor is far from
            # 0 (Erlang B recursion; common practice).
            B = np.array(erlang_b(loads[:, 0], self.caps), dtype=float).reshape(-1, 1)
            logq = np.log1p(-np.minimum(B, 1.0 - 1e-6))
            high = (B[:, 0] > 1.0 - 1e-6) & (self.caps > 0)
            if high.any():
                a, n, bn = loads[high, 0], self.caps[high], B[high, 0]
                prev = np.asarray(erlang_b(a, n - 1), dtype=float)
                logq[high, 0] = np.log(n * bn) - np.log(a * prev)
        elif not self.alternate:
            from netdim.linkmodels import kaufman_roberts_many

            B = np.asarray(kaufman_roberts_many(loads, self.classes, self.caps), dtype=float)
            logq = None
        elif self.n_classes == 1:
            from netdim.linkmodels import reservation_link_many

            b1, b2 = reservation_link_many(loads[:, 0], loads[:, 1], self.caps, self.reservations)
            B = np.column_stack([np.asarray(b1, dtype=float), np.asarray(b2, dtype=float)])
            logq = None
        else:
            from netdim.linkmodels import reservation_link_multi_many

            logq = None
            B = reservation_link_multi_many(loads, self.stream_bw_int, self.caps, self.limits)
        if self.any_zero_cap:
            B[self.zero_cap] = 1.0
        np.clip(B, 0.0, 1.0, out=B)
        q = np.exp(logq) if logq is not None else 1.0 - B
        if self.any_zero_cap:
            q[self.zero_cap] = 0.0
        np.maximum(q, Q_FLOOR, out=q)
        return B, q

    def heavy_state(self):
        """Link blockings under the un-thinned loads: every link at its heaviest load.

        This is the 'all links full' end for a second solve. Starting from B = 1 itself
        would not do: with every link blocked no call reaches an alternate route, the
        overflow loads vanish and the iteration falls back to the idle solution.
        """
        free = np.ones((self.n_links, self.n_streams))
        return self.link_blocking(self.sweep(free, thin=False, every_route=True)[2])[0]

    # -- one sweep: link state -> route blocking and link loads -----------------------------
    def sweep(self, q, thin=True, precise=False, every_route=False):
        """Route blocking L, reach probability and offered loads for link state ``q = 1 - B``.

        ``thin=False`` gives the un-thinned loads of the product bound: every route offers
        each of its links the whole traffic that tries it (under alternate routing, the
        demand's traffic times the blocking of its earlier routes). ``every_route=True`` with
        ``thin=False``: every route is offered its demand's whole traffic (the heaviest
        loads of all). ``precise=True`` computes L from sums of logs (full relative precision
        for tiny L) instead of ``1 - prod q``.
        """
        q_step = q.reshape(-1)[self.step_slot]
        if self.route_start is not None:
            Q = np.multiply.reduceat(q_step, self.route_start) if len(q_step) else q_step
        else:
            Q = np.exp(np.bincount(self.step_route, weights=np.log(q_step),
                                   minlength=self.n_routes))
        if precise:
            S = np.bincount(self.step_route, weights=np.log(q_step), minlength=self.n_routes)
            L = -np.expm1(S)
        else:
            L = 1.0 - Q
        if not thin:
            w = self.step_base
            if self.alternate and self.max_rank > 1 and not every_route:
                reach = self._reach(L)
                w = w * reach[self.step_route]
            else:
                reach = np.ones(self.n_routes)
        else:
            # product over the route's other links = Q_r / q_j (q_j >= Q_FLOOR > 0)
            w = self.step_base * (Q[self.step_route] / q_step)
            if self.alternate and self.max_rank > 1:
                reach = self._reach(L)
                w *= reach[self.step_route]
            else:
                reach = np.ones(self.n_routes)
        loads = np.bincount(self.step_slot, weights=w, minlength=self.n_slots)
        return L, reach, loads.reshape(self.n_links, self.n_streams)

    def _reach(self, L):
        """P(a call of the demand tries route r) = product of L over its earlier routes.

        Routes are numbered demand by demand in preference order, so the route before a
        route of rank k >= 1 is the previous one; one vector step per rank.
        """
        reach = np.ones(self.n_routes)
        for idx in self.rank_routes:
            reach[idx] = reach[idx - 1] * L[idx - 1]
        return reach

    def demand_blocking(self, L):
        """Product of route blockings over each demand's routes (1 with no route)."""
        pad = np.ones(self.n_demands * self.max_rank)
        pad[self.route_flat] = L
        return np.prod(pad.reshape(self.n_demands, self.max_rank), axis=1)

    # -- the iteration ----------------------------------------------------------------------
    def solve(self, B0, tol, max_iter, label):
        B = np.array(B0, dtype=float)
        q = np.maximum(1.0 - B, Q_FLOOR)
        alpha = 1.0
        prev_res = np.inf
        prev_diff = None
        res = np.inf
        for it in range(1, max_iter + 1):
            _, _, loads = self.sweep(q)
            Bn, qn = self.link_blocking(loads)
            diff = Bn - B
            res = float(np.max(np.abs(diff))) if diff.size else 0.0
            if res <= tol:
                return Bn, qn, it, res, alpha
            if prev_diff is not None:
                ratio = res / prev_res if prev_res > 0 else np.inf
                # not np.dot/vdot: BLAS calls were seen to cost 1000x more on a busy machine
                dot = float((diff * prev_diff).sum())
                if dot < 0.0 and ratio > 0.7:
                    # successive changes swing back and forth: take shorter steps
                    alpha = max(alpha * 0.5, _ALPHA_MIN)
                elif dot > 0.0 and ratio < 1.0 and alpha < 1.0:
                    # steady one-way progress: damping only slows it down
                    alpha = min(1.0, alpha * 1.5)
            prev_res, prev_diff = res, diff
            if alpha == 1.0:
                B, q = Bn, qn
            else:
                B = B + alpha * diff
                q = q + alpha * (qn - q)
        raise ConvergenceError(
            f"fixed point ({label}) did not converge in {max_iter} iterations: largest change "
            f"in link blocking {res:.3g} > tol {tol:.3g} (last damping factor {alpha:.3g}); "
            "try a larger max_iter, a looser tol, method 'conservative' or 'simulate'",
            iterations=max_iter,
            residual=res,
        )

    # -- results ----------------------------------------------------------------------------
    def evaluation(self, B, q, method, iterations, residual, status, message, warnings,
                   details, thin=True):
        L, reach, loads = self.sweep(q, thin=thin, precise=True)
        blocking = self.demand_blocking(L)
        bw = self.stream_bw[None, :]
        cap_loads = loads * bw
        link_offered = cap_loads.sum(axis=1)
        # q = 1 - B kept accurate near saturation, where 1.0 - B would cancel
        keep = np.where(B >= 1.0, 0.0, np.broadcast_to(q, B.shape))
        link_carried = (cap_loads * keep).sum(axis=1)
        first = ~self.stream_overflow
        link_blocking = _weighted(B[:, first], cap_loads[:, first])
        if self.alternate:
            link_alt = _weighted(B[:, ~first], cap_loads[:, ~first])
        else:
            link_alt = link_blocking
        det = {"classes": [int(c) for c in self.classes], "link_state": B,
               "route_blocking": L, "route_reach": reach}
        det.update(details)
        return Evaluation(
            method=method,
            demand_ids=self.demand_ids,
            offered=self.traffic,
            blocking=np.clip(blocking, 0.0, 1.0) + 0.0,  # + 0.0 turns -0.0 into 0.0
            target=self.target,
            link_ids=self.link_ids,
            capacity=self.caps,
            link_offered=link_offered,
            link_carried=link_carried,
            link_blocking=link_blocking,
            link_blocking_alternate=link_alt,
            iterations=iterations,
            residual=residual,
            status=status,
            message=message,
            warnings=tuple(warnings),
            details=det,
        )


def _weighted(B, w):
    """Load-weighted mean blocking per link; the widest stream's blocking on idle links."""
    tot = w.sum(axis=1)
    num = (B * w).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(tot > 0, num / np.where(tot > 0, tot, 1.0), B[:, -1])


def _start_state(prob, start):
    shape = (prob.n_links, prob.n_streams)
    if isinstance(start, str):
        if start == "idle":
            return np.zeros(shape)
        if start == "full":
            return prob.heavy_state()
        raise ValueError(
            f"start: expected 'idle', 'full', an Evaluation or an array, got {start!r}"
        )
    if isinstance(start, Evaluation):
        state = start.details.get("link_state")
        if state is None or np.shape(state) != shape:
            state = np.repeat(np.asarray(start.link_blocking, dtype=float), prob.n_streams)
            if state.size != prob.n_links * prob.n_streams:
                raise ValueError(
                    f"start: the evaluation has {len(start.link_blocking)} links, "
                    f"the network {prob.n_links}"
                )
        start = state
    arr = np.asarray(start, dtype=float)
    if arr.shape == (prob.n_links,):
        arr = np.repeat(arr, prob.n_streams).reshape(shape)
    if arr.shape != shape:
        raise ValueError(
            f"start: expected link blockings of shape {(prob.n_links,)} or {shape}, "
            f"got {arr.shape}"
        )
    if not np.all((arr >= 0) & (arr <= 1)):
        raise ValueError("start: link blockings must lie in [0, 1]")
    return arr.reshape(shape)


def fixed_point(network, capacities=None, conservative=False, tol=1e-10, max_iter=1000,
                start=None) -> Evaluation:
    """End-to-end blocking of every demand by the reduced-load approximation.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link, in link order; default: the network's own capacities.
    conservative : bool
        Offer every link its un-thinned load (the product bound); no iteration under fixed
        routing. Under alternate routing the un-thinned loads include the overflow they
        cause, found by a monotone iteration (see Notes).
    tol : float
        Convergence test: largest change of any link blocking between two sweeps.
    max_iter : int
        Most sweeps per solve.
    start : None, 'idle', 'full', Evaluation or array_like, optional
        Starting link blockings. None: all links idle (B = 0); under alternate routing also
        solved from all links full ('full': the blockings under un-thinned loads, every
        route offered its demand's whole traffic), and both solutions are reported when they
        differ.
        An explicit start (e.g. the previous Evaluation, for a sizer's warm start) solves once.

    Returns
    -------
    Evaluation
        ``method`` is ``'fixed-point'`` or ``'conservative'``; ``status`` is ``'converged'``
        or ``'bistable'`` (then ``alternative`` holds the solution from the full start).
        ``details`` holds ``link_state`` (blocking per link and stream), ``route_blocking``
        and ``route_reach`` (numpy arrays, not in the JSON) and ``classes``.

    Raises
    ------
    ValueError
        Bad capacities, tol, max_iter, start, traffic or routing policy.
    ConvergenceError
        The iteration did not settle within ``max_iter`` sweeps.

    Notes
    -----
    Fixed routing, single rate: ``B_j = E(rho_j, C_j)`` with ``rho_j`` the sum over routes
    through j of ``A_r f_rj prod_{i in r, i != j} (1 - B_i)`` (``f_rj``: holding time on j over
    the demand's holding time); route blocking ``1 - prod (1 - B_i)``. Multi-rate: the same
    thinning per call class (distinct bandwidths) with a Kaufman-Roberts link. Alternate
    routing: every link is a birth-death chain with a first-choice and an overflow stream (per
    class), the overflow stream admitted only while the reservation stays free; route k of a
    demand is offered ``A_d prod_{m<k} L_m`` and a demand is lost with probability
    ``prod_k L_k``.

    *Conservative.* Fixed routing: every link offered the whole traffic of the routes over
    it, route blocking ``1 - prod (1 - E(rho_j, C_j))``, the product bound, which is at or
    above the exact blocking (Whitt 1985). Alternate routing: the same un-thinned loads,
    with route k of a demand offered ``A_d prod_{m<k} L_m`` on each of its links. The map
    from link blockings to the blockings at those loads is increasing (more blocking, more
    overflow; a birth-death link's blocking grows with its arrival rates), and it lies at
    or above the thinned map of the fixed point. Iterated from the blockings at which every
    route is offered the demand's whole traffic it falls monotonically to its largest
    solution; that solution, and every iterate before it, is at or above every solution of
    the fixed-point equations (Tarski's fixed-point theorem), so the conservative blocking
    of every demand is at or above its reduced-load blocking, bistable networks included.
    It is not proven to bound the exact blocking under alternate routing: overflow is
    peakier than Poisson.

    The equations are solved by repeated substitution. The damping factor halves whenever
    the largest change grows or successive changes point in opposite directions (period-2
    swings, seen on long routes in overload) and recovers while changes shrink steadily.

    References
    ----------
    F. P. Kelly, "Blocking probabilities in large circuit-switched networks", Adv. Appl.
    Prob. 18 (1986) 473-505. K. W. Ross, "Multiservice Loss Models for Broadband
    Telecommunication Networks", Springer 1995. A. Girard, "Routing and Dimensioning in
    Circuit-Switched Networks", Addison-Wesley 1990. ITU-T Recommendation E.529. W. Whitt,
    "Blocking when service is required from several facilities simultaneously", AT&T Tech. J.
    64 (1985) 1807-1856. R. J. Gibbens, P. J. Hunt, F. P. Kelly, "Bistability in
    communication networks", in Disorder in Physical Systems, Oxford 1990.
    """
    from netdim.evaluate import resolve_capacities

    if not (isinstance(tol, (int, float, np.floating)) and np.isfinite(tol) and tol > 0):
        raise ValueError(f"tol: must be a positive number, got {tol!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, (int, np.integer)) or max_iter < 1:
        raise ValueError(f"max_iter: must be an integer >= 1, got {max_iter!r}")
    caps = resolve_capacities(network, capacities)
    prob = _Problem(network, caps)

    if conservative:
        return _conservative(prob, tol, max_iter)

    explicit = start is not None
    B0 = _start_state(prob, start) if explicit else np.zeros((prob.n_links, prob.n_streams))
    B, q, it, res, alpha = prob.solve(B0, tol, max_iter, "from the given start"
                                         if explicit else "from idle links")
    message = f"converged in {it} iterations (largest change {res:.2g})"
    main = prob.evaluation(B, q, "fixed-point", it, res, "converged", message, [],
                           {"damping": alpha})
    if explicit or not prob.alternate or prob.n_links == 0:
        return main

    # Alternate routing may have several solutions: solve from the other end too.
    try:
        B2, q2, it2, res2, alpha2 = prob.solve(prob.heavy_state(), tol, max_iter,
                                                  "from full links")
    except ConvergenceError as exc:
        return _replace(main, warnings=main.warnings + (
            f"the solve from full links did not converge ({exc.iterations} iterations, "
            f"residual {exc.residual:.2g}); a second solution cannot be ruled out",))
    other = prob.evaluation(B2, q2, "fixed-point", it2, res2, "converged",
                            f"converged in {it2} iterations from full links", [],
                            {"damping": alpha2, "start": "full"})
    gap_d = np.abs(other.blocking - main.blocking)
    gap_l = float(np.max(np.abs(B2 - B))) if B.size else 0.0
    gap = max(float(gap_d.max()) if gap_d.size else 0.0, gap_l)
    if gap <= BISTABLE_GAP:
        return _replace(main, iterations=it + it2, message=(
            f"converged in {it} iterations from idle links and {it2} from full links, to the "
            f"same solution (largest change {max(res, res2):.2g})"))
    i = int(np.argmax(gap_d)) if gap_d.size else 0
    worst = (f"; demand '{main.demand_ids[i]}' {main.blocking[i]:.4g} vs "
             f"{other.blocking[i]:.4g}") if gap_d.size else ""
    warning = (
        "two solutions of the fixed-point equations (bistable network): from idle links and "
        f"from full links they differ by up to {gap:.3g} in link or demand blocking{worst}; "
        "the low-blocking one is reported, see 'alternative'; more trunk reservation "
        "usually removes the high-blocking state"
    )
    return _replace(main, status="bistable", alternative=other,
                    message=message + "; a second solution from full links",
                    warnings=main.warnings + (warning,))


def _conservative(prob, tol, max_iter):
    """The conservative evaluation (un-thinned loads; see :func:`fixed_point`, Notes)."""
    free = np.ones((prob.n_links, prob.n_streams))
    B, q = prob.link_blocking(prob.sweep(free, thin=False, every_route=True)[2])
    if not (prob.alternate and prob.max_rank > 1):
        return prob.evaluation(
            B, q, "conservative", 0, 0.0, "converged",
            "product bound: every link offered its un-thinned load (no iteration)", [], {},
            thin=False,
        )
    res = np.inf
    warns = ["conservative under alternate routing: at or above every reduced-load solution, "
             "but not proven above the exact blocking (overflow is peakier than Poisson); "
             "check plans by simulation"]
    it = 0
    while it < max_iter:
        it += 1
        Bn, qn = prob.link_blocking(prob.sweep(q, thin=False)[2])
        res = float(np.max(np.abs(Bn - B))) if B.size else 0.0
        # The iterates fall monotonically; the minimum guards against rounding.
        B, q = np.minimum(B, Bn), np.maximum(q, qn)
        if res <= tol:
            break
    if res > tol:
        warns.append(f"conservative iteration stopped after {max_iter} sweeps (largest "
                     f"change {res:.2g}); its blockings stay at or above the limit")
    return prob.evaluation(
        B, q, "conservative", it, res, "converged",
        f"un-thinned loads with their overflow: {it} monotone sweeps from every route "
        f"offered its demand's whole traffic (largest change {res:.2g})", warns, {},
        thin=False,
    )


def _replace(ev, **changes):
    from dataclasses import replace

    return replace(ev, **changes)
