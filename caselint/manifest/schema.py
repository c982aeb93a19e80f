"""The case-file JSON Schema (shipped as package data) and validation against it.

Validation runs jsonschema's Draft 2020-12 validator with an explicit
``referencing.Registry``, so no ``$ref`` is ever fetched over the network. Every problem
becomes a :class:`~caselint.errors.CaseFileError` at its line and key; they are raised
together (:class:`~caselint.errors.CaseFileErrors`), first by line. Plugin sections
(``extensions``) are validated with the rest; their fragments may refer to the built-in
definitions as ``urn:caselint:schema:case-v1#/$defs/length`` (and ``velocity``, ``time``,
``point``...).
"""

from __future__ import annotations

import copy
import datetime as _dt
import functools
import json
from collections.abc import Mapping
from importlib import resources
from typing import Any

import jsonschema
from jsonschema import Draft202012Validator
from referencing import Registry, Resource
from referencing.exceptions import Unresolvable
from referencing.jsonschema import DRAFT202012

from caselint.errors import CaseFileError, CaseFileErrors, PluginLoadError
from caselint.manifest.messages import describe_errors
from caselint.manifest.yamlnodes import YamlDoc, child_path

#: ``$id`` of the case-file schema, format version 1.
SCHEMA_ID = "urn:caselint:schema:case-v1"


def schema_text() -> str:
    """The case-file JSON Schema as shipped (JSON text), for ``caselint schema``."""
    return (resources.files("caselint.manifest") / "schema" / "case-v1.schema.json").read_text(
        encoding="utf-8")


@functools.cache
def _base_schema() -> dict[str, Any]:
    return json.loads(schema_text())


def case_schema(extensions: Mapping[str, dict] | None = None) -> dict[str, Any]:
    """The case-file schema as a new dict, with plugin sections added as top-level keys."""
    schema = copy.deepcopy(_base_schema())
    for name, fragment in (extensions or {}).items():
        if name in schema["properties"]:
            raise PluginLoadError(
                f"case-file extension '{name}' clashes with the built-in key '{name}'")
        if not isinstance(fragment, Mapping):
            raise PluginLoadError(f"case-file extension '{name}' must be a JSON-schema mapping, "
                                  f"got {type(fragment).__name__}")
        fragment = copy.deepcopy(dict(fragment))
        try:
            Draft202012Validator.check_schema(fragment)
        except jsonschema.SchemaError as exc:
            raise PluginLoadError(
                f"case-file extension '{name}' is not a valid JSON schema: {exc.message}") from None
        fragment.setdefault("description", f"Section '{name}', added by a plugin.")
        schema["properties"][name] = fragment
    return schema


def _validator(schema: dict[str, Any]) -> Draft202012Validator:
    base = Resource.from_contents(_base_schema(), default_specification=DRAFT202012)
    registry = Registry().with_resource(SCHEMA_ID, base)
    return Draft202012Validator(
        schema, registry=registry, format_checker=Draft202012Validator.FORMAT_CHECKER)


def json_like(doc: YamlDoc) -> Any:
    """The document's data as JSON would hold it: text keys, dates as ISO text.

    Whole-number keys (``tags: {1: floor}``) become text; other non-text keys
    (true, null, 1.5, dates) are errors, since no case-file key can be one.
    """
    return _json_like(doc.data, "", doc)


def _json_like(value: Any, path: str, doc: YamlDoc) -> Any:
    if isinstance(value, dict):
        out: dict[str, Any] = {}
        for key, item in value.items():
            sub = child_path(path, key)
            if isinstance(key, bool) or not isinstance(key, (str, int)):
                raise CaseFileError(
                    doc.file, f"key {key!r} is not a name; put it in quotes if it is one",
                    line=doc.line_of(sub), column=doc.column_of(sub), key=sub)
            name = str(key)
            if name in out:
                raise CaseFileError(doc.file, f"duplicate key '{name}'", line=doc.line_of(sub),
                                    column=doc.column_of(sub), key=sub)
            out[name] = _json_like(item, sub, doc)
        return out
    if isinstance(value, list):
        return [_json_like(item, f"{path}[{i}]", doc) for i, item in enumerate(value)]
    if isinstance(value, (_dt.date, _dt.datetime)):
        return value.isoformat()
    if isinstance(value, bytes):
        raise CaseFileError(doc.file, "binary data is not allowed here", line=doc.line_of(path),
                            column=doc.column_of(path), key=path)
    return value


def validate_case(doc: YamlDoc, extensions: Mapping[str, dict] | None = None) -> dict[str, Any]:
    """Validate a parsed case file; return its JSON-like data or raise CaseFileError."""
    return validate_document(doc, case_schema(extensions))


def validate_document(doc: YamlDoc, schema: dict[str, Any]) -> Any:
    """Validate any parsed YAML (a rule set, say) against a Draft 2020-12 schema.

    Returns the JSON-like data; raises every problem together, first by line.
    """
    data, problems = schema_problems(doc, schema)
    if problems:
        raise CaseFileErrors.of(problems)
    return data


def schema_problems(doc: YamlDoc, schema: dict[str, Any]) -> tuple[Any, list[CaseFileError]]:
    """The JSON-like data and every schema problem, each at its line and key."""
    data = json_like(doc)
    validator = _validator(schema)
    problems = []
    try:
        for error in validator.iter_errors(data):
            problems += [CaseFileError(doc.file, message, line=doc.line_of(key),
                                       column=doc.column_of(key), key=key)
                         for message, key in describe_errors(error)]
    except Unresolvable as exc:
        # only a plugin's fragment can hold such a $ref; nothing is fetched over the network
        raise PluginLoadError(f"a case-file schema fragment refers to {exc.ref!r}, which cannot "
                              "be resolved offline; refer to urn:caselint:schema:case-v1 "
                              "definitions or inline the schema") from None
    return data, problems
