"""Tables of Erlang's loss formula: every E(A, n) up to n, chosen server counts, and runs of
evenly spaced server counts (a group grown in modules), each load by one pass of the forward
recursion (compiled: :func:`netdim._erlang_core.advance`).

Public through :mod:`netdim.erlang` (``erlang_b_table``, ``erlang_b_runs``); a module of its
own so that :mod:`netdim.erlang` stays within the guide's size. Every table the sizer builds
comes from here, so that they agree to the last bit.

References
----------
.. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
   significance in automatic telephone exchanges", Elektroteknikeren 13 (1917) 5-13.
"""

from __future__ import annotations

import numpy as np

from netdim._erlang_kernels import FINITE, MAX_ARG, _check_arg, compiled, short_number

__all__ = ["erlang_b_table", "erlang_b_runs"]

#: Most values one table holds.
_MAX_TABLE = 10**8


def erlang_b_table(traffic, max_servers, *, servers=None):
    """Every E(A, n) for n = 0, 1, ..., ``max_servers``, for each offered traffic.

    Parameters
    ----------
    traffic : float or array_like
        Offered traffic in erlangs, finite, >= 0, any shape.
    max_servers : int
        Largest number of servers in the table, a whole number >= 0.
    servers : array_like of int, optional
        Only these server counts (whole numbers from 0 to ``max_servers``, in any order,
        repeats allowed), so that the table holds ``len(servers)`` values per load.

    Returns
    -------
    ndarray, shape ``np.shape(traffic) + (max_servers + 1,)``
        ``out[..., n] = E(traffic, n)``; the last axis runs over the servers. With
        ``servers``, shape ``np.shape(traffic) + (len(servers),)`` and
        ``out[..., k] = E(traffic, servers[k])``.

    Raises
    ------
    ValueError
        Bad traffic (as :func:`erlang_b`); ``max_servers`` not a whole number >= 0,
        ``servers`` not whole numbers in ``0..max_servers``, or a table of more than 1e8
        values.

    Notes
    -----
    Erlang's recursion ``E_n = A E_{n-1} / (n + A E_{n-1})``, ``E_0 = 1`` [1]_, run
    forwards, where its rounding errors do not grow (they shrink by ``1 - E_n`` each step);
    one pass per load up to the largest server count asked for.

    References
    ----------
    .. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
       significance in automatic telephone exchanges", Elektroteknikeren 13 (1917) 5-13.

    Examples
    --------
    >>> from netdim.erlang import erlang_b_table
    >>> erlang_b_table(2.0, 3).round(4)
    array([1.    , 0.6667, 0.4   , 0.2105])
    >>> erlang_b_table([1.0, 2.0], 2).shape
    (2, 3)
    >>> erlang_b_table(2.0, 3, servers=[3, 1]).round(4)
    array([0.2105, 0.6667])
    """
    _check_arg("traffic", traffic, FINITE)
    if isinstance(max_servers, bool) or not (
        isinstance(max_servers, (int, np.integer))
        or (isinstance(max_servers, float) and max_servers.is_integer())
    ) or max_servers < 0:
        raise ValueError(f"max_servers: must be a whole number >= 0, got {max_servers!r}")
    m = int(max_servers)
    a = np.asarray(traffic, dtype=float)
    if servers is None:
        cols = np.arange(m + 1, dtype=np.int64)
    else:
        cols = _whole_numbers("servers", servers, m)
        if cols.ndim != 1:
            raise ValueError(f"servers: must be one list of server counts, got shape "
                             f"{cols.shape}")
    _check_table_size("max_servers" if servers is None else "servers", a.size * len(cols))
    flat = np.ascontiguousarray(a).ravel()
    out = np.empty((flat.size, len(cols)))
    if servers is None:
        compiled().table_many(flat, cols, out)
    else:  # the recursion climbs: servers in increasing order, then back to the caller's
        order = np.argsort(cols, kind="stable")
        part = np.empty_like(out)
        compiled().table_many(flat, np.ascontiguousarray(cols[order]), part)
        out[:, order] = part
    return out.reshape(a.shape + (len(cols),))


def erlang_b_runs(traffic, first, step, count):
    """E(A_i, first_i + step_i k) for k = 0..count_i - 1, for each traffic A_i: runs of
    evenly spaced server counts (a group grown in modules), one after another.

    Parameters
    ----------
    traffic : array_like
        Offered traffic of each run in erlangs, finite, >= 0, one dimension.
    first, step, count : array_like of int
        Per run: the first server count (>= 0), the spacing (>= 0) and how many values
        (>= 0); the same length as ``traffic``.

    Returns
    -------
    ndarray, shape ``(sum(count),)``
        Run 0's values, then run 1's, and so on.

    Raises
    ------
    ValueError
        Bad traffic (as :func:`erlang_b`); a count, first server count or step that is not
        a whole number >= 0; arrays of different lengths; more than 1e8 values.

    Notes
    -----
    The recursion of :func:`erlang_b_table` [1]_, each run in one pass up to its last
    server count: the values are the table's to the last bit.

    References
    ----------
    .. [1] A. K. Erlang, "Solution of some problems in the theory of probabilities of
       significance in automatic telephone exchanges", Elektroteknikeren 13 (1917) 5-13.

    Examples
    --------
    >>> from netdim.erlang import erlang_b_runs
    >>> erlang_b_runs([2.0, 2.0], [0, 1], [2, 1], [2, 2]).round(4)
    array([1.    , 0.4   , 0.6667, 0.4   ])
    """
    _check_arg("traffic", traffic, FINITE)
    a = np.ascontiguousarray(traffic, dtype=float)
    if a.ndim != 1:
        raise ValueError(f"traffic: must be one list of loads, got shape {a.shape}")
    first, step, count = (_whole_numbers(name, x, None) for name, x in
                          (("first", first), ("step", step), ("count", count)))
    for name, x in (("first", first), ("step", step), ("count", count)):
        if x.shape != a.shape:
            raise ValueError(f"{name}: must have one value per load ({a.size}), got shape "
                             f"{x.shape}")
    total = int(count.sum())
    _check_table_size("count", total)
    last = first + step * np.maximum(count - 1, 0)
    if len(last) and last.max() > MAX_ARG:
        raise ValueError(f"first, step, count: server counts up to {int(last.max())}, at "
                         f"most {short_number(MAX_ARG)}")
    out = np.empty(total)
    compiled().table_runs(a, first, step, count, out)
    return out


def _whole_numbers(name, x, upper):
    """``x`` as int64, every value a whole number in ``0..upper`` (``>= 0`` for None)."""
    arr = np.asarray(x)
    if arr.dtype.kind not in "iu":
        whole = (np.isfinite(arr) & (arr == np.round(arr)) if arr.dtype.kind == "f"
                 else np.zeros(arr.shape, bool))
        if not whole.all():
            raise ValueError(f"{name}: must be whole numbers, got {arr[~whole].flat[0].item()!r}")
    bad = (arr < 0) | (arr > (MAX_ARG if upper is None else upper))
    if bad.any():
        what = (f">= 0 and at most {short_number(MAX_ARG)}" if upper is None
                else f"from 0 to {upper}")
        raise ValueError(f"{name}: must be whole numbers {what}, got {arr[bad].flat[0].item()!r}")
    return np.ascontiguousarray(arr, dtype=np.int64)


def _check_table_size(name, cells):
    if cells > _MAX_TABLE:
        raise ValueError(
            f"{name}: the table would hold {cells:,} values, at most {_MAX_TABLE:,}; "
            f"ask for fewer servers or fewer loads at a time"
        )
