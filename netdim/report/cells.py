"""Table cells for the HTML report: one number format per column.

Each formatter takes a whole column and returns :class:`Cell` objects whose text shares one
format (the same decimals), while ``value`` keeps the exact figure for the page's
``data-value`` attribute, so a reader sees round numbers and a program the exact ones.

- probabilities: fixed decimals, enough for the column's smallest target to show three
  significant digits (at least 4); a value below half the last digit reads ``< 0.0001``;
- intervals: ``0.0043 (0.0034-0.0052)`` with the same decimals;
- costs: no decimals when every cost is whole, else 2, with thousands separators;
- percentages: one decimal; loads: a fixed number of decimals.
"""

from __future__ import annotations

import html as _html
import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "Cell",
    "text_cell",
    "decimals_for",
    "prob_cells",
    "interval_cells",
    "fixed_cells",
    "int_cells",
    "cost_cells",
    "percent_cells",
]

#: Most decimals a probability column uses (targets below 1e-6 still read, as ``< ...``).
MAX_DECIMALS = 8


@dataclass(frozen=True)
class Cell:
    """One table cell.

    Attributes
    ----------
    text : str
        What the page shows.
    value : float, int or None
        The exact figure (``data-value``); None for a text cell.
    css : str
        Extra class of the cell (``num`` is added for number cells).
    low, high : float or None
        Ends of an interval (``data-low``, ``data-high``).
    """

    text: str
    value: float | int | None = None
    css: str = ""
    low: float | None = None
    high: float | None = None

    def html(self) -> str:
        classes = " ".join(c for c in ("num" if self.value is not None else "", self.css) if c)
        attrs = f' class="{classes}"' if classes else ""
        for name, v in (("value", self.value), ("low", self.low), ("high", self.high)):
            if v is not None:
                attrs += f' data-{name}="{_repr(v)}"'
        return f"<td{attrs}>{_html.escape(self.text)}</td>"


def _repr(v) -> str:
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    return repr(float(v))


def text_cell(text) -> Cell:
    return Cell(str(text))


def decimals_for(targets) -> int:
    """Decimals of a probability column: three significant digits of the smallest target,
    at least 4, at most :data:`MAX_DECIMALS`."""
    t = [float(x) for x in targets if float(x) > 0 and math.isfinite(float(x))]
    if not t:
        return 4
    return int(min(MAX_DECIMALS, max(4, 2 - math.floor(math.log10(min(t))))))


def _prob_text(p, decimals) -> str:
    if not math.isfinite(p):
        return "n/a"
    if p < 0.5 * 10.0**-decimals:
        return f"< {10.0**-decimals:.{decimals}f}"
    return f"{p:.{decimals}f}"


def prob_cells(values, decimals) -> list[Cell]:
    """Probabilities, all with ``decimals`` decimals."""
    return [Cell(_prob_text(float(p), decimals), float(p)) for p in np.asarray(values, float)]


def interval_cells(values, intervals, decimals) -> list[Cell]:
    """``0.0043 (0.0034-0.0052)``: a point estimate and its confidence interval."""
    out = []
    for p, (lo, hi) in zip(np.asarray(values, float), np.asarray(intervals, float),
                           strict=True):
        text = (f"{_prob_text(p, decimals)} "
                f"({max(lo, 0.0):.{decimals}f}-{max(hi, 0.0):.{decimals}f})")
        out.append(Cell(text, float(p), low=float(lo), high=float(hi)))
    return out


def fixed_cells(values, decimals) -> list[Cell]:
    """Numbers with a fixed count of decimals (loads, ratios)."""
    return [Cell(f"{v:,.{decimals}f}" if math.isfinite(v) else "n/a", float(v))
            for v in np.asarray(values, float)]


def int_cells(values) -> list[Cell]:
    return [Cell(f"{int(v):,}", int(v)) for v in np.asarray(values)]


def cost_cells(values) -> list[Cell]:
    """Costs: no decimals when every one is whole, else 2 each."""
    v = np.asarray(values, float)
    whole = bool(np.all(np.abs(v - np.round(v)) < 1e-9 * np.maximum(1.0, np.abs(v))))
    d = 0 if whole else 2
    return [Cell(f"{x:,.{d}f}", float(x)) for x in v]


def percent_cells(fractions) -> list[Cell]:
    """Fractions shown as percentages with one decimal (the value stays the fraction)."""
    return [Cell(f"{100 * f:.1f}", float(f)) for f in np.asarray(fractions, float)]
