"""The sentences of the HTML report: methods, routing, verdict counts, the bound and gap, and
the cautions, in words a reader who does not run netdim can follow.

A sentence states only what the figures support: "met" is said of the demands whose verdict
is met, a bound only where the plan carries one.
"""

from __future__ import annotations

import re

from netdim.report.text import caution_for
from netdim.vocabulary import Verdict

__all__ = [
    "KINDS",
    "check_kind",
    "verdict_counts_words",
    "method_words",
    "routing_words",
    "bound_words",
    "bound_plain",
    "cautions",
    "cautions_of_kind",
]

#: Kinds of network a report can speak of: the name of a capacity unit and a line saying what
#: it is. ``None``: any kind, in general words.
KINDS = {
    "telephone": {"unit": "circuits", "note": "circuits: trunks of a trunk group."},
    "parking": {"unit": "places", "note": "places: parking spaces, or seats on a shuttle "
                "(seats in use at once)."},
    None: {"unit": "units", "note": "units: what a link has a fixed number of (circuits, "
           "spaces, seats)."},
}

_KIND_CAUTIONS = {
    "telephone": (
        "The loads are busy-hour figures: more traffic than that (a local event, a failure "
        "elsewhere sending calls this way) meets more blocking than shown.",
        "A blocked call is taken as lost; callers who try again add load that these figures "
        "leave out.",
    ),
    "parking": (
        "Visitors are taken to arrive independently at a steady peak rate; arrivals bunched "
        "before a timetabled start or an event fill a park sooner than the figures say.",
        "A visitor who finds no space is counted as lost; in practice drivers circle or "
        "queue, adding road traffic that these figures leave out.",
        "Spaces kept for accessibility, permits or deliveries are not part of these figures: "
        "set them aside first.",
    ),
    None: (
        "Requests (calls, visits) are taken to arrive independently at a steady peak rate; "
        "bunched arrivals meet more blocking than shown.",
        "A request that finds no free unit is taken as lost, not queued or retried; retries "
        "add load that these figures leave out.",
    ),
}


def check_kind(kind) -> None:
    """Raise ValueError naming the valid kinds when ``kind`` is not one of them."""
    if kind not in KINDS:
        valid = ", ".join(repr(k) for k in KINDS)
        raise ValueError(f"kind: unknown kind {kind!r}; choose one of {valid}")


def _plural(n, word) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def verdict_counts_words(verdicts) -> str:
    """``'All 28 demands meet their target.'``, or how many miss and how many are unclear."""
    v = [str(x) for x in verdicts]
    n = len(v)
    missed = v.count(Verdict.MISSED.value)
    unclear = v.count(Verdict.UNCLEAR.value)
    if n == 1 and not missed and not unclear:
        return "The one demand meets its target."
    if n and not missed and not unclear:
        return f"All {_plural(n, 'demand')} meet their target."
    parts = []
    if missed:
        parts.append(f"{missed} of {n} demands miss their target")
    if unclear:
        parts.append(f"{unclear} of {n} cannot be judged (unclear)")
    met = n - missed - unclear
    return "; ".join(parts) + f"; {met} {'meets' if met == 1 else 'meet'} it." if parts else (
        "No demands.")


def method_words(ev, seed=None) -> str:
    """How the figures of an evaluation were obtained, in one sentence."""
    d = ev.details
    if ev.method == "fixed-point":
        text = (f"reduced-load approximation (Erlang fixed point): links taken as "
                f"independent, each offered the traffic thinned by the other links of its "
                f"routes; {ev.iterations} iterations, largest change at the last "
                f"{ev.residual:.1e}")
    elif ev.method == "peaked-fixed-point":
        text = (f"reduced-load approximation with the peakedness of overflow: each stream "
                f"offered to a link carries its mean and variance, overflow meets the "
                f"blocking of an equivalent random group's bursts; {ev.iterations} "
                f"iterations, largest change at the last {ev.residual:.1e}")
    elif ev.method == "conservative":
        text = ("conservative product bound: each link offered its whole un-thinned load, so "
                "the blocking is at or above the fixed point's")
    elif ev.method == "exact":
        states = d.get("states")
        text = "exact solution of the network's equilibrium"
        if states is not None:
            text += f" over {int(states):,} states"
        if d.get("solver"):
            text += f" ({d['solver']})"
    elif ev.method == "simulate":
        calls = d.get("calls")
        text = "event-driven simulation"
        if calls is not None:
            text += f" of {int(calls):,} calls"
        if d.get("batches"):
            text += f" in {int(d['batches'])} batches"
        if d.get("warmup"):
            text += f" after a warm-up of {int(d['warmup']):,}"
        text += f", {d.get('holding_law', 'exponential')} holding times"
        if ev.confidence is not None:
            text += f", {100 * ev.confidence:g}% confidence intervals"
        text += f", seed {seed}" if seed is not None else ", seed not recorded"
    elif ev.method.startswith("day-"):
        text = _day_method_words(ev, seed)
    else:
        text = ev.method
    if ev.status == "bistable":
        text += ("; two solutions of the equations were found (a bistable network): "
                 "the tables show the low-blocking one")
    return text


