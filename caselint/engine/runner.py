"""Run the selected rules on one case: check needs, grade, apply waivers, build the report.

A rule whose needs (``Rule.needs``, :mod:`caselint.engine.needs`) the case does not meet
is skipped without being called. Each measurement is graded against its grade, resolved
from the rule's declaration and the rule-set and case-file overrides; a measurement with
an extent is graded per place (:mod:`caselint.engine.extent`). A rule that raises is
reported as an ``error`` outcome with an internal-error finding for that rule; the other
rules still run. Bad input found while a rule runs (a mesh that cannot be read) is not a
rule fault: it propagates as a :class:`UsageError`. Plots a rule attaches to its result
(``RuleResult.plots``) are kept in the case report, stamped with the rule's id, for the
review reports to draw.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import functools
import os
import traceback
from typing import TYPE_CHECKING, Callable

from caselint.engine import extent, grading, needs
from caselint.engine.context import RuleContext
from caselint.engine.entries import ActiveRule, resolve
from caselint.engine.safety import finding_caution, safety_note
from caselint.errors import UsageError
from caselint.model import (
    SEVERITY_RANK,
    CaseReport,
    Check,
    ChecklistItem,
    Finding,
    Limits,
    Measurement,
    PlotData,
    ReviewInfo,
    Rule,
    RuleInfo,
    RuleResult,
    WaiverStatus,
    Where,
)

if TYPE_CHECKING:
    from caselint.manifest.case import Case, Waiver
    from caselint.mesh.analysis import Mesh


def _matching_waiver(
    rule_id: str, where: Where, waivers: "tuple[Waiver, ...]", today: dt.date,
    used: set[int] | None = None,
) -> "Waiver | None":
    """The first unexpired waiver of this rule whose scope (if any) covers ``where``.

    The index of the waiver found is added to ``used``.
    """
    for index, waiver in enumerate(waivers):
        if waiver.rule != rule_id or waiver.expires < today:
            continue
        if waiver.boundary is not None and waiver.boundary != where.boundary:
            continue
        if waiver.region is not None and waiver.region != where.region:
            continue
        if used is not None:
            used.add(index)
        return waiver
    return None


def waiver_statuses(case: "Case", today: dt.date, used: set[int]) -> tuple[WaiverStatus, ...]:
    """Every waiver of the case, in file order, with whether it expired or covered anything."""
    return tuple(
        WaiverStatus(rule=w.rule, reason=w.reason, approved_by=w.approved_by,
                     expires=w.expires.isoformat(), expired=w.expires < today,
                     used=i in used, boundary=w.boundary, region=w.region,
                     line=case.line_of(f"checks.waivers[{i}]"))
        for i, w in enumerate(case.checks.waivers)
    )


def _with_line(where: Where, case: "Case") -> Where:
    if where.key is None or where.line is not None:
        return where
    from dataclasses import replace

    return replace(where, line=case.line_of(where.key))


def _crash(active: ActiveRule, exc: BaseException, case: "Case") -> tuple[Check, Finding]:
    rule = active.rule
    last = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    at = f" at {last.filename}:{last.lineno}" if last else ""
    reason = f"internal error in rule: {type(exc).__name__}: {exc}{at}"
    check = Check(rule.id, rule.title, "error", "error", None, None, rule.unit, reason,
                  active.limits, rule.worse)
    finding = Finding(
        rule=rule.id, severity="error", message=f"the rule could not run: {reason}",
        measured=None, limit=None, unit=rule.unit, where=Where(), source=rule.source,
        hint="This is a fault in the rule, not in the case: report it to the rule's author "
             "(see `caselint plugins`); the other rules ran normally.",
        safety=finding_caution(case.info.safety),
    )
    return check, finding


def _graded_measurements(active: ActiveRule, result: RuleResult):
    """Each measurement to grade, resolved against its grade (limits, direction, unit),
    and the distributions of those graded by extent and place."""
    rule = active.rule
    out, distributions = [], []
    for m in result.measurements:
        parts = [m]
        if m.extent is not None and rule.place_grades:
            parts = extent.expand(rule, active.grades, m)
            distributions.append(extent.distribution(rule, active.grades, m))
        for part in parts:
            name = part.grade or rule.main_grade
            if name not in active.grades:
                raise ValueError(f"measurement names grade {name!r}, which rule {rule.id!r} "
                                 f"does not declare (it has {', '.join(active.grades)})")
            grade = active.grades[name]
            out.append(dataclasses.replace(
                part, extent=None,
                limits=part.limits if part.limits is not None else grade.limits,
                worse=part.worse or grade.worse or rule.worse,
                unit=part.unit if part.unit is not None else
                (grade.unit if grade.unit is not None else rule.unit)))
    return out, tuple(distributions)


def _grade(
    active: ActiveRule, result: RuleResult, case: "Case", today: dt.date, used: set[int]
) -> tuple[Check, list[Finding]]:
    rule, limits = active.rule, active.limits
    caution = finding_caution(case.info.safety)
    findings = [
        Finding(rule.id, "note", n.message, None, None, rule.unit, _with_line(n.where, case),
                rule.hint, rule.source, safety=caution)
        for n in result.notes
    ]
    if result.skipped is not None:
        check = Check(rule.id, rule.title, "skipped", None, None, None, rule.unit,
                      result.skipped, limits, rule.worse)
        return check, findings
    measurements, distributions = _graded_measurements(active, result)
    if not measurements:
        raise ValueError("the rule's extent holds no entity in any place it grades")
    worst_open: str | None = None
    worst_waived: str | None = None
    graded: list[tuple[Measurement, str | None]] = []
    for m in measurements:
        severity = grading.cap(grading.grade(m.value, m.limits, m.worse), active.max_severity)
        graded.append((m, severity))
        if severity is None:
            continue
        where = _with_line(m.where, case)
        limit = grading.limit_for(severity, m.limits)
        waiver = _matching_waiver(rule.id, where, case.checks.waivers, today, used)
        findings.append(Finding(
            rule=rule.id, severity=severity, message=grading.message(rule, m, severity, limit),
            measured=m.value, limit=limit, unit=m.unit, where=where, hint=m.fix or rule.hint,
            source=rule.source, waived=waiver is not None,
            waiver=(f"waived by {waiver.approved_by} until {waiver.expires}: {waiver.reason}"
                    if waiver else ""),
            safety=caution,
        ))
        if waiver is None:
            worst_open = _more_severe(worst_open, severity)
        else:
            worst_waived = _more_severe(worst_waived, severity)
    deciding, deciding_severity = _deciding(graded, rule)
    if worst_open is not None:
        outcome, severity = "fail", worst_open
    elif worst_waived is not None:
        outcome, severity = "waived", worst_waived
    else:
        outcome, severity = "pass", None
    d_limits = deciding.limits
    if d_limits == Limits() and _on_rule_scale(deciding, rule):
        d_limits = limits       # a value only reported in its place: show the main limits
    check = Check(rule.id, rule.title, outcome, severity, deciding.value,
                  grading.limit_for(deciding_severity, d_limits), deciding.unit, "", d_limits,
                  deciding.worse or rule.worse, distributions)
    return check, findings


def _on_rule_scale(m: Measurement, rule: Rule) -> bool:
    """True when a (resolved) measurement has the rule's own direction and unit."""
    return m.worse == rule.worse and m.unit == rule.unit


