"""Plain-text report of a sizing plan (:class:`netdim.dimension.Plan`)."""

from __future__ import annotations

from netdim.report.text import CAUTION, fmt_num, fmt_prob, format_table

__all__ = ["format_plan"]


def format_plan(plan, max_rows=None) -> str:
    """The plan as text: links, demands (worst first), totals, saving, and the caution.

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
    order = sorted(range(len(ev.demand_ids)),
                   key=lambda i: -(ev.blocking[i] / ev.target[i] if ev.target[i] > 0 else 0))
    ver = getattr(plan, "verification", None)
    if ver is not None:
        from netdim.dimension.verify import judge

        verdict = judge(ver)
    demand_rows = []
    for i in order:
        row = [ev.demand_ids[i], fmt_num(float(ev.offered[i])), fmt_prob(float(ev.blocking[i]))]
        if ver is not None:
            row.append(_simulated(ver, i))
        row += [fmt_prob(float(ev.target[i])), "yes" if ev.met[i] else "NO"]
        if ver is not None:
            row.append({"met": "yes", "missed": "NO", "unclear": "unclear"}[verdict[i]])
        demand_rows.append(row)
    demand_headers = ["demand", "offered", "blocking", "target", "met"]
    if ver is not None:
        demand_headers = ["demand", "offered", "blocking", "simulated", "target", "met",
                          "met (sim.)"]
    out = []
    out.append(f"Plan ({plan.model} model): status {plan.status}")
    out.append("")
    out.append(_table(["link", "capacity", "modules", "cost", "utilisation", "baseline"],
                      link_rows, max_rows))
    out.append("")
    out.append(_table(demand_headers, demand_rows, max_rows))
    out.append("")
    out.append(f"total cost     {fmt_num(plan.cost)}")
    out.append(f"lower bound    {fmt_num(plan.lower_bound)}  ({plan.details.get('bound', '')})")
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
    if ver is not None:
        d = plan.details
        out.append(f"verified       by simulation, {d.get('verify_calls', '?')} calls, seed "
                   f"{d.get('verify_seed', '?')}, {d.get('verify_rounds', 0)} calibration "
                   f"rounds; unverified plan cost {fmt_num(d.get('unverified_cost', plan.cost))}")
    if ver is not None and (verdict == "unclear").any():
        out.append("unclear        simulated blocking above target, but the confidence "
                   "interval reaches it")
    if plan.message:
        out.append("")
        out.append(plan.message)
    for w in getattr(plan, "warnings", ()):
        out.append("warning: " + w)
    out.append("")
    out.append(CAUTION)
    return "\n".join(out)


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
