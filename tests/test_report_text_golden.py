"""Golden tests of the text report: the whole page at 80 and 120 columns and as piped.

The report is invented and built by hand so that the pages change only when the text
format does: every outcome group, a 27-character rule id, a value just above its limit,
counts of one, a rule with a long list of sources cited by three findings, a waived
finding and a safety-relevant case. The finding sentences on the limit and of one cell
are written by the engine's own wording (``grading.message``).

To accept a deliberate change of the format, rerun with ``CASELINT_UPDATE_GOLDEN=1`` and
read the diff of ``tests/data/golden/`` before committing it.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from caselint.cli_commands import DEFAULT_WIDTH, output_width, use_color
from caselint.engine import grading
from caselint.model import (
    CaseReport,
    Check,
    Finding,
    Limits,
    Measurement,
    Report,
    Rule,
    RuleResult,
    Where,
)
from caselint.report.base import RenderOptions
from caselint.report.text import render_text

GOLDEN = Path(__file__).parent / "data" / "golden"
YPLUS_SOURCE = ("Pope 2000; Menter 1994; Launder & Spalding 1974; Versteeg & Malalasekera "
                "2007; Schlichting 1979; Colebrook 1939")
CAUTION = "This case concerns life safety; licensed professional review governs."


def _rule(rule_id: str, measures: str, unit: str, limits: Limits, worse: str = "higher") -> Rule:
    return Rule(id=rule_id, title=measures, rationale="invented for the golden test",
                source="common practice", unit=unit, limits=limits, hint="-", worse=worse,
                check=lambda ctx: RuleResult.skip("never run"), measures=measures)


GROWTH = _rule("growth-ratio", "largest volume ratio of two neighbouring cells", "",
               Limits(1.2, 2.0))
LAYERS = _rule("boundary-layer-cells", "fewest cells within the boundary-layer thickness",
               "cells", Limits(10, 5), worse="lower")
#: Just above the warning limit 1.2: seven significant digits are printed, not "1.2".
ON_LIMIT = Measurement(1.2000001)
ONE_CELL = Measurement(1.0, where=Where(boundary="tray-floor"))


def golden_report() -> Report:
    """An invented electronics enclosure with one check of every outcome group."""
    checks = (
        Check("wall-yplus", "First-cell y+", "fail", "error", 948.283, 500.0, "",
              limits=Limits(300.0, 500.0)),
        Check("growth-ratio", GROWTH.title, "fail", "warning", 1.2000001, 1.2, "",
              limits=GROWTH.limits),
        Check("boundary-layer-cells", LAYERS.title, "fail", "error", 1.0, 5.0, "cells",
              limits=LAYERS.limits, worse="lower"),
        Check("unmatched-boundary-elements", "Boundary elements on cell faces", "pass", None,
              0.0, 0.0, "elements", limits=Limits(0.0, None)),
        Check("disconnected-pieces", "One connected mesh", "pass", None, 1.0, 1.0, "pieces",
              limits=Limits(1.0, None)),
        Check("gap-cells", "Cells across gaps", "error", "error", None, None, "cells",
              reason="internal error in rule: ValueError: no rays left at gaps.py:40"),
        Check("aspect-ratio", "Cell aspect ratio", "waived", "warning", 1200.0, 1000.0, "",
              limits=Limits(1000.0, 10000.0)),
        Check("courant", "Courant number", "skipped", None, None, None, "",
              reason="steady case"),
        Check("wall-spacing-uniformity", "Uniform first-layer height", "pass", None, 1.25,
              1.5, "", limits=Limits(1.5, 3.0)),
    )
    yplus = [Finding("wall-yplus", severity, message, value, limit, "", Where(boundary=wall),
                     "Thin the first layer.", YPLUS_SOURCE)
             for severity, message, value, limit, wall in (
                 ("error", "largest y+ on boundary 'fan-shroud' is 948.3, above the error "
                           "limit 500", 948.283, 500.0, "fan-shroud"),
                 ("warning", "largest y+ on boundary 'tray-floor' is 412, above the warning "
                             "limit 300", 412.0, 300.0, "tray-floor"),
                 ("warning", "largest y+ on boundary 'lid' is 301.5, above the warning limit "
                             "300", 301.5, 300.0, "lid"))]
    findings = (
        *yplus,
        Finding("growth-ratio", "warning", grading.message(GROWTH, ON_LIMIT, "warning", 1.2),
                1.2000001, 1.2, "", Where(cells=(17, 18), cell_count=2, faces=(40,),
                                          face_count=1, point=(0.012, 0.3, 0.05)),
                "Grade the spacing more gently.", "common practice"),
        Finding("boundary-layer-cells", "error", grading.message(LAYERS, ONE_CELL, "error", 5),
                1.0, 5.0, "cells", Where(boundary="tray-floor", cells=(3,), cell_count=1),
                "Add inflation layers on 'tray-floor'.", "Schlichting 1979; common practice"),
        Finding("gap-cells", "error", "the rule could not run: ValueError: no rays left",
                None, None, "cells", Where(), "This is a fault in the rule, not in the case.",
                "common practice"),
        Finding("aspect-ratio", "warning", "largest aspect ratio is 1200, above the warning "
                "limit 1000", 1200.0, 1000.0, "", Where(region="far-field"),
                "Refine the far field.", "common practice", waived=True,
                waiver="waived by R. Quill until 2031-01-01: far field, no effect on the fan"),
    )
    case = CaseReport("enclosures/fan-tray/case.yaml", "Invented fan tray enclosure",
                      "life-safety", checks, findings, safety_note=CAUTION, mesh="tray.msh",
                      rule_sets=("general",))
    return Report((case,), "0.1.0")


def _golden(name: str, text: str) -> str:
    path = GOLDEN / name
    if os.environ.get("CASELINT_UPDATE_GOLDEN") == "1":
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    return path.read_text(encoding="utf-8")


def _piped_options() -> RenderOptions:
    """What the command line chooses when stdout is a pipe and COLUMNS is not set."""
    read, write = os.pipe()
    with os.fdopen(read) as _, os.fdopen(write, "w") as pipe:
        return RenderOptions(color=use_color(pipe), width=output_width(pipe))


@pytest.fixture(autouse=True)
def _no_terminal_settings(monkeypatch):
    for name in ("NO_COLOR", "COLUMNS"):
        monkeypatch.delenv(name, raising=False)


@pytest.mark.parametrize("name, width", [("text-80.txt", 80), ("text-120.txt", 120)])
def test_text_report_matches_its_golden_page(name, width):
    text = render_text(golden_report(), RenderOptions(color=False, width=width))
    assert text == _golden(name, text)
    assert all(len(line) <= width for line in text.splitlines()[:-1])


def test_piped_text_report_matches_its_golden_page():
    options = _piped_options()
    assert (options.color, options.width) == (False, DEFAULT_WIDTH)
    text = render_text(golden_report(), options)
    assert text == _golden("text-piped.txt", text)
    assert text.isascii() and "\x1b[" not in text


def _table_rows(text: str) -> list[list[str]]:
    """The words of each row of the checks table."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("Rule ")) + 2
    rows = []
    for line in lines[start:]:
        if not line or line.startswith("Not checked"):
            break
        rows.append(line.split())
    return rows


