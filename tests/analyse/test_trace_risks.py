"""Traced iterations with named risks and start floors.

Checks:
- the durations the simulation used for the traced iteration (risk delays included),
  pushed through an independent CPM with the start floors (tests/support/reference_cpm.py,
  networkx), give the finish it recorded, to rounding;
- each risk's traced draws against an independent recomputation: occurred when u < p
  (the register's semantics, issue 12), its impact scipy.stats.beta.ppf of its impact u
  over (low, high) with the PERT shapes (Malcolm et al. 1959), and each activity's delay
  the impact (or impact x scipy's quantile of its duration for a % impact);
- a grouped pair shares its occurrence draw; the exact finish is within the stated bound;
- the same seed gives the same trace with one worker process and with two.
"""

from __future__ import annotations

import numpy as np
import pytest
from reference_cpm import reference_cpm
from scipy import stats

from converter.analyse.network import build_network
from converter.analyse.simulate import inputs, simulate
from converter.analyse.simulate.risks import draw_risks
from converter.model import FS, Risk

N, LAYERS = 240, 12


def _network(seed: int):
    """An invented layered network with start floors on every tenth activity."""
    rng = np.random.default_rng(seed)
    width = N // LAYERS
    layer = np.repeat(np.arange(LAYERS), width)
    succ = rng.integers(width, N, size=600)
    pred = (layer[succ] - 1) * width + rng.integers(0, width, size=600)
    key = np.unique(pred * N + succ)
    floor = np.zeros(N)
    floor[::10] = rng.uniform(0.0, 40.0, N // 10)
    net = build_network(N, key // N, key % N, floor=floor)
    return net, key // N, key % N, floor


def _register(seed: int) -> list[Risk]:
    """Invented risks: PERT impacts, % impacts, a group of two."""
    rng = np.random.default_rng(seed)
    out = []
    for k in range(12):
        hits = tuple(f"a{i}" for i in rng.choice(N, size=3, replace=False))
        low = float(rng.uniform(0.5, 2.0))
        likely, high = low + 1.0, low + float(rng.uniform(1.5, 4.0))
        percent = k % 4 == 1
        if percent:
            low, likely, high = 0.05, 0.1, 0.3
        group = "shared" if k in (2, 3) else None
        out.append(Risk(f"R{k}", "", 0.45, low, likely, high, hits, percent, group))
    return out


@pytest.fixture(scope="module")
def runs():
    net, pred, succ, floor = _network(3)
    rng = np.random.default_rng(4)
    o = rng.uniform(1.0, 5.0, N)
    m = o + rng.uniform(0.0, 4.0, N)
    p = m + rng.uniform(0.5, 8.0, N)
    risks = _register(5)
    index = {f"a{i}": i for i in range(N)}
    common = dict(iterations=6000, seed=11, trace=(0.5, 0.8, 1.0))
    draws = dict(distribution="pert", iterations=6000, seed=11)
    out = {}
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(inputs, "_CHUNK_ELEMENTS", N * 1000)  # six chunks of 1,000 iterations
        for workers in (1, 2):
            rd = draw_risks(risks, index, **draws)
            out[workers] = simulate(net, o, m, p, workers=workers, risks=rd, **common)
    return net, pred, succ, floor, (o, m, p), risks, index, out


def test_same_trace_with_one_and_two_workers(runs):
    *_, out = runs
    for a, b in zip(out[1].trace, out[2].trace, strict=True):
        assert a.iteration == b.iteration and a.recorded == b.recorded
        assert np.array_equal(a.durations, b.durations)
        assert [(d.label, d.uniform, d.value) for d in a.draws] == [
            (d.label, d.uniform, d.value) for d in b.draws
        ]


def test_sampled_durations_with_delays_give_the_recorded_finish(runs):
    # an independent forward pass with the start floors (networkx, reference_cpm.py)
    _, pred, succ, floor, *_, out = runs
    kinds, lags = [FS] * len(pred), [0.0] * len(pred)
    for t in out[1].trace:
        *_, finish = reference_cpm(
            N, pred.tolist(), succ.tolist(), kinds, lags, t.sampled, floor=floor
        )
        assert finish == pytest.approx(t.recorded, rel=1e-12)
        assert abs(t.finish - t.recorded) <= t.allowed
        assert t.allowed < 1e-2


def test_risk_draws_and_delays_against_scipy(runs):
    *_, (o, m, p), risks, index, out = runs
    seen = set()
    for t in out[1].trace:
        draws = {(d.risk, d.kind): d for d in t.draws}
        width = p - o
        r = (m - o) / width
        base = stats.beta.ppf(t.uniforms, 1 + 4 * r, 1 + 4 * (1 - r), o, width)  # scipy
        delay = np.zeros(N)
        for k, risk in enumerate(risks):
            occ, imp = draws[(k, "occurrence")], draws[(k, "impact")]
            occurred = occ.uniform < risk.probability
            assert occ.value == float(occurred)
            span = risk.high - risk.low
            a = 1 + 4 * (risk.likely - risk.low) / span
            b = 1 + 4 * (risk.high - risk.likely) / span
            impact = stats.beta.ppf(imp.uniform, a, b, risk.low, span)  # scipy
            assert imp.value == pytest.approx(impact, rel=1e-9)
            if occurred:
                seen.add(risk.percent)
                rows = [index[x] for x in risk.activities]
                delay[rows] += impact * base[rows] if risk.percent else impact
        assert draws[(2, "occurrence")].uniform == draws[(3, "occurrence")].uniform  # group
        assert t.delays == pytest.approx(delay, rel=1e-9, abs=1e-12)
        assert t.durations == pytest.approx(base + delay, rel=1e-9)
    assert seen == {True, False}  # fixed and % impacts both occurred in a traced iteration
