"""The public surface of ``netdim`` (issue 13, review section 1.9 and 8.1)."""

from __future__ import annotations

import importlib.metadata
import subprocess
import sys

import netdim
import netdim.erlang


def test_every_exported_name_resolves_and_is_documented():
    # source: the package's own index (its docstring lists every name of __all__)
    index = netdim.__doc__
    for name in netdim.__all__:
        value = getattr(netdim, name)
        assert name in index, f"{name} is not in the index of netdim.__doc__"
        if callable(value):
            assert (value.__doc__ or "").strip(), f"{name} has no docstring"
    assert set(netdim.__all__) <= set(dir(netdim))


def test_loss_formulas_at_top_level():
    # source: review 8.1 (netdim.erlang_b(10, 12) used to fail)
    for name in ("erlang_b", "log_erlang_b", "servers_for", "traffic_for", "erlang_b_table",
                 "erlang_b_dtraffic"):
        assert getattr(netdim, name) is getattr(netdim.erlang, name)
    assert netdim.erlang_b(10, 12) == netdim.erlang.erlang_b(10.0, 12)


def test_unknown_name_is_an_attribute_error():
    import pytest

    with pytest.raises(AttributeError, match=r"module 'netdim' has no attribute 'nonesuch'"):
        netdim.nonesuch  # noqa: B018


def test_evaluate_and_dimension_stay_functions_after_their_packages_load():
    # source: the import system binds a subpackage on its parent; the function of the same
    # name must win, as it did when netdim imported everything at once
    import netdim.dimension.sizer
    import netdim.evaluate.fixed_point

    assert callable(netdim.evaluate) and netdim.evaluate.__name__ == "evaluate"
    assert callable(netdim.dimension) and netdim.dimension.__name__ == "dimension"


def test_version_has_one_source():
    # source: review 1.9 (the installed distribution's metadata, not a second constant)
    assert netdim.__version__ == importlib.metadata.version("netdim")


def test_import_netdim_loads_nothing_heavy():
    # source: issue 17 (import netdim is lazy: PEP 562 module __getattr__)
    code = ("import sys, netdim\n"
            "heavy = {'numpy', 'scipy', 'numba', 'networkx', 'yaml', 'pulp'}\n"
            "print(sorted(m for m in sys.modules if m.split('.')[0] in heavy))\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    assert proc.stdout.strip() == "[]"
