"""netdim: end-to-end blocking and least-cost sizing of networks of shared, blocking resources.

Every public name is reachable as ``netdim.NAME`` and is loaded on first use, so that
``import netdim`` (and the command line) pays only for what it touches.

Loss formulas (one resource)
    erlang_b            E(A, n): probability that all n servers offered A erlangs are busy
    log_erlang_b        log E(A, n), also where E underflows
    log1m_erlang_b      log(1 - E(A, n)), also where E is near 1
    erlang_b_table      every E(A, 0..n) for each load
    servers_for         fewest servers with E(A, n) <= target
    traffic_for         most traffic with E(A, n) <= target
    erlang_b_dtraffic   dE/dA
    erlang_b_dservers   dE/dn (continuous extension)
    moe_servers         circuits by Moe's principle (value of carried traffic against cost)
    engset_time         Engset's time congestion (finite sources)
    engset_call         Engset's call congestion
    overflow_moments    mean and variance of a group's overflow (Riordan)
    equivalent_random   Wilkinson's equivalent random group of a peaked stream
    overflow_blocking   blocking of a final group offered overflow streams
    kaufman_roberts     blocking of each class on a multi-rate link
    reservation_link    blocking of each stream on a link with trunk reservation
    day_loss            blocking of one group over a day of varying arrival rates
    day_servers         fewest servers meeting a target over such a day

Model and files
    Site, Link, Route, Demand, Routing, Network    the immutable network model
    DayProfile          a network's arrival rates by period over the day
    read_network        read and validate a network file
    loads_network       the same from text
    write_network       write a network file (a network built in Python)
    write_plan          write a plan into the input file's text, only capacities changed
    read_topology       sites and links of a GraphML or GML topology
    import_topology     a network file from a topology and a traffic model

Evaluation
    evaluate            blocking of every demand: fixed point, conservative, exact, simulate
    Evaluation          its result
    METHODS             the evaluation methods
    FixedPoint          the reduced-load fixed point prepared once, for many capacities
    SimulationOptions   the simulation's options as one object
    compare_methods     two methods side by side on one network
    day_reduced_load    the fixed point over the day, period by period (evaluate's 'day')
    Comparison          its result
    Verdict, VERDICTS   met, missed or unclear: a demand against its target
    EvaluationStatus    how an evaluation's figures were obtained

Sizing
    dimension           least-cost capacities meeting every demand's target
    Plan                its result
    SizingOptions       the sizing's options as one object
    VerifyOptions       how a plan is checked by simulation and calibrated
    Bound, Baseline     the lower bound, and the plan of each link sized alone
    MODELS, SOLVERS, STATUSES                      the sizing models, MILP solvers, plan statuses
    OBJECTIVES          least cost to targets, or most value carried minus cost
    PlanStatus          a plan's status

Reports
    evaluation_html     one self-contained HTML page of an evaluation (needs netdim[report])
    plan_html           the same for a plan
    write_report        write such a page whole or not at all

Studies
    failure_study       each link (or site) failed in turn, traffic rerouted, evaluated
    growth_study        the plan year by year as traffic grows, capacity never falling
    compare_designs     designs for the same demands, each sized, side by side
    build_variant       a mesh, star, ring or two-tandem design from a network's sites
    headroom_study      the largest traffic multiplier the installed capacities carry
    survivable_plan     capacities for the intact network and every single-link failure

Errors
    NetdimError, NetworkFileError, ConvergenceError, InfeasibleError, ModelTooLargeError

Version
    __version__         the installed package's version

Examples
--------
>>> import netdim
>>> netdim.servers_for(10.0, 0.01)
18
>>> round(netdim.erlang_b(10.0, 18), 5)
0.00714
"""

from __future__ import annotations

import importlib
import sys
import types

#: Public name -> the module that defines it.
_EXPORTS = {
    **dict.fromkeys(
        ("erlang_b", "log_erlang_b", "log1m_erlang_b", "erlang_b_table", "servers_for",
         "traffic_for", "erlang_b_dtraffic", "erlang_b_dservers", "moe_servers"),
        "netdim.erlang"),
    **dict.fromkeys(("engset_time", "engset_call"), "netdim.engset"),
    **dict.fromkeys(("overflow_moments", "equivalent_random", "overflow_blocking"),
                    "netdim.overflow"),
    **dict.fromkeys(("kaufman_roberts", "reservation_link"), "netdim.linkmodels"),
    **dict.fromkeys(("Site", "Link", "Route", "Demand", "Routing", "Network", "DayProfile"),
                    "netdim.model"),
    **dict.fromkeys(("day_loss", "day_servers"), "netdim.transient"),
    "day_reduced_load": "netdim.daily_loads",
    **dict.fromkeys(("read_network", "loads_network", "write_network", "write_plan"),
                    "netdim.netfile"),
    **dict.fromkeys(("read_topology", "import_topology"), "netdim.topology"),
    **dict.fromkeys(("evaluate", "Evaluation", "METHODS", "FixedPoint", "SimulationOptions"),
                    "netdim.evaluate"),
    **dict.fromkeys(("Verdict", "VERDICTS", "EvaluationStatus", "PlanStatus"),
                    "netdim.vocabulary"),
    **dict.fromkeys(("compare_methods", "Comparison"), "netdim.evaluate.compare"),
    **dict.fromkeys(("dimension", "Plan", "MODELS", "SOLVERS", "STATUSES", "OBJECTIVES",
                     "SizingOptions", "VerifyOptions", "Bound", "Baseline"), "netdim.dimension"),
    **dict.fromkeys(("evaluation_html", "plan_html", "write_report"), "netdim.report.html"),
    **dict.fromkeys(("failure_study", "growth_study", "compare_designs", "headroom_study",
                     "survivable_plan", "build_variant"), "netdim.studies"),
    **dict.fromkeys(("NetdimError", "NetworkFileError", "ConvergenceError", "InfeasibleError",
                     "ModelTooLargeError"), "netdim.errors"),
}

__all__ = ["__version__", *_EXPORTS]

#: Public functions named like the subpackage that holds them.
_SHADOWED = ("evaluate", "dimension")


def __getattr__(name):
    """Load a public name on first use (PEP 562)."""
    if name == "__version__":
        from importlib import metadata  # the installed distribution is the one source

        try:
            value = metadata.version("netdim")
        except metadata.PackageNotFoundError:
            value = "0+unknown"
    elif name in _EXPORTS:
        value = getattr(importlib.import_module(_EXPORTS[name]), name)
    else:
        raise AttributeError(f"module 'netdim' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))


class _Package(types.ModuleType):
    """Keeps ``netdim.evaluate`` and ``netdim.dimension`` the functions: importing the
    subpackage of the same name would otherwise bind it over them (the import system sets
    the parent's attribute), and ``netdim.evaluate(network)`` would call a module."""

    def __setattr__(self, name, value):
        if name in _SHADOWED and isinstance(value, types.ModuleType):
            value = getattr(value, name)
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
