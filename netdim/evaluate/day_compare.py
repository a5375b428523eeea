"""The day methods side by side against the simulation of the day (``evaluate --check`` on
a file with ``rates``).

Each demand's figure on its ``target_basis`` by the exact chain (where it applies: one link,
one holding time), the carried-load approximation (``day-fpa``), the modified offered load
(``day-mol``) and the simulation with its interval; whether each lies in the interval; the
verdict by the exact chain where it applies, else by the simulation (three-way).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim.evaluate.day import day_method_for, evaluate_day
from netdim.evaluate.result import verdicts

__all__ = ["DayComparison", "compare_day_methods", "CHECK_OPTIONS"]

#: Options of :func:`compare_day_methods` (the simulation's).
CHECK_OPTIONS = ("seed", "calls", "days")


@dataclass(frozen=True)
class DayComparison:
    """Per demand the figure on its basis by every day method.

    Attributes
    ----------
    demand_ids : tuple of str
    target : ndarray
    target_basis : tuple of str
    figures : dict of str -> ndarray
        ``'day-exact'`` (when it applies), ``'day-fpa'``, ``'day-mol'``, ``'day-simulate'``.
    interval : ndarray, shape (D, 2)
        The simulation's interval.
    confidence : float
    verdict_method : str
        ``'day-exact'`` or ``'day-simulate'``.
    seed, days : int
    warnings : tuple of str
    """

    demand_ids: tuple
    target: np.ndarray
    target_basis: tuple
    figures: dict
    interval: np.ndarray
    confidence: float
    verdict_method: str
    seed: int
    days: int
    warnings: tuple

    def verdicts(self) -> np.ndarray:
        if self.verdict_method == "day-exact":
            return verdicts(self.figures["day-exact"], self.target)
        return verdicts(self.figures["day-simulate"], self.target, self.interval)

    def inside(self, method) -> np.ndarray:
        b = self.figures[method]
        return (self.interval[:, 0] <= b) & (b <= self.interval[:, 1])

    def to_dict(self) -> dict:
        v = self.verdicts()
        demands = []
        for i, did in enumerate(self.demand_ids):
            rec = {"id": did, "target": float(self.target[i]),
                   "target_basis": self.target_basis[i],
                   "interval": [float(x) for x in self.interval[i]],
                   "verdict": str(v[i])}
            for m, b in self.figures.items():
                rec[m] = float(b[i])
                if m != "day-simulate":
                    rec[f"{m}_inside"] = bool(self.inside(m)[i])
            demands.append(rec)
        return {"method": "day-check", "verdict_method": self.verdict_method,
                "confidence": self.confidence, "seed": self.seed, "days": self.days,
                "all_met": bool(np.all(v == "met")), "warnings": list(self.warnings),
                "demands": demands}


def compare_day_methods(network, capacities, *, seed=None, calls=None, days=None,
                        progress=None) -> DayComparison:
    """Every day method on ``network`` at ``capacities``, beside the simulation.

    Raises
    ------
    ValueError, ConvergenceError, ModelTooLargeError
        As :func:`netdim.evaluate.day.evaluate_day`.
    """
    figures, warnings = {}, []
    exact = day_method_for(network) == "day-exact"
    methods = (("day-exact",) if exact else ()) + ("day-fpa", "day-mol")
    for m in methods:
        ev = evaluate_day(network, capacities, m)
        figures[m] = np.asarray(ev.blocking)
        warnings.extend(w for w in ev.warnings if w not in warnings)
    sim = evaluate_day(network, capacities, "day-simulate", seed=seed, calls=calls,
                       days=days, progress=progress)
    figures["day-simulate"] = np.asarray(sim.blocking)
    return DayComparison(
        demand_ids=sim.demand_ids, target=np.asarray(sim.target),
        target_basis=tuple(network.day.target_basis), figures=figures,
        interval=np.asarray(sim.blocking_interval), confidence=float(sim.confidence),
        verdict_method="day-exact" if exact else "day-simulate",
        seed=int(sim.details["seed"]), days=int(sim.details["days"]),
        warnings=tuple(warnings))
