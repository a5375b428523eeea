"""Single-element failures: each link (or site) removed in turn, traffic rerouted, evaluated.

A failed link takes every candidate route over it away; each demand then uses its remaining
candidate routes in their order (under fixed routing the first remaining one becomes its
route). A demand left with no route is *lost*. A failed site takes every link at it; the
demands that start or end there are *ended* (no network can carry them) and are left out of
the verdict, while the others are judged as under a link failure.
"""

from __future__ import annotations

import json
import textwrap
from dataclasses import dataclass, field, replace

import numpy as np

from netdim._arrays import frozen
from netdim.errors import ConvergenceError
from netdim.evaluate import METHODS, evaluate, resolve_capacities
from netdim.studies._judge import SEVERITY, check_target, judge, overall
from netdim.studies._sweep import check_scheduler, check_workers, run_all
from netdim.studies.tables import failures_csv, frame
from netdim.vocabulary import Verdict

__all__ = ["FailureRow", "FailureStudy", "failure_study", "fail_elements", "KINDS"]

#: What a row removes: nothing (the intact network), one link, or one site.
KINDS = ("none", "link", "site")


#: Stands for the rows in the JSON text until they are written one by one.
_ROWS_MARK = "\x00rows of the study\x00"


@dataclass(frozen=True)
class FailureRow:
    """The network with one element failed, evaluated.

    Attributes
    ----------
    kind : {'none', 'link', 'site'}
    element : str
        The failed link or site id (``''`` for the intact network).
    links : tuple of str
        The links taken out of service.
    lost : tuple of str
        Demands left with no candidate route (blocking 1).
    ended : tuple of str
        Demands that start or end at a failed site (not judged).
    demand_ids : tuple of str
        The demands evaluated (neither lost nor ended), network order.
    blocking, target : ndarray
        Their blocking after the failure, and the target they are judged against.
    offered : ndarray
        Their offered traffic, erlangs.
    verdicts : tuple of str
        Their verdicts (``met``, ``missed``, ``unclear``; see :mod:`netdim.studies._judge`).
    lost_offered : float
        Erlangs of the lost demands.
    status : str
        The evaluation's status, or ``'not-converged'`` (then ``verdict`` is unclear).
    message : str
    """

    kind: str
    element: str
    links: tuple
    lost: tuple
    ended: tuple
    demand_ids: tuple
    blocking: np.ndarray
    target: np.ndarray
    offered: np.ndarray
    verdicts: tuple
    lost_offered: float = 0.0
    status: str = "converged"
    message: str = ""

    def __post_init__(self):
        for name in ("blocking", "target", "offered"):
            object.__setattr__(self, name, frozen(getattr(self, name)))
        for name in ("links", "lost", "ended", "demand_ids", "verdicts"):
            object.__setattr__(self, name, tuple(getattr(self, name)))

    @property
    def verdict(self) -> Verdict:
        """``met`` when no demand is lost and every one evaluated meets its target;
        ``missed`` when one is lost or misses it; else ``unclear``."""
        if self.lost:
            return Verdict.MISSED
        if self.status == "not-converged":
            return overall([*self.verdicts, Verdict.UNCLEAR.value])
        return overall(self.verdicts)

    @property
    def survives(self) -> bool:
        """Every demand the failure leaves is carried within its target (figures say so)."""
        return self.verdict == Verdict.MET

    @property
    def over_target(self) -> tuple:
        """Demands that miss the target (lost ones first)."""
        return self.lost + tuple(d for d, v in zip(self.demand_ids, self.verdicts, strict=True)
                                 if v == Verdict.MISSED.value)

    @property
    def unclear(self) -> tuple:
        return tuple(d for d, v in zip(self.demand_ids, self.verdicts, strict=True)
                     if v == Verdict.UNCLEAR.value)

    @property
    def worst_demand(self) -> str | None:
        """The lost demand of most traffic, else the demand of highest blocking."""
        if self.lost:
            return self.lost[0]
        if not len(self.blocking):
            return None
        return self.demand_ids[int(np.argmax(self.blocking))]

    @property
    def worst_blocking(self) -> float:
        if self.lost:
            return 1.0
        return float(self.blocking.max()) if len(self.blocking) else 0.0

    @property
    def mean_blocking(self) -> float:
        """Traffic-weighted blocking of the demands judged (lost ones count as 1):
        erlangs blocked over erlangs offered."""
        offered = float(self.offered.sum()) + self.lost_offered
        if offered <= 0:
            return 0.0
        return (float(self.offered @ self.blocking) + self.lost_offered) / offered

    def to_dict(self) -> dict:
        """The JSON form (keys are added, never renamed)."""
        return {
            "kind": self.kind,
            "element": self.element,
            "links": list(self.links),
            "lost": list(self.lost),
            "ended": list(self.ended),
            "worst_demand": self.worst_demand,
            "worst_blocking": self.worst_blocking,
            "mean_blocking": self.mean_blocking,
            "over_target": list(self.over_target),
            "unclear": list(self.unclear),
            "verdict": str(self.verdict),
            "survives": self.survives,
            "status": self.status,
            "message": self.message,
            "demands": [
                {"id": d, "blocking": float(b), "target": float(t), "verdict": str(v)}
                for d, b, t, v in zip(self.demand_ids, self.blocking, self.target,
                                      self.verdicts, strict=True)
            ],
        }


