"""Tests for converter.analyse.paths: k longest paths and path counts.

External references: networkx (all_simple_paths / all_simple_edge_paths enumerate every
path for a brute force), the precedence diagramming link rules of Moder, Phillips & Davis
(*Project Management with CPM, PERT and Precedence Diagramming*, 3rd ed., 1983; the
finish-time recurrences below are from memory of that text), PERT path variance as the sum
of activity variances (Malcolm et al., Operations Research 7(5), 1959), and the product
rule of counting.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from converter.analyse.network import build_network, schedule
from converter.analyse.paths import count_paths, k_longest_paths
from converter.model import FF, FS, SF, SS

# --------------------------------------------------------------------------- brute force


def finish_along(acts, links, kinds, lags, d):
    """Finish time of the last activity along a path, by the PDM link rules (Moder et al.).

    EF of the first activity is its duration; along a link p -> s with lag L:
    FS: EF_p + L + d_s, SS: EF_p - d_p + L + d_s, FF: EF_p + L, SF: EF_p - d_p + L.
    """
    ef = d[acts[0]]
    for p, s, link in zip(acts, acts[1:], links, strict=False):
        kind, lag = kinds[link], lags[link]
        if kind == FS:
            ef = ef + lag + d[s]
        elif kind == SS:
            ef = ef - d[p] + lag + d[s]
        elif kind == FF:
            ef = ef + lag
        else:  # SF
            ef = ef - d[p] + lag
    return ef


def brute_paths(n, links, te, var, starts, ends):
    """Every start -> end path with (mean, variance, activities, links, coefficients).

    Paths come from networkx.all_simple_edge_paths on a multigraph keyed by link index.
    Coefficients are the finite differences of the (linear) finish recurrence above, so
    they do not reuse the coefficient rule under test. Variance: sum of coef^2 * var
    (Malcolm et al. 1959).
    """
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n))
    for i, (p, s, _k, _lag) in enumerate(links):
        g.add_edge(p, s, key=i)
    kinds = [k for _p, _s, k, _lag in links]
    lags = [lag for _p, _s, _k, lag in links]
    zero = [0] * n
    out = []
    for a in starts:
        seqs = [[]] if a in ends else []  # the one-activity path
        targets = [b for b in ends if b != a]
        if targets:
            seqs += [p for p in nx.all_simple_edge_paths(g, a, targets) if p]
        for edge_path in seqs:
            acts = [a] + [e[1] for e in edge_path]
            lks = [e[2] for e in edge_path]
            base = finish_along(acts, lks, kinds, lags, zero)  # sum of lags
            coefs = []
            for x in acts:
                unit = list(zero)
                unit[x] = 1
                coefs.append(finish_along(acts, lks, kinds, lags, unit) - base)
            mean = finish_along(acts, lks, kinds, lags, list(te))
            variance = sum(c * c * var[x] for c, x in zip(coefs, acts, strict=True))
            out.append((mean, variance, acts, lks, coefs))
    out.sort(key=lambda r: (-r[0], -r[1], r[2], r[3]))
    return out


def eligible(n, links):
    """Start / end rules of the task (common practice in PDM: a path may start where no
    FS/SS link with lag >= 0 comes in, and end where no FS/FF link with lag >= 0 leaves)."""
    starts = [
        a
        for a in range(n)
        if not any(s == a and k in (FS, SS) and lag >= 0 for _p, s, k, lag in links)
    ]
    ends = [
        a
        for a in range(n)
        if not any(p == a and k in (FS, FF) and lag >= 0 for p, _s, k, lag in links)
    ]
    return starts, ends


def make_net(n, links):
    pred = [p for p, _s, _k, _lag in links]
    succ = [s for _p, s, _k, _lag in links]
    kind = [k for _p, _s, k, _lag in links]
    lag = [float(x) for _p, _s, _k, x in links]
    return build_network(n, pred, succ, kind, lag)


def check_well_formed(net, paths):
    for p in paths:
        assert len(p.links) == len(p.activities) - 1
        assert len(p.coefficients) == len(p.activities)
        for a, b, link in zip(p.activities, p.activities[1:], p.links, strict=False):
            assert (int(net.pred[link]), int(net.succ[link])) == (a, b)
        assert p.sd == pytest.approx(np.sqrt(p.variance))


# --------------------------------------------------------------------------- strategies


@st.composite
def networks(draw, typed: bool, max_n: int = 7):
    """A random DAG on a shuffled numbering, with optional types, lags and parallel links."""
    n = draw(st.integers(1, max_n))
    perm = draw(st.permutations(range(n)))
    links = []
    for i in range(n):
        for j in range(i + 1, n):
            mult = draw(st.sampled_from([0, 0, 1, 1, 2] if typed else [0, 0, 1]))
            for _ in range(mult):
                kind = draw(st.integers(0, 3)) if typed else FS
                lag = draw(st.integers(-3, 3)) if typed else draw(st.sampled_from([0, 0, 1]))
                links.append((perm[i], perm[j], kind, lag))
    return n, links


# --------------------------------------------------------------------------- FS networks


@settings(max_examples=300, deadline=None)
@given(
    net_links=networks(typed=False),
    data=st.data(),
    k=st.integers(1, 8),
)
def test_fs_matches_networkx_brute_force(net_links, data, k):
    n, links = net_links
    # Small integers make ties common and every sum exact in floating point.
    te = data.draw(st.lists(st.integers(0, 4), min_size=n, max_size=n))
    var = data.draw(st.lists(st.integers(0, 3), min_size=n, max_size=n))
    net = make_net(n, links)
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    g.add_edges_from((p, s) for p, s, _k, _lag in links)
    # networkx: sources and sinks of the DAG (pure FS, lags >= 0).
    starts = [a for a in g if g.in_degree(a) == 0]
    ends = [a for a in g if g.out_degree(a) == 0]
    expected = brute_paths(n, links, te, var, starts, ends)[:k]
    got = k_longest_paths(net, np.array(te, float), np.array(var, float), k)
    check_well_formed(net, got)
    assert [(p.mean, p.variance) for p in got] == [(e[0], e[1]) for e in expected]
    # The tie rule is fully specified (variance, then activity indices, then links),
    # so with exact integer sums the whole ranked list must agree.
    assert [(p.activities, p.links) for p in got] == [(e[2], e[3]) for e in expected]
    assert [p.coefficients for p in got] == [e[4] for e in expected]
    # First path is the critical path: CPM project finish (network.schedule).
    assert got[0].mean == pytest.approx(schedule(net, np.array(te, float)).finish, abs=1e-9)


def clearly_better(a, b, tol=1e-7):
    """(mean, variance) ``a`` ranks above ``b`` beyond float noise: longer by more than
    ``tol``, or equally long (within 1e-11) with variance larger by more than ``tol``."""
    if a[0] > b[0] + tol:
        return True
    return abs(a[0] - b[0]) <= 1e-11 and a[1] > b[1] + tol


@settings(max_examples=150, deadline=None)
@given(net_links=networks(typed=False), data=st.data(), k=st.integers(1, 6))
def test_fs_float_durations_against_brute_force(net_links, data, k):
    n, links = net_links
    floats = st.floats(0.1, 20.0, allow_nan=False, allow_infinity=False)
    te = data.draw(st.lists(floats, min_size=n, max_size=n))
    var = data.draw(st.lists(st.floats(0.0, 5.0), min_size=n, max_size=n))
    net = make_net(n, links)
    starts, ends = eligible(n, links)  # = sources and sinks here (lags >= 0)
    brute = brute_paths(n, links, te, var, starts, ends)
    by_path = {(tuple(e[2]), tuple(e[3])): (e[0], e[1]) for e in brute}
    got = k_longest_paths(net, np.array(te), np.array(var), k)
    assert len(got) == min(k, len(brute))
    # Sorted means agree with the networkx brute force position by position.
    for p, e in zip(got, brute, strict=False):
        assert p.mean == pytest.approx(e[0], rel=1e-9, abs=1e-9)
    # Each returned path exists and carries the brute-force figures.
    figures = []
    for p in got:
        mean, variance = by_path[(tuple(p.activities), tuple(p.links))]
        assert p.mean == pytest.approx(mean, rel=1e-12, abs=1e-12)
        assert p.variance == pytest.approx(variance, rel=1e-12, abs=1e-12)
        figures.append((mean, variance))
    # Ranked: no path is clearly better than one listed before it ...
    for i, a in enumerate(figures):
        assert not any(clearly_better(b, a) for b in figures[i + 1 :])
    # ... and no path left out is clearly better than the last one listed.
    chosen = {(tuple(p.activities), tuple(p.links)) for p in got}
    left_out = [v for key, v in by_path.items() if key not in chosen]
    assert not any(clearly_better(b, figures[-1]) for b in left_out)
    means = [e[0] for e in brute]
    gaps = [abs(a - b) for a, b in zip(means, means[1:], strict=False)]
    if all(g > 1e-6 for g in gaps[:k]):  # no ties in the top k (nor at its edge)
        assert chosen == {(tuple(e[2]), tuple(e[3])) for e in brute[:k]}
    assert got[0].mean == pytest.approx(schedule(net, np.array(te)).finish, rel=1e-9)


# --------------------------------------------------------------------------- typed networks


@settings(max_examples=400, deadline=None)
@given(net_links=networks(typed=True), data=st.data(), k=st.integers(1, 8))
def test_typed_matches_brute_force_and_cpm(net_links, data, k):
    n, links = net_links
    te = data.draw(st.lists(st.integers(0, 5), min_size=n, max_size=n))
    var = data.draw(st.lists(st.integers(0, 3), min_size=n, max_size=n))
    net = make_net(n, links)
    starts, ends = eligible(n, links)
    brute = brute_paths(n, links, te, var, starts, ends)
    got = k_longest_paths(net, np.array(te, float), np.array(var, float), k)
    check_well_formed(net, got)
    top = brute[:k]
    assert [(p.mean, p.variance) for p in got] == [(e[0], e[1]) for e in top]
    assert [(p.activities, p.links) for p in got] == [(e[2], e[3]) for e in top]
    assert [p.coefficients for p in got] == [e[4] for e in top]
    # Top path mean equals the CPM forward pass finish (network.schedule, ES >= 0).
    assert got[0].mean == pytest.approx(schedule(net, np.array(te, float)).finish, abs=1e-9)
    # count_paths against the networkx enumeration of the same start -> end paths.
    assert count_paths(net) == len(brute)


# --------------------------------------------------------------------------- worked examples


def test_hand_worked_ss_ff_chain():
    # A(4) -SS+1-> B(6) -FF+2-> C(3), worked by hand with the PDM rules (Moder et al.):
    # EF_A = 4; EF_B = EF_A - d_A + 1 + d_B = 7; EF_C = EF_B + 2 = 9.
    # Coefficients: A 1-1 = 0 (left by SS), B 1 (entered SS, left FF), C 0 (entered FF);
    # mean 6 + 1 + 2 = 9, variance var_B = 4. CPM: ES = 0, 1, 6; finish 9.
    # Ends: A (only SS out) and C; starts: A and C (only FF in). B neither.
    # So the paths are A-B-C (9), A alone (4), C alone (3).
    net = build_network(3, [0, 1], [1, 2], [SS, FF], [1.0, 2.0])
    te, var = np.array([4.0, 6.0, 3.0]), np.array([1.0, 4.0, 0.25])
    got = k_longest_paths(net, te, var, 10)
    assert [(p.activities, p.coefficients, p.mean, p.variance) for p in got] == [
        ([0, 1, 2], [0, 1, 0], 9.0, 4.0),
        ([0], [1], 4.0, 1.0),
        ([2], [1], 3.0, 0.25),
    ]
    assert got[0].mean == schedule(net, te).finish
    assert count_paths(net) == 3


def test_hand_worked_sf_and_lead_with_variance_tie_break():
    # X(5) -SF+2-> Y(4) -FS-1-> Z(3), worked by hand (Moder et al. rules):
    # every activity may start and end a path (SF in / SF out / FS with a lead).
    # [Y,Z]: 4 - 1 + 3 = 6, var 4 + 1 = 5      [X]: 5, var 2.25
    # [Y]: 4, var 4                            [X,Y,Z]: EF_Y = 5 - 5 + 2 = 2, EF_Z = 2 - 1 + 3
    #                                          = 4, coefficients 0, 0, 1, var 1
    # [Z]: 3, var 1                            [X,Y]: 2, coefficients 0, 0, var 0
    # [Y] and [X,Y,Z] tie at 4: larger variance first. CPM: ES_Y = max(0, 0 + 2 - 4) = 0,
    # EF_Y = 4, ES_Z = 3, finish 6 = [Y,Z].
    net = build_network(3, [0, 1], [1, 2], [SF, FS], [2.0, -1.0])
    te, var = np.array([5.0, 4.0, 3.0]), np.array([2.25, 4.0, 1.0])
    got = k_longest_paths(net, te, var, 10)
    assert [(p.activities, p.coefficients, p.mean, p.variance) for p in got] == [
        ([1, 2], [1, 1], 6.0, 5.0),
        ([0], [1], 5.0, 2.25),
        ([1], [1], 4.0, 4.0),
        ([0, 1, 2], [0, 0, 1], 4.0, 1.0),
        ([2], [1], 3.0, 1.0),
        ([0, 1], [0, 0], 2.0, 0.0),
    ]
    assert got[0].mean == schedule(net, te).finish
    assert count_paths(net) == 6
    assert k_longest_paths(net, te, var, 2) == got[:2]
    assert k_longest_paths(net, te, var, 0) == []


# --------------------------------------------------------------------------- path counts


def complete_layered(width: int, layers: int):
    """Activities layer * width + r; every activity linked to all of the next layer."""
    pred, succ = [], []
    for layer in range(layers - 1):
        for a in range(width):
            for b in range(width):
                pred.append(layer * width + a)
                succ.append((layer + 1) * width + b)
    return build_network(width * layers, pred, succ)


@pytest.mark.parametrize("width, layers", [(1, 5), (2, 3), (3, 4), (3, 41), (5, 30)])
def test_count_paths_closed_form_layered(width, layers):
    # Product rule: one activity per layer, width choices each -> width ** layers paths.
    # (3, 41) and (5, 30) exceed 2**63, so an int64 count would overflow.
    assert count_paths(complete_layered(width, layers)) == width**layers


@settings(max_examples=200, deadline=None)
@given(net_links=networks(typed=False, max_n=8))
def test_count_paths_matches_networkx(net_links):
    n, links = net_links
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    g.add_edges_from((p, s) for p, s, _k, _lag in links)
    sources = [a for a in g if g.in_degree(a) == 0]
    sinks = [a for a in g if g.out_degree(a) == 0]
    # networkx.all_simple_paths from every source to every sink; an isolated activity
    # (source and sink) is a one-activity path, counted separately.
    expected = sum(
        sum(1 for p in nx.all_simple_paths(g, s, [t for t in sinks if t != s]) if len(p) > 1)
        for s in sources
    ) + sum(1 for a in sources if a in sinks)
    assert count_paths(make_net(n, links)) == expected


def test_ties_on_large_complete_layered_network_are_lexicographic():
    # 3**40 paths, all of the same length: the ranking must fall back to activity indices.
    # itertools.product yields tuples in lexicographic order (Python docs), so the first
    # k choices of one activity per layer are the expected top k.
    width, layers, k = 3, 40, 7
    net = complete_layered(width, layers)
    te = np.full(net.n, 2.5)
    var = np.full(net.n, 0.5)
    got = k_longest_paths(net, te, var, k)
    choices = itertools.islice(itertools.product(range(width), repeat=layers), k)
    expected = [[layer * width + r for layer, r in enumerate(c)] for c in choices]
    assert [p.activities for p in got] == expected
    assert all(p.mean == pytest.approx(2.5 * layers) for p in got)
    assert all(p.variance == pytest.approx(0.5 * layers) for p in got)
