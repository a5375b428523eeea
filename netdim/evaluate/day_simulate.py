"""Simulation of a network over a day of varying demand, with confidence intervals.

The check of the day methods (:mod:`netdim.transient`, :mod:`netdim.daily_loads`) on any
network: each demand's arrivals are a non-homogeneous Poisson process with the rate of the
current period, drawn by thinning [1]_: candidates of a homogeneous process at the largest
rate are kept with probability ``lambda(t) / lambda_max``. A call tries its routes in order
(fixed routing: the first only; alternate routing: a later route only while each of its links
keeps more than the reservation free, as everywhere in netdim) and holds each link of its
route for an exponential time (one draw per group of steps with the same mean, as the
busy-hour simulation does).

Days are the batches: an empty or given start runs independent days; a cyclic day runs one
long chain, warmed up for about eight holding times, whose consecutive days are the batches
(nearly independent when the day is long against the holding times). Per demand and period
the blocking is lost over offered calls; its interval is the union of the batch-means
Student-t interval over days and the Clopper-Pearson interval of the counts
(:mod:`netdim.evaluate.intervals`). The worst period is the one the point estimates pick,
with that period's interval (the largest of the estimates is biased upward).

References
----------
.. [1] P. A. W. Lewis and G. S. Shedler, "Simulation of nonhomogeneous Poisson processes by
   thinning", Naval Research Logistics Quarterly 26 (1979) 403-413.
.. [2] A. M. Law and W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed., McGraw-Hill
   (2000), ch. 9 (replications and batch means).
"""

from __future__ import annotations

import heapq
import math
from dataclasses import dataclass

import numpy as np

from netdim._arrays import frozen
from netdim.day_profile import (
    day_grid,
    link_day_records,
    offered_load,
    period_lengths,
    worst_period,
)
from netdim.errors import ModelTooLargeError
from netdim.evaluate.intervals import batch_means, blocking_interval

__all__ = ["DaySimulation", "simulate_day", "MAX_DAY_ARRIVALS", "DEFAULT_CALLS"]

#: Most arrivals simulated in one run (the loop is plain Python: about a second per 10^5).
MAX_DAY_ARRIVALS = 20_000_000
#: Arrivals simulated when neither ``calls`` nor ``days`` is given.
DEFAULT_CALLS = 200_000
_MIN_DAYS = 20


