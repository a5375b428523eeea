"""End-to-end blocking of every demand: reduced-load fixed point, exact, or simulation.

All methods take the same network and capacities and return the same
:class:`~netdim.evaluate.result.Evaluation`.
"""

from __future__ import annotations

import numpy as np

from netdim.evaluate.result import Evaluation

__all__ = ["evaluate", "Evaluation", "METHODS", "resolve_capacities"]

#: Evaluation methods, as named on the command line and in ``evaluate(method=...)``.
METHODS = ("fixed-point", "conservative", "exact", "simulate")


def resolve_capacities(network, capacities=None) -> np.ndarray:
    """Capacities as an int64 array in link order, from the argument or from the network.

    Raises
    ------
    ValueError
        Wrong length, negative or non-integer values, or no capacities anywhere.
    """
    if capacities is None:
        return network.capacities()
    caps = np.asarray(capacities)
    if caps.shape != (len(network.links),):
        raise ValueError(
            f"capacities: expected {len(network.links)} values (one per link), "
            f"got shape {caps.shape}"
        )
    if caps.dtype.kind == "f":
        if not np.all(np.isfinite(caps)) or np.any(caps != np.round(caps)):
            j = int(np.flatnonzero(~np.isfinite(caps) | (caps != np.round(caps)))[0])
            lid = network.links[j].id
            bad = float(caps[j])
            raise ValueError(f"capacities: link '{lid}' has non-integer capacity {bad!r}")
    elif caps.dtype.kind not in "iub":
        raise ValueError(f"capacities: expected integers, got dtype {caps.dtype}")
    caps = caps.astype(np.int64)
    if np.any(caps < 0):
        j = int(np.flatnonzero(caps < 0)[0])
        raise ValueError(
            f"capacities: link '{network.links[j].id}' has negative capacity {int(caps[j])}"
        )
    return caps


def evaluate(network, capacities=None, method: str = "fixed-point", **options) -> Evaluation:
    """Evaluate every demand's end-to-end blocking.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link, in link order; default: the capacities in the network file.
    method : {'fixed-point', 'conservative', 'exact', 'simulate'}
        ``fixed-point``: the reduced-load (Erlang fixed point) approximation.
        ``conservative``: each link sees its un-thinned load (the product bound).
        ``exact``: product form or Markov chain, small networks only.
        ``simulate``: event-driven simulation with confidence intervals.
    **options
        Passed to the method (``tol``, ``max_iter`` for the fixed point; ``seed``,
        ``calls``, ``precision``, ``holding_law``, ``cv`` for simulation; ``max_states``
        for the exact method).

    Returns
    -------
    Evaluation

    Raises
    ------
    ValueError
        Unknown method (the message lists the valid ones) or bad capacities.
    ConvergenceError, ModelTooLargeError
    """
    caps = resolve_capacities(network, capacities)
    if method in ("fixed-point", "conservative"):
        from netdim.evaluate.fixed_point import fixed_point

        return fixed_point(network, caps, conservative=(method == "conservative"), **options)
    if method == "exact":
        from netdim.evaluate.exact import exact

        return exact(network, caps, **options)
    if method == "simulate":
        from netdim.evaluate.simulate import simulate

        return simulate(network, caps, **options)
    raise ValueError(f"method: unknown method {method!r}; choose one of {', '.join(METHODS)}")
