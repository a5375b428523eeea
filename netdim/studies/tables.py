"""Studies as text tables and CSV files (the command line prints these strings)."""

from __future__ import annotations

import csv
import io
import os
import tempfile

from netdim.report.text import CAUTION, fmt_prob, format_table

__all__ = ["frame", "diversity_text", "failures_text", "failures_csv", "growth_text",
           "growth_csv", "compare_text", "compare_csv", "headroom_text", "headroom_csv",
           "survivable_text", "write_csv", "verdict_word"]

#: How a verdict reads in a table (capitals where the figures say no).
_WORDS = {"met": "survives", "missed": "FAILS", "unclear": "unclear"}
#: How a verdict against the normal targets reads (a year, a design, the intact network).
_YEAR_WORDS = {"met": "met", "missed": "MISSED", "unclear": "unclear"}


def verdict_word(verdict, words=None) -> str:
    return (words or _WORDS)[str(verdict)]


def _names(ids, limit=3) -> str:
    ids = list(ids)
    if not ids:
        return "-"
    more = f" +{len(ids) - limit}" if len(ids) > limit else ""
    return ", ".join(ids[:limit]) + more


def failures_text(study, title=None) -> str:
    """The table ``netdim failures`` prints: one row per failure, worst first."""
    target = ("each demand's own target" if study.failure_target is None
              else f"a failure target of {fmt_prob(study.failure_target)}")
    out = [title or study.network, f"Single failures ({study.method}), judged against {target}.",
           ""]
    intact = study.intact
    out.append(f"Intact: worst {intact.worst_demand or '-'} {fmt_prob(intact.worst_blocking)}, "
               f"mean {fmt_prob(intact.mean_blocking)}, "
               f"{_YEAR_WORDS[str(intact.verdict)]} (each demand's own target).")
    out.append("")
    rows = []
    for r in study.rows:
        rows.append([f"{r.kind} {r.element}", _names(r.lost), r.worst_demand or "-",
                     fmt_prob(r.worst_blocking), fmt_prob(r.mean_blocking),
                     str(len(r.over_target)), verdict_word(r.verdict)])
    out.append(format_table(["failed", "lost", "worst demand", "worst", "mean",
                             "over target", "verdict"], rows, align="lllrrrl"))
    n = len(study.rows)
    ok = sum(r.survives for r in study.rows)
    out.append("")
    summary = f"{ok} of {n} failures survived"
    unclear = [r.element for r in study.rows if str(r.verdict) == "unclear"]
    if unclear:
        summary += f"; unclear: {_names(unclear, 8)}"
    out.append(summary + ".")
    if study.not_converged:
        out.append(f"did not converge: {_names(study.not_converged, 8)}")
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"


def failures_csv(study) -> tuple[list, list]:
    """Header and rows of ``failures.csv`` (worst first)."""
    header = ["kind", "element", "links", "lost", "ended", "worst_demand", "worst_blocking",
              "mean_blocking", "over_target", "verdict", "status"]
    rows = [[r.kind, r.element, " ".join(r.links), " ".join(r.lost), " ".join(r.ended),
             r.worst_demand or "", r.worst_blocking, r.mean_blocking,
             " ".join(r.over_target), str(r.verdict), r.status] for r in study.rows]
    return header, rows


def frame(header, rows):
    """The rows as a :class:`pandas.DataFrame` (pandas is optional: imported here only)."""
    try:
        import pandas as pd  # optional, heavy: only to_frame() needs it
    except ImportError:
        raise ImportError("to_frame() needs pandas (pip install pandas)") from None
    return pd.DataFrame(list(rows), columns=list(header))


def _csv_text(header, rows) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def write_csv(directory, name, header, rows) -> str:
    """Write ``directory/name`` (the directory made if needed) whole or not at all: through a
    temporary file in the same directory, so a file already there is never left half
    written. Returns the path."""
    os.makedirs(directory, exist_ok=True)
    path = os.path.join(directory, name)
    fd, tmp = tempfile.mkstemp(prefix=".netdim-", suffix=".tmp", dir=directory)
    try:
        mask = os.umask(0o022)
        os.umask(mask)
        os.fchmod(fd, 0o666 & ~mask)
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as f:
            f.write(_csv_text(header, rows))
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path



