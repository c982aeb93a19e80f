"""The ``html`` output format: the sign-off checklist as one self-contained web page.

The same content as the ``markdown`` format (see :mod:`caselint.report.signoff`), plus
the pictures the rules attached (histograms of non-orthogonality and growth ratio, y+ per
wall boundary, layer heights, Courant numbers: whichever the case's rules gave), drawn by
matplotlib as inline SVG and grouped per rule, one ``<section class="rule-figures">``
each, so a rule's figures stay together. Source keys ``[n]`` link to the list of sources
at the end. Styles are inline too: the file needs nothing else, prints cleanly, and the
same report gives the same bytes.
"""

from __future__ import annotations

from html import escape

from caselint.engine.hookspecs import hookimpl
from caselint.model import CaseReport, Report
from caselint.report import signoff
from caselint.report.base import RenderOptions, Reporter
from caselint.report.presentation import SourceKeys, in_summary_order, spread_sentence

_STYLE = """
body { font-family: system-ui, sans-serif; max-width: 60rem; margin: 1.5rem auto;
       padding: 0 1rem; color: #1d1d1f; line-height: 1.4; }
h1 { font-size: 1.5rem; } h2 { font-size: 1.25rem; margin-top: 2rem; }
h3 { font-size: 1.05rem; margin-top: 1.5rem; }
table { border-collapse: collapse; width: 100%; margin: 0.5rem 0; font-size: 0.9rem; }
th, td { border: 1px solid #c8c8cc; padding: 0.25rem 0.45rem; text-align: left;
         vertical-align: top; }
th { background: #f0f0f3; } td.num { text-align: right; white-space: nowrap; }
code { font-size: 0.85rem; word-break: break-all; }
.pass { color: #1e7b34; } .fail, .error { color: #b02a1e; font-weight: bold; }
.skipped { color: #8a6d00; } .waived { color: #7b2f87; }
.caution { border: 2px solid #b02a1e; background: #fff4f2; padding: 0.6rem 0.8rem; }
.sign td { height: 2.2rem; }
ul.checklist { list-style: none; padding-left: 0.3rem; }
figure { margin: 1rem 0; } figure svg { width: 100%; max-width: 46rem; height: auto; }
figcaption { font-size: 0.85rem; color: #555; }
.scope { font-size: 0.9rem; color: #333; border-left: 3px solid #c8c8cc;
         padding-left: 0.6rem; }
a.key { text-decoration: none; white-space: nowrap; }
.id, td.pass, td.fail, td.error, td.waived, td.skipped { white-space: nowrap; }
table.head td:first-child { white-space: nowrap; }
h4 { font-size: 0.95rem; margin: 1rem 0 0.3rem; }
footer { margin-top: 2rem; font-size: 0.85rem; color: #555; }
@media print { body { max-width: none; } h2 { page-break-before: always; } }
"""


def _e(text: object) -> str:
    return escape(str(text), quote=True)


def _table(head: tuple[str, ...], rows: list[list[str]], css: str = "") -> list[str]:
    """A table whose cells are given as ready HTML (escape before passing)."""
    out = [f'<table class="{css}">' if css else "<table>",
           "<tr>" + "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr>"]
    out += ["<tr>" + "".join(cell if cell.startswith("<td") else f"<td>{cell}</td>"
                             for cell in row) + "</tr>" for row in rows]
    return out + ["</table>"]


def _key(key: str) -> str:
    """A source key linking to its entry under Sources; nothing when there is none."""
    return f' <a class="key" href="#source-{_e(key[1:-1])}">{_e(key)}</a>' if key else ""


