"""The junit output format: pytest's xunit2 shape, one suite per case, one testcase per rule."""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

from review_samples import TEST_SET, review_formats, sample_report  # noqa: F401
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.report.base import RenderOptions
from caselint.report.junit import caselint_register_reporters, classname, render_junit

#: Attributes pytest's xunit2 output allows on each element (junit-10.xsd).
ALLOWED = {
    "testsuites": {"name", "tests", "failures", "errors", "skipped", "time"},
    "testsuite": {"name", "tests", "failures", "errors", "skipped", "time", "timestamp",
                  "hostname"},
    "testcase": {"classname", "name", "time"},
    "failure": {"message", "type"}, "error": {"message", "type"},
    "skipped": {"message", "type"}, "property": {"name", "value"},
    "properties": set(), "system-out": set(), "system-err": set(),
}


def _parse(text: str) -> ET.Element:
    assert text.startswith('<?xml version="1.0" encoding="utf-8"?>\n')
    return ET.fromstring(text.encode("utf-8"))


def _cases(suite: ET.Element) -> dict[str, ET.Element]:
    return {tc.get("name"): tc for tc in suite.iter("testcase")}


def test_shape_and_counts():
    root = _parse(render_junit(sample_report(), RenderOptions()))
    assert root.tag == "testsuites"
    suites = root.findall("testsuite")
    assert [s.get("name") for s in suites] == ["cases/kiln-hood/case.yaml", "cases/duct/case.yaml"]
    hood, duct = suites
    assert {k: hood.get(k) for k in ("tests", "failures", "errors", "skipped")} == \
        {"tests": "7", "failures": "2", "errors": "1", "skipped": "1"}
    assert {k: duct.get(k) for k in ("tests", "failures", "errors", "skipped")} == \
        {"tests": "1", "failures": "0", "errors": "0", "skipped": "0"}
    assert {k: root.get(k) for k in ("tests", "failures", "errors", "skipped")} == \
        {"tests": "8", "failures": "2", "errors": "1", "skipped": "1"}
    for element in root.iter():
        assert set(element.attrib) <= ALLOWED[element.tag], element.tag   # no testcase@file
    assert all(tc.get("classname") == "cases.kiln-hood.case" for tc in hood.iter("testcase"))


def test_failures_skips_and_errors_carry_their_reasons():
    hood = _parse(render_junit(sample_report(), RenderOptions())).find("testsuite")
    cases = _cases(hood)
    failure = cases["inverted-cells"].find("failure")
    assert failure.get("message") == "3 cells are inverted (limit 0)"
    assert failure.get("type") == "error"
    assert "measured 3 cells, limit <= 0 cells" in failure.text
    assert "fix: Re-export the mesh with consistent cell ordering." in failure.text
    assert cases["time-step"].find("failure") is not None
    skipped = cases["wall-yplus"].find("skipped")
    assert skipped.get("message") == "the case gives no reference speed (physics.flow.velocity)"
    error = cases["gap-cells"].find("error")
    assert error.get("message").startswith("internal error in rule: ValueError: bad gap")
    # a warning below the fail level passes; it is reported in system-out
    non_orth = cases["non-orthogonality"]
    assert non_orth.find("failure") is None
    assert "72.5 deg" in non_orth.find("system-out").text
    # waived: passes, with the waiver stated
    assert cases["aspect-ratio"].find("failure") is None
    assert "R. Quill" in cases["aspect-ratio"].find("system-out").text
    passed = cases["growth-ratio"]
    assert list(passed) == [passed.find("system-out")]
    assert passed.find("system-out").text.startswith(
        "Volume growth between neighbouring cells: measured 1.18, limit <= 1.3 (pass)")


def test_fail_level_warning_fails_warnings_too():
    hood = _parse(render_junit(sample_report(), RenderOptions(fail_on="warning"))).find(
        "testsuite")
    assert hood.get("failures") == "3"
    assert _cases(hood)["non-orthogonality"].find("failure").get("type") == "warning"
    assert _cases(hood)["aspect-ratio"].find("failure") is None      # still waived


def test_properties_fingerprint_the_inputs():
    hood = _parse(render_junit(sample_report(), RenderOptions())).find("testsuite")
    props = {p.get("name"): p.get("value") for p in hood.iter("property")}
    assert props["case_sha256"] == "a" * 64 and props["mesh_sha256"] == "b" * 64
    assert props["safety"] == "fire-smoke"


def test_classname_and_stability():
    assert classname("cases/duct/case.yaml") == "cases.duct.case"
    assert classname("./a/../b/room.caselint.yaml") == "b.room.caselint"
    assert classname("/srv/x/case.yml") == "srv.x.case"
    assert render_junit(sample_report(), RenderOptions()) == \
        render_junit(sample_report(), RenderOptions())
    (reporter,) = caselint_register_reporters()
    assert (reporter.name, reporter.suffix) == ("junit", ".xml")


def test_end_to_end_one_testcase_per_rule(tmp_path, review_formats):  # noqa: F811
    uniform = write_case(tmp_path, write_block_mesh(tmp_path / "uniform.msh",
                                                    xs=[0.0, 0.1, 0.2, 0.3]))
    jump = write_case(tmp_path, write_block_mesh(tmp_path / "jump.msh",
                                                 xs=[0.0, 0.1, 0.2, 0.6]))
    out = tmp_path / "report.xml"
    code, _, err = run_cli("check", *TEST_SET, str(uniform), str(jump), "--format", "junit",
                           "--output", str(out))
    assert code == 1, err
    root = ET.parse(out).getroot()
    first, second = root.findall("testsuite")
    _, json_out, _ = run_cli("check", *TEST_SET, str(uniform), "--format", "json")
    rules = [c["rule"] for c in json.loads(json_out)["cases"][0]["checks"]]
    assert sorted(_cases(first)) == sorted(rules)
    assert first.get("failures") == "0"
    growth = _cases(second)["growth-ratio"].find("failure")
    assert growth is not None and " 4," in growth.get("message")
    assert second.get("failures") == "1"     # only growth-ratio crosses an error limit
