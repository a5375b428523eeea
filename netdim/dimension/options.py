"""The options of sizing and of its check by simulation, each validated once, when made."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim.dimension._lp import check_solver
from netdim.dimension.plan import OBJECTIVES
from netdim.evaluate.peaked_fixed_point import METHOD as PEAKED

__all__ = ["SizingOptions", "VerifyOptions", "MODELS", "RESTARTS", "DEFAULT_VERIFY_CALLS",
           "DEFAULT_MARGIN", "DEFAULT_BOUND_TIME", "silent"]

#: What a plan can be made to satisfy.
MODELS = ("fixed-point", "conservative", "exact", PEAKED)
#: How a calibration round sizes again (see :class:`VerifyOptions`).
RESTARTS = ("warm", "full")
#: Arrivals per verification run (after the warm-up).
DEFAULT_VERIFY_CALLS = 1_000_000
#: Share inside its target that calibration by simulation aims each demand at (chosen by
#: measurement, docs/measurements/dimension.md: it makes "unclear" rare at a small cost).
DEFAULT_MARGIN = 0.2
#: Seconds after which the lower bound's work stops, as a safety net (its work is bounded
#: by counts, not by time).
DEFAULT_BOUND_TIME = 300.0


def silent(fraction, message) -> None:
    """The progress callback (``progress(fraction, message)``) that says nothing."""


def _positive_seconds(name, value, allow_none):
    if value is None and allow_none:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
            or not value > 0 or not np.isfinite(value):
        raise ValueError(f"{name}: must be > 0 seconds, got {value!r}")
    return float(value)


def _integer(name, value, low, what):
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < low:
        raise ValueError(f"{name}: must be {what}, got {value!r}")
    return int(value)


@dataclass(frozen=True)
class SizingOptions:
    """How :func:`netdim.dimension.dimension` sizes (each field checked when made).

    Attributes
    ----------
    model : {'fixed-point', 'conservative', 'exact', 'peaked-fixed-point'}
        What the plan must satisfy (``peaked-fixed-point``: for cost only).
    solver : {'highs', 'cbc'}
        MILP solver for every model the sizer solves.
    mip_gap : float
        Relative gap each MILP is solved to, in [0, 1) (on networks of over
        :data:`netdim.dimension.secant_milp.LARGE_DEMANDS` demands the secant MILPs stop at
        the root node instead).
    time_limit : float or None
        Safety stop of each MILP, seconds.
    max_iter : int
        Most outer iterations (MILP, then the loads re-evaluated).
    local_search : bool
        Run the local search after the MILP iterations.
    objective : {'cost', 'net-value'}
        ``'cost'``: least cost meeting every target; ``'net-value'``: most value carried
        minus cost (every demand needs a ``value``; targets are not enforced).
    bound_time : float
        Safety stop of the lower bound's work (cut rounds, then evaluating cheaper plans),
        seconds; that work is bounded by counts, so it ends before this on most networks.
    """

    model: str = "fixed-point"
    solver: str = "highs"
    mip_gap: float = 1e-4
    time_limit: float | None = None
    max_iter: int = 20
    local_search: bool = True
    objective: str = "cost"
    bound_time: float = DEFAULT_BOUND_TIME

    def __post_init__(self):
        if self.model not in MODELS:
            raise ValueError(f"model: unknown model {self.model!r}; choose one of "
                             f"{', '.join(MODELS)}")
        check_solver(self.solver)
        gap = self.mip_gap
        if isinstance(gap, bool) or not isinstance(gap, (int, float, np.floating)) \
                or not 0 <= gap < 1:
            raise ValueError(f"mip_gap: must lie in [0, 1), got {gap!r}")
        object.__setattr__(self, "time_limit",
                           _positive_seconds("time_limit", self.time_limit, True))
        object.__setattr__(self, "max_iter", _integer("max_iter", self.max_iter, 1, ">= 1"))
        if self.objective not in OBJECTIVES:
            raise ValueError(f"objective: unknown objective {self.objective!r}; choose one of "
                             f"{', '.join(OBJECTIVES)}")
        if self.model == PEAKED and self.objective != "cost":
            # the upper bound of net value rests on link figures not proven for this model
            raise ValueError(f"objective: model {PEAKED!r} sizes for cost only; use "
                             "objective 'cost', or model 'fixed-point' for net value")
        object.__setattr__(self, "bound_time",
                           _positive_seconds("bound_time", self.bound_time, False))


@dataclass(frozen=True)
class VerifyOptions:
    """How a plan is checked by simulation and calibrated (each field checked when made).

    Attributes
    ----------
    calls : int
        Arrivals per simulation (default :data:`DEFAULT_VERIFY_CALLS`). A demand whose
        interval contains its target is simulated again with 4 times the calls, up to 16
        times this.
    rounds : int
        Most re-sizings with tightened working targets (0: check only).
    restart : {'warm', 'full'}
        How a round sizes again: the local search from the current plan, or the whole
        sizing.
    seed : int, Generator or None
        Normalised once; every round simulates with the same stream.
    margin : float
        In [0, 0.5]. Calibration goes on until the simulated interval of every demand
        reaches below ``target * (1 - margin)`` (its goal), so that few demands end with an
        interval that contains the target; 0 calibrates to the targets themselves.
    """

    calls: int | None = None
    rounds: int = 8
    restart: str = "warm"
    seed: object = 0
    margin: float = DEFAULT_MARGIN

    def __post_init__(self):
        calls = DEFAULT_VERIFY_CALLS if self.calls is None else self.calls
        object.__setattr__(self, "calls",
                           _integer("verify_calls", calls, 1, "a positive integer"))
        object.__setattr__(self, "rounds",
                           _integer("verify_rounds", self.rounds, 0, "an integer >= 0"))
        if self.restart not in RESTARTS:
            raise ValueError(f"verify_restart: unknown value {self.restart!r}; choose one of "
                             f"{', '.join(RESTARTS)}")
        m = self.margin
        if isinstance(m, bool) or not isinstance(m, (int, float, np.floating)) \
                or not 0 <= m <= 0.5:
            raise ValueError(f"margin: must lie in [0, 0.5], got {m!r}")
        object.__setattr__(self, "margin", float(m))
