"""Event-driven simulation of a loss network, with confidence intervals.

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

The event loop is compiled with numba (:mod:`netdim.evaluate._simkernel`), imported on the
first simulation only: numba takes about a second to import, which no other command should
pay. The first run in a fresh install also spends a few seconds compiling (cached on disk).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from netdim.errors import ModelTooLargeError
from netdim.evaluate._network import memo, resolve_capacities, route_groups
from netdim.evaluate.intervals import batch_means, blocking_interval
from netdim.evaluate.result import Evaluation
from netdim.vocabulary import EvaluationStatus

__all__ = ["simulate", "SimulationOptions", "HOLDING_LAWS", "OPTIONS", "MAX_ARRIVALS"]

#: Holding-time laws understood by :func:`simulate` (codes as in the kernel).
HOLDING_LAWS = ("exponential", "deterministic", "lognormal")
_LAW_CODE = {"exponential": 0, "deterministic": 1, "lognormal": 2}
#: Arrivals simulated when neither ``calls`` nor ``precision`` is given.
DEFAULT_CALLS = 1_000_000
#: Arrivals of the first stage of a ``precision`` run (when ``calls`` is not given).
PRECISION_START = 200_000
#: Largest run a ``precision`` request may grow to (arrivals after warm-up).
DEFAULT_MAX_CALLS = 50_000_000
#: Blocking below this floor is judged against the floor in ``precision`` runs.
PRECISION_FLOOR = 1e-4
#: Most arrivals (warm-up and run) a simulation will start on: about half an hour at the
#: kernel's 5e5 arrivals a second.
MAX_ARRIVALS = 1_000_000_000
_CHUNK = 1 << 16


@dataclass(frozen=True)
class SimulationOptions:
    """The options of one simulation, checked once (see :func:`simulate` for each).

    Raises
    ------
    ValueError
        An option out of range, or ``cv`` with a law other than ``'lognormal'``.
    """

    seed: object = None
    calls: int | None = None
    precision: float | None = None
    holding_law: str = "exponential"
    cv: float | None = None
    confidence: float = 0.95
    warmup: int | None = None
    batches: int = 20
    max_calls: int | None = None

    def __post_init__(self):
        if self.holding_law not in HOLDING_LAWS:
            raise ValueError(f"holding_law: unknown law {self.holding_law!r}; choose one of "
                             f"{', '.join(HOLDING_LAWS)}")
        cv = self.cv
        if cv is not None:
            if self.holding_law != "lognormal":
                raise ValueError(f"cv: applies to holding_law 'lognormal' only, not "
                                 f"{self.holding_law!r} (whose coefficient of variation is "
                                 "fixed)")
            if not (isinstance(cv, (int, float)) and not isinstance(cv, bool)
                    and math.isfinite(cv) and cv > 0):
                raise ValueError(f"cv: the coefficient of variation must be > 0, got {cv!r}")
        for name in ("calls", "max_calls"):
            v = getattr(self, name)
            if v is not None and (not isinstance(v, (int, np.integer)) or isinstance(v, bool)
                                  or v <= 0):
                raise ValueError(f"{name}: must be a positive integer, got {v!r}")
        p = self.precision
        if p is not None and not (isinstance(p, (int, float)) and 0 < p < 1):
            raise ValueError(f"precision: must lie in (0, 1) (relative half-width), got {p!r}")
        c = self.confidence
        if not (isinstance(c, (int, float)) and 0 < c < 1):
            raise ValueError(f"confidence: must lie in (0, 1), got {c!r}")
        w = self.warmup
        if w is not None and (not isinstance(w, (int, np.integer)) or isinstance(w, bool)
                              or w < 0):
            raise ValueError(f"warmup: must be an integer >= 0 (arrivals), got {w!r}")
        b = self.batches
        if not isinstance(b, (int, np.integer)) or isinstance(b, bool) or b < 2:
            raise ValueError(f"batches: must be an integer >= 2, got {b!r}")

    def as_kwargs(self) -> dict:
        """The options as keyword arguments of :func:`simulate`."""
        return asdict(self)


#: Keyword options of :func:`simulate` (the command line takes its checks from here).
OPTIONS = tuple(SimulationOptions.__dataclass_fields__) + ("progress",)


class _Structure:
    """The network as flat arrays for the kernel (capacity-free; memoised on the network)."""

    def __init__(self, network):
        self.n_demands = len(network.demands)
        self.n_links = len(network.links)
        d_rptr, r_lptr, r_links, r_w, r_gptr = [0], [0], [], [], [0]
        g_hold, g_lptr, g_links, g_bw = [], [0], [], []
        rates, self.route_demand = [], []
        max_groups = 1
        for d_idx, d in enumerate(network.demands):
            rate = d.rate
            if not (math.isfinite(d.traffic) and d.traffic >= 0 and math.isfinite(d.holding)
                    and d.holding > 0 and math.isfinite(rate)):
                raise ValueError(f"demand '{d.id}': traffic {d.traffic!r} and holding "
                                 f"{d.holding!r} must be finite, traffic >= 0, holding > 0")
            rates.append(rate)
            for route in d.routes:
                if not all(math.isfinite(h) and h > 0 for h in route.holdings):
                    raise ValueError(f"demand '{d.id}': route holding times must be finite "
                                     f"and > 0, got {list(route.holdings)}")
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
        self.n_routes = n_routes = len(r_lptr) - 1
        # route of every step: carried load per link = sum over steps of (admitted calls of
        # the route per hour) x bandwidth x mean holding (a dense routes x links matrix
        # would take gigabytes on a large mesh)
        self.step_route = np.repeat(np.arange(n_routes), np.diff(self.r_lptr))
        self.max_holding = float(self.g_hold.max()) if len(g_hold) else 1.0
        self.min_holding = float(self.g_hold.min()) if len(g_hold) else 1.0
        # calls in progress, on average, at most the offered traffic: each holds up to
        # max_groups heap entries (the heap starts there and grows on demand)
        self.busy_groups = float(sum(d.traffic for d in network.demands)) * max_groups


def _initial_heap(s: _Structure, bound: int) -> int:
    """Departure-heap entries to start with: room for 4 times the mean calls in progress."""
    return int(min(bound, 4 * s.busy_groups + 64 * s.max_groups + 1024))


class _State:
    """What changes while simulating: free units, the departure heap, the clock."""

    def __init__(self, s: _Structure, caps):
        self.caps = np.asarray(caps, dtype=np.int64)
        self.free = self.caps.copy()
        # Entries never exceed the units in the network (each holds one or more units).
        self.heap_bound = int(min(float(self.caps.sum(dtype=float)), 2.0**40)) + s.max_groups + 1
        size = _initial_heap(s, self.heap_bound)
        self.ht = np.zeros(size)
        self.hs = np.zeros(size, dtype=np.int64)
        self.hg = np.zeros(size, dtype=np.int64)
        self.state = np.zeros(2, dtype=np.int64)
        self.t = 0.0

    def grow(self):
        size = min(2 * len(self.ht), self.heap_bound)
        if size <= len(self.ht):
            raise AssertionError("simulate: the departure heap cannot grow past its bound")
        for name in ("ht", "hs", "hg"):
            old = getattr(self, name)
            new = np.zeros(size, dtype=old.dtype)
            new[:len(old)] = old
            setattr(self, name, new)


class _Counters:
    def __init__(self, s: _Structure):
        self.arrivals = np.zeros(s.n_demands, dtype=np.int64)
        self.blocked = np.zeros(s.n_demands, dtype=np.int64)
        self.admitted = np.zeros(s.n_routes, dtype=np.int64)
        self.fc_att = np.zeros(s.n_links)
        self.fc_att2 = np.zeros(s.n_links)
        self.fc_blk = np.zeros(s.n_links)
        self.alt_att = np.zeros(s.n_links)
        self.alt_blk = np.zeros(s.n_links)
        self.offered = np.zeros(s.n_links)
        self.hours = 0.0


def _run(kern, s: _Structure, st: _State, c: _Counters, n_calls: int, rng, law: int,
         sigma: float):
    """Simulate ``n_calls`` arrivals, in chunks of pre-drawn random numbers."""
    left = n_calls
    t_start = st.t
    while left > 0:
        k = min(left, _CHUNK)
        gaps = rng.standard_exponential(k) / s.total_rate
        dem = np.searchsorted(s.cdf, rng.random(k) * s.total_rate, side="right")
        np.minimum(dem, s.n_demands - 1, out=dem)
        if law == _LAW_CODE["exponential"]:
            draws = rng.standard_exponential((k, s.max_groups))
        elif law == _LAW_CODE["lognormal"]:
            draws = rng.standard_normal((k, s.max_groups))
        else:
            draws = np.zeros((k, 1))
        i = 0
        while i < k:
            st.t, done = kern.run_chunk(
                st.t, gaps[i:], dem[i:], draws[i:], law, sigma, s.max_groups,
                s.d_bw, s.d_rptr, s.n_try, s.r_lptr, s.r_links, s.r_w, s.r_gptr, s.g_hold,
                s.g_lptr, s.g_links, s.g_bw, s.res,
                st.free, st.ht, st.hs, st.hg, st.state,
                c.arrivals, c.blocked, c.admitted, c.fc_att, c.fc_att2, c.fc_blk, c.alt_att,
                c.alt_blk, c.offered,
            )
            i += int(done)
            if i < k:
                st.grow()
        left -= k
    c.hours += st.t - t_start


def _work_check(s: _Structure, warmup, run_calls):
    """Refuse, before anything runs, a simulation whose arrivals are out of reach.

    The warm-up must cover 5 of the longest mean holding times at the total arrival rate:
    with demands whose holding times span many orders of magnitude (1e-15 h beside 1 h)
    that is astronomically many arrivals of the fast ones.
    """
    total = warmup + run_calls
    if total <= MAX_ARRIVALS:
        return
    if warmup > run_calls:
        why = (f"a warm-up of {warmup:.3g}: 5 mean holding times of {s.max_holding:.3g} h at "
               f"{s.total_rate:.3g} calls per hour in all, the shortest mean holding being "
               f"{s.min_holding:.3g} h")
        way = ("use method 'fixed-point' or 'exact', or simulate the fast and slow demands as "
               "separate networks")
    else:
        why = f"{run_calls:.3g} calls after a warm-up of {warmup:.3g}"
        way = "ask for fewer calls (or a smaller max_calls), or use method 'fixed-point'"
    raise ModelTooLargeError(
        f"simulate: the run needs about {total:.3g} arrivals ({why}), more than the limit "
        f"{MAX_ARRIVALS:.0e}; {way}"
    )


def _seed(seed):
    """The seed to report, and the generator. With no seed, one is drawn (so that the run
    can be repeated)."""
    if seed is None:
        seed = int(np.random.SeedSequence().entropy % (1 << 32))
    if isinstance(seed, (int, np.integer)) and not isinstance(seed, bool):
        return int(seed), np.random.default_rng(int(seed))
    return None, np.random.default_rng(seed)


def simulate(
    network,
    capacities=None,
    seed=None,
    calls: int | None = None,
    precision: float | None = None,
    holding_law: str = "exponential",
    cv: float | None = None,
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
        None: a seed is drawn and reported (``details['seed']``), so the run can be repeated.
    calls : int, optional
        Arrivals simulated after the warm-up (default 1,000,000; with ``precision``: the
        first stage, default 200,000).
    precision : float in (0, 1), optional
        Keep simulating, each stage as long as all before it, until every interval's larger
        half (estimate to either end) is at most ``precision`` times the estimate (estimates
        below ``PRECISION_FLOOR`` = 1e-4 are judged against the floor), or until
        ``max_calls`` arrivals (then a warning says so). A zero-width interval never
        counts as precise; demands that offer no traffic are left out of the test.
    holding_law : {'exponential', 'deterministic', 'lognormal'}
        Law of every holding time; its mean is the route step's holding time.
    cv : float > 0, optional
        Coefficient of variation of the lognormal law (default 1); refused with another law.
    confidence : float in (0, 1)
        Level of the intervals.
    warmup : int, optional
        Arrivals simulated and discarded first; default: enough for 5 of the longest mean
        holding times, at least 10% of the run and at least 1000.
    batches : int >= 2
        Number of batch means (a ``precision`` run adds batches of the same length).
    max_calls : int, optional
        Cap of a ``precision`` run (default 50,000,000).
    progress : callable(fraction, message), optional
        Called after each batch; ``fraction`` of the run done (of ``max_calls`` for a
        ``precision`` run).

    Returns
    -------
    Evaluation
        ``method='simulate'``, ``status='simulated'``; ``blocking_interval`` and
        ``link_blocking_interval`` at level ``confidence`` (see Notes); ``iterations`` =
        batches. Link figures in capacity units, each route step weighted by bandwidth x
        mean holding on the link: ``link_offered`` = attempts whose route has room on every
        *other* link, per hour; ``link_carried`` = admitted calls per hour x bandwidth x
        mean holding (the time-average occupancy, by Little's law); ``link_blocking`` =
        share of first-choice attempts finding fewer than ``bandwidth`` free units;
        ``link_blocking_alternate`` = share of alternate-route attempts that would leave less
        than the reservation. ``details``: ``calls``, ``warmup``, ``hours``, ``batches``,
        ``holding_law``, ``cv``, ``half_width`` (batch means), ``seed``, ``offered_calls``
        and ``blocked_calls`` (per demand).

    Raises
    ------
    ValueError
        Bad options (see :class:`SimulationOptions`), capacities, traffic or holding times.
    ModelTooLargeError
        More than ``MAX_ARRIVALS`` arrivals needed (warm-up and run), e.g. holding times
        spanning many orders of magnitude.

    Notes
    -----
    Each interval is the union of the batch-means interval [1]_ and the exact binomial
    (Clopper-Pearson) interval of the counts [2]_, so that a demand that saw no blocked call
    in ``n`` still gets an upper limit of about ``3.7 / n`` (see
    :mod:`netdim.evaluate.intervals`). Blocking is call congestion (blocked arrivals over
    arrivals); a demand no call of which arrived has the interval [0, 1].

    References
    ----------
    .. [1] A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed.,
       McGraw-Hill 2000, ch. 9.
    .. [2] C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26 (1934) 404-413.
    .. [3] B. A. Sevastyanov, "An ergodic theorem for Markov processes and its application
       to telephone systems with refusals", Theory Probab. Appl. 2 (1957) 104-112.
    """
    opts = SimulationOptions(seed=seed, calls=calls, precision=precision,
                             holding_law=holding_law, cv=cv, confidence=confidence,
                             warmup=warmup, batches=batches, max_calls=max_calls)
    caps = resolve_capacities(network, capacities)
    s = _structure(network)
    law = _LAW_CODE[opts.holding_law]
    cv_used = 1.0 if opts.cv is None else float(opts.cv)
    sigma = math.sqrt(math.log1p(cv_used * cv_used)) if opts.holding_law == "lognormal" else 0.0
    n_calls = int(opts.calls) if opts.calls is not None else (
        PRECISION_START if opts.precision is not None else DEFAULT_CALLS)
    cap = int(opts.max_calls) if opts.max_calls is not None else DEFAULT_MAX_CALLS
    warns = []
    if s.total_rate <= 0:
        warns.append("simulate: no demand offers traffic; nothing to simulate")
    if opts.warmup is None:
        slow = 5.0 * s.max_holding * s.total_rate
        need = max(1000.0, n_calls // 10, slow)
        warm = int(min(need, 2.0 * MAX_ARRIVALS))  # int(inf) would raise
    else:
        need = warm = int(opts.warmup)
    if s.total_rate > 0:
        _work_check(s, need, cap if opts.precision is not None else n_calls)
        covered = n_calls / s.total_rate
        if covered < SPAN_HOLDINGS * s.max_holding * opts.batches:
            # batches shorter than the longest holding are correlated: on one link, calls
            # of 0.05 h beside calls of 500 h, 4 of 12 intervals of 200,000-call runs held
            # the Erlang B value (docs/measurements/issues-12-19.md)
            warns.append(f"simulate: each of the {opts.batches} batches covers "
                         f"{covered / opts.batches:.3g} h, less than the longest mean holding "
                         f"time ({s.max_holding:.3g} h) x {SPAN_HOLDINGS}; the intervals are "
                         f"taken over groups of batches spanning that, so they are wide (with "
                         f"fewer than two groups, [0, 1]: unclear); simulate at least "
                         f"{math.ceil(SPAN_HOLDINGS * s.max_holding * opts.batches * s.total_rate)}"
                         f" calls")
    seed_used, rng = _seed(opts.seed)
    batch = max(1, n_calls // opts.batches)
    per_batch = []
    if s.total_rate > 0:
        # numba takes about a second to import: only a simulation pays for it
        from netdim.evaluate import _simkernel as kern

        st = _State(s, caps)
        _run(kern, s, st, _Counters(s), warm, rng, law, sigma)
    done = 0
    goal = batch * opts.batches
    judged = np.array([d.traffic > 0 for d in network.demands], dtype=bool)
    while s.total_rate > 0:
        while done < goal:
            c = _Counters(s)
            _run(kern, s, st, c, batch, rng, law, sigma)
            per_batch.append(c)
            done += batch
            if progress is not None:
                frac = done / goal if opts.precision is None else min(1.0, done / cap)
                progress(frac, f"simulated {done} of {goal} calls")
        if opts.precision is None:
            break
        est, iv = _demand_interval(per_batch, opts.confidence, s.max_holding)[:2]
        wide = np.maximum(iv[:, 1] - est, est - iv[:, 0])
        precise = (wide > 0) & (wide <= opts.precision * np.maximum(est, PRECISION_FLOOR))
        if np.all(precise | ~judged):
            break
        if done >= cap:
            warns.append(
                f"simulate: stopped at the cap of {cap} calls before every interval was "
                f"within {opts.precision:g} relative"
            )
            break
        goal = min(cap, 2 * done)
        goal = max(goal, done + batch)
    return _result(network, caps, s, per_batch, opts, warns, warm, cv_used, seed_used)


def _structure(network) -> _Structure:
    return memo(network, "evaluate.sim_structure", _Structure)


#: A batch (or group of batches) must cover this many of the longest mean holding times.
SPAN_HOLDINGS = 5


def _groups(per_batch, span):
    """Consecutive batches joined until each covers ``SPAN_HOLDINGS`` x ``span`` hours.

    Batches shorter than the longest mean holding time are correlated (a call held for
    hours spans many of them), and batch means over them give intervals that are too
    narrow: one link, calls of 0.05 h beside calls of 500 h, 200,000 calls in 20 batches,
    held the Erlang B value in 4 of 12 seeded intervals (docs/measurements/issues-12-19.md).
    Groups of five longest holding times are the batches then (Law and Kelton, cited by
    :func:`~netdim.evaluate.intervals.batch_means`: batches long against the correlation
    time); fewer than two groups leave nothing to judge by, and the interval is [0, 1]. In
    that example, 2,000,000 calls (33,333 h): the groups' intervals held 0.0431 in 9 of 12
    seeds, against 5 of 8 for the 20 batches of 1,667 h each; 200,000 calls: [0, 1].
    """
    span = SPAN_HOLDINGS * span
    out, current, hours = [], [], 0.0
    for i, c in enumerate(per_batch):
        current.append(i)
        hours += c.hours
        if hours >= span:
            out.append(current)
            current, hours = [], 0.0
    if current:
        if out:
            out[-1].extend(current)  # the short tail joins the last whole group
        else:
            out.append(current)
    return out


def _stack(per_batch, field, groups):
    rows = np.array([getattr(c, field) for c in per_batch])
    return np.array([rows[g].sum(axis=0) for g in groups])


def _demand_interval(per_batch, conf, span=0.0):
    groups = _groups(per_batch, span)
    arrivals = _stack(per_batch, "arrivals", groups)
    blocked = _stack(per_batch, "blocked", groups)
    est, half = batch_means(blocked, arrivals, conf)
    iv = blocking_interval(est, half, blocked.sum(axis=0), arrivals.sum(axis=0), conf)
    return est, iv, half, arrivals.sum(axis=0), blocked.sum(axis=0)


def _result(network, caps, s, per_batch, opts, warns, warmup, cv, seed) -> Evaluation:
    n_d, n_l = s.n_demands, s.n_links
    conf = opts.confidence
    if per_batch:
        est, iv, half, n_arr, n_blk = _demand_interval(per_batch, conf, s.max_holding)
        groups = _groups(per_batch, s.max_holding)
        fc_att = _stack(per_batch, "fc_att", groups)
        lb, lhalf = batch_means(_stack(per_batch, "fc_blk", groups), fc_att, conf)
        tot = fc_att.sum(axis=0)
        sq = sum(c.fc_att2 for c in per_batch)
        # Kish's effective number of attempts per link: weights are bandwidth x holding
        n_eff = np.divide(tot * tot, sq, out=np.zeros(n_l), where=sq > 0)
        liv = blocking_interval(lb, lhalf, lb * n_eff, n_eff, conf)
        la, _ = batch_means([c.alt_blk for c in per_batch], [c.alt_att for c in per_batch],
                            conf)
        hours = sum(c.hours for c in per_batch)
        admitted = sum(c.admitted for c in per_batch)
        offered = sum(c.offered for c in per_batch) / hours
        carried = np.bincount(s.r_links, weights=(admitted / hours)[s.step_route] * s.r_w,
                              minlength=n_l)
        calls = int(n_arr.sum())
    else:
        est, half = np.zeros(n_d), np.zeros(n_d)
        iv = np.column_stack([np.zeros(n_d), np.ones(n_d)])
        n_arr = n_blk = np.zeros(n_d, dtype=np.int64)
        lb, la = np.zeros(n_l), np.zeros(n_l)
        liv = np.column_stack([np.zeros(n_l), np.ones(n_l)])
        offered, carried, hours, calls = np.zeros(n_l), np.zeros(n_l), 0.0, 0
    if network.routing.policy == "fixed":
        la = lb
    # A demand that offers nothing loses nothing: its blocking is 0 by convention, as in
    # the loss formulas (no traffic needs no servers), not unknown.
    idle = np.array([d.traffic <= 0 for d in network.demands], dtype=bool)
    if idle.any():
        iv = np.array(iv, dtype=float)
        iv[idle] = 0.0
    seed_note = f", seed {seed}" if seed is not None else ""
    return Evaluation.from_link_state(
        network, caps,
        method="simulate",
        status=EvaluationStatus.SIMULATED,
        blocking=est,
        link_offered=offered,
        link_carried=carried,
        link_blocking=lb,
        link_blocking_alternate=la,
        iterations=len(per_batch),
        residual=0.0,
        message=(f"simulated {calls} calls in {len(per_batch)} batches ({opts.holding_law} "
                 f"holding times{seed_note})"),
        warnings=tuple(warns),
        blocking_interval=iv,
        link_blocking_interval=liv,
        confidence=float(conf),
        details={
            "calls": calls,
            "warmup": warmup,
            "hours": float(hours),
            "batches": len(per_batch),
            "holding_law": opts.holding_law,
            "cv": float(cv),
            "half_width": [float(h) for h in half],
            "seed": seed,
            "offered_calls": [int(v) for v in n_arr],
            "blocked_calls": [int(v) for v in n_blk],
        },
    )
