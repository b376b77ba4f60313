"""The shape of the package, held by tests (issue 12, "tests that hold the shape"): no module
over 600 lines, and no import circles among verify's modules. That the statistics layer imports
nothing else from verify is held by tests/test_layering.py.

What counts as an import circle: the usual definition, modules that import each other when
they are imported, so that which one loads first decides whether a name exists yet. The graph
is built with ``ast`` from the source files (nothing is imported): an edge for every
``import verify.x`` and ``from .x import y`` executed when the module is imported, that is at
module level, inside module-level ``if``/``try``/``with`` blocks and class bodies, but not
inside functions (deferred: they run after every module has loaded) and not under
``if TYPE_CHECKING:`` (never run). ``from .pkg import name`` is an edge to the submodule
``pkg.name`` when that is a module, else to ``pkg``.

Imports deferred into functions are counted too, in a second test
(``import_graph(deferred=True)``): a circle such as the issue's plan <-> plan_workbook (an import
at module level one way, inside a function the other way) loads without error, but the two
modules still cannot be read, tested or changed apart. The lazy API functions of
``verify/__init__.py`` are left out of that graph: they exist so that ``import verify`` costs
nothing, and reach every layer by design.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PKG = ROOT / "verify"
MAX_LINES = 600  # a module small enough to read in one sitting (../shared/STYLE.md, item 12)


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


MODULES: dict[str, Path] = {
    _module_name(p): p for p in sorted(PKG.rglob("*.py")) if "__pycache__" not in p.parts}


def _is_type_checking(test: ast.expr) -> bool:
    return ((isinstance(test, ast.Name) and test.id == "TYPE_CHECKING")
            or (isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"))


def _imports_at_import_time(body: list[ast.stmt], deferred: bool = False):
    """The import statements that run when the module is imported (see the module's doc);
    with ``deferred``, those inside functions too."""
    for node in body:
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            if deferred:
                yield from _imports_at_import_time(node.body, deferred)
            continue  # deferred until called
        if isinstance(node, ast.If) and _is_type_checking(node.test):
            yield from _imports_at_import_time(node.orelse, deferred)
            continue
        if isinstance(node, ast.Import | ast.ImportFrom):
            yield node
            continue
        for name in ("body", "orelse", "finalbody", "handlers", "cases"):
            sub = getattr(node, name, None)
            if isinstance(sub, list):
                yield from _imports_at_import_time(sub, deferred)


def _targets(module: str, node: ast.Import | ast.ImportFrom) -> set[str]:
    """The verify modules one import statement of ``module`` loads."""
    if isinstance(node, ast.Import):
        return {a.name for a in node.names if a.name in MODULES}
    if node.level:
        here = module.split(".")
        if MODULES[module].name != "__init__.py":
            here = here[:-1]  # a plain module's relative imports start at its package
        here = here[:len(here) - (node.level - 1)]
        base = ".".join(here + ([node.module] if node.module else []))
    else:
        base = node.module or ""
    out = set()
    for alias in node.names:
        if f"{base}.{alias.name}" in MODULES:
            out.add(f"{base}.{alias.name}")
        elif base in MODULES:
            out.add(base)
    return out


def import_graph(*, deferred: bool = False) -> dict[str, set[str]]:
    """Module name -> the verify modules it imports when it is imported; with ``deferred``,
    also those its functions import when called, except in the package's own lazy API
    functions (``verify/__init__.py``: they exist so that ``import verify`` is free, and they
    reach every layer by design)."""
    graph = {}
    for name, path in MODULES.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        edges: set[str] = set()
        for node in _imports_at_import_time(tree.body, deferred and name != "verify"):
            edges |= _targets(name, node)
        edges.discard(name)
        graph[name] = edges
    return graph


def circles(graph: dict[str, set[str]]) -> list[list[str]]:
    """The strongly connected components of more than one module (Tarjan's algorithm,
    iterative), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found = []
    for start in sorted(graph):
        if start in index:
            continue
        work = [(start, iter(sorted(graph[start])))]
        index[start] = low[start] = len(index)
        stack.append(start)
        on_stack.add(start)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = len(index)
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.get(child, ())))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                parent = work[-1][0]
                low[parent] = min(low[parent], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1:
                    found.append(sorted(component))
    return sorted(found)


def test_the_graph_sees_the_imports_it_should():
    # a hand-checked sample of the real package: module-level relative imports are edges, a
    # deferred import inside a function is not, a TYPE_CHECKING import is not
    graph = import_graph()
    assert "verify.errors" in graph["verify.data.load"]  # from ..errors import DataError
    assert "verify.data.tidy" in graph["verify.data.load"]  # from .tidy import _Tidy
    assert "verify.stats.core" in graph["verify.stats.outliers"]
    assert "verify.ledger.store" in graph["verify.ledger"]  # the package's re-exports
    # cli_nightly imports verify.nightly only inside its functions (the parser stays light)
    assert "verify.nightly" not in graph["verify.cli_nightly"]
    assert "verify.nightly" in import_graph(deferred=True)["verify.cli_nightly"]
    assert graph["verify.stats.errors"] == set()
    # the lazy API functions of verify/__init__.py are never edges
    assert "verify.api" not in import_graph(deferred=True)["verify"]


def test_circles_finds_a_circle_and_only_circles():
    # a made-up graph: a -> b -> c -> a is one circle and f <-> g another; d only leads into
    # the first and e is only imported, so neither belongs to a circle
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}, "e": set(), "f": {"g"},
             "g": {"f", "e"}}
    assert circles(graph) == [["a", "b", "c"], ["f", "g"]]
    assert circles({"a": {"b"}, "b": set()}) == []


def test_no_import_circles_among_verify_modules():
    found = circles(import_graph())
    assert not found, "modules that import each other when imported:\n" + "\n".join(
        " <-> ".join(c) for c in found)


def test_no_import_circles_counting_deferred_imports():
    found = circles(import_graph(deferred=True))
    assert not found, ("modules that import each other, counting imports inside functions:\n"
                       + "\n".join(" <-> ".join(c) for c in found))


def test_no_module_is_over_600_lines():
    lines = {name: len(path.read_text(encoding="utf-8").splitlines())
             for name, path in MODULES.items()}
    assert len(lines) > 100 and max(lines.values()) > 100  # the package is found and read
    long = sorted((n, name) for name, n in lines.items() if n > MAX_LINES)
    assert not long, f"modules over {MAX_LINES} lines (split them by topic): " + ", ".join(
        f"{name} ({n})" for n, name in long)
