"""Least-cost integer sizing of a network to per-demand blocking targets.

:func:`dimension` sizes (for cost, or for net value) and, when asked, checks the plan by
simulation; :class:`Plan` is the result. The parts, one way down: :mod:`~.api` (the entry
point), :mod:`~.calibrate` (check by simulation), :mod:`~.sizer` (sizing to targets),
:mod:`~.net_value`, :mod:`~.bounds` with :mod:`~.loss_flow_bound` and :mod:`~.loss_cuts`,
:mod:`~.exhaustive`, :mod:`~.local_search`, :mod:`~.secant_milp`, :mod:`~.baseline`,
:mod:`~.choices`, :mod:`~.plan`, :mod:`~.options` and the solver seam :mod:`~._lp`.
"""

from netdim.dimension._lp import SOLVERS, SolveStatus
from netdim.dimension.api import VERIFY_METHODS, dimension
from netdim.dimension.baseline import baseline
from netdim.dimension.bounds import carried_load_bound, lower_bound, thinned_load_bound
from netdim.dimension.choices import SizingChoices
from netdim.dimension.loss_flow_bound import loss_flow_bound
from netdim.dimension.options import (
    DEFAULT_BOUND_TIME,
    DEFAULT_MARGIN,
    DEFAULT_VERIFY_CALLS,
    MODELS,
    SizingOptions,
    VerifyOptions,
)
from netdim.dimension.plan import OBJECTIVES, STATUSES, Baseline, Bound, Plan

__all__ = ["dimension", "Plan", "Bound", "Baseline", "baseline", "SizingOptions",
           "VerifyOptions", "SizingChoices", "lower_bound", "carried_load_bound",
           "thinned_load_bound", "loss_flow_bound", "MODELS", "SOLVERS", "STATUSES",
           "OBJECTIVES", "VERIFY_METHODS", "SolveStatus", "DEFAULT_BOUND_TIME",
           "DEFAULT_MARGIN", "DEFAULT_VERIFY_CALLS"]
