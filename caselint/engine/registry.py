"""Collect what plugins register (rules, rule sets, reporters, mesh readers) and index it by
id.

Each ``caselint_register_*`` implementation is called on its own so that every item can
be traced to the plugin that added it: a duplicate id is an error naming both plugins,
and ``caselint plugins`` can say what each plugin adds. Results are sorted by id; the
order in which pluggy calls plugins never shows in the output.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

import pluggy

from caselint.engine.conditions import conditions_of
from caselint.errors import PluginLoadError
from caselint.model import Rule

if TYPE_CHECKING:
    from caselint.mesh.readers import MeshReader
    from caselint.report.base import Reporter


def _collect(
    pm: pluggy.PluginManager, hook_name: str, what: str, key: Callable[[Any], str]
) -> dict[str, tuple[Any, str]]:
    """Call every implementation of ``hook_name``; map each item's id to (item, plugin)."""
    found: dict[str, tuple[Any, str]] = {}
    for impl in getattr(pm.hook, hook_name).get_hookimpls():
        try:
            items = impl.function() or []
        except Exception as exc:  # a pack's registration code is outside our control
            raise PluginLoadError(
                f"plugin {impl.plugin_name!r} failed in {hook_name} ({type(exc).__name__}: {exc})"
            ) from exc
        for item in items:
            item_id = key(item)
            if item_id in found:
                raise PluginLoadError(
                    f"{what} {item_id!r} is registered twice: by plugin {found[item_id][1]!r} "
                    f"and by plugin {impl.plugin_name!r}"
                )
            found[item_id] = (item, impl.plugin_name)
    return dict(sorted(found.items()))


def _rule_id(rule: Any) -> str:
    if not isinstance(rule, Rule):
        raise PluginLoadError(f"caselint_register_rules returned {rule!r}, not a caselint Rule")
    return rule.id


def _rules_with_origin(pm: pluggy.PluginManager) -> dict[str, tuple[Rule, str]]:
    """Rules from plugins and the declarative rules (conditions) of registered rule sets."""
    found = _collect(pm, "caselint_register_rules", "rule", _rule_id)
    for set_name, path in collect_rule_set_files(pm).items():
        for rule_id, rule in conditions_of(path).items():
            origin = f"rule set {set_name} ({path})"
            if rule_id in found:
                raise PluginLoadError(f"rule {rule_id!r} is registered twice: by "
                                      f"{found[rule_id][1]!r} and by {origin!r}")
            found[rule_id] = (rule, origin)
    return dict(sorted(found.items()))


def collect_rules(pm: pluggy.PluginManager) -> dict[str, Rule]:
    """Every registered rule by id, sorted by id."""
    return {rule_id: rule for rule_id, (rule, _) in _rules_with_origin(pm).items()}


def rule_origins(pm: pluggy.PluginManager) -> dict[str, str]:
    """The plugin name that registered each rule id."""
    return {rule_id: origin for rule_id, (_, origin) in _rules_with_origin(pm).items()}


def collect_case_sections(pm: pluggy.PluginManager) -> dict[str, dict]:
    """Every plugin case-file section: name -> JSON Schema fragment, sorted by name."""
    found = _collect(pm, "caselint_register_case_sections", "case-file section",
                     lambda section: section.name)
    return {name: section.schema for name, (section, _) in found.items()}


def collect_reporters(pm: pluggy.PluginManager) -> dict[str, "Reporter"]:
    """Every registered output format by name, sorted by name."""
    found = _collect(pm, "caselint_register_reporters", "output format", lambda r: r.name)
    return {name: reporter for name, (reporter, _) in found.items()}


def collect_mesh_readers(pm: pluggy.PluginManager) -> dict[str, "MeshReader"]:
    """Every registered mesh reader by name, sorted by name."""
    found = _collect(pm, "caselint_register_mesh_readers", "mesh reader", _reader_name)
    return {name: reader for name, (reader, _) in found.items()}


def _reader_name(reader: Any) -> str:
    from caselint.mesh.readers import MeshReader

    if not isinstance(reader, MeshReader):
        raise PluginLoadError(f"caselint_register_mesh_readers returned {reader!r}, not a "
                              "caselint MeshReader")
    return reader.name


def collect_rule_set_files(pm: pluggy.PluginManager) -> dict[str, Path]:
    """Every registered rule-set file by set name (the file stem), sorted by name."""
    found = _collect(pm, "caselint_register_rule_sets", "rule set", lambda p: Path(p).stem)
    return {name: Path(path) for name, (path, _) in found.items()}


def contributions(pm: pluggy.PluginManager) -> dict[str, dict[str, list[str]]]:
    """For each kind (rules, case_sections, reporters, mesh_readers, rule_sets), the ids each
    plugin adds.

    Declarative rules are listed under the plugin that registers their rule set.
    """
    kinds = {
        "rules": _collect(pm, "caselint_register_rules", "rule", _rule_id),
        "case_sections": _collect(pm, "caselint_register_case_sections", "case-file section",
                                  lambda section: section.name),
        "reporters": _collect(pm, "caselint_register_reporters", "output format", lambda r: r.name),
        "mesh_readers": _collect(pm, "caselint_register_mesh_readers", "mesh reader",
                                 _reader_name),
        "rule_sets": _collect(
            pm, "caselint_register_rule_sets", "rule set", lambda p: Path(p).stem
        ),
    }
    out: dict[str, dict[str, list[str]]] = {}
    for set_name, (path, plugin_name) in kinds["rule_sets"].items():
        for rule_id in conditions_of(Path(path)):
            out.setdefault("rules", {}).setdefault(plugin_name, []).append(rule_id)
    for kind, found in kinds.items():
        per_plugin = out.setdefault(kind, {})
        for item_id, (_, plugin_name) in found.items():
            per_plugin.setdefault(plugin_name, []).append(item_id)
    return out