def _money(x) -> str:
    return f"{x:,.1f}"


def growth_text(study, title=None) -> str:
    """The tables ``netdim growth`` prints: the years, then each link's capacity by year."""
    rates = f"{100 * study.rate:g} % a year"
    if study.rates:
        rates += f" ({len(study.rates)} demands at their own rate)"
    out = [title or study.network,
           f"Growth plan ({study.model}), traffic {rates}, capacity never falling; "
           f"in place at the start: the file's {study.start}.", ""]
    disc = study.discount > 0
    rows = []
    for y in study.years:
        row = [str(y.year), f"{y.offered:.1f}", str(int(y.capacities.sum())),
               str(int((y.added > 0).sum())), _money(y.cost)]
        if disc:
            row.append(_money(y.discounted_cost))
        row += [y.worst_demand or "-", fmt_prob(y.worst_blocking), y.status,
                _YEAR_WORDS[str(y.verdict)]]
        rows.append(row)
    head = ["year", "offered", "capacity", "links grown", "cost"]
    if disc:
        head.append(f"discounted ({100 * study.discount:g} %)")
    head += ["worst demand", "worst", "plan", "targets"]
    out.append(format_table(head, rows, align="r" * (len(head) - 4) + "lrll"))
    total = f"Total cost {_money(study.total_cost)}"
    if disc:
        total += f", discounted {_money(study.total_discounted_cost)}"
    out += ["", total + ".", ""]
    nxt = study.next_module_year()
    rows = []
    for j, lid in enumerate(study.link_ids):
        caps = [str(int(study.start_capacities[j]))] + [str(int(y.capacities[j]))
                                                         for y in study.years]
        year = nxt[lid]
        rows.append([lid, *caps, "-" if year is None else str(year)])
    head = ["link", "start", *[f"y{y.year}" for y in study.years], "next module"]
    out.append(format_table(head, rows))
    out += ["", CAUTION]
    return "\n".join(out) + "\n"


def growth_csv(study) -> tuple[list, list]:
    """Header and rows of ``growth.csv``: one row per year and link."""
    header = ["year", "link", "capacity", "added", "year_cost", "year_discounted_cost",
              "year_status", "year_verdict"]
    rows = []
    for y in study.years:
        for j, lid in enumerate(study.link_ids):
            rows.append([y.year, lid, int(y.capacities[j]), int(y.added[j]), y.cost,
                         y.discounted_cost, y.status, str(y.verdict)])
    return header, rows


def compare_text(comparison, title=None) -> str:
    """The table ``netdim compare`` prints: one row per design, in the order given."""
    target = ("each demand's own target" if comparison.failure_target is None
              else f"{fmt_prob(comparison.failure_target)}")
    out = [title or "Designs compared", ""]
    rows = []
    for r in comparison.rows:
        fail = "-" if r.failure_worst is None else \
            f"{fmt_prob(r.failure_worst)} ({r.failure_element}), " \
            f"{r.failure_survivors}/{r.links_built} survived"
        cpe = "-" if r.carried <= 0 else f"{r.cost_per_erlang:.2f}"
        rows.append([r.name, _money(r.cost) + ("*" if r.installed else ""), str(r.capacity),
                     f"{r.links_built}/{r.links}",
                     fmt_prob(r.worst_blocking), fmt_prob(r.mean_blocking), cpe, fail,
                     f"{100 * r.gap:.1f}%", _YEAR_WORDS[str(r.verdict)]])
    out.append(format_table(["design", "cost", "capacity", "links built", "worst", "mean",
                             "cost/E", "worst single-link failure", "gap", "targets"],
                            rows, align="lrrrrrrrrl"))
    out.append("")
    if any(r.installed for r in comparison.rows):
        out.append("* cost of what the plan adds to the capacity already installed "
                   + ", ".join(f"({r.name}: {r.installed} units)" for r in comparison.rows
                               if r.installed) + ".")
    for r in comparison.rows:
        if r.missing:
            out.append(f"{r.name} carries no route for: {_names(r.missing, 8)}")
    cheapest = comparison.cheapest
    out.append(f"Cheapest meeting every target and carrying every pair: {cheapest}."
               if cheapest else "No design meets every target and carries every pair.")
    if any(r.failure_worst is not None for r in comparison.rows):
        out.append(f"Failures: each built link cut in turn, judged against {target}.")
    out += ["", CAUTION]
    return "\n".join(out) + "\n"


