"""Plots of the review report: a rule's :class:`~caselint.model.PlotData` drawn as inline SVG.

matplotlib is imported only when a plot is drawn, through its object interface (no
pyplot, no global backend switch, so nothing opens a window). The SVG is made stable: no
date in its metadata, element ids salted and prefixed with a fixed string per plot
(distinct plots in one page get distinct ids), and text kept as text rather than glyph
paths, so the same report gives the same bytes and the page stays small and searchable.

Logarithmic axes (y+, Courant numbers, counts spanning decades) get ticks at 1, 2 and 5
times powers of ten, or at every whole multiple on an axis shorter than about a decade
and a half, labelled as plain numbers (``300``, ``0.02``), never as powers in small type.
"""

from __future__ import annotations

import io
import math
import re
import warnings
from typing import TYPE_CHECKING

from caselint.bins import nice_step
from caselint.model import PlotData
from caselint.wording import format_number

if TYPE_CHECKING:
    from matplotlib.figure import Figure

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
    far = []
    for value, colour, grade in _limit_marks(plot):
        if _near(plot, value):
            ax.axvline(value, color=colour, linestyle="--", linewidth=1.2,
                       label=f"{grade} limit {format_number(value)}")
        else:
            far.append(f"{grade} {format_number(value)}")
    notes = []
    outside = _outside_text(plot)
    if outside:
        notes.append(f"outside the bins: {outside}")
    if far:
        side = "left" if all(v < plot.series[0].x[0] for v, _, _ in _limit_marks(plot)
                             if not _near(plot, v)) else "right"
        notes.append(f"limits off the axis, to the {side}: {', '.join(far)}")
    if notes:
        # headroom above the highest bar, so the note never covers one
        top = max((c for s in plot.series for c in s.y), default=1.0) or 1.0
        rows = len(notes)
        ax.set_ylim(top=top * (4.0 ** rows if log_counts else 1.0 + 0.12 * rows))
        ax.text(0.99, 0.97, "\n".join(notes), transform=ax.transAxes, ha="right", va="top",
                fontsize=7)


def _limit_marks(plot: PlotData) -> list[tuple[float, str, str]]:
    """(value, colour, grade) of each limit to mark on a histogram."""
    limits = plot.limits
    if limits is None:
        return []
    return [(value, colour, grade) for value, colour, grade in
            ((limits.warn, WARN_COLOUR, "warning"), (limits.error, ERROR_COLOUR, "error"))
            if value is not None]


def _near(plot: PlotData, value: float) -> bool:
    """True when a limit lies within one span of the bins on either side (in the axis's
    own scale): a limit further away would squeeze the bins into a sliver of the axis,
    so it is named in words instead."""
    lo = min(s.x[0] for s in plot.series)
    hi = max(s.x[-1] for s in plot.series)
    if plot.x_log and lo > 0:
        if value <= 0:
            return False
        lo, hi, value = math.log10(lo), math.log10(hi), math.log10(value)
    span = hi - lo
    return lo - span <= value <= hi + span


def _draw_line(plot: PlotData, ax) -> None:
    for i, s in enumerate(plot.series):
        ax.plot(s.x, s.y, "o-", markersize=3, color=SERIES_COLOURS[i % len(SERIES_COLOURS)],
                label=s.label or None)
    if plot.y_log and all(v > 0 for s in plot.series for v in s.y):
        ax.set_yscale("log")
    if all(float(v).is_integer() for s in plot.series for v in s.x):
        from matplotlib.ticker import MaxNLocator

        ax.xaxis.set_major_locator(MaxNLocator(integer=True))   # layer 3, not 2.5


#: Multiples of a power of ten tried for log-axis ticks, coarsest first.
LOG_TICK_MULTIPLES = ((1,), (1, 2, 5), (1, 2, 3, 4, 5, 6, 7, 8, 9))
#: Fewest and most labelled ticks on an axis.
MIN_TICKS, MAX_TICKS = 3, 8


def _draw_cut(plot: PlotData, ax, fig) -> None:
    """Cell polygons coloured by their value (a colour bar beside), the worst outlined in
    red, wall traces in black, equal scales on both axes."""
    from matplotlib.collections import LineCollection, PolyCollection

    polygons = [list(zip(s.x, s.y)) for s in plot.series]
    values = [s.value for s in plot.series]
    cells = PolyCollection(polygons, array=values, cmap="viridis", edgecolors="0.35",
                           linewidths=0.3)
    ax.add_collection(cells)
    bar = fig.colorbar(cells, ax=ax, shrink=0.85)
    bar.ax.tick_params(labelsize=7)
    bar.set_label(plot.value_label, fontsize=8)
    if plot.walls:
        ax.add_collection(LineCollection([list(zip(w.x, w.y)) for w in plot.walls],
                                         colors="black", linewidths=1.6, label="wall"))
    if plot.highlight is not None:
        worst = plot.series[plot.highlight]
        ax.fill(worst.x, worst.y, facecolor="none", edgecolor="#d62728", linewidth=2.0,
                label="worst cell")
    ax.autoscale_view()
    ax.set_aspect("equal", adjustable="datalim")


