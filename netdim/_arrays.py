"""Read-only copies of arrays, for the fields of frozen result dataclasses."""

from __future__ import annotations

import numpy as np

__all__ = ["frozen"]


def frozen(a, dtype=float) -> np.ndarray:
    """A read-only copy of ``a`` as an array of ``dtype``."""
    out = np.array(a, dtype=dtype)
    out.setflags(write=False)
    return out
