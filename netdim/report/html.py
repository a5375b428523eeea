"""A report a planner can forward: one self-contained HTML file with a map, tables and plots.

:func:`evaluation_html` reports an :class:`~netdim.evaluate.result.Evaluation` of a network
at its capacities, :func:`plan_html` a :class:`~netdim.dimension.plan.Plan`; both return one
HTML string that needs no network access and no JavaScript (styles inline, pictures as inline
SVG from :mod:`netdim.report.figures`). Studies add their own :class:`~netdim.report.page.Section`
objects (``sections=``) or build a whole page with :func:`~netdim.report.page.html_document`;
:func:`~netdim.report.page.write_report` writes the file whole or not at all (all three are
re-exported here).

Every number cell carries its exact value in ``data-value`` (what ``to_dict()`` holds); the
text shows one format per column, units in the headers.
"""

from __future__ import annotations

import html as _html

import numpy as np

from netdim.dimension.choices import SizingChoices
from netdim.report import figures
from netdim.report.cells import (
    Cell,
    cost_cells,
    decimals_for,
    fixed_cells,
    int_cells,
    interval_cells,
    percent_cells,
    prob_cells,
    text_cell,
)
from netdim.report.day_html import day_bound_words, day_plan_facts, day_sections
from netdim.report.page import (
    Section,
    chart_section,
    facts_html,
    figure_html,
    html_document,
    table_html,
    write_report,
)
from netdim.report.words import (
    KINDS,
    bound_words,
    cautions,
    cautions_of_kind,
    check_kind,
    method_words,
    routing_words,
    verdict_counts_words,
)
from netdim.vocabulary import Verdict

__all__ = [
    "Section",
    "html_document",
    "evaluation_html",
    "plan_html",
    "evaluation_sections",
    "table_html",
    "figure_html",
    "chart_section",
    "combined_verdicts",
    "plan_costs",
    "cautions_section",
    "write_report",
]


def _e(text) -> str:
    return _html.escape(str(text), quote=True)


# -- verdicts and order ---------------------------------------------------------------------
_RANK = {Verdict.MISSED.value: 0, Verdict.UNCLEAR.value: 1, Verdict.MET.value: 2}


def combined_verdicts(ev) -> np.ndarray:
    """``ev.verdicts()``, made ``'unclear'`` where a second fixed-point solution disagrees.

    A bistable network has two solutions; a demand met in one and missed in the other
    cannot be promised either way.
    """
    v = ev.verdicts()
    if ev.alternative is None:
        return v
    other = ev.alternative.verdicts()
    return np.where(v == other, v, Verdict.UNCLEAR.value)


def _worst_first(verdict_sets, ratio_sets) -> np.ndarray:
    """Indices: missed before unclear before met (the worse of the given verdicts), then by
    blocking over target, largest first."""
    rank = np.min([[_RANK[x] for x in v] for v in verdict_sets], axis=0)
    ratio = np.max(ratio_sets, axis=0)
    return np.lexsort((-ratio, rank))


def _worse(*verdict_sets) -> np.ndarray:
    """Per demand, the worse of the given verdicts (missed, then unclear, then met)."""
    names = np.array(sorted(_RANK, key=_RANK.get))
    return names[np.min([[_RANK[x] for x in v] for v in verdict_sets], axis=0)]


def _ratio(blocking, target) -> np.ndarray:
    t = np.asarray(target, float)
    return np.asarray(blocking, float) / np.where(t > 0, t, np.inf)


def _verdict_cells(verdicts) -> list[Cell]:
    return [Cell(str(v), None, f"v-{v}") for v in verdicts]


def _between(network, n) -> list[Cell]:
    if network is None or len(network.demands) != n:
        return [text_cell("") for _ in range(n)]
    return [text_cell(" \u2013 ".join(d.between)) for d in network.demands]


def _ends(network, n) -> list[Cell]:
    if network is None or len(network.links) != n:
        return [text_cell("") for _ in range(n)]
    return [text_cell(" \u2013 ".join(link.ends)) for link in network.links]


def _pick(cells, order) -> list[Cell]:
    return [cells[i] for i in order]