def compare_csv(comparison) -> tuple[list, list]:
    header = ["design", "cost", "capacity", "links_built", "links", "worst_demand",
              "worst_blocking", "mean_blocking", "carried", "cost_per_erlang",
              "failure_worst_blocking", "failure_element", "gap", "status", "verdict",
              "missing"]
    rows = []
    for r in comparison.rows:
        d = r.to_dict()
        rows.append([r.name, r.cost, r.capacity, r.links_built, r.links, r.worst_demand,
                     r.worst_blocking, r.mean_blocking, r.carried,
                     d["cost_per_erlang"], r.failure_worst,
                     r.failure_element or "", r.gap, r.status, str(r.verdict),
                     " ".join(r.missing)])
    return header, rows


def _times(m) -> str:
    return "unbounded" if m is None else f"x{m:.4f}"


def headroom_text(study, title=None, offered=None) -> str:
    """What ``netdim headroom`` prints: the uniform multiplier, then each demand alone."""
    u = study.uniform
    out = [title or study.network, f"Headroom of the installed capacities ({study.method}), "
           f"bracket within {100 * study.tol:g} %.", ""]
    if u.multiplier is None:
        out.append(f"Every target holds up to {MAX_SHOWN} times today's traffic (no limit "
                   "found).")
    else:
        out.append(f"Every target holds at {u.multiplier:.5f} times today's traffic and "
                   f"fails at {u.above:.5f} times; {u.fails_first} fails first.")
        if u.multiplier < 1:
            out.append("Some target already fails at today's traffic.")
    if study.per_demand:
        out.append("")
        rows = []
        for i, h in enumerate(study.per_demand):
            row = [h.scope]
            if offered is not None:
                row.append(f"{offered[i]:.2f}")
            row += [_times(h.multiplier), _times(h.above), h.fails_first or "-"]
            rows.append(row)
        rows.sort(key=lambda r: float("inf") if r[-3] == "unbounded" else float(r[-3][1:]))
        head = ["demand alone", *(["offered"] if offered is not None else []), "holds at",
                "fails at", "fails first"]
        out.append(format_table(head, rows, align="l" + "r" * (len(head) - 2) + "l"))
    out += ["", CAUTION]
    return "\n".join(out) + "\n"


#: The largest multiplier a headroom search tries (as shown).
MAX_SHOWN = "1e6"


def headroom_csv(study) -> tuple[list, list]:
    header = ["scope", "multiplier", "above", "fails_first", "evaluations"]
    rows = [[h.scope, h.multiplier, h.above, h.fails_first or "", h.evaluations]
            for h in (study.uniform, *study.per_demand)]
    return header, rows


def survivable_text(plan, title=None) -> str:
    """What ``netdim size --survive`` prints: capacities, costs, then the failures."""
    study = plan.failures
    out = [title or study.network,
           f"Survivable plan ({study.method}): every demand within "
           f"{fmt_prob(study.failure_target)} under any single-link failure, its own target "
           "when nothing fails.", ""]
    rows = [[lid, str(int(c))] for lid, c in zip(plan.link_ids, plan.capacities, strict=True)]
    out.append(format_table(["link", "capacity"], rows))
    out += ["", f"Cost {_money(plan.cost)} (intact plan {_money(plan.intact_cost)}, lower "
                f"bound {_money(plan.lower_bound)}); {plan.rounds} rounds of re-sizing.",
            f"Intact: {_YEAR_WORDS[str(plan.intact_verdict)]}; {plan.message}.", ""]
    body = failures_text(study, title="Single-link failures of this plan")
    out.append(body.rsplit("\n\n", 1)[0])
    out += ["", CAUTION]
    return "\n".join(out) + "\n"


def diversity_text(short, required) -> str:
    """The demands with fewer than ``required`` link-disjoint candidate routes."""
    if not short:
        return f"Every demand has at least {required} link-disjoint candidate routes."
    rows = [[d.demand, str(d.disjoint_routes) + ("" if d.exact else "+"),
             str(d.topology_bound)] for d in short]
    return (f"Demands with fewer than {required} link-disjoint candidate routes:\n"
            + format_table(["demand", "disjoint routes", "links allow"], rows))
