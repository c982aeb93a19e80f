"""The ``junit`` output format: JUnit XML for CI test dashboards.

The shape is pytest's ``xunit2`` layout, which common dashboards read: ``<testsuites>``
holding one ``<testsuite>`` per case (named by the case-file path) and one ``<testcase>``
per rule (``classname`` from the case path, ``name`` the rule id). A testcase fails when
the rule has an unwaived finding at or above the fail level (``--fail-on``), exactly the
findings that make caselint exit 1; it is skipped (with the reason) when the case lacked
the data the rule needs, and an error when the rule itself raised. Findings below the
fail level, waivers and baseline notes go to the testcase's ``<system-out>``. No
``file`` attribute (strict schemas reject it) and no clock or host name: the same report
gives the same bytes. Written with :mod:`xml.etree.ElementTree`.
"""

from __future__ import annotations

import posixpath
import xml.etree.ElementTree as ET
from pathlib import PurePath

from caselint.engine.hookspecs import hookimpl
from caselint.model import SEVERITY_RANK, CaseReport, Check, Finding, Report
from caselint.report.base import RenderOptions, Reporter
from caselint.report.json_report import check_sort_key, finding_sort_key
from caselint.report.presentation import format_where, measured_and_limit


def classname(case_path: str) -> str:
    """``cases/duct/case.yaml`` -> ``cases.duct.case``: dashboards group by dotted names."""
    posix = posixpath.normpath(PurePath(case_path).as_posix()).lstrip("/")
    stem = posixpath.splitext(posix)[0]
    return ".".join(part for part in stem.split("/") if part not in ("", ".", "..")) or "case"


def _finding_text(finding: Finding) -> str:
    lines = [f"{finding.severity}: {finding.message}",
             f"  where: {format_where(finding.where)}", f"  fix: {finding.hint}",
             f"  source: {finding.source}"]
    if finding.safety:
        lines.append(f"  safety: {finding.safety}")
    if finding.waived:
        lines.append(f"  waived: {finding.waiver or 'by a waiver in the case file'}")
    return "\n".join(lines)


def _testcase(parent: ET.Element, case: CaseReport, check: Check, findings: list[Finding],
              fail_on: str) -> str:
    """Add one testcase; return its state: passed, failed, skipped or error."""
    element = ET.SubElement(parent, "testcase", classname=classname(case.case), name=check.rule)
    own = [f for f in findings if f.rule == check.rule]
    threshold = SEVERITY_RANK[fail_on]
    failing = [f for f in own if not f.waived and SEVERITY_RANK[f.severity] >= threshold]
    others = [f for f in own if f not in failing]
    value, limit = measured_and_limit(check)
    measured = f"{check.title}: measured {value}, limit {limit}"
    state = "passed"
    if check.outcome == "error":
        error = ET.SubElement(element, "error", message=check.reason, type="rule-fault")
        error.text = "\n\n".join(_finding_text(f) for f in own) or check.reason
        state = "error"
    elif check.outcome == "skipped":
        ET.SubElement(element, "skipped", message=check.reason, type="not-checked").text = (
            f"{check.title}: not checked: {check.reason}")
        state = "skipped"
    elif failing:
        worst = failing[0]
        failure = ET.SubElement(element, "failure", message=worst.message, type=worst.severity)
        failure.text = measured + "\n\n" + "\n\n".join(_finding_text(f) for f in failing)
        state = "failed"
    notes = [_finding_text(f) for f in others]
    if check.reason and check.outcome not in ("skipped", "error"):
        notes.insert(0, check.reason)
    if state == "passed":
        notes.insert(0, f"{measured} ({check.outcome})")
    if notes:
        ET.SubElement(element, "system-out").text = "\n\n".join(notes)
    return state


def _suite(parent: ET.Element, case: CaseReport, fail_on: str) -> dict[str, int]:
    suite = ET.SubElement(parent, "testsuite", name=case.case)
    props = [("case_name", case.name), ("safety", case.safety), ("mesh", case.mesh),
             ("rule_sets", ",".join(case.rule_sets)), ("case_sha256", case.case_sha256),
             ("mesh_sha256", case.mesh_sha256)]
    properties = ET.SubElement(suite, "properties")
    for name, value in props:
        if value:
            ET.SubElement(properties, "property", name=name, value=value)
    findings = sorted(case.findings, key=finding_sort_key)
    counts = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for check in sorted(case.checks, key=check_sort_key):
        state = _testcase(suite, case, check, findings, fail_on)
        counts["tests"] += 1
        key = {"failed": "failures", "error": "errors", "skipped": "skipped"}.get(state)
        if key:
            counts[key] += 1
    if not len(properties):
        suite.remove(properties)
    for key in ("tests", "failures", "errors", "skipped"):
        suite.set(key, str(counts[key]))
    return counts


def render_junit(report: Report, options: RenderOptions) -> str:
    """The report as JUnit XML, failing testcases at ``options.fail_on``."""
    root = ET.Element("testsuites", name="caselint")
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for case in report.cases:
        for key, value in _suite(root, case, options.fail_on).items():
            totals[key] += value
    for key in ("tests", "failures", "errors", "skipped"):
        root.set(key, str(totals[key]))
    ET.indent(root)
    return '<?xml version="1.0" encoding="utf-8"?>\n' + ET.tostring(root, encoding="unicode") \
        + "\n"


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``junit`` output format."""
    return [
        Reporter(
            name="junit",
            description="JUnit XML (pytest xunit2 shape) for CI test dashboards",
            render=render_junit,
            suffix=".xml",
        )
    ]
