"""The ``text`` output format (the default): a terminal report drawn with rich.

Per case: a header (name, case file, mesh, safety class and caution), a table of checks
(failures first; each measured value with its unit and each limit with its direction),
what was not checked and why, then the findings grouped by severity with where, fix and
a short key to their sources. The sources follow once for the whole report, one entry
per rule. Several cases get a table of their outcome counts; a run with ``--baseline``
says how many known findings it left out. The last line counts the outcomes and names
the worst severity.

Rule ids and numbers are never broken across lines; other text wraps at spaces. Without
colour (not a TTY, or ``NO_COLOR``) the output is plain ASCII, so it stays readable in
CI logs and when piped.
"""

from __future__ import annotations

from collections import Counter
from io import StringIO

from rich import box
from rich.cells import cell_len
from rich.console import Console
from rich.table import Table
from rich.text import Text

from caselint.engine.hookspecs import hookimpl
from caselint.model import SEVERITY_RANK, CaseReport, Check, Finding, Report
from caselint.report.base import RenderOptions, Reporter
from caselint.report.json_report import finding_sort_key
from caselint.report.presentation import (
    OUTCOME_NAME,
    OUTCOME_ORDER,
    SourceKeys,
    count_words,
    format_where,
    in_summary_order,
    measured_and_limit,
    outcome_label,
    spread_sentence,
)
from caselint.wording import format_number, plural

__all__ = ["format_number", "format_where", "render_text", "summary_line"]

#: Narrowest layout drawn: the longest built-in rule id (27 characters), the outcome and
#: two short values side by side. A narrower terminal wraps the lines itself.
MIN_WIDTH = 72

_OUTCOME_STYLE = {
    "pass": "green",
    "fail": "bold red",
    "skipped": "yellow",
    "waived": "magenta",
    "error": "bold red reverse",
}
_SEVERITY_STYLE = {"error": "bold red", "warning": "bold yellow", "note": "cyan"}
_GROUP_TITLE = {"error": "Errors", "warning": "Warnings", "note": "Notes"}
#: A header rule and no column lines, in ASCII for plain output.
_PLAIN_BOX = box.Box("    \n    \n -- \n    \n    \n    \n    \n    \n", ascii=True)
#: Cell padding (top, right, bottom, left): with the box's blank divider, two spaces
#: between columns.
_PADDING = (0, 1, 0, 0)


def _outcome_text(check: Check) -> Text:
    """The outcome cell: a failed or waived check also says which grade it crossed."""
    return Text(outcome_label(check), style=_OUTCOME_STYLE.get(check.outcome, ""))


def _header(console: Console, case: CaseReport, plain: bool) -> None:
    """Case name on a ruled line, then file, mesh and safety class (with its caution)."""
    bar = "=" if plain else "━"
    name = case.name or case.case
    tail = max(3, console.width - cell_len(name) - 4)
    line = Text(bar * 2 + " ", style="blue")
    line.append(name, style="bold")
    line.append(" " + bar * tail, style="blue")
    console.print(line, no_wrap=True, overflow="crop")
    grid = Table.grid(padding=(0, 2))
    grid.add_column(no_wrap=True, style="bold")
    grid.add_column(ratio=1)
    grid.add_row("case file", case.case)
    grid.add_row("mesh", case.mesh or "(none)")
    grid.add_row("rule sets", ", ".join(case.rule_sets) or "(none)")
    relevant = bool(case.safety) and case.safety != "none"
    safety = f"{case.safety} (safety-relevant)" if relevant else "none (not marked safety-relevant)"
    grid.add_row("safety", Text(safety, style="bold magenta" if relevant else ""))
    if case.safety_note:
        grid.add_row("caution", Text(case.safety_note, style="magenta"))
    console.print(grid)


def _bullets(rows: list[tuple[str, Text]]) -> Table:
    """A list whose wrapped lines hang under their text, not under the bullet."""
    grid = Table.grid(padding=(0, 1))
    grid.add_column(no_wrap=True)
    grid.add_column(ratio=1)
    for bullet, text in rows:
        grid.add_row(bullet, text)
    return grid


