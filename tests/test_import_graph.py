"""The package's import graph: no cycles inside caselint.mesh (module-level imports)."""

from __future__ import annotations

import ast
from pathlib import Path

import caselint

PACKAGE = Path(caselint.__file__).resolve().parent


def module_imports(root: Path, package: str) -> dict[str, set[str]]:
    """Module name -> caselint modules it imports at module level (not under TYPE_CHECKING,
    not inside functions), for every module under ``root``."""
    graph: dict[str, set[str]] = {}
    for file in sorted(root.rglob("*.py")):
        rel = file.relative_to(PACKAGE.parent).with_suffix("")
        name = ".".join(rel.parts).removesuffix(".__init__")
        graph[name] = set()
        for node in ast.parse(file.read_text()).body:
            if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
                continue
            if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
                graph[name].update((node.module, a.name) for a in node.names)
            elif isinstance(node, ast.Import):
                graph[name].update((a.name, None) for a in node.names)
    known = set(graph)
    out: dict[str, set[str]] = {}
    for name, imports in graph.items():
        # "from pkg import sub" imports the submodule pkg.sub; "from pkg import thing"
        # runs pkg/__init__ for the name it re-exports
        targets = {f"{mod}.{item}" if f"{mod}.{item}" in known else mod
                   for mod, item in imports}
        out[name] = {t for t in targets if t.startswith(package) and t in known and t != name}
    return out


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import cycle as a list of modules, or None (depth-first search)."""
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                return stack[stack.index(nxt):] + [nxt]
            if state.get(nxt) is None and (cycle := visit(nxt)):
                return cycle
        state[node] = 2
        stack.pop()
        return None

    for node in sorted(graph):
        if node not in state and (cycle := visit(node)):
            return cycle
    return None


def test_the_cycle_finder_finds_a_cycle():
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set()}) is None


def test_no_import_cycles_inside_the_mesh_package():
    graph = module_imports(PACKAGE / "mesh", "caselint.mesh")
    assert "caselint.mesh.analysis" in graph and graph["caselint.mesh.analysis"]
    assert find_cycle(graph) is None
