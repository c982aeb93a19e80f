"""Collect what plugins register (rules, rule sets, case sections, reporters, mesh readers),
indexed by id.

Each ``caselint_register_*`` implementation is called on its own so that every item can
be traced to the plugin that added it: a duplicate id is an error naming both plugins,
and ``caselint plugins`` can say what each plugin adds. Results are sorted by id; the
order in which pluggy calls plugins never shows in the output.

A :class:`Registry` calls each hook at most once: a run builds one and passes it along,
so checking a hundred case files does not register the plugins' rules a hundred times.
"""

from __future__ import annotations

from functools import cached_property
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

import pluggy

from caselint.engine.conditions import conditions_of
from caselint.errors import PluginLoadError
from caselint.model import CaseSection, Rule

if TYPE_CHECKING:
    from caselint.mesh.readers import MeshReader
    from caselint.report.base import Reporter

def _rule_id(rule: Any) -> str:
    if not isinstance(rule, Rule):
        raise PluginLoadError(f"caselint_register_rules returned {rule!r}, not a caselint Rule")
    return rule.id


def _section_name(section: Any) -> str:
    if not isinstance(section, CaseSection):
        raise PluginLoadError(f"caselint_register_case_sections returned {section!r}, not a "
                              "caselint CaseSection")
    return section.name


#: The kinds of things plugins register: hook name, what an item is called, its id.
def _reader_name(reader: Any) -> str:
    from caselint.mesh.readers import MeshReader

    if not isinstance(reader, MeshReader):
        raise PluginLoadError(f"caselint_register_mesh_readers returned {reader!r}, not a "
                              "caselint MeshReader")
    return reader.name


_KINDS: dict[str, tuple[str, str, Callable[[Any], str]]] = {
    "rules": ("caselint_register_rules", "rule", _rule_id),
    "rule_sets": ("caselint_register_rule_sets", "rule set", lambda p: Path(p).stem),
    "case_sections": ("caselint_register_case_sections", "case-file section", _section_name),
    "reporters": ("caselint_register_reporters", "output format", lambda r: r.name),
    "mesh_readers": ("caselint_register_mesh_readers", "mesh reader", _reader_name),
}


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


class Registry:
    """Everything the plugins of ``pm`` register, each hook called once, on first use."""

    def __init__(self, pm: pluggy.PluginManager) -> None:
        self.pm = pm

    def _kind(self, kind: str) -> dict[str, tuple[Any, str]]:
        cache = self.__dict__.setdefault("_found", {})
        if kind not in cache:
            cache[kind] = _collect(self.pm, *_KINDS[kind])
        return cache[kind]

    @cached_property
    def _rules_with_origin(self) -> dict[str, tuple[Rule, str]]:
        """Rules from plugins and the declarative rules (conditions) of registered sets."""
        found = dict(self._kind("rules"))
        for set_name, path in self.rule_set_files.items():
            for rule_id, rule in conditions_of(path).items():
                origin = f"rule set {set_name} ({path})"
                if rule_id in found:
                    raise PluginLoadError(f"rule {rule_id!r} is registered twice: by "
                                          f"{found[rule_id][1]!r} and by {origin!r}")
                found[rule_id] = (rule, origin)
        return dict(sorted(found.items()))

    @property
    def rules(self) -> dict[str, Rule]:
        """Every registered rule by id, sorted by id."""
        return {rule_id: rule for rule_id, (rule, _) in self._rules_with_origin.items()}

    @property
    def rule_origins(self) -> dict[str, str]:
        """The plugin (or rule set) that registered each rule id."""
        return {rule_id: origin for rule_id, (_, origin) in self._rules_with_origin.items()}

    @property
    def rule_set_files(self) -> dict[str, Path]:
        """Every registered rule-set file by set name (the file stem), sorted by name."""
        return {name: Path(path) for name, (path, _) in self._kind("rule_sets").items()}

    @property
    def rule_set_providers(self) -> dict[str, str]:
        """The plugin that registered each rule set."""
        return {name: plugin for name, (_, plugin) in self._kind("rule_sets").items()}

    @cached_property
    def case_sections(self) -> dict[str, CaseSection]:
        """Every plugin case-file section by name, sorted by name.

        :raises PluginLoadError: a section declares a quantity of an unknown dimension.
        """
        from caselint.manifest.units import DIMENSIONS

        found = self._kind("case_sections")
        for name, (section, plugin) in found.items():
            for key, dimension in section.quantities.items():
                if dimension not in DIMENSIONS:
                    raise PluginLoadError(
                        f"plugin {plugin!r}: case-file section {name!r} declares {key!r} as "
                        f"{dimension!r}, not one of {', '.join(DIMENSIONS)}")
        return {name: section for name, (section, _) in found.items()}

    @property
    def reporters(self) -> dict[str, "Reporter"]:
        """Every registered output format by name, sorted by name."""
        return {name: reporter for name, (reporter, _) in self._kind("reporters").items()}

    @property
    def mesh_readers(self) -> dict[str, "MeshReader"]:
        """Every registered mesh reader by name, sorted by name."""
        return {name: reader for name, (reader, _) in self._kind("mesh_readers").items()}

    def contributions(self) -> dict[str, dict[str, list[str]]]:
        """For each kind (rules, case_sections, reporters, mesh_readers, rule_sets), the ids
        each plugin adds.

        Declarative rules are listed under the plugin that registers their rule set.
        """
        out: dict[str, dict[str, list[str]]] = {kind: {} for kind in _KINDS}
        for set_name, (path, plugin_name) in self._kind("rule_sets").items():
            for rule_id in conditions_of(Path(path)):
                out["rules"].setdefault(plugin_name, []).append(rule_id)
        for kind in _KINDS:
            for item_id, (_, plugin_name) in self._kind(kind).items():
                out[kind].setdefault(plugin_name, []).append(item_id)
        return out


def collect_rules(pm: pluggy.PluginManager) -> dict[str, Rule]:
    """Every registered rule by id, sorted by id (see :attr:`Registry.rules`)."""
    return Registry(pm).rules


def collect_mesh_readers(pm: pluggy.PluginManager) -> dict[str, "MeshReader"]:
    """Every registered mesh reader by name (see :attr:`Registry.mesh_readers`)."""
    return Registry(pm).mesh_readers


def collect_rule_set_files(pm: pluggy.PluginManager) -> dict[str, Path]:
    """Every registered rule-set file by set name (see :attr:`Registry.rule_set_files`)."""
    return Registry(pm).rule_set_files


def collect_reporters(pm: pluggy.PluginManager) -> dict[str, "Reporter"]:
    """Every registered output format by name (see :attr:`Registry.reporters`)."""
    return Registry(pm).reporters
