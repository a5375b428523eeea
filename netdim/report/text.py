"""Plain-text tables for the command line and for reports."""

from __future__ import annotations

__all__ = ["format_table", "fmt_prob", "fmt_num", "fmt_short", "CAUTION", "caution_for"]

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


def format_table(headers, rows, align=None) -> str:
    """Format rows as a fixed-width table.

    Parameters
    ----------
    headers : sequence of str
    rows : sequence of sequences (cells are turned into str)
    align : str, optional
        One letter per column, ``'l'`` or ``'r'``; default: first column left, rest right.
    """
    headers = [str(h) for h in headers]
    cells = [[str(c) for c in row] for row in rows]
    if align is None:
        align = "l" + "r" * (len(headers) - 1)
    widths = [len(h) for h in headers]
    for row in cells:
        for i, c in enumerate(row):
            widths[i] = max(widths[i], len(c))

    def line(row):
        out = []
        for i, c in enumerate(row):
            out.append(c.ljust(widths[i]) if align[i] == "l" else c.rjust(widths[i]))
        return "  ".join(out).rstrip()

    sep = "  ".join("-" * w for w in widths)
    return "\n".join([line(headers), sep] + [line(r) for r in cells])
