"""The case file: its JSON Schema, a YAML loader that keeps line numbers, units, and the Case."""

from caselint.manifest.loader import load_case
from caselint.manifest.schema import case_schema, schema_text
from caselint.manifest.yamlnodes import YamlDoc, load_yaml

__all__ = ["YamlDoc", "case_schema", "load_case", "load_yaml", "schema_text"]
