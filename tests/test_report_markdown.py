"""The markdown sign-off checklist: every check's outcome and value, waivers, caution, sign-off."""

from __future__ import annotations

import json
import re

from review_samples import (  # noqa: F401
    CAUTION,
    HOOD_SHA,
    MESH_SHA,
    TEST_SET,
    review_formats,
    sample_report,
)
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.model import Report
from caselint.report.base import RenderOptions
from caselint.report.markdown import caselint_register_reporters, md, render_markdown


def _rows(text: str) -> dict[str, list[str]]:
    """Cells of the checks-table rows, keyed by rule id."""
    rows = {}
    for line in text.splitlines():
        match = re.match(r"\| ([a-z0-9-]+): .*\|$", line)
        if match:
            rows[match.group(1)] = [c.strip() for c in line.strip("|").split("|")]
    return rows


def test_every_check_appears_with_its_outcome_measured_value_and_limit():
    text = render_markdown(sample_report(), RenderOptions())
    rows = _rows(text.split("## Sign-off checklist: ")[1])   # the hood
    hood = sample_report().cases[0]
    assert {c.rule for c in hood.checks} <= set(rows)
    # rule, outcome, measured, limit (values with units, limits with direction), hint
    assert rows["non-orthogonality"][1:4] == ["**FAIL (warning)**", "72.5 deg", "<= 70 deg"]
    assert rows["non-orthogonality"][4] == "Reduce the skew of the cells at the hood lip."
    assert rows["growth-ratio"][1:4] == ["pass", "1.18", "<= 1.3"]
    assert rows["inverted-cells"][1:4] == ["**FAIL (error)**", "3 cells", "<= 0 cells"]
    assert rows["time-step"][1:4] == ["**FAIL (error)**", "0.5 s", "<= 0.1 s"]
    assert rows["wall-yplus"][1] == "not checked"
    assert "no reference speed" in rows["wall-yplus"][4]
    assert rows["aspect-ratio"][1:3] == ["waived (warning)", "1200"]
    assert "R. Quill" in rows["aspect-ratio"][4]
    assert rows["gap-cells"][1] == "**RULE FAULT**"
    # summary order: failures (errors, then warnings), rule faults, waived, pass, not checked
    assert list(rows) == ["inverted-cells", "time-step", "non-orthogonality", "gap-cells",
                          "aspect-ratio", "growth-ratio", "wall-yplus"]


def test_header_holds_inputs_versions_and_no_date_unless_stamped():
    report = sample_report()
    text = render_markdown(report, RenderOptions())
    for expected in ("| Case | Invented kiln exhaust hood |",
                     "| Purpose | Smoke capture of the kiln hood at full draught |",
                     "| Safety class | fire-smoke (safety-relevant) |",
                     f"| Case file SHA-256 | `{HOOD_SHA}` |", f"| Mesh SHA-256 | `{MESH_SHA}` |",
                     "| caselint version | 0.1.0 |",
                     "| Rule sets | general (caselint 0.1.0; SHA-256 cccccccccccccccc...) |"):
        assert expected in text
    assert "\n| Date |" not in text
    assert not re.search(r"\d{4}-\d{2}-\d{2}", text.replace("2031-01-01", "")
                         .replace("2020-06-30", ""))
    stamped = render_markdown(report, RenderOptions(stamp="2031-05-04"))
    assert stamped.count("| Date | 2031-05-04 |") == 2  # one per case


def test_safety_relevant_case_shows_the_caution_and_a_plain_case_does_not():
    text = render_markdown(sample_report(), RenderOptions())
    hood, duct = text.split("## Sign-off checklist: ")[1:]
    assert "> **Safety-relevant case (fire-smoke).**" in hood
    assert "does not validate results" in hood and "licensed professional engineer" in hood
    assert "Safety-relevant" not in duct
    assert "| Safety class | none (not marked safety-relevant) |" in duct


def test_waivers_valid_and_expired_with_reason_approver_and_expiry():
    text = render_markdown(sample_report(), RenderOptions())
    assert ("| aspect-ratio | region far-field | far-field cells, no effect on the hood | "
            "R. Quill | 2031-01-01 | in force, used |") in text
    assert ("| skewness | boundary duct-bend | legacy block at the duct bend | P. Anand | "
            "2020-06-30 | **EXPIRED on 2020-06-30: covers nothing** |") in text
    assert "- **waived warning** aspect-ratio:" in text


def test_manual_checklist_items_are_tick_boxes_and_sign_off_lines_follow():
    text = render_markdown(sample_report(), RenderOptions())
    assert ("- [ ] Fluid properties checked against the project's data source "
            "(fluid-data, rule set general)") in text
    assert "- [ ] Boundary-condition values reviewed (boundary-values, rule set general)" in text
    for line in ("| Prepared by | I. Marchetti |", "| Reviewed by | T. Oyelaran |",
                 "| Reviewed by | K. Brandvold |", "| Approved | S. Okafor |"):
        assert line in text
    # the clean duct names nobody: the lines are still there, blank
    duct = text.split("## Sign-off checklist: ")[2]
    assert "| Prepared by |   |   |   |" in duct and "| Approved |   |   |   |" in duct


def test_several_cases_get_a_summary_table_and_findings_say_where():
    text = render_markdown(sample_report(), RenderOptions())
    assert ("| Case | File | Fail | Rule fault | Waived | Pass | Not checked | "
            "Worst open finding |") in text
    assert ("| Invented kiln exhaust hood | `cases/kiln-hood/case.yaml` | 3 | 1 | 1 | 1 | 1 "
            "| error |") in text
    assert "| Invented test duct | `cases/duct/case.yaml` | 0 | 0 | 0 | 1 | 0 | none |" in text
    assert "case file time.step (line 17)" in text
    assert "boundary 'hood-wall'; 2 cells (ids 3, 4); 14 faces" in text


def test_markdown_specials_in_case_text_are_escaped():
    assert md("a|b *c* <x> [y] `z`\nnext") == r"a\|b \*c\* \<x\> \[y\] \`z\` next"
    assert md("<= 1.3, >= 5 cells, <b>=") == r"<= 1.3, >= 5 cells, \<b>="   # no tag opens


def test_output_is_stable_and_empty_report_is_said():
    report = sample_report()
    assert render_markdown(report, RenderOptions()) == render_markdown(report, RenderOptions())
    assert "No case files were checked." in render_markdown(Report((), "0.1.0"), RenderOptions())
    (reporter,) = caselint_register_reporters()
    assert (reporter.name, reporter.suffix) == ("markdown", ".md")


def test_end_to_end_values_from_a_real_mesh(tmp_path, review_formats):  # noqa: F811
    # x spacings 0.1, 0.1, 0.4 m: neighbouring cell sizes differ by 0.4 / 0.1 = 4.
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_case(tmp_path, mesh, name="Invented duct with a jump")
    code, out, err = run_cli("check", *TEST_SET, str(case), "--format", "markdown")
    assert code == 1, err
    rows = _rows(out)
    assert rows["growth-ratio"][1:4] == ["**FAIL (error)**", "4", "<= 3"]
    # an axis-aligned hex block is orthogonal: 0 deg up to round-off
    measured = rows["non-orthogonality"][2]
    assert rows["non-orthogonality"][1] == "pass" and measured.endswith(" deg")
    assert float(measured.split()[0]) < 1e-9
    _, js, _ = run_cli("check", *TEST_SET, str(case), "--format", "json")
    document = json.loads(js)["cases"][0]
    assert f"| Case file SHA-256 | `{document['case_sha256']}` |" in out
    assert all(f"| {c['rule']}: " in out for c in document["checks"])
