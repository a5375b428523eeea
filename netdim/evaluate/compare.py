"""How far to trust the fixed point: the same network by every method, side by side.

The reduced-load fixed point is exact only in the limit of large networks with many circuits
per link (Kelly 1986); on small networks it errs in either direction. :func:`compare_methods`
evaluates a network by the fixed point, by simulation and, where the state space is small
enough, exactly, and flags every demand whose fixed-point blocking lies outside the
simulation's confidence interval.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from netdim._arrays import frozen
from netdim.errors import ModelTooLargeError
from netdim.evaluate._network import built_network, resolve_capacities
from netdim.evaluate.exact import exact
from netdim.evaluate.fixed_point import fixed_point
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED
from netdim.evaluate.peaked_fixed_point import applies as peaked_applies
from netdim.evaluate.peaked_fixed_point import peaked_fixed_point
from netdim.evaluate.result import Evaluation
from netdim.evaluate.simulate import SimulationOptions, simulate
from netdim.vocabulary import Verdict

__all__ = ["Comparison", "compare_methods", "NO_LOSS_SEEN", "NO_CALLS", "OPTIONS"]

#: What :func:`compare_methods` passes on: every simulation option, and the exact method's
#: state limit.
OPTIONS = tuple(SimulationOptions.__dataclass_fields__) + ("max_states",)

#: Flag of a demand the simulation saw no blocked call of.
NO_LOSS_SEEN = "no blocked calls seen"
#: Flag of a demand no simulated call of arrived.
NO_CALLS = "no calls simulated"


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
        ``'exact'``, ``'peaked-fixed-point'``).
    offered_calls, blocked_calls : ndarray of int or None
        Simulated calls of each demand, and how many were blocked.
    peaked : ndarray or None
        Blocking by the peaked fixed point, where it applies (alternate routing with
        overflow, single-unit calls); else None.
    peaked_outside : ndarray of bool or None
        The peaked fixed point lies outside the simulation's interval.
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
    offered_calls: np.ndarray | None = None
    blocked_calls: np.ndarray | None = None
    peaked: np.ndarray | None = None
    peaked_outside: np.ndarray | None = None

    def __post_init__(self):
        for name in ("target", "fixed_point", "simulated", "interval"):
            object.__setattr__(self, name, frozen(getattr(self, name)))
        object.__setattr__(self, "outside", frozen(self.outside, bool))
        for name in ("exact", "peaked"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, frozen(getattr(self, name)))
        for name in ("exact_outside", "peaked_outside"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, frozen(getattr(self, name), bool))
        for name in ("offered_calls", "blocked_calls"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, frozen(getattr(self, name), np.int64))
        object.__setattr__(self, "demand_ids", tuple(self.demand_ids))

    @property
    def flagged(self) -> tuple:
        """Ids of the demands whose fixed-point blocking lies outside the interval."""
        return tuple(i for i, f in zip(self.demand_ids, self.outside, strict=True) if f)

    @property
    def verdict_method(self) -> str:
        """The method the verdicts come from: ``'exact'`` where available, else
        ``'simulate'`` (three-way, by its interval)."""
        return "exact" if "exact" in self.evaluations else "simulate"

    def verdicts(self) -> np.ndarray:
        """Per demand, ``'met'``, ``'missed'`` or ``'unclear'`` by :attr:`verdict_method`."""
        ev = self.evaluations.get(self.verdict_method)
        if ev is None:
            raise ValueError("comparison: no evaluations kept to judge by")
        return ev.verdicts()

    @property
    def all_met(self) -> bool:
        return bool(np.all(self.verdicts() == Verdict.MET.value))

    def notes(self) -> tuple:
        """Per demand, what the simulation could not see: :data:`NO_CALLS`,
        :data:`NO_LOSS_SEEN` or ``''``."""
        if self.offered_calls is None or self.blocked_calls is None:
            return ("",) * len(self.demand_ids)
        return tuple(NO_CALLS if n == 0 else NO_LOSS_SEEN if k == 0 else ""
                     for n, k in zip(self.offered_calls, self.blocked_calls, strict=True))

    def to_dict(self) -> dict:
        """The JSON form (keys are added, never renamed)."""
        demands = []
        verdicts = self.verdicts() if self.evaluations else None
        notes = self.notes()
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
            if self.peaked is not None:
                rec["peaked_fixed_point"] = float(self.peaked[i])
                rec["peaked_outside"] = bool(self.peaked_outside[i])
            if verdicts is not None:
                rec["verdict"] = str(verdicts[i])
            if self.blocked_calls is not None:
                rec["offered_calls"] = int(self.offered_calls[i])
                rec["blocked_calls"] = int(self.blocked_calls[i])
                rec["note"] = notes[i]
            demands.append(rec)
        out = {
            "demands": demands,
            "confidence": float(self.confidence),
            "flagged": list(self.flagged),
            "exact_available": self.exact is not None,
            "exact_message": self.exact_message,
            "methods": {k: v.to_dict() for k, v in self.evaluations.items()},
        }
        if verdicts is not None:
            out["verdict_method"] = self.verdict_method
            out["all_met"] = self.all_met
        sim = self.evaluations.get("simulate")
        if sim is not None:
            out["seed"] = sim.details.get("seed")
        return out


def _options(simulation) -> SimulationOptions:
    if simulation is None:
        return SimulationOptions()
    if isinstance(simulation, SimulationOptions):
        return simulation
    if isinstance(simulation, Mapping):
        unknown = set(simulation) - set(SimulationOptions.__dataclass_fields__)
        if unknown:
            raise ValueError(
                f"simulation: unknown option {sorted(unknown)[0]!r}; choose from "
                f"{', '.join(SimulationOptions.__dataclass_fields__)}"
            )
        return SimulationOptions(**simulation)
    raise ValueError(f"simulation: expected SimulationOptions or a dict, got {simulation!r}")


def compare_methods(network, capacities=None, simulation=None, *, max_states: int = 200_000,
                    progress=None) -> Comparison:
    """Evaluate a network by the fixed point, by simulation and (if small) exactly; under
    alternate routing with overflow also by the peaked fixed point.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
    simulation : SimulationOptions or dict, optional
        Options of the simulation (:class:`~netdim.evaluate.simulate.SimulationOptions`:
        ``seed``, ``calls``, ``precision``, ``holding_law``, ``cv``, ``confidence``,
        ``warmup``, ``batches``, ``max_calls``).
    max_states : int
        Passed to :func:`~netdim.evaluate.exact.exact`; a larger network gets no exact
        column.
    progress : callable(fraction, message), optional
        Passed to the simulation.

    Returns
    -------
    Comparison

    Raises
    ------
    ValueError
        Bad options or capacities.
    ConvergenceError
        The fixed point did not converge.
    ModelTooLargeError
        The simulation would need more arrivals than it starts on.

    Notes
    -----
    A flag means the fixed point and the simulation disagree by more than the simulation's
    sampling error at the level asked for; with many demands a few flags arise by chance
    (about ``1 - confidence`` of the demands were the fixed point exact). The verdicts are
    the exact method's where it applies, else the simulation's (three-way).

    References
    ----------
    .. [1] F. P. Kelly, "Blocking probabilities in large circuit-switched networks",
       Adv. Appl. Probab. 18 (1986) 473-505.

    Examples
    --------
    One trunk group of 10 circuits offered 5 E: the fixed point and the exact method both
    give Erlang B's E(5, 10) = 0.0183846 (checked with mpmath), inside the interval of a
    simulation of 100,000 calls (seed 1).

    >>> from netdim.netfile import loads_network
    >>> net = loads_network('''
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... ''')
    >>> c = compare_methods(net, simulation={"seed": 1, "calls": 100_000})
    >>> round(float(c.fixed_point[0]), 7), round(float(c.exact[0]), 7)
    (0.0183846, 0.0183846)
    >>> c.flagged, c.verdict_method, c.verdicts().tolist()
    ((), 'exact', ['met'])
    """
    opts = _options(simulation)
    caps = resolve_capacities(network, capacities)
    network = built_network(network, caps)
    sim = simulate(network, caps, progress=progress, **opts.as_kwargs())
    fp = fixed_point(network, caps)
    evaluations: dict[str, Evaluation] = {"fixed-point": fp, "simulate": sim}
    peaked = peaked_fixed_point(network, caps) if peaked_applies(network) else None
    if peaked is not None:
        evaluations[PEAKED] = peaked
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
        confidence=opts.confidence,
        exact=None if ex is None else ex.blocking,
        outside=outside(fp.blocking),
        exact_outside=None if ex is None else outside(ex.blocking),
        exact_message=exact_message,
        evaluations=evaluations,
        offered_calls=sim.details.get("offered_calls"),
        blocked_calls=sim.details.get("blocked_calls"),
        peaked=None if peaked is None else peaked.blocking,
        peaked_outside=None if peaked is None else outside(peaked.blocking),
    )
