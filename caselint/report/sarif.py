"""The ``sarif`` output format: SARIF 2.1.0 for code-scanning dashboards.

One run per invocation. ``tool.driver.rules`` describes every rule the cases ran (title,
rationale, fix hint, source, default level) from :attr:`Report.rules`, or, for a report
built without them, from its checks and findings. Each finding is a result located in
the case file at the line of the key it concerns; a finding about mesh entities only
(cells or faces, no case-file key) points at the mesh file; anything else at line 1 of
the case file. Regions are 1-based and always given (code-scanning tools need a line).
A waived finding carries an ``inSource`` suppression (the waiver is in the case file).
``partialFingerprints`` come from :func:`caselint.baseline.finding_fingerprint`: rule,
case path, scope and key, never the message, so a finding keeps its identity when its
numbers change. Rules that could not run are tool notifications of the invocation.
"""

from __future__ import annotations

import json
import posixpath
from pathlib import PurePath, PurePosixPath
from typing import Any
from urllib.parse import quote

from caselint.baseline import fingerprinted
from caselint.engine.hookspecs import hookimpl
from caselint.model import CaseReport, Finding, Report, RuleInfo
from caselint.report.base import RenderOptions, Reporter
from caselint.report.json_report import check_sort_key

#: The schema the document declares (the OASIS 2.1.0 schema with errata 01).
SARIF_SCHEMA_URI = (
    "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
)
#: Name of caselint's fingerprint in ``partialFingerprints`` (versioned: never reuse).
FINGERPRINT_NAME = "caselintFinding/v1"


def artifact_uri(path: str) -> str:
    """A file path as a SARIF URI: relative stays relative (``/`` separators), absolute
    becomes ``file:///...``; special characters are percent-encoded."""
    pure = PurePath(path)
    if pure.is_absolute():
        return pure.as_uri()
    return quote(posixpath.normpath(pure.as_posix()), safe="/")


def mesh_path(case: CaseReport) -> str:
    """The mesh path as seen from where caselint ran (``CaseReport.mesh`` is relative to
    the case file's folder)."""
    folder = PurePath(case.case).parent
    return str(PurePosixPath(posixpath.normpath((folder / case.mesh).as_posix())))


def is_mesh_finding(finding: Finding) -> bool:
    """True when a finding concerns mesh entities only: cells or faces and no case-file key."""
    where = finding.where
    return where.key is None and bool(
        where.cells or where.faces or where.cell_count or where.face_count)


def _default_level(rule: RuleInfo) -> str:
    """The most severe grade a rule gives with its default limits."""
    if rule.limits.error is not None:
        return "error"
    return "warning" if rule.limits.warn is not None else "note"


def _rule_descriptors(report: Report) -> list[dict[str, Any]]:
    """``reportingDescriptor``s for every rule in the report, sorted by id."""
    known = {rule.id: rule for rule in report.rules}
    fallback: dict[str, dict[str, str]] = {}
    for case in report.cases:
        for check in case.checks:
            fallback.setdefault(check.rule, {"title": check.title})
        for finding in case.findings:
            entry = fallback.setdefault(finding.rule, {"title": finding.rule})
            entry.setdefault("hint", finding.hint)
            entry.setdefault("source", finding.source)
            entry.setdefault("level", finding.severity)
    out = []
    for rule_id in sorted(set(known) | set(fallback)):
        rule = known.get(rule_id)
        if rule is not None:
            title, full, hint, source = rule.title, rule.rationale, rule.hint, rule.source
            level = _default_level(rule)
            props: dict[str, Any] = {"unit": rule.unit, "worse": rule.worse,
                                     "source": source,
                                     "defaultLimits": {"warning": rule.limits.warn,
                                                       "error": rule.limits.error}}
        else:
            entry = fallback[rule_id]
            title, hint = entry["title"], entry.get("hint", "")
            full, source = title, entry.get("source", "")
            level = entry.get("level", "warning")
            props = {"source": source} if source else {}
        help_text = hint + (f" Source: {source}." if source else "")
        out.append({
            "id": rule_id,
            "name": rule_id,
            "shortDescription": {"text": title},
            "fullDescription": {"text": full},
            "help": {"text": help_text or title},
            "defaultConfiguration": {"level": level},
            "properties": props,
        })
    return out


