"""The reduced-load equations as flat arrays: the prepared routes, one sweep, the damped solve.

:class:`RouteArrays` holds everything about a network the iteration needs and that does not
depend on capacities: one entry per (route, link) step (from :func:`netdim.model.incidence`),
the call classes (distinct bandwidths) and streams (class, and first choice or overflow under
alternate routing). It is built once per network and memoised on it.

:class:`ReducedLoad` is that network at one capacity vector. A sweep maps link state
``q = 1 - B`` (per link and stream) to route blocking, reach probabilities and offered loads:
the product of ``q`` over each route by ``multiply.reduceat`` (steps come route by route; a
sum of logs by ``bincount`` otherwise), the own link excluded per step as ``Q_r / q_j``, loads
gathered onto links by ``bincount``. No Python loop over demands runs inside the iteration.
The final route blockings are composed in log space, ``-expm1(sum log(1 - B))``, so that a
blocking of 1e-14 keeps its relative precision.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim.erlang import erlang_b
from netdim.errors import ConvergenceError, ModelTooLargeError
from netdim.evaluate._network import memo
from netdim.linkmodels import (
    kaufman_roberts_many,
    reservation_link_many,
    reservation_link_multi_many,
)
from netdim.model import POLICIES, incidence

__all__ = ["RouteArrays", "ReducedLoad", "Q_FLOOR", "MAX_STATE_UNITS", "LOG_SPACE_BELOW"]

#: Floor of 1 - B in the iteration (B = 1 on a link of capacity 0). A route over such a link
#: still carries nothing to any useful precision, and the own-link exclusion Q_r / q_j never
#: divides by zero; products of a few floored factors stay clear of underflow trouble.
Q_FLOOR = 1e-130
_LOG_Q_FLOOR = float(np.log(Q_FLOOR))

#: Largest link capacity (units) for the link models that walk every occupancy state
#: (multi-rate and trunk-reservation links): their cost per sweep grows with it, about
#: 13 us a state (linkmodels), so 1e5 units is about 1.3 s a sweep.
MAX_STATE_UNITS = 100_000

#: Route blockings below this are composed in log space at a solution: 1 - prod(1 - B) is
#: off by a few units of 1e-16 (absolute), under 1e-12 relative above this.
LOG_SPACE_BELOW = 1e-3

_ALPHA_MIN = 1.0 / 256.0


@dataclass(frozen=True)
class RouteArrays:
    """A network's routes as flat step arrays, independent of capacities.

    Attributes
    ----------
    alternate : bool
        Alternate routing (every candidate route); else the first route only.
    n_links, n_demands, n_routes, n_streams, n_slots, max_rank : int
        ``n_slots = n_links * n_streams``; ``max_rank``: most routes of any demand.
    traffic, target : ndarray
        Per demand.
    classes : ndarray of int
        Distinct bandwidths (call classes).
    stream_bw : ndarray of int
        Bandwidth of every stream, class-major (first choice, then overflow).
    stream_overflow : ndarray of bool
        The stream is overflow (alternate-route) traffic.
    step_route, step_slot : ndarray of int
        Route, and (link, stream) slot, of every step.
    step_base : ndarray
        Erlangs a route's admitted calls offer the step's link, before thinning.
    last_route : ndarray of int
        Last route of every demand (-1 for a demand with none).
    route_start : ndarray of int or None
        First step of every route (None when some route has no step: no ``reduceat``).
    rank_routes : tuple of ndarray
        Routes of rank 1, 2, ... (for the reach probabilities).
    reservations : ndarray of int or None
        Per link (alternate routing).
    limits : ndarray of int or None
        Units each (link, stream) must leave free: 0 for first choice, the reservation for
        overflow (alternate routing).
    """

    alternate: bool
    n_links: int
    n_demands: int
    n_routes: int
    n_streams: int
    n_slots: int
    max_rank: int
    traffic: np.ndarray
    target: np.ndarray
    classes: np.ndarray
    stream_bw: np.ndarray
    stream_overflow: np.ndarray
    step_route: np.ndarray
    step_slot: np.ndarray
    step_base: np.ndarray
    last_route: np.ndarray
    route_start: np.ndarray | None
    rank_routes: tuple
    reservations: np.ndarray | None
    limits: np.ndarray | None

    @property
    def n_classes(self) -> int:
        return len(self.classes)

    @classmethod
    def of(cls, network) -> RouteArrays:
        """The network's arrays, built on first use and memoised on the network."""
        return memo(network, "evaluate.route_arrays", cls.from_network)

    @classmethod
    def from_network(cls, network) -> RouteArrays:
        """Flatten the routes of ``network``.

        Raises
        ------
        ValueError
            Unknown routing policy, or a traffic that is negative or not finite.
        """
        policy = network.routing.policy
        if policy not in POLICIES:
            raise ValueError(
                f"routing policy: unknown policy {policy!r}; choose one of {', '.join(POLICIES)}"
            )
        alternate = policy == "alternate"
        inc = incidence(network, first_only=not alternate)
        n_links = len(network.links)
        n_routes = inc.n_routes
        traffic = np.asarray(inc.traffic, dtype=float)
        bad = ~np.isfinite(traffic) | (traffic < 0)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise ValueError(
                f"demand '{network.demands[i].id}': traffic must be a finite number >= 0, "
                f"got {traffic[i]!r}"
            )
        factor = np.asarray(inc.step_factor, dtype=float)
        if not np.all(np.isfinite(factor) & (factor >= 0)):
            s = int(np.flatnonzero(~(np.isfinite(factor) & (factor >= 0)))[0])
            d = network.demands[int(inc.route_demand[inc.step_route[s]])]
            raise ValueError(f"demand '{d.id}': holding times must be finite and > 0")
        # Call classes = distinct bandwidths; streams per link = classes (x first/overflow).
        bw = np.asarray(inc.bandwidth, dtype=np.int64)
        classes = np.unique(bw) if len(bw) else np.array([1], dtype=np.int64)
        per_class = 2 if alternate else 1
        n_streams = len(classes) * per_class
        stream_bw = np.repeat(classes, per_class).astype(np.int64)
        stream_overflow = np.tile(np.arange(per_class) > 0, len(classes))
        step_route = np.asarray(inc.step_route, dtype=np.int64)
        step_demand = inc.route_demand[step_route]
        stream = np.searchsorted(classes, bw)[step_demand] * per_class
        if alternate:
            stream = stream + (inc.route_rank[step_route] > 0)
        max_rank = int(inc.route_rank.max()) + 1 if n_routes else 1
        starts = np.searchsorted(step_route, np.arange(n_routes))
        ok = n_routes > 0 and np.all(np.diff(np.append(starts, len(step_route))) > 0)
        first = np.asarray(inc.first_route, dtype=np.int64)
        reservations = limits = None
        if alternate:
            reservations = network.reservations()
            res_b = np.repeat(reservations, n_streams).reshape(n_links, n_streams)
            limits = np.where(stream_overflow[None, :], res_b, 0)
        return cls(
            alternate=alternate,
            n_links=n_links,
            n_demands=len(network.demands),
            n_routes=n_routes,
            n_streams=n_streams,
            n_slots=n_links * n_streams,
            max_rank=max_rank,
            traffic=traffic,
            target=np.array([d.target for d in network.demands], dtype=float),
            classes=classes,
            stream_bw=stream_bw,
            stream_overflow=stream_overflow,
            step_route=step_route,
            step_slot=np.asarray(inc.step_link, dtype=np.int64) * n_streams + stream,
            step_base=traffic[step_demand] * factor,
            last_route=np.where(np.diff(first) > 0, first[1:] - 1, -1),
            route_start=starts if ok else None,
            rank_routes=tuple(np.flatnonzero(inc.route_rank == k) for k in range(1, max_rank)),
            reservations=reservations,
            limits=limits,
        )


