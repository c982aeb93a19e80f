"""The html sign-off checklist: self-contained, every check, the plots, caution and waivers."""

from __future__ import annotations

import re
from html.parser import HTMLParser

from review_samples import (  # noqa: F401
    CAUTION,
    HOOD_SHA,
    TEST_SET,
    review_formats,
    sample_report,
)
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.report.base import RenderOptions
from caselint.report.html import caselint_register_reporters, render_html
from caselint.report.plots import plot_svg

VOID = {"meta", "input", "br"}


class _Tags(HTMLParser):
    """Records every tag, the open-tag stack and any resource the page would fetch."""

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.fetches: list[str] = []
        self.cells: list[str] = []
        self._in_cell = False

    def handle_starttag(self, tag, attrs):
        for name, value in attrs:
            if name in ("src", "href") and value and not value.startswith("#"):
                self.fetches.append(value)
        if tag == "td":
            self._in_cell, self.cells = True, self.cells + [""]
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        pass  # <path ... /> inside SVG: opens and closes

    def handle_endtag(self, tag):
        if tag == "td":
            self._in_cell = False
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
            return
        self.stack.pop()

    def handle_data(self, data):
        if self._in_cell:
            self.cells[-1] += data


def _parse(text: str) -> _Tags:
    parser = _Tags()
    parser.feed(text)
    parser.close()
    return parser


def test_page_is_well_formed_and_self_contained():
    text = render_html(sample_report(), RenderOptions())
    parsed = _parse(text)
    assert parsed.errors == [] and parsed.stack == []
    assert parsed.fetches == []          # no script, stylesheet or image is fetched
    assert "<script" not in text and "<style>" in text
    assert text.startswith("<!DOCTYPE html>")


def test_every_check_shows_its_outcome_and_measured_value():
    text = render_html(sample_report(), RenderOptions())
    hood = text.split('<section id="case-1">')[0]
    expected = (("inverted-cells", "FAIL (error)", "3 cells", "<= 0 cells"),
                ("time-step", "FAIL (error)", "0.5 s", "<= 0.1 s"),
                ("non-orthogonality", "FAIL (warning)", "72.5 deg", "<= 70 deg"),
                ("gap-cells", "RULE FAULT", "-", "-"),
                ("aspect-ratio", "waived (warning)", "1200", "<= 1000"),
                ("growth-ratio", "pass", "1.18", "<= 1.3"),
                ("wall-yplus", "not checked", "-", "-"))
    for rule, outcome, measured, limit in expected:
        row = re.search(rf"<tr><td><strong class=\"id\">{rule}</strong>.*?</tr>", hood)
        assert row, rule
        cells = _parse(row.group(0)).cells
        assert cells[1:4] == [outcome, measured, limit], rule
    # failures first (errors, then warnings), rule faults, waived, passed, not checked
    order = [hood.index(f'<tr><td><strong class="id">{rule}</strong>') for rule, *_ in expected]
    assert order == sorted(order)


def test_plots_are_inline_svg_with_titles_and_limit_marks():
    text = render_html(sample_report(), RenderOptions())
    # the hood attached two plots (a histogram and a line), the duct none
    assert text.count("<svg") == text.count("</svg>") == 2
    assert text.count("<figure") == 2
    assert "<figcaption>Face non-orthogonality (rule non-orthogonality)</figcaption>" in text
    assert "<figcaption>First-layer height along the stack (rule layer-profile)</figcaption>" \
        in text
    # svg.fonttype none keeps labels as text: the limit marks and the overflow count are there
    assert "warning limit 70" in text and "error limit 85" in text
    assert "outside the bins: 2 above 90" in text
    assert "<?xml" not in text       # inline SVG carries no XML prolog


def test_plot_svg_is_stable_and_salted_per_plot():
    plot = sample_report().cases[0].plots[0]
    first = plot_svg(plot, "s-0")
    assert plot_svg(plot, "s-0") == first
    ids = set(re.findall(r'id="([^"]+)"', first))
    other = set(re.findall(r'id="([^"]+)"', plot_svg(plot, "s-1")))
    assert ids and not ids & other   # two plots in one page never share an element id
    assert "dc:date" not in first


