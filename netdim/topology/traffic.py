"""Traffic for an imported topology: a gravity model, equal traffic per pair, or a table.

Each model gives one demand per unordered pair of sites (calls between two sites share the
both-way links whichever end starts them), in erlangs, and says what it assumed.
"""

from __future__ import annotations

import csv
import difflib
import itertools
import math
import pathlib
import statistics
from dataclasses import dataclass

from netdim.errors import NetworkFileError
from netdim.netfile import MAX_PROBLEMS, MAX_TRAFFIC
from netdim.topology.geo import great_circle_km
from netdim.topology.graphfile import Finding, Topology, finding

__all__ = [
    "Gravity",
    "Uniform",
    "DemandTable",
    "PairTraffic",
    "pair_traffic",
    "WEIGHTS",
    "CSV_COLUMNS",
]

#: Site weights of the gravity model when no node attribute is named.
WEIGHTS = ("equal", "degree")

#: Columns a demand table must have (any order; other columns are ignored).
CSV_COLUMNS = ("origin", "destination", "erlangs")


def _positive(name, value, allow_zero=False):
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
    if not ok or value < 0 or (value == 0 and not allow_zero):
        rel = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name}: must be a finite number {rel}, got {value!r}")


@dataclass(frozen=True)
class Gravity:
    """Traffic between two sites proportional to the product of their weights.

    Attributes
    ----------
    total : float
        Erlangs offered in total, over every demand kept.
    weight : {'equal', 'degree'}
        Site weights when ``weight_attribute`` is None: 1 each, or the number of links at the
        site.
    weight_attribute : str or None
        A node attribute (e.g. a population) giving each site's weight; every kept node must
        have it, as a number >= 0.
    decay_km : float or None
        Damp traffic by ``exp(-d / decay_km)`` with ``d`` the great-circle distance between
        the two sites (km); None: no damping.
    pairs : int or None
        Keep only the ``pairs`` largest demands (ties: the earlier pair in site order), then
        scale them to ``total``.

    Notes
    -----
    Traffic between sites i and j is ``T_ij = K w_i w_j f(d_ij)``, with K set so the
    kept demands add up to ``total`` (the gravity model of traffic matrices [1]_; the
    exponential deterrence function ``f(d) = exp(-d / D)`` is one of the standard forms of
    transport planning [2]_).

    References
    ----------
    .. [1] M. Roughan, "Simplifying the synthesis of Internet traffic matrices", ACM SIGCOMM
       Computer Communication Review 35(5):93-96, 2005.
    .. [2] J. de D. Ortuzar and L. G. Willumsen, "Modelling Transport", 4th ed., Wiley, 2011,
       ch. 5 (distribution models; deterrence functions).
    """

    total: float
    weight: str = "equal"
    weight_attribute: str | None = None
    decay_km: float | None = None
    pairs: int | None = None

    def __post_init__(self):
        _positive("total", self.total)
        if self.total > MAX_TRAFFIC:
            raise ValueError(f"total: {self.total:g} erlangs is more than a network file "
                             f"allows ({MAX_TRAFFIC:g})")
        if self.weight not in WEIGHTS:
            raise ValueError(f"weight: must be one of {', '.join(WEIGHTS)}, got {self.weight!r}")
        if self.weight_attribute is not None and not (
                isinstance(self.weight_attribute, str) and self.weight_attribute):
            raise ValueError(f"weight_attribute: must be an attribute name, got "
                             f"{self.weight_attribute!r}")
        if self.decay_km is not None:
            _positive("decay_km", self.decay_km)
        if self.pairs is not None and (isinstance(self.pairs, bool)
                                       or not isinstance(self.pairs, int) or self.pairs < 1):
            raise ValueError(f"pairs: must be a whole number >= 1, got {self.pairs!r}")


@dataclass(frozen=True)
class Uniform:
    """The same traffic, ``per_pair`` erlangs, between every pair of sites."""

    per_pair: float

    def __post_init__(self):
        _positive("per_pair", self.per_pair)
        if self.per_pair > MAX_TRAFFIC:
            raise ValueError(f"per_pair: {self.per_pair:g} erlangs is more than a network "
                             f"file allows ({MAX_TRAFFIC:g})")


@dataclass(frozen=True)
class DemandTable:
    """Demands read from a CSV file with columns origin, destination, erlangs.

    A site is named by its site id, its node id in the topology file, or its label (when no
    other node has it). Blank lines and lines starting with ``#`` are skipped. Rows A,B and
    B,A are added together (traffic both ways shares the same links); the same pair twice
    in the same order is an error.
    """

    path: str


@dataclass(frozen=True)
class PairTraffic:
    """One demand: the two site ids and the offered traffic in erlangs."""

    between: tuple[str, str]
    erlangs: float


