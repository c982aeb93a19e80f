"""Histogram bins chosen from the data: enough bins where the spread allows, round edges."""

from __future__ import annotations

import math

import numpy as np
import pytest

from caselint.bins import MAX_BINS, MIN_BINS, linear_bin_edges, log_bin_edges, nice_step
from caselint.model import Limits, PlotSeries

RNG = np.random.default_rng(18)


def _round(width: float) -> bool:
    """1, 2, 2.5 or 5 times a power of ten."""
    mantissa = width / 10.0 ** math.floor(math.log10(width))
    return any(math.isclose(mantissa, m) for m in (1.0, 2.0, 2.5, 5.0))


@pytest.mark.parametrize("values", [
    RNG.uniform(0.0, 75.0, 500),                # non-orthogonality of a tetrahedral mesh
    1.0 + RNG.exponential(0.08, 2000),          # growth ratios
    RNG.normal(0.3, 0.05, 50),                  # skewness, a small sample
    np.array([1.0] * 16 + [2.5] * 4),           # a block with one volume jump
])
def test_bins_span_the_data_with_round_widths_and_at_least_ten_bins(values):
    edges = linear_bin_edges(values)
    widths = np.diff(edges)
    assert MIN_BINS <= len(widths) <= MAX_BINS
    assert widths == pytest.approx(np.full(len(widths), widths[0])) and _round(widths[0])
    series = PlotSeries.histogram(values, edges)
    assert (series.below, series.above) == (0, 0) and sum(series.y) == len(values)
    assert series.y == tuple(float(c) for c in np.histogram(values, edges)[0])


def test_no_spread_gives_one_bin_of_the_resolution():
    assert list(linear_bin_edges(np.full(52, 1e-14), resolution=0.5)) == [0.0, 0.5]
    assert len(linear_bin_edges([1.3, 1.3])) == 2


def test_whole_numbers_get_bins_centred_on_them():
    edges = linear_bin_edges([1, 2, 3, 7, 12], integer=True)
    assert list(edges) == [v - 0.5 for v in range(1, 14)]
    assert len(linear_bin_edges([4, 5, 6], integer=True)) - 1 == 3   # the spread allows 3


def test_a_far_tail_is_cut_at_the_first_limit_beyond_the_bulk_and_counted():
    bulk = RNG.normal(1.1, 0.03, 100_000)
    values = np.concatenate([bulk, np.full(20, 50.0)])       # 20 faces of a collapsed cell
    edges = linear_bin_edges(values, limits=Limits(1.3, 2.0))
    assert edges[-1] == pytest.approx(1.3) and len(edges) - 1 >= MIN_BINS
    series = PlotSeries.histogram(values, edges)
    assert series.above == 20 + int(np.count_nonzero(bulk > 1.3))
    assert sum(series.y) + series.above + series.below == len(values)
    # a small sample is never cut
    small = np.concatenate([RNG.normal(1.1, 0.03, 200), [50.0]])
    assert linear_bin_edges(small, limits=Limits(1.3, 2.0))[-1] >= 50.0


def test_nice_step_is_the_widest_round_width_giving_enough_bins():
    assert nice_step(1.5) == 0.1 and nice_step(75.0) == 5.0 and nice_step(0.5) == 0.05
    assert nice_step(25.0) == 2.5 and nice_step(0.0003) == pytest.approx(2.5e-5)


@pytest.mark.parametrize("lo, hi", [(300.0, 948.0), (0.5, 2000.0), (2e-3, 40.0), (31.0, 33.0)])
def test_log_bins_are_fractions_of_a_decade_with_enough_bins(lo, hi):
    values = np.geomspace(lo, hi, 300)
    edges = log_bin_edges(values)
    logs = np.log10(edges)
    per_decade = round(1 / (logs[1] - logs[0]))
    assert logs * per_decade == pytest.approx(np.round(logs * per_decade), abs=1e-9)
    assert edges[0] <= lo and edges[-1] >= hi * (1 - 1e-12)
    decades = math.log10(hi / lo)
    # ten bins or more, unless even 100 a decade cannot make them
    assert len(edges) - 1 >= min(MIN_BINS, math.floor(decades * 100))
    assert len(edges) - 1 <= MAX_BINS


def test_log_bins_over_many_decades_stay_few_and_count_the_rest_below():
    values = np.geomspace(1e-300, 1e10, 50)
    edges = log_bin_edges(values)
    assert len(edges) - 1 == MAX_BINS and edges[-1] == pytest.approx(1e10)
    series = PlotSeries.histogram(values, edges)
    assert series.below > 0 and sum(series.y) + series.below == 50