@dataclass(frozen=True)
class Sweep:
    """What one sweep gives: per route blocking ``L`` and reach, per (link, stream) loads."""

    L: np.ndarray
    reach: np.ndarray
    loads: np.ndarray


class ReducedLoad:
    """The reduced-load equations of one network at one capacity vector.

    Parameters
    ----------
    arrays : RouteArrays
    caps : ndarray of int64
        Checked capacities, in link order.

    Raises
    ------
    ModelTooLargeError
        A link model that walks every occupancy state (multi-rate, trunk reservation) on a
        link of more than :data:`MAX_STATE_UNITS` units.
    """

    def __init__(self, arrays: RouteArrays, caps: np.ndarray, link_ids=()):
        self.a = arrays
        self.caps = caps
        self.zero_cap = caps == 0
        self.any_zero_cap = bool(self.zero_cap.any())
        self.single = not arrays.alternate and arrays.n_classes == 1
        if not self.single and len(caps) and int(caps.max()) > MAX_STATE_UNITS:
            j = int(np.argmax(caps))
            name = f"link '{link_ids[j]}'" if link_ids else f"link {j}"
            model = "trunk reservation" if arrays.alternate else "multi-rate calls"
            raise ModelTooLargeError(
                f"fixed point: {name} has {int(caps[j])} units; with {model} each link is "
                f"solved state by state, and more than {MAX_STATE_UNITS} units a link is "
                "refused; count capacity in larger units (bandwidth in modules) or use "
                "fixed routing with one call class"
            )

    # -- one link model evaluation ----------------------------------------------------------
    def link_blocking(self, loads):
        """Blocking per (link, stream), ``1 - B`` (floored) and ``log(1 - B)`` or None."""
        a, caps = self.a, self.caps
        if self.single:
            # E itself is accurate to full relative precision, and log1p(-E) keeps about
            # 1e-16 / (1 - E) relative accuracy: ample unless E is within 1e-6 of 1. There use
            # the recursion's 1 - E_n = n E_n / (A E_{n-1}), in which every factor is far from
            # 0 (Erlang B recursion; common practice).
            B = np.array(erlang_b(loads[:, 0], caps), dtype=float).reshape(-1, 1)
            logq = np.log1p(-np.minimum(B, 1.0 - 1e-6))
            high = (B[:, 0] > 1.0 - 1e-6) & (caps > 0)
            if high.any():
                load, n, bn = loads[high, 0], caps[high], B[high, 0]
                prev = np.asarray(erlang_b(load, n - 1), dtype=float)
                logq[high, 0] = np.log(n * bn) - np.log(load * prev)
        elif not a.alternate:
            B = np.asarray(kaufman_roberts_many(loads, a.classes, caps), dtype=float)
            logq = None
        elif a.n_classes == 1:
            b1, b2 = reservation_link_many(loads[:, 0], loads[:, 1], caps, a.reservations)
            B = np.column_stack([np.asarray(b1, dtype=float), np.asarray(b2, dtype=float)])
            logq = None
        else:
            logq = None
            B = reservation_link_multi_many(loads, a.stream_bw, caps, a.limits)
        if self.any_zero_cap:
            B[self.zero_cap] = 1.0
        np.clip(B, 0.0, 1.0, out=B)
        q = np.exp(logq) if logq is not None else 1.0 - B
        if self.any_zero_cap:
            q[self.zero_cap] = 0.0
            if logq is not None:
                logq[self.zero_cap] = -np.inf
        np.maximum(q, Q_FLOOR, out=q)
        return B, q, logq

    def heavy_state(self):
        """Link blockings under the un-thinned loads: every link at its heaviest load.

        This is the 'all links full' end for a second solve. Starting from B = 1 itself
        would not do: with every link blocked no call reaches an alternate route, the
        overflow loads vanish and the iteration falls back to the idle solution.
        """
        free = np.ones((self.a.n_links, self.a.n_streams))
        return self.link_blocking(self.sweep(free, thin=False, every_route=True).loads)[0]

    # -- one sweep: link state -> route blocking and link loads -----------------------------
    def sweep(self, q, thin=True, logq=None, every_route=False) -> Sweep:
        """Route blocking, reach probability and offered loads for link state ``q = 1 - B``.

        ``thin=False`` gives the un-thinned loads of the product bound: every route offers
        each of its links the whole traffic that tries it (under alternate routing, the
        demand's traffic times the blocking of its earlier routes). ``every_route=True`` with
        ``thin=False``: every route is offered its demand's whole traffic (the heaviest
        loads of all). With ``logq`` (a function of flat (link, stream) slots giving
        ``log(1 - B)`` there) the blocking of every route below ``LOG_SPACE_BELOW`` is
        composed in log space, ``-expm1(sum log q)``, for full relative precision.
        """
        a = self.a
        take = np.take  # faster than fancy indexing for these gathers, not for [step_route]
        q_step = take(q.reshape(-1), a.step_slot)
        if a.route_start is not None:
            Q = np.multiply.reduceat(q_step, a.route_start) if len(q_step) else q_step
        else:
            Q = np.exp(np.bincount(a.step_route, weights=np.log(q_step),
                                   minlength=a.n_routes))
        L = 1.0 - Q
        if logq is not None:
            # 1 - Q is off by a few units of 1e-16, which matters for small L only: compose
            # those routes in log space, over their steps alone
            tiny = L < LOG_SPACE_BELOW
            if tiny.any():
                steps = np.flatnonzero(take(tiny, a.step_route))
                lq = np.maximum(logq(take(a.step_slot, steps)), _LOG_Q_FLOOR)
                S = np.bincount(a.step_route[steps], weights=lq, minlength=a.n_routes)
                L[tiny] = -np.expm1(S[tiny])
        several = a.alternate and a.max_rank > 1
        if not thin:
            w = a.step_base
            if several and not every_route:
                reach = self._reach(L)
                w = w * reach[a.step_route]
            else:
                reach = np.ones(a.n_routes)
        else:
            # product over the route's other links = Q_r / q_j (q_j >= Q_FLOOR > 0)
            w = a.step_base * (Q[a.step_route] / q_step)
            if several:
                reach = self._reach(L)
                w *= reach[a.step_route]
            else:
                reach = np.ones(a.n_routes)
        loads = np.bincount(a.step_slot, weights=w, minlength=a.n_slots)
        return Sweep(L, reach, loads.reshape(a.n_links, a.n_streams))

    def _reach(self, L):
        """P(a call of the demand tries route r) = product of L over its earlier routes.

        Routes are numbered demand by demand in preference order, so the route before a
        route of rank k >= 1 is the previous one; one vector step per rank.
        """
        reach = np.ones(self.a.n_routes)
        for idx in self.a.rank_routes:
            before = idx - 1
            reach[idx] = np.take(reach, before) * np.take(L, before)
        return reach

    def demand_blocking(self, L, reach):
        """Product of route blockings over each demand's routes (1 with no route).

        The reach of a demand's last route is the product of the blockings before it, so
        the demand is lost with probability ``reach[last] * L[last]``.
        """
        last = self.a.last_route
        if not len(last):
            return np.ones(0)
        has = last >= 0
        pick = np.where(has, last, 0)
        out = reach[pick] * L[pick] if len(L) else np.ones(len(last))
        return np.where(has, out, 1.0) if not has.all() else out

    # -- the iteration ----------------------------------------------------------------------
    def solve(self, B0, tol, max_iter, label):
        """Repeated substitution from link state ``B0`` with adaptive damping.

        Returns ``(B, q, logq, iterations, residual, damping)``.

        Raises
        ------
        ConvergenceError
            The largest change of a link blocking is still above ``tol`` after ``max_iter``
            sweeps.
        """
        B = np.array(B0, dtype=float)
        q = np.maximum(1.0 - B, Q_FLOOR)
        alpha = 1.0
        prev_res = np.inf
        prev_diff = None
        res = np.inf
        for it in range(1, max_iter + 1):
            Bn, qn, logq = self.link_blocking(self.sweep(q).loads)
            diff = Bn - B
            res = float(np.max(np.abs(diff))) if diff.size else 0.0
            if res <= tol:
                return Bn, qn, logq, it, res, alpha
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

    # -- the figures at a solution ----------------------------------------------------------
    def figures(self, B, q, logq=None, thin=True) -> dict:
        """Demand and link figures at link state ``B`` (``q = 1 - B``, floored).

        Returns the keyword arguments of :meth:`Evaluation.from_link_state` that depend on
        the state (blocking, link loads and blockings) and the arrays kept in ``details``.
        """
        a = self.a
        if logq is not None:
            flat = logq.reshape(-1)

            def log_q(slots):
                return np.take(flat, slots)
        else:
            bf, qf = B.reshape(-1), q.reshape(-1)

            def log_q(slots):
                # log1p(-B) is accurate for small B, log(q) where B is near 1 (q accurate)
                b = np.take(bf, slots)
                with np.errstate(divide="ignore"):
                    return np.where(b < 0.5, np.log1p(-np.minimum(b, 0.5)),
                                    np.log(np.take(qf, slots)))
        s = self.sweep(q, thin=thin, logq=log_q)
        blocking = self.demand_blocking(s.L, s.reach)
        cap_loads = s.loads * a.stream_bw[None, :]
        link_offered = _row_sum(cap_loads)
        # q = 1 - B kept accurate near saturation, where 1.0 - B would cancel
        keep = np.where(B >= 1.0, 0.0, q)
        link_carried = _row_sum(cap_loads * keep)
        first = ~a.stream_overflow
        link_blocking = _weighted(B[:, first], cap_loads[:, first])
        link_alt = _weighted(B[:, ~first], cap_loads[:, ~first]) if a.alternate else None
        out = {
            "blocking": np.clip(blocking, 0.0, 1.0) + 0.0,  # + 0.0 turns -0.0 into 0.0
            "link_offered": link_offered,
            "link_carried": link_carried,
            "link_blocking": link_blocking,
            "link_blocking_alternate": link_alt,
        }
        for v in out.values():
            if v is not None:
                v.setflags(write=False)  # fresh arrays: the Evaluation keeps them uncopied
        return {
            **out,
            "details": {"classes": [int(c) for c in a.classes], "link_state": B,
                        "route_blocking": s.L, "route_reach": s.reach},
        }


def _row_sum(x):
    """``x.sum(axis=1)``, column by column for a few columns: the same sums (numpy adds up
    to 7 elements of a row in order; pairwise from 8), a tenth of the time on many rows."""
    if x.shape[1] > 7:
        return x.sum(axis=1)
    out = x[:, 0].copy()
    for k in range(1, x.shape[1]):
        out += x[:, k]
    return out


def _weighted(B, w):
    """Load-weighted mean blocking per link; the widest stream's blocking on idle links."""
    tot = _row_sum(w)
    num = _row_sum(B * w)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(tot > 0, num / np.where(tot > 0, tot, 1.0), B[:, -1])
