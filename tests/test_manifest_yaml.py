"""load_yaml / parse_yaml: safe loading, line numbers, duplicates, aliases and bad input."""

from __future__ import annotations

import datetime as dt
import time
from pathlib import Path

import pytest

from caselint.errors import CaseFileError
from caselint.manifest.yamlnodes import MAX_VALUES, YamlDoc, load_yaml, parse_yaml

RULE_SET = """\
description: General checks
extends: base
rules:
  growth-ratio: {warn: 1.3, error: 2.0}
  inverted-cells: {}
checklist:
  - {id: fluid-data, text: "Fluid properties verified"}
  - id: units
    text: Mesh units checked
"""


def test_lines_and_columns_of_every_key_path() -> None:
    doc = parse_yaml(RULE_SET, "general.yaml")
    assert isinstance(doc, YamlDoc) and doc.file == "general.yaml"
    assert doc.data["rules"]["growth-ratio"] == {"warn": 1.3, "error": 2.0}
    assert doc.lines[""] == 1
    assert doc.lines["extends"] == 2
    assert doc.lines["rules.growth-ratio.error"] == 4
    assert doc.columns["rules.growth-ratio.error"] == 29        # 1-based column of "error"
    assert RULE_SET.splitlines()[3][28:33] == "error"
    assert doc.lines["checklist[0]"] == 7 and doc.lines["checklist[0].text"] == 7
    assert doc.lines["checklist[1]"] == 8 and doc.lines["checklist[1].text"] == 9
    assert doc.columns["checklist[1].text"] == 5
    assert doc.line_of("rules.growth-ratio.warn.deeper") == 4
    assert doc.line_of("checklist[1].nothing") == 8
    assert doc.line_of("nothing.at.all") == 1


def test_numbers_dates_and_text() -> None:
    doc = parse_yaml("a: 2e-4\nb: 1e5\nc: 1.5e-5\nd: '2e-4'\ne: 1_000\nf: 2027-06-30\ng: 1 ft\nh: -3E+2\n")
    # YAML 1.1 (plain PyYAML) would read 2e-4 and 1e5 as text; engineers mean numbers
    assert doc.data == {"a": 2e-4, "b": 1e5, "c": 1.5e-5, "d": "2e-4", "e": 1000,
                        "f": dt.date(2027, 6, 30), "g": "1 ft", "h": -300.0}
    assert isinstance(doc.data["b"], float)


def test_duplicate_keys_name_both_lines() -> None:
    with pytest.raises(CaseFileError) as info:
        parse_yaml("a: 1\nb:\n  c: 1\n  d: 2\n  c: 3\n", "f.yaml")
    err = info.value
    assert err.message == "duplicate key 'c' (first on line 3, again on line 5)"
    assert (err.line, err.column, err.key) == (5, 3, "b.c")
    assert str(err) == "f.yaml:5:3: [b.c] duplicate key 'c' (first on line 3, again on line 5)"


def test_syntax_error_position_is_one_based() -> None:
    with pytest.raises(CaseFileError) as info:
        parse_yaml("a: 1\nb: [1, 2\nc: 3\n", "f.yaml")
    # the unclosed flow list is noticed at "c:" of line 3: 0-based mark (2, 1) -> 3:2
    assert (info.value.line, info.value.column) == (3, 2)
    assert info.value.message.startswith("YAML syntax error: ")
    with pytest.raises(CaseFileError) as info:
        parse_yaml("a:\n\tb: 1\n")
    assert (info.value.line, info.value.column) == (2, 1) and "'\\t'" in info.value.message


def test_empty_and_non_mapping_documents() -> None:
    for text in ("", "   \n", "# nothing\n", "---\n"):
        with pytest.raises(CaseFileError, match="holds no YAML document"):
            parse_yaml(text)
    with pytest.raises(CaseFileError, match="got a list") as info:
        parse_yaml("\n- a\n- b\n")
    assert info.value.line == 2
    with pytest.raises(CaseFileError, match="got a single value"):
        parse_yaml("just text\n")
    with pytest.raises(CaseFileError, match="expected a single document") as info:
        parse_yaml("a: 1\n---\nb: 2\n")
    assert info.value.line == 2


