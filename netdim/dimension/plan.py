"""The results of sizing: :class:`Plan`, and the :class:`Bound` and :class:`Baseline` it
is compared with."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from netdim._arrays import frozen as _frozen
from netdim.dimension.rules import check_rules, has_rules
from netdim.vocabulary import PlanStatus, Verdict

if TYPE_CHECKING:
    from netdim.dimension.choices import SizingChoices
    from netdim.evaluate import Evaluation
    from netdim.model import Network

__all__ = ["Plan", "Bound", "Baseline", "STATUSES", "OBJECTIVES", "make_plan"]

#: Plan statuses (see :class:`netdim.vocabulary.PlanStatus`).
STATUSES = tuple(s.value for s in PlanStatus)
#: What a plan is sized for: ``'cost'``, the least cost meeting every target, or
#: ``'net-value'``, the most value carried minus cost (every demand has a ``value``).
OBJECTIVES = ("cost", "net-value")


@dataclass(frozen=True)
class Bound:
    """A proven lower bound on the least cost of any plan meeting every target.

    Attributes
    ----------
    value : float
    kind : str
        How it was found, e.g. ``'MILP at least thinned loads A(1 - t)'``.
    rounds : int
        Rounds of cuts or solves it took (0 when not counted).
    cuts : int
    seconds : float
    stopped_by_time : bool
        The time safety stop cut its work short, so the value depends on the machine.
    """

    value: float
    kind: str
    rounds: int = 0
    cuts: int = 0
    seconds: float = 0.0
    stopped_by_time: bool = False


@dataclass(frozen=True)
class Baseline:
    """The per-link baseline a plan is compared with: each link sized alone.

    Attributes
    ----------
    capacities : ndarray of int
    cost : float
    """

    capacities: np.ndarray
    cost: float

    def __post_init__(self):
        object.__setattr__(self, "capacities", _frozen(self.capacities, np.int64))
        object.__setattr__(self, "cost", float(self.cost))


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
        A lower bound on the least cost of any plan meeting every target under ``model``
        (0 when ``objective`` is ``'net-value'``: no target is enforced).
    gap : float
        ``(cost - lower_bound) / cost`` (0 when the cost is 0); for ``'net-value'``, the
        net value's gap to its upper bound.
    status : PlanStatus
    message : str
        What happened; for an infeasible plan, which demands cannot be met and why.
    evaluation : Evaluation
        The plan evaluated under ``model``, against the original targets.
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
        The network the plan is for, with routes over dropped links removed.
    details : dict
        Extra figures (MILP times, the bound's kind, the listing; with verification
        ``verify_calls``, ``verify_seed``, ``verify_margin``, ``working_targets``, ...).
    verification : Evaluation or None
        The plan simulated (``dimension(verify=...)``), against the original targets.
    warnings : tuple of str
    objective : str
        One of :data:`OBJECTIVES`.
    rules : tuple of RuleCheck
        Each design rule of the network (``min_capacity``, ``diversity``) judged on the
        plan; empty when the network has none.
    """

    capacities: np.ndarray
    modules: np.ndarray
    link_costs: np.ndarray
    cost: float
    lower_bound: float
    gap: float
    status: PlanStatus
    message: str
    evaluation: Evaluation
    iterations: int
    solver: str
    seconds: float
    baseline_cost: float
    baseline_capacities: np.ndarray
    dropped_links: tuple = ()
    model: str = "fixed-point"
    network: Network | None = field(default=None, repr=False, compare=False)
    details: dict = field(default_factory=dict, compare=False)
    verification: Evaluation | None = field(default=None, repr=False, compare=False)
    warnings: tuple = ()
    objective: str = "cost"
    rules: tuple = ()

    def __post_init__(self):
        object.__setattr__(self, "capacities", _frozen(self.capacities, np.int64))
        object.__setattr__(self, "modules", _frozen(self.modules, np.int64))
        object.__setattr__(self, "link_costs", _frozen(self.link_costs, float))
        object.__setattr__(
            self, "baseline_capacities", _frozen(self.baseline_capacities, np.int64)
        )
        object.__setattr__(self, "status", PlanStatus(self.status))
        object.__setattr__(self, "dropped_links", tuple(self.dropped_links))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        object.__setattr__(self, "rules", tuple(self.rules))

    @property
    def rules_met(self) -> bool:
        """Every design rule (``min_capacity``, ``diversity``) holds in the plan."""
        return all(r.met for r in self.rules)

    @property
    def feasible(self) -> bool:
        """Every demand meets its target under the plan's model (always, for net value)."""
        return self.status != PlanStatus.INFEASIBLE

    @property
    def simulated_misses(self) -> tuple:
        """Demands whose whole simulated confidence interval lies above the target."""
        return () if self.verification is None else self.verification.missed

    @property
    def simulated_unclear(self) -> tuple:
        """Demands whose simulated confidence interval contains the target."""
        return () if self.verification is None else self.verification.unclear

    @property
    def saving(self) -> float:
        """Fraction saved against the baseline (negative when dearer)."""
        if self.baseline_cost <= 0:
            return 0.0
        return (self.baseline_cost - self.cost) / self.baseline_cost

    @property
    def saving_fraction(self) -> float:
        """The same as :attr:`saving`: a fraction (0.25 is 25 %)."""
        return self.saving

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
        return {
            "cost": float(self.cost),
            "lower_bound": float(self.lower_bound),
            "gap": float(self.gap),
            "links": links,
            "demands": ev.demand_records() if ev is not None else [],
            "status": str(self.status),
            "baseline_cost": float(self.baseline_cost),
            "saving": float(self.saving),
            "saving_fraction": float(self.saving_fraction),
            "iterations": int(self.iterations),
            "solver": self.solver,
            "seconds": float(self.seconds),
            "model": self.model,
            "objective": self.objective,
            "dropped_links": list(self.dropped_links),
            "message": self.message,
            "warnings": list(self.warnings),
            "verification": _verification_dict(self.verification),
            "rules": [r.to_dict() for r in self.rules],
            "rules_met": self.rules_met,
            "details": {
                k: v
                for k, v in self.details.items()
                if isinstance(v, (int, float, str, bool, list, type(None)))
            },
        }


