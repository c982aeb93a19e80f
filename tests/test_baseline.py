"""Baselines: record today's findings, then report only new ones or ones that got worse."""

from __future__ import annotations

import dataclasses
import json

import pytest
from review_samples import TEST_SET, review_formats, sample_report  # noqa: F401
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.baseline import apply_baseline, baseline_text, load_baseline
from caselint.errors import UsageError


def _write(tmp_path, report):
    path = tmp_path / "baseline.json"
    path.write_text(baseline_text(report), encoding="utf-8")
    return load_baseline(path)


def test_baseline_records_open_findings_only_sorted_and_stable():
    report = sample_report()
    document = json.loads(baseline_text(report))
    assert document["format"] == "caselint-baseline" and document["version"] == 1
    entries = document["findings"]
    # the hood has 6 findings: the waived aspect-ratio one and the gap-cells rule fault are
    # not recorded; the duct has none
    assert [(e["rule"], e["severity"]) for e in entries] == [
        ("growth-ratio", "note"), ("inverted-cells", "error"), ("non-orthogonality", "warning"),
        ("time-step", "error")]
    assert entries[2]["boundary"] == "hood-wall" and entries[3]["key"] == "time.step"
    assert baseline_text(report) == baseline_text(sample_report())
    assert "message" not in entries[0]       # numbers in messages would churn the file


def test_applying_its_own_baseline_leaves_nothing_open(tmp_path):
    report = sample_report()
    filtered = apply_baseline(report, _write(tmp_path, report))
    hood = filtered.cases[0]
    assert hood.baselined == 4
    assert {(f.rule, f.waived) for f in hood.findings} == {("gap-cells", False),
                                                           ("aspect-ratio", True)}
    checks = {c.rule: c for c in hood.checks}
    assert checks["inverted-cells"].outcome == "fail"      # the check still says what it found
    assert checks["inverted-cells"].reason == ("1 known finding recorded in the baseline, "
                                               "not reported")
    assert filtered.baseline.endswith("baseline.json")


def test_changed_numbers_stay_known_but_a_new_scope_or_a_worse_grade_is_reported(tmp_path):
    report = sample_report()
    baseline = _write(tmp_path, report)
    hood = report.cases[0]
    old = hood.findings[0]                                # non-orthogonality warning
    moved_number = dataclasses.replace(old, message="largest is 74 deg", measured=74.0)
    new_wall = dataclasses.replace(old, where=dataclasses.replace(old.where, boundary="lip"))
    escalated = dataclasses.replace(old, severity="error", message="largest is 88 deg")
    for finding, reported in ((moved_number, False), (new_wall, True), (escalated, True)):
        case = dataclasses.replace(hood, findings=(finding,))
        out = apply_baseline(dataclasses.replace(report, cases=(case,)), baseline)
        assert (len(out.cases[0].findings) == 1) is reported, finding.message


@pytest.mark.parametrize("content, expected", [
    (None, "does not exist"),
    ("{not json", "baseline is not valid JSON"),
    ('{"format": "something-else"}', "not a caselint baseline"),
    ('{"format": "caselint-baseline", "version": 9, "findings": []}', "version 9"),
    ('{"format": "caselint-baseline", "version": 1, "findings": [{"fingerprint": 1}]}',
     "findings[0]"),
])
def test_bad_baseline_files_are_usage_errors_naming_the_file(tmp_path, content, expected):
    path = tmp_path / "known.json"
    if content is not None:
        path.write_text(content, encoding="utf-8")
    with pytest.raises(UsageError, match=r"known\.json") as info:
        load_baseline(path)
    assert expected in str(info.value)


def test_command_line_write_then_apply(tmp_path, review_formats):  # noqa: F811
    jump = write_case(tmp_path, write_block_mesh(tmp_path / "jump.msh",
                                                 xs=[0.0, 0.1, 0.2, 0.6]))
    baseline = tmp_path / "known.json"
    code, _, err = run_cli("check", *TEST_SET, str(jump), "--write-baseline", str(baseline))
    assert code == 1          # writing a baseline does not hide anything in the same run
    recorded = json.loads(baseline.read_text())["findings"]
    open_findings = [f for f in json.loads(run_cli("check", *TEST_SET, str(jump), "--format", "json")[1])
                     ["cases"][0]["findings"] if not f["waived"]]
    assert sorted(e["rule"] for e in recorded) == sorted(f["rule"] for f in open_findings)
    assert ("growth-ratio", "error") in {(e["rule"], e["severity"]) for e in recorded}
    n = len(recorded)
    assert f"wrote baseline {baseline} ({n} open finding{'s' if n > 1 else ''})" in err
    code, out, err = run_cli("check", *TEST_SET, str(jump), "--baseline", str(baseline), "--format", "json")
    assert code == 0, err
    assert f"{n} known finding{'s' if n > 1 else ''} left out" in err
    document = json.loads(out)
    assert document["baseline"] == str(baseline)
    assert document["cases"][0]["baselined"] == n and document["cases"][0]["findings"] == []
    # a missing baseline stops the run before any case is checked
    code, out, err = run_cli("check", *TEST_SET, str(jump), "--baseline", str(tmp_path / "none.json"))
    assert (code, out) == (2, "") and "none.json does not exist" in err
    # never over an input
    code, _, err = run_cli("check", *TEST_SET, str(jump), "--write-baseline", str(jump))
    assert code == 2 and "never overwrites its inputs" in err


def test_reports_say_how_many_known_findings_were_left_out(tmp_path):
    from caselint.report.base import RenderOptions
    from caselint.report.markdown import render_markdown
    from caselint.report.text import render_text

    report = sample_report()
    filtered = apply_baseline(report, _write(tmp_path, report))
    text = render_text(filtered, RenderOptions(width=400))
    assert f"4 known findings left out: recorded in the baseline {filtered.baseline}" in text
    markdown = render_markdown(filtered, RenderOptions())
    assert f"| Baseline | {filtered.baseline}: 4 known findings left out of this list |" \
        in markdown.replace("\\_", "_")