@dataclass(frozen=True)
class DaySimulation:
    """Simulated day: the figures of :class:`netdim.daily_loads.DayEvaluation` with intervals.

    Attributes
    ----------
    demand_ids, link_ids : tuple of str
    capacity : ndarray of int, shape (L,)
    period_hours : ndarray, shape (P,)
    offered, lost : ndarray, shape (D, P)
        Calls offered and lost per day (means over the days simulated).
    blocking, blocking_interval : ndarray, shape (D, P) and (D, P, 2)
    peak_blocking, peak_period, peak_blocking_interval : per demand
    lost_fraction, lost_fraction_interval : per demand
    link_blocking : ndarray, shape (L, P)
        Share of the first-choice calls over the link that found it full.
    times : ndarray, shape (G,)
    offered_load : ndarray, shape (L, G)
        First-choice offered erlangs (the infinite-server mean, closed form).
    occupancy_mean, occupancy_quantile : ndarray, shape (L, G)
        Mean and ``quantile`` point of busy units over the days, at the grid times.
    peak_occupancy, peak_time : ndarray, shape (L,)
    quantile, confidence : float
    days, seed, arrivals : int
        Days counted, the seed, and the calls that arrived in them.
    cyclic : bool
    """

    demand_ids: tuple
    link_ids: tuple
    capacity: np.ndarray
    period_hours: np.ndarray
    offered: np.ndarray
    lost: np.ndarray
    blocking: np.ndarray
    blocking_interval: np.ndarray
    peak_blocking: np.ndarray
    peak_period: np.ndarray
    peak_blocking_interval: np.ndarray
    lost_fraction: np.ndarray
    lost_fraction_interval: np.ndarray
    link_blocking: np.ndarray
    times: np.ndarray
    offered_load: np.ndarray
    occupancy_mean: np.ndarray
    occupancy_quantile: np.ndarray
    peak_occupancy: np.ndarray
    peak_time: np.ndarray
    quantile: float
    confidence: float
    days: int
    seed: int
    arrivals: int
    cyclic: bool

    def to_dict(self) -> dict:
        """Plain-Python figures for JSON, as :meth:`DayEvaluation.to_dict` plus intervals."""
        demands = [
            {
                "id": d,
                "peak_blocking": float(self.peak_blocking[i]),
                "peak_period": int(self.peak_period[i]),
                "peak_blocking_interval": self.peak_blocking_interval[i].tolist(),
                "lost_fraction": float(self.lost_fraction[i]),
                "lost_fraction_interval": self.lost_fraction_interval[i].tolist(),
                "blocking_by_period": self.blocking[i].tolist(),
                "blocking_by_period_interval": self.blocking_interval[i].tolist(),
                "offered_by_period": self.offered[i].tolist(),
            }
            for i, d in enumerate(self.demand_ids)
        ]
        links = link_day_records(self)
        return {"method": "simulate", "cyclic": self.cyclic, "days": self.days,
                "seed": self.seed, "arrivals": self.arrivals, "confidence": self.confidence,
                "period_hours": self.period_hours.tolist(), "times": self.times.tolist(),
                "demands": demands, "links": links}


def _routes(network, caps):
    """Per demand its tried routes: (links, reservation-free limits, hold groups)."""
    alternate = network.routing.policy == "alternate"
    res = network.reservations() if alternate else np.zeros(len(caps), dtype=np.int64)
    out = []
    for d in network.demands:
        if d.bandwidth != 1:
            raise ValueError(f"demand '{d.id}': bandwidth {d.bandwidth}: the day simulation "
                             "takes single-rate demands only")
        tried = []
        for k, r in enumerate(d.routes if alternate else d.routes[:1]):
            limit = [int(caps[j]) - (int(res[j]) if k > 0 else 0) for j in r.links]
            groups = {}
            for j, h in zip(r.links, r.holdings, strict=True):
                groups.setdefault(float(h), []).append(j)
            tried.append((tuple(r.links), tuple(limit),
                          tuple((h, tuple(js)) for h, js in groups.items())))
        out.append(tuple(tried))
    return out