def _verification_dict(ev):
    """``{'method', 'calls', 'confidence', 'all_met', 'demands': [{'id', 'blocking',
    'interval', 'target', 'met', 'judged'}]}``, or None when the plan was not verified.

    ``judged`` is ``'met'`` (the whole interval at or below the target), ``'missed'`` (the
    whole interval above it) or ``'unclear'``; ``met`` is ``judged == 'met'``."""
    if ev is None:
        return None
    verdict = ev.verdicts()
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
                "met": bool(verdict[i] == Verdict.MET.value),
                "judged": str(verdict[i]),
            }
            for i, did in enumerate(ev.demand_ids)
        ],
    }


def make_plan(network: Network, net: Network, choices: SizingChoices, modules,
              evaluation: Evaluation, *, lower_bound, status, message, iterations, solver,
              seconds, baseline: Baseline, model, details=None, warnings=(),
              objective="cost", gap=None, verification=None) -> Plan:
    """The one place a :class:`Plan` is put together from a module vector.

    ``network`` is the network as given (for the ids of links left unbuilt and the design
    rules, judged here on every plan: :func:`netdim.dimension.rules.check_rules`), ``net``
    the one the plan is for (routes over dropped links taken away).
    """
    caps = choices.capacity(modules)
    cost = choices.cost(modules)
    if gap is None:
        gap = (cost - lower_bound) / cost if cost > 0 else 0.0
    dropped = tuple(link.id for j, link in enumerate(network.links)
                    if caps[j] == 0 and link.installed == 0)
    return Plan(
        capacities=caps,
        modules=modules,
        link_costs=choices.link_costs(modules),
        cost=cost,
        lower_bound=float(lower_bound),
        gap=float(gap),
        status=status,
        message=message,
        evaluation=evaluation,
        iterations=int(iterations),
        solver=solver,
        seconds=float(seconds),
        baseline_cost=baseline.cost,
        baseline_capacities=baseline.capacities,
        dropped_links=dropped,
        model=model,
        network=net.with_capacities(caps),
        details=dict(details or {}),
        verification=verification,
        warnings=tuple(warnings),
        objective=objective,
        rules=check_rules(network, choices, modules) if has_rules(network) else (),
    )