_DAY_METHODS = {
    "day-exact": "exact transient solution of the link's birth-death chain over the day "
                 "(uniformization)",
    "day-fpa": "time-stepped reduced-load approximation over the day: each link's carried "
               "load follows its differential equation closed with Erlang's formula, the "
               "links' fixed point solved at every step",
    "day-mol": "time-stepped approximation over the day by the modified offered load (the "
               "infinite-server equation, Erlang's formula at each time)",
}


def _day_method_words(ev, seed=None) -> str:
    """A day method (issue 20) in one sentence."""
    r = ev.day
    if ev.method != "day-simulate":
        return _DAY_METHODS.get(ev.method, ev.method)
    days = getattr(r, "days", None)
    text = "simulation over the day (arrivals at each period's rate)"
    if days:
        text += f" of {int(days):,} days"
    if ev.confidence is not None:
        text += f", {100 * ev.confidence:g}% confidence intervals"
    seed = seed if seed is not None else getattr(r, "seed", None)
    return text + (f", seed {seed}" if seed is not None else ", seed not recorded")


def routing_words(network) -> str:
    """The routing policy and its parameters."""
    r = network.routing
    if r.policy == "fixed":
        text = "fixed: every call takes its demand's first route, or is lost"
    else:
        text = ("alternate: a call tries its demand's routes in order and takes the first "
                "with room; an overflow call is refused where it would leave fewer free units "
                f"than are reserved (reservation {r.reservation} unless a link sets its own)")
    if any(d.routes_generated for d in network.demands):
        text += f"; routes generated up to {_plural(r.max_hops, 'link')}"
        if r.max_routes is not None:
            text += f", at most {r.max_routes} per demand"
    return text


def bound_words(plan, network, costs) -> list[str]:
    """Paragraphs on the plan's lower bound and gap, and what a large gap means.

    ``costs`` holds the plan's figures as the report shows them (``cost``, ``lower_bound``,
    and ``unverified_cost`` for a verified plan), so the words and the tables agree.
    """
    d = plan.details
    kind = bound_plain(d.get("bound")) or "no description"
    if plan.status == "economic":
        return [f"Sized for value carried minus cost: no blocking target is enforced, and "
                f"there is no lower bound on cost. Value carried minus cost is within "
                f"{100 * plan.gap:.1f}% of an upper bound on it ({kind})."]
    out = []
    if plan.status == "infeasible":
        out.append("Some demands cannot meet their target within the links' bounds; the plan "
                   f"shown is the best found and does not meet every target. {plan.message}")
    out.append(f"The plan costs {costs['cost']}. No plan meeting every target under the "
               f"{plan.model} model can cost less than {costs['lower_bound']} (lower bound: "
               f"{kind}). The gap, (cost - bound) / cost, is {100 * plan.gap:.1f}%: the most "
               "any such plan could save against this one.")
    if plan.verification is not None and "unverified_cost" in costs:
        out.append(f"The bound is for the {plan.model} model. The plan was then checked by "
                   "simulation and, where a demand missed there, sized again with tighter "
                   f"working targets (the unchecked plan cost {costs['unverified_cost']}).")
    if plan.status == "optimal-within-gap":
        out.append("The gap is within the solver's tolerance: no cheaper plan exists under "
                   "the model, to that tolerance.")
    elif network.routing.policy == "alternate":
        out.append("Under alternate routing the bound is weak: it comes from a relaxation "
                   "that cannot see how overflow traffic shares the links. A large gap there "
                   "says the bound is loose, not that the plan is dear; more time for the "
                   "bound can tighten it.")
    elif plan.gap > 0:
        out.append("A cheaper plan may exist, or the bound may be loose; the figures cannot "
                   "tell which. More solver time can narrow the gap.")
    return out


