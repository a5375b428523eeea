"""Text form of a :class:`~netdim.evaluate.compare.Comparison`."""

from __future__ import annotations

from netdim.report.evaluation import VERDICT_TEXT, plural, verdict_summary
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
        One row per demand with its verdict (by the exact method where it applies, else by
        the simulation's interval); the flag column says ``fixed point outside`` where the
        fixed point lies outside the simulation's interval, and ``no blocked calls seen``
        where the simulation saw no loss (its interval is then the exact binomial one).
        Then the counts of flags and verdicts, the seed, and the caution text.
    """
    c = comparison
    level = f"{100 * c.confidence:g}%"
    headers = ["demand", "target", "fixed point"]
    if c.peaked is not None:
        headers.append("peaked")
    headers += ["simulated", f"{level} interval"]
    if c.exact is not None:
        headers.append("exact")
    verdicts = c.verdicts() if c.evaluations else None
    if verdicts is not None:
        headers.append("verdict" + (" (exact)" if c.verdict_method == "exact" else ""))
    headers.append("flag")
    notes = c.notes()
    rows = []
    for i, did in enumerate(c.demand_ids):
        lo, hi = c.interval[i]
        row = [did, fmt_prob(c.target[i]), fmt_prob(c.fixed_point[i])]
        if c.peaked is not None:
            row.append(fmt_prob(c.peaked[i]))
        row += [fmt_prob(c.simulated[i]), f"{fmt_prob(lo)} - {fmt_prob(hi)}"]
        if c.exact is not None:
            row.append(fmt_prob(c.exact[i]))
        if verdicts is not None:
            row.append(VERDICT_TEXT[str(verdicts[i])])
        flags = []
        if c.outside[i]:
            flags.append("fixed point outside")
        if c.peaked_outside is not None and c.peaked_outside[i]:
            flags.append("peaked outside")
        if c.exact_outside is not None and c.exact_outside[i]:
            flags.append("exact outside")
        if notes[i]:
            flags.append(notes[i])
        row.append(", ".join(flags))
        rows.append(row)
    n_flag = int(c.outside.sum())
    n = len(c.demand_ids)
    lines = [format_table(headers, rows), ""]
    if n_flag:
        lines.append(
            f"{n_flag} of {plural(n, 'demand')}: the fixed point lies outside the "
            f"simulation's {level} interval (by chance alone about "
            f"{100 * (1 - c.confidence):g}% of demands would be)."
        )
    else:
        lines.append(f"The fixed point lies within the simulation's {level} interval "
                     f"for {'the one demand' if n == 1 else 'every demand'}.")
    if c.peaked is not None:
        n_pk = int(c.peaked_outside.sum())
        lines.append(f"The peaked fixed point (overflow's bursts followed) lies outside the "
                     f"interval for {n_pk} of {plural(n, 'demand')}.")
    quiet = sum(1 for x in notes if x)
    if quiet:
        lines.append(f"{plural(quiet, 'demand')}: the simulation saw no blocked call (or no "
                     "call); the interval is the exact binomial one for the calls simulated.")
    if verdicts is not None:
        lines += verdict_summary(c.demand_ids, verdicts,
                                 three_way=c.verdict_method == "simulate")
    if c.exact is None:
        lines.append(f"No exact figures: {c.exact_message}")
    sim = c.evaluations.get("simulate")
    if sim is not None and sim.details.get("seed") is not None:
        lines.append(f"Simulation seed {sim.details['seed']}: the same seed repeats the run.")
    lines += ["", CAUTION]
    return "\n".join(lines)
