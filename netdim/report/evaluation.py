"""Text and CSV reports of an :class:`~netdim.evaluate.result.Evaluation`.

Both list demands and links worst first: demands that miss their target, then those the
simulation cannot call (unclear), then those that meet it, each group by blocking over
target; links by first-choice blocking, then by utilisation.
"""

from __future__ import annotations

import csv
import io
import os
import tempfile

import numpy as np

from netdim.report.text import (
    caution_for,
    fixed_column,
    format_table,
    interval_column,
    legend_lines,
    percent_column,
    prob_column,
    prob_format,
)
from netdim.vocabulary import Verdict

__all__ = [
    "demand_order",
    "link_order",
    "evaluation_text",
    "verdict_summary",
    "plural",
    "demands_csv",
    "links_csv",
    "write_csv",
    "csv_text",
    "write_text_atomic",
    "csv_number",
    "DEMAND_COLUMNS",
    "LINK_COLUMNS",
    "VERDICT_TEXT",
]

#: Columns of demands.csv (the ``--csv`` contract: add columns, never rename).
DEMAND_COLUMNS = ("id", "offered", "carried", "blocking", "target", "met", "verdict")
#: Columns of links.csv.
LINK_COLUMNS = ("id", "capacity", "offered", "carried", "blocking", "blocking_alternate",
                "utilisation")
#: How a verdict reads in a text table (a miss stands out).
VERDICT_TEXT = {Verdict.MET.value: "met", Verdict.MISSED.value: "MISSED",
                Verdict.UNCLEAR.value: "unclear"}
_RANK = {Verdict.MISSED.value: 0, Verdict.UNCLEAR.value: 1, Verdict.MET.value: 2}


def plural(n: int, word: str, many: str | None = None) -> str:
    """``'1 demand'``, ``'2 demands'``."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def demand_order(ev) -> np.ndarray:
    """Demand indices worst first: missed, unclear, met; each by blocking / target, descending."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(ev.target > 0, ev.blocking / np.where(ev.target > 0, ev.target, 1.0),
                         np.inf)
    rank = np.array([_RANK[v] for v in ev.verdicts()], dtype=int)
    # lexsort: last key is primary
    return np.lexsort((-ratio, rank))


def link_order(ev) -> np.ndarray:
    """Link indices worst first: by first-choice blocking, then utilisation, descending."""
    return np.lexsort((-ev.utilisation, -ev.link_blocking))


def verdict_summary(ids, verdicts, three_way=True) -> list[str]:
    """The summary lines of a set of verdicts: counts of each, then the missed and the
    unclear demands by name. ``three_way``: the verdicts come from intervals (simulation),
    so the count of unclear ones is given too."""
    n = len(ids)
    v = np.asarray(verdicts)
    missed = [i for i, x in zip(ids, v, strict=True) if x == Verdict.MISSED.value]
    unclear = [i for i, x in zip(ids, v, strict=True) if x == Verdict.UNCLEAR.value]
    if not missed and not unclear:
        if n == 1:
            return ["The 1 demand meets its target."]
        return [f"All {n} demands meet their targets."]
    met = n - len(missed) - len(unclear)
    counts = f"{met} met, {len(missed)} missed"
    if three_way or unclear:
        counts += f", {len(unclear)} unclear"
    out = [f"Of {plural(n, 'demand')}: {counts}."]
    if missed:
        out.append(f"missed: {', '.join(missed)}")
    if unclear:
        out.append(f"unclear (the confidence interval contains the target): "
                   f"{', '.join(unclear)}")
    return out


_UNITS = {"telephone": "circuits", "parking": "places", None: "units"}


