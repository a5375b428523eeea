"""One loss resource over a day: exact transient blocking under a time-varying arrival rate.

A resource of ``n`` units (circuits, parking spaces, seats) is offered Poisson arrivals at a
rate that is constant within each period of the day and changes from period to period; each
call holds one unit for an exponential time of mean ``h`` hours and is lost if every unit is
busy. The number of busy units is a birth-death chain on ``0..n``; its distribution over the
day solves the Kolmogorov forward equations ``p'(t) = p(t) Q(t)``, with ``Q`` constant within
a period. Nothing here knows of networks; :mod:`netdim.daily_loads` approximates networks.

Two independent solvers (in :mod:`netdim._transient_solvers`) give the same figures, to
1e-9 or better in the tests:

* ``'uniformization'`` (default): per period ``p(t) = sum_k Pois(k; L t) p P^k`` with
  ``P = I + Q / L`` and ``L`` the largest exit rate; the time spent full comes from the
  same series with the Poisson tail probabilities as weights. Every term is non-negative,
  so the result keeps full accuracy; the loop is compiled (numba).
* ``'ode'``: :func:`scipy.integrate.solve_ivp` (DOP853, tolerance 1e-12) on the forward
  equations with the time spent full as one more state.

References
----------
A. Jensen, "Markoff chains as an aid in the study of Markoff processes", Skandinavisk
Aktuarietidskrift 36 (1953) 87-91 (uniformization).
W. K. Grassmann, "Transient solutions in Markovian queueing systems", Computers &
Operations Research 4 (1977) 47-53 (uniformization for queues, cumulative measures).
W. Feller, An Introduction to Probability Theory and its Applications, vol. 1, 3rd ed.,
Wiley (1968), ch. XVII (birth-death processes, Kolmogorov forward equations).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim._arrays import frozen
from netdim._transient_solvers import cyclic_start, run_day
from netdim.day_profile import (
    TARGET_BASES,
    check_holding,
    check_rates,
    day_grid,
    offered_load,
    period_lengths,
    worst_period,
)
from netdim.erlang import servers_for
from netdim.errors import InfeasibleError, ModelTooLargeError

__all__ = [
    "METHODS",
    "TARGET_BASES",
    "MAX_SERVERS",
    "DayLoss",
    "DaySizing",
    "day_loss",
    "day_servers",
    "period_lengths",
    "day_grid",
    "offered_load",
    "worst_period",
]

#: Solvers of :func:`day_loss`.
METHODS = ("uniformization", "ode")
#: Largest resource :func:`day_loss` accepts (the work grows like n squared per hour).
MAX_SERVERS = 100_000

# Relative slack when a computed figure is compared with a target (rounding only).
_RTOL = 1e-9
# --------------------------------------------------------------------------------------------
# results


@dataclass(frozen=True)
class DayLoss:
    """Blocking and occupancy of one resource over the day (``P`` periods, ``G`` grid times).

    Attributes
    ----------
    servers : int
    holding : float
        Mean holding time (hours).
    rates, period_hours, offered, lost : ndarray, shape (P,)
        Arrivals per hour, hours, and expected arrivals offered and lost, per period.
    blocking : ndarray, shape (P,)
        Share of each period the resource is full: what a Poisson arrival sees there, so
        ``lost / offered`` in a period with arrivals.
    peak_blocking, peak_period : float, int
        The worst period (0-based) among those with arrivals (among all if none has any).
    lost_fraction : float
        Share of the day's arrivals lost (0 when nothing arrives).
    occupancy_period_mean : ndarray, shape (P,)
        Time-average busy units per period.
    times : ndarray, shape (G,)
        Hours from the start of the day, ``steps_per_period`` per period, 0 included.
    occupancy_mean, full_probability, occupancy_quantile : ndarray, shape (G,)
        Mean busy units, P(every unit busy) and the ``quantile`` point of busy units.
    quantile : float
    peak_occupancy, peak_time : float
        The largest mean occupancy on the grid and when.
    start, end : ndarray, shape (n + 1,)
        Distribution of busy units at the start and the end of the day.
    cyclic : bool
    residual : float
        Cyclic day: ``||end - start||_1``; 0 otherwise.
    method : str
    """

    servers: int
    holding: float
    rates: np.ndarray
    period_hours: np.ndarray
    blocking: np.ndarray
    offered: np.ndarray
    lost: np.ndarray
    peak_blocking: float
    peak_period: int
    lost_fraction: float
    occupancy_period_mean: np.ndarray
    times: np.ndarray
    occupancy_mean: np.ndarray
    full_probability: np.ndarray
    occupancy_quantile: np.ndarray
    quantile: float
    peak_occupancy: float
    peak_time: float
    start: np.ndarray
    end: np.ndarray
    cyclic: bool
    residual: float
    method: str

    @property
    def peak_quantile_occupancy(self) -> int:
        """Largest ``quantile`` point of the occupancy over the grid."""
        return int(self.occupancy_quantile.max())

    def to_dict(self) -> dict:
        """Plain-Python figures for JSON (the start and end distributions are left out)."""
        return {
            "servers": self.servers,
            "holding": self.holding,
            "method": self.method,
            "cyclic": self.cyclic,
            "residual": self.residual,
            "rates": self.rates.tolist(),
            "period_hours": self.period_hours.tolist(),
            "blocking_by_period": self.blocking.tolist(),
            "offered_by_period": self.offered.tolist(),
            "lost_by_period": self.lost.tolist(),
            "peak_blocking": self.peak_blocking,
            "peak_period": self.peak_period,
            "lost_fraction": self.lost_fraction,
            "occupancy": {
                "period_mean": self.occupancy_period_mean.tolist(),
                "times": self.times.tolist(),
                "mean": self.occupancy_mean.tolist(),
                "quantile_level": self.quantile,
                "quantile": self.occupancy_quantile.tolist(),
                "full_probability": self.full_probability.tolist(),
                "peak": self.peak_occupancy,
                "peak_time": self.peak_time,
                "peak_quantile": self.peak_quantile_occupancy,
            },
        }


@dataclass(frozen=True)
class DaySizing:
    """The least size of one resource that meets a blocking target over the day.

    Attributes
    ----------
    servers, target, target_basis : int, float, {'peak', 'day'}
    result, below : DayLoss, DayLoss or None
        The day at ``servers``, and at ``servers - 1`` (None at the lower limit).
    busy_hour_traffic, busy_hour_servers : float, int
        Largest rate times holding time (erlangs) and Erlang B's size for it at ``target``.
    evaluations : int
        Days computed by the search.
    """

    servers: int
    target: float
    target_basis: str
    result: DayLoss
    below: DayLoss | None
    busy_hour_traffic: float
    busy_hour_servers: int
    evaluations: int

    @property
    def achieved(self) -> float:
        """The figure the target applies to, at ``servers``."""
        return _basis_value(self.result, self.target_basis)

    def to_dict(self) -> dict:
        return {
            "servers": self.servers,
            "target": self.target,
            "target_basis": self.target_basis,
            "achieved": self.achieved,
            "below": None if self.below is None else _basis_value(self.below, self.target_basis),
            "busy_hour_traffic": self.busy_hour_traffic,
            "busy_hour_servers": self.busy_hour_servers,
            "evaluations": self.evaluations,
            "result": self.result.to_dict(),
        }


# --------------------------------------------------------------------------------------------
# helpers shared with the network approximation


def _basis_value(result: DayLoss, basis: str) -> float:
    return result.peak_blocking if basis == "peak" else result.lost_fraction


def _check_int(name, x, minimum) -> int:
    if isinstance(x, bool) or not isinstance(x, (int, np.integer)) or x < minimum:
        raise ValueError(f"{name}: must be a whole number >= {minimum}, got {x!r}")
    return int(x)


def _start_vector(start, n, cyclic) -> np.ndarray | None:
    """The start distribution, or None for a cyclic day."""
    if cyclic:
        if not (isinstance(start, (int, np.integer)) and start == 0):
            raise ValueError("start: a cyclic day has no start occupancy; give one or the other")
        return None
    if isinstance(start, (int, np.integer)) and not isinstance(start, bool):
        if not 0 <= start <= n:
            raise ValueError(f"start: occupancy must lie in 0..{n} (the servers), got {start}")
        p = np.zeros(n + 1)
        p[int(start)] = 1.0
        return p
    p = np.asarray(start, dtype=float)
    if p.shape != (n + 1,):
        raise ValueError(
            f"start: expected a whole number of busy units or a distribution over 0..{n} "
            f"({n + 1} values), got {start!r}"
        )
    if not (np.all(np.isfinite(p)) and np.all(p >= 0) and abs(p.sum() - 1.0) <= 1e-9):
        raise ValueError("start: a distribution must be >= 0 and sum to 1")
    return p / p.sum()


def day_loss(rates, servers, holding, period=1.0, *, start=0, cyclic=False,
             method="uniformization", steps_per_period=4, quantile=0.95) -> DayLoss:
    """Exact blocking and occupancy of one loss resource over a day of varying demand.

    Parameters
    ----------
    rates : array_like of float, shape (P,)
        Arrivals per hour in each period (constant within a period).
    servers : int
        Units of the resource, ``0 <= servers <= MAX_SERVERS``.
    holding : float
        Mean holding time in hours (exponential).
    period : float or array_like, shape (P,)
        Hours per period (default 1).
    start : int or array_like, shape (servers + 1,)
        Busy units at the start of the day, or their distribution (default 0: empty).
    cyclic : bool
        The day repeats: start from the periodic state (start = end); ``start`` must be 0.
    method : {'uniformization', 'ode'}
    steps_per_period : int
        Grid points per period for the occupancy curves.
    quantile : float
        Level of the occupancy quantile curve, in (0, 1).

    Returns
    -------
    DayLoss

    Raises
    ------
    ValueError
        Bad rates, servers, holding, period, start, method, steps or quantile.
    ModelTooLargeError
        ``servers > MAX_SERVERS``.
    ConvergenceError
        The periodic state of a cyclic day was not found, or the ODE solver failed.

    Notes
    -----
    Blocking in a period is ``(1 / T) * integral of P(N(t) = n) dt`` over it; arrivals in a
    period form a Poisson stream of constant rate, so this is also the expected share of
    them lost (PASTA). The mean occupancy per period comes from Little's law in transient
    form, ``integral E N dt = h (carried calls - (E N(end) - E N(start)))``.

    References
    ----------
    .. [1] A. Jensen, Skandinavisk Aktuarietidskrift 36 (1953) 87-91.
    .. [2] W. K. Grassmann, Computers & Operations Research 4 (1977) 47-53.

    Examples
    --------
    >>> r = day_loss([45.0] * 48, 107, 2.0, cyclic=True)
    >>> round(r.peak_blocking, 4)    # constant demand: Erlang B(90 E, 107)
    0.0088
    """
    lam = check_rates(rates)
    n = _check_int("servers", servers, 0)
    if n > MAX_SERVERS:
        raise ModelTooLargeError(
            f"servers: {n} is over the limit of {MAX_SERVERS} for the exact transient chain"
        )
    h = check_holding(holding)
    hours = period_lengths(period, lam.size)
    if method not in METHODS:
        raise ValueError(f"method: unknown method {method!r}; choose one of {', '.join(METHODS)}")
    steps = _check_int("steps_per_period", steps_per_period, 1)
    if not (isinstance(quantile, (int, float)) and 0 < quantile < 1):
        raise ValueError(f"quantile: must lie in (0, 1), got {quantile!r}")
    p0 = _start_vector(start, n, bool(cyclic))
    mu = 1.0 / h

    residual = 0.0
    if p0 is None:
        p0, residual = cyclic_start(n, lam, hours, mu, method)
    end, full, grid = run_day(p0, lam, hours, mu, method, steps, True)

    blocking = np.clip(full / hours, 0.0, 1.0)
    offered = lam * hours
    lost = offered * blocking
    total = offered.sum()
    states = np.array(grid)
    k = np.arange(n + 1)
    occ = states @ k
    cdf = np.cumsum(states, axis=1)
    qcurve = np.minimum(np.argmax(cdf >= quantile - 1e-12, axis=1), n)
    times = day_grid(hours, steps)
    # Little's law over each period: busy-unit hours = h (carried - change of the mean)
    bounds = occ[::steps]
    carried = offered - lost
    period_mean = np.maximum(h * (carried - np.diff(bounds)) / hours, 0.0)
    ipk = int(np.argmax(occ))
    if cyclic:
        residual = float(np.abs(end - p0).sum())
    return DayLoss(
        servers=n,
        holding=h,
        rates=frozen(lam),
        period_hours=frozen(hours),
        blocking=frozen(blocking),
        offered=frozen(offered),
        lost=frozen(lost),
        peak_blocking=float(blocking[worst_period(blocking, offered)]),
        peak_period=worst_period(blocking, offered),
        lost_fraction=float(lost.sum() / total) if total > 0 else 0.0,
        occupancy_period_mean=frozen(period_mean),
        times=frozen(times),
        occupancy_mean=frozen(occ),
        full_probability=frozen(states[:, n]),
        occupancy_quantile=frozen(qcurve, dtype=np.int64),
        quantile=float(quantile),
        peak_occupancy=float(occ[ipk]),
        peak_time=float(times[ipk]),
        start=frozen(p0),
        end=frozen(end),
        cyclic=bool(cyclic),
        residual=residual,
        method=method,
    )


def day_servers(rates, holding, target, period=1.0, *, target_basis="peak", start=0,
                cyclic=False, method="uniformization", steps_per_period=4, quantile=0.95,
                max_servers=10_000) -> DaySizing:
    """Least number of units whose day meets a blocking target.

    Parameters
    ----------
    rates, holding, period, cyclic, method, steps_per_period, quantile
        As :func:`day_loss`.
    start : int
        Busy units at the start of the day (the least size considered).
    target : float
        Largest acceptable blocking, in (0, 1).
    target_basis : {'peak', 'day'}
        ``peak``: the worst period's blocking; ``day``: the share of the day's arrivals lost.
    max_servers : int
        Give up above this size.

    Returns
    -------
    DaySizing

    Raises
    ------
    ValueError
        Bad arguments (as :func:`day_loss`), target or basis.
    InfeasibleError
        No size up to ``max_servers`` meets the target.

    Notes
    -----
    Bisection between the start occupancy and Erlang B's size for the largest rate (an
    upper bound for an empty or cyclic start: the chain is stochastically below the
    stationary chain at the largest rate; with a given start the bracket is widened until
    the target is met). It relies on the blocking falling as units are added.

    References
    ----------
    .. [1] A. K. Erlang (1917), for the busy-hour comparison.

    Examples
    --------
    >>> s = day_servers([5, 10, 30, 45, 40, 30, 20, 15, 10, 5, 2, 0], 2.0, 0.01)
    >>> s.servers, s.busy_hour_servers
    (78, 107)
    """
    lam = check_rates(rates)
    h = check_holding(holding)
    if not (isinstance(target, (int, float)) and 0 < target < 1):
        raise ValueError(f"target: must lie in (0, 1), got {target!r}")
    if target_basis not in TARGET_BASES:
        raise ValueError(
            f"target_basis: unknown basis {target_basis!r}; choose one of "
            f"{', '.join(TARGET_BASES)}"
        )
    cap = _check_int("max_servers", max_servers, 1)
    if isinstance(start, bool) or not isinstance(start, (int, np.integer)) or start < 0:
        raise ValueError(f"start: sizing takes a whole number of busy units >= 0, got {start!r}")
    lo = int(start)
    busy = float(lam.max()) * h
    bh = int(servers_for(busy, float(target))) if busy > 0 else 0
    evaluations = 0
    cache = {}

    def at(n, steps=1):
        nonlocal evaluations
        key = (n, steps)
        if key not in cache:
            evaluations += 1
            cache[key] = day_loss(lam, n, h, period, start=start, cyclic=cyclic, method=method,
                                  steps_per_period=steps, quantile=quantile)
        return cache[key]

    def ok(n):
        return _basis_value(at(n), target_basis) <= target * (1 + _RTOL)

    if lam.sum() == 0 or ok(lo):
        best = lo
    else:
        hi = min(max(bh, lo + 1), cap)
        while not ok(hi):
            if hi >= cap:
                raise InfeasibleError(
                    f"target: no size up to max_servers {cap} keeps the {target_basis} "
                    f"blocking at or below {target}"
                )
            lo, hi = hi, min(2 * hi, cap)
        while hi - lo > 1:
            mid = (lo + hi) // 2
            lo, hi = (lo, mid) if ok(mid) else (mid, hi)
        best = hi
    result = at(best, steps_per_period)
    below = at(best - 1, steps_per_period) if best > int(start) else None
    return DaySizing(
        servers=best,
        target=float(target),
        target_basis=target_basis,
        result=result,
        below=below,
        busy_hour_traffic=busy,
        busy_hour_servers=bh,
        evaluations=evaluations,
    )