def simulate_day(network, rates, capacities, *, period=1.0, start=None, cyclic=False,
                 seed=None, calls=None, days=None, confidence=0.95, steps_per_period=4,
                 quantile=0.95, progress=None) -> DaySimulation:
    """Simulate the network over many days of the profile.

    Parameters
    ----------
    network : Network
    rates : array_like, shape (D, P)
        Arrivals per hour of each demand in each period.
    capacities : array_like of int, shape (L,)
    period, start, cyclic, steps_per_period, quantile
        As :func:`netdim.daily_loads.day_reduced_load` (``start`` whole calls per demand).
    seed : int, optional
        Random seed (drawn and reported when None).
    calls, days : int, optional
        Expected arrivals to simulate, or days to count (default :data:`DEFAULT_CALLS`
        arrivals, at least 20 days).
    confidence : float
    progress : callable, optional
        ``progress(fraction, message)`` once per day.

    Returns
    -------
    DaySimulation

    Raises
    ------
    ValueError
        Bad rates, capacities, start, counts or confidence; multi-rate demands.
    ModelTooLargeError
        More than :data:`MAX_DAY_ARRIVALS` expected arrivals.
    """
    lam = np.asarray(rates, dtype=float)
    D, L = len(network.demands), len(network.links)
    if lam.ndim != 2 or lam.shape[0] != D or lam.shape[1] == 0 or not np.all(
            np.isfinite(lam) & (lam >= 0)):
        raise ValueError(f"rates: expected {D} demands x periods of finite rates >= 0")
    caps = np.asarray(capacities, dtype=np.int64)
    if caps.shape != (L,) or np.any(caps < 0):
        raise ValueError(f"capacities: expected {L} whole numbers >= 0")
    n_p = lam.shape[1]
    hours = period_lengths(period, n_p)
    if not (isinstance(confidence, float) and 0 < confidence < 1):
        raise ValueError(f"confidence: must lie in (0, 1), got {confidence!r}")
    s0 = np.zeros(D, dtype=np.int64) if start is None else np.asarray(start)
    if s0.shape != (D,) or np.any(s0 < 0) or np.any(s0 != np.round(s0)):
        raise ValueError("start: expected a whole number >= 0 of calls per demand")
    routes = _routes(network, caps)
    per_day = float((lam * hours).sum())
    for name, v in (("calls", calls), ("days", days)):
        if v is not None and (isinstance(v, bool) or not isinstance(v, int) or v < 1):
            raise ValueError(f"{name}: must be a whole number >= 1, got {v!r}")
    if days is None:
        target = DEFAULT_CALLS if calls is None else calls
        days = max(_MIN_DAYS, math.ceil(target / per_day) if per_day > 0 else _MIN_DAYS)
    t_day = float(hours.sum())
    h_max = max((h for d in network.demands for r in d.routes for h in r.holdings),
                default=1.0)
    warm = math.ceil(8.0 * h_max / t_day) if cyclic else 0
    if per_day * (days + warm) > MAX_DAY_ARRIVALS:
        raise ModelTooLargeError(
            f"simulation: {per_day * (days + warm):.3g} expected arrivals over {days + warm} "
            f"days is over the limit of {MAX_DAY_ARRIVALS:g}; ask for fewer calls or days")
    if seed is None:
        seed = int(np.random.SeedSequence().entropy % (2**63))
    rng = np.random.default_rng(seed)
    times = day_grid(hours, steps_per_period)
    edges = np.concatenate([[0.0], np.cumsum(hours)])

    offered = np.zeros((days, D, n_p))
    lost = np.zeros((days, D, n_p))
    link_try = np.zeros((L, n_p))
    link_full = np.zeros((L, n_p))
    occ = np.zeros((days, len(times), L), dtype=np.int64)
    busy = [0] * L
    heap, seq = [], 0
    lam_max = lam.max(axis=1)
    total_max = float(lam_max.sum())

    def depart_until(t):
        while heap and heap[0][0] <= t:
            _, _, js = heapq.heappop(heap)
            for j in js:
                busy[j] -= 1

    def admit(t, tried):
        nonlocal seq
        for links, limit, groups in tried:
            if all(busy[j] < c for j, c in zip(links, limit, strict=True)):
                for j in links:
                    busy[j] += 1
                for h, js in groups:
                    heapq.heappush(heap, (t + h * rng.exponential(), seq, js))
                    seq += 1
                return True
        return False

    for d in range(D):  # calls in progress at the start of the first day
        for _ in range(int(s0[d]) if not cyclic else 0):
            if routes[d] and not admit(0.0, routes[d][:1]):
                raise ValueError(f"start: demand '{network.demands[d].id}': more calls in "
                                 "progress than its first route holds")
    arrivals = 0
    for day in range(warm + days):
        count = day - warm
        if not cyclic and day > 0:  # independent days, each from the start
            heap.clear()
            busy[:] = [0] * L
            for d in range(D):
                for _ in range(int(s0[d])):
                    admit(0.0, routes[d][:1])
        n_cand = rng.poisson(total_max * t_day) if total_max > 0 else 0
        cand_t = np.sort(rng.uniform(0.0, t_day, n_cand))
        cand_d = rng.choice(D, size=n_cand, p=lam_max / total_max) if n_cand else (
            np.zeros(0, dtype=np.int64))
        cand_p = np.minimum(np.searchsorted(edges, cand_t, side="right") - 1, n_p - 1)
        keep = rng.uniform(size=n_cand) * lam_max[cand_d] < lam[cand_d, cand_p]
        g = 0
        base = day * t_day if cyclic else 0.0
        for t, d, p in zip(cand_t[keep], cand_d[keep], cand_p[keep], strict=True):
            while g < len(times) and times[g] <= t:
                depart_until(base + times[g])
                if count >= 0:
                    occ[count, g] = busy
                g += 1
            depart_until(base + t)
            if count >= 0:
                arrivals += 1
                offered[count, d, p] += 1
                for j in routes[d][0][0] if routes[d] else ():
                    link_try[j, p] += 1
                    link_full[j, p] += busy[j] >= caps[j]
            if not (routes[d] and admit(base + t, routes[d])) and count >= 0:
                lost[count, d, p] += 1
        while g < len(times):
            depart_until(base + times[g])
            if count >= 0:
                occ[count, g] = busy
            g += 1
        if progress is not None:
            progress((day + 1) / (warm + days), f"simulated day {day + 1} of {warm + days}")

    flat_off = offered.reshape(days, -1)
    flat_lost = lost.reshape(days, -1)
    est, half = batch_means(flat_lost, flat_off, confidence)
    iv = blocking_interval(est, half, flat_lost.sum(0), flat_off.sum(0), confidence)
    blocking = est.reshape(D, n_p)
    b_iv = iv.reshape(D, n_p, 2)
    day_off, day_lost = offered.sum(axis=2), lost.sum(axis=2)
    lf, lf_half = batch_means(day_lost, day_off, confidence)
    lf_iv = blocking_interval(lf, lf_half, day_lost.sum(0), day_off.sum(0), confidence)
    expected = lam * hours[None, :]
    peak = np.array([worst_period(blocking[i], expected[i]) for i in range(D)], dtype=np.int64)
    mean_occ = occ.mean(axis=0).T
    q_occ = np.quantile(occ, quantile, axis=0, method="inverted_cdf").T.astype(np.int64)
    ipk = np.argmax(mean_occ, axis=1) if mean_occ.size else np.zeros(L, dtype=np.int64)
    load = np.zeros((L, len(times)))
    for d, dem in enumerate(network.demands):
        if dem.routes:
            r = dem.routes[0]
            for j, h in zip(r.links, r.holdings, strict=True):
                load[j] += offered_load(lam[d], h, hours, start=float(s0[d]), cyclic=cyclic,
                                        steps_per_period=steps_per_period)
    rows = np.arange(D)
    return DaySimulation(
        demand_ids=network.demand_ids, link_ids=network.link_ids,
        capacity=frozen(caps, dtype=np.int64), period_hours=frozen(hours),
        offered=frozen(offered.mean(axis=0)), lost=frozen(lost.mean(axis=0)),
        blocking=frozen(blocking), blocking_interval=frozen(b_iv),
        peak_blocking=frozen(blocking[rows, peak]), peak_period=frozen(peak, dtype=np.int64),
        peak_blocking_interval=frozen(b_iv[rows, peak]),
        lost_fraction=frozen(lf), lost_fraction_interval=frozen(lf_iv),
        link_blocking=frozen(np.divide(link_full, link_try, out=np.zeros_like(link_full),
                                       where=link_try > 0)),
        times=frozen(times), offered_load=frozen(load),
        occupancy_mean=frozen(mean_occ), occupancy_quantile=frozen(q_occ, dtype=np.int64),
        peak_occupancy=frozen(mean_occ[np.arange(L), ipk]), peak_time=frozen(times[ipk]),
        quantile=float(quantile), confidence=float(confidence), days=int(days),
        seed=int(seed), arrivals=int(arrivals), cyclic=bool(cyclic),
    )