@dataclass(frozen=True)
class FailureStudy:
    """Every single failure of a network, worst first.

    Attributes
    ----------
    network : str
        The network's name.
    method : str
        The evaluation method.
    failure_target : float or None
        The target every demand is judged against after a failure (None: its own).
    intact : FailureRow
        The network with nothing failed, judged against each demand's own target.
    rows : tuple of FailureRow
        One per failed element, worst first (verdict, then lost demands, then worst
        blocking).
    """

    network: str
    method: str
    failure_target: float | None
    intact: FailureRow
    rows: tuple
    options: dict = field(default_factory=dict, compare=False)

    @property
    def verdict(self) -> Verdict:
        """``met`` only when the network survives every failure studied."""
        return overall([str(r.verdict) for r in self.rows] or [Verdict.MET.value])

    @property
    def all_survive(self) -> bool:
        return self.verdict == Verdict.MET

    @property
    def not_converged(self) -> tuple:
        return tuple(r.element for r in self.rows if r.status == "not-converged")

    def to_frame(self):
        """The table as a :class:`pandas.DataFrame` (needs pandas), the ``--csv`` columns."""
        return frame(*failures_csv(self))

    def to_dict(self) -> dict:
        """The JSON form (``netdim failures --json``; keys are added, never renamed)."""
        return self._dict([r.to_dict() for r in self.rows])

    def json_chunks(self, extra=None):
        """The text of ``json.dumps(self.to_dict() | extra, indent=2)``, piece by piece.

        One row at a time is turned into JSON, so a large study (a row holds every demand)
        is never held whole as Python objects: at 312 sites and 390 failures the whole
        tree took gigabytes.
        """
        out = self._dict(_ROWS_MARK)
        out.update(extra or {})
        head, tail = json.dumps(out, indent=2).split(json.dumps(_ROWS_MARK))
        yield head
        if not self.rows:
            yield "[]"
        else:
            yield "[\n"
            for i, r in enumerate(self.rows):
                text = textwrap.indent(json.dumps(r.to_dict(), indent=2), "    ")
                yield text + (",\n" if i + 1 < len(self.rows) else "\n")
            yield "  ]"
        yield tail

    def _dict(self, rows) -> dict:
        return {
            "network": self.network,
            "method": self.method,
            "failure_target": self.failure_target,
            "intact": self.intact.to_dict(),
            "failures": rows,
            "count": len(self.rows),
            "survivors": sum(r.survives for r in self.rows),
            "all_survive": self.all_survive,
            "verdict": str(self.verdict),
        }


def fail_elements(network, *, links=(), sites=()):
    """The network with ``links`` (ids) and every link at ``sites`` out of service.

    Parameters
    ----------
    network : Network
    links, sites : iterable of str

    Returns
    -------
    (Network or None, tuple, tuple, tuple)
        The network of the demands still routable, with only their remaining routes
        (None when no demand is left), the failed links' ids, the lost demands and the
        ended ones.

    Raises
    ------
    KeyError
        A link or site id that is not defined.
    """
    sites = set(sites)
    for s in sites:
        network.site_index(s)
    gone = {network.link_index(i) for i in links}
    gone |= {j for j, link in enumerate(network.links) if sites & set(link.ends)}
    kept, lost, ended = [], [], []
    for d in network.demands:
        if sites & set(d.between):
            ended.append(d.id)
            continue
        routes = tuple(r for r in d.routes if not gone & set(r.links))
        if routes:
            kept.append(d if len(routes) == len(d.routes) else replace(d, routes=routes))
        else:
            lost.append(d)
    lost.sort(key=lambda d: -d.traffic)
    failed = tuple(network.links[j].id for j in sorted(gone))
    net = replace(network, demands=tuple(kept)) if kept else None
    return net, failed, tuple(lost), tuple(ended)


