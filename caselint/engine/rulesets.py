"""Rule sets: which rules run, with which limits and parameters, and manual checklist items.

A rule set is a YAML file, registered by a plugin (the shipped ones live in ``rules/``) or
named by its path in a case file's ``checks.rule_sets`` (relative to the case file) or on
the command line (``--rule-set``, relative to the current folder)::

    description: General mesh-quality checks for any CFD case
    extends: other-set              # or a list; names of registered sets, or paths
    conditions: [...]               # declarative rules, see caselint.engine.conditions
    rules:
      growth-ratio: {warn: 1.3, error: 2.0}
      aspect-ratio: {enabled: false}
      wall-yplus: {grades: {wall-function.low: {error: 25}}}
    checklist:
      - {id: fluid-data, text: "Fluid properties verified against the project's data source"}

A rule entry is described in :mod:`caselint.engine.entries`. The case file's
``checks.rules`` overrides entries the same way and may add rules. A set's ``extends``
resolves a path relative to the set's own file, and every error names the file that holds it.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from caselint.engine.entries import ActiveRule, activate, check_entry, line_of, merge, suggest
from caselint.errors import CaseFileError
from caselint.model import ChecklistItem, Rule

_TOP_KEYS = ("description", "extends", "rules", "checklist", "conditions")
#: Endings that mark a rule-set entry as a file path rather than a registered set's name.
PATH_SUFFIXES: tuple[str, ...] = (".yaml", ".yml")


@dataclass(frozen=True)
class RuleSet:
    """One rule-set file as written (before ``extends`` is resolved)."""

    name: str
    path: Path
    description: str
    extends: tuple[str, ...]
    rules: dict[str, dict[str, Any]]
    checklist: tuple[ChecklistItem, ...]
    lines: dict[str, int] = field(default_factory=dict, compare=False, repr=False)


@dataclass(frozen=True)
class Selection:
    """The rules a case runs and the manual checklist of the rule sets it uses.

    ``files`` pairs each rule set used (name or path as written) with its file.
    """

    rule_sets: tuple[str, ...]
    rules: tuple[ActiveRule, ...]
    checklist: tuple[ChecklistItem, ...]
    files: tuple[tuple[str, Path], ...] = ()


def load_rule_set(name: str, path: Path) -> RuleSet:
    """Read and check the shape of one rule-set file; errors name the file and line."""
    from caselint.manifest.yamlnodes import load_yaml

    doc = load_yaml(path)
    data, lines = doc.data, doc.lines
    file = str(path)

    def fail(key: str, message: str) -> CaseFileError:
        return CaseFileError(file, message, line=line_of(lines, key), key=key)

    if not isinstance(data, dict):
        raise fail("", "a rule set must be a mapping with 'rules' and optional "
                   "'description', 'extends', 'checklist'")
    for key in data:
        if key not in _TOP_KEYS:
            raise fail(str(key), f"unknown key {key!r}{suggest(str(key), _TOP_KEYS)}; "
                       f"expected one of {', '.join(_TOP_KEYS)}")
    extends = data.get("extends") or ()
    if isinstance(extends, str):
        extends = (extends,)
    if not isinstance(extends, (list, tuple)) or not all(isinstance(e, str) for e in extends):
        raise fail("extends", "expected a rule-set name or path, or a list of them")
    rules = data.get("rules") or {}
    if not isinstance(rules, dict):
        raise fail("rules", "expected a mapping of rule id to settings")
    entries: dict[str, dict[str, Any]] = {}
    for rule_id, entry in rules.items():
        entry = {} if entry is None else entry
        if not isinstance(entry, dict):
            raise fail(f"rules.{rule_id}", "expected a mapping of settings such as {warn: 1.3}, or {}")
        entries[str(rule_id)] = dict(entry)
    checklist = []
    for i, item in enumerate(data.get("checklist") or ()):
        key = f"checklist[{i}]"
        if not (isinstance(item, dict) and isinstance(item.get("id"), str)
                and isinstance(item.get("text"), str) and set(item) <= {"id", "text"}):
            raise fail(key, "expected a checklist item {id: short-id, text: what the reviewer checks}")
        checklist.append(ChecklistItem(item["id"], item["text"], name))
    description = data.get("description", "")
    if not isinstance(description, str):
        raise fail("description", "expected a string")
    from caselint.engine.conditions import conditions_of

    for rule_id in conditions_of(path):  # a set enables the conditions it declares
        entries.setdefault(rule_id, {})
    return RuleSet(name, Path(path), description, tuple(extends), entries, tuple(checklist), lines)


def is_path(name: str) -> bool:
    """True when a rule-set entry names a file (``*.yaml``, ``*.yml``, or a path)."""
    return name.endswith(PATH_SUFFIXES) or "/" in name or os.sep in name


@dataclass(frozen=True)
class _Where:
    """Who names a rule set: the file, its lines and the key (for errors), and the folder
    that a path is relative to."""

    file: str
    lines: Mapping[str, int]
    key: str
    base: Path

    def fail(self, message: str) -> CaseFileError:
        return CaseFileError(self.file, message, line=line_of(self.lines, self.key),
                             key=self.key)


def _locate(name: str, files: Mapping[str, Path], named_by: _Where) -> tuple[str, Path]:
    """(name, file) of a rule set named by a registered name or a path."""
    if is_path(name):
        path = (named_by.base / name).resolve()
        if not path.is_file():
            raise named_by.fail(f"rule-set file not found: {path}"
                                + (" (it is a folder)" if path.is_dir() else ""))
        return name, path
    if name not in files:
        raise named_by.fail(f"unknown rule set {name!r}{suggest(name, files)}; known: "
                            f"{', '.join(files) or 'none'}, or a path to a .yaml file")
    return name, files[name]


def _chain(name: str, path: Path, files: Mapping[str, Path],
           seen: tuple[Path, ...] = ()) -> list[RuleSet]:
    """The set and its ancestors, parents first, each once."""
    if path in seen:
        raise CaseFileError(str(path), "rule sets extend each other in a loop: "
                            + " -> ".join(str(p) for p in seen + (path,)), key="extends")
    rule_set = load_rule_set(name, path)
    out: list[RuleSet] = []
    named_by = _Where(str(path), rule_set.lines, "extends", path.parent)
    for parent in rule_set.extends:
        parent_name, parent_path = _locate(parent, files, named_by)
        for ancestor in _chain(parent_name, parent_path, files, seen + (path,)):
            if ancestor.path not in {s.path for s in out}:
                out.append(ancestor)
    out.append(rule_set)
    return out


def select_rules(
    set_names: tuple[str, ...],
    files: Mapping[str, Path],
    rules: Mapping[str, Rule],
    overrides: Mapping[str, Mapping[str, Any]] | None = None,
    *,
    case_file: str = "",
    case_lines: Mapping[str, int] | None = None,
    base: Path | None = None,
    from_command_line: bool = False,
) -> Selection:
    """Resolve rule sets (with ``extends``) and the case file's overrides into active rules.

    ``set_names`` are registered names or paths (relative to ``base``: the case file's
    folder, or the current one for sets from the command line).
    :raises CaseFileError: unknown set, unknown rule id or setting, naming file and line.
    """
    from caselint.engine.conditions import conditions_of

    rules = dict(rules)
    merged: dict[str, dict[str, Any]] = {}
    checklist: dict[str, ChecklistItem] = {}
    used: list[RuleSet] = []
    named_by = _Where("<command line>" if from_command_line else case_file or "<command line>",
                      {} if from_command_line else case_lines or {},
                      "--rule-set" if from_command_line else "checks.rule_sets",
                      base if base is not None else Path.cwd())
    for entry_name in set_names:
        name, path = _locate(entry_name, files, named_by)
        for rule_set in _chain(name, path, files):
            if rule_set.path in {s.path for s in used}:
                continue
            used.append(rule_set)
            if rule_set.path not in files.values():     # a file's own declarative rules
                for rule_id, rule in conditions_of(rule_set.path).items():
                    if rule_id in rules and rules[rule_id] is not rule:
                        raise CaseFileError(str(rule_set.path), f"condition {rule_id!r} has the "
                                            "id of a registered rule", key="conditions")
                    rules[rule_id] = rule
            for rule_id, entry in rule_set.rules.items():
                key = f"rules.{rule_id}"
                if rule_id not in rules:
                    raise CaseFileError(str(rule_set.path), f"unknown rule {rule_id!r}"
                                        f"{suggest(rule_id, rules)}",
                                        line=line_of(rule_set.lines, key), key=key)
                check_entry(rules[rule_id], entry, str(rule_set.path), rule_set.lines, key)
                merge(rules[rule_id], merged.setdefault(rule_id, {}), entry)
            for item in rule_set.checklist:
                checklist[item.id] = item
    for rule_id, entry in (overrides or {}).items():
        key = f"checks.rules.{rule_id}"
        if rule_id not in rules:
            raise CaseFileError(case_file, f"unknown rule {rule_id!r}{suggest(rule_id, rules)}",
                                line=line_of(case_lines or {}, key), key=key)
        check_entry(rules[rule_id], entry, case_file, case_lines or {}, key)
        merge(rules[rule_id], merged.setdefault(rule_id, {}), entry)
    active = tuple(activate(rules[rule_id], merged[rule_id]) for rule_id in sorted(merged)
                   if merged[rule_id].get("enabled", True))
    return Selection(tuple(s.name for s in used), active, tuple(checklist.values()),
                     tuple((s.name, s.path) for s in used))
