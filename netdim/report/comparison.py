"""Text form of a :class:`~netdim.evaluate.compare.Comparison`."""

from __future__ import annotations

from netdim.report.text import CAUTION, fmt_prob, format_table

__all__ = ["comparison_text"]


def comparison_text(comparison) -> str:
    """A table of the fixed-point, simulated and exact blocking per demand, with flags.

    Parameters
    ----------
    comparison : Comparison

    Returns
    -------
    str
        One row per demand; ``fixed point outside`` marks demands whose fixed-point blocking
        lies outside the simulation's interval. Ends with the caution text.
    """
    c = comparison
    level = f"{100 * c.confidence:g}%"
    headers = ["demand", "target", "fixed point", "simulated", f"{level} interval"]
    if c.exact is not None:
        headers.append("exact")
    headers.append("flag")
    rows = []
    for i, did in enumerate(c.demand_ids):
        lo, hi = c.interval[i]
        row = [did, fmt_prob(c.target[i]), fmt_prob(c.fixed_point[i]),
               fmt_prob(c.simulated[i]), f"{fmt_prob(lo)} - {fmt_prob(hi)}"]
        if c.exact is not None:
            row.append(fmt_prob(c.exact[i]))
        flags = []
        if c.outside[i]:
            flags.append("fixed point outside")
        if c.exact_outside is not None and c.exact_outside[i]:
            flags.append("exact outside")
        row.append(", ".join(flags))
        rows.append(row)
    n_flag = int(c.outside.sum())
    lines = [format_table(headers, rows), ""]
    if n_flag:
        lines.append(
            f"{n_flag} of {len(c.demand_ids)} demands: the fixed point lies outside the "
            f"simulation's {level} interval (by chance alone about "
            f"{100 * (1 - c.confidence):g}% of demands would be)."
        )
    else:
        lines.append(f"The fixed point lies within the simulation's {level} interval "
                     "for every demand.")
    if c.exact is None:
        lines.append(f"No exact figures: {c.exact_message}")
    lines += ["", CAUTION]
    return "\n".join(lines)
