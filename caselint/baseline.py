"""Baselines: record the findings a case library has today, then report only new ones.

A legacy library of cases may hold hundreds of known findings; ``--write-baseline FILE``
records them and ``--baseline FILE`` leaves them out of later reports, so CI fails only on
what is new or has got worse. A finding is identified by a fingerprint of its rule id, the
case-file path (as given, with ``/`` separators), its scope (boundary, region, the places
a rule graded by place judges) and the case-file key it concerns: not by its message,
whose numbers change with every mesh edit.
The baseline also keeps each finding's severity, so a warning that becomes an error is
reported again. Waived findings and faults of a rule itself are never recorded.

Fingerprints are also SARIF's ``partialFingerprints``, so code-scanning tools track the
same finding across runs. Run caselint from the same folder each time: the case path is
part of the fingerprint.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import posixpath
from collections import Counter
from dataclasses import dataclass
from pathlib import Path, PurePath
from typing import Any, Iterator

from caselint.errors import UsageError
from caselint.model import SEVERITY_RANK, CaseReport, Check, Finding, Report

#: Value of the ``format`` field of a baseline file.
BASELINE_FORMAT = "caselint-baseline"
#: Version of the baseline layout.
BASELINE_VERSION = 1


def case_path_key(path: str) -> str:
    """The case path as part of a fingerprint: ``/`` separators, ``.`` and ``..`` folded."""
    return posixpath.normpath(PurePath(path).as_posix())


def finding_fingerprint(case_path: str, finding: Finding) -> str:
    """SHA-256 (hex) of rule id, case path, scope and case-file key of a finding, and the
    places it judges when graded by place (left out otherwise, so that fingerprints
    recorded before grading by place still match)."""
    where = finding.where
    parts = [finding.rule, case_path_key(case_path), where.boundary or "", where.region or "",
             where.key or ""] + ([where.place] if where.place else [])
    return hashlib.sha256(json.dumps(parts, separators=(",", ":")).encode()).hexdigest()


def fingerprinted(case: CaseReport) -> Iterator[tuple[Finding, str]]:
    """Each finding of a case with its fingerprint; repeats get ``/2``, ``/3``... in order."""
    seen: Counter[str] = Counter()
    for finding in case.findings:
        base = finding_fingerprint(case.case, finding)
        seen[base] += 1
        yield finding, base if seen[base] == 1 else f"{base}/{seen[base]}"


def _recordable(case: CaseReport) -> Iterator[tuple[Finding, str]]:
    """Open findings of rules that ran: what a baseline records and can hide."""
    faulty = {c.rule for c in case.checks if c.outcome == "error"}
    for finding, fingerprint in fingerprinted(case):
        if not finding.waived and finding.rule not in faulty:
            yield finding, fingerprint


@dataclass(frozen=True)
class Baseline:
    """Recorded findings: fingerprint -> the severity it had when recorded."""

    path: str
    severities: dict[str, str]


def baseline_text(report: Report) -> str:
    """The baseline file recording every open finding of ``report`` (sorted, stable)."""
    entries = []
    for case in report.cases:
        for finding, fingerprint in _recordable(case):
            where = finding.where
            entry: dict[str, Any] = {"fingerprint": fingerprint, "case": case.case,
                                     "rule": finding.rule, "severity": finding.severity}
            for key in ("boundary", "region", "key"):
                if getattr(where, key) is not None:
                    entry[key] = getattr(where, key)
            entries.append(entry)
    entries.sort(key=lambda e: (e["case"], e["rule"], e["fingerprint"]))
    document = {"format": BASELINE_FORMAT, "version": BASELINE_VERSION, "findings": entries}
    return json.dumps(document, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def load_baseline(path: str | Path) -> Baseline:
    """Read a baseline file written by ``--write-baseline``.

    :raises UsageError: the file is missing, not JSON, or not a caselint baseline.
    """
    where = str(path)
    try:
        document = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise UsageError(f"baseline {where} does not exist (write one with "
                         "--write-baseline)") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise UsageError(f"cannot read baseline {where}: {exc}") from None
    except json.JSONDecodeError as exc:
        raise UsageError(f"{where}:{exc.lineno}:{exc.colno}: baseline is not valid JSON "
                         f"({exc.msg})") from None
    if not isinstance(document, dict) or document.get("format") != BASELINE_FORMAT:
        raise UsageError(f"{where}: not a caselint baseline (expected an object with "
                         f'"format": "{BASELINE_FORMAT}")')
    if document.get("version") != BASELINE_VERSION:
        raise UsageError(f"{where}: baseline version {document.get('version')!r} is not "
                         f"supported (expected {BASELINE_VERSION})")
    entries = document.get("findings")
    if not isinstance(entries, list):
        raise UsageError(f'{where}: baseline key "findings" must be a list')
    severities: dict[str, str] = {}
    for i, entry in enumerate(entries):
        if (not isinstance(entry, dict) or not isinstance(entry.get("fingerprint"), str)
                or entry.get("severity") not in SEVERITY_RANK):
            raise UsageError(f'{where}: findings[{i}] needs a "fingerprint" string and a '
                             '"severity" of error, warning or note')
        severities[entry["fingerprint"]] = entry["severity"]
    return Baseline(where, severities)


def _known(baseline: Baseline, finding: Finding, fingerprint: str) -> bool:
    recorded = baseline.severities.get(fingerprint)
    return recorded is not None and SEVERITY_RANK[finding.severity] <= SEVERITY_RANK[recorded]


def _check_note(check: Check, hidden: int) -> Check:
    if not hidden:
        return check
    noun = "finding" if hidden == 1 else "findings"
    return dataclasses.replace(check, reason=f"{hidden} known {noun} recorded in the "
                                             "baseline, not reported")


def apply_baseline(report: Report, baseline: Baseline) -> Report:
    """``report`` without the findings the baseline records (unless now more severe).

    Each case counts what was left out (``CaseReport.baselined``); a check keeps its
    outcome and says in its reason how many of its findings the baseline hid.
    """
    cases = []
    for case in report.cases:
        hide = {id(f) for f, fp in _recordable(case) if _known(baseline, f, fp)}
        per_rule = Counter(f.rule for f in case.findings if id(f) in hide)
        cases.append(dataclasses.replace(
            case,
            findings=tuple(f for f in case.findings if id(f) not in hide),
            checks=tuple(_check_note(c, per_rule[c.rule]) for c in case.checks),
            baselined=len(hide),
        ))
    return dataclasses.replace(report, cases=tuple(cases), baseline=baseline.path)
