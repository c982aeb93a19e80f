"""Plain-words messages for JSON-Schema validation errors, and the key each points at.

jsonschema's own messages quote Python reprs of whole sub-documents; these say what
was expected at which key, suggest the nearest allowed name for a misspelt key or
value, and point an unknown key at its own line rather than its parent's.
"""

from __future__ import annotations

import difflib
import re
from typing import Any

from jsonschema.exceptions import ValidationError

from caselint.manifest.yamlnodes import child_path
from caselint.wording import plural

_TYPE_WORDS = {
    "object": "a mapping of keys",
    "array": "a list",
    "string": "text",
    "number": "a number",
    "integer": "a whole number",
    "boolean": "true or false",
    "null": "null",
}


def key_path(parts: Any) -> str:
    """Dotted key path (``checks.waivers[0].expires``) of a jsonschema error path."""
    path = ""
    for part in parts:
        path = f"{path}[{part}]" if isinstance(part, int) else child_path(path, part)
    return path


def describe(value: Any) -> str:
    """A short description of a YAML value for a message."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if value is None:
        return "nothing (null)"
    if isinstance(value, str):
        return f"'{value}'"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return f"a list of {plural(len(value), 'item')}"
    return repr(value)


def _did_you_mean(word: Any, choices: Any) -> str:
    if not isinstance(word, str):
        return ""
    close = difflib.get_close_matches(word, [str(c) for c in choices], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


def _one_of(values: Any) -> str:
    return ", ".join(describe(v) for v in values)


def _unknown_keys(error: ValidationError) -> list[str]:
    allowed = error.schema.get("properties", {})
    patterns = error.schema.get("patternProperties", {})
    return [k for k in error.instance
            if k not in allowed and not any(re.search(p, k) for p in patterns)]


def describe_errors(error: ValidationError) -> list[tuple[str, str]]:
    """Message and key path of each problem in one validation error: one per unknown
    key of a mapping (jsonschema reports them together), else the one."""
    schema = error.schema if isinstance(error.schema, dict) else {}
    if error.validator == "additionalProperties" and schema.get("additionalProperties") is False:
        return [_unknown_key(error, key) for key in _unknown_keys(error) or [""]]
    return [describe_error(error)]


def _unknown_key(error: ValidationError, key: str) -> tuple[str, str]:
    allowed = sorted(error.schema.get("properties", {}))
    hint = _did_you_mean(key, allowed)
    if not hint:
        hint = "; allowed here: " + ", ".join(allowed) if allowed else "; no keys are allowed here"
    return f"unknown key '{key}'{hint}", child_path(key_path(error.absolute_path), key)


def describe_error(error: ValidationError) -> tuple[str, str]:
    """Message and key path for one validation error (its first unknown key, if several)."""
    path = key_path(error.absolute_path)
    kind = error.validator
    schema = error.schema if isinstance(error.schema, dict) else {}
    value = error.instance
    if kind == "additionalProperties" and schema.get("additionalProperties") is False:
        return describe_errors(error)[0]
    if kind == "required":
        missing = [r for r in error.validator_value if r not in value]
        name = missing[0] if missing else "?"
        where = f"in '{path}'" if path else "at the top level"
        return f"missing required key '{name}' {where}", path
    if "propertyNames" in error.relative_schema_path:
        # the instance is the offending key itself; point at its line
        expected = schema.get("title") or "a different name"
        return f"key {describe(value)} is not allowed: expected {expected}", child_path(path, value)
    if kind == "enum":
        allowed = error.validator_value
        return (f"{describe(value)} is not allowed here; expected one of: {_one_of(allowed)}"
                f"{_did_you_mean(value, allowed)}"), path
    if kind == "const":
        return f"expected {describe(error.validator_value)}, got {describe(value)}", path
    if kind == "oneOf":
        choices = _required_choices(error.validator_value)
        if choices:
            present = [c for c in choices if isinstance(value, dict) and c in value]
            found = f"; found {_one_of(present)}" if present else ""
            return f"needs exactly one of {_one_of(choices)}{found}", path
    if kind in ("anyOf", "oneOf"):
        inner = _branch_error(error)
        if inner is not None:
            return describe_error(inner)
    title = schema.get("title")
    if title and kind in ("anyOf", "oneOf", "type", "minItems", "maxItems", "format", "pattern"):
        return f"expected {title}, got {describe(value)}", path
    if kind == "type":
        types = error.validator_value
        types = [types] if isinstance(types, str) else types
        words = " or ".join(_TYPE_WORDS.get(t, t) for t in types)
        return f"expected {words}, got {describe(value)}", path
    if kind == "minLength" and error.validator_value == 1:
        return "must not be empty", path
    if kind == "minItems":
        return (f"expected at least {plural(error.validator_value, 'item')}, got "
                f"{describe(value)}"), path
    if kind == "maxItems":
        return (f"expected at most {plural(error.validator_value, 'item')}, got "
                f"{describe(value)}"), path
    if kind == "uniqueItems":
        return "the items must all be different", path
    if kind == "format":
        return f"expected a {error.validator_value}, got {describe(value)}", path
    return error.message, path


def _required_choices(branches: Any) -> list[str]:
    """Key names when every branch is just ``{"required": [name]}`` ("exactly one of")."""
    names = []
    for branch in branches:
        if not (isinstance(branch, dict) and set(branch) == {"required"}
                and len(branch["required"]) == 1):
            return []
        names.append(branch["required"][0])
    return names


def _branch_error(error: ValidationError) -> ValidationError | None:
    """The error of the branch the user was most likely aiming at, if one stands out.

    A branch failing on the kind of value (text given where a mapping was allowed too)
    was not the one meant; of the rest, the one deepest in the document is the most
    specific, and an unknown key is the likeliest slip.
    """
    aimed = [e for e in error.context if not _wrong_kind(e)]
    if not aimed:
        return None
    return max(aimed, key=lambda e: (len(e.absolute_path), e.validator == "additionalProperties"))


def _wrong_kind(error: ValidationError) -> bool:
    """True when a branch failed because the value is of another kind than it takes."""
    if len(error.relative_path) > 0:
        return False
    if error.validator == "type":
        return True
    return error.validator in ("enum", "const") and isinstance(error.instance, (dict, list))