# -- the sections of one evaluation ----------------------------------------------------------
def _demand_section(network, ev, decimals, sim=None, label=None) -> Section:
    """Demands worst first; ``sim`` is a simulated evaluation shown beside ``ev`` (a plan's
    verification); ``label`` names where the figures of ``ev`` come from (a plan's model)."""
    n = len(ev.demand_ids)
    own_iv = ev.blocking_interval
    verdict = combined_verdicts(ev)
    src = sim if sim is not None else ev
    level = f"{100 * src.confidence:g}% interval" if src.confidence else "interval"
    v_sets, r_sets = [verdict], [_ratio(ev.blocking, ev.target)]
    headers = ["demand", "between", "offered (E)"]
    cols = [[text_cell(d) for d in ev.demand_ids], _between(network, n),
            fixed_cells(ev.offered, 2)]
    if own_iv is not None:
        headers.append(f"blocking ({level})")
        cols.append(interval_cells(ev.blocking, own_iv, decimals))
    else:
        headers.append("blocking" if label is None else f"blocking ({label})")
        cols.append(prob_cells(ev.blocking, decimals))
    headers += ["target", "blocking / target",
                "verdict" if label is None else f"verdict ({label})"]
    cols += [prob_cells(ev.target, decimals), fixed_cells(r_sets[0], 2), _verdict_cells(verdict)]
    legend = ["Worst first: missed, then unclear, then met; within each, by blocking over "
              "target. E: erlangs of offered traffic (the mean number of calls or stays in "
              "progress if none were lost)."]
    if sim is not None:
        sv = sim.verdicts()
        v_sets.append(sv)
        r_sets.append(_ratio(sim.blocking, sim.target))
        headers += [f"simulated blocking ({level})", "verdict (simulation)"]
        cols += [interval_cells(sim.blocking, sim.blocking_interval, decimals)
                 if sim.blocking_interval is not None else prob_cells(sim.blocking, decimals),
                 _verdict_cells(sv)]
        legend.append("verdict (simulation): met when the whole interval lies at or below the "
                      "target, missed when it lies wholly above, unclear when it contains it.")
    elif own_iv is not None:
        legend.append("met: the whole interval lies at or below the target; missed: wholly "
                      "above; unclear: the interval contains the target, the run cannot tell.")
    if ev.alternative is not None:
        legend.append("Two solutions of the fixed-point equations were found; a demand met "
                      "in one and missed in the other is shown as unclear.")
    order = _worst_first(v_sets, r_sets)
    body = table_html("t-demands", headers, [_pick(c, order) for c in cols],
                      [ev.demand_ids[i] for i in order], legend)
    return Section("demands", f"Demands ({n}, worst first)", body)


def _link_section(network, ev, kind, decimals, plan=None) -> Section:
    unit = KINDS[kind]["unit"]
    n = len(ev.link_ids)
    cap = ev.capacity
    if plan is not None:
        modules, costs = plan.modules, plan.link_costs
    else:
        space = SizingChoices.from_network(network)
        modules = space.modules_for(cap)
        costs = space.link_costs(modules)
    installed = np.array([link.installed for link in network.links])
    module = np.array([link.module for link in network.links])
    mr = network.is_multirate
    load_unit = f"{unit} in use" if mr else "E"
    headers = ["link", "ends", f"capacity ({unit})", f"installed ({unit})",
               "module size", "modules added", "cost", f"offered ({load_unit})",
               f"carried ({load_unit})", "blocking", "utilisation (%)"]
    cols = [[text_cell(i) for i in ev.link_ids], _ends(network, n), int_cells(cap),
            int_cells(installed), int_cells(module), int_cells(modules), cost_cells(costs),
            fixed_cells(ev.link_offered, 2), fixed_cells(ev.link_carried, 2),
            prob_cells(ev.link_blocking, decimals), percent_cells(ev.utilisation)]
    alt = not np.allclose(ev.link_blocking, ev.link_blocking_alternate, rtol=1e-9, atol=0)
    if alt:
        headers.insert(10, "overflow blocking")
        cols.insert(10, prob_cells(ev.link_blocking_alternate, decimals))
    if plan is not None:
        headers.append(f"baseline ({unit})")
        cols.append(int_cells(plan.baseline_capacities))
    legend = [f"modules added: modules of 'module size' {unit} added beyond the installed "
              "capacity; cost: their cost, plus the fixed cost of a link built new, in the "
              "network file's cost units.",
              "blocking: what a first-choice call meets on the link; utilisation: carried "
              "load over capacity. " + KINDS[kind]["note"]]
    if alt:
        legend.append("overflow blocking: what an alternate-route call meets, with the "
                      "capacity kept back for first-choice calls (reservation).")
    if plan is not None:
        legend.append("baseline: each link sized alone with Erlang B for its demands' target "
                      "divided by their hops (the simple method the plan is compared with).")
    if plan is None and np.any((cap > installed) & ((cap - installed) % module != 0)):
        legend.append("Some capacities are not the installed capacity plus whole modules: "
                      "modules added are rounded up, and their cost with them.")
    unbuilt = cap == 0
    for k, h in enumerate(headers):
        if h in ("blocking", "overflow blocking", "utilisation (%)"):
            cols[k] = [Cell("not built", c.value) if unbuilt[j] else c
                       for j, c in enumerate(cols[k])]
    if unbuilt.any():
        legend.append("not built: a candidate link left at capacity 0 (drawn dashed on the "
                      "map); no call can use it.")
    # worst first among the built links; those not built at the end
    order = np.lexsort((-ev.utilisation, -ev.link_blocking, unbuilt))
    body = table_html("t-links", headers, [_pick(c, order) for c in cols],
                      [ev.link_ids[j] for j in order], legend,
                      ["unbuilt" if unbuilt[j] else "" for j in order])
    return Section("links", f"Links ({n}, worst first)", body)


