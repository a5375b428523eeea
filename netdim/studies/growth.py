"""Traffic growth: the plan year by year, each year adding only what that year needs.

Year 0 is the traffic of the file; year ``y`` multiplies each demand's traffic by
``(1 + rate) ** y``. Each year is sized as a brownfield plan whose installed capacity is the
previous year's (so capacity never falls and a module is bought only in the year it is
needed), least cost for that year's additions under the chosen model.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from netdim._arrays import frozen
from netdim.dimension import SizingOptions, dimension
from netdim.studies._judge import judge, overall
from netdim.studies.tables import frame, growth_csv
from netdim.vocabulary import Verdict

__all__ = ["GrowthYear", "GrowthStudy", "growth_study", "STARTS", "MAX_YEARS", "file_rates"]

#: What is in place in year 0: the file's capacities, or only its ``installed`` units.
STARTS = ("capacities", "installed")
#: Longest horizon, years.
MAX_YEARS = 50
#: Top-level field of a network file giving per-demand growth rates (demand id -> rate).
RATES_FIELD = "x-growth"


@dataclass(frozen=True)
class GrowthYear:
    """One year of a growth plan.

    Attributes
    ----------
    year : int
    offered : float
        Erlangs offered that year, all demands.
    capacities : ndarray of int
        Capacity per link at the end of the year, link order.
    added : ndarray of int
        Units added that year per link.
    cost : float
        Cost of that year's additions (modules, and fixed costs of links built new).
    discounted_cost : float
        ``cost / (1 + discount) ** year``.
    status : str
        The year's plan status.
    gap : float
        The year's plan gap to its lower bound.
    worst_demand : str
    worst_blocking : float
    verdicts : tuple of str
        Per demand, against its target under the sizing model.
    """

    year: int
    offered: float
    capacities: np.ndarray
    added: np.ndarray
    cost: float
    discounted_cost: float
    status: str
    gap: float
    worst_demand: str
    worst_blocking: float
    verdicts: tuple

    def __post_init__(self):
        object.__setattr__(self, "capacities", frozen(self.capacities, np.int64))
        object.__setattr__(self, "added", frozen(self.added, np.int64))
        object.__setattr__(self, "verdicts", tuple(self.verdicts))

    @property
    def verdict(self) -> Verdict:
        if self.status == "infeasible":
            return Verdict.MISSED
        return overall(self.verdicts)

    @property
    def met(self) -> bool:
        return self.verdict == Verdict.MET

    def to_dict(self, link_ids) -> dict:
        return {
            "year": self.year,
            "offered": self.offered,
            "capacity": int(self.capacities.sum()),
            "cost": self.cost,
            "discounted_cost": self.discounted_cost,
            "status": self.status,
            "gap": self.gap,
            "worst_demand": self.worst_demand,
            "worst_blocking": self.worst_blocking,
            "verdict": str(self.verdict),
            "met": self.met,
            "links": {lid: int(c) for lid, c in zip(link_ids, self.capacities, strict=True)},
            "added": {lid: int(a) for lid, a in zip(link_ids, self.added, strict=True) if a},
        }


@dataclass(frozen=True)
class GrowthStudy:
    """A growth plan over ``len(years) - 1`` years.

    Attributes
    ----------
    network : str
    link_ids : tuple of str
    rate : float
        The uniform rate (per-demand rates in ``rates`` override it).
    rates : dict
        Demand id -> rate, where a demand grows at its own rate.
    discount : float
    start : {'capacities', 'installed'}
    start_capacities : ndarray of int
        In place before year 0's additions.
    years : tuple of GrowthYear
    model : str
    """

    network: str
    link_ids: tuple
    rate: float
    rates: dict
    discount: float
    start: str
    start_capacities: np.ndarray
    years: tuple
    model: str
    options: dict = field(default_factory=dict, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "start_capacities", frozen(self.start_capacities, np.int64))

    @property
    def total_cost(self) -> float:
        return float(sum(y.cost for y in self.years))

    @property
    def total_discounted_cost(self) -> float:
        return float(sum(y.discounted_cost for y in self.years))

    @property
    def verdict(self) -> Verdict:
        """``met`` only when every year's plan meets every target."""
        return overall([str(y.verdict) for y in self.years])

    @property
    def all_met(self) -> bool:
        return self.verdict == Verdict.MET

    def next_module_year(self) -> dict:
        """Per link id, the first year it needs more than is in place at the start (None:
        not within the horizon)."""
        out = {}
        for j, lid in enumerate(self.link_ids):
            out[lid] = next((y.year for y in self.years if y.added[j] > 0), None)
        return out

    def to_frame(self):
        """The table as a :class:`pandas.DataFrame` (needs pandas), the ``--csv`` columns."""
        return frame(*growth_csv(self))

    def to_dict(self) -> dict:
        """The JSON form (``netdim growth --json``; keys are added, never renamed)."""
        nxt = self.next_module_year()
        return {
            "network": self.network,
            "model": self.model,
            "rate": self.rate,
            "rates": dict(self.rates),
            "discount": self.discount,
            "start": self.start,
            "years": [y.to_dict(self.link_ids) for y in self.years],
            "links": [
                {"id": lid, "start": int(self.start_capacities[j]),
                 "capacity": [int(y.capacities[j]) for y in self.years],
                 "next_module_year": nxt[lid]}
                for j, lid in enumerate(self.link_ids)
            ],
            "total_cost": self.total_cost,
            "total_discounted_cost": self.total_discounted_cost,
            "all_met": self.all_met,
            "verdict": str(self.verdict),
        }


