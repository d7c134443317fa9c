"""CPM passes against hand-worked networks and an independent networkx computation."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference_cpm import reference_cpm

from converter.analyse.network import CycleError, build_network, forward_pass, schedule
from converter.model import FF, FS, SF, SS


class TestHandWorked:
    def test_diamond(self):
        # A(3) -> B(2), A -> C(4), B -> D(1), C -> D. By hand: ES A0 B3 C3 D7; EF 3 5 7 8;
        # finish 8; LF D8 C7 B7 A3; LS D7 C3 B5 A0; TF B = 2, others 0; FF B = 7 - 5 = 2.
        net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
        r = schedule(net, np.array([3, 2, 4, 1.0]))
        np.testing.assert_allclose(r.es, [0, 3, 3, 7])
        np.testing.assert_allclose(r.ef, [3, 5, 7, 8])
        np.testing.assert_allclose(r.ls, [0, 5, 3, 7])
        np.testing.assert_allclose(r.lf, [3, 7, 7, 8])
        np.testing.assert_allclose(r.total_float, [0, 2, 0, 0])
        np.testing.assert_allclose(r.free_float, [0, 2, 0, 0])
        assert r.critical.tolist() == [True, False, True, True]
        assert r.finish == 8

    def test_free_float_differs_from_total(self):
        # A(2) -> B(1) -> D(1); C(6) -> D; by hand: ES A0 B2 C0 D6; finish 7.
        # TF: A = B = 3; FF A = ES_B - EF_A = 0, FF B = ES_D - EF_B = 3.
        net = build_network(4, [0, 1, 2], [1, 3, 3])
        r = schedule(net, np.array([2, 1, 6, 1.0]))
        np.testing.assert_allclose(r.total_float, [3, 3, 0, 0])
        np.testing.assert_allclose(r.free_float, [0, 3, 0, 0])

    def test_unlinked_activity_floats_to_finish(self):
        # X(2) alone next to A(5): finish 5, X has TF = FF = 3 (project finish - EF).
        net = build_network(2, [], [])
        r = schedule(net, np.array([5.0, 2.0]))
        np.testing.assert_allclose(r.total_float, [0, 3])
        np.testing.assert_allclose(r.free_float, [0, 3])

    @pytest.mark.parametrize(
        "kind,lag,es_b,finish",
        [
            # A(10) then B(4), by hand with the precedence diagramming rules:
            (FS, 2, 12, 16),  # ES_B = EF_A + 2 = 12
            (FS, -3, 7, 11),  # lead: ES_B = 10 - 3 = 7
            (SS, 3, 3, 10),  # ES_B = ES_A + 3 = 3; EF_B = 7 < EF_A = 10
            (FF, 1, 7, 11),  # EF_B >= EF_A + 1 = 11 -> ES_B = 7
            (FF, -2, 4, 10),  # EF_B >= 8 -> ES_B = 4, finish stays 10
            (SF, 6, 2, 10),  # EF_B >= ES_A + 6 = 6 -> ES_B = 2
            (SF, 1, 0, 10),  # EF_B >= 1 -> ES_B = -3, held at 0 (ES >= 0)
        ],
    )
    def test_typed_link(self, kind, lag, es_b, finish):
        net = build_network(2, [0], [1], [kind], [lag])
        r = schedule(net, np.array([10.0, 4.0]))
        assert r.es[1] == pytest.approx(es_b)
        assert r.finish == pytest.approx(finish)
        assert (r.total_float >= -1e-9).all()

    def test_ss_backward(self):
        # A(10) SS+2 B(3): ES_B = 2, EF_B = 5, finish 10. Backward: LF_B = 10, LS_B = 7;
        # A may start no later than LS_B - 2 = 5 -> but LF_A <= 10 gives LS_A = 0: TF_A 0.
        net = build_network(2, [0], [1], [SS], [2])
        r = schedule(net, np.array([10.0, 3.0]))
        np.testing.assert_allclose(r.ls, [0, 7])
        np.testing.assert_allclose(r.total_float, [0, 5])

    def test_cycle_raises(self):
        with pytest.raises(CycleError):
            build_network(3, [0, 1, 2], [1, 2, 0])


@st.composite
def random_dag(draw, typed=False):
    n = draw(st.integers(1, 14))
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    chosen = draw(st.lists(st.sampled_from(pairs), unique=True, max_size=30)) if pairs else []
    d = draw(
        st.lists(
            st.one_of(st.just(0.0), st.floats(1e-3, 20)),  # durations of a real schedule
            min_size=n,
            max_size=n,
        )
    )
    kinds = [draw(st.sampled_from([FS, SS, FF, SF])) if typed else FS for _ in chosen]
    lags = [draw(st.sampled_from([0, 0, 1, 2.5, -1, -2])) if typed else 0.0 for _ in chosen]
    perm = draw(st.permutations(list(range(n))))  # activities need not be in order
    pred = [perm[i] for i, _ in chosen]
    succ = [perm[j] for _, j in chosen]
    return n, pred, succ, kinds, lags, np.array(d, float)[np.argsort(perm)] if n else None


def _nx_longest_fs(n, pred, succ, d):
    """networkx.dag_longest_path_length on node-weighted durations (split nodes)."""
    g = nx.DiGraph()
    for i in range(n):
        g.add_edge(("s", i), ("f", i), weight=d[i])
        g.add_edge("source", ("s", i), weight=0.0)
        g.add_edge(("f", i), "sink", weight=0.0)
    for p, s in zip(pred, succ):
        g.add_edge(("f", p), ("s", s), weight=0.0)
    return nx.dag_longest_path_length(g, weight="weight")


@settings(max_examples=300, deadline=None)
@given(random_dag())
def test_finish_matches_networkx(case):
    n, pred, succ, kinds, lags, d = case
    net = build_network(n, pred, succ)
    r = schedule(net, d)
    assert r.finish == pytest.approx(_nx_longest_fs(n, pred, succ, d), abs=1e-9)
    # every float non-negative, every critical activity has zero total float
    assert (r.total_float >= -1e-9).all()
    assert (r.free_float >= -1e-9).all()
    assert (r.free_float <= r.total_float + 1e-9).all()


@settings(max_examples=300, deadline=None)
@given(random_dag(typed=True))
def test_typed_matches_networkx(case):
    """Each link is an edge p -> s weighted by its type's rule on start times:

    FS: d_p + lag; SS: lag; FF: d_p + lag - d_s; SF: lag - d_s; plus an origin with a
    zero edge to every activity (ES >= 0). The early start is then the longest path from
    the origin (standard precedence-diagramming result), computed independently with
    networkx.single_source_bellman_ford_path_length on negated weights.
    """
    n, pred, succ, kinds, lags, d = case
    es_ref, ls_ref, finish_ref = reference_cpm(n, pred, succ, kinds, lags, d)
    net = build_network(n, pred, succ, kinds, lags)
    es, ef = forward_pass(net, d)
    np.testing.assert_allclose(es, es_ref, atol=1e-9)
    r = schedule(net, d)
    assert r.finish == pytest.approx(max(ef), abs=1e-12)
    assert r.finish == pytest.approx(finish_ref, abs=1e-9)
    assert (r.total_float >= -1e-9).all()
    # backward pass: the same difference constraints read backwards (reference_cpm)
    np.testing.assert_allclose(r.ls, ls_ref, atol=1e-9)


@settings(max_examples=50, deadline=None)
@given(random_dag(typed=True), st.integers(1, 6))
def test_matrix_pass_equals_columns(case, m):
    """Durations (n, m) give the same as m separate passes (used by the simulation)."""
    n, pred, succ, kinds, lags, d = case
    net = build_network(n, pred, succ, kinds, lags)
    rng = np.random.default_rng(0)
    dm = rng.uniform(0, 10, size=(n, m))
    es, ef = forward_pass(net, dm)
    for j in range(m):
        e1, f1 = forward_pass(net, dm[:, j])
        np.testing.assert_allclose(es[:, j], e1)
        np.testing.assert_allclose(ef[:, j], f1)
