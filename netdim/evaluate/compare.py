"""How far to trust the fixed point: the same network by every method, side by side.

The reduced-load fixed point is exact only in the limit of large networks with many circuits
per link (Kelly 1986); on small networks it errs in either direction. :func:`compare_methods`
evaluates a network by the fixed point, by simulation and, where the state space is small
enough, exactly, and flags every demand whose fixed-point blocking lies outside the
simulation's confidence interval.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from netdim.errors import ModelTooLargeError
from netdim.evaluate.result import Evaluation

__all__ = ["Comparison", "compare_methods"]


def _frozen(a, dtype=float):
    a = np.array(a, dtype=dtype)
    a.setflags(write=False)
    return a


@dataclass(frozen=True)
class Comparison:
    """Per demand: fixed-point, simulated and (where available) exact blocking.

    Attributes
    ----------
    demand_ids : tuple of str
    target : ndarray
    fixed_point : ndarray
        Blocking by the reduced-load fixed point.
    simulated : ndarray
        Blocking estimated by simulation.
    interval : ndarray, shape (n_demands, 2)
        The simulation's confidence interval.
    confidence : float
    exact : ndarray or None
        Exact blocking; None when the network is too large for the exact method.
    outside : ndarray of bool
        The fixed point lies outside the simulation's interval.
    exact_outside : ndarray of bool or None
        The exact value lies outside the simulation's interval (a check of the simulation).
    exact_message : str
        Why there is no exact column, or the exact solver used.
    evaluations : dict
        The full :class:`Evaluation` of each method (``'fixed-point'``, ``'simulate'``,
        ``'exact'``).
    """

    demand_ids: tuple
    target: np.ndarray
    fixed_point: np.ndarray
    simulated: np.ndarray
    interval: np.ndarray
    confidence: float
    exact: np.ndarray | None
    outside: np.ndarray
    exact_outside: np.ndarray | None = None
    exact_message: str = ""
    evaluations: dict = field(default_factory=dict, compare=False)

    def __post_init__(self):
        for name in ("target", "fixed_point", "simulated", "interval"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))
        object.__setattr__(self, "outside", _frozen(self.outside, bool))
        if self.exact is not None:
            object.__setattr__(self, "exact", _frozen(self.exact))
        if self.exact_outside is not None:
            object.__setattr__(self, "exact_outside", _frozen(self.exact_outside, bool))
        object.__setattr__(self, "demand_ids", tuple(self.demand_ids))

    @property
    def flagged(self) -> tuple:
        """Ids of the demands whose fixed-point blocking lies outside the interval."""
        return tuple(i for i, f in zip(self.demand_ids, self.outside, strict=True) if f)

    def to_dict(self) -> dict:
        """The JSON form (keys are added, never renamed)."""
        demands = []
        for i, did in enumerate(self.demand_ids):
            rec = {
                "id": did,
                "target": float(self.target[i]),
                "fixed_point": float(self.fixed_point[i]),
                "simulated": float(self.simulated[i]),
                "interval": [float(v) for v in self.interval[i]],
                "exact": None if self.exact is None else float(self.exact[i]),
                "outside": bool(self.outside[i]),
            }
            if self.exact_outside is not None:
                rec["exact_outside"] = bool(self.exact_outside[i])
            demands.append(rec)
        return {
            "demands": demands,
            "confidence": float(self.confidence),
            "flagged": list(self.flagged),
            "exact_available": self.exact is not None,
            "exact_message": self.exact_message,
            "methods": {k: v.to_dict() for k, v in self.evaluations.items()},
        }


def compare_methods(
    network,
    capacities=None,
    seed=None,
    calls: int | None = None,
    precision: float | None = None,
    holding_law: str = "exponential",
    cv: float = 1.0,
    confidence: float = 0.95,
    max_states: int = 200_000,
    progress=None,
    **simulate_options,
) -> Comparison:
    """Evaluate a network by the fixed point, by simulation and (if small) exactly.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
    seed, calls, precision, holding_law, cv, confidence, progress
        Passed to :func:`netdim.evaluate.simulate.simulate`.
    max_states : int
        Passed to :func:`netdim.evaluate.exact.exact`; a larger network gets no exact column.
    **simulate_options
        Further options of the simulation (``warmup``, ``batches``, ``max_calls``).

    Returns
    -------
    Comparison

    Raises
    ------
    ValueError
        Bad options or capacities.
    ConvergenceError
        The fixed point did not converge.

    Notes
    -----
    A flag means the fixed point and the simulation disagree by more than the simulation's
    sampling error at level ``confidence``; with many demands a few flags can arise by chance
    (about ``1 - confidence`` of the demands when the fixed point were exact).

    References
    ----------
    F. P. Kelly, "Blocking probabilities in large circuit-switched networks", *Adv. Appl.
    Probab.* 18 (1986) 473-505.
    """
    from netdim.evaluate import resolve_capacities
    from netdim.evaluate.exact import exact
    from netdim.evaluate.fixed_point import fixed_point
    from netdim.evaluate.simulate import simulate

    caps = resolve_capacities(network, capacities)
    sim = simulate(
        network, caps, seed=seed, calls=calls, precision=precision, holding_law=holding_law,
        cv=cv, confidence=confidence, progress=progress, **simulate_options,
    )
    fp = fixed_point(network, caps)
    evaluations: dict[str, Evaluation] = {"fixed-point": fp, "simulate": sim}
    try:
        ex = exact(network, caps, max_states=max_states)
    except ModelTooLargeError as err:
        ex = None
        exact_message = str(err)
    else:
        evaluations["exact"] = ex
        exact_message = ex.message
    lo, hi = sim.blocking_interval[:, 0], sim.blocking_interval[:, 1]
    # a relative slack of 1e-12 keeps rounding from flagging a value on the bound
    slack = 1e-12

    def outside(v):
        return (v < lo - slack) | (v > hi + slack)

    return Comparison(
        demand_ids=network.demand_ids,
        target=sim.target,
        fixed_point=fp.blocking,
        simulated=sim.blocking,
        interval=sim.blocking_interval,
        confidence=confidence,
        exact=None if ex is None else ex.blocking,
        outside=outside(fp.blocking),
        exact_outside=None if ex is None else outside(ex.blocking),
        exact_message=exact_message,
        evaluations=evaluations,
    )
