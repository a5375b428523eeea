"""The HTML sections of an evaluation over the day (issue 20).

An :class:`~netdim.evaluate.result.Evaluation` with ``day`` set (a network file with
``rates``) gets, in its report and in a plan's: a table of every demand's blocking by
period with its worst period and the share of the day's arrivals lost, a chart of every
link's occupancy over the day (mean, high point, capacity), and a table of the links' day
peaks. Every number cell carries in ``data-value`` the figure ``Evaluation.to_dict()``
holds (the ``--json`` contract), as the other report tables do.
"""

from __future__ import annotations

import numpy as np

from netdim.report.cells import Cell, cost_cells, fixed_cells, int_cells, prob_cells, text_cell
from netdim.report.day_figures import occupancy_chart
from netdim.report.day_text import clock
from netdim.report.page import Section, figure_html, table_html
from netdim.report.words import KINDS, check_kind

__all__ = ["day_sections", "day_demand_section", "day_link_section", "occupancy_section",
           "day_plan_facts", "day_bound_words",
           "PANELS"]

#: Most links drawn in the occupancy chart (the rest are named in its caption).
PANELS = 24


def _starts(r) -> np.ndarray:
    hours = np.asarray(r.period_hours, float)
    return np.cumsum(hours) - hours


def _is_sim(r) -> bool:
    return hasattr(r, "peak_blocking_interval")


def _level(r) -> str:
    return f"{100 * r.confidence:g}% interval"


def _iv_cells(values, intervals, decimals) -> list[Cell]:
    """Probabilities with their interval ends in ``data-low``/``data-high`` (the text shows
    the point only: a table of periods has no room for both)."""
    cells = prob_cells(values, decimals)
    iv = np.asarray(intervals, float)
    return [Cell(c.text, c.value, low=float(lo), high=float(hi))
            for c, (lo, hi) in zip(cells, iv, strict=True)]


def _with_interval(values, intervals, decimals) -> list[Cell]:
    """``0.0043 (0.0034-0.0052)`` as the demand table shows a simulated figure."""
    out = []
    for c, (lo, hi) in zip(prob_cells(values, decimals), np.asarray(intervals, float),
                           strict=True):
        text = f"{c.text} ({max(lo, 0.0):.{decimals}f}-{max(hi, 0.0):.{decimals}f})"
        out.append(Cell(text, c.value, low=float(lo), high=float(hi)))
    return out


def day_demand_section(network, ev, decimals) -> Section:
    """Per demand: target basis, worst period, its blocking, lost share, blocking by period."""
    r = ev.day
    starts = _starts(r)
    n, periods = r.blocking.shape
    sim = _is_sim(r)
    peak = np.asarray(r.peak_period, int)
    basis = list(network.day.target_basis)
    headers = ["demand", "target basis", "target", "worst period", "starts"]
    cols = [[text_cell(d) for d in ev.demand_ids], [text_cell(b) for b in basis],
            prob_cells(ev.target, decimals), int_cells(peak),
            [text_cell(clock(float(starts[p]))) for p in peak]]
    if sim:
        headers += [f"blocking there ({_level(r)})", f"lost share ({_level(r)})"]
        cols += [_with_interval(r.peak_blocking, r.peak_blocking_interval, decimals),
                 _with_interval(r.lost_fraction, r.lost_fraction_interval, decimals)]
    else:
        headers += ["blocking there", "lost share"]
        cols += [prob_cells(r.peak_blocking, decimals), prob_cells(r.lost_fraction, decimals)]
    for p in range(periods):
        headers.append(f"period {p} ({clock(float(starts[p]))})")
        if sim:
            cols.append(_iv_cells(r.blocking[:, p], r.blocking_interval[:, p], decimals))
        else:
            cols.append(prob_cells(r.blocking[:, p], decimals))
    hours = np.asarray(r.period_hours, float)
    legend = [f"{periods} periods of {hours[0]:g} h; period 0 starts at +0:00 (the start of "
              "the file's day). Blocking by period: the share of the period's arrivals "
              "turned away; worst period: the period with arrivals whose blocking is "
              "highest; lost share: the share of the day's arrivals turned away.",
              "target basis: what the demand's target applies to (peak: the worst period; "
              "day: the lost share); the demand table above shows that figure."]
    if sim:
        legend.append(f"Simulated over {r.days:,} days; each period's {_level(r)} is in the "
                      "cell's data-low and data-high attributes.")
    body = table_html("t-day-demands", headers, cols, list(ev.demand_ids), legend)
    return Section("day-demands", "Blocking over the day, per demand", body)


def day_link_section(network, ev, kind) -> Section:
    """Per link: capacity, the day's peak mean occupancy and when, the peak high point, the
    worst period's share of time full."""
    r = ev.day
    unit = KINDS[kind]["unit"]
    pct = f"{100 * r.quantile:g}%"
    peak_q = [int(np.max(q, initial=0)) for q in np.asarray(r.occupancy_quantile)]
    headers = ["link", f"capacity ({unit})", f"peak mean occupancy ({unit})", "at",
               f"peak {pct} point ({unit})", "worst period full"]
    cols = [[text_cell(i) for i in ev.link_ids], int_cells(r.capacity),
            fixed_cells(r.peak_occupancy, 2),
            [Cell(clock(float(x)), float(x)) for x in np.asarray(r.peak_time, float)],
            int_cells(peak_q),
            prob_cells(np.max(np.asarray(r.link_blocking), axis=1, initial=0.0), 4)]
    legend = [f"peak mean occupancy: the most {unit} in use on average at one time of the "
              f"day, and when (the cell's value: hours from the start); peak {pct} point: "
              f"the most {unit} in use that is not exceeded with probability {pct}, at the "
              "day's worst time; worst period full: the largest share of a period the link "
              "has every unit in use (what a first-choice arrival meets)."]
    body = table_html("t-day-links", headers, cols, list(ev.link_ids), legend)
    return Section("day-links", "Links over the day", body)