def _rule_figures(case: CaseReport, case_index: int, rule: str, first: int) -> list[str]:
    """One rule's figures, numbered from ``first`` within the case."""
    from caselint.report.plots import plot_svg

    out = [f'<section class="rule-figures" id="figures-{case_index}-{_e(rule)}">',
           f"<h4>{_e(rule)}</h4>"]
    plots = sorted((p for p in case.plots if p.rule == rule), key=lambda p: p.title)
    for index, plot in enumerate(plots, first):
        svg = plot_svg(plot, salt=f"caselint-{case_index}-{index}")
        out += [f'<figure id="plot-{case_index}-{index}">', svg,
                f"<figcaption>{_e(plot.title)} (rule {_e(plot.rule)})</figcaption>",
                "</figure>"]
    return out + ["</section>"]


def _plots(case: CaseReport, case_index: int) -> list[str]:
    """The pictures the rules attached, as inline SVG figures grouped per rule."""
    if not case.plots:
        return []
    from caselint.report.plots import matplotlib_available

    out = ["<h3>Distributions</h3>"]
    if not matplotlib_available():
        return out + ["<p>The rules attached plot data, but the plots were not drawn: "
                      "matplotlib is not installed (pip install matplotlib).</p>"]
    first = 0
    for rule in sorted({p.rule for p in case.plots}):
        out += _rule_figures(case, case_index, rule, first)
        first += sum(p.rule == rule for p in case.plots)
    return out


def _case(report: Report, case: CaseReport, index: int, stamp: str, tag: str,
          keys: SourceKeys) -> list[str]:
    sub = "h3" if tag == "h2" else "h2"
    out = [f'<section id="case-{index}">',
           f"<{tag}>Sign-off checklist: {_e(case.name or case.case)}</{tag}>"]
    if tag == "h1":         # the only case: what caselint is goes under its title
        out.append(_scope())
    rows = []
    for label, value in signoff.header_rows(report, case, stamp):
        cell = f"<code>{_e(value)}</code>" if "SHA-256" in label and "(" not in value \
            else _e(value)
        rows.append([_e(label), cell])
    out += _table(("Item", "Value"), rows, css="head")
    if signoff.relevant(case):
        out.append(f'<p class="caution"><strong>Safety-relevant case ({_e(case.safety)}).'
                   f"</strong> {_e(case.safety_note or signoff.SCOPE_NOTE)}</p>")
    out.append(f"<{sub}>Automated checks</{sub}>")
    checks = signoff.check_rows(report, case, keys)
    if checks:
        out += _table(("Rule", "Outcome", "Measured", "Limit", "Hint or reason"), [
            [f'<strong class="id">{_e(r.rule)}</strong>{_key(r.source)}<br>{_e(r.title)}',
             f'<td class="{_e(r.outcome)}">{_e(r.label)}</td>',
             f'<td class="num">{_e(r.measured)}</td>', f'<td class="num">{_e(r.limit)}</td>',
             _e(r.hint)] for r in checks])
    else:
        out.append("<p>No rules were selected for this case.</p>")
    out.append(f"<{sub}>Findings</{sub}>")
    findings = signoff.finding_lines(case)
    if findings:
        out.append("<ul>")
        for finding, where in findings:
            tag_text = ("waived " if finding.waived else "") + finding.severity
            waiver = f"; {_e(finding.waiver)}" if finding.waived and finding.waiver else ""
            css = "waived" if finding.waived else ("fail" if finding.severity != "note" else "")
            out.append(f'<li><span class="{css}">{_e(tag_text)}</span> '
                       f"<strong>{_e(finding.rule)}</strong>: {_e(finding.message)} "
                       f"({_e(where)}){waiver}{_key(keys.cite(finding))}</li>")
        out.append("</ul>")
    else:
        out.append("<p>No findings.</p>")
    spreads = [(c.rule, spread_sentence(c, d)) for c in in_summary_order(case.checks)
               for d in c.distributions]
    if spreads:
        out.append(f"<{sub}>Spread over the mesh</{sub}>")
        out += ["<ul>", *(f"<li><strong>{_e(rule)}</strong> {_e(text)}</li>"
                          for rule, text in spreads), "</ul>"]
    out += _plots(case, index)
    out.append(f"<{sub}>Waivers</{sub}>")
    if case.waivers:
        out += _table(("Rule", "Scope", "Reason", "Approved by", "Expires", "Status"), [
            [_e(w.rule), _e(signoff.waiver_scope(w)), _e(w.reason), _e(w.approved_by),
             _e(w.expires), f'<td class="{"fail" if w.expired else "pass"}">'
                            f"{_e(signoff.waiver_status(w))}</td>"] for w in case.waivers])
    else:
        out.append("<p>The case file has no waivers.</p>")
    out.append(f"<{sub}>Manual checks</{sub}>")
    if case.checklist:
        out.append('<ul class="checklist">')
        for item in case.checklist:
            box_id = f"check-{index}-{_e(item.id)}"
            out.append(f'<li><input type="checkbox" id="{box_id}"> <label for="{box_id}">'
                       f"{_e(item.text)} ({_e(item.id)}, rule set {_e(item.rule_set)})"
                       "</label></li>")
        out.append("</ul>")
    else:
        out.append("<p>The rule sets used list no manual checks.</p>")
    out.append(f"<{sub}>Sign-off</{sub}>")
    out += _table(("Role", "Name", "Signature", "Date"),
                  [[_e(line.role), _e(line.name), "", ""]
                   for line in signoff.sign_off_lines(case)], css="sign")
    return out + ["</section>"]