def test_safety_caution_waivers_checklist_and_sign_off():
    text = render_html(sample_report(), RenderOptions())
    hood, duct = text.split('<section id="case-1">')
    assert '<p class="caution"><strong>Safety-relevant case (fire-smoke).</strong> ' \
        + CAUTION in hood.replace("&#x27;", "'")
    assert 'class="caution"' not in duct
    assert "R. Quill" in hood and "2031-01-01" in hood and "in force, used" in hood
    assert '<td class="fail">EXPIRED on 2020-06-30: covers nothing</td>' in hood
    assert "legacy block at the duct bend" in hood and "P. Anand" in hood
    assert hood.count('type="checkbox"') == 2
    assert f"<code>{HOOD_SHA}</code>" in hood
    for role, name in (("Prepared by", "I. Marchetti"), ("Reviewed by", "K. Brandvold"),
                       ("Approved", "S. Okafor")):
        assert f"<tr><td>{role}</td><td>{name}</td><td></td><td></td></tr>" in hood


def test_date_only_when_stamped_and_output_is_stable():
    report = sample_report()
    plain = render_html(report, RenderOptions())
    assert render_html(report, RenderOptions()) == plain
    assert "<td>Date</td>" not in plain
    stamped = render_html(report, RenderOptions(stamp="2031-05-04"))
    assert stamped.count("<td>Date</td><td>2031-05-04</td>") == 2


def test_case_text_is_escaped():
    from dataclasses import replace

    report = sample_report()
    hood = replace(report.cases[0], name="<script>alert(1)</script> & co")
    text = render_html(replace(report, cases=(hood,)), RenderOptions())
    assert "<script>" not in text and "&lt;script&gt;alert(1)&lt;/script&gt; &amp; co" in text


def test_registers_the_html_format():
    (reporter,) = caselint_register_reporters()
    assert (reporter.name, reporter.suffix) == ("html", ".html")


def test_end_to_end_histograms_of_a_real_mesh(tmp_path, review_formats):  # noqa: F811
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_case(tmp_path, mesh, name="Invented duct with a jump")
    out = tmp_path / "review.html"
    code, stdout, err = run_cli("check", *TEST_SET, str(case), "--format", "html", "--output", str(out))
    assert (code, stdout) == (1, ""), err
    text = out.read_text(encoding="utf-8")
    assert _parse(text).errors == []
    # non-orthogonality and growth ratio each attach one histogram; the failing growth
    # ratio a cut through its worst cell
    assert text.count("<svg") == 3
    assert "Growth ratio: cells around the worst, cut at" in text
    assert "<figcaption>Growth (size) ratio (rule growth-ratio)</figcaption>" in text
    assert "<figcaption>Face non-orthogonality (rule non-orthogonality)</figcaption>" in text
    assert "error limit 3" in text and "warning limit 2" in text


def test_end_to_end_safety_case_shows_caution_and_both_waivers(tmp_path,
                                                                review_formats):  # noqa: F811
    from review_samples import write_review_case

    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_review_case(tmp_path, mesh)
    code, text, err = run_cli("check", *TEST_SET, str(case), "--format", "html")
    assert code == 1, err
    assert '<p class="caution"><strong>Safety-relevant case (fire-smoke).</strong>' in text
    assert "licensed professional engineer" in text
    assert "<td>Purpose</td><td>Smoke extract duct of an invented kiln hall</td>" in text
    assert '<td class="fail">EXPIRED on 2020-01-31: covers nothing</td>' in text
    assert '<td class="pass">in force, not used by this run</td>' in text
    assert "jump kept from the legacy model" in text and "P. Anand" in text
    assert text.count('type="checkbox"') == 3      # the general rule set's manual checks
    assert "<tr><td>Approved</td><td>S. Okafor</td><td></td><td></td></tr>" in text
