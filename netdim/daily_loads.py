"""Networks over a day: time-stepped reduced-load approximations of time-varying demand.

Every demand has an arrival rate per period (calls per hour, constant within a period); a
call holds each link of its route for that step's mean holding time. Each (route, link) step
carries one state, integrated over the day by :func:`scipy.integrate.solve_ivp`; the links
are coupled as in the Erlang fixed point: a route's arrivals reach a link thinned by the
blocking of the route's other links, each link's blocking from Erlang B at each instant.

``'fpa'`` (default) -- the carried-load equations closed with Erlang B: each step's state is
    its carried load ``c``, ``c' = lambda prod_{i in r} (1 - B_i) - c / h``; a link's
    blocking is ``E(a, C)`` for the offered load ``a`` with ``a (1 - E(a, C)) = sum c``.
    On one link the mean equation is exact and only the closure approximates.
``'mol'`` -- the modified offered load: each step's state is the load ``m`` of an
    infinite-server link, ``m' = lambda prod_{i in r, i != j} (1 - B_i) - m / h``, and
    ``B_j = E(sum m, C_j)``.

Under alternate routing with trunk reservation each link is the reservation chain fed by
first-choice and overflow loads; ``'fpa'`` then carries both states per step: the modified
offered loads give each link's mix of the two streams, the carried loads its level (the
law's mean equals the carried total).

With constant rates both settle on the reduced-load (Erlang fixed point) solution.

References
----------
.. [1] D. L. Jagerman, "Nonstationary blocking in telephone traffic", Bell System Technical
   Journal 54 (1975) 625-661 (the modified offered load).
.. [2] W. A. Massey and W. Whitt, "An analysis of the modified offered-load approximation for
   the nonstationary Erlang loss model", Annals of Applied Probability 4 (1994) 1145-1160.
.. [3] O. B. Jennings and W. A. Massey, "A modified offered load approximation for
   nonstationary circuit switched networks", Telecommunication Systems 7 (1997) 229-251
   (the carried-load fixed-point approximation in networks).
.. [4] F. P. Kelly, "Blocking probabilities in large circuit-switched networks", Advances in
   Applied Probability 18 (1986) 473-505 (the reduced-load fixed point).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from netdim._arrays import frozen
from netdim._day_closures import (
    invert_carried,
    occupancy_figures,
    offered_for_carried,
    scale_to_occupancy,
)
from netdim.day_profile import link_day_records
from netdim.erlang import erlang_b
from netdim.errors import ConvergenceError
from netdim.linkmodels import reservation_link_many
from netdim.model import POLICIES, incidence
from netdim.transient import day_grid, day_loss, offered_load, period_lengths, worst_period

__all__ = [
    "METHODS",
    "DEFAULT_METHOD",
    "DayEvaluation",
    "day_reduced_load",
    "day_single_resource",
    "offered_for_carried",
]

#: Approximations of :func:`day_reduced_load`.
METHODS = ("fpa", "mol")
#: The one used when none is named: nearer the exact chain on every network measured
#: (docs/measurements/daily.md).
DEFAULT_METHOD = "fpa"

# Floor of 1 - B, so that a full link (capacity 0) never makes a log or a ratio blow up.
_Q_FLOOR = 1e-130


# --------------------------------------------------------------------------------------------
# result


@dataclass(frozen=True)
class DayEvaluation:
    """Blocking of every demand and occupancy of every link over the day.

    Arrays are read-only, in the network's demand or link order; ``P`` periods, ``G`` grid
    times (period ends included).

    Attributes
    ----------
    method : str
        ``'fpa'``, ``'mol'`` or ``'exact'``.
    demand_ids, link_ids : tuple of str
    capacity : ndarray of int, shape (L,)
    rates, offered, lost, blocking : ndarray, shape (D, P)
        Arrivals per hour; expected calls offered and lost; blocking per period.
    peak_blocking, lost_fraction : ndarray, shape (D,)
    peak_period : ndarray of int, shape (D,)
        Worst period (0-based) among those with arrivals (among all if none has any).
    period_hours : ndarray, shape (P,)
    link_blocking : ndarray, shape (L, P)
        Share of each period a link turns away first-choice calls.
    times : ndarray, shape (G,)
    offered_load, occupancy_mean, full_probability : ndarray, shape (L, G)
        The link model's offered erlangs, mean busy units and P(every unit busy).
    occupancy_quantile : ndarray of int, shape (L, G)
    quantile : float
    peak_occupancy, peak_time : ndarray, shape (L,)
        Largest mean occupancy on the grid and when.
    cyclic : bool
    days : int
        Days run to find the periodic state (0 unless cyclic).
    residual : float
        Cyclic: largest change of a state over the last day (erlangs); 0 otherwise.
    """

    method: str
    demand_ids: tuple
    link_ids: tuple
    capacity: np.ndarray
    rates: np.ndarray
    period_hours: np.ndarray
    offered: np.ndarray
    lost: np.ndarray
    blocking: np.ndarray
    peak_blocking: np.ndarray
    peak_period: np.ndarray
    lost_fraction: np.ndarray
    link_blocking: np.ndarray
    times: np.ndarray
    offered_load: np.ndarray
    occupancy_mean: np.ndarray
    full_probability: np.ndarray
    occupancy_quantile: np.ndarray
    quantile: float
    peak_occupancy: np.ndarray
    peak_time: np.ndarray
    cyclic: bool
    days: int
    residual: float

    def to_dict(self) -> dict:
        """Plain-Python figures for JSON: one record per demand and per link."""
        demands = [
            {
                "id": d,
                "peak_blocking": float(self.peak_blocking[i]),
                "peak_period": int(self.peak_period[i]),
                "lost_fraction": float(self.lost_fraction[i]),
                "blocking_by_period": self.blocking[i].tolist(),
                "offered_by_period": self.offered[i].tolist(),
            }
            for i, d in enumerate(self.demand_ids)
        ]
        links = link_day_records(self)
        return {
            "method": self.method,
            "cyclic": self.cyclic,
            "days": self.days,
            "residual": self.residual,
            "period_hours": self.period_hours.tolist(),
            "times": self.times.tolist(),
            "demands": demands,
            "links": links,
        }


# --------------------------------------------------------------------------------------------
# the equations


class _Equations:
    """Static arrays and the right-hand side of one network's day equations."""

    def __init__(self, network, caps, method):
        policy = network.routing.policy
        if policy not in POLICIES:
            raise ValueError(
                f"routing policy: unknown policy {policy!r}; choose one of {', '.join(POLICIES)}"
            )
        for d in network.demands:
            if d.bandwidth != 1:
                raise ValueError(
                    f"demand '{d.id}': bandwidth {d.bandwidth}: the day methods take "
                    "single-rate networks only (every bandwidth 1) for now"
                )
        self.alternate = policy == "alternate"
        self.method = method
        inc = incidence(network, first_only=not self.alternate)
        self.n_links = len(network.links)
        self.n_demands = len(network.demands)
        self.n_routes = inc.n_routes
        self.n_steps = len(inc.step_link)
        self.caps = np.asarray(caps, dtype=np.int64)
        self.capf = self.caps.astype(float)
        self.step_link = np.asarray(inc.step_link)
        self.step_route = np.asarray(inc.step_route)
        self.route_demand = np.asarray(inc.route_demand)
        self.route_rank = np.asarray(inc.route_rank)
        self.step_demand = self.route_demand[self.step_route]
        holding = np.array([d.holding for d in network.demands], dtype=float)
        self.step_hold = np.asarray(inc.step_factor) * holding[self.step_demand]
        if np.any(~(self.step_hold > 0)):
            raise ValueError("holding: every holding time must be > 0 hours")
        self.step_first = self.route_rank[self.step_route] == 0
        self.stream = (~self.step_first).astype(np.int64) if self.alternate else np.zeros(
            self.n_steps, dtype=np.int64)
        self.n_streams = 2 if self.alternate else 1
        self.slot = self.step_link * self.n_streams + self.stream
        self.res = network.reservations() if self.alternate else np.zeros(
            self.n_links, dtype=np.int64)
        self.max_rank = int(self.route_rank.max()) + 1 if self.n_routes else 1
        self.rank_routes = [np.flatnonzero(self.route_rank == k) for k in range(1, self.max_rank)]
        # fpa under alternate routing carries both the carried and the offered loads
        self.mixed = self.alternate and method == "fpa"
        self.n_state = self.n_steps * (2 if self.mixed else 1)
        self._guess = None

    # -- link state from the step states ----------------------------------------------------
    def link_state(self, x):
        """(first load, overflow load, B per link and stream) for step states ``x``."""
        if self.method == "fpa" and self.alternate:
            # x = carried loads then modified offered loads, step by step: the carried
            # total sets the level of each link's law, the offered loads its stream mix
            c, m = x[:self.n_steps], x[self.n_steps:]
            total = np.bincount(self.step_link, weights=c, minlength=self.n_links)
            loads = np.bincount(self.slot, weights=m, minlength=2 * self.n_links).reshape(-1, 2)
            scale, b1, b2 = scale_to_occupancy(loads[:, 0], loads[:, 1], self.caps,
                                                self.caps - self.res, total, self._guess)
            self._guess = scale
            b1[self.caps == 0] = b2[self.caps == 0] = 1.0
            return scale * loads[:, 0], scale * loads[:, 1], np.column_stack([b1, b2])
        if self.method == "fpa":
            carried = np.bincount(self.step_link, weights=x, minlength=self.n_links)
            a, e = invert_carried(carried, self.caps, guess=self._guess)
            self._guess = a
            return a, np.zeros(self.n_links), e.reshape(-1, 1)
        loads = np.bincount(self.slot, weights=x, minlength=self.n_links * self.n_streams)
        loads = np.maximum(loads.reshape(self.n_links, self.n_streams), 0.0)
        if not self.alternate:
            b = np.asarray(erlang_b(loads[:, 0], self.caps), dtype=float).reshape(-1, 1)
            return loads[:, 0], np.zeros(self.n_links), b
        b1, b2 = reservation_link_many(loads[:, 0], loads[:, 1], self.caps, self.res)
        return loads[:, 0], loads[:, 1], np.column_stack([b1, b2])

    def route_terms(self, b):
        """Per step log(1 - B) of its link, per route the sum, route blocking and reach."""
        q = np.maximum(1.0 - b, _Q_FLOOR)
        q[self.caps == 0] = _Q_FLOOR
        logq = np.log(q).reshape(-1)[self.slot]
        s_route = np.bincount(self.step_route, weights=logq, minlength=self.n_routes)
        loss = -np.expm1(s_route)
        reach = np.ones(self.n_routes)
        for idx in self.rank_routes:
            reach[idx] = reach[idx - 1] * loss[idx - 1]
        return logq, s_route, loss, reach

    def demand_loss(self, loss):
        """Probability a demand's call is lost: the product of its routes' blockings."""
        pad = np.ones(self.n_demands * self.max_rank)
        pad[self.route_demand * self.max_rank + self.route_rank] = loss
        return np.prod(pad.reshape(self.n_demands, self.max_rank), axis=1)

    def rhs(self, x, lam):
        """(d states / dt, demand loss probability, first-choice link blocking)."""
        x = np.maximum(x, 0.0)
        _, _, b = self.link_state(x)
        logq, s_route, loss, reach = self.route_terms(b)
        offered = lam[self.step_demand] * reach[self.step_route]
        if self.mixed:
            admitted = offered * np.exp(s_route[self.step_route])
            inflow = np.concatenate([admitted, admitted / np.exp(logq)])
            hold = np.concatenate([self.step_hold, self.step_hold])
        else:
            # fpa: the call must pass every link; mol: every other link of the route
            inflow = offered * np.exp(s_route[self.step_route]
                                      - (0.0 if self.method == "fpa" else logq))
            hold = self.step_hold
        return inflow - x / hold, self.demand_loss(loss), b[:, 0]


