"""The evaluate package's layering, and the examples in its docstrings.

Checks: no import cycle among the modules of ``netdim/evaluate``; no import of a netdim module
inside a function there, except the compiled event loop (numba, heavy: imported only when
simulating); no ``scipy.stats`` anywhere in it (seconds to import for one quantile); and the
doctests of the public functions (Examples sections) pass.
"""

import ast
import doctest
import importlib
import pathlib

import networkx as nx
import pytest

PACKAGE = pathlib.Path(__file__).resolve().parent.parent / "netdim" / "evaluate"
#: Function-local imports allowed, each for a stated reason (in a comment at the import).
LOCAL_OK = {"netdim.evaluate._simkernel"}


def _modules():
    return sorted(PACKAGE.glob("*.py"))


def _name(path):
    return "netdim.evaluate" if path.stem == "__init__" else f"netdim.evaluate.{path.stem}"


def _imports(tree):
    """(module imported, inside a function?) for every import of a netdim module."""
    out = []

    def visit(node, local):
        for child in ast.iter_child_nodes(node):
            inner = local or isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef))
            if isinstance(child, ast.ImportFrom) and child.module and child.level == 0:
                if child.module.startswith("netdim"):
                    for alias in child.names:
                        full = f"{child.module}.{alias.name}"
                        out.append((full if (PACKAGE / f"{alias.name}.py").exists()
                                    and child.module == "netdim.evaluate" else child.module,
                                    inner))
            elif isinstance(child, ast.Import):
                for alias in child.names:
                    if alias.name.startswith("netdim"):
                        out.append((alias.name, inner))
            visit(child, inner)

    visit(tree, False)
    return out


def test_no_function_local_import_of_netdim_modules():
    # Source: the project's rule (RULES.md): only optional heavy imports may be local.
    bad = []
    for path in _modules():
        for mod, local in _imports(ast.parse(path.read_text())):
            if local and mod not in LOCAL_OK:
                bad.append(f"{path.name}: {mod}")
    assert bad == []


def test_no_import_cycle_inside_evaluate():
    # Source: networkx.simple_cycles on the graph of top-level imports.
    g = nx.DiGraph()
    for path in _modules():
        me = _name(path)
        g.add_node(me)
        for mod, local in _imports(ast.parse(path.read_text())):
            if not local and mod.startswith("netdim.evaluate") and mod != me:
                g.add_edge(me, mod)
    assert list(nx.simple_cycles(g)) == []


def _imported_names(nodes):
    names = []
    for n in nodes:
        if isinstance(n, ast.Import):
            names += [a.name for a in n.names]
        elif isinstance(n, ast.ImportFrom) and n.module:
            names += [n.module] + [f"{n.module}.{a.name}" for a in n.names]
    return names


def test_no_scipy_stats_and_no_numba_at_import():
    for path in _modules():
        tree = ast.parse(path.read_text())
        every = _imported_names(ast.walk(tree))
        assert not [n for n in every if n.startswith("scipy.stats")], path.name
        if path.stem != "_simkernel":
            top = _imported_names(tree.body)
            assert not [n for n in top if "numba" in n or "_simkernel" in n], path.name


@pytest.mark.parametrize("name", ["netdim.evaluate", "netdim.evaluate.fixed_point",
                                  "netdim.evaluate.intervals", "netdim.evaluate.exact"])
def test_docstring_examples(name):
    # Source: the examples' figures are Erlang B values (E(5, 10) = 0.01838 etc., ITU-T
    # E.521 recursion) and the Clopper-Pearson closed form at k = 0.
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0
