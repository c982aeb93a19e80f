"""Rule sets: which rules run, with which limits and parameters, and manual checklist items.

A rule set is a YAML file registered by a plugin (the shipped ones live in ``rules/``)::

    description: General mesh-quality checks for any CFD case
    extends: other-set              # or a list; parents are applied first
    conditions: [...]               # declarative rules, see caselint.engine.conditions
    rules:
      growth-ratio: {warn: 1.3, error: 2.0}
      aspect-ratio: {enabled: false}
    checklist:
      - {id: fluid-data, text: "Fluid properties verified against the project's data source"}

A rule entry may set ``enabled``, ``warn`` and ``error`` (``null`` disables that grade),
``severity`` (the highest severity the rule may report) and the rule's own parameters.
The case file's ``checks.rules`` overrides entries the same way and may add rules.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from caselint.errors import CaseFileError
from caselint.model import SEVERITIES, ChecklistItem, Limits, Rule

_ENTRY_KEYS = ("enabled", "warn", "error", "severity")
_TOP_KEYS = ("description", "extends", "rules", "checklist", "conditions")


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
class ActiveRule:
    """A rule that will run on a case, with its resolved limits and parameters."""

    rule: Rule
    limits: Limits
    params: dict[str, Any]
    max_severity: str | None = None


@dataclass(frozen=True)
class Selection:
    """The rules a case runs and the manual checklist of the rule sets it uses."""

    rule_sets: tuple[str, ...]
    rules: tuple[ActiveRule, ...]
    checklist: tuple[ChecklistItem, ...]


def _suggest(word: str, choices: Any) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def load_rule_set(name: str, path: Path) -> RuleSet:
    """Read and check the shape of one rule-set file; errors name the file and line."""
    from caselint.manifest.yamlnodes import load_yaml

    doc = load_yaml(path)
    data, lines = doc.data, doc.lines
    file = str(path)

    def fail(key: str, message: str) -> CaseFileError:
        return CaseFileError(file, message, line=_line(lines, key), key=key)

    if not isinstance(data, dict):
        raise fail("", "a rule set must be a mapping with 'rules' and optional "
                   "'description', 'extends', 'checklist'")
    for key in data:
        if key not in _TOP_KEYS:
            raise fail(str(key), f"unknown key {key!r}{_suggest(str(key), _TOP_KEYS)}; "
                       f"expected one of {', '.join(_TOP_KEYS)}")
    extends = data.get("extends") or ()
    if isinstance(extends, str):
        extends = (extends,)
    if not isinstance(extends, (list, tuple)) or not all(isinstance(e, str) for e in extends):
        raise fail("extends", "expected a rule-set name or a list of names")
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


def _finite_number(value: Any) -> bool:
    """A number (not true/false) that a float holds finitely; huge whole numbers are not."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:             # an int beyond the float range
        return False


def _line(lines: Mapping[str, int], key: str) -> int | None:
    while key:
        if key in lines:
            return lines[key]
        key = key.rpartition(".")[0]
    return lines.get("")


def _chain(name: str, files: Mapping[str, Path], seen: tuple[str, ...] = ()) -> list[RuleSet]:
    """The set and its ancestors, parents first, each once."""
    if name in seen:
        raise CaseFileError(str(files[name]), "rule sets extend each other in a loop: "
                            + " -> ".join(seen + (name,)), key="extends")
    rule_set = load_rule_set(name, files[name])
    out: list[RuleSet] = []
    for parent in rule_set.extends:
        if parent not in files:
            raise CaseFileError(str(rule_set.path), f"extends unknown rule set {parent!r}"
                                f"{_suggest(parent, files)}; known: {', '.join(files)}",
                                line=_line(rule_set.lines, "extends"), key="extends")
        for ancestor in _chain(parent, files, seen + (name,)):
            if ancestor.name not in {s.name for s in out}:
                out.append(ancestor)
    out.append(rule_set)
    return out