def _solve_period(eq, x0, lam, dt, t_eval, rtol):
    """Integrate one period; the state is steps + demand loss-time + link full-time."""
    S, D = eq.n_state, eq.n_demands

    def f(t, y):
        dx, dl, db = eq.rhs(y[:S], lam)
        return np.concatenate([dx, dl, db])

    y0 = np.concatenate([x0, np.zeros(D + eq.n_links)])
    scale = max(1.0, float(np.max(x0, initial=0.0)))
    sol = solve_ivp(f, (0.0, dt), y0, method="LSODA", rtol=rtol, atol=rtol * 1e-2 * scale,
                    t_eval=t_eval)
    if not sol.success:
        raise ConvergenceError(f"day equations: the ODE solver stopped: {sol.message}")
    return sol


def _check_start(eq, network, start):
    x0 = np.zeros(eq.n_steps)
    if start is None:
        return np.zeros(eq.n_state)
    s = np.asarray(start, dtype=float)
    if s.shape != (eq.n_demands,):
        raise ValueError(
            f"start: expected {eq.n_demands} values (calls in progress per demand), "
            f"got shape {s.shape}"
        )
    bad = ~(np.isfinite(s) & (s >= 0))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"start: demand '{network.demands[i].id}': must be >= 0, got {s[i]!r}")
    first = eq.step_first
    x0[first] = s[eq.step_demand[first]]
    busy = np.bincount(eq.step_link[first], weights=x0[first], minlength=eq.n_links)
    over = busy > eq.capf
    if over.any():
        j = int(np.flatnonzero(over)[0])
        raise ValueError(
            f"start: link '{network.links[j].id}': {busy[j]:g} calls in progress exceed its "
            f"capacity {int(eq.caps[j])}"
        )
    return np.tile(x0, eq.n_state // eq.n_steps) if eq.n_steps else x0


def _capacities(network, capacities):
    if capacities is None:
        return network.capacities()
    caps = np.asarray(capacities)
    if caps.shape != (len(network.links),):
        raise ValueError(
            f"capacities: expected {len(network.links)} values (one per link), "
            f"got shape {caps.shape}"
        )
    flt = caps.astype(float)
    bad = ~np.isfinite(flt) | (flt < 0) | (flt != np.round(flt))
    if bad.any():
        j = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"capacities: link '{network.links[j].id}': must be a whole number >= 0, "
            f"got {caps[j]!r}"
        )
    return flt.astype(np.int64)