@pytest.mark.parametrize("width", [80, 120])
def test_table_lists_failures_first_then_faults_waived_passed_skipped(width):
    text = render_text(golden_report(), RenderOptions(width=width))
    rules = [row[0] for row in _table_rows(text)]
    assert rules == ["boundary-layer-cells", "wall-yplus",         # failed: errors
                     "growth-ratio",                                # failed: warnings
                     "gap-cells",                                   # rule fault
                     "aspect-ratio",                                # waived
                     "disconnected-pieces", "unmatched-boundary-elements",
                     "wall-spacing-uniformity",                     # passed
                     "courant"]                                     # skipped


def test_rule_ids_are_whole_on_their_line_at_80_columns():
    text = render_text(golden_report(), RenderOptions(width=80))
    for check in golden_report().cases[0].checks:
        assert re.search(rf"^{check.rule}\s", text, re.M), check.rule


def test_limits_carry_direction_and_unit_and_counts_of_one_are_singular():
    text = render_text(golden_report(), RenderOptions(width=120))
    rows = {row[0]: " ".join(row[1:]) for row in _table_rows(text)}
    assert rows["boundary-layer-cells"] == "fail (error) 1 cell >= 5 cells"
    assert rows["disconnected-pieces"] == "pass 1 piece <= 1 piece"
    assert rows["unmatched-boundary-elements"] == "pass 0 elements <= 0 elements"
    assert rows["gap-cells"] == "rule fault - -"
    assert "is 1 cell, below the error limit 5 cells" in " ".join(text.split())
    assert text.splitlines()[-1] == (
        "Result for 1 case: 3 failed, 1 rule fault, 1 waived, 3 passed, 1 skipped; "
        "worst severity: error (fail level: error)")
    assert " 1 cells" not in text and " 1 pieces" not in text


