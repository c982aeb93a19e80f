"""The plots of the HTML checklist, read from the figure objects and the SVG.

No browser is needed: the bins are read from the plot data, the axes and tick labels
from the matplotlib figure that :func:`caselint.report.plots.draw` builds, and the text
of the SVG (kept as text). ``docs/render_checklist.py`` draws the same pages as pictures
for a person to look at.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from matplotlib import rc_context

from caselint.api import lint_case
from caselint.mesh.blocks import structured_hex, tetrahedralise, write_gmsh22
from caselint.model import Limits, PlotData, PlotSeries
from caselint.report.plots import STYLE, draw, log_ticks, plot_svg, tick_label


def _jittered_tets(path, n: int = 8, seed: int = 7):
    """A box of tetrahedra whose inner points are moved at random by up to a quarter of
    the spacing: angles and volume ratios spread as in a mesh nobody tuned for a test."""
    xs = np.linspace(0.0, 1.0, n + 1)
    mesh = tetrahedralise(structured_hex(xs, xs, xs))
    inner = np.all((mesh.points > 1e-9) & (mesh.points < 1 - 1e-9), axis=1)
    rng = np.random.default_rng(seed)
    mesh.points[inner] += rng.uniform(-0.25, 0.25, (int(inner.sum()), 3)) / n
    write_gmsh22(mesh, path)
    return path


@pytest.fixture(scope="module")
def tet_plots(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tets")
    mesh = _jittered_tets(folder / "box.msh")
    case = folder / "case.yaml"
    case.write_text(
        "caselint: 1\ncase: {name: Invented jittered box, safety: none}\n"
        f"mesh:\n  file: {mesh.name}\n  units: m\n"
        "  boundaries: {xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall,\n"
        "               zmax: wall}\n"
        "checks: {rule_sets: [general]}\n", encoding="utf-8")
    return {p.rule: p for p in lint_case(case).plots if p.kind != "cut"}


@pytest.mark.parametrize("rule", ["non-orthogonality", "growth-ratio"])
def test_histograms_of_a_jittered_mesh_have_at_least_ten_round_bins(tet_plots, rule):
    (series,) = tet_plots[rule].series
    widths = np.diff(series.x)
    assert len(series.y) >= 10
    assert widths == pytest.approx(np.full(len(widths), widths[0]))
    mantissa = widths[0] / 10 ** np.floor(np.log10(widths[0]))
    assert min(abs(mantissa - m) for m in (1, 2, 2.5, 5)) < 1e-9
    # the bins span the data: filled bins at both ends; at most the far 0.1 % of the
    # volume ratios (a long tail) is left outside, and counted
    total = sum(series.y) + series.below + series.above
    assert series.y[0] > 0 and series.y[-1] > 0 and series.below == 0
    assert series.above <= 0.001 * total + 1


def _yplus_plot() -> PlotData:
    edges = 10 ** (np.arange(32, 61) / 20)             # 20 bins a decade, 40 to 1000
    values = np.geomspace(45.0, 950.0, 500)
    return PlotData("y+ per wall boundary", "y+", "wall faces",
                    (PlotSeries.histogram(values[:200], edges, "floor"),
                     PlotSeries.histogram(values[200:], edges, "walls")),
                    limits=Limits(300.0, 500.0), x_log=True)


def _labels(axis) -> list[str]:
    return [t.get_text() for t in axis.get_ticklabels() if t.get_text()]


def test_log_axes_get_plain_number_ticks_and_the_legend_stands_beside_the_plot():
    with rc_context(STYLE):
        fig = draw(_yplus_plot())
        fig.draw_without_rendering()
    ax = fig.axes[0]
    assert ax.get_xscale() == "log"
    assert _labels(ax.xaxis) == ["50", "100", "200", "500", "1000"]
    assert all(re.fullmatch(r"[0-9.]+", label) for label in _labels(ax.yaxis))
    legend = ax.get_legend().get_window_extent()
    assert legend.x0 >= ax.get_window_extent().x1          # never over a bar
    # the limits are marked and the axis reaches them
    assert ax.get_xlim()[0] <= 40.0 and ax.get_xlim()[1] >= 1000.0


def test_the_svg_keeps_the_tick_labels_as_plain_text():
    svg = plot_svg(_yplus_plot(), "t-0")
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    assert {"50", "100", "200", "500", "1000"} <= set(texts)
    assert "mathdefault" not in svg and "10^" not in svg


def test_layer_numbers_are_whole_on_the_axis():
    plot = PlotData("Layer height", "layer", "height (m)",
                    (PlotSeries(tuple(float(k) for k in range(1, 20)),
                                tuple(0.02 * 1.2 ** k for k in range(19))),),
                    kind="line", y_log=True)
    with rc_context(STYLE):
        fig = draw(plot)
        fig.draw_without_rendering()
    ax = fig.axes[0]
    assert all(float(t).is_integer() for t in ax.get_xticks())
    assert _labels(ax.yaxis) and all(re.fullmatch(r"[0-9.]+", s) for s in _labels(ax.yaxis))


@pytest.mark.parametrize("lo, hi, expected", [
    (39.8, 1000.0, [50, 100, 200, 500, 1000]),
    (0.5, 2000.0, [1, 10, 100, 1000]),
    (300.0, 948.0, [300, 400, 500, 600, 700, 800, 900]),
    (31.0, 33.0, [31, 31.5, 32, 32.5, 33]),
])
def test_log_ticks_are_round_and_three_to_eight(lo, hi, expected):
    assert log_ticks(lo, hi) == pytest.approx(expected)
    assert [tick_label(v) for v in (300.0, 0.02, 1e7, 5e-4)] == ["300", "0.02", "1e7", "5e-4"]


def test_limits_far_from_the_data_are_named_not_drawn():
    # y+ 200-350 on a wall meant to be resolved (limits 1 and 5): lines at 1 and 5 would
    # squeeze the bins into the right tenth of the axis
    edges = 10 ** (np.arange(92, 103) / 40)             # 40 bins a decade, 200 to 355
    plot = PlotData("y+", "y+", "wall faces",
                    (PlotSeries.histogram(np.geomspace(200.0, 350.0, 100), edges),),
                    limits=Limits(1.0, 5.0), x_log=True)
    with rc_context(STYLE):
        fig = draw(plot)
        fig.draw_without_rendering()
    ax = fig.axes[0]
    assert ax.get_xlim()[0] > 150.0 and not ax.get_lines()
    assert "limits off the axis, to the left: warning 1, error 5" in [t.get_text()
                                                                      for t in ax.texts]
    assert "limits off the axis, to the left: warning 1, error 5" in plot_svg(plot, "t-1")
