"""No import circle inside feeler.generate: every import of another generate module, wherever it is
written (module level or inside a function, where a circle would hide), is read from the source with
``ast`` and the module graph must have no cycle.

Reference: common practice (a layered package imports downward only; DEVELOPERS.md, "Generation").
"""

from __future__ import annotations

import ast
from pathlib import Path

import feeler.generate

PACKAGE = "feeler.generate"
ROOT = Path(feeler.generate.__file__).resolve().parent


def _edges() -> dict[str, set[str]]:
    modules = {p.stem for p in ROOT.glob("*.py")}
    graph: dict[str, set[str]] = {}
    for path in sorted(ROOT.glob("*.py")):
        targets: set[str] = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.module and (node.module == PACKAGE or node.module.startswith(PACKAGE + ".")):
                rest = node.module[len(PACKAGE):].lstrip(".")
                if rest:
                    targets.add(rest.split(".")[0])
                else:  # from feeler.generate import x: the module x, or a name from the package itself
                    targets |= {a.name if a.name in modules else "__init__" for a in node.names}
            elif isinstance(node, ast.ImportFrom) and node.level:  # relative imports
                targets.add((node.module or "__init__").split(".")[0])
            elif isinstance(node, ast.Import):
                targets |= {a.name.split(".")[2] for a in node.names if a.name.startswith(PACKAGE + ".")}
        graph[path.stem] = targets - {path.stem}
    return graph


def _cycle(graph: dict[str, set[str]]) -> list[str] | None:
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(name: str) -> list[str] | None:
        state[name] = 1
        stack.append(name)
        for nxt in sorted(graph.get(name, ())):
            if state.get(nxt) == 1:
                return stack[stack.index(nxt):] + [nxt]
            if nxt not in state and (found := visit(nxt)):
                return found
        stack.pop()
        state[name] = 2
        return None

    for name in sorted(graph):
        if name not in state and (found := visit(name)):
            return found
    return None


def test_generate_has_no_import_cycle() -> None:
    graph = _edges()
    for name, targets in sorted(graph.items()):
        print(f"{name} -> {', '.join(sorted(targets)) or '-'}")
    assert {"_model", "_build", "_strategies", "_fast", "_walk", "cases"} <= set(graph)
    assert _cycle(graph) is None, _cycle(graph)
    # Only the package's own __init__ re-exports; no module imports names from the package itself.
    assert not [name for name, targets in graph.items() if "__init__" in targets and name != "__init__"]


def test_the_cycle_finder_finds_a_cycle() -> None:
    # The check above can fail: a circle of two modules is reported.
    assert _cycle({"a": {"b"}, "b": {"a"}}) == ["a", "b", "a"]
    assert _cycle({"a": {"b"}, "b": set()}) is None
