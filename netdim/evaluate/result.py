"""The result every evaluation method returns, and the verdict of each demand."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from netdim._arrays import frozen as _frozen
from netdim.evaluate._network import labels
from netdim.vocabulary import EvaluationStatus, Verdict

__all__ = ["Evaluation", "verdicts"]

#: Relative slack when a deterministic figure is compared with its target (rounding only).
_RTOL = 1e-9


def verdicts(blocking, target, interval=None) -> np.ndarray:
    """Per demand, the :class:`~netdim.vocabulary.Verdict` of its blocking against its target.

    Parameters
    ----------
    blocking, target : array_like, shape (n,)
    interval : array_like, shape (n, 2), optional
        Confidence interval of each blocking (simulation). With an interval a demand is
        ``met`` only when the whole interval lies at or below its target, ``missed`` when
        the whole interval lies above it, and ``unclear`` otherwise; a row that is not
        finite falls back to the point estimate. Without one, the point estimate decides
        (``met`` or ``missed``).

    Returns
    -------
    ndarray of str
        The verdicts' values (``'met'``, ``'missed'``, ``'unclear'``).
    """
    b = np.asarray(blocking, float)
    t = np.asarray(target, float) * (1 + _RTOL)
    point = np.where(b <= t, Verdict.MET.value, Verdict.MISSED.value)
    if interval is None or not len(b):
        return point
    iv = np.asarray(interval, float)
    lo, hi = iv[:, 0], iv[:, 1]
    finite = np.isfinite(lo) & np.isfinite(hi)
    three = np.where(hi <= t, Verdict.MET.value,
                     np.where(lo > t, Verdict.MISSED.value, Verdict.UNCLEAR.value))
    return np.where(finite, three, point)


@dataclass(frozen=True)
class Evaluation:
    """End-to-end blocking of every demand and the state of every link.

    Arrays are read-only and in the network's demand or link order. Link loads are in
    capacity units (erlangs times bandwidth), so that ``utilisation = link_carried /
    capacity`` also holds on multi-rate links.

    Attributes
    ----------
    method : str
        ``'fixed-point'``, ``'conservative'``, ``'exact'`` or ``'simulate'``.
    demand_ids : tuple of str
    offered : ndarray
        Offered traffic per demand, erlangs.
    blocking : ndarray
        End-to-end blocking probability per demand (call congestion).
    target : ndarray
        Blocking target per demand.
    link_ids : tuple of str
    capacity : ndarray of int
    link_offered : ndarray
        Load offered to each link (thinned by the other links of each route, except under
        the conservative method), capacity units.
    link_carried : ndarray
        Load carried by each link, capacity units.
    link_blocking : ndarray
        Blocking a first-choice call meets on the link (for multi-rate links: of the
        bandwidth-weighted first-choice load).
    link_blocking_alternate : ndarray
        Blocking an alternate-route (overflow) call meets on the link, given reservation;
        equal to ``link_blocking`` under fixed routing.
    iterations : int
    residual : float
        Largest change at the last iteration (fixed point), balance residual (exact), or 0.
    status : EvaluationStatus
        ``'converged'``, ``'exact'``, ``'simulated'`` or ``'bistable'`` (a ``str`` enum,
        :class:`~netdim.vocabulary.EvaluationStatus`).
    message : str
    warnings : tuple of str
    blocking_interval : ndarray or None, shape (n_demands, 2)
        Confidence interval of ``blocking`` (simulation only).
    link_blocking_interval : ndarray or None, shape (n_links, 2)
    confidence : float or None
        Level of the intervals, e.g. 0.95.
    alternative : Evaluation or None
        A second solution of the fixed-point equations when they have more than one.
    details : dict
        Method-specific extra figures (e.g. calls simulated, states enumerated).
    day : object or None
        Demand over the day (issue 20): the day's figures (:mod:`netdim.evaluate.day`), whose
        ``to_dict()`` gives per demand and per link records merged into the JSON records;
        ``blocking`` is then each demand's figure on its ``target_basis``.
    """

    method: str
    demand_ids: tuple
    offered: np.ndarray
    blocking: np.ndarray
    target: np.ndarray
    link_ids: tuple
    capacity: np.ndarray
    link_offered: np.ndarray
    link_carried: np.ndarray
    link_blocking: np.ndarray
    link_blocking_alternate: np.ndarray
    iterations: int = 0
    residual: float = 0.0
    status: EvaluationStatus = EvaluationStatus.CONVERGED
    message: str = ""
    warnings: tuple = ()
    blocking_interval: np.ndarray | None = None
    link_blocking_interval: np.ndarray | None = None
    confidence: float | None = None
    alternative: Evaluation | None = None
    details: dict = field(default_factory=dict, compare=False)
    day: object | None = field(default=None, compare=False)

    def __post_init__(self):
        for name in ("offered", "blocking", "target", "link_offered", "link_carried",
                     "link_blocking", "link_blocking_alternate"):
            object.__setattr__(self, name, _read_only(getattr(self, name)))
        object.__setattr__(self, "capacity", _read_only(self.capacity, np.int64))
        for name in ("blocking_interval", "link_blocking_interval"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, _read_only(getattr(self, name)))
        object.__setattr__(self, "demand_ids", tuple(self.demand_ids))
        object.__setattr__(self, "link_ids", tuple(self.link_ids))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        object.__setattr__(self, "status", EvaluationStatus(self.status))
        bad = ~np.isfinite(self.blocking)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise ValueError(f"evaluation: blocking of demand '{self.demand_ids[i]}' is not finite")

    @classmethod
    def from_link_state(cls, network, capacity, *, method: str, status, blocking,
                        link_offered, link_carried, link_blocking,
                        link_blocking_alternate=None, **extra) -> Evaluation:
        """The one constructor every method uses: labels, offered traffic and targets come
        from ``network`` (memoised on it), the figures from the method.

        Parameters
        ----------
        network : Network
        capacity : array_like of int
            The capacities evaluated, in link order.
        method : str
        status : EvaluationStatus or str
        blocking : array_like
            Per demand.
        link_offered, link_carried, link_blocking : array_like
            Per link, capacity units (see the class attributes).
        link_blocking_alternate : array_like, optional
            Default: ``link_blocking`` (fixed routing).
        **extra
            Any other field: ``iterations``, ``residual``, ``message``, ``warnings``,
            ``blocking_interval``, ``link_blocking_interval``, ``confidence``,
            ``alternative``, ``details``.
        """
        lab = labels(network)
        return cls(
            method=method, demand_ids=lab.demand_ids, offered=lab.offered, blocking=blocking,
            target=lab.target, link_ids=lab.link_ids, capacity=capacity,
            link_offered=link_offered, link_carried=link_carried, link_blocking=link_blocking,
            link_blocking_alternate=(link_blocking if link_blocking_alternate is None
                                     else link_blocking_alternate),
            status=status, **extra,
        )

    # -- derived figures --------------------------------------------------------------------
    @property
    def carried(self) -> np.ndarray:
        """Carried traffic per demand, erlangs."""
        return self.offered * (1.0 - self.blocking)

    def verdicts(self) -> np.ndarray:
        """Per demand, ``'met'``, ``'missed'`` or ``'unclear'`` (see :func:`verdicts`)."""
        return verdicts(self.blocking, self.target, self.blocking_interval)

    @property
    def met(self) -> np.ndarray:
        """Boolean per demand: the target is met (for a simulation: the whole interval is
        at or below it)."""
        return self.verdicts() == Verdict.MET.value

    @property
    def all_met(self) -> bool:
        return bool(self.met.all())

    @property
    def unmet(self) -> tuple:
        """Ids of the demands not known to meet their target (missed or unclear)."""
        return tuple(i for i, ok in zip(self.demand_ids, self.met, strict=True) if not ok)

    @property
    def missed(self) -> tuple:
        """Ids of the demands that miss their target (for a simulation: the whole interval
        lies above it)."""
        v = self.verdicts()
        return tuple(i for i, x in zip(self.demand_ids, v, strict=True)
                     if x == Verdict.MISSED.value)

    @property
    def unclear(self) -> tuple:
        """Ids of the simulated demands whose interval contains the target."""
        v = self.verdicts()
        return tuple(i for i, x in zip(self.demand_ids, v, strict=True)
                     if x == Verdict.UNCLEAR.value)

    @property
    def utilisation(self) -> np.ndarray:
        """Carried load over capacity per link (0 where capacity is 0)."""
        cap = self.capacity.astype(float)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(cap > 0, self.link_carried / np.where(cap > 0, cap, 1.0), 0.0)

    # -- output -----------------------------------------------------------------------------
    def demand_records(self) -> list[dict]:
        out = []
        verdict = self.verdicts()
        for i, did in enumerate(self.demand_ids):
            rec = {
                "id": did,
                "offered": float(self.offered[i]),
                "carried": float(self.carried[i]),
                "blocking": float(self.blocking[i]),
                "target": float(self.target[i]),
                "met": bool(verdict[i] == Verdict.MET.value),
                "verdict": str(verdict[i]),
            }
            if self.blocking_interval is not None:
                rec["blocking_interval"] = [float(v) for v in self.blocking_interval[i]]
            out.append(rec)
        if self.day is not None:
            for rec, extra in zip(out, self._day_dict()["demands"], strict=True):
                rec.update({k: v for k, v in extra.items() if k != "id"})
        return out

    def _day_dict(self) -> dict:
        return self.day.to_dict()

    def link_records(self) -> list[dict]:
        out = []
        util = self.utilisation
        for j, lid in enumerate(self.link_ids):
            rec = {
                "id": lid,
                "capacity": int(self.capacity[j]),
                "offered": float(self.link_offered[j]),
                "carried": float(self.link_carried[j]),
                "blocking": float(self.link_blocking[j]),
                "blocking_alternate": float(self.link_blocking_alternate[j]),
                "utilisation": float(util[j]),
            }
            if self.link_blocking_interval is not None:
                rec["blocking_interval"] = [float(v) for v in self.link_blocking_interval[j]]
            out.append(rec)
        if self.day is not None:
            for rec, extra in zip(out, self._day_dict()["links"], strict=True):
                rec["blocking_by_period"] = extra["blocking_by_period"]
                rec["occupancy"] = extra["occupancy"]
        return out

    def to_dict(self) -> dict:
        """The JSON form (the ``--json`` contract: keys are added, never renamed)."""
        d = {
            "demands": self.demand_records(),
            "links": self.link_records(),
            "method": self.method,
            "iterations": int(self.iterations),
            "residual": float(self.residual),
            "warnings": list(self.warnings),
            "status": str(self.status),
            "message": self.message,
            "all_met": self.all_met,
        }
        if self.confidence is not None:
            d["confidence"] = self.confidence
        if self.alternative is not None:
            d["alternative"] = {
                "demands": self.alternative.demand_records(),
                "links": self.alternative.link_records(),
            }
        if self.day is not None:
            d["day"] = {k: v for k, v in self._day_dict().items()
                        if k not in ("demands", "links")}
        if self.details:
            d["details"] = {k: v for k, v in self.details.items() if _jsonable(v)}
        return d


def _read_only(a, dtype=float) -> np.ndarray:
    """``a`` itself when it is already a read-only array of ``dtype`` that owns its data
    (nothing can change it, e.g. the labels memoised on a network), else a frozen copy."""
    if (isinstance(a, np.ndarray) and a.dtype == dtype and not a.flags.writeable
            and a.base is None):
        return a
    return _frozen(a, dtype)


def _jsonable(v) -> bool:
    return isinstance(v, (int, float, str, bool, list, type(None)))