def _location(case: CaseReport, finding: Finding) -> dict[str, Any]:
    where = finding.where
    if is_mesh_finding(finding) and case.mesh:
        uri, line = artifact_uri(mesh_path(case)), 1
    else:
        uri = artifact_uri(case.case)
        line = where.line if where.key is not None and where.line else 1
    location: dict[str, Any] = {"physicalLocation": {
        "artifactLocation": {"uri": uri},
        "region": {"startLine": int(line)},
    }}
    logical = [{"name": name, "kind": kind} for name, kind in
               ((where.boundary, "boundary"), (where.region, "region"), (where.key, "caseKey"))
               if name]
    if logical:
        location["logicalLocations"] = logical
    return location


def _result(case: CaseReport, finding: Finding, fingerprint: str,
            index: dict[str, int]) -> dict[str, Any]:
    result: dict[str, Any] = {
        "ruleId": finding.rule,
        "ruleIndex": index[finding.rule],
        "level": finding.severity,
        "message": {"text": finding.message},
        "locations": [_location(case, finding)],
        "partialFingerprints": {FINGERPRINT_NAME: fingerprint},
        "properties": {
            "case": case.case, "measured": finding.measured, "limit": finding.limit,
            "unit": finding.unit, "hint": finding.hint, "source": finding.source,
            "where": finding.where.to_dict(),
            **({"safety": finding.safety} if finding.safety else {}),
        },
    }
    if finding.waived:
        result["suppressions"] = [{"kind": "inSource", "status": "accepted",
                                   "justification": finding.waiver or "waived in the case file"}]
    return result


def _notifications(report: Report, index: dict[str, int]) -> list[dict[str, Any]]:
    """A notification for every rule that was skipped or raised, per case."""
    out = []
    for case in report.cases:
        for check in sorted(case.checks, key=check_sort_key):
            if check.outcome not in ("skipped", "error"):
                continue
            what = "not checked" if check.outcome == "skipped" else "could not run"
            out.append({
                "level": "note" if check.outcome == "skipped" else "error",
                "message": {"text": f"{case.case}: {check.rule} {what}: {check.reason}"},
                "associatedRule": {"id": check.rule, "index": index[check.rule]},
                "locations": [{"physicalLocation": {
                    "artifactLocation": {"uri": artifact_uri(case.case)},
                    "region": {"startLine": 1}}}],
            })
    return out


def _artifacts(report: Report) -> list[dict[str, Any]]:
    """The case files and meshes with their SHA-256, in first-seen order."""
    seen: dict[str, dict[str, Any]] = {}
    for case in report.cases:
        for path, digest, role in ((case.case, case.case_sha256, "case file"),
                                   (mesh_path(case) if case.mesh else "", case.mesh_sha256,
                                    "mesh")):
            if not path:
                continue
            uri = artifact_uri(path)
            artifact: dict[str, Any] = {"location": {"uri": uri}, "description": {"text": role}}
            if digest:
                artifact["hashes"] = {"sha-256": digest}
            seen.setdefault(uri, artifact)
    return list(seen.values())


def report_to_sarif(report: Report) -> dict[str, Any]:
    """The report as a SARIF 2.1.0 log (a plain dict)."""
    rules = _rule_descriptors(report)
    index = {rule["id"]: i for i, rule in enumerate(rules)}
    results = [_result(case, finding, fingerprint, index)
               for case in report.cases for finding, fingerprint in fingerprinted(case)]
    notifications = _notifications(report, index)
    invocation: dict[str, Any] = {
        "executionSuccessful": not any(c.outcome == "error" for case in report.cases
                                       for c in case.checks),
    }
    if notifications:
        invocation["toolExecutionNotifications"] = notifications
    run: dict[str, Any] = {
        "tool": {"driver": {
            "name": "caselint",
            "version": report.caselint_version,
            "semanticVersion": report.caselint_version,
            "rules": rules,
        }},
        "invocations": [invocation],
        "artifacts": _artifacts(report),
        "results": results,
        "properties": {"ruleSets": [
            {"name": i.name, "provider": i.provider, "version": i.version, "sha256": i.sha256}
            for i in sorted(report.rule_set_info, key=lambda i: i.name)]},
    }
    if report.baseline:
        run["properties"]["baseline"] = report.baseline
    return {"$schema": SARIF_SCHEMA_URI, "version": "2.1.0", "runs": [run]}


def render_sarif(report: Report, options: RenderOptions | None = None) -> str:
    """The report as SARIF 2.1.0 JSON text (stable: sorted rules, no clock, no machine)."""
    return json.dumps(report_to_sarif(report), indent=2, ensure_ascii=False,
                      allow_nan=False) + "\n"


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``sarif`` output format."""
    return [
        Reporter(
            name="sarif",
            description="SARIF 2.1.0 for code-scanning dashboards (case-file lines, fingerprints)",
            render=render_sarif,
            suffix=".sarif",
        )
    ]
