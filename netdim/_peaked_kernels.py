"""Compiled kernels of the peaked link model (private to :mod:`netdim.peaked`).

Erlang B at real numbers of servers, the chain of a Poisson stream and an interrupted
Poisson process (IPP) on a group with reservation, and the whole link model of one link in
one pass, run over arrays of links: the network evaluation calls them on every link at every
sweep, where a numpy expression per step would cost more than the arithmetic.

References
----------
D. L. Jagerman, "Some properties of the Erlang loss function", Bell System Technical Journal
53 (1974) 525-551 (the recursion and its continuation to real numbers of servers).
W. H. Press et al., Numerical Recipes, 3rd ed., section 6.2 (the incomplete gamma function:
its series, and Legendre's continued fraction by the modified Lentz method).
M. F. Neuts, "Matrix-Geometric Solutions in Stochastic Models", Johns Hopkins 1981 (level
reduction of quasi-birth-death chains; here with two phases per level).
"""

from __future__ import annotations

import numpy as np

__all__ = ["log_erlang_b_real", "ipp_chain", "link_kernel", "stream_peakedness"]

_K = None


def kernels():
    """The compiled kernels, built on first use (numba, cached on disk)."""
    global _K
    if _K is None:
        _K = _build()
    return _K


def _build():
    # numba takes about a second to import (the compiler): only when a peaked model is used
    from netdim import _peaked_compiled

    return _peaked_compiled.KERNELS


def log_erlang_b_real(traffic, servers) -> np.ndarray:
    """``log E(A, x)`` for arrays of traffic and real numbers of servers, compiled.

    Parameters
    ----------
    traffic, servers : array_like
        ``A >= 0`` and ``x >= 0`` (broadcast together).

    Returns
    -------
    ndarray
        ``log E(A, x)`` (0 where ``x = 0``, ``-inf`` where ``A = 0 < x``).

    Raises
    ------
    ValueError
        Negative or NaN values.

    Notes
    -----
    ``E(A, x) = A^x e^-A / Gamma(x + 1, A)``. Start value at ``s0 = x - m <= A`` from
    Legendre's continued fraction of ``Gamma(s0 + 1, A)`` (``A >= 2``), or at the fractional
    part of ``x`` from the series of the lower incomplete gamma function (``A < 2``), then
    ``m`` steps of the recursion ``1/E_{s+1} = 1 + (s + 1)/(A E_s)``, rescaled so that it
    never overflows (Jagerman 1974; the plan of :mod:`netdim.erlang`, compiled over arrays).
    """
    a, x = np.broadcast_arrays(np.asarray(traffic, dtype=float), np.asarray(servers, dtype=float))
    for name, arr in (("traffic", a), ("servers", x)):
        if not np.all(arr >= 0):
            raise ValueError(f"{name}: must be >= 0, got {float(arr[~(arr >= 0)].flat[0])!r}")
    shape = a.shape
    a = np.ascontiguousarray(a, dtype=float).ravel()
    x = np.ascontiguousarray(x, dtype=float).ravel()
    out = np.empty(a.shape)
    kernels()["log_erlang"](a, x, out)
    return out.reshape(shape)


def ipp_chain(caps, ts, tp, first, rate, on, off) -> np.ndarray:
    """The chain of a Poisson stream and an IPP on many links (no argument checks).

    Parameters
    ----------
    caps, ts, tp : array_like of int
        Units per link; Poisson calls are admitted while fewer than ``ts`` units are busy,
        the IPP's calls while fewer than ``tp``.
    first, rate, on, off : array_like of float
        Poisson traffic; the IPP's rate while on, its off-to-on and on-to-off rates (per
        mean holding time; ``off = 0``: always on, a Poisson stream).

    Returns
    -------
    ndarray, shape (n_links, 3)
        Blocking of the Poisson calls, call congestion of the IPP's calls, and the fraction
        of all offered traffic lost.
    """
    out = np.empty((len(caps), 3))
    kernels()["chain"](*(np.ascontiguousarray(x, dtype=np.int64) for x in (caps, ts, tp)),
                       *(np.ascontiguousarray(x, dtype=float) for x in (first, rate, on, off)),
                       out)
    return out


def link_kernel(f, o, ov, caps, thr, smooth_rtol, eq_o, eq_l, table, near):
    """The link model on every link in one compiled pass (see ``netdim.peaked``).

    ``table``: None (Rapp's formula where ``eq_o`` / ``eq_l`` hold NaN) or the tuple
    ``(qa, qn, qs, u0, v0, step)`` of corrections to it (used where ``Z - 1 >= near`` and
    ``M >= 10^u0``; the caller gives the groups outside the table). Returns
    ``(out, lost_z, ipp, logb)``: per link the first-choice blocking, the overflow class's
    blocking and its peakedness; the lost peakedness at C and C - r; the IPP (rate, on,
    off); and the log of the mix's equivalent random loss fraction at C and C - r.
    """
    n = len(f)
    out = np.empty((n, 3))
    lost_z = np.empty((n, 2))
    ipp = np.empty((n, 3))
    logb = np.empty((n, 2))
    use = table is not None
    zero = np.zeros((2, 2))
    qa, qn, qs, u0, v0, step = table if use else (zero, zero, zero, 0.0, 0.0, 1.0)
    kernels()["link"](np.ascontiguousarray(f, dtype=float), np.ascontiguousarray(o, dtype=float),
                      np.ascontiguousarray(ov, dtype=float),
                      np.ascontiguousarray(caps, dtype=np.int64),
                      np.ascontiguousarray(thr, dtype=np.int64), float(smooth_rtol),
                      np.ascontiguousarray(eq_o, dtype=float),
                      np.ascontiguousarray(eq_l, dtype=float), use, qa, qn, qs, float(u0),
                      float(v0), float(step), float(near), out, lost_z, ipp, logb)
    return out, lost_z, ipp, logb


def stream_peakedness(m, b, zo, step_factor, step_route, slot, pair_blocks, pair_group,
                      n_routes, n_groups) -> np.ndarray:
    """Peakedness of every route step's stream, in compiled passes over the (step, source
    step) pairs given as blocks (see ``netdim.evaluate.peaked_fixed_point``): the figures of
    its bincount form, bit for bit, without pair-length arrays but the groups (at 30 000
    demands under alternate routing, four million pairs)."""
    out = np.empty(len(m))
    f, i = (lambda x: np.ascontiguousarray(x, dtype=float)), (
        lambda x: np.ascontiguousarray(x, dtype=np.int64))
    group = np.ascontiguousarray(pair_group)
    if group.dtype not in (np.int32, np.int64):
        group = group.astype(np.int64)
    kernels()["peakedness"](f(m), f(b), f(np.reshape(zo, -1)), f(step_factor), i(step_route),
                            i(slot), i(np.reshape(pair_blocks, (-1, 4))), group,
                            int(n_routes), int(n_groups), out)
    return out