def _checks_table(console: Console, checks: list[Check], plain: bool) -> None:
    """The summary table: one row per rule with its outcome, worst value and limit."""
    if not checks:
        console.print(Text("No rules were selected for this case.", style="yellow"))
        return
    table = Table(box=_PLAIN_BOX if plain else box.SIMPLE_HEAD, header_style="bold",
                  show_edge=False, pad_edge=False, padding=_PADDING)
    # ids are never broken: the column is as wide as the longest one
    table.add_column("Rule", no_wrap=True, min_width=max(cell_len(c.rule) for c in checks))
    table.add_column("Outcome", no_wrap=True)
    table.add_column("Measured", justify="right")
    table.add_column("Limit", justify="right")
    for check in checks:
        measured, limit = measured_and_limit(check)
        table.add_row(check.rule, _outcome_text(check), measured, limit)
    console.print(table)
    reasons = [c for c in checks if c.reason and c.outcome in ("skipped", "waived", "error")]
    if reasons:
        console.print(Text("Not checked, waived or faulted:", style="bold"))
        rows = []
        for check in reasons:
            text = Text().append(f"{check.rule} ({OUTCOME_NAME[check.outcome]})",
                                 _OUTCOME_STYLE[check.outcome])
            rows.append(("-", text.append(": " + check.reason)))
        console.print(_bullets(rows))


def _finding_block(console: Console, finding: Finding, plain: bool, sources: SourceKeys) -> None:
    """One finding: rule and message, then where, fix, the key of its sources and any
    safety or waiver note."""
    style = _SEVERITY_STYLE[finding.severity]
    head = Text().append(finding.rule, style).append(": " + finding.message)
    console.print(_bullets([("*" if plain else "●", head)]))
    details = [("where", format_where(finding.where)), ("fix", finding.hint)]
    key = sources.cite(finding)
    if key:
        details.append(("source", f"{key}, under Sources"))
    if finding.safety:
        details.append(("safety", finding.safety))
    if finding.waived:
        waiver = f"{finding.severity} waived" + (f": {finding.waiver}" if finding.waiver else "")
        details.append(("waiver", waiver))
    grid = Table.grid(padding=(0, 1))
    grid.add_column(width=1)
    grid.add_column(width=6, no_wrap=True, style="dim")
    grid.add_column(ratio=1)
    for label, value in details:
        grid.add_row("", label, Text(value, style="magenta" if label == "safety" else ""))
    console.print(grid)


def _findings(console: Console, findings: list[Finding], plain: bool,
              sources: SourceKeys) -> None:
    """Open findings grouped errors, warnings, notes; waived findings listed last."""
    if not findings:
        console.print(Text("No findings.", style="green"))
        return
    groups = [(_GROUP_TITLE[s], s, [f for f in findings if f.severity == s and not f.waived])
              for s in ("error", "warning", "note")]
    groups.append(("Waived", "note", [f for f in findings if f.waived]))
    for title, severity, items in groups:
        if not items:
            continue
        console.print(Text(f"{title} ({len(items)})", style=_SEVERITY_STYLE[severity]))
        for finding in items:
            _finding_block(console, finding, plain, sources)


def _spreads(console: Console, checks) -> None:
    """How each place-graded quantity is spread over the mesh (beyond its worst value)."""
    rows = [(c.rule, spread_sentence(c, d)) for c in in_summary_order(checks)
            for d in c.distributions]
    _titled_grid(console, "Spread over the mesh",
                 [(Text(rule, style="bold"), sentence) for rule, sentence in rows])


def _sources(console: Console, sources: SourceKeys) -> None:
    """Each cited rule's sources, once for the whole report."""
    _titled_grid(console, "Sources",
                 [(key, Text().append(rule, "bold").append(": " + source))
                  for key, rule, source in sources.entries()])