def _map_section(network, ev, unit, measure) -> Section:
    value = ev.utilisation if measure == "utilisation" else ev.link_blocking
    svg = figures.network_map(network, ev.capacity, value, measure=measure, unit=unit)
    coords = all(s.x is not None and s.y is not None for s in network.sites)
    where = ("Sites at their coordinates from the network file." if coords else
             "The network file gives no coordinates for some sites: they are placed by a "
             f"spring layout (seed {figures.LAYOUT_SEED}), so distances mean nothing.")
    caption = (f"Links coloured by {measure}, line width by capacity (the number on each "
               f"link, {unit}); a dashed grey line is a candidate link not built. {where}")
    return Section("map", "Network map", figure_html(svg, caption, "fig-map"))


def _curve_section(network, ev, unit, count) -> Section | None:
    used = np.flatnonzero(ev.capacity > 0)
    if not len(used) or count <= 0:
        return None
    pick = used[np.lexsort((-ev.link_blocking[used], -ev.utilisation[used]))][:count]
    iv = ev.link_blocking_interval
    svg = figures.erlang_curves(
        [ev.link_ids[j] for j in pick], ev.capacity[pick], ev.link_offered[pick],
        ev.link_blocking[pick], blocking_alternate=ev.link_blocking_alternate[pick],
        interval=None if iv is None else iv[pick], unit=unit)
    caption = ("The busiest links by utilisation. Each curve is Erlang's loss formula for "
               "the link's capacity; the dot is the load offered to the link and the blocking "
               "a first-choice call meets there in this run.")
    if ev.day is not None:
        caption += (" Over the day: the dot is the largest load offered to the link in the "
                    "day and the largest share of a period it turned first-choice calls "
                    "away (they need not fall in the same period; see the occupancy chart).")
    if network.routing.policy == "alternate":
        caption += (" With capacity kept back for first-choice calls, first-choice calls "
                    "meet less blocking than the curve and overflow calls (triangle) more.")
    if network.is_multirate:
        caption += (" Multi-rate traffic: the curve is for calls of one unit; wider calls "
                    "meet more blocking than it shows.")
    return Section("curves", "Blocking against offered load",
                   figure_html(svg, caption, "fig-curves"))


def _decimals(network, ev) -> int:
    return decimals_for(ev.target)


def evaluation_sections(network, ev, *, kind=None, seed=None, measure="utilisation",
                        curves=4) -> list[Section]:
    """The sections of an evaluation's report: summary, map, demands, links, curves,
    assumptions and cautions (what :func:`evaluation_html` lays out)."""
    check_kind(kind)
    unit = KINDS[kind]["unit"]
    dec = _decimals(network, ev)
    verdict = combined_verdicts(ev)
    worst = _worst_first([verdict], [_ratio(ev.blocking, ev.target)])
    facts = [("result", verdict_counts_words(verdict))]
    if len(worst):
        i = int(worst[0])
        facts.append(("worst demand", f"{ev.demand_ids[i]}: blocking "
                      f"{prob_cells([ev.blocking[i]], dec)[0].text} against target "
                      f"{prob_cells([ev.target[i]], dec)[0].text}"))
    if len(ev.link_ids):
        j = int(np.argmax(ev.utilisation))
        facts.append(("busiest link", f"{ev.link_ids[j]}: {100 * ev.utilisation[j]:.1f}% of "
                      f"{int(ev.capacity[j])} {unit} in use"))
    facts.append(("method", method_words(ev, seed)))
    out = [Section("summary", "Summary", facts_html(facts)),
           _map_section(network, ev, unit, measure),
           _demand_section(network, ev, dec),
           _link_section(network, ev, kind, dec)]
    out += day_sections(network, ev, kind=kind, decimals=dec)
    curve = _curve_section(network, ev, unit, curves)
    if curve is not None:
        out.append(curve)
    return out


