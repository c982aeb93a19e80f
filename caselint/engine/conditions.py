"""Declarative rules: conditions on case-file values, written in a rule set without Python.

A rule set's ``conditions`` section lists rules whose test is a JSON Schema (2020-12)
``if``/``then`` pair applied to the case file's data::

    conditions:
      - id: scale-resolving-needs-time-step
        title: Scale-resolving models need a transient case with a time step
        severity: error                       # or warning
        message: LES and DES are transient by nature; the case must be transient with a time step
        hint: Set time.mode to transient and give time.step and time.end.
        source: common practice
        if: {properties: {physics: {properties: {turbulence: {properties: {model: {enum: [les, des]}}}}}}}
        then: {required: [time], properties: {time: {required: [step], properties: {mode: {const: transient}}}}}

The rule fires when the case matches ``if`` but not ``then``; it is enabled in the set that
declares it. Quantities are tested as written in the case file (``"2e-4 s"`` is text).
"""

from __future__ import annotations

import copy
import functools
from pathlib import Path
from typing import Any, Mapping

import jsonschema
from jsonschema import Draft202012Validator

from caselint.errors import CaseFileError
from caselint.model import Limits, Measurement, Rule, RuleResult, Where

_REQUIRED = ("id", "title", "severity", "message", "hint", "source", "if", "then")
_OPTIONAL = ("rationale",)


def _key_path(path: Any) -> str:
    """A jsonschema ``absolute_path`` as a case-file key path (``a.b[0].c``)."""
    out = ""
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


def _make_check(condition: dict[str, Any]):
    applies = Draft202012Validator(condition["if"])
    validator = Draft202012Validator({"if": condition["if"], "then": condition["then"]})
    message = condition["message"]

    def check(ctx) -> RuleResult:
        data = ctx.case.document
        if not applies.is_valid(data):
            return RuleResult((Measurement(0, statement="the condition does not apply to this "
                                           "case"),))
        errors = sorted(validator.iter_errors(data), key=lambda e: list(e.absolute_path))
        if not errors:
            return RuleResult((Measurement(0, statement=message + " — satisfied"),))
        first = errors[0]
        key = _key_path(first.absolute_path) or None
        detail = first.message if len(first.message) < 200 else first.message[:197] + "..."
        return RuleResult((Measurement(1, where=Where(key=key),
                                       statement=f"{message} ({detail})"),))

    return check


def _rule(condition: dict[str, Any], file: str) -> Rule:
    severity = condition["severity"]
    limits = Limits(warn=None, error=0) if severity == "error" else Limits(warn=0, error=None)
    return Rule(
        id=condition["id"], title=condition["title"],
        rationale=condition.get("rationale", condition["message"]) + f" (declared in {file})",
        source=condition["source"], unit="", limits=limits, hint=condition["hint"],
        check=_make_check(condition), measures="condition violated (1) or not (0)",
        needs=(),
    )


def _fail(file: str, lines: Mapping[str, int], key: str, message: str) -> CaseFileError:
    probe = key
    while probe and probe not in lines:
        probe = probe.rpartition(".")[0]
    return CaseFileError(file, message, line=lines.get(probe, lines.get("")), key=key)


def parse_conditions(raw: Any, file: str, lines: Mapping[str, int]) -> dict[str, Rule]:
    """The rules declared in a rule set's ``conditions`` list; errors name file and line."""
    if raw is None:
        return {}
    if not isinstance(raw, list):
        raise _fail(file, lines, "conditions", "expected a list of conditions")
    rules: dict[str, Rule] = {}
    for i, item in enumerate(raw):
        key = f"conditions[{i}]"
        if not isinstance(item, dict):
            raise _fail(file, lines, key, "expected a mapping with " + ", ".join(_REQUIRED))
        missing = [k for k in _REQUIRED if k not in item]
        unknown = [k for k in item if k not in _REQUIRED + _OPTIONAL]
        if missing or unknown:
            what = (f"missing {', '.join(missing)}" if missing else "") + (
                "; " if missing and unknown else "") + (
                f"unknown {', '.join(map(str, unknown))}" if unknown else "")
            raise _fail(file, lines, key, f"condition {what}; a condition has "
                        + ", ".join(_REQUIRED) + " and optionally rationale")
        if item["severity"] not in ("error", "warning"):
            raise _fail(file, lines, f"{key}.severity",
                        f"severity must be error or warning, got {item['severity']!r}")
        for part in ("if", "then"):
            try:
                Draft202012Validator.check_schema(item[part])
            except jsonschema.SchemaError as exc:
                raise _fail(file, lines, f"{key}.{part}",
                            f"not a valid JSON Schema: {exc.message}") from None
        try:
            rule = _rule(copy.deepcopy(item), file)
        except ValueError as exc:  # Rule's own checks: id shape, empty texts
            raise _fail(file, lines, key, str(exc)) from None
        if rule.id in rules:
            raise _fail(file, lines, f"{key}.id", f"condition {rule.id!r} is declared twice")
        rules[rule.id] = rule
    return rules


@functools.lru_cache(maxsize=64)
def _conditions_of(path: Path, mtime_ns: int) -> dict[str, Rule]:
    from caselint.manifest.yamlnodes import load_yaml

    doc = load_yaml(path)
    data = doc.data if isinstance(doc.data, dict) else {}
    return parse_conditions(data.get("conditions"), str(path), doc.lines)


def conditions_of(path: Path) -> dict[str, Rule]:
    """The declarative rules of one rule-set file (parsed once per file version)."""
    path = Path(path)
    return _conditions_of(path, path.stat().st_mtime_ns)
