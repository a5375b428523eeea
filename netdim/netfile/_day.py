"""Demand over the day in a network file: ``rates``, ``period``, ``start``, ``cyclic``,
``target_basis``.

Private to :mod:`netdim.netfile`. Read after the demands section (each demand's mapping is
found again by its line), so that the plain reader stays as it was: a file without
``rates`` reads to exactly the network it did before. Every value is checked here, and a
problem is one line ``FILE:LINE: ITEM: problem`` like every other field.

The fields (design notes in docs/daily.md):

* ``rates: [r1, r2, ...]`` (demand): arrivals per hour in consecutive periods, instead of
  ``rate`` or ``traffic``. Every demand with rates has the same number of periods; a demand
  with one ``rate`` or ``traffic`` in such a network is the same rate in every period.
* ``period`` (demand or ``defaults``, default 1): hours per period, one clock for all.
* ``start`` (demand): calls in progress at the start of the day (default 0: empty).
* ``cyclic: true`` (``defaults`` or demand): the day repeats; the whole network's state
  repeats, so every demand that says it must agree, and ``start`` is refused with it.
* ``target_basis: peak | day`` (demand or ``defaults``, default ``peak``): the target
  applies to the worst period, or to the share of the day's arrivals lost.
"""

from __future__ import annotations

from dataclasses import replace

from netdim.day_profile import TARGET_BASES, offered_load
from netdim.model import DayProfile
from netdim.netfile._fields import BAD, kind, show, unknown
from netdim.netfile._yaml import Map, Seq, line_of

__all__ = ["parse_day", "MAX_PERIODS"]

#: Most periods in a day profile (a minute's resolution over a week is 10080).
MAX_PERIODS = 20_000

_HOURS_LIMIT = 1e4  # as MAX_HOLDING: longer periods are taken for a unit mistake
_RATE_LIMIT = 1e10  # calls per hour, as the reader's limit on `rate`
_UNITS_LIMIT = 10_000_000


def parse_day(reader, data, demands, max_traffic, links=()):
    """The day profile of a network file.

    Parameters
    ----------
    reader : FieldReader
    data : Map
        The whole file.
    demands : list of Demand
        As :func:`~netdim.netfile._sections.parse_demands` read them (a demand with rates
        has traffic 0 there).
    max_traffic : float
        Largest traffic (erlangs) accepted, as for ``rate`` and ``traffic``.
    links : sequence of Link
        To check the calls in progress at the start against the capacities given.

    Returns
    -------
    demands : list of Demand
        With the traffic of a demand with rates set to the peak of its offered load over
        the day (the day's busy-hour traffic), so the busy-hour methods stay meaningful.
    day : DayProfile or None
        None when no demand gives rates (and no day field is used).
    """
    dm = data.get("defaults") if isinstance(data.get("defaults"), Map) else Map()
    d_period = _hours(reader, dm, "defaults")
    d_cyclic = _yesno(reader, dm, "cyclic", "defaults")
    d_basis = _basis(reader, dm, "defaults")
    by_line = {}
    seq = data.get("demands")
    if isinstance(seq, Seq):
        for i, raw in enumerate(seq):
            if isinstance(raw, Map):
                by_line[line_of(seq, i)] = raw
    rows, bad = [], BAD in (d_period, d_cyclic, d_basis)
    for d in demands:
        m = by_line.get(d.line, Map())
        item = f"demand {show(d.id)}"
        row = {
            "m": m, "item": item,
            "rates": _rates(reader, m, item),
            "period": _hours(reader, m, item),
            "start": _start(reader, m, item),
            "cyclic": _yesno(reader, m, "cyclic", item),
            "basis": _basis(reader, m, item),
        }
        if row["rates"] is None and row["period"] not in (None, BAD):
            reader.add(line_of(m, "period"), item,
                       "period applies to rates (arrivals per hour in each period); give "
                       "rates or leave period out")
            bad = True
        if row["rates"] not in (None, BAD) and d.bandwidth != 1:
            reader.add(line_of(m, "rates"), item,
                       f"rates: bandwidth {d.bandwidth}: a day profile takes single-rate "
                       "demands only (bandwidth 1)")
            bad = True
        bad = bad or any(v is BAD for v in row.values())
        rows.append(row)
    profiled = [(d, r) for d, r in zip(demands, rows, strict=True) if r["rates"] is not None]
    if not profiled:
        _refuse_without_rates(reader, dm, rows)
        return demands, None
    if bad:
        return demands, None  # problems reported; the profile is not built from them
    out, day = _profile(reader, demands, rows, profiled, (d_period, d_cyclic, d_basis),
                        max_traffic)
    if day is not None and any(day.start):
        _check_start(reader, demands, rows, day, links)
    return out, day


def _check_start(reader, demands, rows, day, links):
    """Calls in progress at the start fit the links of their first routes."""
    busy = {}
    for d, r, s in zip(demands, rows, day.start, strict=True):
        for j in (d.routes[0].links if d.routes and s else ()):
            busy[j] = busy.get(j, 0) + s
            cap = links[j].capacity if j < len(links) else None
            if cap is not None and busy[j] > cap:
                reader.add(line_of(r["m"], "start"), r["item"],
                           f"start: {busy[j]} calls in progress on link "
                           f"{show(links[j].id)} exceed its capacity {cap}")