def _assumptions(network, ev, seed, extra=()) -> Section:
    pairs = [("method", method_words(ev, seed)), ("routing", routing_words(network))]
    pairs += list(extra)
    pairs += [(f"warning {k + 1}", w) for k, w in enumerate(ev.warnings)]
    if ev.message:
        pairs.append(("evaluation", ev.message))
    return Section("assumptions", "Assumptions", facts_html(pairs))


def _cautions(network, kind, evs) -> Section:
    return cautions_section(kind, network, evs)


def cautions_section(kind=None, network=None, evaluations=()) -> Section:
    """The cautions as a section: the general one and those of ``kind``; with a network
    and its evaluations, those of the methods used too (a study's page ends with it)."""
    check_kind(kind)
    if network is None:
        items = cautions_of_kind(kind)
    else:
        items = cautions(network, kind, evaluations)
    return Section("cautions", "Cautions",
                   '<ul class="cautions">' + "".join(f"<li>{_e(c)}</li>" for c in items)
                   + "</ul>")


def _check_same(network, ev, what):
    if tuple(ev.link_ids) != network.link_ids or tuple(ev.demand_ids) != network.demand_ids:
        raise ValueError(f"report: the {what} is not of network '{network.name}' "
                         "(its links or demands differ)")


def evaluation_html(network, evaluation, *, title=None, kind=None, seed=None, source=None,
                    measure="utilisation", curves=4, sections=()) -> str:
    """The HTML report of an evaluation of ``network`` at its capacities.

    Parameters
    ----------
    network : Network
        The network evaluated (sites, ends and costs of the links).
    evaluation : Evaluation
        From :func:`netdim.evaluate` on ``network``.
    title : str, optional
        Default: the network's name.
    kind : {'telephone', 'parking'} or None
        Chooses the units' names and the cautions; None: general words for both.
    seed : int, optional
        Seed of a simulation, for the assumptions (an Evaluation does not keep it).
    source : str, optional
        The network file's path, shown under the title.
    measure : {'utilisation', 'blocking'}
        What colours the links on the map.
    curves : int
        Most links drawn in the blocking-against-load plot.
    sections : sequence of Section
        More sections (a study's tables and charts), placed before the assumptions.

    Returns
    -------
    str
        A complete, self-contained HTML document.

    Raises
    ------
    ValueError
        The evaluation is not of this network, or an unknown ``kind`` or ``measure``.
    NetdimError
        matplotlib is not installed.

    Examples
    --------
    One trunk group of 10 circuits offered 5 E against a 2 % target: its blocking is Erlang
    B's E(5, 10) = 0.0184 (checked with mpmath in the tests), so the page says it is met,
    and the telephone kind adds the caution on emergency-call capacity.

    >>> from netdim import evaluate, loads_network
    >>> net = loads_network('''
    ... name: Two hamlets
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10, cost_per_module: 1}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... ''')
    >>> page = evaluation_html(net, evaluate(net), kind="telephone")
    >>> page.startswith("<!DOCTYPE html>"), "The one demand meets its target." in page
    (True, True)
    >>> "emergency" in page.lower()
    True
    """
    _check_same(network, evaluation, "evaluation")
    body = evaluation_sections(network, evaluation, kind=kind, seed=seed, measure=measure,
                               curves=curves)
    body += list(sections)
    body += [_assumptions(network, evaluation, seed), _cautions(network, kind, [evaluation])]
    lead = verdict_counts_words(combined_verdicts(evaluation))
    if source:
        lead = f"{source}: {lead}"
    return html_document(title or network.name, body, lead=lead)


