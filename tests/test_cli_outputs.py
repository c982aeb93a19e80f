"""The command line's outputs: paired --format/--output, folders of cases, --stamp, summary."""

from __future__ import annotations

import datetime as dt
import json
import xml.etree.ElementTree as ET

import pytest
from review_samples import TEST_SET, review_formats  # noqa: F401
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.errors import UsageError
from caselint.manifest.discovery import expand_case_paths, is_case_file_name
from caselint.report.outputs import Destination, pair_outputs


@pytest.mark.parametrize("formats, outputs, expected", [
    (None, None, [("text", None)]),
    (["json"], None, [("json", None)]),
    (None, ["r.txt"], [("text", "r.txt")]),
    (["sarif", "junit"], ["r.sarif", "r.xml"], [("sarif", "r.sarif"), ("junit", "r.xml")]),
    (["text", "sarif"], ["-", "r.sarif"], [("text", None), ("sarif", "r.sarif")]),
])
def test_formats_pair_with_outputs_in_order(formats, outputs, expected):
    pairs = pair_outputs(formats, outputs)
    assert [(d.format, None if d.path is None else str(d.path)) for d in pairs] == expected
    assert all(isinstance(d, Destination) for d in pairs)


@pytest.mark.parametrize("formats, outputs, message", [
    (["json", "sarif"], None, "2 --format options but 0 --output"),
    (["json", "sarif"], ["r.json"], "2 --format options but 1 --output"),
    (["json"], ["a", "b"], "1 --format options but 2 --output"),
    (None, ["a", "b"], "2 --output options but no --format"),
    (["text", "json"], ["-", "-"], "only one report can go to stdout"),
    (["json", "sarif"], ["r.out", "./r.out"], "is given twice"),
])
def test_outputs_that_do_not_pair_are_usage_errors(formats, outputs, message):
    with pytest.raises(UsageError, match=message):
        pair_outputs(formats, outputs)


@pytest.fixture
def cases_tree(tmp_path):
    """cases/{a,b/deep}/case.yaml, a named *.caselint.yaml, plus files that are not cases."""
    root = tmp_path / "cases"
    paths = {}
    for rel, xs in (("b/deep", [0.0, 0.1, 0.2, 0.6]), ("a", [0.0, 0.1, 0.2, 0.3])):
        folder = root / rel
        folder.mkdir(parents=True)
        case = write_case(folder, write_block_mesh(folder / "m.msh", xs=xs))
        paths[rel] = case.rename(folder / "case.yaml")
    named = root / "a" / "hood.caselint.yml"
    named.write_text(paths["a"].read_text(), encoding="utf-8")
    (root / "a" / "notes.yaml").write_text("not: a case\n", encoding="utf-8")
    hidden = root / ".old"
    hidden.mkdir()
    (hidden / "case.yaml").write_text("broken: [\n", encoding="utf-8")
    return root


def test_folders_expand_to_case_files_recursively_sorted(cases_tree, tmp_path):
    found = expand_case_paths([str(cases_tree)])
    rel = [p[len(str(cases_tree)) + 1:] for p in found]
    assert rel == ["a/case.yaml", "a/hood.caselint.yml", "b/deep/case.yaml"]
    # a file named explicitly is kept whatever its name; repeats are dropped
    explicit = str(cases_tree / "a" / "case.yaml")
    assert expand_case_paths([explicit, str(cases_tree)])[0] == explicit
    assert len(expand_case_paths([explicit, str(cases_tree)])) == 3
    assert is_case_file_name("room.caselint.yaml") and not is_case_file_name("room.yaml")
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(UsageError, match="no case files in folder"):
        expand_case_paths([str(empty)])


def test_check_a_folder_with_a_summary_table(cases_tree, monkeypatch,
                                              review_formats):  # noqa: F811
    monkeypatch.chdir(cases_tree.parent)
    code, out, err = run_cli("check", *TEST_SET, "cases")
    assert code == 1, err                        # b/deep has the 2.5 volume jump
    table = out[out.index("Cases"):]
    rows = [line.split() for line in table.splitlines() if "cases/" in line]
    assert [r[0] for r in rows] == ["cases/a/case.yaml", "cases/a/hood.caselint.yml",
                                    "cases/b/deep/case.yaml"]
    # columns: case, fail, rule fault (its header on two lines), waived, pass, skipped, worst
    assert [line.split() for line in table.splitlines()[1:3]] == [
        ["Rule"], ["Case", "file", "Fail", "fault", "Waived", "Pass", "Skipped", "Worst"]]
    assert rows[0][1] == "0" and rows[2][1] == "1" and rows[2][-1] == "error"
    assert out.splitlines()[-1].startswith("Result for 3 cases:")


def test_several_formats_in_one_run(cases_tree, tmp_path, review_formats):  # noqa: F811
    outs = {name: tmp_path / f"r.{name}" for name in ("sarif", "junit", "markdown", "json")}
    args = ["check", *TEST_SET, str(cases_tree / "b")]
    for name, path in outs.items():
        args += ["--format", name, "--output", str(path)]
    code, out, err = run_cli(*args, "--format", "text", "--output", "-")
    assert code == 1, err
    assert "growth-ratio" in out and out.splitlines()[-1].startswith("Result for 1 case:")
    assert json.loads(outs["sarif"].read_text())["version"] == "2.1.0"
    assert ET.parse(outs["junit"]).getroot().find("testsuite").get("failures") == "1"
    assert "# Sign-off checklist:" in outs["markdown"].read_text()
    assert json.loads(outs["json"].read_text())["cases"][0]["checks"]
    # not paired: usage error, nothing written
    code, out, err = run_cli("check", *TEST_SET, str(cases_tree / "b"), "--format", "json",
                             "--format", "sarif", "--output", str(tmp_path / "x.sarif"))
    assert (code, out) == (2, "") and "give one --output per --format" in err
    assert not (tmp_path / "x.sarif").exists()


def test_stamp_adds_todays_date_to_the_checklist_only(cases_tree, review_formats):  # noqa: F811
    case = str(cases_tree / "a" / "case.yaml")
    today = dt.date.today().isoformat()
    plain = run_cli("check", *TEST_SET, case, "--format", "markdown")[1]
    stamped = run_cli("check", *TEST_SET, case, "--format", "markdown", "--stamp")[1]
    assert f"| Date | {today} |" in stamped and "\n| Date |" not in plain
    assert run_cli("check", *TEST_SET, case, "--format", "json", "--stamp")[1] == \
        run_cli("check", *TEST_SET, case, "--format", "json")[1]