def pair_traffic(topology: Topology, model) -> tuple[tuple[PairTraffic, ...],
                                                      tuple[Finding, ...], str]:
    """The demands of a traffic model on a topology.

    Parameters
    ----------
    topology : Topology
    model : Gravity, Uniform or DemandTable

    Returns
    -------
    demands : tuple of PairTraffic
        In site order (pairs i < j) for the models, in row order for a table.
    findings : tuple of Finding
        What was guessed (e.g. the distance of pairs without coordinates).
    description : str
        One sentence saying what the traffic is, for the network file's header.

    Raises
    ------
    NetworkFileError
        A weight attribute missing or unusable on some nodes (one line per node), or a
        demand table that cannot be read or has bad rows (``FILE:LINE: problem``).
    ValueError
        Traffic that comes to zero on every pair, or a model of an unknown type.
    """
    if isinstance(model, Gravity):
        return _gravity(topology, model)
    if isinstance(model, Uniform):
        pairs = _pairs(topology)
        out = tuple(PairTraffic((a.id, b.id), float(model.per_pair)) for a, b in pairs)
        return out, (), (f"uniform: {model.per_pair:g} erlangs between every pair of sites "
                         f"({len(out)} pairs)")
    if isinstance(model, DemandTable):
        return _table(topology, model.path)
    raise ValueError(f"model: expected Gravity, Uniform or DemandTable, got {model!r}")


def _pairs(topology):
    """Unordered pairs of sites in the same part, in site order."""
    return [(a, b) for a, b in itertools.combinations(topology.sites, 2) if a.part == b.part]


def _weights(topology, model):
    if model.weight_attribute is None:
        if model.weight == "equal":
            return [1.0] * len(topology.sites), "equal weights (1 per site)"
        return ([float(s.degree) for s in topology.sites],
                "weights by degree (the number of links at each site)")
    name = model.weight_attribute
    problems, out = [], []
    for s in topology.sites:
        raw = s.attributes.get(name)
        value = None if isinstance(raw, bool) else _as_float(raw)
        who = f"node '{s.node}'" + (f" ({s.name})" if s.name and s.name != s.node else "")
        if raw is None:
            problems.append(f"{topology.source}: {who}: weight attribute '{name}' is missing "
                            "(every site needs one)")
        elif value is None or not math.isfinite(value) or value < 0:
            problems.append(f"{topology.source}: {who}: weight attribute '{name}' must be a "
                            f"number >= 0, got {raw!r}")
        out.append(value)
    if problems:
        raise NetworkFileError(_capped(problems, topology.source))
    return out, f"weights from the node attribute '{name}'"


def _as_float(raw):
    if isinstance(raw, (int, float)):
        return float(raw)
    if isinstance(raw, str):
        try:
            return float(raw.strip())
        except ValueError:
            return None
    return None


def _gravity(topology, model):
    weights, said = _weights(topology, model)
    w = {s.id: x for s, x in zip(topology.sites, weights, strict=True)}
    pairs = _pairs(topology)
    found = []
    if model.decay_km is None:
        damp = [1.0] * len(pairs)
        said_decay = "no distance damping"
    else:
        dist = [great_circle_km(a.lon, a.lat, b.lon, b.lat) if a.located and b.located
                else None for a, b in pairs]
        known = [d for d in dist if d is not None]
        if not known:
            raise ValueError("decay_km: no two sites have coordinates, so traffic cannot be "
                             "damped by distance")
        unknown = [f"{a.id}-{b.id}" for (a, b), d in zip(pairs, dist, strict=True) if d is None]
        if unknown:
            median = statistics.median(known)
            found.append(finding(
                "guessed", "pair_distance", unknown,
                f"{len(unknown)} site pair(s) without a distance (a site has no coordinates): "
                f"damped as if {median:.1f} km apart, the median of the others"))
            dist = [median if d is None else d for d in dist]
        damp = [math.exp(-d / model.decay_km) for d in dist]
        said_decay = f"damped by exp(-distance / {model.decay_km:g} km)"
    raw = [w[a.id] * w[b.id] * f for (a, b), f in zip(pairs, damp, strict=True)]
    keep = list(range(len(pairs)))
    share = 1.0
    if model.pairs is not None and model.pairs < len(pairs):
        keep = sorted(sorted(keep, key=lambda k: -raw[k])[: model.pairs])
        whole = sum(raw)
        share = sum(raw[k] for k in keep) / whole if whole > 0 else 0.0
    scale_base = sum(raw[k] for k in keep)
    if not scale_base > 0:
        raise ValueError(f"gravity traffic is zero for every pair ({said}): nothing to scale "
                         f"to {model.total:g} erlangs")
    k = model.total / scale_base
    out = tuple(PairTraffic((pairs[i][0].id, pairs[i][1].id), raw[i] * k) for i in keep
                if raw[i] > 0)
    zero = len(keep) - len(out)
    if zero:
        found.append(finding("dropped", "zero_traffic", [], f"left out {zero} pair(s) whose "
                             "gravity traffic is zero (a weight of 0)"))
    text = f"gravity model: {model.total:g} erlangs in total, {said}, {said_decay}"
    if model.pairs is not None and model.pairs < len(pairs):
        text += (f"; the {len(keep)} largest of {len(pairs)} pairs kept (they held "
                 f"{100 * share:.1f}% of the traffic) and scaled to the total")
    else:
        text += f"; {len(out)} pairs"
    return out, tuple(found), text