def _rate(name, value):
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating)) \
            or not math.isfinite(value) or not -1 < value <= 10:
        raise ValueError(f"{name}: must be a yearly rate in (-1, 10] (e.g. 0.05 for 5 %), "
                         f"got {value!r}")
    return float(value)


def file_rates(network) -> dict:
    """Per-demand growth rates given in the network file's ``x-growth`` field.

    The field maps demand ids to yearly rates, e.g. ``x-growth: {QML-TRN: 0.07}``.

    Raises
    ------
    ValueError
        The field is not a mapping, names an unknown demand, or gives a rate out of range.
    """
    where = network.source or f"network '{network.name}'"
    raw = network.extra.get(RATES_FIELD)
    if raw is None:
        return {}
    if not isinstance(raw, dict):
        raise ValueError(f"{where}: {RATES_FIELD}: must map demand ids to yearly rates")
    known = set(network.demand_ids)
    out = {}
    for k, v in raw.items():
        if k not in known:
            raise ValueError(f"{where}: {RATES_FIELD}: demand '{k}' is not defined")
        out[str(k)] = _rate(f"{where}: {RATES_FIELD}: {k}", v)
    return out


def _check(network, rate, rates, years, discount, start, sizing):
    rate = _rate("rate", rate)
    rates = {str(k): _rate(f"rates: {k}", v) for k, v in (rates or {}).items()}
    for k in rates:
        if k not in set(network.demand_ids):
            raise ValueError(f"rates: demand '{k}' is not defined")
    if isinstance(years, bool) or not isinstance(years, (int, np.integer)) or \
            not 1 <= years <= MAX_YEARS:
        raise ValueError(f"years: must be an integer in 1..{MAX_YEARS}, got {years!r}")
    if isinstance(discount, bool) or not isinstance(discount, (int, float, np.floating)) \
            or not 0 <= discount <= 1:
        raise ValueError(f"discount: must lie in [0, 1] (e.g. 0.08 for 8 %), got {discount!r}")
    if start is None:
        start = "capacities" if all(k.capacity is not None for k in network.links) \
            else "installed"
    if start not in STARTS:
        raise ValueError(f"start: unknown value {start!r}; choose one of {', '.join(STARTS)}")
    if start == "capacities":
        network.capacities()  # names a link without one
    sizing = SizingOptions() if sizing is None else sizing
    if not isinstance(sizing, SizingOptions):
        raise ValueError("sizing: must be a SizingOptions")
    if sizing.objective != "cost":
        raise ValueError("sizing: a growth plan is sized for cost (objective 'cost')")
    return rate, rates, int(years), float(discount), start, sizing


