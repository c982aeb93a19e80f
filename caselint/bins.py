"""Histogram bin edges chosen from the data, for the plots rules attach to their results.

A reviewer reads a histogram for its shape: where the bulk sits and how far the tail
reaches towards a limit. So the bins span the data, not a fixed range, and there are at
least :data:`MIN_BINS` of them wherever the spread of the values allows (a uniform mesh
whose faces are all orthogonal has one bar, and says so). Linear bins have widths of 1,
2, 2.5 or 5 times a power of ten, so their edges read as round numbers; logarithmic bins
(for values that span decades: y+, Courant numbers) are whole fractions of a decade.

A far tail (the last 0.1 % of a large sample lying further out than the whole bulk is
wide) would squeeze the bulk into one or two bins; such a tail is cut at the first limit
beyond the bulk (or at the bulk), and counted beside the plot as outside the bins
(:attr:`caselint.model.PlotSeries.above`), so nothing is hidden.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

#: Fewest bins drawn across the data, wherever its spread allows.
MIN_BINS = 10
#: Most bins: past this the bars of a 6.4-inch-wide plot get thinner than a line.
MAX_BINS = 40
#: Bin widths, as multiples of a power of ten.
NICE_STEPS = (1.0, 2.0, 2.5, 5.0)
#: Divisions of a decade tried for logarithmic bins, finest last.
DECADE_DIVISIONS = (1, 2, 4, 5, 10, 20, 50, 100)
#: Samples below this size are never cut: every value is in a bin.
TAIL_SAMPLE = 1000
#: The quantiles that bound the bulk of a large sample.
BULK_QUANTILES = (0.001, 0.999)


def _finite(values: Any) -> np.ndarray:
    values = np.asarray(values, dtype=np.float64).ravel()
    finite = np.isfinite(values)
    return values if finite.all() else values[finite]     # no copy of a sound metric


def nice_step(span: float, bins: int = MIN_BINS) -> float:
    """The widest round bin width (1, 2, 2.5 or 5 times a power of ten) that gives at
    least ``bins`` bins across ``span`` (> 0)."""
    raw = span / bins
    power = 10.0 ** math.floor(math.log10(raw))
    return max(m * power for m in NICE_STEPS if m * power <= raw * (1 + 1e-12))


def _coarser(step: float) -> float:
    """The next round bin width above ``step``."""
    power = 10.0 ** math.floor(math.log10(step) + 1e-12)
    return min((m * power for m in (*NICE_STEPS, 10.0) if m * power > step * (1 + 1e-12)))


def _bulk(values: np.ndarray, limits: tuple[float, ...]) -> tuple[float, float, float]:
    """The range the bins cover (the data's, with a far tail cut, see the module) and the
    width of the bulk of the values, which sets the bin width."""
    lo, hi = float(values.min()), float(values.max())
    if values.size < TAIL_SAMPLE:
        return lo, hi, hi - lo
    q_lo, q_hi = (float(q) for q in np.quantile(values, BULK_QUANTILES))
    width = q_hi - q_lo
    # a far tail is cut at the first limit beyond the bulk (the values past it are what
    # the findings are about, and are counted), else at the bulk
    if hi - q_hi > width:
        hi = min([v for v in limits if q_hi < v < hi] or [q_hi])
    if q_lo - lo > width:
        lo = max([v for v in limits if lo < v < q_lo] or [q_lo])
    return lo, hi, width


def linear_bin_edges(values: Any, *, resolution: float = 0.0, limits: Any = None,
                     integer: bool = False) -> np.ndarray:
    """Bin edges across the finite ``values``: round widths, :data:`MIN_BINS` to
    :data:`MAX_BINS` bins where the spread allows.

    ``resolution`` is the narrowest width worth drawing for the quantity (0.5 deg of
    non-orthogonality); ``integer`` values (cell counts) get bins of whole numbers
    centred on them. ``limits`` (a :class:`~caselint.model.Limits` or None) keep a far
    tail in the bins up to the limits.
    """
    data = _finite(values)
    marks = tuple(v for v in (getattr(limits, "warn", None), getattr(limits, "error", None))
                  if v is not None and math.isfinite(v))
    if data.size == 0:
        data = np.asarray(marks or (0.0, 1.0), dtype=np.float64)
    lo, hi, bulk = _bulk(data, marks)
    floor = max(resolution, 1.0 if integer else 0.0)
    scale = max(abs(lo), abs(hi))
    if hi - lo <= scale * 1e-9:
        # one value (up to round-off): one bin holds it, as wide as the resolution if given
        step = floor or nice_step(scale * 0.1 if scale > 0 else 1.0)
    else:
        step = max(nice_step(bulk if bulk > (hi - lo) * 1e-6 else hi - lo), floor)
    while True:
        if integer:
            step = max(1.0, float(round(step)))
            start, stop = math.floor(lo) - 0.5, math.ceil(hi) + 0.5
        else:
            start = math.floor(lo / step) * step
            stop = max(math.ceil(hi / step) * step, start + step)
        count = max(1, int(round((stop - start) / step)))
        if count <= MAX_BINS:
            break
        step = _coarser(step)
    edges = start + step * np.arange(count + 1)
    digits = max(0, 12 - int(math.floor(math.log10(step))))
    return np.round(edges, min(digits, 15))


def log_bin_edges(values: Any, per_decade: int | None = None) -> np.ndarray:
    """Log-spaced edges on whole fractions of a decade covering the positive, finite
    ``values`` (numbers spanning decades: y+, Courant numbers).

    Without ``per_decade`` the division of a decade is the coarsest that gives at least
    :data:`MIN_BINS` bins across the data, and at most :data:`MAX_BINS`.
    """
    data = _finite(values)
    data = data[data > 0]
    lo, hi = (float(data.min()), float(data.max())) if data.size else (1.0, 1.0)
    hi_log = math.log10(max(hi, 1e-300))
    # more than MAX_BINS decades: the lowest are counted below the bins
    lo_log = max(math.log10(max(lo, 1e-300)), hi_log - MAX_BINS)

    def edges_for(n: int) -> tuple[int, int]:
        return math.floor(lo_log * n + 1e-9), max(math.ceil(hi_log * n - 1e-9),
                                                   math.floor(lo_log * n + 1e-9) + 1)

    if per_decade is None:
        counts = {n: edges_for(n)[1] - edges_for(n)[0] for n in DECADE_DIVISIONS}
        good = [n for n in DECADE_DIVISIONS if MIN_BINS <= counts[n] <= MAX_BINS]
        within = [n for n in DECADE_DIVISIONS if counts[n] <= MAX_BINS]
        # too narrow a spread for MIN_BINS: the finest division; too wide: the coarsest
        per_decade = good[0] if good else (within[-1] if within else DECADE_DIVISIONS[0])
    first, last = edges_for(per_decade)
    return 10.0 ** (np.arange(first, last + 1) / per_decade)
