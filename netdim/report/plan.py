"""Plain-text report of a sizing plan (:class:`netdim.dimension.Plan`)."""

from __future__ import annotations

import os

import numpy as np

from netdim.report.evaluation import csv_number, csv_text, write_text_atomic
from netdim.report.text import (
    caution_for,
    cost_column,
    fixed_column,
    format_table,
    interval_column,
    legend_lines,
    percent_column,
    prob_column,
)
from netdim.report.words import bound_plain
from netdim.vocabulary import Verdict

__all__ = ["format_plan", "plan_links_csv", "plan_demands_csv", "write_plan_csv",
           "PLAN_LINK_COLUMNS", "PLAN_DEMAND_COLUMNS"]

#: Columns of a plan's links.csv: the ``--json`` link fields, then the plan's evaluation
#: (the ``--csv`` contract: add columns, never rename).
PLAN_LINK_COLUMNS = ("id", "capacity", "modules", "cost", "utilisation", "baseline_capacity",
                     "installed", "offered", "carried", "blocking", "blocking_alternate")
#: Columns of a plan's demands.csv: the ``--json`` demand fields; a verified plan adds
#: ``simulated_blocking``, ``simulated_low``, ``simulated_high``, ``simulated_verdict``.
PLAN_DEMAND_COLUMNS = ("id", "offered", "carried", "blocking", "target", "met", "verdict")

_SAY = {Verdict.MET.value: "yes", Verdict.MISSED.value: "NO",
        Verdict.UNCLEAR.value: "unclear"}


_UNITS = {"telephone": "circuits", "parking": "places", None: "units"}