def plan_html(plan, *, network=None, title=None, kind=None, source=None,
              measure="utilisation", curves=4, sections=()) -> str:
    """The HTML report of a sizing plan.

    Parameters
    ----------
    plan : Plan
        From :func:`netdim.dimension`.
    network : Network, optional
        Default ``plan.network`` (the network the plan is for).
    title, kind, source, measure, curves, sections
        As :func:`evaluation_html`.

    Returns
    -------
    str
        A complete, self-contained HTML document.

    Raises
    ------
    ValueError
        No network to draw, a network the plan is not for, or an unknown ``kind`` or
        ``measure``.
    NetdimError
        matplotlib is not installed.

    Examples
    --------
    The least-cost plan for one group offered 5 E at a 2 % target keeps 10 circuits (Erlang B
    E(5, 9) = 0.0363 is above the target, E(5, 10) = 0.0184 below it, from mpmath in the
    tests); the parking kind adds the caution on parking provision and accessible spaces.

    >>> from netdim import dimension, loads_network
    >>> net = loads_network('''
    ... sites: [{id: ALD}, {id: BIR}]
    ... links: [{id: ALD-BIR, ends: [ALD, BIR], capacity: 10, cost_per_module: 1}]
    ... demands: [{between: [ALD, BIR], traffic: 5.0, target: 0.02}]
    ... ''')
    >>> plan = dimension(net)
    >>> [int(c) for c in plan.capacities]
    [10]
    >>> page = plan_html(plan, kind="parking")
    >>> "accessib" in page.lower(), "The one demand meets its target." in page
    (True, True)
    """
    net = network if network is not None else plan.network
    if net is None:
        raise ValueError("report: the plan carries no network; pass network=")
    _check_same(net, plan.evaluation, "plan")
    check_kind(kind)
    ev = plan.evaluation
    ver = plan.verification
    unit = KINDS[kind]["unit"]
    dec = _decimals(net, ev)
    # the summary promises only what both the model and the simulation support
    verdict = combined_verdicts(ev)
    if ver is not None:
        verdict = _worse(verdict, ver.verdicts())
    built = int((plan.capacities > 0).sum())
    money = plan_costs(plan)
    facts = [("status", plan.status), ("result", verdict_counts_words(verdict)),
             ("cost", money["cost"])]
    over_day = ev.day is not None
    if over_day:  # no bound is proved over the day: say so, and give the busy-hour way
        facts += day_plan_facts(plan)
    elif plan.status != "economic":
        facts.append(("lower bound", money["lower_bound"]))
        facts.append(("gap", f"{100 * plan.gap:.1f}%"))
    facts += [("baseline cost", money["baseline_cost"]),
              ("saving against the baseline", f"{100 * plan.saving:.1f}%"),
              ("links built", f"{built} of {len(plan.capacities)}"
               + (f" (not built: {', '.join(plan.dropped_links)})" if plan.dropped_links
                  else ""))]
    body = [Section("summary", "Summary", facts_html(facts)),
            Section("bound", "How good the plan is",
                    "".join(f"<p>{_e(p)}</p>" for p in (
                        day_bound_words(plan, money) if over_day
                        else bound_words(plan, net, money)))),
            _map_section(net, ev, unit, measure),
            _demand_section(net, ev, dec, sim=ver, label=f"{plan.model} model"),
            _link_section(net, ev, kind, dec, plan=plan)]
    body += day_sections(net, ev, kind=kind, decimals=dec)
    curve = _curve_section(net, ev, unit, curves)
    if curve is not None:
        body.append(curve)
    body += list(sections)
    d = plan.details
    extra = [("model", f"the plan meets its targets under the {plan.model} model"),
             ("solver", f"{plan.solver}, {plan.iterations} outer iterations, "
              f"{plan.seconds:.1f} s")]
    if ver is not None:
        extra.append(("verification", f"by simulation: {d.get('verify_calls', '?')} calls, "
                      f"seed {d.get('verify_seed', '?')}, {d.get('verify_rounds', 0)} "
                      "calibration rounds"))
    extra += [(f"plan warning {k + 1}", w) for k, w in enumerate(plan.warnings)]
    seed = d.get("verify_seed")
    assumptions = _assumptions(net, ev, None, extra)
    if ver is not None:
        assumptions = Section(assumptions.id, assumptions.title, assumptions.body + facts_html(
            [("simulation", method_words(ver, seed))]))
    body += [assumptions, _cautions(net, kind, [ev] + ([ver] if ver is not None else []))]
    lead = f"Plan: {plan.status}, cost {money['cost']}; " + \
        verdict_counts_words(verdict)
    if source:
        lead = f"{source}: {lead}"
    return html_document(title or f"{net.name}: plan", body, lead=lead)


def plan_costs(plan) -> dict:
    """The plan's cost, lower bound, baseline cost and (verified plans) unverified cost as
    text, in one format (:func:`~netdim.report.cells.cost_cells` over all of them)."""
    names = ["cost", "lower_bound", "baseline_cost"]
    values = [plan.cost, plan.lower_bound, plan.baseline_cost]
    if "unverified_cost" in plan.details:
        names.append("unverified_cost")
        values.append(float(plan.details["unverified_cost"]))
    return {n: c.text for n, c in zip(names, cost_cells(values), strict=True)}
