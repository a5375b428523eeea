"""Evaluation over the day (issue 20): a network file's day profile, as an :class:`Evaluation`.

The day methods of the evaluate registry. Each runs one of the day computations on the
network's :class:`~netdim.model.DayProfile` and returns the common
:class:`~netdim.evaluate.result.Evaluation`, whose ``blocking`` is each demand's figure on
its ``target_basis`` (the worst period's blocking for ``peak``, the share of the day's
arrivals lost for ``day``), so verdicts, tables and exit statuses work unchanged; the day's
figures (blocking per period, occupancy over the day) ride along in ``Evaluation.day``.

``day`` picks the exact chain where it applies (one link whose demands share one holding
time) and the carried-load approximation (``day-fpa``) otherwise.
"""

from __future__ import annotations

import numpy as np

from netdim.daily_loads import day_reduced_load, day_single_resource
from netdim.evaluate.day_simulate import simulate_day
from netdim.evaluate.result import Evaluation
from netdim.vocabulary import EvaluationStatus

__all__ = ["evaluate_day", "day_method_for", "basis_figures", "OPTIONS", "SIM_OPTIONS",
           "DAY_METHODS"]

#: The day methods, as the registry names them.
DAY_METHODS = ("day", "day-exact", "day-fpa", "day-mol", "day-simulate")
#: Options of the computed day methods.
OPTIONS = ("steps_per_period", "quantile")
#: Options of ``day-simulate``.
SIM_OPTIONS = ("seed", "calls", "days", "confidence", "steps_per_period", "quantile",
               "progress")

_APPROX_NOTE = ("{m} is an approximation of the day ({how}, docs/measurements/daily.md); "
                "check a verdict near its target with --method day-simulate")
_HOW = {"day-fpa": "within 15 % of the exact chain on the measured single park, but up to "
                   "39 % below it on one park whose arrivals rise sharply",
        "day-mol": "up to 27 % below the exact chain on the measured single park"}

_ALTERNATE_NOTE = ("under alternate routing the day approximations are optimistic: on the "
                   "campus day the worst-hour blocking came out up to 45 % below the "
                   "simulation's (docs/measurements/daily.md); size with --verify")


def day_method_for(network) -> str:
    """``'day-exact'`` when the exact chain applies (one link, one holding time for all its
    demands, single-rate), else ``'day-fpa'``."""
    if len(network.links) != 1 or network.is_multirate:
        return "day-fpa"
    holds = {h for d in network.demands for r in d.routes[:1] for h in r.holdings}
    return "day-exact" if len(holds) <= 1 and all(d.routes for d in network.demands) else (
        "day-fpa")


def _profile(network):
    if network.day is None:
        raise ValueError(
            "method: the day methods need demand over the day: give rates (arrivals per "
            "hour in each period) in a demand"
        )
    return network.day


def basis_figures(network, peak_blocking, lost_fraction) -> np.ndarray:
    """Per demand the figure its target applies to (``target_basis``)."""
    basis = np.array(network.day.target_basis)
    return np.where(basis == "day", lost_fraction, peak_blocking)


def evaluate_day(network, capacities, method="day", *, steps_per_period=4, quantile=0.95,
                 seed=None, calls=None, days=None, confidence=0.95,
                 progress=None) -> Evaluation:
    """Evaluate a network's day profile.

    Parameters
    ----------
    network : Network
        With ``network.day`` set (a file with ``rates``).
    capacities : ndarray of int
    method : {'day', 'day-exact', 'day-fpa', 'day-mol', 'day-simulate'}
    steps_per_period, quantile
        Grid points per period and the occupancy quantile level (as
        :func:`netdim.daily_loads.day_reduced_load`).
    seed, calls, days, confidence, progress
        ``day-simulate`` only (:func:`netdim.evaluate.day_simulate.simulate_day`).

    Returns
    -------
    Evaluation
        ``blocking`` per demand on its target basis; ``day`` the day's figures;
        ``status`` ``exact``, ``converged`` (the ODE of an approximation solved) or
        ``simulated`` (with intervals).

    Raises
    ------
    ValueError
        No day profile; a method that does not apply (the exact chain on a network).
    ConvergenceError
        The day equations or the cyclic state did not converge.
    ModelTooLargeError
        Beyond a work limit (units of the exact chain, arrivals of the simulation).
    """
    day = _profile(network)
    if method == "day":
        method = day_method_for(network)
    rates = day.rate_array()
    start = None if day.cyclic or not any(day.start) else np.array(day.start, dtype=float)
    common = {"period": day.period, "start": start, "cyclic": day.cyclic,
              "steps_per_period": steps_per_period, "quantile": quantile}
    extra, warnings = {}, []
    if method == "day-exact":
        r = day_single_resource(network, rates, capacities, **common)
        status = EvaluationStatus.EXACT
    elif method in ("day-fpa", "day-mol"):
        r = day_reduced_load(network, rates, capacities, method=method[4:], **common)
        status = EvaluationStatus.CONVERGED
        warnings.append(_APPROX_NOTE.format(m=method, how=_HOW[method]))
        if network.routing.policy == "alternate":
            warnings.append(_ALTERNATE_NOTE)
    elif method == "day-simulate":
        r = simulate_day(network, rates, capacities, seed=seed, calls=calls, days=days,
                         confidence=confidence, progress=progress, **common)
        status = EvaluationStatus.SIMULATED
        basis = np.array(day.target_basis)
        extra = {
            "blocking_interval": np.where((basis == "day")[:, None], r.lost_fraction_interval,
                                          r.peak_blocking_interval),
            "confidence": r.confidence,
            "details": {"days": r.days, "seed": r.seed, "arrivals": r.arrivals},
        }
    else:
        raise ValueError(f"method: unknown day method {method!r}; choose one of "
                         f"{', '.join(DAY_METHODS)}")
    blocking = basis_figures(network, r.peak_blocking, r.lost_fraction)
    return Evaluation.from_link_state(
        network, capacities, method=method, status=status, blocking=blocking,
        link_offered=r.offered_load.max(axis=1, initial=0.0),
        link_carried=r.peak_occupancy,
        link_blocking=r.link_blocking.max(axis=1, initial=0.0),
        message=(f"over the day: {rates.shape[1]} periods of {day.period:g} h"
                 f"{', cyclic' if day.cyclic else ''}; blocking is each demand's worst "
                 "period (target_basis peak) or lost share (day); link figures are the "
                 "day's peaks"),
        warnings=tuple(warnings), day=r, **extra)
