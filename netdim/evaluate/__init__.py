"""End-to-end blocking of every demand: reduced-load fixed point, exact, or simulation.

All methods take the same network and capacities and return the same
:class:`~netdim.evaluate.result.Evaluation`. Modules, one way down:

- ``fixed_point`` (public function, :class:`FixedPoint`, bistability, the conservative
  variant) over ``_reduced_load`` (route arrays, sweep, damped solve);
- ``exact`` (product form, Markov chain), ``simulate`` (options, batches, intervals) over
  ``_simkernel`` (the compiled event loop) and ``intervals``;
- ``compare`` (every method side by side); ``result`` (:class:`Evaluation`, verdicts);
  ``_network`` (capacities, labels and route groups read from a network, memoised on it).
"""

from __future__ import annotations

from functools import partial

from netdim.evaluate import compare as _compare
from netdim.evaluate import day as _day
from netdim.evaluate import exact as _exact
from netdim.evaluate import fixed_point as _fixed_point
from netdim.evaluate import peaked_fixed_point as _peaked
from netdim.evaluate import simulate as _simulate
from netdim.evaluate._network import built_network, resolve_capacities, route_groups
from netdim.evaluate.compare import Comparison, compare_methods
from netdim.evaluate.fixed_point import FixedPoint
from netdim.evaluate.peaked_fixed_point import default_method
from netdim.evaluate.result import Evaluation, verdicts
from netdim.evaluate.simulate import HOLDING_LAWS, SimulationOptions

__all__ = [
    "evaluate",
    "Evaluation",
    "METHODS",
    "METHOD_OPTIONS",
    "COMPARE_OPTIONS",
    "HOLDING_LAWS",
    "FixedPoint",
    "SimulationOptions",
    "Comparison",
    "compare_methods",
    "resolve_capacities",
    "route_groups",
    "verdicts",
    "default_method",
]

#: The methods, in the order the command line lists them: name -> function(network,
#: capacities, **options).
_REGISTRY = {
    "fixed-point": _fixed_point.fixed_point,
    "conservative": partial(_fixed_point.fixed_point, conservative=True),
    "exact": _exact.exact,
    "simulate": _simulate.simulate,
    _peaked.METHOD: _peaked.peaked_fixed_point,
    # demand over the day: the network's day profile
    **{m: partial(_day.evaluate_day, method=m) for m in _day.DAY_METHODS},
}

#: Evaluation methods, as named on the command line and in ``evaluate(method=...)``.
METHODS = tuple(_REGISTRY)

#: The keyword options each method takes (the command line checks its flags against this).
METHOD_OPTIONS = {
    "fixed-point": _fixed_point.OPTIONS,
    "conservative": _fixed_point.CONSERVATIVE_OPTIONS,
    "exact": _exact.OPTIONS,
    "simulate": _simulate.OPTIONS,
    _peaked.METHOD: _peaked.OPTIONS,
    **{m: _day.SIM_OPTIONS if m == "day-simulate" else _day.OPTIONS for m in _day.DAY_METHODS},
}

#: The options :func:`compare_methods` takes besides capacities (the simulation's and the
#: exact method's state limit).
COMPARE_OPTIONS = _compare.OPTIONS


def evaluate(network, capacities=None, method: str | None = None, **options) -> Evaluation:
    """Evaluate every demand's end-to-end blocking.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link, in link order; default: the capacities in the network file.
    method : {'fixed-point', 'conservative', 'exact', 'simulate', 'peaked-fixed-point', \
'day', 'day-exact', 'day-fpa', 'day-mol', 'day-simulate'}, optional
        Default ``fixed-point``, or ``day`` for a network with a day profile
        (``network.day``: demands with ``rates``); the ``day`` methods evaluate over the day
        (:mod:`netdim.evaluate.day`), the others the busy hour (a profiled demand's traffic
        is then the peak of its offered load over the day).
        ``fixed-point``: the reduced-load (Erlang fixed-point) approximation [1]_.
        ``conservative``: each link sees its un-thinned load (the product bound [2]_).
        ``exact``: product form or Markov chain [3]_, small networks only.
        ``simulate``: event-driven simulation with confidence intervals [4]_.
        ``peaked-fixed-point``: the reduced-load evaluation carrying the peakedness of
        overflow under alternate routing (equivalent random groups [5]_; single-unit
        calls). :func:`default_method` says which of the fixed points a network gets
        when none is named on the command line.
    **options
        Passed to the method; :data:`METHOD_OPTIONS` lists what each takes (``tol``,
        ``max_iter``, ``start`` for the fixed point; ``max_states``, ``solver`` for the
        exact method; ``seed``, ``calls``, ``precision``, ``holding_law``, ``cv``,
        ``confidence``, ``warmup``, ``batches``, ``max_calls``, ``progress`` for
        simulation).

    Returns
    -------
    Evaluation
        Each demand's blocking and verdict (:meth:`Evaluation.verdicts`: ``met``,
        ``missed``, or for a simulation whose interval contains the target ``unclear``).

    Raises
    ------
    ValueError
        Unknown method or option (the message lists the valid ones), bad capacities.
    ConvergenceError
        The fixed point (or the exact chain's solver) did not converge.
    ModelTooLargeError
        The work is beyond a stated limit (states of the exact method, arrivals of a
        simulation, units of a link solved state by state).

    References
    ----------
    .. [1] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Adv. Appl. Prob. 18 (1986) 473-505.
    .. [2] W. Whitt, "Blocking when service is required from several facilities
       simultaneously", AT&T Tech. J. 64 (1985) 1807-1856.
    .. [3] F. P. Kelly, "Loss networks", Ann. Appl. Probab. 1 (1991) 319-378.
    .. [4] A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed.,
       McGraw-Hill 2000.
    .. [5] R. I. Wilkinson, "Theories for toll traffic engineering in the U.S.A.", Bell
       System Technical Journal 35 (1956) 421-514.

    Examples
    --------
    One trunk group of 10 circuits offered 5 E, against a 2 % target: Erlang B gives
    E(5, 10) = 0.01838.

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B"), 10),),
    ...               (Demand("AB", ("A", "B"), 5.0, target=0.02,
    ...                       routes=(Route((0,), (1.0,)),)),))
    >>> ev = evaluate(net)
    >>> round(float(ev.blocking[0]), 5), ev.verdicts().tolist()
    (0.01838, ['met'])
    >>> round(float(evaluate(net, method="exact").blocking[0]), 5)
    0.01838
    >>> evaluate(net, method="guess")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    ValueError: method: unknown method 'guess'; choose one of fixed-point, conservative, ...
    """
    if method is None:
        method = "fixed-point" if network.day is None else "day"
    try:
        run = _REGISTRY[method]
    except (KeyError, TypeError):
        raise ValueError(
            f"method: unknown method {method!r}; choose one of {', '.join(METHODS)}"
        ) from None
    allowed = METHOD_OPTIONS[method]
    unknown = [k for k in options if k not in allowed]
    if unknown:
        raise ValueError(
            f"{unknown[0]}: not an option of method {method!r}; it takes "
            f"{', '.join(allowed)}"
        )
    caps = resolve_capacities(network, capacities)
    return run(built_network(network, caps), caps, **options)
