"""The content of a sign-off checklist, shared by the ``markdown`` and ``html`` formats.

A design review needs the same facts in either format: what caselint is and is not (said
first, before anything is read), what was checked (case, purpose, safety class, input
hashes, caselint and rule-set versions, and a date only when asked), one line per check
in summary order (failures first) with the measured value against its limit and a fix
hint, the findings, the waivers with their status, the rule sets' manual checks as tick
boxes, the sign-off lines, and each rule's sources once at the end. This module picks
those facts out of a finished report as plain strings; the two formats only lay them out.
"""

from __future__ import annotations

from dataclasses import dataclass

from caselint.model import CaseReport, Check, Finding, Report, WaiverStatus
from caselint.report.json_report import finding_sort_key
from caselint.report.presentation import (
    OUTCOME_ORDER,
    SourceKeys,
    format_where,
    in_summary_order,
    measured_and_limit,
)
from caselint.wording import plural

#: What caselint is and is not, printed at the head of every checklist.
SCOPE_NOTE = (
    "caselint checks the set-up of a case against published guidance and common practice "
    "before it is run. It does not validate results; engineering judgement and the review "
    "recorded in this checklist decide whether the case is fit for its purpose."
)
#: Outcome labels as a reviewer reads them.
OUTCOME_LABEL = {
    "pass": "pass", "fail": "FAIL", "skipped": "not checked", "waived": "waived",
    "error": "RULE FAULT",
}
#: Column titles of the outcome counts in a summary of several cases, in summary order.
COUNT_TITLES = {"fail": "Fail", "error": "Rule fault", "waived": "Waived", "pass": "Pass",
                "skipped": "Not checked"}


@dataclass(frozen=True)
class CheckRow:
    """One line of the checks table: rule, outcome, measured value and limit (each with
    its unit; the limit with its direction), hint, and the key of the rule's sources."""

    rule: str
    title: str
    outcome: str            # pass | fail | skipped | waived | error
    label: str              # the outcome as printed, e.g. "FAIL (warning)"
    measured: str
    limit: str
    hint: str
    source: str = ""        # "[n]", see sources()


@dataclass(frozen=True)
class SignOffLine:
    """A line of the sign-off block: the role and the name the case file gives for it."""

    role: str
    name: str


def relevant(case: CaseReport) -> bool:
    """True when the case is marked safety-relevant."""
    return bool(case.safety) and case.safety != "none"


def header_rows(report: Report, case: CaseReport, stamp: str = "") -> list[tuple[str, str]]:
    """Label and value of each header line; the date only when ``stamp`` is given."""
    sets = {info.name: info for info in report.rule_set_info}
    set_texts = []
    for name in case.rule_sets:
        info = sets.get(name)
        if info is None:
            set_texts.append(name)
            continue
        provider = f"{info.provider} {info.version}".strip()
        set_texts.append(f"{name} ({provider}; SHA-256 {info.sha256[:16]}...)" if provider
                         else f"{name} (SHA-256 {info.sha256[:16]}...)")
    safety = (f"{case.safety} (safety-relevant)" if relevant(case)
              else "none (not marked safety-relevant)")
    rows = [
        ("Case", case.name or case.case),
        ("Purpose", case.description or "(not given in the case file)"),
        ("Safety class", safety),
        ("Case file", case.case),
        ("Case file SHA-256", case.case_sha256 or "(not computed)"),
        ("Mesh", case.mesh or "(none)"),
        ("Mesh SHA-256", case.mesh_sha256 or "(not computed)"),
        ("caselint version", report.caselint_version),
        ("Rule sets", "; ".join(set_texts) or "(none)"),
    ]
    if report.baseline:
        rows.append(("Baseline", baseline_note(report, case)))
    if stamp:
        rows.append(("Date", stamp))
    return rows


def _hint_for(check: Check, findings: list[Finding], hints: dict[str, str]) -> str:
    """For a failed or waived check the fix hint (its most severe finding's, else the
    rule's), for one not run the reason; nothing for a pass."""
    if check.outcome in ("skipped", "error"):
        return check.reason
    if check.outcome == "pass":
        return check.reason
    own = [f for f in findings if f.rule == check.rule and f.measured is not None]
    hint = own[0].hint if own else hints.get(check.rule, "")
    if check.outcome == "waived":
        return f"{(own[0].waiver if own else '') or check.reason} ({hint})"
    return f"{check.reason} ({hint})" if check.reason else hint


def check_rows(report: Report, case: CaseReport, keys: SourceKeys) -> list[CheckRow]:
    """One row per check in summary order; each rule's sources get a key in ``keys``."""
    rules = {rule.id: rule for rule in report.rules}
    findings = sorted(case.findings, key=finding_sort_key)
    hints = {rule.id: rule.hint for rule in report.rules}
    own_sources = {f.rule: f.source for f in findings}
    rows = []
    for check in in_summary_order(case.checks):
        label = OUTCOME_LABEL.get(check.outcome, check.outcome)
        if check.outcome in ("fail", "waived") and check.severity:
            label = f"{label} ({check.severity})"
        info = rules.get(check.rule)
        source = info.source if info is not None else own_sources.get(check.rule, "")
        measured, limit = measured_and_limit(check)
        rows.append(CheckRow(check.rule, check.title, check.outcome, label, measured, limit,
                             _hint_for(check, findings, hints), keys.key(check.rule, source)))
    return rows


def finding_lines(case: CaseReport) -> list[tuple[Finding, str]]:
    """Every finding (open first, then waived) with where it is, in words."""
    findings = sorted(case.findings, key=finding_sort_key)
    ordered = [f for f in findings if not f.waived] + [f for f in findings if f.waived]
    return [(finding, format_where(finding.where)) for finding in ordered]


def waiver_status(waiver: WaiverStatus) -> str:
    """``EXPIRED``, ``in force, used`` or ``in force, not used``."""
    if waiver.expired:
        return f"EXPIRED on {waiver.expires}: covers nothing"
    return "in force, used" if waiver.used else "in force, not used by this run"


def waiver_scope(waiver: WaiverStatus) -> str:
    """The boundary or region a waiver is limited to, or ``whole case``."""
    parts = []
    if waiver.boundary:
        parts.append(f"boundary {waiver.boundary}")
    if waiver.region:
        parts.append(f"region {waiver.region}")
    return ", ".join(parts) or "whole case"


def sign_off_lines(case: CaseReport) -> list[SignOffLine]:
    """Prepared by, reviewed by (one line per reviewer, at least one) and approved."""
    review = case.review
    lines = [SignOffLine("Prepared by", review.prepared_by or "")]
    lines += [SignOffLine("Reviewed by", name) for name in review.reviewers or ("",)]
    lines.append(SignOffLine("Approved", review.approved_by or ""))
    return lines


def outcome_counts(case: CaseReport) -> dict[str, int]:
    """How many checks of the case ended in each outcome, in summary order."""
    counts = {o: 0 for o in OUTCOME_ORDER}
    for check in case.checks:
        counts[check.outcome] = counts.get(check.outcome, 0) + 1
    return counts


def worst_open(case: CaseReport) -> str:
    """The most severe unwaived finding's severity, or ``none``."""
    for severity in ("error", "warning", "note"):
        if any(f.severity == severity and not f.waived for f in case.findings):
            return severity
    return "none"


def baseline_note(report: Report, case: CaseReport) -> str:
    """``3 known findings left out of this list`` for a run with a baseline."""
    return f"{report.baseline}: {plural(case.baselined, 'known finding')} left out of this list"