def evaluation_text(ev, title=None, limit=None, kind=None, network=None) -> str:
    """The report the command line prints.

    One format per column (probabilities in one fixed or one scientific format, loads with
    two decimals, utilisation in percent with one), units on a second header line, a legend
    under each table.

    Parameters
    ----------
    ev : Evaluation
    title : str, optional
        First line (e.g. the network name and file).
    limit : int, optional
        Show at most this many demands and links (the worst); None: all.
    kind : {'telephone', 'parking'} or None
        The capacity unit's name and the caution's words.
    network : Network, optional
        The network evaluated (multi-rate links count their load in units in use).
    """
    out = []
    if title:
        out.append(title)
    head = f"method: {ev.method}"
    if ev.method in ("fixed-point", "peaked-fixed-point"):
        head += f", {ev.iterations} iterations, residual {ev.residual:.2g}"
    head += f", status: {ev.status}"
    out.append(head)
    if ev.message:
        out.append(ev.message)
    n_d, n_l = len(ev.demand_ids), len(ev.link_ids)
    out.append("")

    iv = ev.blocking_interval
    d_idx = demand_order(ev)[:limit]
    headers = ["demand", "offered", "blocking", "target", "verdict"]
    units = ["", "(E)", "", "", ""]
    if iv is not None:
        level = f"{100 * ev.confidence:g}%" if ev.confidence else ""
        units[2] = f"({level} interval)".replace("( ", "(")
        blocking = interval_column(ev.blocking[d_idx], iv[d_idx])
    else:
        blocking = prob_column(ev.blocking[d_idx])
    verdicts = ev.verdicts()
    columns = [[ev.demand_ids[i] for i in d_idx], fixed_column(ev.offered[d_idx]), blocking,
               prob_column(ev.target[d_idx]), [VERDICT_TEXT[str(verdicts[i])] for i in d_idx]]
    out.append(f"Demands ({n_d}, worst first)" + (f", worst {len(d_idx)} shown"
                                                  if len(d_idx) < n_d else ""))
    out.append(format_table(headers, list(zip(*columns, strict=True)), units=units))
    legend = ["offered: traffic in erlangs (E); worst first: missed, unclear, met, each by "
              "blocking over target."]
    if iv is not None:
        legend.append("met: the whole interval at or below the target; missed: wholly above; "
                      "unclear: the interval contains the target.")
    out.append(legend_lines(*legend))
    out.append("")

    l_idx = link_order(ev)[:limit]
    alt = not np.array_equal(ev.link_blocking, ev.link_blocking_alternate)
    unit = _UNITS[kind]
    # multi-rate: a link's load counts units in use, not calls
    load = "(in use)" if network is not None and network.is_multirate else "(E)"
    headers = ["link", "capacity", "offered", "carried", "blocking"]
    units = ["", f"({unit})", load, load, "(first choice)"]
    columns = [[ev.link_ids[j] for j in l_idx], [str(int(ev.capacity[j])) for j in l_idx],
               fixed_column(ev.link_offered[l_idx]), fixed_column(ev.link_carried[l_idx])]
    lb = ev.link_blocking[l_idx]
    if alt:
        la = ev.link_blocking_alternate[l_idx]
        fmt = prob_format(lb, la)
        columns += [[fmt(float(x)) for x in lb], [fmt(float(x)) for x in la]]
        headers.append("blocking")
        units.append("(overflow)")
    else:
        columns.append(prob_column(lb))
    headers.append("utilisation")
    units.append("(%)")
    columns.append(percent_column(ev.utilisation[l_idx]))
    out.append(f"Links ({n_l}, worst first)" + (f", worst {len(l_idx)} shown"
                                                if len(l_idx) < n_l else ""))
    out.append(format_table(headers, list(zip(*columns, strict=True)), units=units))
    legend = ["blocking (first choice): what a call meets on the link as its first route"
              + ("; (overflow): as an alternate route, with the reserved units kept back"
                 if alt else "") + "; utilisation: carried over capacity."]
    out.append(legend_lines(*legend))
    out.append("")

    out += verdict_summary(ev.demand_ids, verdicts, three_way=iv is not None)
    for w in ev.warnings:
        out.append(f"warning: {w}")
    if ev.alternative is not None:
        alt_ev = ev.alternative
        worst = int(np.argmax(alt_ev.blocking)) if len(alt_ev.blocking) else None
        if worst is not None:
            fmt = prob_format(alt_ev.blocking, ev.blocking)
            out.append(
                f"second solution: mean blocking {fmt(float(alt_ev.blocking.mean()))} "
                f"(worst: {alt_ev.demand_ids[worst]} {fmt(float(alt_ev.blocking[worst]))})"
                f" against {fmt(float(ev.blocking.mean()))} above"
            )
    out.append("")
    out.append(caution_for(kind))
    return "\n".join(out) + "\n"


