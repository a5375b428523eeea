"""Text form of a :class:`~netdim.evaluate.compare.Comparison`."""

from __future__ import annotations

import os

import numpy as np

from netdim.report.evaluation import (
    VERDICT_TEXT,
    csv_number,
    csv_text,
    plural,
    verdict_summary,
    write_text_atomic,
)
from netdim.report.text import caution_for, format_table, prob_column, prob_format

__all__ = ["comparison_text", "comparison_csv", "write_comparison_csv", "COMPARISON_COLUMNS"]

#: Columns of comparison.csv: the ``--json`` demand fields, the interval in two columns
#: (``--csv`` contract: add columns, never rename).
COMPARISON_COLUMNS = ("id", "target", "fixed_point", "simulated", "interval_low",
                      "interval_high", "exact", "outside", "exact_outside", "verdict",
                      "offered_calls", "blocked_calls", "note", "peaked_fixed_point",
                      "peaked_outside")


def comparison_text(comparison, kind=None) -> str:
    """A table of the fixed-point, simulated and exact blocking per demand, with flags.

    Parameters
    ----------
    comparison : Comparison
    kind : {'telephone', 'parking'} or None
        The words of the caution.

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
    # one format per column; the interval's ends share one
    target, fixed, simulated = (prob_column(x) for x in (c.target, c.fixed_point,
                                                         c.simulated))
    exact = prob_column(c.exact) if c.exact is not None else None
    peaked = prob_column(c.peaked) if c.peaked is not None else None
    f = prob_format(np.asarray(c.interval, float))
    sep = " to " if "e" in f(0.5) else "-"
    for i, did in enumerate(c.demand_ids):
        lo, hi = c.interval[i]
        row = [did, target[i], fixed[i]]
        if peaked is not None:
            row.append(peaked[i])
        row += [simulated[i], f"{f(max(float(lo), 0.0))}{sep}{f(hi)}"]
        if exact is not None:
            row.append(exact[i])
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
    lines += ["", caution_for(kind)]
    return "\n".join(lines)


def comparison_csv(comparison) -> str:
    """comparison.csv: one row per demand, :data:`COMPARISON_COLUMNS`, the figures of
    ``comparison.to_dict()`` (empty where the JSON holds null or leaves a field out)."""
    rows = []
    for rec in comparison.to_dict()["demands"]:
        flat = dict(rec)
        flat["interval_low"], flat["interval_high"] = rec["interval"]
        row = []
        for key in COMPARISON_COLUMNS:
            v = flat.get(key)
            if v is None:
                row.append("")
            elif isinstance(v, bool):
                row.append("true" if v else "false")
            elif isinstance(v, float):
                row.append(csv_number(v))
            else:
                row.append(str(v))
        rows.append(row)
    return csv_text(COMPARISON_COLUMNS, rows)


def write_comparison_csv(comparison, directory) -> str:
    """Write ``directory/comparison.csv`` (directory created if needed) through a temporary
    file renamed into place; its path."""
    os.makedirs(directory, exist_ok=True)
    path = os.path.join(directory, "comparison.csv")
    write_text_atomic(path, comparison_csv(comparison))
    return path