def _titled_grid(console: Console, title: str, rows: list) -> None:
    """A bold title and two columns, the first kept on one line; nothing when no rows."""
    if not rows:
        return
    console.print()
    console.print(Text(title, style="bold"))
    grid = Table.grid(padding=(0, 1))
    grid.add_column(no_wrap=True)
    grid.add_column(ratio=1)
    for first, second in rows:
        grid.add_row(first, second)
    console.print(grid)


def _cases_table(console: Console, report: Report, plain: bool) -> None:
    """Several cases: one row each with its outcome counts and worst open severity."""
    table = Table(box=_PLAIN_BOX if plain else box.SIMPLE_HEAD, header_style="bold",
                  title="Cases", title_justify="left", show_edge=False, pad_edge=False,
                  padding=_PADDING)
    # paths are kept whole where the width allows; the count headers wrap first
    table.add_column("Case file", overflow="fold",
                     min_width=min(24, max(cell_len(case.case) for case in report.cases)))
    for outcome in OUTCOME_ORDER:
        name = OUTCOME_NAME[outcome]
        # "Rule fault" on two lines: five columns narrower, for the paths
        table.add_column((name[0].upper() + name[1:]).replace(" ", "\n"), justify="right")
    table.add_column("Worst", no_wrap=True)
    for case in report.cases:
        counts = Counter(c.outcome for c in case.checks)
        worst = max((f.severity for f in case.findings if not f.waived),
                    key=SEVERITY_RANK.__getitem__, default="none")
        table.add_row(case.case, *(str(counts.get(o, 0)) for o in OUTCOME_ORDER),
                      Text(worst, style=_SEVERITY_STYLE.get(worst, "green")))
    console.print(table)


def summary_line(report: Report, fail_on: str = "error") -> str:
    """The last line: outcome counts over all cases and the worst unwaived severity."""
    counts = Counter(c.outcome for case in report.cases for c in case.checks)
    open_findings = [f for case in report.cases for f in case.findings if not f.waived]
    worst = max((f.severity for f in open_findings), key=SEVERITY_RANK.__getitem__,
                default="none")
    return (f"Result for {plural(len(report.cases), 'case')}: {count_words(counts)}; "
            f"worst severity: {worst} (fail level: {fail_on})")


def render_text(report: Report, options: RenderOptions) -> str:
    """The report as terminal text, coloured only when ``options.color`` is set."""
    plain = not options.color
    out = StringIO()
    console = Console(
        file=out, force_terminal=options.color, no_color=plain,
        color_system="standard" if options.color else None, width=max(MIN_WIDTH, options.width),
        highlight=False, emoji=False, markup=False, legacy_windows=False,
    )
    if not report.cases:
        console.print("No case files were checked.")
    sources = SourceKeys()
    for index, case in enumerate(report.cases):
        if index:
            console.print()
        _header(console, case, plain)
        console.print()
        _checks_table(console, in_summary_order(case.checks), plain)
        console.print()
        _findings(console, sorted(case.findings, key=finding_sort_key), plain, sources)
        _spreads(console, case.checks)
    _sources(console, sources)
    if len(report.cases) > 1:
        console.print()
        _cases_table(console, report, plain)
    if report.baseline:
        hidden = sum(case.baselined for case in report.cases)
        console.print()
        console.print(Text(f"{plural(hidden, 'known finding')} left out: recorded in the "
                           f"baseline {report.baseline}", style="dim"))
    console.print()
    # soft_wrap keeps the result on one line however narrow the terminal is, for grep.
    console.print(Text(summary_line(report, options.fail_on), style="bold"), soft_wrap=True)
    # rich pads every line to the full width; trailing blanks only clutter logs and diffs.
    return "\n".join(line.rstrip() for line in out.getvalue().splitlines()) + "\n"


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``text`` output format."""
    return [
        Reporter(
            name="text",
            description="Readable terminal report (default); plain ASCII without colour",
            render=render_text,
            suffix=".txt",
        )
    ]