def _check_rates(network, rates):
    r = np.asarray(rates, dtype=float)
    d = len(network.demands)
    if r.ndim != 2 or r.shape[0] != d or r.shape[1] == 0:
        raise ValueError(
            f"rates: expected an array of {d} demands x periods (calls per hour), "
            f"got shape {r.shape}"
        )
    bad = ~(np.isfinite(r) & (r >= 0))
    if bad.any():
        i, p = (int(v[0]) for v in np.nonzero(bad))
        raise ValueError(
            f"rates: demand '{network.demands[i].id}', period {p}: must be a finite rate "
            f">= 0, got {r[i, p]!r}"
        )
    return r


def day_reduced_load(network, rates, capacities=None, *, period=1.0, start=None,
                     cyclic=False, method=DEFAULT_METHOD, steps_per_period=4, quantile=0.95,
                     rtol=1e-8, max_days=200, day_tol=1e-9) -> DayEvaluation:
    """Blocking of every demand over a day of varying demand, by a reduced-load ODE.

    Parameters
    ----------
    network : Network
        Single-rate; fixed or alternate routing.
    rates : array_like, shape (D, P)
        Arrivals per hour of each demand in each period.
    capacities : array_like of int, optional
        One per link; default the network's own.
    period : float or array_like, shape (P,)
        Hours per period (default 1).
    start : array_like, shape (D,), optional
        Calls of each demand in progress (on its first route) at the start; default none.
    cyclic : bool
        The day repeats: start from the periodic state (days are run until the state at
        the end of the day equals the start within ``day_tol``); not with ``start``.
    method : {'fpa', 'mol'}
    steps_per_period : int
        Grid points per period for the occupancy curves.
    quantile : float
        Level of the occupancy quantile curves, in (0, 1).
    rtol : float
        Relative tolerance of the ODE solver.
    max_days, day_tol : int, float
        Cyclic: most days run, and the largest change of a state (erlangs, relative to
        the largest state) over a day accepted as periodic.

    Returns
    -------
    DayEvaluation

    Raises
    ------
    ValueError
        Bad rates, capacities, period, start, method or options; multi-rate demands.
    ConvergenceError
        The ODE solver failed, or no periodic state within ``max_days``.

    Notes
    -----
    A demand's blocking in a period is the time average of its loss probability (its
    arrival rate is constant there). Link occupancy laws are the stationary laws of the
    link model at the current offered load (truncated Poisson; the reservation chain
    under alternate routing).

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 54 (1975) 625-661.
    .. [2] W. A. Massey and W. Whitt, Annals of Applied Probability 4 (1994) 1145-1160.
    .. [3] O. B. Jennings and W. A. Massey, Telecommunication Systems 7 (1997) 229-251.

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("park", (Site("G"), Site("P")), (Link("P", ("G", "P"), 70),),
    ...               (Demand("cars", ("G", "P"), 1.0, 2.0, routes=(Route((0,), (2.0,)),)),))
    >>> rates = [[5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0]]
    >>> r = day_reduced_load(net, rates)
    >>> int(r.peak_period[0]), round(float(r.peak_blocking[0]), 3)
    (5, 0.052)
    """
    if method not in METHODS:
        raise ValueError(f"method: unknown method {method!r}; choose one of {', '.join(METHODS)}")
    caps = _capacities(network, capacities)
    lam = _check_rates(network, rates)
    n_periods = lam.shape[1]
    hours = period_lengths(period, n_periods)
    if isinstance(steps_per_period, bool) or not isinstance(steps_per_period, int) or (
            steps_per_period < 1):
        raise ValueError(f"steps_per_period: must be a whole number >= 1, got {steps_per_period!r}")
    if not (isinstance(quantile, (int, float)) and 0 < quantile < 1):
        raise ValueError(f"quantile: must lie in (0, 1), got {quantile!r}")
    if not (isinstance(rtol, (int, float)) and 0 < rtol < 1e-2):
        raise ValueError(f"rtol: must lie in (0, 0.01), got {rtol!r}")
    if cyclic and start is not None:
        raise ValueError("start: a cyclic day has no start occupancy; give one or the other")
    eq = _Equations(network, caps, method)
    x = _check_start(eq, network, start)
    S, D, L = eq.n_state, eq.n_demands, eq.n_links

    days, residual = 0, 0.0
    if cyclic:
        for days in range(1, max_days + 1):  # noqa: B007 - days is reported
            x_new = x
            for p in range(n_periods):
                x_new = np.maximum(_solve_period(eq, x_new, lam[:, p], hours[p], None,
                                                 rtol).y[:S, -1], 0.0)
            residual = float(np.max(np.abs(x_new - x), initial=0.0))
            x = x_new
            if residual <= day_tol * max(1.0, float(np.max(x, initial=0.0))):
                break
        else:
            raise ConvergenceError(
                f"cyclic day: the state still changed by {residual:.3g} erlangs over day "
                f"{max_days}; raise max_days or start the day from a given occupancy",
                iterations=max_days, residual=residual)

    loss_time = np.zeros((D, n_periods))
    full_time = np.zeros((L, n_periods))
    grid = [x]
    for p in range(n_periods):
        t_eval = np.linspace(0.0, hours[p], steps_per_period + 1)[1:]
        sol = _solve_period(eq, x, lam[:, p], hours[p], t_eval, rtol)
        loss_time[:, p] = sol.y[S:S + D, -1]
        full_time[:, p] = sol.y[S + D:, -1]
        grid.extend(np.maximum(sol.y[:S, i], 0.0) for i in range(steps_per_period))
        x = grid[-1]

    blocking = np.clip(loss_time / hours[None, :], 0.0, 1.0)
    offered = lam * hours[None, :]
    lost = offered * blocking
    tot = offered.sum(axis=1)
    lost_fraction = np.divide(lost.sum(axis=1), tot, out=np.zeros(D), where=tot > 0)
    peak_period = np.array([worst_period(blocking[i], offered[i]) for i in range(D)],
                           dtype=np.int64)
    times = day_grid(hours, steps_per_period)
    a1s, means, qs, fulls = [], [], [], []
    for xg in grid:
        a1, a2, _ = eq.link_state(xg)
        mean, qk, full = occupancy_figures(a1, a2, eq.caps, eq.res, quantile)
        a1s.append(a1 + a2)
        means.append(mean)
        qs.append(qk)
        fulls.append(full)
    occ = np.array(means).T.reshape(L, -1)
    ipk = np.argmax(occ, axis=1) if occ.size else np.zeros(L, dtype=np.int64)
    return DayEvaluation(
        method=method,
        demand_ids=network.demand_ids,
        link_ids=network.link_ids,
        capacity=frozen(caps, dtype=np.int64),
        rates=frozen(lam),
        period_hours=frozen(hours),
        offered=frozen(offered),
        lost=frozen(lost),
        blocking=frozen(blocking),
        peak_blocking=frozen(blocking[np.arange(D), peak_period]),
        peak_period=frozen(peak_period, dtype=np.int64),
        lost_fraction=frozen(lost_fraction),
        link_blocking=frozen(np.clip(full_time / hours[None, :], 0.0, 1.0)),
        times=frozen(times),
        offered_load=frozen(np.array(a1s).T.reshape(L, -1)),
        occupancy_mean=frozen(occ),
        full_probability=frozen(np.array(fulls).T.reshape(L, -1)),
        occupancy_quantile=frozen(np.array(qs).T.reshape(L, -1), dtype=np.int64),
        quantile=float(quantile),
        peak_occupancy=frozen(occ[np.arange(L), ipk]),
        peak_time=frozen(times[ipk]),
        cyclic=bool(cyclic),
        days=days,
        residual=residual,
    )


