"""The text output format: content, grouping, plain output without colour, summary line."""

from __future__ import annotations

import re

import pytest

from caselint.model import CaseReport, Check, Finding, Limits, Report, Where
from caselint.report.base import RenderOptions
from caselint.report.text import (
    caselint_register_reporters,
    format_number,
    format_where,
    MIN_WIDTH,
    render_text,
    summary_line,
)

ANSI = re.compile(r"\x1b\[")
CAUTION = "This case concerns life safety; licensed professional review governs."


def report_with(*findings: Finding, checks: tuple[Check, ...] = (), safety: str = "none",
                safety_note: str = "") -> Report:
    """One invented case holding the given checks and findings."""
    case = CaseReport("rooms/plant-room/case.yaml", "Invented plant room", safety, checks,
                      findings, safety_note=safety_note, mesh="plant-room.msh",
                      rule_sets=("general", "hvac-rooms"))
    return Report((case,), "0.1.0")


NONORTH = Check("non-orthogonality", "Face non-orthogonality", "fail", "warning", 72.5, 70.0,
                "deg", limits=Limits(70.0, 85.0))
GROWTH = Check("growth-ratio", "Cell growth ratio", "pass", None, 1.18, 1.3, "",
               limits=Limits(1.3, 2.0))
YPLUS = Check("wall-yplus", "First-cell y+", "skipped", None, None, None, "",
              reason="the case gives no free-stream speed (physics.flow.speed)")
INVERTED = Check("inverted-cells", "Inverted cells", "fail", "error", 3.0, 0.0, "cells",
                 limits=Limits(None, 0.0))
WARN = Finding("non-orthogonality", "warning",
               "non-orthogonality 72.5 deg is above the warning limit 70 deg on 14 faces",
               72.5, 70.0, "deg",
               Where(boundary="duct-wall", faces=tuple(range(10)), face_count=14,
                     point=(0.1, 0.25, 0.001)),
               "Reduce the skew of the cells at the duct bend.", "common practice")
ERR = Finding("inverted-cells", "error", "3 cells have a negative volume (limit 0)", 3.0, 0.0,
              "cells", Where(cells=(5, 9, 12), cell_count=3),
              "Re-export the mesh with consistent cell ordering.", "common practice")
NOTE = Finding("growth-ratio", "note", "largest growth ratio is in region fluid", None, None,
               "", Where(region="fluid"), "No change needed.", "common practice")
WAIVED = Finding("aspect-ratio", "error", "aspect ratio 1200 is above the error limit 1000",
                 1200.0, 1000.0, "", Where(), "Refine the far field.", "common practice",
                 waived=True, waiver="far-field cells; approved by R. Quill until 2031-01-01")

FULL = report_with(WARN, ERR, NOTE, WAIVED, checks=(NONORTH, GROWTH, YPLUS, INVERTED),
                   safety="life-safety", safety_note=CAUTION)


def plain(report: Report, width: int = 100) -> str:
    return render_text(report, RenderOptions(color=False, width=width))


def test_numbers_are_shown_with_six_significant_digits():
    assert format_number(None) == "-"
    assert format_number(2.0) == "2"
    assert format_number(1.30004) == "1.30004"  # not rounded onto the limit 1.3
    assert format_number(-0.0) == "0"
    assert format_number(1.2345678e-7) == "1.23457e-07"


def test_where_names_scope_count_first_ids_and_point():
    assert format_where(WARN.where) == (
        "boundary 'duct-wall'; 14 faces (ids 0, 1, 2, 3, 4, ...); near (0.1, 0.25, 0.001) m")
    assert format_where(ERR.where) == "3 cells (ids 5, 9, 12)"
    assert format_where(Where(cells=(8,), cell_count=1)) == "1 cell (id 8)"
    assert format_where(Where()) == "whole case"


def test_text_shows_measured_values_limits_units_and_hints():
    text = plain(FULL)
    rows = {line.split()[0]: line for line in text.splitlines()
            if line.split() and line.split()[0] in ("non-orthogonality", "growth-ratio",
                                                     "inverted-cells")}
    # the measured value with its unit, the limit with its direction and unit
    assert re.search(r"fail \(warning\)\s+72\.5 deg\s+<= 70 deg$", rows["non-orthogonality"])
    assert re.search(r"pass\s+1\.18\s+<= 1\.3$", rows["growth-ratio"])
    assert re.search(r"fail \(error\)\s+3 cells\s+<= 0 cells$", rows["inverted-cells"])
    for expected in (WARN.message, WARN.hint, ERR.hint, YPLUS.reason,
                     "14 faces (ids 0, 1, 2, 3, 4, ...)", "rooms/plant-room/case.yaml",
                     "plant-room.msh", "Invented plant room", WAIVED.waiver,
                     "rule sets  general, hvac-rooms"):
        assert expected in text


