"""The Examples of the study functions run as doctests; each states its source inline
(Erlang B values for one trunk group, checked against mpmath in the study tests)."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["netdim.studies.failures", "netdim.studies.growth", "netdim.studies.compare",
           "netdim.studies.headroom"]


@pytest.mark.parametrize("name", MODULES)
def test_examples_run(name):
    result = doctest.testmod(importlib.import_module(name))
    assert result.failed == 0 and result.attempted > 0


def test_lazy_names_load_and_unknown_ones_are_refused():
    import netdim
    import netdim.studies as studies

    assert netdim.failure_study is studies.failure_study
    with pytest.raises(AttributeError, match=r"module 'netdim.studies' has no attribute 'x'"):
        _ = studies.x
