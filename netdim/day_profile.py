"""Demand over the day without the solvers: periods, the offered load, the worst period.

Light helpers (numpy only) shared by the network-file reader, :mod:`netdim.transient` and
:mod:`netdim.daily_loads`, so that reading a file with a day profile does not load the
transient solvers.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["TARGET_BASES", "link_day_records", "period_lengths", "day_grid", "offered_load",
           "worst_period", "check_rates", "check_holding"]

#: What a blocking target applies to: the worst period of the day, or the day's lost share.
TARGET_BASES = ("peak", "day")


def period_lengths(period, n_periods: int) -> np.ndarray:
    """Hours of each period from one length or one per period.

    Raises
    ------
    ValueError
        A length that is not a finite number > 0, or the wrong count.
    """
    arr = np.asarray(period, dtype=float)
    if arr.ndim == 0:
        arr = np.full(n_periods, float(arr))
    if arr.shape != (n_periods,):
        raise ValueError(
            f"period: expected one length or {n_periods} (one per period), got shape {arr.shape}"
        )
    bad = ~(np.isfinite(arr) & (arr > 0))
    if bad.any():
        raise ValueError(f"period: must be a number of hours > 0, got {float(arr[bad][0])!r}")
    return arr


def day_grid(hours, steps: int) -> np.ndarray:
    """Grid times (hours from the start): 0, then ``steps`` equal steps in every period."""
    starts = np.cumsum(hours) - hours
    return np.concatenate([[0.0], *(t0 + np.linspace(0.0, dt, steps + 1)[1:]
                                    for t0, dt in zip(starts, hours, strict=True))])


def offered_load(rates, holding, period=1.0, *, start=0.0, cyclic=False,
                 steps_per_period=4) -> np.ndarray:
    """Offered traffic over the day: the mean busy units of an infinite resource.

    Within a period ``m(t) = m0 exp(-t / h) + lambda h (1 - exp(-t / h))`` [1]_; from
    ``m0 = start``, or, for a cyclic day, the ``m0`` that the day returns to (closed form).
    On the grid of :func:`day_grid`. Its peak, not ``max(rates) * holding``, is the busy-hour
    traffic of a varying day.

    References
    ----------
    .. [1] D. L. Jagerman, Bell System Technical Journal 54 (1975) 625-661.
    """
    lam, h = check_rates(rates), check_holding(holding)
    hours = period_lengths(period, lam.size)
    decay = np.exp(-hours / h)
    m = float(start)
    if cyclic:
        keep, add = 1.0, 0.0  # m(T) = keep m0 + add, linear in m0
        for d, lam_p in zip(decay, lam, strict=True):
            keep, add = keep * d, add * d + lam_p * h * (1.0 - d)
        m = add / (1.0 - keep)
    out = [m]
    for lam_p, dt in zip(lam, hours, strict=True):
        e = np.exp(-np.linspace(0.0, dt, steps_per_period + 1)[1:] / h)
        out.extend(m * e + lam_p * h * (1.0 - e))
        m = out[-1]
    return np.array(out)


def worst_period(blocking, offered) -> int:
    """Index of the largest blocking among periods with arrivals (among all if none)."""
    b = np.asarray(blocking, dtype=float)
    busy = np.asarray(offered, dtype=float) > 0
    if busy.any():
        return int(np.flatnonzero(busy)[np.argmax(b[busy])])
    return int(np.argmax(b))


def check_rates(rates) -> np.ndarray:
    arr = np.asarray(rates, dtype=float)
    if arr.ndim != 1 or arr.size == 0:
        raise ValueError(f"rates: expected a list of one rate per period, got shape {arr.shape}")
    bad = ~(np.isfinite(arr) & (arr >= 0))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"rates: period {i}: must be a finite rate >= 0, got {arr[i]!r}")
    return arr


def check_holding(holding) -> float:
    h = float(holding)
    if not (math.isfinite(h) and h > 0):
        raise ValueError(f"holding: must be a number of hours > 0, got {holding!r}")
    return h


def link_day_records(result) -> list:
    """The ``links`` records of a day result's ``to_dict()`` (the network method's and the
    simulation's share them): capacity, blocking and occupancy by period, offered load."""
    return [
        {
            "id": lid,
            "capacity": int(result.capacity[j]),
            "blocking_by_period": result.link_blocking[j].tolist(),
            "occupancy": {
                "mean": result.occupancy_mean[j].tolist(),
                "quantile_level": result.quantile,
                "quantile": result.occupancy_quantile[j].tolist(),
                "peak": float(result.peak_occupancy[j]),
                "peak_time": float(result.peak_time[j]),
                "peak_quantile": int(result.occupancy_quantile[j].max(initial=0)),
            },
            "offered_load": result.offered_load[j].tolist(),
        }
        for j, lid in enumerate(result.link_ids)
    ]
