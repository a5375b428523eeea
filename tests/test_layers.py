"""The package's layers go one way: no import cycle, and no function-local import of a netdim
module except the few named here, each with its reason.

Source: the design guide's rule "each arrow goes one way" (common practice, no source); the
import graph is read with the standard library's ``ast`` and its cycles found with networkx
(strongly connected components).
"""

import ast
from pathlib import Path

import networkx as nx

PACKAGE = Path(__file__).resolve().parent.parent / "netdim"

#: Function-local imports of netdim modules that are allowed, as (importing module, imported
#: module) -> reason.
ALLOWED_LOCAL = {
    ("netdim.evaluate.simulate", "netdim.evaluate._simkernel"):
        "the compiled event loop needs numba, about a second to import: only when simulating",
    ("netdim._peaked_kernels", "netdim._peaked_compiled"):
        "the peaked model's compiled kernels need numba: only when a peaked model is used",
    ("netdim.cli.report_cmd", "netdim.report.html"):
        "the page builders import the sizing package (PuLP): only when a report is written",
    ("netdim.cli.report_cmd", "netdim.report.sweep"):
        "the cost-against-target sweep sizes the network: only when a report asks for it",
}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in PACKAGE.rglob("*.py")}


def _resolve(name: str, modules) -> str | None:
    """The netdim module ``name`` refers to (a module, or the package holding a name)."""
    while name and name not in modules:
        name = name.rpartition(".")[0]
    return name or None


def _imports(mod: str, path: Path, modules):
    """(imported module, is_local) for every import of a netdim module in ``path``."""
    tree = ast.parse(path.read_text(), filename=str(path))
    is_pkg = path.name == "__init__.py"
    out = []

    def visit(node, local):
        for child in ast.iter_child_nodes(node):
            inside = local or isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef,
                                                 ast.Lambda))
            if isinstance(child, ast.Import):
                for alias in child.names:
                    if alias.name.split(".")[0] == "netdim":
                        target = _resolve(alias.name, modules)
                        if target:
                            out.append((target, local))
            elif isinstance(child, ast.ImportFrom):
                if child.level:
                    base = mod.split(".") if is_pkg else mod.split(".")[:-1]
                    base = base[: len(base) - (child.level - 1)]
                    prefix = ".".join(base + ([child.module] if child.module else []))
                else:
                    prefix = child.module or ""
                if prefix.split(".")[0] != "netdim":
                    continue
                for alias in child.names:
                    target = _resolve(f"{prefix}.{alias.name}", modules)
                    if target:
                        out.append((target, local))
            elif isinstance(child, ast.If) and _is_type_checking(child.test):
                continue  # typing-only imports never run
            else:
                visit(child, inside)

    visit(tree, False)
    return out


def _is_type_checking(test) -> bool:
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING")


def _graph():
    modules = _modules()
    g = nx.DiGraph()
    local = []
    for mod, path in modules.items():
        g.add_node(mod)
        for target, is_local in _imports(mod, path, modules):
            if target == mod:
                continue
            g.add_edge(mod, target)
            if is_local:
                local.append((mod, target))
    return g, local


def test_no_import_cycle():
    g, _ = _graph()
    cycles = [sorted(c) for c in nx.strongly_connected_components(g) if len(c) > 1]
    assert cycles == []


def test_no_function_local_import_of_a_netdim_module():
    _, local = _graph()
    unexplained = sorted({pair for pair in local if pair not in ALLOWED_LOCAL})
    assert unexplained == []


def test_the_reader_finds_the_imports_it_must():
    # The check itself must see both kinds of import, or the two tests above prove nothing.
    g, _ = _graph()
    assert g.has_edge("netdim.evaluate.result", "netdim.vocabulary")
    assert g.number_of_edges() > 50
