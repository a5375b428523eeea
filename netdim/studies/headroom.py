"""Headroom: how far traffic can grow on the installed capacities before a target fails.

The multiplier is found by bracketing and bisection on whether every target holds (every
demand ``met`` under the chosen method; a fixed point with two solutions holds only if both
meet). It is tight: the targets hold at ``multiplier`` and fail at ``above``, with
``above - multiplier <= tol * multiplier``. Blocking need not grow with traffic everywhere
under alternate routing, so the bracket is what is shown: the figures hold at the one end
and fail at the other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from netdim.evaluate import evaluate, resolve_capacities
from netdim.studies._judge import judge
from netdim.studies._sweep import check_scheduler, check_workers, run_all
from netdim.studies.tables import frame, headroom_csv
from netdim.vocabulary import Verdict

__all__ = ["Headroom", "HeadroomStudy", "headroom_study", "HEADROOM_METHODS", "DEFAULT_TOL"]

#: Methods whose verdicts are deterministic (a simulated verdict can be unclear anywhere
#: near the edge, so it cannot place one).
HEADROOM_METHODS = ("fixed-point", "conservative", "exact")
#: Relative width of the final bracket.
DEFAULT_TOL = 1e-4
#: Largest multiplier tried; above it the headroom is reported as unbounded.
MAX_MULTIPLIER = 1e6


@dataclass(frozen=True)
class Headroom:
    """How far traffic can be multiplied before a target fails.

    Attributes
    ----------
    scope : str
        ``'all'`` (every demand scaled together) or the id of the one demand scaled.
    multiplier : float or None
        Largest multiplier found at which every target holds (None: still holding at
        :data:`MAX_MULTIPLIER`).
    above : float or None
        A multiplier at which some target fails, within ``tol`` of ``multiplier``.
    fails_first : str or None
        The demand furthest over its target at ``above``.
    evaluations : int
    """

    scope: str
    multiplier: float | None
    above: float | None
    fails_first: str | None
    evaluations: int

    def to_dict(self) -> dict:
        return {"scope": self.scope, "multiplier": self.multiplier, "above": self.above,
                "fails_first": self.fails_first, "evaluations": self.evaluations}


@dataclass(frozen=True)
class HeadroomStudy:
    """Headroom of a network's installed capacities.

    Attributes
    ----------
    network : str
    method : str
    tol : float
    uniform : Headroom
        Every demand scaled by one multiplier.
    per_demand : tuple of Headroom
        Each demand alone scaled (network order); empty when not asked for.
    """

    network: str
    method: str
    tol: float
    uniform: Headroom
    per_demand: tuple = ()

    @property
    def verdict(self) -> Verdict:
        """``met`` when every target holds at today's traffic (multiplier >= 1)."""
        m = self.uniform.multiplier
        return Verdict.MET if m is None or m >= 1.0 else Verdict.MISSED

    def to_frame(self):
        """The table as a :class:`pandas.DataFrame` (needs pandas), the ``--csv`` columns."""
        return frame(*headroom_csv(self))

    def to_dict(self) -> dict:
        """The JSON form (``netdim headroom --json``; keys are added, never renamed)."""
        return {
            "network": self.network,
            "method": self.method,
            "tol": self.tol,
            "multiplier": self.uniform.multiplier,
            "above": self.uniform.above,
            "fails_first": self.uniform.fails_first,
            "evaluations": self.uniform.evaluations,
            "demands": [h.to_dict() for h in self.per_demand],
            "verdict": str(self.verdict),
            "met": self.verdict == Verdict.MET,
        }


def _holds(network, caps, which, m, method, options):
    """(every target holds, the demand furthest over its target or None)."""
    demands = tuple(replace(d, traffic=d.traffic * m) if which is None or i == which else d
                    for i, d in enumerate(network.demands))
    ev = evaluate(replace(network, demands=demands), caps, method=method, **options)
    v = judge(ev)
    bad = v != Verdict.MET.value
    if not bad.any():
        return True, None
    ratio = np.where(bad, ev.blocking / ev.target, -np.inf)
    return False, ev.demand_ids[int(np.argmax(ratio))]


