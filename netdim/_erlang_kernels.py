"""Private plumbing behind :mod:`netdim.erlang`, :mod:`netdim.engset` and :mod:`netdim.overflow`.

Argument checks (one step, before any work), the one wrapper that maps a scalar function
over broadcast arrays (:func:`_elementwise`), and the compiled copies of the numerics in
:mod:`netdim._erlang_core`. Nothing here is public API.

The numerics are plain Python; :func:`compiled` makes numba copies of them on first need
(an array call, or long scalar work), cached on disk, so that a command line answering one
question never loads the compiler (importing numba alone takes about 0.3 s).
"""

from __future__ import annotations

import sys
import types

import numpy as np

from netdim import _erlang_core

#: Largest number of servers the loss formulas accept: beyond it the work of the continued
#: fraction and of the series grows like sqrt(n) past a few milliseconds, and accuracy is
#: checked against mpmath only up to here (tests/test_erlang_extremes.py). Traffic is
#: any finite number, except for the functions that return a number of servers.
MAX_ARG = 1e10
#: Largest traffic for servers_for and moe_servers: their answers (at most A + 4e6 servers
#: at this traffic, for any target down to 5e-324) stay within MAX_ARG.
MAX_TRAFFIC_SIZED = 9.9e9
#: The largest finite double: the bound of "finite".
FINITE = sys.float_info.max

_SCALARS = (int, float)


# --------------------------------------------------------------------------------------------
# argument checks


def _is_scalar(*xs) -> bool:
    return all(type(x) in _SCALARS for x in xs)


def _bad_scalar(name, x, what):
    raise ValueError(f"{name}: must be {what}, got {x!r}")


def short_number(x):
    """1e10 as '1e10', 9.9e9 as '9.9e9', 250.0 as '250' (for messages)."""
    text = f"{x:.6g}"
    if "e" not in text:
        return text
    mantissa, exponent = text.split("e")
    return f"{mantissa}e{int(exponent)}"


def _describe(name, value, upper):
    """The message for one bad value of a traffic- or server-like argument."""
    if value != value or value < 0:
        return f"{name}: must be >= 0, got {value!r}"
    if value == np.inf:
        return f"{name}: must be finite, got {value!r}"
    return (f"{name}: must be at most {short_number(upper)} (the range the loss formulas "
            f"are checked over), got {value!r}")


def _check_arg(name, x, upper=MAX_ARG):
    """Raise ValueError unless every value of x is finite, >= 0 and <= upper."""
    if type(x) in _SCALARS:
        if not 0 <= x <= upper:
            raise ValueError(_describe(name, float(x), upper))
        return
    arr = np.asarray(x, dtype=float)
    # two reductions and no temporaries in the usual case (NaN makes min and max NaN)
    if arr.size == 0 or (arr.min() >= 0 and arr.max() <= upper):
        return
    bad = ~((arr >= 0) & (arr <= upper))
    raise ValueError(_describe(name, float(arr[bad].flat[0]), upper))


def _check_nonneg(name, x):
    """Raise ValueError unless every value of x is a number >= 0 (NaN fails; inf passes)."""
    if type(x) in _SCALARS:
        if not x >= 0:
            _bad_scalar(name, float(x), ">= 0")
        return
    arr = np.asarray(x, dtype=float)
    bad = ~(arr >= 0)
    if bad.any():
        raise ValueError(f"{name}: must be >= 0, got {float(arr[bad].flat[0])!r}")


def _check_target(name, t):
    if type(t) in _SCALARS:
        if not 0 < t < 1:
            _bad_scalar(name, float(t), "in (0, 1)")
        return
    arr = np.asarray(t, dtype=float)
    bad = ~((arr > 0) & (arr < 1))
    if bad.any():
        raise ValueError(f"{name}: must be in (0, 1), got {float(arr[bad].flat[0])!r}")


def _check_positive(name, x):
    if type(x) in _SCALARS:
        if not x > 0:
            _bad_scalar(name, float(x), "> 0")
        return
    arr = np.asarray(x, dtype=float)
    bad = ~(arr > 0)
    if bad.any():
        raise ValueError(f"{name}: must be > 0, got {float(arr[bad].flat[0])!r}")


def _finish(out):
    """0-d results come back as Python numbers."""
    out = np.asarray(out)
    if out.ndim:
        return out
    return int(out) if out.dtype.kind in "iu" else float(out)


def _flat(*args):
    """Float arrays broadcast to their common shape, flat, contiguous and writeable (what
    the compiled loops take), with that shape."""
    arrs = [np.asarray(x, dtype=float) for x in args]
    shape = np.broadcast_shapes(*(a.shape for a in arrs))
    flat = []
    for a in arrs:
        if a.shape != shape:
            a = np.broadcast_to(a, shape).copy()
        flat.append(np.ascontiguousarray(a).ravel())
    return flat, shape


def _elementwise(scalar_fn, *args, dtype=float, nout=1):
    """``scalar_fn`` over broadcast arguments: Python numbers straight through, arrays
    element by element (Python floats in), results of ``dtype`` in the broadcast shape.

    For the formulas whose scalar work dominates a call (Engset's recursion, the equivalent
    random group, Moe's principle, the derivative in n): one wrapper instead of one per
    function. ``nout > 1``: ``scalar_fn`` returns a tuple, and so does this.
    """
    if _is_scalar(*args):
        return scalar_fn(*args)
    flat, shape = _flat(*args)
    outs = [np.empty(flat[0].shape, dtype=dtype) for _ in range(nout)]
    for i, vals in enumerate(zip(*[f.tolist() for f in flat], strict=True)):
        r = scalar_fn(*vals)
        if nout == 1:
            outs[0][i] = r
        else:
            for o, v in zip(outs, r, strict=True):
                o[i] = v
    res = [_finish(o.reshape(shape)) for o in outs]
    return res[0] if nout == 1 else tuple(res)


# --------------------------------------------------------------------------------------------
# compiled copies of netdim._erlang_core

_COMPILED = None


def loaded():
    """The compiled functions if something has needed them already, else None."""
    return _COMPILED


def compiled():
    """numba copies of every function of :mod:`netdim._erlang_core` (calling one another),
    compiled on first use and cached on disk next to the module."""
    global _COMPILED
    if _COMPILED is None:
        # a heavy import (about 0.3 s), wanted only by array calls and long scalar work
        import numba

        ns = dict(vars(_erlang_core))
        jitted = {}
        for name, fn in vars(_erlang_core).items():
            if isinstance(fn, types.FunctionType) and fn.__module__ == _erlang_core.__name__:
                copy = types.FunctionType(fn.__code__, ns, name, fn.__defaults__)
                copy.__qualname__ = fn.__qualname__
                copy.__module__ = fn.__module__
                # only the entry points are cached: each holds the helpers it calls
                entry = name in _erlang_core.ENTRY_POINTS
                jitted[name] = numba.njit(cache=entry, nogil=True, error_model="numpy")(copy)
        ns.update(jitted)
        _COMPILED = types.SimpleNamespace(**jitted)
    return _COMPILED


def _many(fn_name, *arrays, out_dtype=float, extra=()):
    """Run a compiled loop of :mod:`netdim._erlang_core` over flat float64 arrays."""
    out = np.empty(arrays[0].shape, dtype=out_dtype)
    getattr(compiled(), fn_name)(*arrays, *extra, out)
    return out
