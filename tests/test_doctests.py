"""The Examples sections of the public formulas run as doctests (issue 13).

Source: the expected outputs in each docstring, several of them known values (Erlang B
tables, the truncated Poisson law, Wilkinson's equivalent random group of a group's own
overflow), the rest checked against mpmath by the formula tests.
"""

from __future__ import annotations

import doctest
import importlib

import pytest

#: Modules whose docstrings carry doctested examples (add yours).
MODULES = ["netdim", "netdim.erlang", "netdim._erlang_tables", "netdim.engset", "netdim.overflow",
           "netdim.linkmodels"]


@pytest.mark.parametrize("name", MODULES)
def test_examples_run(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0
    assert result.attempted > 0


@pytest.mark.parametrize("name", MODULES[1:])
def test_every_public_formula_has_examples_and_references(name):
    # source: issue 13 and the numpydoc guide (References as .. [1], an Examples section)
    module = importlib.import_module(name)
    for attr in module.__all__:
        obj = getattr(module, attr)
        if not callable(obj):
            continue
        doc = obj.__doc__ or ""
        assert "Examples\n" in doc and ">>> " in doc, f"{name}.{attr}: no Examples"
        assert ".. [1]" in doc, f"{name}.{attr}: no numbered reference"
