"""Waivers that cover nothing: a boundary the mesh does not have is itself a finding."""

from __future__ import annotations

import json

from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

WAIVERS = (
    "  waivers:\n"
    "    - {rule: growth-ratio, boundary: wals, reason: legacy jump, approved_by: R. Quill,\n"
    "       expires: 2099-12-31}\n"
    "    - {rule: growth-ratio, boundary: outlet, reason: outlet block, approved_by: P. Anand,\n"
    "       expires: 2099-12-31}\n"
    "    - {rule: skewness, boundary: vent, reason: no such group, approved_by: P. Anand,\n"
    "       expires: 2099-12-31}\n"
)


def _check(tmp_path, waivers: str) -> tuple[dict, str]:
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_case(tmp_path, mesh, name="Invented duct with a jump")
    text = case.read_text(encoding="utf-8").replace("checks: {rule_sets: [general]}\n",
                                                   "checks:\n  rule_sets: [general]\n" + waivers)
    case.write_text(text, encoding="utf-8")
    code, out, err = run_cli("check", str(case), "--format", "json")
    assert code == 1, err
    return json.loads(out)["cases"][0], text


def test_a_waiver_naming_a_boundary_the_mesh_lacks_is_a_finding_at_its_line(tmp_path):
    case, text = _check(tmp_path, WAIVERS)
    (check,) = [c for c in case["checks"] if c["rule"] == "waiver-scope"]
    assert (check["outcome"], check["severity"], check["measured"]) == ("fail", "warning", 2)
    found = [f for f in case["findings"] if f["rule"] == "waiver-scope"]
    lines = text.splitlines()
    assert [(f["where"]["key"], f["where"]["line"]) for f in found] == [
        ("checks.waivers[0].boundary",
         next(i for i, l in enumerate(lines, 1) if "boundary: wals" in l)),
        ("checks.waivers[2].boundary",
         next(i for i, l in enumerate(lines, 1) if "boundary: vent" in l)),
    ]
    assert ("the waiver of 'growth-ratio' approved by R. Quill names boundary 'wals', which "
            "the mesh does not have (did you mean 'walls'?); it waives nothing") \
        in found[0]["message"]
    assert "'vent', which the mesh does not have; the mesh has: inlet, outlet, walls" \
        in found[1]["message"]
    # the waiver whose boundary exists (checks.waivers[1]) is not reported


def test_the_text_report_names_the_waiver_and_its_line(tmp_path):
    _, text = _check(tmp_path, WAIVERS)
    case = tmp_path / "jump.yaml"
    code, out, _ = run_cli("check", str(case))
    assert code == 1
    flat = " ".join(out.split())
    line = next(i for i, l in enumerate(text.splitlines(), 1) if "boundary: wals" in l)
    assert f"case file checks.waivers[0].boundary (line {line})" in flat
    assert "waiver-scope fail (warning) 2 waivers <= 0 waivers" in flat


def test_waivers_of_existing_boundaries_pass_and_unscoped_ones_are_not_judged(tmp_path):
    case, _ = _check(tmp_path, "  waivers:\n    - {rule: growth-ratio, boundary: outlet, "
                               "reason: r, approved_by: A, expires: 2099-12-31}\n")
    (check,) = [c for c in case["checks"] if c["rule"] == "waiver-scope"]
    assert (check["outcome"], check["measured"]) == ("pass", 0)
    case, _ = _check(tmp_path, "  waivers:\n    - {rule: growth-ratio, reason: r, "
                               "approved_by: A, expires: 2099-12-31}\n")
    (check,) = [c for c in case["checks"] if c["rule"] == "waiver-scope"]
    assert check["outcome"] == "skipped"
    assert check["reason"] == "no waiver of the case file is limited to a boundary"