def _profile(reader, demands, rows, profiled, defaults, max_traffic):
    d_period, d_cyclic, d_basis = defaults
    first, r0 = profiled[0]
    n_periods = len(r0["rates"])
    period = r0["period"] if r0["period"] is not None else (d_period or 1.0)
    ok = True
    for _d, r in profiled[1:]:
        if len(r["rates"]) != n_periods:
            reader.add(line_of(r["m"], "rates"), r["item"],
                       f"rates: {len(r['rates'])} periods, but demand {show(first.id)} (line "
                       f"{first.line}) has {n_periods}: every demand's day has the same "
                       "periods")
            ok = False
        own = r["period"] if r["period"] is not None else (d_period or 1.0)
        if own != period:
            reader.add(line_of(r["m"], "period"), r["item"],
                       f"period {own:g} h differs from {period:g} h of demand "
                       f"{show(first.id)} (line {first.line}): one clock for the network")
            ok = False
    cyclic, said = bool(d_cyclic), None
    if d_cyclic is None:
        said = next((r for r in rows if r["cyclic"] is not None), None)
        cyclic = bool(said and said["cyclic"])
    for r in rows:
        if r["cyclic"] is not None and r["cyclic"] != cyclic:
            where = "defaults.cyclic" if said is None else f"{said['item']}"
            reader.add(line_of(r["m"], "cyclic"), r["item"],
                       f"cyclic {str(r['cyclic']).lower()} disagrees with {where}: the day "
                       "repeats for the whole network or for none of it")
            ok = False
        if cyclic and r["start"] is not None:
            reader.add(line_of(r["m"], "start"), r["item"],
                       "start: a cyclic day has no start occupancy (the day repeats); give "
                       "start or cyclic, not both")
            ok = False
    if not ok:
        return demands, None
    out, rates = [], []
    for d, r in zip(demands, rows, strict=True):
        if r["rates"] is None:
            rates.append((float(d.rate),) * n_periods)
            out.append(d)
            continue
        rates.append(tuple(float(x) for x in r["rates"]))
        peak_rate = max(rates[-1])
        if peak_rate * d.holding > max_traffic:
            reader.add(line_of(r["m"], "rates"), r["item"],
                       f"rates: largest rate x holding = {peak_rate * d.holding:g} erlangs is "
                       f"too large (more than {max_traffic:g} erlangs)")
            out.append(d)
            continue
        load = offered_load(rates[-1], d.holding, period, start=float(r["start"] or 0),
                            cyclic=cyclic, steps_per_period=8)
        out.append(replace(d, traffic=float(load.max())))
    day = DayProfile(
        rates=tuple(rates),
        period=float(period),
        cyclic=cyclic,
        start=tuple(int(r["start"] or 0) for r in rows),
        target_basis=tuple(r["basis"] or d_basis or "peak" for r in rows),
    )
    return out, day


def _refuse_without_rates(reader, dm, rows):
    """Day fields in a file without any rates: say they do nothing."""
    note = "applies to a day profile: give rates (arrivals per hour in each period) in a demand"
    for key in ("period", "cyclic", "target_basis"):
        if dm.get(key) is not None:
            reader.add(line_of(dm, key), "defaults", f"{key} {note}")
    for r in rows:
        for key in ("start", "cyclic", "target_basis"):
            if r["m"].get(key) is not None:
                reader.add(line_of(r["m"], key), r["item"], f"{key} {note}")


# --------------------------------------------------------------------------------------------
# one field each


def _rates(reader, m, item):
    """The rates list (a list of floats), None when absent, BAD when wrong (reported)."""
    if m.get("rates") is None:
        return None
    raw = m["rates"]
    line = line_of(m, "rates")
    if not isinstance(raw, Seq) or not raw:
        what = "is empty" if isinstance(raw, list) else f"must be a list, got {kind(raw)}"
        reader.add(line, item, f"rates {what} (arrivals per hour, one per period: "
                   "[5, 10, 30])")
        return BAD
    if len(raw) > MAX_PERIODS:
        reader.add(line, item, f"rates: {len(raw)} periods, more than the limit of "
                   f"{MAX_PERIODS}")
        return BAD
    values, ok = [], True
    for i, value in enumerate(raw):
        cell = Map(line_of(raw, i))
        cell[f"rates[{i + 1}]"] = value
        x = reader.number(cell, f"rates[{i + 1}]", item, low=0, high=_RATE_LIMIT,
                          high_note="calls per hour")
        if x is BAD:
            ok = False
        values.append(x)
    return values if ok else BAD


def _hours(reader, m, item):
    return reader.number(m, "period", item, None, low=0, low_open=True, high=_HOURS_LIMIT,
                         high_note=f"more than {_HOURS_LIMIT:g} hours; period is in hours")


def _start(reader, m, item):
    return reader.number(m, "start", item, None, integer=True, low=0, high=_UNITS_LIMIT,
                         high_note="calls in progress at the start of the day")


def _yesno(reader, m, key, item):
    if m.get(key) is None:
        return None
    raw = m[key]
    if isinstance(raw, bool):
        return raw
    reader.add(line_of(m, key), item, f"{key} must be true or false, got {show(raw)}")
    return BAD


def _basis(reader, m, item):
    if m.get("target_basis") is None:
        return None
    raw = m["target_basis"]
    if isinstance(raw, str) and raw in TARGET_BASES:
        return raw
    reader.add(line_of(m, "target_basis"), item,
               unknown(f"unknown target_basis {show(raw)}", raw, TARGET_BASES)
               + " (peak: the worst period; day: the day's lost share)")
    return BAD
