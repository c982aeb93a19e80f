"""The ``json`` output format: a versioned, documented document for CI and other tools.

The layout is fixed by ``caselint/report/schema/report-v1.schema.json`` (JSON Schema
draft 2020-12), shipped with the package. The same report always gives the same bytes:
keys are sorted, checks are ordered by rule id, findings by severity (most severe first),
rule id and message, and nothing depends on the clock or the machine. Besides checks and
findings, each case carries what a sign-off record needs (purpose, SHA-256 of the case
file and mesh, manual checklist, waivers, review names) and the plot data its rules
attached; the report describes the rules and rule-set files used and any baseline.
"""

from __future__ import annotations

import json
import math
from importlib import resources
from typing import Any

from caselint.engine.hookspecs import hookimpl
from caselint.model import (
    SEVERITY_RANK,
    CaseReport,
    Check,
    Distribution,
    Finding,
    Limits,
    PlotData,
    Report,
    RuleInfo,
    WaiverStatus,
    Where,
)
from caselint.report.base import RenderOptions, Reporter

#: Value of the top-level ``format`` field.
REPORT_FORMAT = "caselint-report"
#: Version of the report layout; raised only for a breaking change.
REPORT_VERSION = 1
#: File name of the shipped schema, in the folder ``schema`` of ``caselint.report``.
SCHEMA_FILE = "report-v1.schema.json"


def report_schema_text() -> str:
    """The JSON Schema of this report format, as shipped with the package."""
    folder = resources.files("caselint.report").joinpath("schema")
    return folder.joinpath(SCHEMA_FILE).read_text(encoding="utf-8")


def report_schema() -> dict[str, Any]:
    """The JSON Schema of this report format, parsed."""
    return json.loads(report_schema_text())


def _number(value: float | None, what: str) -> float | None:
    """A finite float for the document, or None; refuses NaN and infinity by name."""
    if value is None:
        return None
    if isinstance(value, bool):
        raise ValueError(f"{what} must be a number, got {value!r}")
    number = float(value)
    if not math.isfinite(number):
        # The model forbids this for measurements; a reporter must not hide a breach of it.
        raise ValueError(f"{what} is {number!r}; a report holds finite numbers only")
    return number


def distribution_to_dict(d: Distribution, what: str) -> dict[str, Any]:
    """Plain-data form of a check's distribution, as the schema's ``distribution`` record."""
    def shares(pairs) -> list[dict[str, float]]:
        return [{"limit": _number(lim, what), "percent": _number(pct, what)} for lim, pct in pairs]

    return {
        "entity": d.entity, "count": int(d.count),
        "percentiles": [{"percent": _number(p, what), "value": _number(v, what)}
                        for p, v in d.percentiles],
        "beyond": shares(d.beyond),
        "places": [{"place": s.place, "count": int(s.count), "worst": _number(s.worst, what),
                    "beyond": shares(s.beyond)} for s in d.places],
        "worst_place": d.worst_place, "worse": d.worse, "weighted": d.weighted,
        "label": d.label,
    }


def check_to_dict(check: Check) -> dict[str, Any]:
    """Plain-data form of one check, as the schema's ``check`` record (``distributions``
    only for a rule graded by extent and place)."""
    what = f"check {check.rule!r}"
    out = {
        "rule": check.rule,
        "title": check.title,
        "outcome": check.outcome,
        "severity": check.severity,
        "measured": _number(check.measured, f"{what} measured"),
        "limit": _number(check.limit, f"{what} limit"),
        "unit": check.unit,
        "reason": check.reason,
        "limits": {
            "warning": _number(check.limits.warn, f"{what} warning limit"),
            "error": _number(check.limits.error, f"{what} error limit"),
        },
        "worse": check.worse,
    }
    if check.distributions:
        out["distributions"] = [distribution_to_dict(d, f"{what} distribution")
                                for d in check.distributions]
    return out


def where_to_dict(where: Where) -> dict[str, Any]:
    """Plain-data form of a location (see :meth:`caselint.model.Where.to_dict`)."""
    return where.to_dict()


def finding_to_dict(finding: Finding) -> dict[str, Any]:
    """Plain-data form of one finding, as the schema's ``finding`` record."""
    what = f"finding of rule {finding.rule!r}"
    return {
        "rule": finding.rule,
        "severity": finding.severity,
        "message": finding.message,
        "measured": _number(finding.measured, f"{what} measured"),
        "limit": _number(finding.limit, f"{what} limit"),
        "unit": finding.unit,
        "where": where_to_dict(finding.where),
        "hint": finding.hint,
        "source": finding.source,
        "waived": bool(finding.waived),
        "waiver": finding.waiver,
        "safety": finding.safety,
    }


def finding_sort_key(finding: Finding) -> tuple[Any, ...]:
    """Most severe first, then rule id and message; the location breaks any remaining tie."""
    return (
        -SEVERITY_RANK[finding.severity],
        finding.rule,
        finding.message,
        json.dumps(where_to_dict(finding.where), sort_keys=True),
        finding.waived,
    )


