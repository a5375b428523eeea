"""Text of an evaluation over the day (issue 20): per demand the worst period and the lost
share, per link the occupancy over the day.

Printed after the common evaluation table, whose ``blocking`` column is then each demand's
figure on its ``target_basis``.
"""

from __future__ import annotations

import numpy as np

from netdim.report.text import CAUTION, fmt_num, fmt_prob, format_table

__all__ = ["day_text", "day_plan_text", "with_day_text", "day_check_text", "clock"]


def clock(hours: float) -> str:
    """Hours from the start of the day as ``+H:MM``."""
    minutes = int(round(hours * 60))
    return f"+{minutes // 60}:{minutes % 60:02d}"


def _iv(pair) -> str:
    return f"[{fmt_prob(float(pair[0]))}, {fmt_prob(float(pair[1]))}]"


def day_text(ev) -> str:
    """Tables of the day's figures of ``ev`` (an Evaluation with ``day`` set)."""
    r = ev.day
    hours = np.asarray(r.period_hours)
    starts = np.cumsum(hours) - hours
    sim = hasattr(r, "peak_blocking_interval")
    out = [f"Over the day ({len(hours)} periods of {fmt_num(float(hours[0]))} h; period 0 "
           "starts at +0:00)"]
    headers = ["demand", "worst period", "starts", "blocking there"]
    if sim:
        headers.append(f"{round(100 * r.confidence)}% interval")
    headers.append("lost share")
    if sim:
        headers.append(f"{round(100 * r.confidence)}% interval")
    rows = []
    for i, did in enumerate(ev.demand_ids):
        p = int(r.peak_period[i])
        row = [did, str(p), clock(float(starts[p])), fmt_prob(float(r.peak_blocking[i]))]
        if sim:
            row.append(_iv(r.peak_blocking_interval[i]))
        row.append(fmt_prob(float(r.lost_fraction[i])))
        if sim:
            row.append(_iv(r.lost_fraction_interval[i]))
        rows.append(row)
    out.append(format_table(headers, rows))
    out.append("")
    headers = ["link", "capacity", "peak mean occupancy", "at", "peak 95% point"
               if abs(r.quantile - 0.95) < 1e-12 else f"peak {100 * r.quantile:g}% point",
               "worst period full"]
    rows = []
    for j, lid in enumerate(ev.link_ids):
        rows.append([lid, str(int(r.capacity[j])), fmt_num(float(r.peak_occupancy[j])),
                     clock(float(r.peak_time[j])),
                     str(int(np.max(r.occupancy_quantile[j], initial=0))),
                     fmt_prob(float(np.max(r.link_blocking[j], initial=0.0)))])
    out.append(format_table(headers, rows))
    out.append("")
    out.append("Day profiles must be measured (counts by period, on ordinary days); special "
               "days (events, holidays, term dates) differ and need their own profile.")
    return "\n".join(out) + "\n"


def day_plan_text(plan_text: str, plan) -> str:
    """The plan report of a plan sized over the day: ``plan_text`` (the common report) with
    its lower-bound and gap lines replaced by what holds (no bound is proved over the day),
    then the day's table of the plan's evaluation."""
    out = []
    for line in plan_text.split("\n"):
        if line.startswith(("gap ", "about the gap")):
            continue
        if line.startswith("lower bound"):
            out.append("lower bound    none over the day (netdim's bounds are proved for "
                       "busy-hour demand only)")
            bh = plan.details.get("busy_hour_cost")
            if bh is not None:
                caps = ", ".join(str(c) for c in plan.details.get("busy_hour_capacities", []))
                out.append(f"busy-hour way  {fmt_num(float(bh))}  (max rate x holding per "
                           f"demand; capacities {caps})")
            continue
        out.append(line)
    return with_day_text("\n".join(out).rstrip("\n") + "\n", plan.evaluation)


def with_day_text(text: str, ev) -> str:
    """``text`` (a report ending with the caution) with the day's tables of ``ev`` put
    before the caution."""
    head, sep, tail = text.rpartition(CAUTION)
    if not sep:
        return text.rstrip("\n") + "\n\n" + day_text(ev)
    return head.rstrip("\n") + "\n\n" + day_text(ev) + "\n" + sep + tail


def day_check_text(cmp, title=None) -> str:
    """The day methods side by side (a :class:`~netdim.evaluate.day_compare.DayComparison`)."""
    out = [title] if title else []
    level = f"{round(100 * cmp.confidence)}%"
    out.append(f"Accuracy check over the day: each demand's figure on its target basis, "
               f"simulated over {cmp.days} days (seed {cmp.seed}) with {level} intervals; "
               f"verdicts by {cmp.verdict_method}")
    out.append("")
    methods = [m for m in cmp.figures if m != "day-simulate"]
    headers = ["demand", "basis", "target", "simulated", f"{level} interval"]
    headers += [m[4:] for m in methods] + ["verdict"]
    rows = []
    v = cmp.verdicts()
    for i, did in enumerate(cmp.demand_ids):
        row = [did, cmp.target_basis[i], fmt_prob(float(cmp.target[i])),
               fmt_prob(float(cmp.figures["day-simulate"][i])), _iv(cmp.interval[i])]
        for m in methods:
            mark = "" if cmp.inside(m)[i] else " *"
            row.append(fmt_prob(float(cmp.figures[m][i])) + mark)
        row.append(str(v[i]))
        rows.append(row)
    out.append(format_table(headers, rows))
    out.append("")
    out.append("* outside the simulation's interval")
    for w in cmp.warnings:
        out.append(f"warning: {w}")
    out.append("")
    out.append(CAUTION)
    return "\n".join(out) + "\n"
