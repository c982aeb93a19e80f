"""The ``markdown`` output format: the sign-off checklist of a design review, as Markdown.

What caselint does and does not check comes first. Per case: a header table (case,
purpose, safety class, SHA-256 of the case file and the mesh, caselint and rule-set
versions, and the date only when asked with ``--stamp``), the safety caution for a
safety-relevant case, one table row per check in summary order (outcome, measured value
and limit with units and direction, hint), the findings, the waivers with reason,
approver, expiry and status, the rule sets' manual checks as tick boxes, and lines to
sign. Several cases get a summary table first; each rule's sources are listed once at
the end, and checks and findings point to them with a key ``[n]``. Plain
GitHub-flavoured Markdown; the same report gives the same text.
"""

from __future__ import annotations

import re

from caselint.engine.hookspecs import hookimpl
from caselint.model import CaseReport, Report
from caselint.report import signoff
from caselint.report.base import RenderOptions, Reporter
from caselint.report.presentation import SourceKeys, in_summary_order, spread_sentence

#: Characters escaped in text; "<=" and ">=" (limits) stay as they are: no tag opens so.
_SPECIAL = re.compile(r"([\\`*_\[\]|#]|[<>](?!=))")


def md(text: str) -> str:
    """Text made safe for a Markdown table cell or line: specials escaped, one line."""
    return _SPECIAL.sub(r"\\\1", " ".join(str(text).split()))


def _code(text: str) -> str:
    """Inline code (paths, hashes); backticks inside are replaced, never break out."""
    return "`" + str(text).replace("`", "'") + "`" if text else ""


def _table(head: tuple[str, ...], rows: list[tuple[str, ...]]) -> list[str]:
    lines = ["| " + " | ".join(head) + " |", "|" + "|".join("---" for _ in head) + "|"]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return lines


def _summary(report: Report) -> list[str]:
    """A table of the cases with their outcome counts and worst open severity."""
    rows = []
    for case in report.cases:
        counts = signoff.outcome_counts(case)
        rows.append((md(case.name or case.case), _code(case.case),
                     *(str(counts[o]) for o in signoff.COUNT_TITLES),
                     signoff.worst_open(case)))
    return ["## Summary", "", *_table(("Case", "File", *signoff.COUNT_TITLES.values(),
                                       "Worst open finding"), rows), ""]


def _cited(text: str, key: str) -> str:
    return f"{text} {key}" if key else text


def _case(report: Report, case: CaseReport, stamp: str, level: str,
          keys: SourceKeys) -> list[str]:
    out = [f"{level} Sign-off checklist: {md(case.name or case.case)}", ""]
    rows = []
    for label, value in signoff.header_rows(report, case, stamp):
        text = _code(value) if label in ("Case file", "Mesh", "Case file SHA-256",
                                         "Mesh SHA-256") and "(" not in value else md(value)
        rows.append((label, text))
    out += _table(("Item", "Value"), rows) + [""]
    if signoff.relevant(case):
        caution = case.safety_note or signoff.SCOPE_NOTE
        out += [f"> **Safety-relevant case ({md(case.safety)}).** {md(caution)}", ""]
    sub = level + "#"
    out += [f"{sub} Automated checks", ""]
    check_rows = signoff.check_rows(report, case, keys)
    if check_rows:
        out += _table(("Rule", "Outcome", "Measured", "Limit", "Hint or reason"),
                      [(_cited(f"{md(r.rule)}: {md(r.title)}", r.source),
                        f"**{md(r.label)}**" if r.outcome in ("fail", "error") else md(r.label),
                        md(r.measured), md(r.limit), md(r.hint)) for r in check_rows])
    else:
        out.append("No rules were selected for this case.")
    out += ["", f"{sub} Findings", ""]
    findings = signoff.finding_lines(case)
    if not findings:
        out.append("No findings.")
    for finding, where in findings:
        tag = "waived " + finding.severity if finding.waived else finding.severity
        line = f"- **{tag}** {md(finding.rule)}: {md(finding.message)} ({md(where)})"
        if finding.waived and finding.waiver:
            line += f"; {md(finding.waiver)}"
        out.append(_cited(line, keys.cite(finding)))
    spreads = [(c.rule, spread_sentence(c, d)) for c in in_summary_order(case.checks)
               for d in c.distributions]
    if spreads:
        out += ["", f"{sub} Spread over the mesh", ""]
        out += [f"- **{md(rule)}** {md(text)}" for rule, text in spreads]
    out += ["", f"{sub} Waivers", ""]
    if case.waivers:
        out += _table(("Rule", "Scope", "Reason", "Approved by", "Expires", "Status"),
                      [(md(w.rule), md(signoff.waiver_scope(w)), md(w.reason),
                        md(w.approved_by), w.expires,
                        f"**{md(signoff.waiver_status(w))}**" if w.expired
                        else md(signoff.waiver_status(w))) for w in case.waivers])
    else:
        out.append("The case file has no waivers.")
    out += ["", f"{sub} Manual checks", ""]
    if case.checklist:
        out += [f"- [ ] {md(item.text)} ({md(item.id)}, rule set {md(item.rule_set)})"
                for item in case.checklist]
    else:
        out.append("The rule sets used list no manual checks.")
    out += ["", f"{sub} Sign-off", ""]
    out += _table(("Role", "Name", "Signature", "Date"),
                  [(line.role, md(line.name) or " ", " ", " ")
                   for line in signoff.sign_off_lines(case)])
    return out + [""]


def render_markdown(report: Report, options: RenderOptions) -> str:
    """The sign-off checklist of every case in the report, as Markdown."""
    several = len(report.cases) > 1
    if several or not report.cases:
        out = ["# caselint sign-off checklists" if several else "# caselint sign-off checklist",
               "", md(signoff.SCOPE_NOTE), ""]
    if several:
        out += _summary(report)
    if not report.cases:
        out += ["No case files were checked.", ""]
    keys = SourceKeys()
    for index, case in enumerate(report.cases):
        case_lines = _case(report, case, options.stamp, "##" if several else "#", keys)
        if not several:     # the scope note goes under the one title
            case_lines[2:2] = [md(signoff.SCOPE_NOTE), ""]
        out = case_lines if index == 0 and not several else out + case_lines
    entries = keys.entries()
    if entries:
        out += ["## Sources", ""]
        out += [f"- {key} {md(rule)}: {md(source)}" for key, rule, source in entries]
        out.append("")
    return "\n".join(out) + "\n"


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``markdown`` output format."""
    return [
        Reporter(
            name="markdown",
            description="Sign-off checklist for a design review (Markdown)",
            render=render_markdown,
            suffix=".md",
        )
    ]
