"""The sizer's per-link loss table (netdim.dimension.choices.LossTable) against mpmath.

Source: ``g(n) = -log(1 - E(A, n))`` with E from mpmath at 50 digits (tests/erlang_mpmath.py);
capacities below the installed one are +inf and those past the window 0 by the table's
documented rule.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from erlang_mpmath import mp_erlang

from netdim.dimension.choices import LossTable


def _mp_g(a, n):
    with mp.workdps(60):
        return float(-mp.log1p(-mp_erlang(a, n, dps=60)))


def test_table_at_module_counts_and_between_them():
    loads = [12.0, 0.0, 230.0, 3.5]
    installed = [0, 4, 200, 2]
    module = [1, 3, 10, 2]
    table = LossTable(loads, installed, module)
    for j, (a, inst, mod) in enumerate(zip(loads, installed, module, strict=True)):
        top = int(table.n1[j])
        # the module counts (held in the table) and every capacity between them (computed
        # on demand), up to a little past the window
        for n in range(inst, top + 2 * mod):
            got = table.g(j, n)
            if n > top and (n - inst) % mod == 0:
                assert got == 0.0  # past the window: taken as 0
                continue
            exact = _mp_g(a, n) if a > 0 and n > 0 else (math.inf if n == 0 else 0.0)
            if n > top:
                assert got == 0.0 or got == pytest.approx(exact, rel=1e-12), (j, n)
            elif math.isinf(exact):
                assert math.isinf(got), (j, n)
            else:
                assert got == pytest.approx(exact, rel=1e-12, abs=1e-300), (j, n)
        if inst > 0:
            assert math.isinf(table.g(j, inst - 1))  # below what is installed


def test_g_all_is_g_link_by_link():
    rng = np.random.default_rng(5)
    loads = rng.uniform(0, 80, 30)
    inst = rng.integers(0, 20, 30)
    mod = rng.integers(1, 5, 30)
    table = LossTable(loads, inst, mod)
    caps = inst + rng.integers(0, 60, 30)
    assert np.array_equal(table.g_all(caps), [table.g(j, c) for j, c in enumerate(caps)])
