"""Plots of the review report: a rule's :class:`~caselint.model.PlotData` drawn as inline SVG.

matplotlib is imported only when a plot is drawn, through its object interface (no
pyplot, no global backend switch, so nothing opens a window). The SVG is made stable: no
date in its metadata, element ids salted and prefixed with a fixed string per plot
(distinct plots in one page get distinct ids), and text kept as text rather than glyph
paths, so the same report gives the same bytes and the page stays small and searchable.
"""

from __future__ import annotations

import io
import re
import warnings

from caselint.model import PlotData
from caselint.wording import format_number

#: Colours of the limit marks (warning, error) and of up to six series.
WARN_COLOUR, ERROR_COLOUR = "#d08c00", "#c0392b"
SERIES_COLOURS = ("#2f6db5", "#2a9d8f", "#8e5ea2", "#e76f51", "#6c757d", "#b5838d")
#: A histogram whose counts span more than this factor gets a log count axis, so the few
#: faces past a limit stay visible beside the many good ones.
LOG_COUNT_SPAN = 100.0


def matplotlib_available() -> bool:
    """True when matplotlib can be imported."""
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return False
    return True


def _outside_text(plot: PlotData) -> str:
    """``3 values above 90`` for each series with values outside its bins."""
    parts = []
    for s in plot.series:
        name = f"{s.label}: " if s.label and len(plot.series) > 1 else ""
        if s.below:
            parts.append(f"{name}{s.below} below {format_number(s.x[0])}")
        if s.above:
            parts.append(f"{name}{s.above} above {format_number(s.x[-1])}")
    return "; ".join(parts)


def _wants_log_counts(plot: PlotData) -> bool:
    counts = [c for s in plot.series for c in s.y if c > 0]
    return plot.y_log or (bool(counts) and max(counts) / min(counts) > LOG_COUNT_SPAN)


def _draw_histogram(plot: PlotData, ax) -> None:
    single = len(plot.series) == 1
    log_counts = _wants_log_counts(plot)
    for i, s in enumerate(plot.series):
        colour = SERIES_COLOURS[i % len(SERIES_COLOURS)]
        # A log count axis cannot fill down to zero; 0.5 sits just below a count of one.
        ax.stairs(s.y, s.x, fill=single, baseline=0.5 if log_counts else 0.0,
                  color=colour, alpha=0.8 if single else 1.0, label=s.label or None)
    if log_counts:
        ax.set_yscale("log")
        ax.set_ylim(bottom=0.5)
    limits = plot.limits
    if limits is not None:
        for value, colour, grade in ((limits.warn, WARN_COLOUR, "warning"),
                                     (limits.error, ERROR_COLOUR, "error")):
            if value is not None:
                ax.axvline(value, color=colour, linestyle="--", linewidth=1.2,
                           label=f"{grade} limit {format_number(value)}")
    outside = _outside_text(plot)
    if outside:
        ax.text(0.99, 0.97, f"outside the bins: {outside}", transform=ax.transAxes,
                ha="right", va="top", fontsize=7)


def _draw_line(plot: PlotData, ax) -> None:
    for i, s in enumerate(plot.series):
        ax.plot(s.x, s.y, "o-", markersize=3, color=SERIES_COLOURS[i % len(SERIES_COLOURS)],
                label=s.label or None)
    if plot.y_log and all(v > 0 for s in plot.series for v in s.y):
        ax.set_yscale("log")


def _prefix_ids(svg: str, prefix: str) -> str:
    """Every element id, and every reference to one, prefixed: several SVGs inlined in one
    page must not share ids (matplotlib numbers its groups ``figure_1``, ``axes_1``...)."""
    ids = set(re.findall(r'\bid="([^"]+)"', svg))

    def ref(match: re.Match[str]) -> str:
        target = match.group(2)
        return f"{match.group(1)}{prefix}-{target}" if target in ids else match.group(0)

    svg = re.sub(r'(\bid=")([^"]+)(?=")', ref, svg)
    svg = re.sub(r"(url\(#)([^)]+)(?=\))", ref, svg)
    return re.sub(r'((?:xlink:)?href="#)([^"]+)(?=")', ref, svg)


def plot_svg(plot: PlotData, salt: str) -> str:
    """The plot as an ``<svg>`` element for inlining in HTML (no XML prolog).

    ``salt`` (letters, digits, ``-``) prefixes the SVG's element ids, so they are unique
    within the page and the same from run to run.
    """
    from matplotlib import rc_context
    from matplotlib.figure import Figure

    # DejaVu Sans ships with matplotlib, so text metrics (and the layout) are the same on
    # every machine.
    style = {"svg.hashsalt": salt, "svg.fonttype": "none", "font.family": "DejaVu Sans"}
    out = io.StringIO()
    with warnings.catch_warnings(), rc_context(style):
        warnings.simplefilter("ignore")   # layout notes must not reach the user's terminal
        fig = Figure(figsize=(6.4, 3.4), layout="constrained")
        ax = fig.add_subplot()
        if plot.kind == "histogram":
            _draw_histogram(plot, ax)
        else:
            _draw_line(plot, ax)
        # A log axis needs positive values; with any other the plot stays linear, not blank.
        if plot.x_log and all(v > 0 for s in plot.series for v in s.x):
            ax.set_xscale("log")
        ax.set_title(plot.title, fontsize=10)
        ax.set_xlabel(plot.x_label, fontsize=9)
        ax.set_ylabel(plot.y_label, fontsize=9)
        ax.grid(True, alpha=0.3)
        if ax.get_legend_handles_labels()[1]:
            ax.legend(fontsize=7, loc="best")
        fig.savefig(out, format="svg", metadata={"Date": None})
    text = out.getvalue()
    return _prefix_ids(text[text.index("<svg"):].strip(), salt)
