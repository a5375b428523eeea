"""The HTML pages of the studies: failures, growth, compare, headroom.

Each ``*_page`` function takes a study's result (:mod:`netdim.studies`) and returns a
:class:`StudyPage`: a title, one lead sentence and the sections (the study's chart and its
table). The lead states only what the verdicts say (how many survive, fail, are unclear);
the cells hold the exact figures of the study's ``to_dict()`` in ``data-value``. The command
line writes the page with :func:`netdim.cli.report_cmd.write_sections_report`, which closes
it with the cautions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from netdim.report.cells import (
    Cell,
    cost_cells,
    decimals_for,
    fixed_cells,
    int_cells,
    percent_cells,
    prob_cells,
    text_cell,
)
from netdim.report.figures import comparison_chart, failure_chart, growth_chart, headroom_chart
from netdim.report.page import Section, facts_html, figure_html, table_html
from netdim.vocabulary import Verdict

__all__ = ["StudyPage", "failures_page", "growth_page", "compare_page", "headroom_page",
           "common_target"]

#: How a verdict after a failure reads on the page (the css class keeps the verdict).
_FAILURE_WORDS = {"met": "survives", "missed": "fails", "unclear": "unclear"}


@dataclass(frozen=True)
class StudyPage:
    """What a study's report holds: the page title, the lead sentence, the sections."""

    title: str
    lead: str
    sections: tuple


def common_target(network) -> float | None:
    """The one target every demand of ``network`` has, or None."""
    if network is None:
        return None
    targets = {float(d.target) for d in network.demands}
    return targets.pop() if len(targets) == 1 else None


def _plural(n, word, many=None) -> str:
    return f"{n} {word if n == 1 else (many or word + 's')}"


def _counts(verdicts, words) -> str:
    """``'2 survive, 1 fails, 0 unclear'`` from verdict strings."""
    v = [str(x) for x in verdicts]
    return ", ".join(f"{v.count(key)} {word}" for key, word in zip(
        ("met", "missed", "unclear"), words, strict=True))


def _verdict_cells(verdicts, words=None) -> list[Cell]:
    return [Cell((words or {}).get(str(v), str(v)), None, f"v-{v}") for v in verdicts]


def _num_or_text(values, cells_of, empty="-") -> list[Cell]:
    """Cells of the finite values formatted together; ``empty`` where a value is None."""
    ok = [v is not None and math.isfinite(v) for v in values]
    filled = cells_of(np.array([v if k else 0.0 for v, k in zip(values, ok, strict=True)],
                               float))
    return [c if k else text_cell(empty) for c, k in zip(filled, ok, strict=True)]