def _summary(report: Report) -> list[str]:
    rows = []
    for index, case in enumerate(report.cases):
        counts = signoff.outcome_counts(case)
        rows.append([f'<a href="#case-{index}">{_e(case.name or case.case)}</a>',
                     f"<code>{_e(case.case)}</code>",
                     *(f'<td class="num">{counts[o]}</td>' for o in signoff.COUNT_TITLES),
                     _e(signoff.worst_open(case))])
    return ["<h2>Summary</h2>", *_table(("Case", "File", *signoff.COUNT_TITLES.values(),
                                         "Worst open finding"), rows)]


def _scope() -> str:
    return f'<p class="scope">{_e(signoff.SCOPE_NOTE)}</p>'


def _sources(keys: SourceKeys) -> list[str]:
    """Each rule's sources once, as the targets of the keys."""
    entries = keys.entries()
    if not entries:
        return []
    out = ["<h2>Sources</h2>", '<ul class="sources">']
    out += [f'<li id="source-{_e(key[1:-1])}">{_e(key)} <strong>{_e(rule)}</strong>: '
            f"{_e(source)}</li>" for key, rule, source in entries]
    return out + ["</ul>"]


def render_html(report: Report, options: RenderOptions) -> str:
    """The sign-off checklist of every case in the report, as one self-contained page."""
    several = len(report.cases) > 1
    title = ("caselint sign-off checklists" if several or not report.cases
             else f"caselint sign-off checklist: {report.cases[0].name or report.cases[0].case}")
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>{_e(title)}</title>", f"<style>{_STYLE}</style>", "</head>", "<body>"]
    if several or not report.cases:
        out += [f"<h1>{_e(title)}</h1>", _scope()]
    if several:
        out += _summary(report)
    if not report.cases:
        out.append("<p>No case files were checked.</p>")
    keys = SourceKeys()
    for index, case in enumerate(report.cases):
        out += _case(report, case, index, options.stamp, "h2" if several else "h1", keys)
    out += _sources(keys)
    out += [f"<footer><p>caselint {_e(report.caselint_version)}</p></footer>", "</body>",
            "</html>"]
    return "\n".join(out) + "\n"


@hookimpl
def caselint_register_reporters() -> list[Reporter]:
    """Register the ``html`` output format."""
    return [
        Reporter(
            name="html",
            description="Sign-off checklist with plots, one self-contained HTML file",
            render=render_html,
            suffix=".html",
        )
    ]
