"""The package's import drawing: no cycle between its modules, none too long.

The drawing is read from the source (``ast``), not by importing: an edge
``a -> b`` is any import of ``b`` written in ``a``, at module level or inside
a function (a deferred import is still a dependency). Importing a submodule
from an ancestor package (``from rmtclean import _kernels``) is an edge to
the submodule only, since the ancestor is initialised first anyway.
"""

from __future__ import annotations

import ast
from pathlib import Path

import rmtclean

PACKAGE = Path(rmtclean.__file__).parent
#: Largest module, in lines: one module per idea.
MAX_LINES = 700


def _modules() -> dict[str, tuple[Path, bool]]:
    """Dotted name -> (path, is a package) for every module of rmtclean."""
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        is_package = parts[-1] == "__init__"
        if is_package:
            parts = parts[:-1]
        out[".".join(parts)] = (path, is_package)
    return out


def _targets(node, name: str, base: str, modules) -> list[str]:
    if isinstance(node, ast.Import):
        return [alias.name for alias in node.names]
    module = node.module or ""
    if node.level:  # relative import
        for _ in range(node.level - 1):
            base = base.rpartition(".")[0]
        module = base + ("." + module if module else "")
    subs = [f"{module}.{a.name}" for a in node.names if f"{module}.{a.name}" in modules]
    ancestor = name == module or name.startswith(module + ".")
    if len(subs) < len(node.names) or not ancestor:
        subs.append(module)
    return subs


def import_graph() -> dict[str, set[str]]:
    """Module -> the rmtclean modules it imports."""
    modules = _modules()

    def resolve(target: str) -> str | None:
        while target and target not in modules:
            target = target.rpartition(".")[0]
        return target or None

    graph = {}
    for name, (path, is_package) in modules.items():
        base = name if is_package else name.rpartition(".")[0]
        edges = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if not isinstance(node, (ast.Import, ast.ImportFrom)):
                continue
            for target in _targets(node, name, base, modules):
                if target.split(".")[0] == "rmtclean":
                    found = resolve(target)
                    if found is not None and found != name:
                        edges.add(found)
        graph[name] = edges
    return graph


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan 1972)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                found.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_the_finder_sees_a_cycle():
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert cycles(graph) == [["a", "b", "c"]]
    assert cycles({"a": {"b"}, "b": set()}) == []


def test_no_import_cycle_between_modules():
    graph = import_graph()
    # The drawing is read: the top-level package imports the estimators, the
    # CLI (deferred) the benchmark runner.
    assert "rmtclean.estimators" in graph["rmtclean"]
    assert "rmtclean.bench" in graph["rmtclean.cli"]
    # The benchmark runner does not know the command that parses its options.
    assert not any("rmtclean.cli" in graph[m] for m in graph if "bench" in m)
    assert cycles(graph) == []


def test_no_module_above_the_line_limit():
    long = {
        str(path.relative_to(PACKAGE.parent)): n
        for path, _ in _modules().values()
        if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_LINES
    }
    assert long == {}