def _row(shared, task) -> FailureRow:
    """One failure evaluated (module level: a pool worker runs it)."""
    network, capacities, method, options, target = shared
    kind, element = task
    links = (element,) if kind == "link" else ()
    sites = (element,) if kind == "site" else ()
    net, failed, lost, ended = fail_elements(network, links=links, sites=sites)
    caps = np.array(capacities, dtype=np.int64)
    caps[[network.link_index(i) for i in failed]] = 0
    common = dict(kind=kind, element=element, links=failed, lost=[d.id for d in lost],
                  ended=ended, lost_offered=float(sum(d.traffic for d in lost)))
    if net is None:
        empty = np.zeros(0)
        return FailureRow(demand_ids=(), blocking=empty, target=empty, offered=empty,
                          verdicts=(), **common)
    tgt = np.array([d.target if target is None else target for d in net.demands])
    try:
        ev = evaluate(net, caps, method=method, **options)
    except ConvergenceError as exc:
        nan = np.full(len(net.demands), np.nan)
        return FailureRow(demand_ids=net.demand_ids, blocking=nan, target=tgt,
                          offered=np.array([d.traffic for d in net.demands]),
                          verdicts=(Verdict.UNCLEAR.value,) * len(net.demands),
                          status="not-converged", message=" ".join(str(exc).split()),
                          **common)
    return FailureRow(demand_ids=ev.demand_ids, blocking=ev.blocking, target=tgt,
                      offered=ev.offered, verdicts=tuple(judge(ev, tgt)),
                      status=str(ev.status), message=ev.message, **common)


def _sort_key(row: FailureRow):
    return (SEVERITY[str(row.verdict)], -len(row.lost), -row.lost_offered,
            -row.worst_blocking, -row.mean_blocking, row.element)


def failure_study(network, capacities=None, *, links=None, sites=None, method="fixed-point",
                  target=None, workers=1, progress=None, scheduler=None,
                  **options) -> FailureStudy:
    """Fail each link (or site) in turn, reroute over the remaining routes and evaluate.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        One per link; default: the capacities in the network (a plan file has them).
    links : iterable of str, optional
        The links to fail one at a time; default: every link, unless ``sites`` is given.
    sites : iterable of str, optional
        The sites to fail one at a time (each takes every link at it).
    method : str
        One of :data:`netdim.evaluate.METHODS` (fixed point by default).
    target : float, optional
        The blocking every demand must stay within after a failure (usually looser than
        the normal one); default: each demand's own target.
    workers : int
        Processes to run the failures on (1: in this process). The rows are the same.
    scheduler : str or dask.distributed.Client, optional
        Run the pieces on a Dask cluster (its address) instead of a local pool; the result
        is the same (needs ``netdim[dask]``).
    progress : callable(fraction, message) or None
    **options
        Passed to :func:`netdim.evaluate.evaluate` (e.g. ``seed`` for simulation: every
        failure is simulated with the same seed).

    Returns
    -------
    FailureStudy

    Raises
    ------
    ValueError
        An unknown method or option, bad capacities, a target outside (0, 1), an unknown
        link or site, or a bad number of workers.

    Notes
    -----
    Each row is one evaluation of the network with the failed routes taken away, as
    :func:`fail_elements` builds it; the study adds no approximation of its own. Under
    the fixed point a row with two solutions is ``met`` only if both meet the target.

    References
    ----------
    .. [1] ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS
       objectives" (grade of service under failure conditions).

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("pair", (Site("A"), Site("B")),
    ...               (Link("L1", ("A", "B"), 10), Link("L2", ("A", "B"), 10)),
    ...               (Demand("AB", ("A", "B"), 4.0, target=0.05,
    ...                       routes=(Route((0,), (1.0,)), Route((1,), (1.0,)))),))
    >>> study = failure_study(net, target=0.05)
    >>> [(r.element, round(r.worst_blocking, 5), str(r.verdict)) for r in study.rows]
    [('L1', 0.00531, 'met'), ('L2', 0.00531, 'met')]
    """
    if method not in METHODS:
        raise ValueError(f"method: unknown method {method!r}; choose one of "
                         f"{', '.join(METHODS)}")
    target = check_target("target", target)
    workers = check_workers(workers)
    scheduler = check_scheduler(scheduler)
    caps = resolve_capacities(network, capacities)
    if links is None and sites is None:
        links = network.link_ids
    elements = []
    for kind, ids, look in (("link", links, network.link_index),
                            ("site", sites, network.site_index)):
        for i in ids or ():
            try:
                look(i)
            except KeyError as exc:
                raise ValueError(f"{kind}s: {exc.args[0]}") from None
            elements.append((kind, i))
    shared = (network, caps, method, options, target)
    # the intact network is judged against the normal targets, not the failure target
    intact = _row((network, caps, method, options, None), ("none", ""))
    rows = run_all(_row, elements, shared=shared, workers=workers, progress=progress,
                   what="failures", scheduler=scheduler)
    return FailureStudy(network=network.name, method=method, failure_target=target,
                        intact=intact, rows=tuple(sorted(rows, key=_sort_key)),
                        options=dict(options))