def tick_label(value: float) -> str:
    """A tick value as a plain number: ``300``, ``0.02``; ``1e7`` beyond a million."""
    if value == 0 or 1e-3 <= abs(value) < 1e6:
        return f"{value:.6g}"
    return f"{value:.0e}".replace("e+0", "e").replace("e+", "e").replace("e-0", "e-")


def log_ticks(lo: float, hi: float) -> list[float]:
    """Tick values for a log axis from ``lo`` to ``hi`` (> 0): the coarsest multiples of
    powers of ten giving at least MIN_TICKS, thinned to at most MAX_TICKS; round values
    evenly spaced where the axis is too short for that."""
    first, last = math.floor(math.log10(lo)), math.ceil(math.log10(hi))
    for multiples in LOG_TICK_MULTIPLES:
        ticks = [m * 10.0 ** k for k in range(first, last + 1) for m in multiples
                 if lo * (1 - 1e-9) <= m * 10.0 ** k <= hi * (1 + 1e-9)]
        if len(ticks) >= MIN_TICKS:
            keep = math.ceil(len(ticks) / MAX_TICKS)
            return ticks[::keep]
    step = nice_step(hi - lo, MIN_TICKS)
    return [k * step for k in range(math.ceil(lo / step), math.floor(hi / step) + 1)]


def _readable_log_axis(axis, lo: float, hi: float) -> None:
    """Plain-number ticks on a log axis (see :func:`log_ticks`), unlabelled minor ticks."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, LogLocator, NullFormatter

    axis.set_major_locator(FixedLocator(log_ticks(lo, hi)))
    axis.set_major_formatter(FuncFormatter(lambda value, _: tick_label(value)))
    axis.set_minor_locator(LogLocator(subs="auto"))
    axis.set_minor_formatter(NullFormatter())


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


def draw(plot: PlotData) -> "Figure":
    """The plot as a matplotlib Figure (object interface, no pyplot); call within
    :data:`STYLE`, as :func:`plot_svg` does, for the layout the page shows."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(6.4, 4.4 if plot.kind == "cut" else 3.4), layout="constrained")
    ax = fig.add_subplot()
    if plot.kind == "histogram":
        _draw_histogram(plot, ax)
    elif plot.kind == "cut":
        _draw_cut(plot, ax, fig)
    else:
        _draw_line(plot, ax)
    # A log axis needs positive values; with any other the plot stays linear, not blank.
    if plot.x_log and all(v > 0 for s in plot.series for v in s.x):
        ax.set_xscale("log")
        _readable_log_axis(ax.xaxis, *ax.get_xlim())
    if ax.get_yscale() == "log":
        _readable_log_axis(ax.yaxis, *ax.get_ylim())
    ax.set_title(plot.title, fontsize=10)
    ax.set_xlabel(plot.x_label, fontsize=9)
    ax.set_ylabel(plot.y_label, fontsize=9)
    ax.grid(True, alpha=0.3)
    if ax.get_legend_handles_labels()[1] and plot.kind == "cut":
        # below the axes: the colour bar takes the side
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=2,
                  borderaxespad=0.0)
    elif ax.get_legend_handles_labels()[1]:
        # beside the axes, never over a bar or a line
        ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
    return fig


#: matplotlib settings of every plot: DejaVu Sans ships with matplotlib, so text metrics
#: (and the layout) are the same on every machine; text stays text in the SVG.
STYLE = {"svg.fonttype": "none", "font.family": "DejaVu Sans"}


def plot_svg(plot: PlotData, salt: str) -> str:
    """The plot as an ``<svg>`` element for inlining in HTML (no XML prolog).

    ``salt`` (letters, digits, ``-``) prefixes the SVG's element ids, so they are unique
    within the page and the same from run to run.
    """
    from matplotlib import rc_context

    out = io.StringIO()
    with warnings.catch_warnings(), rc_context({**STYLE, "svg.hashsalt": salt}):
        warnings.simplefilter("ignore")   # layout notes must not reach the user's terminal
        draw(plot).savefig(out, format="svg", metadata={"Date": None})
    text = out.getvalue()
    return _prefix_ids(text[text.index("<svg"):].strip(), salt)
