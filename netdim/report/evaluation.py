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

from netdim.report.text import CAUTION, fmt_num, fmt_prob, format_table
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


def _interval(ev, i, attr):
    iv = getattr(ev, attr)
    if iv is None:
        return None
    return f"[{fmt_prob(float(iv[i][0]))}, {fmt_prob(float(iv[i][1]))}]"


def evaluation_text(ev, title=None, limit=None) -> str:
    """The report the command line prints.

    Parameters
    ----------
    ev : Evaluation
    title : str, optional
        First line (e.g. the network name and file).
    limit : int, optional
        Show at most this many demands and links (the worst); None: all.
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

    with_iv = ev.blocking_interval is not None
    d_idx = demand_order(ev)[:limit]
    headers = ["demand", "offered E", "blocking"]
    if with_iv:
        level = f"{round(100 * ev.confidence)}% interval" if ev.confidence else "interval"
        headers.append(level)
    headers += ["target", "verdict"]
    verdicts = ev.verdicts()
    rows = []
    for i in d_idx:
        row = [ev.demand_ids[i], fmt_num(float(ev.offered[i])), fmt_prob(float(ev.blocking[i]))]
        if with_iv:
            row.append(_interval(ev, i, "blocking_interval"))
        row += [fmt_prob(float(ev.target[i])), VERDICT_TEXT[str(verdicts[i])]]
        rows.append(row)
    out.append(f"Demands ({n_d}, worst first)" + (f", worst {len(d_idx)} shown"
                                                  if len(d_idx) < n_d else ""))
    out.append(format_table(headers, rows))
    out.append("")

    l_idx = link_order(ev)[:limit]
    alt = not np.array_equal(ev.link_blocking, ev.link_blocking_alternate)
    headers = ["link", "capacity", "load", "carried", "blocking"]
    if alt:
        headers.append("alt blocking")
    headers.append("utilisation")
    rows = []
    util = ev.utilisation
    for j in l_idx:
        row = [ev.link_ids[j], str(int(ev.capacity[j])), fmt_num(float(ev.link_offered[j])),
               fmt_num(float(ev.link_carried[j])), fmt_prob(float(ev.link_blocking[j]))]
        if alt:
            row.append(fmt_prob(float(ev.link_blocking_alternate[j])))
        row.append(f"{100 * util[j]:.1f}%")
        rows.append(row)
    out.append(f"Links ({n_l}, worst first)" + (f", worst {len(l_idx)} shown"
                                                if len(l_idx) < n_l else ""))
    out.append(format_table(headers, rows))
    out.append("")

    out += verdict_summary(ev.demand_ids, verdicts, three_way=with_iv)
    for w in ev.warnings:
        out.append(f"warning: {w}")
    if ev.alternative is not None:
        alt_ev = ev.alternative
        worst = int(np.argmax(alt_ev.blocking)) if len(alt_ev.blocking) else None
        if worst is not None:
            out.append(
                f"second solution: mean blocking {fmt_prob(float(alt_ev.blocking.mean()))} "
                f"(worst: {alt_ev.demand_ids[worst]} {fmt_prob(float(alt_ev.blocking[worst]))})"
                f" against {fmt_prob(float(ev.blocking.mean()))} above"
            )
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"


def _csv_text(header, rows) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def _g(x) -> str:
    return repr(float(x))


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
    return _csv_text(header, rows)


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
    return _csv_text(header, rows)


def _umask() -> int:
    # os.umask can only be read by setting it; set it straight back
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _write_atomic(path, text):
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
    _write_atomic(d_path, demands_csv(ev))
    _write_atomic(l_path, links_csv(ev))
    return d_path, l_path
