"""The words netdim's results use, in one place.

Every status and verdict is a ``str`` enum whose values are the strings the ``--json`` output
has always carried, so ``status == "converged"`` and ``json.dumps`` keep working. The
command line takes its ``choices=`` from the tuples here, never from copies.
"""

from __future__ import annotations

from collections.abc import Callable
from enum import Enum

__all__ = [
    "Verdict",
    "VERDICTS",
    "EvaluationStatus",
    "PlanStatus",
    "Progress",
]


class _Words(str, Enum):
    """A str enum that prints as its value."""

    def __str__(self) -> str:
        return str(self.value)


class Verdict(_Words):
    """How one demand fares against its target.

    ``MET``: the blocking is at or below the target; for a simulated figure, the whole
    confidence interval is. ``MISSED``: above the target; for a simulated figure, the whole
    interval is. ``UNCLEAR``: a simulated interval that contains the target, so the run
    cannot tell.
    """

    MET = "met"
    MISSED = "missed"
    UNCLEAR = "unclear"


#: The verdicts, in the order reports list them.
VERDICTS = tuple(v.value for v in Verdict)


class EvaluationStatus(_Words):
    """``Evaluation.status``: how the figures were obtained."""

    CONVERGED = "converged"
    BISTABLE = "bistable"
    EXACT = "exact"
    SIMULATED = "simulated"


class PlanStatus(_Words):
    """``Plan.status``.

    ``OPTIMAL_WITHIN_GAP``: every target met and the cost within the MILP gap of the lower
    bound; ``FEASIBLE``: every target met, gap larger; ``INFEASIBLE``: some target cannot
    be met within the bounds (the plan is the best found); ``ECONOMIC``: sized for value
    carried minus cost, no target enforced.
    """

    OPTIMAL_WITHIN_GAP = "optimal-within-gap"
    FEASIBLE = "feasible"
    INFEASIBLE = "infeasible"
    ECONOMIC = "economic"


#: The one progress protocol: ``progress(fraction, message)``, where ``fraction`` is the
#: share of the work done in [0, 1], or None when the work has no known end.
Progress = Callable[[float | None, str], None]
