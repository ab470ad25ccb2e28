"""No import cycle anywhere in ventset (issue 8 item 6): every import, at the top of a module or inside a
function, is an edge; a cycle fails with the modules that form it."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "ventset"


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def import_graph() -> dict[str, set[str]]:
    """Module → the ventset modules it imports (static: `import a.b`, `from a import b`, at any depth)."""
    files = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    graph: dict[str, set[str]] = {name: set() for name in files}
    for name, path in files.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            targets: list[str] = []
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                    base = ".".join([*anchor, base] if base else anchor)
                targets = [f"{base}.{a.name}" if f"{base}.{a.name}" in files else base for a in node.names]
            for target in targets:
                while target and target not in files:
                    target = target.rpartition(".")[0]
                if target and target != name and target.startswith("ventset"):
                    graph[name].add(target)
    return graph


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected groups of more than one module (Tarjan 1972), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                out.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_no_import_cycle_in_ventset():
    assert cycles(import_graph()) == []


def test_the_cycle_check_finds_a_planted_cycle():
    graph = {"ventset.a": {"ventset.b"}, "ventset.b": {"ventset.c"}, "ventset.c": {"ventset.a"}, "ventset.d": set()}
    assert cycles(graph) == [["ventset.a", "ventset.b", "ventset.c"]]


def test_the_graph_sees_imports_inside_functions():
    graph = import_graph()
    assert "ventset.gui.app" in graph["ventset.cli"]  # imported inside _cmd_gui
    assert "ventset.cli" not in graph["ventset.gui.window"]  # the demo patient comes from the core
