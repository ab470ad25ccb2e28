"""No import cycle anywhere in ventset (issue 8 item 6): every import, at the top of a module or inside a
function, is an edge; a cycle fails with the modules that form it. Imports under ``if TYPE_CHECKING:`` are
read only by type checkers, never run, and are not edges."""

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
        tree = ast.parse(path.read_text(encoding="utf-8"))
        typing_only = {id(n) for block in ast.walk(tree) if isinstance(block, ast.If)
                       and getattr(block.test, "id", "") == "TYPE_CHECKING" for n in ast.walk(block)}
        for node in ast.walk(tree):
            if id(node) in typing_only:
                continue
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


def test_a_runtime_cycle_is_found_and_a_typing_only_one_is_not(tmp_path):
    # Two modules that import each other at run time form a cycle; the same pair with one import under
    # TYPE_CHECKING does not.
    pkg = tmp_path / "ventset"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    (pkg / "a.py").write_text("from ventset import b\n")
    (pkg / "b.py").write_text("from ventset import a\n")
    globals()["ROOT"], globals()["PACKAGE"] = tmp_path, pkg
    try:
        assert cycles(import_graph()) == [["ventset.a", "ventset.b"]]
        (pkg / "b.py").write_text("from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from ventset import a\n")
        assert cycles(import_graph()) == []
    finally:
        globals()["ROOT"], globals()["PACKAGE"] = Path(__file__).resolve().parent.parent, \
            Path(__file__).resolve().parent.parent / "ventset"
