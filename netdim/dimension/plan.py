"""The result of sizing a network: :class:`Plan`."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Plan", "STATUSES"]

#: Plan statuses. ``optimal-within-gap``: every target met and the cost within ``mip_gap`` of
#: the lower bound; ``feasible``: every target met, gap larger; ``infeasible``: some target
#: cannot be met within the bounds (the plan is the best one found); ``economic``: sized for
#: value carried minus cost, no target enforced.
STATUSES = ("optimal-within-gap", "feasible", "infeasible", "economic")


def _frozen(a, dtype):
    a = np.array(a, dtype=dtype)
    a.setflags(write=False)
    return a


@dataclass(frozen=True)
class Plan:
    """Integer capacities for every link, their cost, and how good the plan is.

    Attributes
    ----------
    capacities : ndarray of int
        Capacity per link, in link order (installed plus added modules).
    modules : ndarray of int
        Modules added per link (brownfield: on top of ``installed``).
    link_costs : ndarray of float
        Cost per link: ``cost_per_module`` x added modules, plus ``fixed_cost`` for a link
        built new (capacity > 0 and nothing installed).
    cost : float
        Total cost.
    lower_bound : float
        A lower bound on the least cost of any plan meeting every target under ``model``.
    gap : float
        ``(cost - lower_bound) / cost`` (0 when the cost is 0).
    status : str
        One of :data:`STATUSES`.
    message : str
        What happened; for an infeasible plan, which demands cannot be met and why.
    evaluation : Evaluation
        The plan evaluated under ``model``.
    iterations : int
        Outer iterations (MILP then re-evaluation of the loads).
    solver : str
    seconds : float
    baseline_cost : float
        Cost of the simple baseline (each link alone for target / hops with Erlang B).
    baseline_capacities : ndarray of int
    dropped_links : tuple of str
        Links the plan does not build (capacity 0); routes over them are unusable.
    model : str
        ``'fixed-point'``, ``'conservative'`` or ``'exact'``.
    network : Network or None
        The network the plan is for, with routes over dropped links removed (what
        :func:`netdim.netfile.write_network` should write).
    details : dict
        Extra figures (MILP times, polish moves, objective in economic mode; with
        verification: ``verify_calls``, ``verify_seed``, ``verify_rounds``,
        ``unverified_cost``, ``working_targets``, ...).
    verification : Evaluation or None
        The plan simulated (``dimension(verify='simulate')``), against the original
        targets; None when not verified.
    warnings : tuple of str
        E.g. the demands that still miss their target in simulation.
    """

    capacities: np.ndarray
    modules: np.ndarray
    link_costs: np.ndarray
    cost: float
    lower_bound: float
    gap: float
    status: str
    message: str
    evaluation: object
    iterations: int
    solver: str
    seconds: float
    baseline_cost: float
    baseline_capacities: np.ndarray
    dropped_links: tuple = ()
    model: str = "fixed-point"
    network: object = field(default=None, repr=False, compare=False)
    details: dict = field(default_factory=dict, compare=False)
    verification: object = field(default=None, repr=False, compare=False)
    warnings: tuple = ()

    @property
    def simulated_misses(self):
        """Demands whose whole simulated confidence interval lies above the target."""
        if self.verification is None:
            return ()
        from netdim.dimension.verify import judge

        verdict = judge(self.verification)
        return tuple(d for d, v in zip(self.verification.demand_ids, verdict, strict=True)
                     if v == "missed")

    def __post_init__(self):
        object.__setattr__(self, "capacities", _frozen(self.capacities, np.int64))
        object.__setattr__(self, "modules", _frozen(self.modules, np.int64))
        object.__setattr__(self, "link_costs", _frozen(self.link_costs, float))
        object.__setattr__(
            self, "baseline_capacities", _frozen(self.baseline_capacities, np.int64)
        )
        object.__setattr__(self, "dropped_links", tuple(self.dropped_links))
        object.__setattr__(self, "warnings", tuple(self.warnings))

    @property
    def feasible(self) -> bool:
        """Every demand meets its target under the plan's model."""
        return self.status != "infeasible"

    @property
    def saving(self) -> float:
        """Fraction saved against the baseline (negative when dearer)."""
        if self.baseline_cost <= 0:
            return 0.0
        return (self.baseline_cost - self.cost) / self.baseline_cost

    def to_dict(self) -> dict:
        """The JSON form (the ``--json`` contract: keys are added, never renamed)."""
        ev = self.evaluation
        util = ev.utilisation if ev is not None else np.zeros(len(self.capacities))
        link_ids = ev.link_ids if ev is not None else tuple(range(len(self.capacities)))
        links = [
            {
                "id": lid,
                "capacity": int(self.capacities[j]),
                "modules": int(self.modules[j]),
                "cost": float(self.link_costs[j]),
                "utilisation": float(util[j]),
                "baseline_capacity": int(self.baseline_capacities[j]),
            }
            for j, lid in enumerate(link_ids)
        ]
        demands = []
        if ev is not None:
            demands = [
                {
                    "id": did,
                    "blocking": float(ev.blocking[i]),
                    "target": float(ev.target[i]),
                    "met": bool(ev.met[i]),
                    "offered": float(ev.offered[i]),
                }
                for i, did in enumerate(ev.demand_ids)
            ]
        return {
            "cost": float(self.cost),
            "lower_bound": float(self.lower_bound),
            "gap": float(self.gap),
            "links": links,
            "demands": demands,
            "status": self.status,
            "baseline_cost": float(self.baseline_cost),
            "saving": float(self.saving),
            "iterations": int(self.iterations),
            "solver": self.solver,
            "seconds": float(self.seconds),
            "model": self.model,
            "dropped_links": list(self.dropped_links),
            "message": self.message,
            "warnings": list(self.warnings),
            "verification": _verification_dict(self.verification),
            "details": {
                k: v
                for k, v in self.details.items()
                if isinstance(v, (int, float, str, bool, list, type(None)))
            },
        }


def _verification_dict(ev):
    """``{'method', 'calls', 'confidence', 'all_met', 'demands': [{'id', 'blocking',
    'interval', 'target', 'met', 'judged'}]}``, or None when the plan was not verified.

    ``met`` compares the point estimate with the target; ``judged`` is ``'met'``,
    ``'missed'`` (the whole interval above the target) or ``'unclear'``
    (:func:`netdim.dimension.verify.judge`)."""
    if ev is None:
        return None
    from netdim.dimension.verify import judge

    verdict = judge(ev)
    iv = ev.blocking_interval
    return {
        "method": ev.method,
        "calls": int(ev.details.get("calls", 0)),
        "confidence": None if ev.confidence is None else float(ev.confidence),
        "all_met": bool(ev.all_met),
        "demands": [
            {
                "id": did,
                "blocking": float(ev.blocking[i]),
                "interval": None if iv is None else [float(iv[i, 0]), float(iv[i, 1])],
                "target": float(ev.target[i]),
                "met": bool(ev.met[i]),
                "judged": str(verdict[i]),
            }
            for i, did in enumerate(ev.demand_ids)
        ],
    }
