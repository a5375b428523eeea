"""The sizing package's public surface: its names resolve and are documented, and the
``Examples`` of its docstrings run (doctest). The example's figure, 18 circuits for 10 E at
1 %, is Erlang B's (E(10, 18) = 0.0071, E(10, 17) = 0.0122: any Erlang B table, e.g. the
recursion of the ``erlang_b_ref`` fixture)."""

from __future__ import annotations

import doctest
import importlib

import pytest

dim = importlib.import_module("netdim.dimension")  # netdim.dimension is also the function


def test_the_examples_figure(erlang_b_ref):
    assert erlang_b_ref(10.0, 18) <= 0.01 < erlang_b_ref(10.0, 17)


@pytest.mark.parametrize("module", ["netdim.dimension.api", "netdim.dimension.baseline"])
def test_docstring_examples_run(module):
    result = doctest.testmod(importlib.import_module(module), optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0


def test_every_public_name_resolves_and_is_documented():
    for name in dim.__all__:
        obj = getattr(dim, name)
        if callable(obj) and not isinstance(obj, tuple):
            assert (obj.__doc__ or "").strip(), f"{name} has no docstring"
