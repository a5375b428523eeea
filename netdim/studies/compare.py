"""Topology comparison: several designs for the same demands, each sized, side by side.

Each design is sized on its own by :func:`netdim.dimension.dimension` (same options), then
its plan is failed link by link (:func:`netdim.studies.failures.failure_study`) so that the
table also shows how each design stands a single cut. Demands are matched by their two
ends; a pair that some design does not carry is named in that design's row.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netdim.dimension import SizingOptions, dimension
from netdim.studies._judge import check_target, judge, overall
from netdim.studies._sweep import check_scheduler, check_workers, run_all
from netdim.studies.failures import failure_study
from netdim.studies.tables import compare_csv, frame
from netdim.vocabulary import Verdict

__all__ = ["DesignRow", "TopologyComparison", "compare_designs"]


@dataclass(frozen=True)
class DesignRow:
    """One design, sized.

    Attributes
    ----------
    name : str
    cost : float
        The plan's cost (of what it adds to installed capacity).
    capacity : int
        Units over all links.
    links_built, links : int
        Links with capacity > 0, and links the design offers.
    worst_demand : str
    worst_blocking, mean_blocking : float
        Worst demand blocking, and erlangs blocked over erlangs offered.
    carried : float
        Erlangs carried.
    gap : float
    status : str
    verdicts : tuple of str
        Per demand, the plan's verdict under the sizing model.
    failure_worst : float or None
        The worst blocking over every single-link failure of the plan (1.0 when some cut
        leaves a demand with no route); None when not studied.
    failure_element : str or None
        The link whose failure gives it.
    failure_survivors : int or None
        Of the built links, how many fail without any demand going over the failure
        target.
    missing : tuple of str
        Site pairs (``A-B``) that other designs carry and this one does not.
    installed : int
        Units already installed in the design's file (``cost`` is of what is added).
    """

    name: str
    cost: float
    capacity: int
    links_built: int
    links: int
    worst_demand: str
    worst_blocking: float
    mean_blocking: float
    carried: float
    gap: float
    status: str
    verdicts: tuple
    failure_worst: float | None = None
    failure_element: str | None = None
    failure_survivors: int | None = None
    missing: tuple = ()
    installed: int = 0

    @property
    def verdict(self) -> Verdict:
        if self.status == "infeasible":
            return Verdict.MISSED
        return overall(self.verdicts)

    @property
    def cost_per_erlang(self) -> float:
        """Cost per erlang carried (inf when nothing is carried)."""
        return self.cost / self.carried if self.carried > 0 else float("inf")

    def to_dict(self) -> dict:
        return {
            "name": self.name,
            "cost": self.cost,
            "capacity": self.capacity,
            "links_built": self.links_built,
            "links": self.links,
            "worst_demand": self.worst_demand,
            "worst_blocking": self.worst_blocking,
            "mean_blocking": self.mean_blocking,
            "carried": self.carried,
            "cost_per_erlang": (self.cost_per_erlang if np.isfinite(self.cost_per_erlang)
                                else None),
            "failure_worst_blocking": self.failure_worst,
            "failure_element": self.failure_element,
            "failure_survivors": self.failure_survivors,
            "gap": self.gap,
            "status": self.status,
            "verdict": str(self.verdict),
            "missing": list(self.missing),
            "installed": self.installed,
        }


@dataclass(frozen=True)
class TopologyComparison:
    """Designs side by side, in the order given.

    Attributes
    ----------
    rows : tuple of DesignRow
    failure_target : float or None
    """

    rows: tuple
    failure_target: float | None = None

    @property
    def cheapest(self) -> str | None:
        """The cheapest design that meets every target and carries every pair any design
        carries; None when no design does."""
        ok = [r for r in self.rows if r.verdict == Verdict.MET and not r.missing]
        return min(ok, key=lambda r: (r.cost, r.name)).name if ok else None

    @property
    def all_met(self) -> bool:
        return all(r.verdict == Verdict.MET for r in self.rows)

    def to_frame(self):
        """The table as a :class:`pandas.DataFrame` (needs pandas), the ``--csv`` columns."""
        return frame(*compare_csv(self))

    def to_dict(self) -> dict:
        """The JSON form (``netdim compare --json``; keys are added, never renamed)."""
        return {
            "designs": [r.to_dict() for r in self.rows],
            "cheapest": self.cheapest,
            "failure_target": self.failure_target,
            "all_met": self.all_met,
        }


def _pair(d) -> str:
    a, b = sorted(d.between)
    return f"{a}-{b}"


def _size(shared, task) -> DesignRow:
    """One design sized and failed (module level: a pool worker runs it)."""
    sizing, failure_target, failures = shared
    name, network = task
    plan = dimension(network, model=sizing.model, solver=sizing.solver,
                     mip_gap=sizing.mip_gap, time_limit=sizing.time_limit,
                     max_iter=sizing.max_iter, local_search=sizing.local_search,
                     bound_time=sizing.bound_time)
    ev = plan.evaluation
    caps = np.asarray(plan.capacities)
    worst = int(np.argmax(ev.blocking)) if len(ev.blocking) else 0
    offered = float(ev.offered.sum())
    row = dict(
        name=name, cost=float(plan.cost), capacity=int(caps.sum()),
        links_built=int((caps > 0).sum()), links=len(caps),
        worst_demand=ev.demand_ids[worst] if len(ev.blocking) else "",
        worst_blocking=float(ev.blocking[worst]) if len(ev.blocking) else 0.0,
        mean_blocking=float(ev.offered @ ev.blocking) / offered if offered > 0 else 0.0,
        carried=float(ev.carried.sum()), gap=float(plan.gap), status=str(plan.status),
        verdicts=tuple(judge(ev)), installed=int(sum(k.installed for k in network.links)))
    if failures:
        built = [lid for lid, c in zip(network.link_ids, caps, strict=True) if c > 0]
        study = failure_study(plan.network, links=built, target=failure_target,
                              method=sizing.model)
        if study.rows:
            top = max(study.rows, key=lambda r: r.worst_blocking)
            row.update(failure_worst=top.worst_blocking, failure_element=top.element,
                       failure_survivors=sum(r.survives for r in study.rows))
    return DesignRow(**row)


def compare_designs(designs, *, sizing=None, failure_target=None, failures=True, workers=1,
                    progress=None, scheduler=None) -> TopologyComparison:
    """Size each design and put the plans side by side.

    Parameters
    ----------
    designs : sequence of (str, Network)
        A name and a network per design (capacities are left to the sizer).
    sizing : SizingOptions, optional
        How every design is sized (objective ``'cost'``).
    failure_target : float, optional
        Target after a link failure (default: each demand's own).
    failures : bool
        Also fail each built link of each plan (the table's failure columns).
    workers : int
        Processes to size the designs on (1: in this process).
    scheduler : str or dask.distributed.Client, optional
        Run the pieces on a Dask cluster (its address) instead of a local pool; the result
        is the same (needs ``netdim[dask]``).
    progress : callable(fraction, message) or None

    Returns
    -------
    TopologyComparison

    Raises
    ------
    ValueError
        No design, two designs of the same name, bad options.

    References
    ----------
    .. [1] ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS
       objectives".

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> def one(cost):
    ...     return Network("one", (Site("A"), Site("B")),
    ...                    (Link("AB", ("A", "B"), cost_per_module=cost),),
    ...                    (Demand("AB", ("A", "B"), 10.0, routes=(Route((0,), (1.0,)),)),))
    >>> cmp = compare_designs([("cheap", one(1.0)), ("dear", one(2.0))], failures=False)
    >>> [(r.name, r.cost) for r in cmp.rows], cmp.cheapest
    ([('cheap', 18.0), ('dear', 36.0)], 'cheap')
    """
    designs = list(designs)
    if not designs:
        raise ValueError("designs: give at least one design")
    names = [n for n, _ in designs]
    dup = next((n for n in names if names.count(n) > 1), None)
    if dup is not None:
        raise ValueError(f"designs: two designs are named {dup!r}")
    sizing = SizingOptions() if sizing is None else sizing
    if sizing.objective != "cost":
        raise ValueError("sizing: designs are compared at least cost (objective 'cost')")
    failure_target = check_target("failure_target", failure_target)
    workers = check_workers(workers)
    scheduler = check_scheduler(scheduler)
    rows = run_all(_size, designs, shared=(sizing, failure_target, failures),
                   workers=workers, fork=False, progress=progress, what="designs sized",
                   scheduler=scheduler)
    pairs = [{_pair(d) for d in net.demands} for _, net in designs]
    every = set().union(*pairs)
    rows = [DesignRow(**{**r.__dict__, "missing": tuple(sorted(every - p))})
            for r, p in zip(rows, pairs, strict=True)]
    return TopologyComparison(rows=tuple(rows), failure_target=failure_target)
