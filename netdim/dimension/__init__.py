"""Least-cost integer sizing of a network to per-demand blocking targets."""

from netdim.dimension.baseline import baseline
from netdim.dimension.milp import SOLVERS
from netdim.dimension.plan import STATUSES, Plan
from netdim.dimension.sizer import MODELS, dimension

__all__ = ["dimension", "Plan", "baseline", "MODELS", "SOLVERS", "STATUSES"]
