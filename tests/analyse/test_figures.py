"""Tests for converter.analyse.figures: the tables and orders the writers only place.

Outside references: numpy.histogram for the bin counts (the bins are half-open
[lower, upper) except the last, numpy's documented rule); the bin of the due date by
its definition (lower edge <= due <= upper edge, the first such bin); the timeline and
driver orders by their definitions written out by hand.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from converter.analyse import figures


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_histogram_counts_agree_with_numpy_and_the_due_bin_holds_the_due(seed):
    rng = np.random.default_rng(seed)
    durations = rng.gamma(4.0, 3.0, 5000) + 20
    due = float(np.percentile(durations, 60))
    h = figures.histogram(durations, due)
    width = h.upper[1] - h.upper[0]
    edges = np.array([h.upper[0] - width, *h.upper])
    assert h.counts == np.histogram(durations, bins=edges)[0].tolist()  # numpy reference
    assert sum(h.counts) == h.iterations == durations.size
    assert h.cumulative[-1] == pytest.approx(1.0)
    assert h.share == pytest.approx([n / durations.size for n in h.counts])
    k = h.due_bin
    assert k is not None and h.upper[k] - width <= due <= h.upper[k]
    assert all(not (h.upper[j] - width <= due <= h.upper[j]) for j in range(k))
    assert figures.histogram(durations, None).due_bin is None
    assert figures.histogram(durations, float(durations.max()) + 10 * width).due_bin is None


def test_histogram_of_equal_durations_is_one_bin():
    h = figures.histogram(np.full(10, 7.0), 7.0)
    assert (h.upper, h.counts, h.due_bin) == ([7.0], [10], 0)


def test_risk_drivers_by_absolute_sensitivity_then_criticality():
    sim = SimpleNamespace(
        sensitivity=np.array([0.2, -0.6, np.nan, 0.6, 0.2]),
        criticality=np.array([0.5, 0.1, 0.0, 0.9, 0.7]),
    )
    # |s|: 0.6 (3, crit 0.9) then 0.6 (1, crit 0.1), then 0.2 (4, crit 0.7), 0.2 (0), NaN as 0
    assert figures.risk_drivers(sim) == [3, 1, 4, 0, 2]
    assert figures.most_critical(sim) == [3, 4, 0, 1, 2]


def test_timeline_keeps_paths_then_least_float_when_cut():
    n = figures.CHART_LIMIT + 50
    tf = np.arange(n, dtype=float)[::-1]  # the last activities have the least float
    rows, cut = figures.timeline_rows(n, [[0, 1, 2]], tf)
    assert cut and len(rows) == figures.CHART_LIMIT and rows == sorted(rows)
    assert {0, 1, 2} <= set(rows)
    assert set(rows) - {0, 1, 2} == set(range(n - figures.CHART_LIMIT + 3, n))
    assert figures.timeline_rows(5, [[0]], np.zeros(5)) == ([0, 1, 2, 3, 4], False)


def test_confidence_levels_add_the_chosen_ones_once():
    levels = figures.confidence_levels((0.5, 0.8, 0.975))
    assert levels == [0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.975]
