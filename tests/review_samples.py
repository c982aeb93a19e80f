"""Shared material for the tests of the review and CI outputs (markdown, html, sarif, junit).

``sample_report()`` is an invented two-case report built by hand that touches every
outcome, a safety-relevant case, a valid and an expired waiver, a manual checklist,
review names and plot data. ``review_formats`` registers the new output formats on the
built-in plugin list for tests that go through the command line, whether or not the
engine already lists them, together with this module as a plugin providing the rule set
``review-test`` (tests/data/rule_sets/review-test.yaml): the mesh-quality rules only, so
the expected outcomes of the test meshes stay put when other rules join ``general``.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from caselint import hookimpl
from caselint.model import (
    CaseReport,
    Check,
    ChecklistItem,
    Finding,
    Limits,
    PlotData,
    PlotSeries,
    Report,
    ReviewInfo,
    RuleInfo,
    RuleSetInfo,
    WaiverStatus,
    Where,
)

#: The output-format modules of the review and CI outputs.
REVIEW_MODULES = ("caselint.report.markdown", "caselint.report.html", "caselint.report.sarif",
                  "caselint.report.junit")
CAUTION = ("This case concerns fire and smoke spread. caselint checks the set-up against "
           "published guidance and common practice; it does not validate results. Local codes "
           "and standards, and review by a licensed professional engineer, govern any use of "
           "these results.")
RULE_SET = Path(__file__).parent / "data" / "rule_sets" / "review-test.yaml"
#: Command-line arguments choosing that rule set.
TEST_SET = ("--rule-set", "review-test")
HOOD_SHA = "a" * 64
MESH_SHA = "b" * 64


@pytest.fixture
def review_formats(monkeypatch):
    """The built-in plugins plus the review formats (added only where not yet listed)."""
    import caselint.engine.plugins as plugins

    extra = tuple(m for m in REVIEW_MODULES if m not in plugins.BUILTIN_PLUGINS)
    monkeypatch.setattr(plugins, "BUILTIN_PLUGINS",
                        tuple(plugins.BUILTIN_PLUGINS) + extra + ("review_samples",))


@hookimpl
def caselint_register_rule_sets() -> list[Path]:
    """The rule set ``review-test`` (registered only through ``review_formats``)."""
    return [RULE_SET]


def hood_case() -> CaseReport:
    """An invented safety-relevant kiln exhaust hood with one check of every outcome."""
    checks = (
        Check("non-orthogonality", "Face non-orthogonality", "fail", "warning", 72.5, 70.0,
              "deg", limits=Limits(70.0, 85.0)),
        Check("growth-ratio", "Volume growth between neighbouring cells", "pass", None, 1.18,
              1.3, "", limits=Limits(1.3, 2.0)),
        Check("wall-yplus", "First-cell y+", "skipped", None, None, None, "",
              reason="the case gives no reference speed (physics.flow.velocity)",
              limits=Limits(5.0, None)),
        Check("inverted-cells", "Inverted or folded cells", "fail", "error", 3.0, 0.0, "cells",
              limits=Limits(None, 0.0)),
        Check("aspect-ratio", "Cell aspect ratio", "waived", "warning", 1200.0, 1000.0, "",
              limits=Limits(1000.0, 10000.0)),
        Check("time-step", "Time step against the output interval", "fail", "error", 0.5, 0.1,
              "s", limits=Limits(0.05, 0.1)),
        Check("gap-cells", "Cells across gaps", "error", "error", None, None, "cells",
              reason="internal error in rule: ValueError: bad gap at gaps.py:40"),
    )
    findings = (
        Finding("non-orthogonality", "warning",
                "largest face non-orthogonality is 72.5 deg, above the warning limit 70 deg",
                72.5, 70.0, "deg",
                Where(boundary="hood-wall", faces=tuple(range(10)), face_count=14,
                      cells=(3, 4), cell_count=2, point=(0.1, 0.25, 1e-3)),
                "Reduce the skew of the cells at the hood lip.", "common practice",
                safety="Safety-relevant case (fire-smoke): resolve before use."),
        Finding("inverted-cells", "error", "3 cells are inverted (limit 0)", 3.0, 0.0, "cells",
                Where(cells=(5, 9, 12), cell_count=3),
                "Re-export the mesh with consistent cell ordering.", "Verdict (2007)"),
        Finding("time-step", "error", "time step 0.5 s is above the error limit 0.1 s", 0.5,
                0.1, "s", Where(key="time.step", line=17), "Shorten time.step.",
                "common practice"),
        Finding("growth-ratio", "note", "largest growth ratio is at the inlet", None, None, "",
                Where(region="fluid"), "No change needed.", "common practice"),
        Finding("aspect-ratio", "warning", "aspect ratio 1200 is above the warning limit 1000",
                1200.0, 1000.0, "", Where(region="far-field", cells=(40,), cell_count=1),
                "Refine the far field.", "common practice", waived=True,
                waiver="waived by R. Quill until 2031-01-01: far-field cells, no effect on the "
                       "hood"),
        Finding("gap-cells", "error", "the rule could not run: bad gap", None, None, "cells",
                Where(), "Report this rule's failure.", "common practice"),
    )
    waivers = (
        WaiverStatus("aspect-ratio", "far-field cells, no effect on the hood", "R. Quill",
                     "2031-01-01", expired=False, used=True, region="far-field", line=40),
        WaiverStatus("skewness", "legacy block at the duct bend", "P. Anand", "2020-06-30",
                     expired=True, used=False, boundary="duct-bend", line=45),
    )
    plots = (
        PlotData("Face non-orthogonality", "non-orthogonality (deg)", "faces",
                 (PlotSeries(x=(0.0, 30.0, 60.0, 90.0), y=(900.0, 80.0, 14.0), above=2),),
                 limits=Limits(70.0, 85.0), rule="non-orthogonality"),
        PlotData("First-layer height along the stack", "layer", "height (m)",
                 (PlotSeries(x=(1.0, 2.0, 3.0), y=(1e-4, 1.2e-4, 1.44e-4), label="hood-wall"),),
                 kind="line", rule="layer-profile"),
    )
    return CaseReport(
        "cases/kiln-hood/case.yaml", "Invented kiln exhaust hood", "fire-smoke", checks,
        findings, safety_note=CAUTION, mesh="hood.vtu", rule_sets=("general",),
        description="Smoke capture of the kiln hood at full draught",
        case_sha256=HOOD_SHA, mesh_sha256=MESH_SHA,
        checklist=(ChecklistItem("fluid-data", "Fluid properties checked against the project's "
                                 "data source", "general"),
                   ChecklistItem("boundary-values", "Boundary-condition values reviewed",
                                 "general")),
        waivers=waivers,
        review=ReviewInfo("I. Marchetti", ("T. Oyelaran", "K. Brandvold"), "S. Okafor"),
        plots=plots,
    )


def duct_case() -> CaseReport:
    """An invented clean duct: one passing check, no findings."""
    return CaseReport(
        "cases/duct/case.yaml", "Invented test duct", "none",
        (Check("growth-ratio", "Volume growth between neighbouring cells", "pass", None, 1.05,
               1.3, "", limits=Limits(1.3, 2.0)),), (), mesh="duct.msh", rule_sets=("general",))


def sample_report() -> Report:
    """Both invented cases, with rule descriptions and the rule-set file they used."""
    rules = (
        RuleInfo("growth-ratio", "Volume growth between neighbouring cells",
                 "Sudden jumps in cell size add truncation error.", "common practice",
                 "Grade the spacing more gently.", "", Limits(1.3, 2.0)),
        RuleInfo("inverted-cells", "Inverted or folded cells", "A folded cell has no volume.",
                 "Verdict (2007)", "Re-mesh the listed cells.", "cells", Limits(None, 0.0)),
        RuleInfo("non-orthogonality", "Face non-orthogonality",
                 "Non-orthogonal faces need correction.", "common practice",
                 "Straighten the cells.", "deg", Limits(70.0, 85.0)),
    )
    return Report((hood_case(), duct_case()), "0.1.0", (), rules=rules,
                  rule_set_info=(RuleSetInfo("general", "caselint", "0.1.0", "c" * 64),))


def write_review_case(folder, mesh, name: str = "Invented smoke duct with a jump") -> "Path":
    """A safety-relevant case file with an expired and a valid waiver and review names."""
    case = folder / "case.yaml"
    case.write_text(
        "caselint: 1\n"
        f"case: {{name: {name}, safety: fire-smoke,\n"
        "       description: Smoke extract duct of an invented kiln hall}\n"
        f"mesh:\n  file: {mesh.name}\n  units: m\n"
        "  boundaries: {inlet: inlet, outlet: outlet, walls: wall}\n"
        "checks:\n"
        "  rule_sets: [review-test]\n"
        "  waivers:\n"
        "    - {rule: growth-ratio, reason: jump kept from the legacy model,\n"
        "       approved_by: R. Quill, expires: 2020-01-31}\n"
        "    - {rule: skewness, reason: bend cells reviewed by hand,\n"
        "       approved_by: P. Anand, expires: 2099-12-31}\n"
        "review: {prepared_by: I. Marchetti, reviewers: [T. Oyelaran], approved_by: S. Okafor}\n",
        encoding="utf-8",
    )
    return case
