"""The package's import graph: no cycles, and rules that import only what the contract allows.

Every ``import`` of every module of ``caselint`` counts, at module level or inside a
function (a lazy import is still a dependency), except those under ``if TYPE_CHECKING``.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "caselint"
#: What a rule module may import (a module or a package of modules), besides the package
#: root itself (for ``from caselint import hookimpl``).
RULE_MAY_IMPORT = ("caselint.model", "caselint.manifest.case", "caselint.errors",
                   "caselint.rulekit", "caselint.mesh", "caselint.physics")
#: Import cycles allowed in the package: none.
KNOWN_MESH_CYCLES: list[list[str]] = []


def _modules() -> dict[str, Path]:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = path
    return out


def _imports(name: str, path: Path, modules: dict[str, Path]) -> set[str]:
    """The caselint modules ``name`` imports (the longest known prefix of each target)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    skipped = {id(node) for branch in ast.walk(tree)
               if isinstance(branch, ast.If) and "TYPE_CHECKING" in ast.unparse(branch.test)
               for node in ast.walk(branch)}
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(tree):
        if id(node) in skipped:
            continue
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                parts = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(parts + ([base] if base else []))
            targets = [base] + [f"{base}.{alias.name}" for alias in node.names]
        else:
            continue
        for target in targets:
            while target and target not in modules:
                target = target.rpartition(".")[0]
            if target and target != name:
                found.add(target)
    return found


def _graph() -> dict[str, set[str]]:
    modules = _modules()
    return {name: _imports(name, path, modules) for name, path in modules.items()}


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """The strongly connected components with more than one module (Tarjan)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    out: list[list[str]] = []

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
                out.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return sorted(out)


def test_the_graph_is_read_from_the_sources():
    graph = _graph()
    assert "caselint.rulekit" in graph["caselint.rules.mesh_quality"]
    assert "caselint.engine.runner" in graph["caselint.api"]
    assert len(graph) > 60


def test_there_are_no_import_cycles():
    assert _cycles(_graph()) == KNOWN_MESH_CYCLES


def test_the_cycle_finder_finds_a_cycle():
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]


def test_rules_import_only_the_model_the_kit_mesh_and_physics():
    graph = _graph()
    rules = sorted(name for name in graph if name.startswith("caselint.rules."))
    assert len(rules) >= 12
    wrong = {}
    for name in rules:
        bad = sorted(t for t in graph[name] if t != "caselint"
                     and not any(t == ok or t.startswith(ok + ".") for ok in RULE_MAY_IMPORT))
        if bad:
            wrong[name] = bad
    assert wrong == {}


def test_the_rule_boundary_test_catches_a_rule_importing_a_rule_or_the_api(tmp_path):
    modules = {"caselint.rules.a": tmp_path / "a.py", "caselint.rules.b": tmp_path / "b.py",
               "caselint.api": tmp_path / "api.py", "caselint.rulekit": tmp_path / "k.py"}
    (tmp_path / "a.py").write_text("from caselint.rules.b import X\nimport caselint.api\n"
                                   "from caselint.rulekit import plural\n")
    found = _imports("caselint.rules.a", tmp_path / "a.py", modules)
    assert found == {"caselint.rules.b", "caselint.api", "caselint.rulekit"}
