"""A rule's entry in a rule set or case file: checked against the rule, merged, resolved.

An entry sets ``enabled``, ``severity`` (the highest severity the rule may report), the
main grade's ``warn`` and ``error``, other grades by name under ``grades``, and the rule's
parameters::

    wall-yplus:
      warn: 1                          # the main grade (here: resolved walls)
      grades:
        wall-function.low: {error: 30}
        wall-function.high: {warn: 300, error: 500}
      relative_roughness: 0.001        # a parameter

Every value is checked here, once, against what the rule declares (a parameter's kind,
range, choices; a grade's limits), and a bad one is reported at the file, line and key of
whoever set it. Rules receive checked values only.
"""

from __future__ import annotations

import dataclasses
import difflib
from dataclasses import dataclass
from typing import Any, Mapping

from caselint.errors import CaseFileError
from caselint.declarations import finite_number
from caselint.model import ENTRY_KEYS, SEVERITIES, Grade, Limits, Rule

#: Settings of one grade in an entry's ``grades``.
GRADE_KEYS: tuple[str, ...] = ("warn", "error", "beyond")


@dataclass(frozen=True)
class ActiveRule:
    """A rule that will run on a case, with its resolved grades and parameters.

    ``limits`` are the main grade's; ``grades`` holds every grade by name.
    """

    rule: Rule
    limits: Limits
    params: dict[str, Any]
    max_severity: str | None = None
    grades: dict[str, Grade] = dataclasses.field(default_factory=dict)

    def __post_init__(self) -> None:
        if not self.grades:
            grades = {g.name: g for g in self.rule.all_grades}
            main = self.rule.main_grade
            grades[main] = dataclasses.replace(grades[main], warn=self.limits.warn,
                                               error=self.limits.error)
            object.__setattr__(self, "grades", grades)


def suggest(word: str, choices: Any) -> str:
    """`` (did you mean 'x'?)`` for the closest of ``choices``, or an empty string."""
    close = difflib.get_close_matches(word, list(choices), n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def line_of(lines: Mapping[str, int], key: str) -> int | None:
    """1-based line of a dotted key, or of its nearest parent that has one."""
    while key:
        if key in lines:
            return lines[key]
        key = key.rpartition(".")[0]
    return lines.get("")


def check_entry(rule: Rule, entry: Mapping[str, Any], file: str, lines: Mapping[str, int],
                prefix: str) -> None:
    """Refuse settings the rule does not have, or values it does not take.

    :raises CaseFileError: naming ``file``, the line and the key (``prefix.setting``).
    """
    params = {p.name: p for p in rule.parameters}

    def fail(key: str, message: str) -> CaseFileError:
        return CaseFileError(file, message, line=line_of(lines, key), key=key)

    for key, value in entry.items():
        where = f"{prefix}.{key}"
        if key in ("warn", "error"):
            if value is not None and finite_number(value) is None:
                raise fail(where, f"{key} of rule {rule.id!r} must be a finite number in "
                                  f"{rule.unit or 'the rule unit'} or null, got {value!r}")
        elif key == "enabled":
            if not isinstance(value, bool):
                raise fail(where, f"enabled must be true or false, got {value!r}")
        elif key == "severity":
            if value not in SEVERITIES:
                raise fail(where, f"severity must be one of {', '.join(SEVERITIES)}, got "
                                  f"{value!r}")
        elif key == "grades":
            _check_grades(rule, value, fail, where)
        elif key in params:
            problem = params[key].problem(value)
            if problem is not None:
                raise fail(where, f"parameter {key!r} of rule {rule.id!r} must be {problem}, "
                                  f"got {value!r}")
        else:
            allowed = list(ENTRY_KEYS) + list(params)
            raise fail(where, f"rule {rule.id!r} has no setting {key!r}"
                              f"{suggest(str(key), allowed)}; it takes {', '.join(allowed)}")


def _check_grades(rule: Rule, value: Any, fail, where: str) -> None:
    """The ``grades`` mapping: known grade names, each with known, numeric settings."""
    grades = {g.name: g for g in rule.all_grades}
    if not isinstance(value, Mapping):
        raise fail(where, f"grades of rule {rule.id!r} must be a mapping of grade name to "
                          f"settings, e.g. {{{next(iter(grades))}: {{warn: 1}}}}")
    for name, settings in value.items():
        key = f"{where}.{name}"
        if name not in grades:
            raise fail(key, f"rule {rule.id!r} has no grade {name!r}{suggest(str(name), grades)}"
                            f"; its grades: {', '.join(grades)}")
        if not isinstance(settings, Mapping):
            raise fail(key, f"grade {name!r} of rule {rule.id!r} takes a mapping such as "
                            "{warn: 1, error: 2}")
        allowed = GRADE_KEYS if grades[name].share else GRADE_KEYS[:2]
        for setting, number in settings.items():
            if setting not in allowed:
                raise fail(f"{key}.{setting}", f"grade {name!r} of rule {rule.id!r} has no "
                                               f"setting {setting!r}; it takes "
                                               f"{', '.join(allowed)}")
            if number is not None and finite_number(number) is None:
                raise fail(f"{key}.{setting}", f"{setting} of grade {name!r} of rule "
                                               f"{rule.id!r} must be a finite number or null, "
                                               f"got {number!r}")


def merge(rule: Rule, into: dict[str, Any], entry: Mapping[str, Any]) -> None:
    """Apply a checked ``entry`` over what earlier rule sets set, grade setting by grade
    setting; the entry's own ``warn`` and ``error`` are the main grade's."""
    grades = into.setdefault("grades", {})
    for key, value in entry.items():
        if key == "grades":
            for name, settings in value.items():
                grades[name] = {**grades.get(name, {}), **settings}
        elif key in ("warn", "error"):
            grades.setdefault(rule.main_grade, {})[key] = value
        else:
            into[key] = value


def activate(rule: Rule, entry: Mapping[str, Any]) -> ActiveRule:
    """The rule with a merged entry (:func:`merge`) applied: grades, parameters, ceiling."""
    main = rule.main_grade
    grades = {g.name: g for g in rule.all_grades}
    for name, settings in entry.get("grades", {}).items():
        grades[name] = dataclasses.replace(grades[name], **settings)
    params = {p.name: p.default for p in rule.parameters}
    params.update({k: v for k, v in entry.items() if k not in ENTRY_KEYS})
    return ActiveRule(rule, grades[main].limits, params, entry.get("severity"), grades)


def resolve(rule: Rule, settings: Mapping[str, Any] | None = None, *, file: str = "<settings>",
            lines: Mapping[str, int] | None = None, prefix: str | None = None) -> ActiveRule:
    """The rule with one entry of ``settings`` (as a case file's ``checks.rules`` entry)
    checked and applied; for tools and tests that run a rule without a rule set.

    :raises CaseFileError: a setting the rule does not take.
    """
    check_entry(rule, settings or {}, file, lines or {}, prefix or f"checks.rules.{rule.id}")
    entry: dict[str, Any] = {}
    merge(rule, entry, settings or {})
    return activate(rule, entry)
