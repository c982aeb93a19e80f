"""Documentation that must not drift: hooks, built-in rules and the rule-pack guide."""

from __future__ import annotations

import inspect
import re
from pathlib import Path

import pytest

from caselint.engine import hookspecs
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.registry import collect_rules

ROOT = Path(__file__).resolve().parents[1]
GUIDE = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
PACK = ROOT / "plugins" / "quillfen-rules"
HOOKS = sorted(name for name, _ in inspect.getmembers(hookspecs, inspect.isfunction)
               if name.startswith("caselint_"))


def test_there_are_hooks_and_all_share_the_prefix():
    assert HOOKS == ["caselint_register_case_sections", "caselint_register_mesh_readers",
                     "caselint_register_reporters", "caselint_register_rule_sets",
                     "caselint_register_rules"]


@pytest.mark.parametrize("name", HOOKS)
def test_every_hook_is_documented_in_code_and_in_the_guide(name):
    doc = inspect.getdoc(getattr(hookspecs, name)) or ""
    assert ":returns:" in doc and len(doc.split()) >= 15, f"{name} needs a full docstring"
    assert f"`{name}`" in GUIDE, f"DEVELOPERS.md does not mention {name}"


@pytest.mark.parametrize("rule_id", sorted(collect_rules(get_plugin_manager())))
def test_every_built_in_rule_explains_itself(rule_id):
    from test_cli import run_cli

    rule = collect_rules(get_plugin_manager())[rule_id]
    assert len(rule.rationale.split()) >= 15, f"{rule_id}: rationale is too short"
    assert rule.source.strip() and rule.hint.strip() and rule.title.strip()
    # graded by limits of its own grades, or by limits chosen per case that each grade
    # describes; every grade names its source, every parameter says what it is
    grades = rule.all_grades
    assert (any(g.warn is not None or g.error is not None for g in grades)
            or all(g.description != "the rule's main limits" for g in grades))
    assert all(g.source or rule.source for g in grades)
    assert all(p.description for p in rule.parameters)
    code, out, err = run_cli("explain", rule_id)
    assert code == 0, err
    assert rule.title in out and rule.source.split(";")[0][:30] in " ".join(out.split())


def _blocks(language: str, text: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", text, flags=re.S)


def test_the_rule_pack_guide_shows_the_example_pack_code_verbatim():
    section = GUIDE[GUIDE.index("## Write your own rule pack"):]
    section = section[:section.index("\n## ", 5)]
    sources = "\n".join(p.read_text(encoding="utf-8")
                        for p in [PACK / "pyproject.toml", *sorted(PACK.rglob("*.py")),
                                  *sorted(PACK.rglob("*.yaml"))])
    blocks = _blocks("python", section) + _blocks("toml", section) + _blocks("yaml", section)
    assert len(blocks) >= 5
    for block in blocks:
        assert block.strip() in sources, f"guide block not in the pack:\n{block}"


def test_the_readme_case_file_example_is_valid(tmp_path):
    from caselint.manifest.loader import load_case

    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    (example,) = [b for b in _blocks("yaml", readme) if b.startswith("caselint: 1")]
    (tmp_path / "tray.msh").write_bytes(b"")  # the loader checks the mesh exists, not reads it
    case_file = tmp_path / "case.yaml"
    case_file.write_text(example, encoding="utf-8")
    case = load_case(case_file)
    assert case.mesh.scale_to_m == 1e-3 and case.physics.flow.length == pytest.approx(0.04)
    assert case.checks.rules == {"growth-ratio": {"warn": 1.25}}