def growth_study(network, *, rate=0.0, years=5, rates=None, discount=0.0, start=None,
                 sizing=None, progress=None) -> GrowthStudy:
    """Size a network year by year as its traffic grows; capacity never falls.

    Parameters
    ----------
    network : Network
    rate : float
        Yearly growth of every demand (0.05 is 5 % a year); may be negative.
    years : int
        Years after year 0 (the file's traffic), at most :data:`MAX_YEARS`.
    rates : dict, optional
        Demand id -> its own yearly rate (see :func:`file_rates` for the file's).
    discount : float
        Yearly discount rate of the costs, in [0, 1].
    start : {'capacities', 'installed'}, optional
        What is in place before year 0: the file's capacities (default when every link
        has one) or only the links' ``installed`` units.
    sizing : SizingOptions, optional
        How each year is sized (model, solver, gap, ...; objective ``'cost'``).
    progress : callable(fraction, message) or None

    Returns
    -------
    GrowthStudy

    Raises
    ------
    ValueError
        A rate, horizon, discount or start out of range, an unknown demand in ``rates``,
        a link without capacity with ``start='capacities'``.
    ModelTooLargeError, ConvergenceError
        As :func:`netdim.dimension.dimension` raises them.

    Notes
    -----
    Each year is a least-cost plan for that year alone, given what is in place (a myopic
    plan, as is common practice for yearly budgets, no source); buying ahead for later
    years can cost less in total and is not searched.

    References
    ----------
    .. [1] ITU-T Recommendation E.529, "Network dimensioning using end-to-end GOS
       objectives".

    Examples
    --------
    One trunk group offered 10 E growing 10 % a year, 1 % target: 18 circuits now
    (Erlang B), then 19 at 11 E and 21 at 12.1 E.

    >>> from netdim.model import Demand, Link, Network, Route, Site
    >>> net = Network("one", (Site("A"), Site("B")), (Link("AB", ("A", "B")),),
    ...               (Demand("AB", ("A", "B"), 10.0, routes=(Route((0,), (1.0,)),)),))
    >>> study = growth_study(net, rate=0.10, years=2)
    >>> [int(y.capacities[0]) for y in study.years], study.total_cost
    ([18, 19, 21], 21.0)
    """
    rate, rates, years, discount, start, sizing = _check(network, rate, rates, years,
                                                         discount, start, sizing)
    link_ids = network.link_ids
    if start == "capacities":
        in_place = np.maximum(network.capacities(),
                              np.array([k.installed for k in network.links], np.int64))
    else:
        in_place = np.array([k.installed for k in network.links], np.int64)
    first = in_place.copy()
    out = []
    for y in range(years + 1):
        demands = tuple(replace(d, traffic=d.traffic * (1 + rates.get(d.id, rate)) ** y)
                        for d in network.demands)
        links = tuple(replace(k, installed=int(c), capacity=int(c))
                      for k, c in zip(network.links, in_place, strict=True))
        net = replace(network, demands=demands, links=links)
        plan = dimension(net, model=sizing.model, solver=sizing.solver,
                         mip_gap=sizing.mip_gap, time_limit=sizing.time_limit,
                         max_iter=sizing.max_iter, local_search=sizing.local_search,
                         bound_time=sizing.bound_time)
        ev = plan.evaluation
        worst = int(np.argmax(ev.blocking)) if len(ev.blocking) else 0
        caps = np.asarray(plan.capacities, np.int64)
        out.append(GrowthYear(
            year=y, offered=float(sum(d.traffic for d in demands)), capacities=caps,
            added=caps - in_place, cost=float(plan.cost),
            discounted_cost=float(plan.cost) / (1 + discount) ** y, status=str(plan.status),
            gap=float(plan.gap),
            worst_demand=ev.demand_ids[worst] if len(ev.blocking) else "",
            worst_blocking=float(ev.blocking[worst]) if len(ev.blocking) else 0.0,
            verdicts=tuple(judge(ev))))
        in_place = caps
        if progress is not None:
            progress((y + 1) / (years + 1), f"year {y} sized")
    return GrowthStudy(network=network.name, link_ids=link_ids, rate=rate, rates=rates,
                       discount=discount, start=start, start_capacities=first,
                       years=tuple(out), model=sizing.model)