def _deciding(
    graded: list[tuple[Measurement, str | None]], rule: Rule
) -> tuple[Measurement, str | None]:
    """The measurement a check reports: the most severe; among equals, the worst value of
    those on the rule's own scale, else the first one the rule gave."""
    top = max(-1 if s is None else SEVERITY_RANK[s] for _, s in graded)
    tied = [(m, s) for m, s in graded if (-1 if s is None else SEVERITY_RANK[s]) == top]
    own = [(m, s) for m, s in tied if _on_rule_scale(m, rule) and not m.statement]
    if not own:
        return tied[0]
    values = [m.value for m, _ in own]
    pick = values.index(grading.worst(values, rule.worse))
    return own[pick]


def _rule_plots(active: ActiveRule, result: RuleResult) -> list[PlotData]:
    """The plots a rule attached, each stamped with the rule's id."""
    out = []
    for plot in result.plots:
        if not isinstance(plot, PlotData):
            raise TypeError(f"rule attached {type(plot).__name__} as a plot, not PlotData")
        out.append(dataclasses.replace(plot, rule=active.rule.id))
    return out


def _more_severe(a: str | None, b: str) -> str:
    return b if a is None or SEVERITY_RANK[b] > SEVERITY_RANK[a] else a


def _sort_findings(findings: list[Finding]) -> tuple[Finding, ...]:
    return tuple(sorted(findings, key=lambda f: (-SEVERITY_RANK[f.severity], f.rule, f.message)))