def format_plan(plan, max_rows=None, kind=None, seconds=None) -> str:
    """The plan as text: links, demands (worst first), totals, saving, and the caution.

    Sized for net value, only what that objective uses is shown: no targets, no verdicts
    against them and no lower bound on cost. One format per column, units on a second
    header line, a legend under each table; costs in the totals share the links' decimals.

    Parameters
    ----------
    plan : Plan
    max_rows : int or None
        Most rows per table (None: all).
    kind : {'telephone', 'parking'} or None
        The capacity unit's name and the caution's words.
    seconds : float or None
        The whole command's time, reading the file included (None: the sizing's own,
        ``plan.seconds``).
    """
    ev = plan.evaluation
    unit = _UNITS[kind]
    net_value = plan.objective == "net-value"
    out = [f"Plan ({plan.model} model{', sized for net value' if net_value else ''}): "
           f"status {plan.status}", ""]
    columns = [list(ev.link_ids), [str(int(c)) for c in plan.capacities],
               [str(int(m)) for m in plan.modules], cost_column(plan.link_costs),
               percent_column(ev.utilisation),
               [str(int(c)) for c in plan.baseline_capacities]]
    rows = list(zip(*columns, strict=True))
    if max_rows is not None and len(rows) > max_rows:
        # cut short: the busiest links first, where a planner looks first
        rows = [rows[j] for j in np.argsort(-np.asarray(ev.utilisation), kind="stable")]
        out[-1] = f"Links ({len(rows)}, busiest first, {max_rows} shown)"
    out.append(_table(["link", "capacity", "modules", "cost", "utilisation", "baseline"],
                      rows, max_rows,
                      units=["", f"({unit})", "(added)", "", "(%)", f"({unit})"]))
    baseline = ("each link sized alone by Erlang B for its demands" if net_value else
                "each link sized alone by Erlang B for its demands' target / hops")
    out.append(legend_lines(
        "modules (added): modules beyond those installed; cost: of those modules, plus the "
        "fixed cost of a link built new, in the network file's cost units;",
        f"baseline: {baseline}, the simple method the plan is compared with."))
    out.append("")
    out.append(_net_value_demands(plan, max_rows) if net_value
               else _demands(plan, max_rows))
    out.append("")
    money = cost_column([plan.cost, plan.lower_bound, plan.baseline_cost,
                         plan.baseline_cost - plan.cost])
    out.append(f"total cost     {money[0]}")
    if net_value:
        d = plan.details
        value = cost_column([float(d.get("objective", 0.0)),
                             float(d.get("objective_bound", 0.0))])
        out.append(f"net value      {value[0]}  (value carried minus cost)")
        out.append(f"upper bound    {value[1]}  ({d.get('bound', '')})")
        out.append(f"net value gap  {100 * plan.gap:.1f}%")
    else:
        out.append(f"lower bound    {money[1]}  ({bound_plain(plan.details.get('bound'))})")
        out.append(f"gap            {100 * plan.gap:.1f}%  ((cost - bound) / cost)")
    out.append(f"baseline cost  {money[2]}  (each link alone, target / hops)"
               if not net_value else f"baseline cost  {money[2]}  (each link alone)")
    out.append(f"saving         {money[3]} ({100 * plan.saving:.1f}% of the baseline cost)")
    out.append(f"iterations     {plan.iterations}")
    out.append(f"solver         {plan.solver}")
    out.append(f"time           {plan.seconds:.1f} s" if seconds is None else
               f"time           {seconds:.1f} s  (the whole command; sizing "
               f"{plan.seconds:.1f} s)")
    if plan.dropped_links:
        shown = ", ".join(plan.dropped_links[:20])
        more = f" and {len(plan.dropped_links) - 20} more" if len(plan.dropped_links) > 20 else ""
        out.append(f"not built      {shown}{more}")
    rules = getattr(plan, "rules", ())
    if rules:
        unmet = [r for r in rules if not r.met]
        out.append(f"design rules   {len(rules) - len(unmet)} of {len(rules)} met "
                   "(min_capacity, diversity)")
        for r in unmet:
            out.append(f"rule not met   {r.why}")
    ver = plan.verification
    if ver is not None:
        d = plan.details
        margin = d.get("verify_margin")
        margin_text = "" if margin is None else f", margin {100 * margin:g}%"
        rounds = int(d.get("verify_rounds", 0))
        unverified = cost_column([plan.cost, float(d.get("unverified_cost", plan.cost))])[1]
        out.append(f"verified       by simulation, {d.get('verify_calls_last', '?')} calls in "
                   f"the last run, seed {d.get('verify_seed', '?')}"
                   f"{margin_text}, {rounds} calibration round{'' if rounds == 1 else 's'}; "
                   f"unverified plan cost {unverified}")
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
    out.append(caution_for(kind))
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
    model_verdict = ev.verdicts()
    columns = [[ev.demand_ids[i] for i in order], fixed_column(ev.offered[order]),
               prob_column(ev.blocking[order])]
    headers = ["demand", "offered", "blocking", "target", "met"]
    units = ["", "(E)", "", "", ""]
    if ver is not None:
        units = ["", "(E)", "(model)", "", "(model)"]
        iv = ver.blocking_interval
        columns.append(interval_column(ver.blocking[order], iv[order]) if iv is not None
                       else prob_column(ver.blocking[order]))
        level = f"{100 * ver.confidence:g}% " if ver.confidence else ""
        headers.insert(3, "simulated")
        units.insert(3, f"({level}interval)")
    columns += [prob_column(ev.target[order]), [_SAY[str(model_verdict[i])] for i in order]]
    if ver is not None:
        columns.append([_SAY[str(verdict[i])] for i in order])
        headers.append("met")
        units.append("(sim.)")
    legend = ["offered: traffic in erlangs (E); worst first, by blocking over target."]
    if ver is not None:
        legend.append("met (sim.): yes when the whole interval lies at or below the target, "
                      "NO when wholly above, unclear when it contains the target.")
    return _table(headers, list(zip(*columns, strict=True)), max_rows, units=units) + "\n" + \
        legend_lines(*legend)


