"""The json output format: schema validity, byte-stable output, full round trip."""

from __future__ import annotations

import json
import random

import numpy as np
import pytest
from jsonschema import Draft202012Validator

from caselint.model import CaseReport, Check, Finding, Limits, Report, Where
from caselint.report.base import RenderOptions
from caselint.report.json_report import (
    caselint_register_reporters,
    render_json,
    report_schema,
    report_to_dict,
)

SAFETY_NOTE = "This case concerns fire and smoke spread; local codes govern."


def sample_report() -> Report:
    """Two invented cases touching every outcome, severity and kind of location."""
    checks = (
        Check("non-orthogonality", "Face non-orthogonality", "fail", "warning", 72.5, 70.0, "deg",
              limits=Limits(70.0, 85.0)),
        Check("growth-ratio", "Cell growth ratio", "pass", None, 1.18, 1.3, "",
              limits=Limits(1.3, 2.0)),
        Check("wall-yplus", "First-cell y+", "skipped", None, None, None, "",
              reason="the case gives no free-stream speed (physics.flow.speed)",
              limits=Limits(5.0, None)),
        Check("inverted-cells", "Inverted cells", "fail", "error", 3.0, 0.0, "cells",
              limits=Limits(None, 0.0)),
        Check("aspect-ratio", "Cell aspect ratio", "waived", "warning", 120.0, 100.0, "",
              reason="waived: far-field cells", limits=Limits(100.0, 1000.0)),
        Check("gap-cells", "Cells across gaps", "error", "error", None, None, "cells",
              reason="the rule raised ValueError: bad gap"),
    )
    findings = (
        Finding("non-orthogonality", "warning",
                "non-orthogonality 72.5 deg is above the warning limit 70 deg on 14 faces",
                72.5, 70.0, "deg",
                Where(boundary="hood-wall", faces=tuple(range(10)), face_count=14,
                      point=(0.1, 0.25, 1e-3)),
                "Reduce the skew of the cells at the hood lip.", "common practice",
                safety="Safety-relevant case (fire-smoke): resolve before use."),
        Finding("inverted-cells", "error", "3 cells have a negative volume (limit 0)",
                3.0, 0.0, "cells", Where(cells=(5, 9, 12), cell_count=3),
                "Re-export the mesh with consistent cell ordering.", "common practice"),
        Finding("growth-ratio", "note", "largest growth ratio is at the inlet", None, None, "",
                Where(region="fluid"), "No change needed.", "common practice"),
        Finding("aspect-ratio", "warning", "aspect ratio 120 is above the warning limit 100",
                120.0, 100.0, "", Where(), "Refine the far field.", "common practice",
                waived=True, waiver="far-field cells; approved by R. Quill until 2031-01-01"),
        Finding("gap-cells", "error", "the rule could not run: bad gap", None, None, "cells",
                Where(), "Report this rule's failure.", "common practice"),
    )
    hood = CaseReport("cases/kiln-hood/case.yaml", "Invented kiln exhaust hood", "fire-smoke",
                      checks, findings, safety_note=SAFETY_NOTE, mesh="hood.vtu",
                      rule_sets=("general", "kiln-extras"))
    duct = CaseReport("cases/duct/case.yaml", "Invented test duct", "none",
                      (Check("growth-ratio", "Cell growth ratio", "pass", None, 1.05, 1.3, "",
                             limits=Limits(1.3, 2.0)),), (), mesh="duct.msh",
                      rule_sets=("general",))
    return Report((hood, duct), "0.1.0", ("general",))


def shuffled(report: Report, seed: int) -> Report:
    """The same report with every case's checks and findings in another order."""
    rng = random.Random(seed)
    cases = []
    for case in report.cases:
        checks, findings = list(case.checks), list(case.findings)
        rng.shuffle(checks)
        rng.shuffle(findings)
        cases.append(CaseReport(case.case, case.name, case.safety, tuple(checks),
                                tuple(findings), case.safety_note, case.mesh, case.rule_sets))
    return Report(tuple(cases), report.caselint_version, report.rule_sets)


def _properties(node, path="$"):
    """Every (path, schema) that is the value of a ``properties`` entry in the schema."""
    if isinstance(node, dict):
        for name, sub in node.get("properties", {}).items():
            yield f"{path}.{name}", sub
        for key, sub in node.items():
            yield from _properties(sub, f"{path}/{key}")
    elif isinstance(node, list):
        for i, sub in enumerate(node):
            yield from _properties(sub, f"{path}[{i}]")


def test_schema_is_draft_2020_12_and_documents_every_property():
    schema = report_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)
    props = list(_properties(schema))
    assert len(props) >= 40  # top level, case, check, limits, finding, where
    undocumented = [path for path, sub in props if not sub.get("description", "").strip()]
    assert undocumented == []


def test_render_validates_against_the_shipped_schema():
    document = json.loads(render_json(sample_report()))
    errors = list(Draft202012Validator(report_schema()).iter_errors(document))
    assert errors == []


