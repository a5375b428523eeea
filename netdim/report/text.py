"""Plain-text tables for the command line and for reports."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["format_table", "fmt_prob", "fmt_num", "fmt_short", "CAUTION", "caution_for",
           "prob_format", "prob_column", "interval_column", "fixed_column", "cost_column",
           "percent_column", "legend_lines"]

#: The caution every report carries.
CAUTION = (
    "Planning estimates only: the figures rest on the traffic assumptions (busy-hour loads, "
    "Poisson arrivals, holding times). Capacity for emergency services, parking provision and "
    "accessibility follow local codes and licensed practice."
)

_ASSUMPTIONS = ("Planning estimates only: the figures rest on the traffic assumptions "
                "(busy-hour loads, Poisson arrivals, holding times).")
_CODES = {
    "telephone": " Capacity kept for emergency calls follows local codes and licensed "
                 "practice, not these figures.",
    "parking": " Parking provision and accessible spaces follow local codes and licensed "
               "practice, not these figures.",
}


def caution_for(kind=None) -> str:
    """The caution every report carries, in the words of its kind of network.

    ``kind`` is ``'telephone'`` (trunk groups), ``'parking'`` (car parks and shuttles) or
    None (either: :data:`CAUTION`, naming both).
    """
    if kind is None:
        return CAUTION
    if kind not in _CODES:
        raise ValueError(f"kind: unknown kind {kind!r}; choose one of 'telephone', 'parking'"
                         " or None")
    return _ASSUMPTIONS + _CODES[kind]


def fmt_prob(p: float) -> str:
    """A probability as a short string: 4 significant digits, scientific when tiny."""
    if p != p:  # NaN
        return "nan"
    if p == 0:
        return "0"
    if p < 1e-4:
        return f"{p:.3e}"
    return f"{p:.5f}" if p < 0.1 else f"{p:.4f}"


def fmt_num(x: float, digits: int = 2) -> str:
    if isinstance(x, (int,)) or float(x).is_integer() and abs(x) < 1e15:
        return f"{int(x)}" if float(x).is_integer() else f"{x:.{digits}f}"
    return f"{x:.{digits}f}"


def fmt_short(x: float) -> str:
    """A number as short as it reads: 1e10 as '1e10', 9.9e9 as '9.9e9', 250.0 as '250'."""
    text = f"{x:.6g}"
    if "e" not in text:
        return text
    mantissa, exponent = text.split("e")
    return f"{mantissa}e{int(exponent)}"


def format_table(headers, rows, align=None, units=None) -> str:
    """Format rows as a fixed-width table.

    Parameters
    ----------
    headers : sequence of str
    rows : sequence of sequences (cells are turned into str)
    align : str, optional
        One letter per column, ``'l'`` or ``'r'``; default: first column left, rest right.
    units : sequence of str, optional
        A second header line under the first (``'(E)'``, ``'(%)'``, ``''`` for none), so
        the first line keeps one word per column.
    """
    headers = [str(h) for h in headers]
    cells = [[str(c) for c in row] for row in rows]
    if align is None:
        align = "l" + "r" * (len(headers) - 1)
    widths = [len(h) for h in headers]
    if units is not None and any(units):
        units = [str(u) for u in units]
        widths = [max(w, len(u)) for w, u in zip(widths, units, strict=True)]
    else:
        units = None
    for row in cells:
        for i, c in enumerate(row):
            widths[i] = max(widths[i], len(c))

    def line(row):
        out = []
        for i, c in enumerate(row):
            out.append(c.ljust(widths[i]) if align[i] == "l" else c.rjust(widths[i]))
        return "  ".join(out).rstrip()

    sep = "  ".join("-" * w for w in widths)
    head = [line(headers)] + ([line(units)] if units is not None else [])
    return "\n".join(head + [sep] + [line(r) for r in cells])


# -- one format per column ------------------------------------------------------------------
def prob_format(*columns, sig=4, max_decimals=6):
    """The one format of a column of probabilities (and their interval ends).

    Fixed decimals when the smallest non-zero value keeps ``sig`` significant digits within
    ``max_decimals`` decimals (at least 4 decimals); else scientific with ``sig`` significant
    digits for the whole column. Zero reads ``0`` in a scientific column.

    Returns
    -------
    callable
        float -> str.
    """
    v = np.concatenate([np.asarray(c, float).ravel() for c in columns]) if columns else \
        np.zeros(0)
    v = np.abs(v[np.isfinite(v) & (v != 0)])
    decimals = 4
    if len(v):
        decimals = max(4, sig - 1 - math.floor(math.log10(float(v.min()))))
    if decimals <= max_decimals:
        def fixed(x):
            return "n/a" if not math.isfinite(x) else f"{x:.{decimals}f}"
        return fixed

    def scientific(x):
        if not math.isfinite(x):
            return "n/a"
        return "0" if x == 0 else f"{x:.{sig - 1}e}"
    return scientific


def prob_column(values, *more, sig=4) -> list[str]:
    """Probabilities in one format (:func:`prob_format` over ``values`` and ``more``)."""
    f = prob_format(values, *more, sig=sig)
    return [f(float(x)) for x in np.asarray(values, float)]


def interval_column(values, intervals, sig=4) -> list[str]:
    """``0.0043 (0.0034-0.0052)``: estimates and intervals in one format (``to`` between the
    ends when the column is scientific, where a dash would read as a minus sign)."""
    iv = np.asarray(intervals, float).reshape(-1, 2)
    f = prob_format(values, iv, sig=sig)
    sep = " to " if "e" in f(0.5) else "-"
    return [f"{f(float(p))} ({f(max(float(lo), 0.0))}{sep}{f(float(hi))})"
            for p, (lo, hi) in zip(np.asarray(values, float), iv, strict=True)]


def fixed_column(values, decimals=2) -> list[str]:
    """Numbers with the same decimals (loads in erlangs, ratios)."""
    return [f"{x:.{decimals}f}" if math.isfinite(x) else "n/a"
            for x in np.asarray(values, float)]


def cost_column(values) -> list[str]:
    """Costs: no decimals when every one is whole, else 2 each."""
    v = np.asarray(values, float)
    whole = bool(np.all(np.abs(v - np.round(v)) < 1e-9 * np.maximum(1.0, np.abs(v))))
    return [f"{x:.{0 if whole else 2}f}" for x in v]


def percent_column(fractions) -> list[str]:
    """Fractions as percentages with one decimal, no percent sign (the header says ``%``)."""
    return [f"{100 * x:.1f}" if math.isfinite(x) else "n/a"
            for x in np.asarray(fractions, float)]


def legend_lines(*lines) -> str:
    """Lines under a table explaining its headers, each starting with two spaces."""
    return "\n".join(f"  {line}" for line in lines if line)
