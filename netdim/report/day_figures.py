"""The picture of a day evaluation (issue 20): each link's occupancy over the day.

Drawn as the other report pictures are (:mod:`netdim.report.figures`: matplotlib's
:class:`~matplotlib.figure.Figure`, inline deterministic SVG, matplotlib imported only when
a picture is drawn).
"""

from __future__ import annotations

import math

import numpy as np

# The figure and SVG helpers of the report's pictures: one style and one SVG clean-up for
# every picture on a page.
from netdim.report.figures import _figure, _svg, _units

__all__ = ["occupancy_chart", "clock_ticks"]

_MEAN = "#2f5d8a"
_HIGH = "#e08a2c"
_CAP = "#c0392b"
_GREY = "#9a9a9a"


def clock_ticks(end_hours) -> np.ndarray:
    """Tick positions (hours from the start of the day) for a day of ``end_hours``: every
    1, 2, 3, 4, 6 or 12 h, so that at most 8 ticks show (both ends included)."""
    end = float(end_hours)
    step = next((s for s in (1, 2, 3, 4, 6, 12) if end / s <= 7), 24 * math.ceil(end / 168))
    return np.arange(0.0, end + 1e-9, step)


def occupancy_chart(link_ids, times, mean, high, capacity, *, level=0.95, period_hours=None,
                    unit="units", columns=3) -> str:
    """Occupancy over the day, one small panel per link.

    Each panel draws the link's mean occupancy (units in use) on the day's time grid, the
    ``level`` point of its occupancy (the least number of units in use that is not exceeded
    with that probability) as a step line, and the link's capacity as a horizontal line.

    Parameters
    ----------
    link_ids : sequence of str
    times : array_like, shape (G,)
        Hours from the start of the day.
    mean, high : array_like, shape (L, G)
        Mean occupancy and its ``level`` point at each time.
    capacity : array_like of int, shape (L,)
    level : float
        The occupancy quantile level of ``high`` (for the legend).
    period_hours : array_like, optional
        Length of each period: their boundaries are drawn as faint vertical lines.
    unit : str
        Name of a capacity unit.
    columns : int
        Panels per row.

    Returns
    -------
    str
        An ``<svg>`` element.

    Raises
    ------
    ValueError
        No link to draw, or arrays of different lengths.
    """
    n = len(link_ids)
    t = np.asarray(times, float)
    m = np.asarray(mean, float).reshape(n, -1) if n else np.zeros((0, 0))
    h = np.asarray(high, float).reshape(n, -1) if n else np.zeros((0, 0))
    cap = np.asarray(capacity)
    if n == 0:
        raise ValueError("occupancy_chart: no links to draw")
    if m.shape != (n, len(t)) or h.shape != (n, len(t)) or len(cap) != n:
        raise ValueError("occupancy_chart: the arrays differ in length")
    cols = max(1, min(n, int(columns)))
    rows = math.ceil(n / cols)
    matplotlib, fig = _figure(3.3 * cols, 0.7 + 2.2 * rows)
    axes = fig.subplots(rows, cols, squeeze=False, sharex=True).ravel()
    for ax in axes[n:]:
        ax.set_visible(False)
    bounds = None if period_hours is None else np.cumsum(np.asarray(period_hours, float))[:-1]
    ticks = clock_ticks(t[-1] if len(t) else 1.0)
    pct = f"{100 * level:g}%"
    for j, ax in enumerate(axes[:n]):
        c = int(cap[j])
        if bounds is not None and len(bounds) <= 48:
            for b in bounds:
                ax.axvline(b, color="#ececec", lw=0.6, zorder=0)
        ax.step(t, h[j], where="post", color=_HIGH, lw=1.2, label=f"{pct} point")
        ax.plot(t, m[j], color=_MEAN, lw=1.6, label="mean")
        ax.axhline(c, color=_CAP, lw=1.1, ls="--", label="capacity")
        top = max(c, float(np.max(h[j], initial=0.0)), float(np.max(m[j], initial=0.0)), 1.0)
        ax.set_ylim(0, 1.12 * top)
        ax.set_xlim(float(t[0]) if len(t) else 0.0, float(t[-1]) if len(t) else 1.0)
        ax.set_xticks(ticks, [f"+{int(round(x))}h" for x in ticks])
        ax.set_title(f"{link_ids[j]}: {c} {_units(c, unit)}", fontsize=9)
        ax.grid(True, axis="y", color="#e4e4e4", lw=0.6)
        if j % cols == 0:
            ax.set_ylabel(f"{unit} in use")
    for ax in axes[max(0, n - cols):n]:  # the lowest panel of each column shows the hours
        ax.tick_params(labelbottom=True)
    handles, labels = axes[0].get_legend_handles_labels()
    fig.legend(handles, labels, fontsize=8, frameon=False, loc="outside lower center",
               ncols=3)
    return _svg(matplotlib, fig, "occupancy over the day, per link")