def test_header_carries_the_safety_class_and_caution_only_when_relevant():
    text = plain(FULL)
    assert "life-safety (safety-relevant)" in text
    assert "caution    This case concerns life safety" in text
    other = plain(report_with(WARN, checks=(NONORTH,)))
    assert "none (not marked safety-relevant)" in other
    assert "caution" not in other


def test_findings_are_grouped_errors_warnings_notes_then_waived():
    text = plain(FULL)
    heads = [line for line in text.splitlines()
             if re.fullmatch(r"(Errors|Warnings|Notes|Waived) \(\d+\)", line)]
    assert heads == ["Errors (1)", "Warnings (1)", "Notes (1)", "Waived (1)"]
    assert text.index(ERR.message) < text.index(WARN.message) < text.index(NOTE.message)
    assert text.index("Waived (1)") < text.index(WAIVED.message)


def test_plain_output_has_no_escape_codes_and_is_ascii():
    text = plain(FULL)
    assert not ANSI.search(text)
    assert text.isascii()
    assert all(line == line.rstrip() for line in text.splitlines())


def test_colour_output_uses_escape_codes():
    text = render_text(FULL, RenderOptions(color=True, width=100))
    assert ANSI.search(text)
    assert "72.5" in ANSI.sub("", text)


@pytest.mark.parametrize("width", [72, 80, 100, 120])
def test_lines_fit_the_width_except_the_one_line_summary(width):
    lines = plain(FULL, width).splitlines()
    assert all(len(line) <= width for line in lines[:-1])
    assert lines[-1].startswith("Result for 1 case:")


def test_a_narrower_terminal_gets_the_narrowest_layout():
    assert plain(FULL, 40) == plain(FULL, MIN_WIDTH)


def test_summary_counts_outcomes_and_ignores_waived_findings_for_the_worst():
    assert plain(FULL).splitlines()[-1] == (
        "Result for 1 case: 2 failed, 0 rule faults, 0 waived, 1 passed, 1 skipped; "
        "worst severity: error (fail level: error)")
    waived_only = report_with(WAIVED, NOTE, checks=(GROWTH,))
    assert summary_line(waived_only, "warning") == (
        "Result for 1 case: 0 failed, 0 rule faults, 0 waived, 1 passed, 0 skipped; "
        "worst severity: note (fail level: warning)")
    assert "worst severity: none" in summary_line(report_with(checks=(GROWTH,)))


def test_empty_case_and_empty_report_say_so():
    text = plain(report_with())
    assert "No rules were selected for this case." in text
    assert "No findings." in text
    assert "No case files were checked." in plain(Report((), "0.1.0"))


def test_registers_the_text_format():
    (reporter,) = caselint_register_reporters()
    assert reporter.name == "text"
    assert reporter.render(FULL, RenderOptions()) == plain(FULL)


def test_place_graded_checks_show_their_spread(tmp_path):
    """Issue 16: a report shows the distribution, not only the maximum; the demo's jump
    block (growth 2.5 on 4 of 20 internal faces) in text, Markdown and HTML."""
    from caselint.api import lint
    from caselint.report.base import RenderOptions
    from caselint.report.html import render_html
    from caselint.report.markdown import render_markdown
    from caselint.report.text import render_text
    from test_cli_e2e import write_block_mesh, write_case

    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.45])
    report = lint([write_case(tmp_path, mesh)])
    (growth,) = [c for c in report.cases[0].checks if c.rule == "growth-ratio"]
    assert growth.distributions and growth.distributions[0].count == 20
    options = RenderOptions(color=False, width=100)
    text = " ".join(render_text(report, options).split())
    assert "Spread over the mesh" in text and "growth-ratio over 20 faces" in text
    assert "over 20 faces" in render_markdown(report, options)
    assert "Spread over the mesh" in render_html(report, options)