def test_small_anchors_aliases_and_merge_keys_work() -> None:
    text = "base: &b {warn: 1.3, error: 2.0}\nx: *b\ny:\n  <<: *b\n  warn: 1.25\n"
    doc = parse_yaml(text)
    assert doc.data["x"] == {"warn": 1.3, "error": 2.0}
    assert doc.data["y"] == {"warn": 1.25, "error": 2.0}       # own keys win over merged ones
    assert doc.lines["y.warn"] == 5 and doc.lines["y.error"] == 1
    doc.data["x"]["warn"] = 9                                 # aliases are copies, not shared
    assert doc.data["base"]["warn"] == 1.3


def test_billion_laughs_is_refused_quickly() -> None:
    # 9 levels of 9 aliases each would expand to 9^9 (~3.9e8) strings
    lines = ['l0: &l0 ["lol", "lol", "lol", "lol", "lol", "lol", "lol", "lol", "lol"]']
    for level in range(1, 9):
        lines.append(f"l{level}: &l{level} [" + ", ".join([f"*l{level - 1}"] * 9) + "]")
    start = time.perf_counter()
    with pytest.raises(CaseFileError, match=f"more than {MAX_VALUES} values"):
        parse_yaml("\n".join(lines) + "\n", "bomb.yaml")
    assert time.perf_counter() - start < 5.0                  # generous: it stops at 1e5 values


def test_recursive_aliases_are_refused() -> None:
    with pytest.raises(CaseFileError, match="recursive documents are not allowed"):
        parse_yaml("a: &x [1, *x]\n")
    with pytest.raises(CaseFileError, match="recursive documents are not allowed"):
        parse_yaml("a: &x {b: 1, <<: *x}\n")


@pytest.mark.parametrize("text", [
    "a: !!python/object/apply:os.system ['echo pwned']\n",
    "a: !!python/name:os.system\n",
    "a: !custom {b: 1}\n",
    "a: !!set {x, y}\n",
])
def test_unsafe_and_unknown_tags_are_refused(text: str) -> None:
    with pytest.raises(CaseFileError, match="unsupported tag") as info:
        parse_yaml(text)
    assert (info.value.line, info.value.key) == (1, "a")


def test_bad_scalar_values() -> None:
    with pytest.raises(CaseFileError) as info:
        parse_yaml("a: 1\nexpires: 2027-02-30\n")
    assert info.value.message == "cannot read '2027-02-30' as a date: day is out of range for month"
    assert (info.value.line, info.value.key) == (2, "expires")
    with pytest.raises(CaseFileError, match="a key must be a plain value"):
        parse_yaml("? [a, b]\n: 1\n")


def test_files_missing_binary_or_unreadable(tmp_path: Path) -> None:
    with pytest.raises(CaseFileError) as info:
        load_yaml(tmp_path / "nope.yaml")
    assert str(info.value) == f"{tmp_path / 'nope.yaml'}: file not found"
    with pytest.raises(CaseFileError, match="is a folder"):
        load_yaml(tmp_path)
    bad = tmp_path / "latin1.yaml"
    bad.write_bytes(b"a: 1\nname: caf\xe9\n")
    with pytest.raises(CaseFileError, match="not UTF-8") as info:
        load_yaml(bad)
    assert info.value.line == 2
    ctrl = tmp_path / "ctrl.yaml"
    ctrl.write_text("a: 1\nb: \x07\n")
    with pytest.raises(CaseFileError, match="unreadable character") as info:
        load_yaml(ctrl)
    assert info.value.line == 2


def test_load_yaml_reads_a_file_with_bom(tmp_path: Path) -> None:
    path = tmp_path / "set.yaml"
    path.write_bytes(b"\xef\xbb\xbf" + RULE_SET.encode())
    doc = load_yaml(path)
    assert doc.file == str(path) and doc.data["extends"] == "base" and doc.lines["extends"] == 2


def test_deep_nesting_is_an_error_not_a_crash() -> None:
    with pytest.raises(CaseFileError, match="nested too deeply"):
        parse_yaml("a: " + "[" * 20000 + "]" * 20000 + "\n")