# -- failures -------------------------------------------------------------------------------
def failures_page(study, *, title=None) -> StudyPage:
    """The page of a :class:`~netdim.studies.failures.FailureStudy`.

    The chart: worst blocking after each failure (worst first) against the target of the
    demand that is worst; the table: one row per failure, as ``netdim failures``.
    """
    rows = study.rows
    n = len(rows)
    against = ("each demand's own target" if study.failure_target is None
               else f"a failure target of {study.failure_target:g}")
    verdicts = [str(r.verdict) for r in rows]
    met = verdicts.count(Verdict.MET.value)
    lead = (f"{met} of {_plural(n, 'single failure')} survived, judged against {against} "
            f"({_counts(verdicts, ('survive', 'fail', 'unclear'))}).")
    if study.not_converged:
        lead += f" Did not converge: {', '.join(study.not_converged)}."
    sections = []
    if n:
        targets = [_row_target(study, r) for r in rows]
        svg = failure_chart([r.element for r in rows], [r.worst_blocking for r in rows],
                            target=targets, missed=[len(r.over_target) for r in rows])
        caption = ("Worst demand blocking after each single failure, worst first; red where "
                   "it is over the target of that demand (the dashed line when every demand "
                   "has the same target), beside each bar the demands over their target. "
                   "A lost demand (no route left) counts as blocking 1.")
        sections.append(Section("failures", "Worst blocking after each failure",
                                figure_html(svg, caption, "fig-failures")))
    dec = decimals_for([t for r in (study.intact, *rows) for t in r.target] or [0.01])
    table_rows = (study.intact, *rows)
    ids = ["intact" if r.kind == "none" else r.element for r in table_rows]
    cols = [
        [text_cell("nothing (intact)" if r.kind == "none" else f"{r.kind} {r.element}")
         for r in table_rows],
        [text_cell(", ".join(r.lost) or "-") for r in table_rows],
        [text_cell(r.worst_demand or "-") for r in table_rows],
        prob_cells([r.worst_blocking for r in table_rows], dec),
        prob_cells([r.mean_blocking for r in table_rows], dec),
        int_cells([len(r.over_target) for r in table_rows]),
        _verdict_cells([str(r.verdict) for r in table_rows], _FAILURE_WORDS),
    ]
    table = table_html("t-failures", ["failed", "lost", "worst demand", "worst blocking",
                                      "mean blocking", "over target", "verdict"], cols, ids,
                       [f"Each row: the network with that element out of service, every "
                        f"demand rerouted over its remaining candidate routes and evaluated "
                        f"({study.method}); judged against {against}. The intact row is "
                        "judged against each demand's own target. lost: demands left with no "
                        "route; mean blocking: erlangs blocked over erlangs offered."])
    sections.append(Section("failure-table", "Failures, worst first", table))
    return StudyPage(title or f"{study.network}: single failures", lead, tuple(sections))


def _row_target(study, row) -> float:
    if study.failure_target is not None:
        return float(study.failure_target)
    if not row.lost and len(row.blocking):
        return float(row.target[int(np.argmax(row.blocking))])
    return float(row.target.min()) if len(row.target) else 0.0


# -- growth ---------------------------------------------------------------------------------
def growth_page(study, *, network=None, title=None) -> StudyPage:
    """The page of a :class:`~netdim.studies.growth.GrowthStudy`: cost, capacity and the
    worst blocking by year (chart), the years and each link's capacity by year (tables).

    ``network`` (optional) gives the demands' target for the chart's target line.
    """
    years = study.years
    verdicts = [str(y.verdict) for y in years]
    met = verdicts.count(Verdict.MET.value)
    lead = (f"{met} of {_plural(len(years), 'year')} of the growth plan meet every target "
            f"({_counts(verdicts, ('met', 'missed', 'unclear'))}); total cost "
            f"{_money(study.total_cost)}.")
    yr = [y.year for y in years]
    svg = growth_chart(yr, [y.cost for y in years],
                       capacity=[int(y.capacities.sum()) for y in years],
                       worst_blocking=[y.worst_blocking for y in years],
                       target=common_target(network))
    caption = ("Each year: the cost of what is added that year, the capacity in place at its "
               "end (all links; it never falls), and the worst demand blocking of that "
               f"year's plan ({study.model}).")
    sections = [Section("growth", "Growth by year", figure_html(svg, caption, "fig-growth"))]
    dec = decimals_for([common_target(network) or 0.01])
    disc = study.discount > 0
    money = cost_cells([y.cost for y in years])
    cols = [int_cells(yr), fixed_cells([y.offered for y in years], 2),
            int_cells([int(y.capacities.sum()) for y in years]),
            int_cells([int((y.added > 0).sum()) for y in years]), money]
    head = ["year", "offered (E)", "capacity (units)", "links grown", "cost"]
    if disc:
        cols.append(cost_cells([y.discounted_cost for y in years]))
        head.append(f"discounted cost ({100 * study.discount:g} % a year)")
    cols += [text_cell_list([y.worst_demand or "-" for y in years]),
             prob_cells([y.worst_blocking for y in years], dec),
             percent_cells([y.gap for y in years]),
             text_cell_list([y.status for y in years]),
             _verdict_cells(verdicts)]
    head += ["worst demand", "worst blocking", "gap (%)", "plan", "targets"]
    rates = f"{100 * study.rate:g} % a year"
    if study.rates:
        rates += f" ({len(study.rates)} demands at their own rate)"
    table = table_html("t-growth", head, cols, [str(y) for y in yr],
                       [f"Traffic grows {rates}; each year is sized on top of the year "
                        f"before, so capacity never falls (in place at the start: the file's "
                        f"{study.start}). cost: of that year's additions; links grown: links "
                        "given more capacity that year; gap: of that year's plan to its "
                        "lower bound."])
    sections.append(Section("growth-years", "The years", table))
    nxt = study.next_module_year()
    link_cols = [text_cell_list(study.link_ids), int_cells(study.start_capacities)]
    link_cols += [int_cells([int(y.capacities[j]) for j in range(len(study.link_ids))])
                  for y in years]
    link_cols.append([text_cell("-") if nxt[lid] is None else Cell(str(nxt[lid]), nxt[lid])
                      for lid in study.link_ids])
    links = table_html("t-growth-links", ["link", "start", *[f"year {y}" for y in yr],
                                          "next module"],
                       link_cols, list(study.link_ids),
                       ["Capacity of each link (units) in place at the start and at the end "
                        "of each year; next module: the first year the link needs more than "
                        "it had at the start."])
    sections.append(Section("growth-links", "Capacity by year", links))
    return StudyPage(title or f"{study.network}: growth plan", lead, tuple(sections))