def day_single_resource(network, rates, capacities=None, *, period=1.0, start=None,
                        cyclic=False, steps_per_period=4, quantile=0.95,
                        method="uniformization") -> DayEvaluation:
    """The exact day of a one-link network whose demands share one holding time.

    Every demand's calls are pooled into one loss chain (:func:`netdim.transient.day_loss`);
    each demand sees the same blocking. Arguments as :func:`day_reduced_load`; ``method``
    is the chain's solver.

    Raises
    ------
    ValueError
        More than one link, a demand not routed over it alone, holding times that differ,
        multi-rate demands, or the errors of :func:`day_reduced_load`.
    """
    caps = _capacities(network, capacities)
    lam = _check_rates(network, rates)
    if len(network.links) != 1:
        raise ValueError(
            f"exact day: the network has {len(network.links)} links; the exact chain takes "
            "one resource (use day_reduced_load)"
        )
    holds = set()
    for d in network.demands:
        if d.bandwidth != 1:
            raise ValueError(f"demand '{d.id}': bandwidth {d.bandwidth}: single-rate only")
        if not d.routes:
            raise ValueError(f"demand '{d.id}': has no route over the link")
        holds.update(d.routes[0].holdings)
    if len(holds) > 1:
        raise ValueError(
            f"exact day: the demands hold the link for {len(holds)} different mean times; "
            "the exact chain takes one (use day_reduced_load)"
        )
    hold = holds.pop() if holds else 1.0
    n0 = 0
    if start is not None:
        s = np.asarray(start, dtype=float)
        if s.shape != (len(network.demands),) or np.any(s != np.round(s)) or np.any(s < 0):
            raise ValueError("start: expected a whole number >= 0 of calls per demand")
        n0 = int(s.sum())
    r = day_loss(lam.sum(axis=0), int(caps[0]), hold, period, start=n0, cyclic=cyclic,
                 method=method, steps_per_period=steps_per_period, quantile=quantile)
    D = len(network.demands)
    offered = lam * r.period_hours[None, :]
    blocking = np.tile(r.blocking, (D, 1))
    lost = offered * blocking
    tot = offered.sum(axis=1)
    peak = np.array([worst_period(blocking[i], offered[i]) for i in range(D)], dtype=np.int64)

    def row(a):
        return frozen(np.asarray(a, dtype=float)[None, :])

    return DayEvaluation(
        method="exact",
        demand_ids=network.demand_ids,
        link_ids=network.link_ids,
        capacity=frozen(caps, dtype=np.int64),
        rates=frozen(lam),
        period_hours=r.period_hours,
        offered=frozen(offered),
        lost=frozen(lost),
        blocking=frozen(blocking),
        peak_blocking=frozen(blocking[np.arange(D), peak]),
        peak_period=frozen(peak, dtype=np.int64),
        lost_fraction=frozen(np.divide(lost.sum(axis=1), tot, out=np.zeros(D), where=tot > 0)),
        link_blocking=row(r.blocking),
        times=r.times,
        offered_load=row(offered_load(lam.sum(axis=0), hold, r.period_hours, start=n0,
                                      cyclic=cyclic, steps_per_period=steps_per_period)),
        occupancy_mean=row(r.occupancy_mean),
        full_probability=row(r.full_probability),
        occupancy_quantile=frozen(r.occupancy_quantile[None, :], dtype=np.int64),
        quantile=r.quantile,
        peak_occupancy=frozen([r.peak_occupancy]),
        peak_time=frozen([r.peak_time]),
        cyclic=r.cyclic,
        days=0,
        residual=r.residual,
    )
