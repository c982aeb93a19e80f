"""Data a rule attaches for the review reports to draw: histograms, lines and plane cuts
through the mesh (reporters compute nothing)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

from caselint.values import Limits, Worse


@dataclass(frozen=True)
class PlotSeries:
    """One data series of a plot: a histogram's bin edges and counts, or a line's points.

    For a histogram ``x`` holds the n+1 increasing bin edges and ``y`` the n counts;
    ``below`` and ``above`` count the values outside the edges, so nothing is hidden.
    For a line ``x`` and ``y`` are the points. ``label`` names the series (a boundary).
    For a cut, a series is one cell's polygon (``x``, ``y`` in the plane's axes, m) with
    the measured ``value`` it is coloured by, or a wall's trace (a line, no value).
    """

    x: tuple[float, ...]
    y: tuple[float, ...]
    label: str = ""
    below: int = 0
    above: int = 0
    value: float | None = None

    def __post_init__(self) -> None:
        values = (*self.x, *self.y, *(() if self.value is None else (self.value,)))
        if not all(math.isfinite(v) for v in values):
            raise ValueError(f"plot series {self.label!r} holds a non-finite number")
        if self.below < 0 or self.above < 0:
            raise ValueError(f"plot series {self.label!r}: counts outside the edges are >= 0")

    @classmethod
    def histogram(cls, values: Any, edges: Any, label: str = "") -> "PlotSeries":
        """Count finite ``values`` into bins between ``edges`` (numpy, no loop over values)."""
        import numpy as np

        values = np.asarray(values, dtype=np.float64).ravel()
        finite = np.isfinite(values)
        values = values if finite.all() else values[finite]   # no copy of a sound metric
        edges = np.asarray(edges, dtype=np.float64)
        counts, _ = np.histogram(values, bins=edges)
        return cls(x=tuple(float(e) for e in edges), y=tuple(float(c) for c in counts),
                   label=label, below=int(np.count_nonzero(values < edges[0])),
                   above=int(np.count_nonzero(values > edges[-1])))


def log_bin_edges(values: Any, per_decade: int | None = None) -> Any:
    """Log-spaced histogram edges chosen from the data: see :func:`caselint.bins.log_bin_edges`
    (imported when called, so that importing the model does not import numpy)."""
    from caselint.bins import log_bin_edges as edges

    return edges(values, per_decade)


@dataclass(frozen=True)
class PlotData:
    """Data a rule attaches for the review reports to draw (reporters compute nothing).

    ``kind`` is ``"histogram"`` (each series: bin edges and counts), ``"line"`` (each
    series: points, e.g. layer height against layer number) or ``"cut"`` (each series a
    cell's polygon on a plane through the worst place, coloured by its value, which
    ``value_label`` names; ``walls`` the traces of no-slip walls on the plane;
    ``highlight`` the index of the worst cell's polygon). ``limits`` (with
    ``worse``), when given, are drawn as marks on the x axis of a histogram. ``rule`` is
    filled in by the engine with the id of the rule that attached the plot.
    """

    title: str
    x_label: str
    y_label: str
    series: tuple[PlotSeries, ...]
    kind: Literal["histogram", "line", "cut"] = "histogram"
    limits: Limits | None = None
    worse: Worse = "higher"
    x_log: bool = False
    y_log: bool = False
    rule: str = ""
    walls: tuple[PlotSeries, ...] = ()
    highlight: int | None = None
    value_label: str = ""

    def __post_init__(self) -> None:
        if self.kind not in ("histogram", "line", "cut"):
            raise ValueError(f"plot kind must be 'histogram', 'line' or 'cut', got "
                             f"{self.kind!r}")
        if self.kind == "cut" and any(len(s.x) != len(s.y) or len(s.x) < 3 or s.value is None
                                      for s in self.series):
            raise ValueError(f"plot {self.title!r}: each cut polygon needs 3 or more corners "
                             "and a value")
        if self.highlight is not None and not 0 <= self.highlight < len(self.series):
            raise ValueError(f"plot {self.title!r}: highlight {self.highlight} is not a series")
        if not self.series:
            raise ValueError(f"plot {self.title!r} has no series")
        for s in self.series:
            if self.kind == "line" and len(s.x) != len(s.y):
                raise ValueError(f"plot {self.title!r}: series {s.label!r} has {len(s.x)} x "
                                 f"and {len(s.y)} y values")
            if self.kind == "histogram" and (len(s.x) != len(s.y) + 1 or len(s.y) < 1
                                             or any(b <= a for a, b in zip(s.x, s.x[1:]))):
                raise ValueError(f"plot {self.title!r}: series {s.label!r} needs n >= 1 counts "
                                 f"and n + 1 increasing edges, got {len(s.y)} and {len(s.x)}")
