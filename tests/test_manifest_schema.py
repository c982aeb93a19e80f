"""The shipped case-file schema: valid Draft 2020-12, documented, in step with the code."""

from __future__ import annotations

import json
from typing import Any, Iterator

import pytest
from jsonschema import Draft202012Validator

from caselint.errors import CaseFileError
from caselint.manifest import case_schema, schema_text
from caselint.manifest.case import (
    BOUNDARY_ROLES, SAFETY_CLASSES, TURBULENCE_MODELS, WALL_TREATMENTS,
)
from caselint.manifest.schema import validate_document
from caselint.manifest.units import LENGTH_UNITS
from caselint.manifest.yamlnodes import parse_yaml


def walk_properties(schema: Any, path: str = "") -> Iterator[tuple[str, dict]]:
    """Every (dotted path, subschema) listed under a ``properties`` keyword, at any depth."""
    if isinstance(schema, dict):
        for name, sub in schema.get("properties", {}).items():
            sub_path = f"{path}.{name}".lstrip(".")
            yield sub_path, sub
            yield from walk_properties(sub, sub_path)
        for key, sub in schema.items():
            if key != "properties":
                yield from walk_properties(sub, path)
    elif isinstance(schema, list):
        for sub in schema:
            yield from walk_properties(sub, path)


def test_schema_is_valid_draft_2020_12() -> None:
    schema = case_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)


def test_every_property_has_a_description() -> None:
    props = list(walk_properties(case_schema()))
    assert len(props) > 60                                   # the walk really finds them
    missing = sorted(path for path, sub in props if not str(sub.get("description", "")).strip())
    assert missing == []
    for name, sub in case_schema()["$defs"].items():
        assert sub.get("description"), name


def test_no_open_objects_except_free_form_maps() -> None:
    """additionalProperties false everywhere but the maps keyed by user names."""
    open_maps = []

    def visit(schema: Any, path: str) -> None:
        if isinstance(schema, dict):
            if schema.get("type") == "object" and schema.get("additionalProperties") is not False:
                open_maps.append(path)
            for key, sub in schema.items():
                visit(sub, f"{path}/{key}")
        elif isinstance(schema, list):
            for i, sub in enumerate(schema):
                visit(sub, f"{path}/{i}")

    visit(case_schema(), "")
    assert sorted(open_maps) == sorted([
        "/properties/mesh/properties/boundaries",
        "/properties/mesh/properties/tags",
        "/properties/checks/properties/rules",
        "/properties/checks/properties/rules/additionalProperties",
        "/properties/checks/properties/rules/additionalProperties/properties/grades",
    ])


def test_schema_text_is_the_shipped_json() -> None:
    assert json.loads(schema_text()) == case_schema()
    schema = case_schema()
    schema["properties"].clear()                             # callers get a copy
    assert case_schema()["properties"]


def test_enums_match_the_case_model() -> None:
    props = case_schema()["properties"]
    defs = case_schema()["$defs"]
    assert tuple(defs["boundaryRole"]["enum"]) == BOUNDARY_ROLES
    assert tuple(props["case"]["properties"]["safety"]["enum"]) == SAFETY_CLASSES
    turbulence = props["physics"]["properties"]["turbulence"]["properties"]
    assert tuple(turbulence["model"]["enum"]) == TURBULENCE_MODELS
    assert tuple(turbulence["wall_treatment"]["enum"]) == WALL_TREATMENTS
    assert set(props["mesh"]["properties"]["units"]["enum"]) == set(LENGTH_UNITS)


def test_enum_values_are_named_in_their_descriptions() -> None:
    for path, sub in walk_properties(case_schema()):
        for value in sub.get("enum", []):
            assert str(value) in sub["description"], (path, value)


def test_extensions_are_added_as_top_level_keys() -> None:
    fragment = {"type": "object", "properties": {"x": {"type": "number"}}}
    schema = case_schema({"fan_curve": fragment})
    assert schema["properties"]["fan_curve"]["properties"] == fragment["properties"]
    assert schema["properties"]["fan_curve"]["description"]
    Draft202012Validator.check_schema(schema)
    assert "fan_curve" not in case_schema()["properties"]


def test_validate_document_serves_other_yaml_files() -> None:
    schema = {"type": "object", "additionalProperties": False,
              "properties": {"description": {"type": "string"}, "extends": {"type": "string"}}}
    doc = parse_yaml("description: a set\nextend: general\n", "set.yaml")
    with pytest.raises(CaseFileError) as info:
        validate_document(doc, schema)
    assert str(info.value) == "set.yaml:2:1: [extend] unknown key 'extend' (did you mean 'extends'?)"
    assert validate_document(parse_yaml("extends: general\n"), schema) == {"extends": "general"}
