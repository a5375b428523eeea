"""Cost against target: the network sized again with every demand given one common target.

What a planner asks before settling on a grade of service: how much does 0.5 % cost against
1 % or 2 %? :func:`cost_against_targets` sizes the network once per target (every demand's
target set to it, everything else as given) and returns the costs with their lower bounds;
:func:`sweep_section` draws them as a report section.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from netdim._arrays import frozen
from netdim.dimension.api import dimension
from netdim.report.cells import cost_cells, decimals_for, percent_cells, prob_cells, text_cell
from netdim.report.figures import cost_against_target
from netdim.report.page import Section, figure_html, table_html

__all__ = ["TargetSweep", "cost_against_targets", "sweep_section", "parse_targets"]


@dataclasses.dataclass(frozen=True)
class TargetSweep:
    """Plans of one network at common targets.

    Attributes
    ----------
    targets : ndarray
        The common targets, ascending.
    costs, lower_bounds, gaps : ndarray
        Of the plan sized for each target (NaN where no plan meets it).
    statuses : tuple of str
        Each plan's status.
    current : float or None
        The network's own target when every demand has the same one.
    """

    targets: np.ndarray
    costs: np.ndarray
    lower_bounds: np.ndarray
    gaps: np.ndarray
    statuses: tuple
    current: float | None

    def to_dict(self) -> dict:
        def num(x):
            return None if not math.isfinite(float(x)) else float(x)

        return {"targets": [float(t) for t in self.targets],
                "plans": [{"target": float(t), "cost": num(c), "lower_bound": num(b),
                           "gap": num(g), "status": s}
                          for t, c, b, g, s in zip(self.targets, self.costs, self.lower_bounds,
                                                   self.gaps, self.statuses, strict=True)],
                "current": self.current}


def parse_targets(text) -> tuple[float, ...]:
    """``'0.005,0.01,0.02'`` -> the targets; each in (0, 1), at most 12.

    Raises
    ------
    ValueError
        Naming the value that is not a target.
    """
    out = []
    for part in str(text).split(","):
        part = part.strip()
        try:
            t = float(part)
        except ValueError:
            raise ValueError(f"targets: {part!r} is not a number") from None
        if not (0 < t < 1) or not math.isfinite(t):
            raise ValueError(f"targets: {part} is not a blocking target in (0, 1)")
        out.append(t)
    if not out or len(out) > 12:
        raise ValueError(f"targets: give 1 to 12 targets, got {len(out)}")
    return tuple(sorted(set(out)))


def _with_target(network, target):
    demands = tuple(dataclasses.replace(d, target=float(target)) for d in network.demands)
    return dataclasses.replace(network, demands=demands)


def cost_against_targets(network, targets, *, progress=None, **sizing) -> TargetSweep:
    """Size ``network`` once per target, every demand's target set to it.

    Parameters
    ----------
    network : Network
    targets : sequence of float
        Common blocking targets, each in (0, 1).
    progress : callable, optional
        ``progress(fraction, message)`` after each plan.
    **sizing
        Keywords of :func:`netdim.dimension` (model, solver, mip_gap, bound_time, ...);
        ``verify`` is not passed on (the sweep compares the model's plans).

    Returns
    -------
    TargetSweep
    """
    sizing.pop("verify", None)
    sizing.pop("progress", None)
    ts = sorted(float(t) for t in targets)
    costs, bounds, gaps, statuses = [], [], [], []
    for k, t in enumerate(ts):
        plan = dimension(_with_target(network, t), **sizing)
        ok = plan.feasible
        costs.append(plan.cost if ok else math.nan)
        bounds.append(plan.lower_bound if ok else math.nan)
        gaps.append(plan.gap if ok else math.nan)
        statuses.append(plan.status)
        if progress is not None:
            progress((k + 1) / len(ts), f"cost against target: {t:g} costs {plan.cost:g}")
    own = {d.target for d in network.demands}
    return TargetSweep(frozen(np.array(ts)), frozen(np.array(costs)), frozen(np.array(bounds)),
                       frozen(np.array(gaps)), tuple(statuses),
                       float(own.pop()) if len(own) == 1 else None)


def sweep_section(sweep) -> Section:
    """The sweep as a report section: the chart and its table."""
    t = sweep.targets
    svg = cost_against_target(t, sweep.costs, lower_bounds=sweep.lower_bounds,
                              current=sweep.current)
    dec = decimals_for(t)
    ok = np.isfinite(sweep.costs)
    money = cost_cells(np.where(ok, sweep.costs, 0.0))
    low = cost_cells(np.where(ok, sweep.lower_bounds, 0.0))
    cols = [prob_cells(t, dec),
            [c if ok[k] else text_cell("none meets it") for k, c in enumerate(money)],
            [c if ok[k] else text_cell("") for k, c in enumerate(low)],
            [c if ok[k] else text_cell("") for k, c in enumerate(
                percent_cells(np.where(ok, sweep.gaps, 0.0)))],
            [text_cell(s) for s in sweep.statuses]]
    table = table_html("t-cost-target", ["target (every demand)", "cost", "lower bound",
                                         "gap (%)", "status"], cols,
                       [f"{x:g}" for x in t],
                       ["Each row: the network sized again with every demand given that "
                        "target, all else as in the file; by the model alone (no "
                        "simulation)."])
    caption = ("Least cost found against a blocking target common to every demand, with "
               "the lower bound of each plan (dashed)."
               + ("" if sweep.current is None else
                  f" The dotted line marks the file's own target, {sweep.current:g}."))
    return Section("cost-target", "Cost against target",
                   figure_html(svg, caption, "fig-cost-target") + table)