def text_cell_list(texts) -> list[Cell]:
    return [text_cell(t) for t in texts]


def _money(x) -> str:
    return f"{x:,.0f}" if float(x).is_integer() else f"{x:,.2f}"


# -- compare --------------------------------------------------------------------------------
def compare_page(comparison, *, target=None, title=None) -> StudyPage:
    """The page of a :class:`~netdim.studies.compare.TopologyComparison`: the designs' cost
    and worst blocking side by side (chart) and the comparison table.

    ``target``: the demands' common target, drawn on the blocking panel.
    """
    rows = comparison.rows
    verdicts = [str(r.verdict) for r in rows]
    full = [r for r in rows if str(r.verdict) == Verdict.MET.value and not r.missing]
    lead = (f"{len(full)} of {_plural(len(rows), 'design')} meet every target under the "
            f"sizing model and carry every pair ({_counts(verdicts, ('met', 'missed', 'unclear'))}"
            "); ")
    lead += (f"the cheapest of them is {comparison.cheapest} at cost "
             f"{_money(next(r.cost for r in rows if r.name == comparison.cheapest))}."
             if comparison.cheapest else "none of them meets every target and carries every "
             "pair.")
    names = [r.name for r in rows]
    svg = comparison_chart(names, [r.cost for r in rows],
                           worst_blocking=[r.worst_blocking for r in rows], target=target)
    caption = ("Each design sized for the same demands: its cost (left) and the worst demand "
               "blocking of its plan (right; red over the target, the dashed line, when every "
               "demand has the same one).")
    sections = [Section("compare", "Designs side by side",
                        figure_html(svg, caption, "fig-compare"))]
    dec = decimals_for([target or 0.01])
    cols = [text_cell_list(names), cost_cells([r.cost for r in rows]),
            int_cells([r.capacity for r in rows]),
            int_cells([r.links_built for r in rows]), int_cells([r.links for r in rows]),
            text_cell_list([r.worst_demand or "-" for r in rows]),
            prob_cells([r.worst_blocking for r in rows], dec),
            prob_cells([r.mean_blocking for r in rows], dec),
            _num_or_text([r.to_dict()["cost_per_erlang"] for r in rows],
                         lambda v: fixed_cells(v, 2)),
            _num_or_text([r.failure_worst for r in rows], lambda v: prob_cells(v, dec)),
            text_cell_list([r.failure_element or "-" for r in rows]),
            percent_cells([r.gap for r in rows]),
            _verdict_cells(verdicts),
            text_cell_list([", ".join(r.missing) or "-" for r in rows])]
    head = ["design", "cost", "capacity (units)", "links built", "links offered", "worst demand",
            "worst blocking", "mean blocking", "cost per erlang", "worst failure blocking",
            "worst failure", "gap (%)", "targets", "pairs not carried"]
    against = ("each demand's own target" if comparison.failure_target is None
               else f"{comparison.failure_target:g}")
    table = table_html("t-compare", head, cols, names,
                       ["cost: of what the plan adds to the capacity already installed; "
                        "cost per erlang: per erlang carried; worst failure: the built link "
                        f"whose loss gives the highest blocking (judged against {against}); "
                        "gap: of the plan to its lower bound."])
    sections.append(Section("compare-table", "The designs", table))
    return StudyPage(title or "Designs compared", lead, tuple(sections))