def test_a_value_just_above_its_limit_is_never_printed_equal_to_it():
    text = render_text(golden_report(), RenderOptions(width=120))
    rows = {row[0]: row[1:] for row in _table_rows(text)}
    assert rows["growth-ratio"][-3:] == ["1.2000001", "<=", "1.2"]
    assert ("largest volume ratio of two neighbouring cells is 1.2000001, above the warning "
            "limit 1.2") in " ".join(text.split())


def test_each_rules_sources_are_printed_once_and_findings_carry_the_key():
    text = render_text(golden_report(), RenderOptions(width=120))
    assert text.count("Colebrook 1939") == 1
    sources = text[text.index("\nSources\n"):]
    key = re.search(r"^(\[\d+\]) wall-yplus: Pope 2000;", sources, re.M).group(1)
    findings = text[:text.index("\nSources\n")]
    assert findings.count(f"source {key}, under Sources") == 3
    # one entry per rule cited, in the order first cited
    listed = re.findall(r"^\[(\d+)\] ([a-z-]+):", sources, re.M)
    assert [int(n) for n, _ in listed] == list(range(1, len(listed) + 1))
    assert sorted(rule for _, rule in listed) == ["aspect-ratio", "boundary-layer-cells",
                                                  "gap-cells", "growth-ratio", "wall-yplus"]


def test_piped_command_line_output_is_plain_and_fits(tmp_path):
    """The real command, its stdout a pipe: no colour, 100 columns, ids whole."""
    from test_cli_e2e import write_block_mesh, write_case

    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_case(tmp_path, mesh, name="Invented duct with a jump")
    env = {k: v for k, v in os.environ.items() if k not in ("COLUMNS", "NO_COLOR")}
    run = subprocess.run([sys.executable, "-c", "import sys; from caselint.cli import main; "
                          "sys.exit(main())", "check", str(case)],
                         capture_output=True, text=True, env=env, timeout=120)
    assert run.returncode == 1, run.stderr
    lines = run.stdout.splitlines()
    assert run.stdout.isascii() and "\x1b[" not in run.stdout
    assert all(len(line) <= DEFAULT_WIDTH for line in lines[:-1])
    assert lines[-1].startswith("Result for 1 case: ")
    table = _table_rows(run.stdout)
    assert table[0][1:3] == ["fail", "(error)"]
    assert ["growth-ratio", "fail", "(error)", "4", "<=", "3"] in table


def test_the_cases_table_keeps_every_column_at_80_columns():
    import dataclasses

    first = golden_report().cases[0]
    second = dataclasses.replace(first, case="enclosures/fan-tray-rev-b/case.yaml",
                                 findings=(), checks=first.checks[3:5])
    text = render_text(Report((first, second), "0.1.0"), RenderOptions(width=80))
    table = text[text.index("\nCases\n"):].splitlines()
    # the header of the rule-fault count takes two lines, so that paths stay whole
    assert [table[2].split(), table[3].split()] == [
        ["Rule"], ["Case", "file", "Fail", "fault", "Waived", "Pass", "Skipped", "Worst"]]
    assert table[5].split() == ["enclosures/fan-tray/case.yaml", "3", "1", "1", "3", "1",
                                "error"]
    assert table[6].split() == ["enclosures/fan-tray-rev-b/case.yaml", "0", "0", "0", "2",
                                "0", "none"]
    assert all(len(line) <= 80 for line in text.splitlines()[:-1])