def _search(shared, which) -> Headroom:
    """Bracket, then bisect in log space (module level: a pool worker runs it)."""
    network, caps, method, options, tol = shared
    scope = "all" if which is None else network.demands[which].id
    count = [0]

    def holds(m):
        count[0] += 1
        return _holds(network, caps, which, m, method, options)

    scaled = network.demands if which is None else (network.demands[which],)
    if sum(d.traffic for d in scaled) <= 0:
        return Headroom(scope, None, None, None, 0)
    ok, first = holds(1.0)
    if ok:
        lo, hi, fails = 1.0, None, None
        m = 2.0
        while m <= MAX_MULTIPLIER:
            ok, first = holds(m)
            if not ok:
                hi, fails = m, first
                break
            lo, m = m, m * 2
        if hi is None:
            return Headroom(scope, None, None, None, count[0])
    else:
        hi, fails = 1.0, first
        lo, m = None, 0.5
        while m >= 1e-12:
            ok, first = holds(m)
            if ok:
                lo = m
                break
            hi, fails, m = m, first, m / 2
        if lo is None:
            return Headroom(scope, 0.0, hi, fails, count[0])
    while hi - lo > tol * lo:
        mid = math.sqrt(lo * hi)
        if not lo < mid < hi:
            break
        ok, first = holds(mid)
        if ok:
            lo = mid
        else:
            hi, fails = mid, first
    return Headroom(scope, lo, hi, fails, count[0])


def headroom_study(network, capacities=None, *, method="fixed-point", tol=DEFAULT_TOL,
                   per_demand=True, workers=1, progress=None, scheduler=None,
                   **options) -> HeadroomStudy:
    """The largest traffic multiplier at which every target still holds.

    Parameters
    ----------
    network : Network
    capacities : array_like of int, optional
        Default: the network's capacities.
    method : {'fixed-point', 'conservative', 'exact'}
    tol : float
        Relative width of the final bracket, in (0, 0.1].
    per_demand : bool
        Also find, for each demand alone, how far it can grow (the others as they are).
    workers : int
        Processes for the per-demand searches (1: in this process).
    scheduler : str or dask.distributed.Client, optional
        Run the pieces on a Dask cluster (its address) instead of a local pool; the result
        is the same (needs ``netdim[dask]``).
    progress : callable(fraction, message) or None
    **options
        Passed to :func:`netdim.evaluate.evaluate`.

    Returns
    -------
    HeadroomStudy

    Raises
    ------
    ValueError
        A method that is not deterministic, a tolerance out of range, bad capacities.

    Notes
    -----
    On one trunk group of ``n`` circuits offered ``A`` erlangs the multiplier is
    ``traffic_for(n, target) / A``, the largest load Erlang's formula [1]_ allows.

    References
    ----------
    .. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
       significance in automatic telephone exchanges", Elektroteknikeren 13 (1917).

    Examples
    --------
    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B"), 18),),
    ...               (Demand("AB", ("A", "B"), 10.0, routes=(Route((0,), (1.0,)),)),))
    >>> h = headroom_study(net, per_demand=False).uniform
    >>> round(h.multiplier, 3), h.fails_first
    (1.044, 'AB')
    """
    if method not in HEADROOM_METHODS:
        raise ValueError(f"method: headroom needs a deterministic method, one of "
                         f"{', '.join(HEADROOM_METHODS)}; got {method!r}")
    if isinstance(tol, bool) or not isinstance(tol, (int, float, np.floating)) or \
            not 0 < tol <= 0.1:
        raise ValueError(f"tol: must lie in (0, 0.1], got {tol!r}")
    workers = check_workers(workers)
    scheduler = check_scheduler(scheduler)
    caps = resolve_capacities(network, capacities)
    shared = (network, caps, method, options, float(tol))
    uniform = _search(shared, None)
    rows = ()
    if per_demand:
        rows = tuple(run_all(_search, range(len(network.demands)), shared=shared,
                             workers=workers, progress=progress, what="demands",
                             scheduler=scheduler))
    return HeadroomStudy(network=network.name, method=method, tol=float(tol),
                         uniform=uniform, per_demand=rows)