def _capped(problems, source):
    if len(problems) > MAX_PROBLEMS:
        extra = len(problems) - MAX_PROBLEMS
        problems = problems[:MAX_PROBLEMS] + [f"{source}: and {extra} more problems not shown"]
    return problems


def _site_finder(topology):
    by_id = {s.id: s for s in topology.sites}
    by_node = {s.node: s for s in topology.sites}
    labels = {}
    for s in topology.sites:
        if s.name:
            labels.setdefault(s.name, []).append(s)
    dropped = {}
    for node, label, why in topology.dropped_nodes:
        dropped[node] = why
        if label:
            dropped.setdefault(label, why)

    def find(name):
        """(site, problem)."""
        for table in (by_id, by_node):
            if name in table:
                return table[name], None
        if name in labels:
            if len(labels[name]) == 1:
                return labels[name][0], None
            ids = ", ".join(s.id for s in labels[name])
            return None, f"'{name}' is the label of several sites ({ids}): use a site id"
        if name in dropped:
            return None, f"site '{name}' was dropped from the topology ({dropped[name]})"
        close = difflib.get_close_matches(name, list(by_id), n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        return None, f"site '{name}' is not in the topology{hint}"

    return find


def _table(topology, path):
    source = str(path)
    try:
        text = pathlib.Path(path).read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise NetworkFileError(f"{source}: cannot read: {reason}") from None
    problems = []
    find = _site_finder(topology)
    reader = csv.reader(text.splitlines())
    columns = None
    seen = {}  # frozenset of ids -> {(a, b): line}
    totals, order = {}, []
    summed = []
    for row in reader:
        line = reader.line_num
        cells = [c.strip() for c in row]
        if not any(cells) or cells[0].startswith("#"):
            continue
        if columns is None:
            names = [c.lower() for c in cells]
            missing = [c for c in CSV_COLUMNS if c not in names]
            if missing:
                raise NetworkFileError(
                    f"{source}:{line}: the first row must name the columns "
                    f"{', '.join(CSV_COLUMNS)}; {', '.join(missing)} missing (got "
                    f"{', '.join(cells)})")
            columns = {c: names.index(c) for c in CSV_COLUMNS}
            width = max(columns.values()) + 1
            continue
        if len(cells) < width:
            problems.append(f"{source}:{line}: expected {width} columns, got {len(cells)}")
            continue
        ends, bad = [], False
        for col in ("origin", "destination"):
            site, why = find(cells[columns[col]])
            if site is None:
                problems.append(f"{source}:{line}: {col}: {why}")
                bad = True
            ends.append(site)
        raw = cells[columns["erlangs"]]
        value = _as_float(raw)
        if value is None or not math.isfinite(value) or value < 0:
            problems.append(f"{source}:{line}: erlangs must be a number >= 0, got {raw!r}")
            bad = True
        elif value > MAX_TRAFFIC:
            problems.append(f"{source}:{line}: erlangs {raw} is too large (more than "
                            f"{MAX_TRAFFIC:g})")
            bad = True
        if bad:
            continue
        a, b = ends
        if a.id == b.id:
            problems.append(f"{source}:{line}: origin and destination are the same site "
                            f"'{a.id}'")
            continue
        if a.part != b.part:
            problems.append(f"{source}:{line}: sites '{a.id}' and '{b.id}' are in parts of the "
                            "network that no link joins")
            continue
        key = frozenset((a.id, b.id))
        dirs = seen.setdefault(key, {})
        if (a.id, b.id) in dirs:
            problems.append(f"{source}:{line}: pair {a.id},{b.id} already given on line "
                            f"{dirs[(a.id, b.id)]}")
            continue
        dirs[(a.id, b.id)] = line
        if key in totals:
            totals[key][1] += value
            summed.append(f"{a.id}-{b.id}")
        else:
            totals[key] = [(a.id, b.id), value]
            order.append(key)
    if columns is None:
        problems.append(f"{source}:1: no header row (expected the columns "
                        f"{', '.join(CSV_COLUMNS)})")
    elif not problems and not order:
        problems.append(f"{source}: no demands (only a header)")
    if problems:
        raise NetworkFileError(_capped(problems, source))
    out = tuple(PairTraffic(totals[k][0], float(totals[k][1])) for k in order)
    found = ()
    if summed:
        found = (finding("merged", "both_directions", summed,
                         f"added {len(summed)} row(s) to the row of the same pair in the "
                         "other direction"),)
    total = sum(p.erlangs for p in out)
    name = pathlib.Path(source).name
    return out, found, f"from the table {name}: {len(out)} pairs, {total:.6g} erlangs in total"
