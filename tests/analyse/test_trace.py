"""Traced iterations: drawn again from their chunk's streams, the same for any worker count.

Checks: the traced iteration's durations pushed through an independent CPM forward
pass (tests/support/reference_cpm.py, networkx) give the finish the simulation recorded
(to rounding);
the exact quantiles (scipy.stats.beta / triang / uniform .ppf) give it within the
stated bound; the same seed gives the same trace in one process and in two; the
chosen iteration is the one nearest numpy's percentile.
"""

from __future__ import annotations

import numpy as np
import pytest
from reference_cpm import reference_cpm
from scipy import stats

from converter.analyse.network import build_network
from converter.analyse.simulate import simulate
from converter.analyse.simulate.trace import chosen_iterations
from converter.model import FS
from converter.options import parse_trace


def _layered(n: int, links: int, layers: int, seed: int):
    """An invented layered network: each link ends in a later layer."""
    rng = np.random.default_rng(seed)
    width = n // layers
    layer = np.repeat(np.arange(layers), width)
    succ = rng.integers(width, n, size=links)
    pred = (layer[succ] - 1) * width + rng.integers(0, width, size=links)
    key = np.unique(pred * n + succ)
    return build_network(n, key // n, key % n), key // n, key % n


def _estimates(n: int, seed: int):
    rng = np.random.default_rng(seed)
    o = rng.uniform(1.0, 5.0, n)
    m = o + rng.uniform(0.0, 5.0, n)
    p = m + rng.uniform(0.5, 10.0, n)
    p[::17] = o[::17]  # a few fixed durations
    m[::17] = o[::17]
    return o, m, p


N = 600
KINDS = (["pert"] * 4 + ["triangular", "uniform"]) * (N // 6)


@pytest.fixture(scope="module")
def runs():
    net, pred, succ = _layered(N, 1800, 20, 1)
    o, m, p = _estimates(N, 2)
    groups = ["g1" if i % 3 == 0 else None for i in range(N)]
    common = dict(
        distributions=KINDS,
        groups=groups,
        correlation=0.6,
        iterations=12_000,  # three chunks of 4,166 iterations
        seed=7,
        trace=(0.5, 0.8, 0.9, 1.0),
    )
    one = simulate(net, o, m, p, workers=1, **common)
    two = simulate(net, o, m, p, workers=2, **common)
    return net, pred, succ, (o, m, p), one, two


def test_same_trace_whatever_the_worker_count(runs):
    *_, one, two = runs
    assert len(one.trace) == 4
    for a, b in zip(one.trace, two.trace, strict=True):
        assert a.iteration == b.iteration
        assert np.array_equal(a.uniforms, b.uniforms)
        assert np.array_equal(a.durations, b.durations)
        assert a.recorded == b.recorded and a.finish == b.finish


def test_traced_samples_give_exactly_the_recorded_finish(runs):
    # an independent forward pass (tests/support/reference_cpm.py) over the durations the
    # simulation used for that iteration
    _, pred, succ, _, one, _ = runs
    kinds, lags = [FS] * len(pred), [0.0] * len(pred)
    for t in one.trace:
        *_, finish = reference_cpm(N, pred.tolist(), succ.tolist(), kinds, lags, t.sampled)
        assert finish == pytest.approx(t.recorded, rel=1e-12)
        assert t.recorded == one.durations[t.iteration]


def test_exact_quantiles_and_finish_within_the_bound(runs):
    # scipy.stats.beta / triang / uniform .ppf of each traced uniform on [O, P]
    _, pred, succ, (o, m, p), one, _ = runs
    for t in one.trace:
        for i in range(0, N, 7):
            u, width = t.uniforms[i], p[i] - o[i]
            if width == 0:
                expected = o[i]
            elif KINDS[i] == "pert":
                r = (m[i] - o[i]) / width
                expected = stats.beta.ppf(u, 1 + 4 * r, 1 + 4 * (1 - r), o[i], width)
            elif KINDS[i] == "triangular":
                expected = stats.triang.ppf(u, (m[i] - o[i]) / width, o[i], width)
            else:
                expected = stats.uniform.ppf(u, o[i], width)
            assert t.durations[i] == pytest.approx(expected, rel=1e-9, abs=1e-9)
            assert abs(t.sampled[i] - expected) <= 1e-6 * width + 1e-6 * expected
        assert abs(t.finish - t.recorded) <= t.allowed
        assert t.allowed < 1e-3


def test_chosen_iteration_is_nearest_numpys_percentile(runs):
    # numpy.percentile (linear) and the longest iteration by max
    *_, one, _ = runs
    y = one.durations
    for t in one.trace:
        figure = float(np.percentile(y, 100 * t.quantile))
        assert t.figure == figure
        assert abs(y[t.iteration] - figure) == np.abs(y - figure).min()
    assert one.trace[-1].recorded == y.max() and one.trace[-1].label == "longest"
    assert chosen_iterations(np.array([1.0, 4.0, 2.0]), (1.0,)) == [(1.0, 4.0, 1)]


def test_no_trace_when_none_is_asked():
    net, *_ = _layered(60, 120, 6, 3)
    o, m, p = _estimates(60, 4)
    assert simulate(net, o, m, p, iterations=200, seed=1).trace == []


@pytest.mark.parametrize(
    "text,expected",
    [
        ("0", ()),
        ("4", (0.5, 0.8, 0.9, 1.0)),
        ("1", (0.8,)),
        ("50, 80%, max", (0.5, 0.8, 1.0)),
        ("longest", (1.0,)),
        ("80", (0.8,)),
        ("5%", (0.05,)),
    ],
)
def test_trace_option(text, expected):
    assert parse_trace(text) == expected


@pytest.mark.parametrize("text", ["0%", "100", "fast", ",", "-5", "120"])
def test_trace_option_refuses(text):
    with pytest.raises(ValueError):
        parse_trace(text)