def _net_value_demands(plan, max_rows):
    ev = plan.evaluation
    net = plan.network
    values = [None if net is None else d.value for d in (net.demands if net else ())]
    order = np.argsort(-np.asarray(ev.blocking), kind="stable")
    vals = [values[i] if i < len(values) else None for i in order]
    shown = cost_column([v for v in vals if v is not None]) if any(
        v is not None for v in vals) else []
    it = iter(shown)
    columns = [[ev.demand_ids[i] for i in order], fixed_column(ev.offered[order]),
               prob_column(ev.blocking[order]), fixed_column(ev.carried[order]),
               ["" if v is None else next(it) for v in vals]]
    rows = list(zip(*columns, strict=True))
    return _table(["demand", "offered", "blocking", "carried", "value"], rows, max_rows,
                  units=["", "(E)", "", "(E)", "(per E)"]) + "\n" + legend_lines(
        "offered, carried: traffic in erlangs (E); value: of each erlang carried, in the "
        "network file's cost units; highest blocking first.")


def _table(headers, rows, max_rows, units=None):
    if max_rows is not None and len(rows) > max_rows:
        extra = len(rows) - max_rows
        return format_table(headers, rows[:max_rows], units=units) + f"\n... {extra} more rows"
    return format_table(headers, rows, units=units)


# -- CSV ------------------------------------------------------------------------------------
def plan_links_csv(plan) -> str:
    """links.csv of a plan, in link order: :data:`PLAN_LINK_COLUMNS`."""
    ev = plan.evaluation
    net = plan.network
    installed = ([link.installed for link in net.links] if net is not None
                 else [""] * len(ev.link_ids))
    rows = []
    for j, lid in enumerate(ev.link_ids):
        rows.append([lid, int(plan.capacities[j]), int(plan.modules[j]),
                     csv_number(plan.link_costs[j]), csv_number(ev.utilisation[j]),
                     int(plan.baseline_capacities[j]), installed[j],
                     csv_number(ev.link_offered[j]), csv_number(ev.link_carried[j]),
                     csv_number(ev.link_blocking[j]), csv_number(ev.link_blocking_alternate[j])])
    return csv_text(PLAN_LINK_COLUMNS, rows)


def plan_demands_csv(plan) -> str:
    """demands.csv of a plan, in demand order: :data:`PLAN_DEMAND_COLUMNS`, and for a
    verified plan the simulation's blocking, interval and verdict (met only when the whole
    interval lies at or below the target)."""
    ev = plan.evaluation
    ver = plan.verification
    header = list(PLAN_DEMAND_COLUMNS)
    if ver is not None:
        header += ["simulated_blocking", "simulated_low", "simulated_high", "simulated_verdict"]
        sim_verdict = ver.verdicts()
    verdict = ev.verdicts()
    rows = []
    for i, did in enumerate(ev.demand_ids):
        row = [did, csv_number(ev.offered[i]), csv_number(ev.carried[i]),
               csv_number(ev.blocking[i]), csv_number(ev.target[i]),
               "true" if verdict[i] == Verdict.MET.value else "false", str(verdict[i])]
        if ver is not None:
            iv = ver.blocking_interval
            lo, hi = (iv[i] if iv is not None else (ver.blocking[i], ver.blocking[i]))
            row += [csv_number(ver.blocking[i]), csv_number(lo), csv_number(hi),
                    str(sim_verdict[i])]
        rows.append(row)
    return csv_text(header, rows)


def write_plan_csv(plan, directory) -> tuple[str, str]:
    """Write a plan's ``links.csv`` and ``demands.csv`` into ``directory`` (created if
    needed), each through a temporary file renamed into place.

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
    l_path = os.path.join(directory, "links.csv")
    d_path = os.path.join(directory, "demands.csv")
    write_text_atomic(l_path, plan_links_csv(plan))
    write_text_atomic(d_path, plan_demands_csv(plan))
    return l_path, d_path