def check_sort_key(check: Check) -> tuple[str, str]:
    """Checks are listed by rule id (the title only breaks a tie between plugins' checks)."""
    return (check.rule, check.title)


def case_to_dict(case: CaseReport) -> dict[str, Any]:
    """Plain-data form of one case, with checks and findings in their stable order."""
    checks = [check_to_dict(c) for c in sorted(case.checks, key=check_sort_key)]
    findings = [finding_to_dict(f) for f in sorted(case.findings, key=finding_sort_key)]
    return {
        "case": case.case,
        "name": case.name,
        "safety": case.safety,
        "safety_note": case.safety_note,
        "mesh": case.mesh,
        "rule_sets": list(case.rule_sets),
        "checks": checks,
        "findings": findings,
        "description": case.description,
        "case_sha256": case.case_sha256,
        "mesh_sha256": case.mesh_sha256,
        "checklist": [{"id": i.id, "text": i.text, "rule_set": i.rule_set}
                      for i in case.checklist],
        "waivers": [waiver_to_dict(w) for w in case.waivers],
        "review": {"prepared_by": case.review.prepared_by,
                   "reviewers": list(case.review.reviewers),
                   "approved_by": case.review.approved_by},
        "plots": [plot_to_dict(p) for p in sorted(case.plots, key=lambda p: (p.rule, p.title))],
        "baselined": int(case.baselined),
    }


def waiver_to_dict(waiver: WaiverStatus) -> dict[str, Any]:
    """Plain-data form of a waiver's status, as the schema's ``waiver`` record."""
    out: dict[str, Any] = {
        "rule": waiver.rule, "reason": waiver.reason, "approved_by": waiver.approved_by,
        "expires": waiver.expires, "expired": bool(waiver.expired), "used": bool(waiver.used),
    }
    for key in ("boundary", "region", "line"):
        if getattr(waiver, key) is not None:
            out[key] = getattr(waiver, key)
    return out


def _limits_dict(limits: Limits | None, what: str) -> dict[str, Any] | None:
    if limits is None:
        return None
    return {"warning": _number(limits.warn, f"{what} warning limit"),
            "error": _number(limits.error, f"{what} error limit")}


def plot_to_dict(plot: PlotData) -> dict[str, Any]:
    """Plain-data form of a rule's plot data, as the schema's ``plot`` record."""
    what = f"plot {plot.title!r} of rule {plot.rule!r}"
    return {
        "rule": plot.rule, "title": plot.title, "kind": plot.kind,
        "x_label": plot.x_label, "y_label": plot.y_label,
        "x_log": bool(plot.x_log), "y_log": bool(plot.y_log),
        "limits": _limits_dict(plot.limits, what), "worse": plot.worse,
        "series": [_series(s, what) for s in plot.series],
        **({"walls": [_series(s, what) for s in plot.walls], "highlight": plot.highlight,
            "value_label": plot.value_label} if plot.kind == "cut" else {}),
    }


def _series(s, what: str) -> dict[str, Any]:
    out = {"label": s.label, "x": [_number(v, what) for v in s.x],
           "y": [_number(v, what) for v in s.y], "below": int(s.below), "above": int(s.above)}
    if s.value is not None:
        out["value"] = _number(s.value, what)
    return out


def rule_info_to_dict(rule: RuleInfo) -> dict[str, Any]:
    """Plain-data form of a rule's description, as the schema's ``rule_info`` record."""
    return {
        "id": rule.id, "title": rule.title, "rationale": rule.rationale, "source": rule.source,
        "hint": rule.hint, "unit": rule.unit, "worse": rule.worse, "measures": rule.measures,
        "default_limits": _limits_dict(rule.limits, f"rule {rule.id!r}"),
    }


def report_to_dict(report: Report) -> dict[str, Any]:
    """Plain-data form of a whole report, matching ``report-v1.schema.json``."""
    return {
        "format": REPORT_FORMAT,
        "version": REPORT_VERSION,
        "caselint_version": report.caselint_version,
        "rule_sets": list(report.rule_sets),
        "cases": [case_to_dict(c) for c in report.cases],
        "rules": [rule_info_to_dict(r) for r in sorted(report.rules, key=lambda r: r.id)],
        "rule_set_files": [
            {"name": i.name, "provider": i.provider, "version": i.version, "sha256": i.sha256}
            for i in sorted(report.rule_set_info, key=lambda i: i.name)
        ],
        "baseline": report.baseline,
    }


def dumps_report(data: dict[str, Any]) -> str:
    """Serialise a report dict: sorted keys, two-space indent, a final newline."""
    return json.dumps(data, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def render_json(report: Report, options: RenderOptions | None = None) -> str:
    """The report as a JSON document; ``options`` are ignored, so output never varies."""
    return dumps_report(report_to_dict(report))


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``json`` output format."""
    return [
        Reporter(
            name="json",
            description="Versioned JSON document (schema caselint-report v1), for CI and tools",
            render=render_json,
            suffix=".json",
        )
    ]
