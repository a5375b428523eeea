"""Event-driven simulation of a loss network, with confidence intervals by batch means.

Same semantics as every other evaluator (see :mod:`netdim.model`): Poisson arrivals per
demand; a call of demand d on route r holds ``d.bandwidth`` units on every link of r, all
seized at arrival; links of a route with the same mean holding time are released together
and links with different means independently, each after its own holding time; ``fixed``
routing tries the first route only, ``alternate`` tries the routes in order, the first route
admitting when every link has ``free >= bandwidth``, a later one only when every link keeps
``free - bandwidth >= reservation``.

The holding-time law is a choice (exponential, deterministic, lognormal of a given
coefficient of variation, all with the route's mean), so that one can see where the blocking
depends on it: under fixed routing it does not (insensitivity of the product form), under
alternate routing it may.

The event loop is compiled with numba (:mod:`netdim.evaluate._simkernel`); the first call in
a fresh install spends a few seconds compiling and caches the result on disk.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from netdim.evaluate import _simkernel as kern
from netdim.evaluate.exact import route_groups
from netdim.evaluate.result import Evaluation

__all__ = ["simulate", "HOLDING_LAWS"]

#: Holding-time laws understood by :func:`simulate`.
HOLDING_LAWS = ("exponential", "deterministic", "lognormal")
_LAW_CODE = {
    "exponential": kern.LAW_EXPONENTIAL,
    "deterministic": kern.LAW_DETERMINISTIC,
    "lognormal": kern.LAW_LOGNORMAL,
}
#: Arrivals simulated when neither ``calls`` nor ``precision`` is given.
DEFAULT_CALLS = 1_000_000
#: Arrivals of the first stage of a ``precision`` run (when ``calls`` is not given).
PRECISION_START = 200_000
#: Largest run a ``precision`` request may grow to (arrivals after warm-up).
DEFAULT_MAX_CALLS = 50_000_000
#: Blocking below this floor is judged against the floor in ``precision`` runs.
PRECISION_FLOOR = 1e-4
_CHUNK = 1 << 16


class _Structure:
    """The network as flat arrays for the kernel."""

    def __init__(self, network, caps):
        self.n_demands = len(network.demands)
        self.n_links = len(network.links)
        d_rptr, r_lptr, r_links, r_w, r_gptr = [0], [0], [], [], [0]
        g_hold, g_lptr, g_links, g_bw = [], [0], [], []
        rates, self.route_demand = [], []
        max_groups = 1
        for d_idx, d in enumerate(network.demands):
            rates.append(d.rate)
            for route in d.routes:
                for j, h in zip(route.links, route.holdings, strict=True):
                    r_links.append(j)
                    r_w.append(d.bandwidth * h)
                r_lptr.append(len(r_links))
                groups = route_groups(route)
                max_groups = max(max_groups, len(groups))
                for h, links in groups:
                    g_hold.append(h)
                    g_links.extend(links)
                    g_lptr.append(len(g_links))
                    g_bw.append(d.bandwidth)
                r_gptr.append(len(g_hold))
                self.route_demand.append(d_idx)
            d_rptr.append(len(r_lptr) - 1)
        i64 = np.int64
        self.d_bw = np.array([d.bandwidth for d in network.demands], dtype=i64)
        self.d_rptr = np.array(d_rptr, dtype=i64)
        self.r_lptr = np.array(r_lptr, dtype=i64)
        self.r_links = np.array(r_links, dtype=i64)
        self.r_w = np.array(r_w, dtype=float)
        self.r_gptr = np.array(r_gptr, dtype=i64)
        self.g_hold = np.array(g_hold, dtype=float)
        self.g_lptr = np.array(g_lptr, dtype=i64)
        self.g_links = np.array(g_links, dtype=i64)
        self.g_bw = np.array(g_bw, dtype=i64)
        self.res = network.reservations().astype(i64)
        self.n_try = 1 if network.routing.policy == "fixed" else 1 << 30
        self.max_groups = max_groups
        self.rates = np.array(rates, dtype=float)
        self.total_rate = float(self.rates.sum())
        self.cdf = np.cumsum(self.rates)
        n_routes = len(r_lptr) - 1
        # carried load per admitted call and hour: routes x links, bandwidth x mean holding
        self.route_load = np.zeros((n_routes, self.n_links))
        for r in range(n_routes):
            for s in range(r_lptr[r], r_lptr[r + 1]):
                self.route_load[r, r_links[s]] += r_w[s]
        self.caps = np.asarray(caps, dtype=i64)
        heap = int(self.caps.sum()) + 1
        self.free = self.caps.copy()
        self.ht = np.zeros(heap)
        self.hs = np.zeros(heap, dtype=i64)
        self.hg = np.zeros(heap, dtype=i64)
        self.state = np.zeros(2, dtype=i64)
        self.t = 0.0
        self.max_holding = float(self.g_hold.max()) if len(g_hold) else 1.0
        self.n_routes = n_routes


class _Counters:
    def __init__(self, s: _Structure):
        self.arrivals = np.zeros(s.n_demands, dtype=np.int64)
        self.blocked = np.zeros(s.n_demands, dtype=np.int64)
        self.admitted = np.zeros(s.n_routes, dtype=np.int64)
        self.fc_att = np.zeros(s.n_links)
        self.fc_blk = np.zeros(s.n_links)
        self.alt_att = np.zeros(s.n_links)
        self.alt_blk = np.zeros(s.n_links)
        self.offered = np.zeros(s.n_links)
        self.hours = 0.0


def _run(s: _Structure, c: _Counters, n_calls: int, rng, law: int, sigma: float):
    """Simulate ``n_calls`` arrivals, in chunks of pre-drawn random numbers."""
    left = n_calls
    t_start = s.t
    while left > 0:
        k = min(left, _CHUNK)
        gaps = rng.standard_exponential(k) / s.total_rate
        dem = np.searchsorted(s.cdf, rng.random(k) * s.total_rate, side="right")
        np.minimum(dem, s.n_demands - 1, out=dem)
        if law == kern.LAW_EXPONENTIAL:
            draws = rng.standard_exponential((k, s.max_groups))
        elif law == kern.LAW_LOGNORMAL:
            draws = rng.standard_normal((k, s.max_groups))
        else:
            draws = np.zeros((1, 1))
        s.t = kern.run_chunk(
            s.t, gaps, dem, draws, law, sigma,
            s.d_bw, s.d_rptr, s.n_try, s.r_lptr, s.r_links, s.r_w, s.r_gptr, s.g_hold,
            s.g_lptr, s.g_links, s.g_bw, s.res,
            s.free, s.ht, s.hs, s.hg, s.state,
            c.arrivals, c.blocked, c.admitted, c.fc_att, c.fc_blk, c.alt_att, c.alt_blk,
            c.offered,
        )
        left -= k
    c.hours += s.t - t_start


def _check_options(holding_law, cv, calls, precision, confidence, warmup, batches, max_calls):
    if holding_law not in HOLDING_LAWS:
        raise ValueError(
            f"holding_law: unknown law {holding_law!r}; choose one of {', '.join(HOLDING_LAWS)}"
        )
    if not (isinstance(cv, (int, float)) and math.isfinite(cv) and cv > 0):
        raise ValueError(f"cv: the coefficient of variation must be > 0, got {cv!r}")
    for name, v in (("calls", calls), ("max_calls", max_calls)):
        if v is not None and (not isinstance(v, (int, np.integer)) or isinstance(v, bool)
                              or v <= 0):
            raise ValueError(f"{name}: must be a positive integer, got {v!r}")
    if precision is not None and not (
        isinstance(precision, (int, float)) and 0 < precision < 1
    ):
        raise ValueError(f"precision: must lie in (0, 1) (relative half-width), got {precision!r}")
    if not (isinstance(confidence, (int, float)) and 0 < confidence < 1):
        raise ValueError(f"confidence: must lie in (0, 1), got {confidence!r}")
    if warmup is not None and (not isinstance(warmup, (int, np.integer)) or warmup < 0):
        raise ValueError(f"warmup: must be an integer >= 0 (arrivals), got {warmup!r}")
    if not isinstance(batches, (int, np.integer)) or batches < 2:
        raise ValueError(f"batches: must be an integer >= 2, got {batches!r}")


def _interval(num, den, conf):
    """Ratio estimate and Student-t half-width from per-batch numerators and denominators."""
    num = np.asarray(num, dtype=float)
    den = np.asarray(den, dtype=float)
    tot_den = den.sum(axis=0)
    est = np.divide(num.sum(axis=0), tot_den, out=np.zeros(num.shape[1]), where=tot_den > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratios = np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)
    m = np.sum(np.isfinite(ratios), axis=0)
    half = np.zeros(num.shape[1])
    ok = m >= 2
    if ok.any():
        sd = np.nanstd(ratios[:, ok], axis=0, ddof=1)
        tq = stats.t.ppf(0.5 + conf / 2, m[ok] - 1)
        half[ok] = tq * sd / np.sqrt(m[ok])
    half[~ok & (tot_den > 0)] = 1.0  # too few batches to judge: no interval
    return est, half


def simulate(
    network,
    capacities=None,
    seed=None,
    calls: int | None = None,
    precision: float | None = None,
    holding_law: str = "exponential",
    cv: float = 1.0,
    confidence: float = 0.95,
    warmup: int | None = None,
    batches: int = 20,
    max_calls: int | None = None,
    progress=None,
) -> Evaluation:
    """Blocking of every demand by event-driven simulation, with confidence intervals.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link; default: the network's capacities.
    seed : int, numpy.random.Generator or None
        Normalised once with :func:`numpy.random.default_rng`; equal seeds give equal runs.
    calls : int, optional
        Arrivals simulated after the warm-up (default 1,000,000; with ``precision``: the
        first stage, default 200,000).
    precision : float in (0, 1), optional
        Keep simulating, each stage as long as all before it, until every demand's interval
        half-width is at most ``precision`` times its blocking estimate (estimates below
        ``PRECISION_FLOOR`` = 1e-4 are judged against the floor, so that rare blocking does
        not demand an endless run), or until ``max_calls`` arrivals (then a warning says so).
    holding_law : {'exponential', 'deterministic', 'lognormal'}
        Law of every holding time; its mean is the route step's holding time.
    cv : float > 0
        Coefficient of variation of the lognormal law (ignored by the others).
    confidence : float in (0, 1)
        Level of the intervals.
    warmup : int, optional
        Arrivals simulated and discarded first; default: enough for 5 of the longest mean
        holding times, at least 10% of the run and at least 1000.
    batches : int >= 2
        Number of batch means (the run is cut into this many batches of equal arrivals;
        a ``precision`` run adds batches of the same length).
    max_calls : int, optional
        Cap of a ``precision`` run (default 50,000,000).
    progress : callable(fraction_done, message), optional
        Called after each batch (the command line writes it to stderr).

    Returns
    -------
    Evaluation
        ``method='simulate'``, ``status='simulated'``, with ``blocking_interval`` and
        ``link_blocking_interval`` at level ``confidence``; ``iterations`` = batches. Link
        figures in capacity units, each route step weighted by bandwidth x mean holding on
        the link: ``link_offered`` = attempts whose route has room on every *other* link (the
        reduced load of the fixed point), per hour; ``link_carried`` = admitted calls per
        hour x bandwidth x mean holding, which is the time-average occupancy by Little's
        law; ``link_blocking`` = share of first-choice attempts finding fewer than
        ``bandwidth`` free units; ``link_blocking_alternate`` = share of alternate-route
        attempts that would leave less than the reservation (``link_blocking`` under fixed
        routing). A link no attempt reached shows 0. ``details``: ``calls``, ``warmup``,
        ``hours``, ``batches``, ``holding_law``, ``cv``, ``half_width``.

    Raises
    ------
    ValueError
        Bad options (unknown holding law, cv <= 0, calls <= 0, precision outside (0, 1),
        ...) or bad capacities.

    Notes
    -----
    Batch means: after the warm-up the run is cut into consecutive batches; the estimate is
    the ratio of totals and the half-width ``t_{m-1} s / sqrt(m)`` from the ``m`` batch
    ratios (Law and Kelton, *Simulation Modeling and Analysis*, ch. 9). Blocking is call
    congestion (blocked arrivals over arrivals).

    References
    ----------
    A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed., McGraw-Hill 2000.
    B. A. Sevastyanov, "An ergodic theorem for Markov processes and its application to
    telephone systems with refusals", *Theory Probab. Appl.* 2 (1957) 104-112.
    """
    from netdim.evaluate import resolve_capacities

    _check_options(holding_law, cv, calls, precision, confidence, warmup, batches, max_calls)
    caps = resolve_capacities(network, capacities)
    rng = np.random.default_rng(seed)
    law = _LAW_CODE[holding_law]
    sigma = math.sqrt(math.log1p(cv * cv)) if law == kern.LAW_LOGNORMAL else 0.0
    s = _Structure(network, caps)
    n_calls = int(calls) if calls is not None else (
        PRECISION_START if precision is not None else DEFAULT_CALLS)
    cap = int(max_calls) if max_calls is not None else DEFAULT_MAX_CALLS
    warns = []
    if s.total_rate <= 0:
        warns.append("simulate: no demand offers traffic; nothing to simulate")
    if warmup is None:
        warmup = max(1000, n_calls // 10, int(5 * s.max_holding * s.total_rate))
    batch = max(1, n_calls // batches)
    per_batch = []
    if s.total_rate > 0:
        _run(s, _Counters(s), int(warmup), rng, law, sigma)
    done = 0
    goal = batch * batches
    while s.total_rate > 0:
        while done < goal:
            c = _Counters(s)
            _run(s, c, batch, rng, law, sigma)
            per_batch.append(c)
            done += batch
            if progress is not None:
                frac = done / goal if precision is None else min(1.0, done / cap)
                progress(frac, f"simulated {done} of {goal} calls")
        if precision is None:
            break
        est, half = _interval([c.blocked for c in per_batch], [c.arrivals for c in per_batch],
                              confidence)
        if np.all(half <= precision * np.maximum(est, PRECISION_FLOOR)):
            break
        if done >= cap:
            warns.append(
                f"simulate: stopped at the cap of {cap} calls before every interval was "
                f"within {precision:g} relative"
            )
            break
        goal = min(cap, 2 * done)
        goal = max(goal, done + batch)
    return _result(network, caps, s, per_batch, confidence, warns, int(warmup), holding_law, cv)


def _result(network, caps, s, per_batch, conf, warns, warmup, law, cv) -> Evaluation:
    n_d, n_l = s.n_demands, s.n_links
    if per_batch:
        est, half = _interval([c.blocked for c in per_batch], [c.arrivals for c in per_batch],
                              conf)
        lb, lhalf = _interval([c.fc_blk for c in per_batch], [c.fc_att for c in per_batch], conf)
        la, _ = _interval([c.alt_blk for c in per_batch], [c.alt_att for c in per_batch], conf)
        hours = sum(c.hours for c in per_batch)
        admitted = sum(c.admitted for c in per_batch)
        offered = sum(c.offered for c in per_batch) / hours
        carried = (admitted / hours) @ s.route_load
        calls = int(sum(int(c.arrivals.sum()) for c in per_batch))
    else:
        est, half = np.zeros(n_d), np.zeros(n_d)
        lb, lhalf, la = np.zeros(n_l), np.zeros(n_l), np.zeros(n_l)
        offered, carried, hours, calls = np.zeros(n_l), np.zeros(n_l), 0.0, 0
    if network.routing.policy == "fixed":
        la = lb
    lo = np.clip(est - half, 0.0, 1.0)
    hi = np.clip(est + half, 0.0, 1.0)
    llo = np.clip(lb - lhalf, 0.0, 1.0)
    lhi = np.clip(lb + lhalf, 0.0, 1.0)
    return Evaluation(
        method="simulate",
        demand_ids=network.demand_ids,
        offered=[d.traffic for d in network.demands],
        blocking=est,
        target=[d.target for d in network.demands],
        link_ids=network.link_ids,
        capacity=caps,
        link_offered=offered,
        link_carried=carried,
        link_blocking=lb,
        link_blocking_alternate=la,
        iterations=len(per_batch),
        residual=0.0,
        status="simulated",
        message=f"simulated {calls} calls in {len(per_batch)} batches ({law} holding times)",
        warnings=tuple(warns),
        blocking_interval=np.column_stack([lo, hi]),
        link_blocking_interval=np.column_stack([llo, lhi]),
        confidence=float(conf),
        details={
            "calls": calls,
            "warmup": warmup,
            "hours": float(hours),
            "batches": len(per_batch),
            "holding_law": law,
            "cv": float(cv),
            "half_width": [float(h) for h in half],
        },
    )
