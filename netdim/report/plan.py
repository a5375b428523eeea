"""Plain-text report of a sizing plan (:class:`netdim.dimension.Plan`)."""

from __future__ import annotations

import numpy as np

from netdim.report.text import CAUTION, fmt_num, fmt_prob, format_table
from netdim.vocabulary import Verdict

__all__ = ["format_plan"]

_SAY = {Verdict.MET.value: "yes", Verdict.MISSED.value: "NO",
        Verdict.UNCLEAR.value: "unclear"}


def format_plan(plan, max_rows=None) -> str:
    """The plan as text: links, demands (worst first), totals, saving, and the caution.

    Sized for net value, only what that objective uses is shown: no targets, no verdicts
    against them and no lower bound on cost.

    Parameters
    ----------
    plan : Plan
    max_rows : int or None
        Most rows per table (None: all).
    """
    ev = plan.evaluation
    util = ev.utilisation
    link_rows = []
    for j, lid in enumerate(ev.link_ids):
        link_rows.append([
            lid,
            int(plan.capacities[j]),
            int(plan.modules[j]),
            fmt_num(float(plan.link_costs[j])),
            f"{100 * util[j]:.1f}%",
            int(plan.baseline_capacities[j]),
        ])
    net_value = plan.objective == "net-value"
    out = [f"Plan ({plan.model} model{', sized for net value' if net_value else ''}): "
           f"status {plan.status}", ""]
    out.append(_table(["link", "capacity", "modules", "cost", "utilisation", "baseline"],
                      link_rows, max_rows))
    out.append("")
    out.append(_net_value_demands(plan, max_rows) if net_value
               else _demands(plan, max_rows))
    out.append("")
    out.append(f"total cost     {fmt_num(plan.cost)}")
    if net_value:
        d = plan.details
        out.append(f"net value      {fmt_num(float(d.get('objective', 0.0)))}  (value carried "
                   "minus cost)")
        out.append(f"upper bound    {fmt_num(float(d.get('objective_bound', 0.0)))}  "
                   f"({d.get('bound', '')})")
        out.append(f"net value gap  {100 * plan.gap:.3f}%")
    else:
        out.append(f"lower bound    {fmt_num(plan.lower_bound)}  "
                   f"({plan.details.get('bound', '')})")
        out.append(f"gap            {100 * plan.gap:.3f}%")
    out.append(f"baseline cost  {fmt_num(plan.baseline_cost)}  (each link alone, target / hops)")
    out.append(f"saving         {fmt_num(plan.baseline_cost - plan.cost)} "
               f"({100 * plan.saving:.2f}%)")
    out.append(f"iterations     {plan.iterations}")
    out.append(f"solver         {plan.solver}")
    out.append(f"time           {plan.seconds:.2f} s")
    if plan.dropped_links:
        shown = ", ".join(plan.dropped_links[:20])
        more = f" and {len(plan.dropped_links) - 20} more" if len(plan.dropped_links) > 20 else ""
        out.append(f"not built      {shown}{more}")
    ver = plan.verification
    if ver is not None:
        d = plan.details
        margin = d.get("verify_margin")
        margin_text = "" if margin is None else f", margin {100 * margin:g}%"
        rounds = int(d.get("verify_rounds", 0))
        out.append(f"verified       by simulation, {d.get('verify_calls_last', '?')} calls in "
                   f"the last run, seed {d.get('verify_seed', '?')}"
                   f"{margin_text}, {rounds} calibration round{'' if rounds == 1 else 's'}; "
                   f"unverified plan cost {fmt_num(d.get('unverified_cost', plan.cost))}")
        verdict = ver.verdicts()
        counts = {v: int(np.sum(verdict == v)) for v in _SAY}
        out.append(f"in simulation  {counts['met']} met, {counts['unclear']} unclear, "
                   f"{counts['missed']} missed (met: the whole interval at or below the "
                   "target)")
        if counts["unclear"]:
            out.append("unclear        the simulated interval contains the target even after "
                       "the longest run: read these as about at target")
    if not net_value and plan.gap > 0.01 and plan.lower_bound > 0:
        out.append("about the gap  " + _gap_words(plan))
    elif not net_value and str(plan.details.get("bound", "")).startswith("no lower bound"):
        out.append("about the gap  no lower bound is proven under this model, so the gap "
                   "says nothing about how far this plan is from the least cost")
    if plan.message:
        out.append("")
        out.append(plan.message)
    for w in plan.warnings:
        out.append("warning: " + w)
    out.append("")
    out.append(CAUTION)
    return "\n".join(out)


def _gap_words(plan):
    """What a gap means, in plain words."""
    more = 100 * (plan.cost - plan.lower_bound) / plan.lower_bound
    if str(plan.details.get("bound", "")).startswith("least cost"):
        return (f"the lower bound is the least cost under the {plan.model} model; this plan "
                f"costs {more:.1f}% more" + (", added to pass the simulation"
                                             if plan.verification is not None else ""))
    text = (f"the least-cost plan costs between the lower bound and this plan's cost, so this "
            f"plan costs at most {more:.1f}% more than it")
    if plan.network is not None and plan.network.routing.policy == "alternate":
        text += ("; under alternate routing the bound is weak, so a large gap says little "
                 "about how far the plan really is from the least cost")
    return text


def _demands(plan, max_rows):
    ev = plan.evaluation
    ver = plan.verification
    verdict = ver.verdicts() if ver is not None else None
    order = sorted(range(len(ev.demand_ids)),
                   key=lambda i: -(ev.blocking[i] / ev.target[i] if ev.target[i] > 0 else 0))
    rows = []
    model_verdict = ev.verdicts()
    for i in order:
        row = [ev.demand_ids[i], fmt_num(float(ev.offered[i])), fmt_prob(float(ev.blocking[i]))]
        if ver is not None:
            row.append(_simulated(ver, i))
        row += [fmt_prob(float(ev.target[i])), _SAY[str(model_verdict[i])]]
        if ver is not None:
            row.append(_SAY[str(verdict[i])])
        rows.append(row)
    headers = ["demand", "offered", "blocking", "target", "met"]
    if ver is not None:
        headers = ["demand", "offered", "blocking", "simulated", "target", "met",
                   "met (sim.)"]
    return _table(headers, rows, max_rows)


def _net_value_demands(plan, max_rows):
    ev = plan.evaluation
    net = plan.network
    values = [None if net is None else d.value for d in (net.demands if net else ())]
    rows = []
    for i in np.argsort(-np.asarray(ev.blocking), kind="stable"):
        v = values[i] if i < len(values) else None
        rows.append([ev.demand_ids[i], fmt_num(float(ev.offered[i])),
                     fmt_prob(float(ev.blocking[i])), fmt_num(float(ev.carried[i])),
                     "" if v is None else fmt_num(float(v))])
    return _table(["demand", "offered", "blocking", "carried", "value"], rows, max_rows)


def _simulated(ver, i):
    """Simulated blocking with its interval, e.g. ``0.0281 [0.0262, 0.0300]``."""
    text = fmt_prob(float(ver.blocking[i]))
    if ver.blocking_interval is not None:
        lo, hi = ver.blocking_interval[i]
        text += f" [{fmt_prob(float(lo))}, {fmt_prob(float(hi))}]"
    return text


def _table(headers, rows, max_rows):
    if max_rows is not None and len(rows) > max_rows:
        extra = len(rows) - max_rows
        return format_table(headers, rows[:max_rows]) + f"\n... {extra} more rows"
    return format_table(headers, rows)