# How the sizing library names its lower bounds (Plan.details['bound']), in plain words.
_BOUNDS = (
    (r"MILP at least thinned loads A\(1 - t\)",
     "the least cost when each link carries only the least load it can see, its demands' "
     "traffic less all the loss their targets allow, A(1 - t)"),
    (r"MILP at un-thinned loads",
     "the least cost when each link is offered its demands' whole traffic, none lost on "
     "other links"),
    (r"MILP: capacity >= carried load, whole modules and fixed costs",
     "the least cost of capacity at least the load each link carries, in whole modules, "
     "with the fixed costs"),
    (r"loss-flow LP \((\d+) rounds, (\d+) cuts\)",
     r"a linear relaxation of the traffic carried and lost on every route and link (\1 "
     r"rounds, \2 cutting planes)"),
    (r"loss-flow MILP \((.*)\)",
     r"a relaxation of the traffic carried and lost on every route and link, in whole "
     r"modules (\1)"),
)


def bound_plain(kind) -> str:
    """A lower bound's description (``Plan.details['bound']``) in plain words; an unknown
    one as it is."""
    text = str(kind or "")
    for pattern, words in _BOUNDS:
        m = re.match(pattern, text)
        if m:
            return m.expand(words) + text[m.end():]
    return text


def cautions_of_kind(kind) -> list[str]:
    """The general caution and those of the network's kind (no method's)."""
    check_kind(kind)
    return [caution_for(kind), *_KIND_CAUTIONS[kind]]


def cautions(network, kind, evaluations) -> list[str]:
    """The cautions of a report: the general one, those of the network's kind, and those of
    the methods used."""
    out = cautions_of_kind(kind)
    methods = {ev.method for ev in evaluations}
    if "fixed-point" in methods and network.routing.policy == "alternate":
        out.append("Under alternate routing the fixed point treats overflow traffic as if it "
                   "arrived independently; overflow comes in bursts, so the fixed point tends "
                   "to understate blocking there. Check by simulation.")
    if "peaked-fixed-point" in methods:
        out.append("The peaked fixed point follows the bursts of overflow traffic but is still "
                   "an approximation: measured within 1.5x of simulation at normal load and "
                   "overload, about half the simulated blocking at light load (blocking near "
                   "1e-3). Check by simulation.")
    if any(ev.status == "bistable" for ev in evaluations):
        out.append("The network is bistable: its equations have two solutions, and traffic "
                   "can switch to the high-blocking one. More trunk reservation usually "
                   "removes the second solution.")
    day = [ev for ev in evaluations if getattr(ev, "day", None) is not None]
    if day:  # arrivals follow the profile's rates, not one steady peak rate
        out = [c.replace("at a steady peak rate", "at the rate of each period of the day "
                         "profile") for c in out]
        out.append("Demand varies over the day: the figures rest on the day profile of the "
                   "network file. Day profiles must be measured (counts by period, on "
                   "ordinary days); special days (events, holidays, term dates) differ and "
                   "need their own profile.")
    if methods & {"day-fpa", "day-mol"} and network.routing.policy == "alternate":
        out.append("Under alternate routing the day approximations are optimistic: overflow "
                   "between links comes in bursts they do not follow (on the bundled campus "
                   "day, worst-hour blocking up to 45% below the simulation's). Check by "
                   "simulation over the day.")
    elif methods & {"day-fpa", "day-mol"}:
        out.append("The day figures are an approximation of the day: the carried-load "
                   "method came within 15% of the exact chain on a park with a gentle wave, "
                   "but up to 39% below it on a park whose arrivals rise sharply. Check a "
                   "figure near its target by simulation over the day.")
    if methods & {"simulate", "day-simulate"}:
        out.append("Simulated figures carry sampling error: met means the whole confidence "
                   "interval lies at or below the target, at the stated level, not certainty.")
    if network.is_multirate:
        out.append("Some demands hold more than one unit per call; their blocking is higher "
                   "than that of one-unit calls on the same links.")
    return out