# -- headroom -------------------------------------------------------------------------------
def headroom_page(study, *, title=None) -> StudyPage:
    """The page of a :class:`~netdim.studies.headroom.HeadroomStudy`: each demand's
    multiplier (bar chart) with the network's bracket, and the table."""
    u = study.uniform
    if u.multiplier is None:
        lead = ("Every target holds up to the largest multiplier tried (no limit found) with "
                "every demand grown together.")
    elif u.multiplier >= 1:
        lead = (f"Every target holds at {u.multiplier:.4f} times today's traffic (every "
                f"demand grown together) and some fails at {u.above:.4f} times; "
                f"{u.fails_first} fails first.")
    else:
        lead = (f"Some target already fails at today's traffic: targets hold only up to "
                f"{u.multiplier:.4f} times it; {u.fails_first} fails first.")
    # without the per-demand searches, one bar: every demand grown together
    # least headroom first (no limit found last), as the text table
    bars = sorted(study.per_demand, key=lambda h: math.inf if h.multiplier is None
                  else h.multiplier) or [u]
    svg = headroom_chart(["every demand together" if h.scope == "all" else h.scope
                          for h in bars],
                         [math.nan if h.multiplier is None else h.multiplier for h in bars],
                         bracket=(u.multiplier, u.above))
    caption = ("Each demand alone grown, least headroom first: the largest multiplier of its "
               "traffic at which every target still holds (hatched: no limit found). The "
               "band is the bracket of every demand grown together; the dotted line today's "
               "traffic.")
    sections = [Section("headroom", "Headroom of each demand",
                        figure_html(svg, caption, "fig-headroom"))]
    facts = [("every demand together: holds at", _times(u.multiplier)),
             ("fails at", _times(u.above)), ("fails first", u.fails_first or "-"),
             ("method", study.method), ("bracket within", f"{100 * study.tol:g} %")]
    body = facts_html(facts)
    scoped = (u, *study.per_demand)
    cols = [text_cell_list(["every demand together" if h.scope == "all" else h.scope
                            for h in scoped]),
            _num_or_text([h.multiplier for h in scoped], lambda v: fixed_cells(v, 4),
                         "unbounded"),
            _num_or_text([h.above for h in scoped], lambda v: fixed_cells(v, 4), "-"),
            text_cell_list([h.fails_first or "-" for h in scoped]),
            int_cells([h.evaluations for h in scoped])]
    body += table_html("t-headroom", ["grown", "holds at (x today)", "fails at (x today)",
                                      "fails first", "evaluations"], cols,
                       [h.scope for h in scoped],
                       ["holds at: the largest multiplier of today's traffic found at which "
                        "every target holds; fails at: one within the bracket's width above "
                        "it at which some target fails; fails first: the demand furthest "
                        "over its target there."])
    sections.append(Section("headroom-table", "Headroom", body))
    return StudyPage(title or f"{study.network}: headroom", lead, tuple(sections))


def _times(m) -> str:
    return "unbounded" if m is None else f"{m:.4f} x today's traffic"
