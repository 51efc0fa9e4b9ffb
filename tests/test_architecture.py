"""The package layout keeps its own rules: no import circles, inputs apart from outputs.

Every ``import`` of a ``surveytools`` module counts, at module level, inside functions and
under ``TYPE_CHECKING`` alike, so that a lazy import cannot hide a circle.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "surveytools"


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _import_graph() -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}

    def resolve(name: str) -> str | None:
        while name and name not in modules:
            name = name.rpartition(".")[0]
        return name or None

    graph: dict[str, set[str]] = {m: set() for m in modules}
    for name, path in modules.items():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            targets: list[str] = []
            if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
                targets = [f"{node.module}.{alias.name}" for alias in node.names]
            elif isinstance(node, ast.Import):
                targets = [alias.name for alias in node.names]
            for target in targets:
                if target.startswith("surveytools"):
                    found = resolve(target)
                    if found and found != name:
                        graph[name].add(found)
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

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


def test_no_import_circles() -> None:
    assert _cycles(_import_graph()) == []


def test_cycle_finder_finds_a_circle() -> None:
    # A hand-made graph with one circle a -> b -> c -> a and a tail d -> a.
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert _cycles(graph) == [["a", "b", "c"]]


def test_inputs_and_outputs_do_not_import_each_other() -> None:
    graph = _import_graph()
    for module, targets in graph.items():
        if module.startswith("surveytools.inputs"):
            assert not {t for t in targets if t.startswith("surveytools.outputs")}, module
        if module.startswith("surveytools.outputs"):
            assert not {t for t in targets if t.startswith("surveytools.inputs")}, module


def test_formulas_import_no_files_or_tables() -> None:
    graph = _import_graph()
    allowed = {"surveytools.constants"}
    for module, targets in graph.items():
        if module.startswith("surveytools.indicators"):
            outside = {t for t in targets
                       if not t.startswith("surveytools.indicators") and t not in allowed}
            assert not outside, f"{module} imports {outside}"