def test_schema_rejects_what_the_contract_forbids():
    validator = Draft202012Validator(report_schema())
    good = report_to_dict(sample_report())
    bad_outcome = json.loads(json.dumps(good))
    bad_outcome["cases"][0]["checks"][0]["outcome"] = "passed"
    bad_where = json.loads(json.dumps(good))
    bad_where["cases"][0]["findings"][0]["where"]["cells"] = list(range(11))
    missing = json.loads(json.dumps(good))
    del missing["cases"][0]["findings"][0]["hint"]
    for document in (bad_outcome, bad_where, missing):
        assert not validator.is_valid(document)


def test_output_is_byte_identical_and_independent_of_input_order():
    report = sample_report()
    first = render_json(report)
    assert render_json(report) == first
    assert render_json(report, RenderOptions(color=True, width=40)) == first
    for seed in range(5):
        assert render_json(shuffled(report, seed)) == first
    assert first.endswith("}\n")


def test_top_level_fields_and_stable_order():
    data = report_to_dict(sample_report())
    assert data["format"] == "caselint-report"
    assert data["version"] == 1
    assert data["caselint_version"] == "0.1.0"
    assert data["rule_sets"] == ["general"]
    hood = data["cases"][0]
    assert [c["case"] for c in data["cases"]] == ["cases/kiln-hood/case.yaml",
                                                  "cases/duct/case.yaml"]
    assert [c["rule"] for c in hood["checks"]] == [
        "aspect-ratio", "gap-cells", "growth-ratio", "inverted-cells", "non-orthogonality",
        "wall-yplus"]
    # severity rank descending, then rule id, then message
    assert [(f["severity"], f["rule"]) for f in hood["findings"]] == [
        ("error", "gap-cells"), ("error", "inverted-cells"), ("warning", "aspect-ratio"),
        ("warning", "non-orthogonality"), ("note", "growth-ratio")]


def _where_from(data: dict) -> Where:
    return Where(
        boundary=data.get("boundary"), region=data.get("region"),
        cells=tuple(data.get("cells", ())), cell_count=data.get("cell_count"),
        faces=tuple(data.get("faces", ())), face_count=data.get("face_count"),
        point=tuple(data["point"]) if "point" in data else None,
    )


def test_round_trip_restores_every_field():
    report = sample_report()
    data = json.loads(render_json(report))
    assert len(data["cases"]) == len(report.cases)
    for case, out in zip(report.cases, data["cases"]):
        checks = {
            Check(c["rule"], c["title"], c["outcome"], c["severity"], c["measured"], c["limit"],
                  c["unit"], c["reason"], Limits(c["limits"]["warning"], c["limits"]["error"]))
            for c in out["checks"]
        }
        findings = {
            Finding(f["rule"], f["severity"], f["message"], f["measured"], f["limit"], f["unit"],
                    _where_from(f["where"]), f["hint"], f["source"], f["waived"], f["waiver"],
                    f["safety"])
            for f in out["findings"]
        }
        rebuilt = CaseReport(out["case"], out["name"], out["safety"], (), (),
                             out["safety_note"], out["mesh"], tuple(out["rule_sets"]))
        assert rebuilt == CaseReport(case.case, case.name, case.safety, (), (),
                                     case.safety_note, case.mesh, case.rule_sets)
        assert checks == set(case.checks)
        assert findings == set(case.findings)
    hood = data["cases"][0]
    assert hood["safety_note"] == SAFETY_NOTE
    skewed = hood["findings"][3]
    assert skewed["rule"] == "non-orthogonality"
    assert skewed["where"] == {"boundary": "hood-wall", "faces": list(range(10)),
                              "face_count": 14, "point": [0.1, 0.25, 0.001]}


def test_listed_ids_without_a_count_are_counted():
    case = CaseReport("c.yaml", "c", "none", (), (
        Finding("inverted-cells", "error", "m", 2.0, 0.0, "cells", Where(cells=(4, 7)), "h", "s"),))
    where = report_to_dict(Report((case,), "0.1.0"))["cases"][0]["findings"][0]["where"]
    assert where == {"cells": [4, 7], "cell_count": 2}


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), -float("inf")])
def test_non_finite_numbers_are_refused_by_name(bad):
    # The model refuses them when the record is made, so none can reach a reporter.
    with pytest.raises(ValueError, match="Check.measured must be finite"):
        Check("growth-ratio", "Cell growth ratio", "pass", None, bad, 1.3, "")
    with pytest.raises(ValueError, match="Limits.warn must be finite"):
        Limits(warn=bad)


def test_numpy_numbers_become_plain_json_numbers():
    check = Check("growth-ratio", "Cell growth ratio", "pass", None, np.float32(1.25),
                  np.float64(1.3), "", limits=Limits(np.float64(1.3), None))
    data = json.loads(render_json(Report((CaseReport("c.yaml", "c", "none", (check,), ()),),
                                         "0.1.0")))
    out = data["cases"][0]["checks"][0]
    assert out["measured"] == 1.25 and out["limit"] == 1.3
    assert out["limits"] == {"warning": 1.3, "error": None}


def test_registers_the_json_format():
    (reporter,) = caselint_register_reporters()
    assert reporter.name == "json" and reporter.suffix == ".json"
    assert reporter.render(sample_report(), RenderOptions()) == render_json(sample_report())