def run_case(
    case: "Case",
    active_rules: tuple[ActiveRule, ...],
    load_mesh: "Callable[[], Mesh]",
    *,
    label: str | None = None,
    rule_sets: tuple[str, ...] = (),
    checklist: "tuple[ChecklistItem, ...]" = (),
    today: dt.date | None = None,
    read_mesh: "Callable[..., Mesh] | None" = None,
) -> CaseReport:
    """Run every active rule on ``case`` and collect checks and findings, sorted.

    ``label`` is how the report names the case file (the path as the user gave it);
    ``read_mesh`` is the mesh reader rules use for other mesh files (a grid study's).
    """
    today = today or dt.date.today()
    mesh_once = functools.lru_cache(maxsize=1)(load_mesh)
    checks: list[Check] = []
    findings: list[Finding] = []
    plots: list[PlotData] = []
    used: set[int] = set()
    for active in sorted(active_rules, key=lambda a: a.rule.id):
        try:
            result = run_rule(active, case, mesh_once, today=today, read_mesh=read_mesh)
            check, found = _grade(active, result, case, today, used)
            plots.extend(_rule_plots(active, result))
        except UsageError:
            raise
        except Exception as exc:  # a rule's fault must not stop the other rules
            check, crash = _crash(active, exc, case)
            found = [crash]
        checks.append(check)
        findings.extend(found)
    return CaseReport(
        case=label if label is not None else str(case.path),
        name=case.info.name,
        safety=case.info.safety,
        checks=tuple(checks),
        findings=_sort_findings(findings),
        safety_note=safety_note(case.info.safety),
        mesh=os.path.relpath(case.mesh.file, case.path.parent),
        rule_sets=rule_sets,
        description=case.info.description,
        checklist=tuple(checklist),
        waivers=waiver_statuses(case, today, used),
        review=ReviewInfo(case.review.prepared_by, tuple(case.review.reviewers),
                          case.review.approved_by),
        plots=tuple(plots),
        rule_info=tuple(RuleInfo.of(a.rule) for a in sorted(active_rules,
                                                             key=lambda a: a.rule.id)),
    )


def run_rule(active: ActiveRule, case: "Case", load_mesh: "Callable[[], Mesh]", *,
             today: dt.date | None = None,
             read_mesh: "Callable[..., Mesh] | None" = None) -> RuleResult:
    """One rule's result on ``case``: skipped when a need is not met, else its check's."""
    rule = active.rule
    reason = needs.missing_case_data(rule.needs, case) or needs.missing_mesh_data(rule.needs,
                                                                                  load_mesh)
    if reason is not None:
        return RuleResult.skip(reason)
    ctx = RuleContext(case=case, limits=active.limits, params=dict(active.params),
                      today=today or dt.date.today(), grades=dict(active.grades),
                      read_mesh=read_mesh, _load_mesh=load_mesh)
    result = rule.check(ctx)
    if not isinstance(result, RuleResult):
        raise TypeError(f"rule returned {type(result).__name__}, not RuleResult")
    return result


def check_rule(rule: Rule, case: "Case", mesh: "Mesh | None" = None, *,
               settings: dict | None = None, today: dt.date | None = None) -> RuleResult:
    """Run one rule on ``case`` as the engine would: ``settings`` as a case file's
    ``checks.rules`` entry (checked), needs checked, the mesh given. For tests and tools."""
    def load() -> "Mesh":
        if mesh is None:
            raise RuntimeError("this rule was run without a mesh")
        return mesh

    return run_rule(resolve(rule, settings, file=str(case.path), lines=case.lines), case, load,
                    today=today)


def graded_measurements(rule: Rule, result: RuleResult,
                        settings: dict | None = None) -> list[Measurement]:
    """The measurements of ``result`` as the engine grades them: each with the limits,
    direction and unit of its grade, a measurement with an extent expanded per place."""
    return _graded_measurements(resolve(rule, settings), result)[0]