def csv_text(header, rows) -> str:
    """CSV text: a header row, then the rows (cells as given), ``\\n`` line ends."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def csv_number(x) -> str:
    """A float as CSV writes it: the shortest text that reads back as the same double."""
    return repr(float(x))


_g = csv_number


def demands_csv(ev) -> str:
    """demands.csv text: DEMAND_COLUMNS (plus interval bounds for simulation), worst first.

    ``met`` is ``true`` only for the verdict ``met`` (for a simulation: the whole interval at
    or below the target); ``verdict`` gives ``met``, ``missed`` or ``unclear``.
    """
    header = list(DEMAND_COLUMNS)
    iv = ev.blocking_interval
    if iv is not None:
        header += ["blocking_low", "blocking_high"]
    carried = ev.carried
    verdicts = ev.verdicts()
    rows = []
    for i in demand_order(ev):
        row = [ev.demand_ids[i], _g(ev.offered[i]), _g(carried[i]), _g(ev.blocking[i]),
               _g(ev.target[i]), "true" if verdicts[i] == Verdict.MET.value else "false",
               str(verdicts[i])]
        if iv is not None:
            row += [_g(iv[i][0]), _g(iv[i][1])]
        rows.append(row)
    return csv_text(header, rows)


def links_csv(ev) -> str:
    """links.csv text: LINK_COLUMNS (plus interval bounds for simulation), worst first."""
    header = list(LINK_COLUMNS)
    iv = ev.link_blocking_interval
    if iv is not None:
        header += ["blocking_low", "blocking_high"]
    util = ev.utilisation
    rows = []
    for j in link_order(ev):
        row = [ev.link_ids[j], str(int(ev.capacity[j])), _g(ev.link_offered[j]),
               _g(ev.link_carried[j]), _g(ev.link_blocking[j]),
               _g(ev.link_blocking_alternate[j]), _g(util[j])]
        if iv is not None:
            row += [_g(iv[j][0]), _g(iv[j][1])]
        rows.append(row)
    return csv_text(header, rows)


def _umask() -> int:
    # os.umask can only be read by setting it; set it straight back
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_text_atomic(path, text):
    """Write ``text`` to ``path`` through a temporary file in the same directory.

    The file gets the mode an ordinary ``open(path, 'w')`` would give (0666 less the
    umask); ``mkstemp`` alone would leave it 0600.
    """
    directory = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".netdim-", suffix=".tmp", dir=directory)
    try:
        os.fchmod(fd, 0o666 & ~_umask())
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as f:
            f.write(text)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def write_csv(ev, directory) -> tuple[str, str]:
    """Write ``demands.csv`` and ``links.csv`` into ``directory`` (created if needed).

    Each file is written to a temporary file first and renamed, so a reader never sees a
    half-written file.

    Returns
    -------
    (str, str)
        Paths of the two files.

    Raises
    ------
    OSError
        The directory cannot be created or written.
    """
    os.makedirs(directory, exist_ok=True)
    d_path = os.path.join(directory, "demands.csv")
    l_path = os.path.join(directory, "links.csv")
    write_text_atomic(d_path, demands_csv(ev))
    write_text_atomic(l_path, links_csv(ev))
    return d_path, l_path