def occupancy_section(network, ev, kind, panels=PANELS) -> Section | None:
    """The chart of occupancy over the day, one panel per built link (at most ``panels``)."""
    r = ev.day
    unit = KINDS[kind]["unit"]
    built = np.flatnonzero(np.asarray(r.capacity) > 0)
    if not len(built) or panels <= 0:
        return None
    shown, left = built[:panels], built[panels:]
    svg = occupancy_chart([r.link_ids[j] for j in shown], r.times,
                          np.asarray(r.occupancy_mean)[shown],
                          np.asarray(r.occupancy_quantile)[shown],
                          np.asarray(r.capacity)[shown], level=r.quantile,
                          period_hours=r.period_hours, unit=unit)
    pct = f"{100 * r.quantile:g}%"
    steps = max(1, round((len(r.times) - 1) / max(1, len(r.period_hours))))
    how = (f"simulated over {r.days:,} days" if _is_sim(r) else
           f"computed ({ev.method})")
    caption = (f"{unit.capitalize()} in use over the day on each built link, {how}: the "
               f"mean (blue), the {pct} point (orange steps: exceeded with probability "
               f"{100 - 100 * r.quantile:g}% at that time) and the capacity (dashed red), "
               f"on a grid of {steps} points a period; faint lines are the period "
               "boundaries, hours from the start of the day.")
    if len(left):
        caption += (f" Not drawn ({len(left)} more links, see the table): "
                    + ", ".join(r.link_ids[j] for j in left) + ".")
    unbuilt = [r.link_ids[j] for j in np.flatnonzero(np.asarray(r.capacity) == 0)]
    if unbuilt:
        caption += " Not built (capacity 0): " + ", ".join(unbuilt) + "."
    return Section("day-occupancy", "Occupancy over the day",
                   figure_html(svg, caption, "fig-day-occupancy"))


def day_sections(network, ev, *, kind=None, decimals=4, panels=PANELS) -> list[Section]:
    """The day's sections of a report on ``ev`` (empty when ``ev.day`` is None): the
    occupancy chart, blocking by period per demand, the links' day peaks."""
    check_kind(kind)
    if getattr(ev, "day", None) is None:
        return []
    chart = occupancy_section(network, ev, kind, panels)
    out = [] if chart is None else [chart]
    return out + [day_demand_section(network, ev, decimals), day_link_section(network, ev, kind)]


# -- a plan sized over the day --------------------------------------------------------------
def _busy_hour(plan):
    d = plan.details
    bh = d.get("busy_hour_cost")
    return None if bh is None else float(bh), list(d.get("busy_hour_capacities", []))


def day_plan_facts(plan) -> list[tuple[str, str]]:
    """The summary lines a day plan has instead of a lower bound and a gap."""
    facts = [("lower bound", "none over the day (netdim's bounds are proved for busy-hour "
              "demand only)")]
    bh, caps = _busy_hour(plan)
    if bh is not None:
        more = f", {100 * (bh / plan.cost - 1):.1f}% more than this plan" if plan.cost > 0 \
            else ""
        facts.append(("busy-hour way", f"{cost_cells([bh])[0].text} (each demand at its "
                      f"largest rate x holding; capacities {', '.join(map(str, caps))}{more})"))
    return facts


def day_bound_words(plan, costs) -> list[str]:
    """What can be said of a day plan's cost (the words of
    :func:`~netdim.report.words.bound_words` for a plan sized over the day)."""
    out = []
    if plan.status == "infeasible":
        out.append("Some demands cannot meet their target over the day within the links' "
                   f"bounds; the plan shown is the best found. {plan.message}")
    text = (f"The plan costs {costs['cost']}. It was sized at each demand's busy-hour "
            f"traffic of the day, then evaluated over the day ({plan.model}): modules were "
            "added where a target was missed and taken away while every target still held")
    rounds = int(plan.details.get("verify_rounds", 0))
    if plan.status == "feasible" and plan.verification is None:
        text += (", so no single link can give up a module and keep every target under "
                 "that model.")
    else:
        text += "."
    out.append(text)
    out.append("No lower bound is claimed: netdim's bounds are proved for stationary "
               "(busy-hour) demand and do not hold for demand that varies over the day. A "
               "cheaper plan may exist.")
    bh, _ = _busy_hour(plan)
    if bh is not None and bh > 0:
        out.append(f"Sized the busy-hour way (each demand at its largest rate times its "
                   f"holding time, Erlang's formula) the network would cost "
                   f"{cost_cells([bh])[0].text}; this plan saves "
                   f"{100 * (1 - plan.cost / bh):.1f}% of it.")
    if plan.verification is not None:
        text = ("The plan was then simulated over the day; the demand table shows the "
                "simulated figures beside the model's")
        if rounds:
            text += (f" (after {rounds} calibration round{'' if rounds == 1 else 's'}: "
                     "sized again with tighter working targets where the simulation found "
                     f"a miss; the unchecked plan cost {costs.get('unverified_cost', '?')})")
        out.append(text + ".")
    return out