def _check_entry(
    rule: Rule, entry: Mapping[str, Any], file: str, lines: Mapping[str, int], prefix: str
) -> None:
    """Refuse settings the rule does not have, or of the wrong type."""
    param_names = [p.name for p in rule.parameters]
    for key, value in entry.items():
        where = f"{prefix}.{key}"
        if key in ("warn", "error"):
            ok = value is None or _finite_number(value)
            if not ok:
                raise CaseFileError(file, f"{key} must be a finite number in {rule.unit or 'the rule unit'}"
                                    f" or null, got {value!r}", line=_line(lines, where), key=where)
        elif key == "enabled":
            if not isinstance(value, bool):
                raise CaseFileError(file, f"enabled must be true or false, got {value!r}",
                                    line=_line(lines, where), key=where)
        elif key == "severity":
            if value not in SEVERITIES:
                raise CaseFileError(file, f"severity must be one of {', '.join(SEVERITIES)}, got "
                                    f"{value!r}", line=_line(lines, where), key=where)
        elif key not in param_names:
            allowed = list(_ENTRY_KEYS) + param_names
            raise CaseFileError(file, f"rule {rule.id!r} has no setting {key!r}"
                                f"{_suggest(key, allowed)}; it takes {', '.join(allowed)}",
                                line=_line(lines, where), key=where)
        else:
            _check_parameter(rule, next(p for p in rule.parameters if p.name == key), value,
                             file, lines, where)


def _check_parameter(
    rule: Rule, param: Any, value: Any, file: str, lines: Mapping[str, int], where: str
) -> None:
    """A parameter value must have the kind of its default: a finite number, a flag, text;
    null only where the parameter allows it (see :class:`caselint.model.Parameter`)."""
    default = param.default
    unit = f" in {param.unit}" if param.unit else ""
    if value is None and (param.nullable or default is None):
        return
    if isinstance(default, bool):
        ok, expected = isinstance(value, bool), "true or false"
    elif isinstance(default, (int, float)) or default is None:
        ok = _finite_number(value)
        expected = f"a finite number{unit}" + (" or null" if default is None else "")
    elif isinstance(default, str):
        ok, expected = isinstance(value, str), "text"
    else:
        ok, expected = True, ""
    if not ok:
        raise CaseFileError(file, f"parameter {param.name!r} of rule {rule.id!r} must be "
                            f"{expected}, got {value!r}", line=_line(lines, where), key=where)


def select_rules(
    set_names: tuple[str, ...],
    files: Mapping[str, Path],
    rules: Mapping[str, Rule],
    overrides: Mapping[str, Mapping[str, Any]] | None = None,
    *,
    case_file: str = "",
    case_lines: Mapping[str, int] | None = None,
) -> Selection:
    """Resolve rule sets (with ``extends``) and the case file's overrides into active rules.

    :raises CaseFileError: unknown set, unknown rule id or setting, naming file and line.
    """
    merged: dict[str, dict[str, Any]] = {}
    checklist: dict[str, ChecklistItem] = {}
    seen_sets: list[str] = []
    for name in set_names:
        if name not in files:
            raise CaseFileError(case_file or "<command line>", f"unknown rule set {name!r}"
                                f"{_suggest(name, files)}; known: {', '.join(files) or 'none'}",
                                line=_line(case_lines or {}, "checks.rule_sets"),
                                key="checks.rule_sets")
        for rule_set in _chain(name, files):
            if rule_set.name in seen_sets:
                continue
            seen_sets.append(rule_set.name)
            for rule_id, entry in rule_set.rules.items():
                if rule_id not in rules:
                    raise CaseFileError(str(rule_set.path), f"unknown rule {rule_id!r}"
                                        f"{_suggest(rule_id, rules)}",
                                        line=_line(rule_set.lines, f"rules.{rule_id}"),
                                        key=f"rules.{rule_id}")
                _check_entry(rules[rule_id], entry, str(rule_set.path), rule_set.lines,
                             f"rules.{rule_id}")
                merged.setdefault(rule_id, {}).update(entry)
            for item in rule_set.checklist:
                checklist[item.id] = item
    for rule_id, entry in (overrides or {}).items():
        key = f"checks.rules.{rule_id}"
        if rule_id not in rules:
            raise CaseFileError(case_file, f"unknown rule {rule_id!r}{_suggest(rule_id, rules)}",
                                line=_line(case_lines or {}, key), key=key)
        _check_entry(rules[rule_id], entry, case_file, case_lines or {}, key)
        merged.setdefault(rule_id, {}).update(entry)
    active = []
    for rule_id in sorted(merged):
        entry = merged[rule_id]
        if not entry.get("enabled", True):
            continue
        rule = rules[rule_id]
        limits = Limits(
            warn=entry["warn"] if "warn" in entry else rule.limits.warn,
            error=entry["error"] if "error" in entry else rule.limits.error,
        )
        params = {p.name: p.default for p in rule.parameters}
        params.update({k: v for k, v in entry.items() if k not in _ENTRY_KEYS})
        active.append(ActiveRule(rule, limits, params, entry.get("severity")))
    return Selection(tuple(seen_sets), tuple(active), tuple(checklist.values()))
