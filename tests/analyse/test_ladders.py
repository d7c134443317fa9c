"""Ladders and repeated links: several links between one pair of activities (issue 11).

External references: a second longest-path model built with networkx
(``reference_cpm.reference_cpm_expanded``: start and finish nodes, one edge per link, a
MultiDiGraph, Bellman-Ford), the first one (``reference_cpm.reference_cpm``: one node per
activity), networkx's enumeration of every path (``all_simple_edge_paths`` on a
MultiDiGraph keyed by link) and reachability (``has_path``), and hand-worked examples with
the precedence diagramming rules of Moder, Phillips & Davis (*Project Management with CPM,
PERT and Precedence Diagramming*, 3rd ed., 1983; the rules from memory of that text):
FS: ES_s >= EF_p + L, SS: ES_s >= ES_p + L, FF: EF_s >= EF_p + L, SF: EF_s >= ES_p + L.
The SS-with-FF "ladder" as an overlap of two activities: Fondahl (1961), from memory.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference_cpm import reference_cpm, reference_cpm_expanded

from converter.analyse import simulate as sim
from converter.analyse.checks import run_checks
from converter.analyse.ladders import link_names, route_text
from converter.analyse.network import (
    build_network,
    critical_tolerance,
    driving_push,
    forward_pass,
    link_pull,
    schedule,
)
from converter.analyse.paths import count_paths, k_longest_paths
from converter.analyse.redundant import redundant_links
from converter.model import FF, FS, SF, SS

# --------------------------------------------------------------------------- hand-worked

# A(6) -> B(4) by SS+2 and FF+3 (a ladder); A -> C(3) FS; B -> D(2) FS; C -> D FS+1.
HAND = dict(
    n=4,
    pred=[0, 0, 1, 0, 2],
    succ=[1, 1, 3, 2, 3],
    kind=[SS, FF, FS, FS, FS],
    lag=[2.0, 3.0, 0.0, 0.0, 1.0],
)
HAND_D = np.array([6.0, 4.0, 3.0, 2.0])
HAND_VAR = np.array([1.0, 0.25, 0.5, 0.1])


def hand_net():
    return build_network(HAND["n"], HAND["pred"], HAND["succ"], HAND["kind"], HAND["lag"])


def test_hand_worked_ladder_passes_floats_and_driving_links():
    # Worked by hand with the PDM rules (Moder et al. 1983):
    # forward: ES_A = 0, EF_A = 6
    #          ES_B = max(ES_A + 2 (SS), EF_A + 3 - d_B = 5 (FF)) = 5, EF_B = 9
    #          ES_C = EF_A = 6, EF_C = 9
    #          ES_D = max(EF_B = 9, EF_C + 1 = 10) = 10, EF_D = 12; finish 12
    # backward: LF_D = 12, LS_D = 10; LF_C = LS_D - 1 = 9, LS_C = 6; LF_B = LS_D = 10, LS_B = 6
    #          LF_A = min(LS_C = 6 (FS), LS_B - 2 + d_A = 10 (SS), LF_B - 3 = 7 (FF)) = 6
    # total float LS - ES: A 0, B 1, C 0, D 0
    # link slack (ES_s minus what the link allows): SS 5 - 2 = 3, FF 5 - 5 = 0,
    #          B->D 10 - 9 = 1, A->C 6 - 6 = 0, C->D 10 - 10 = 0
    # free float = least slack out and to the finish: A min(3, 0, 0, 6) = 0,
    #          B min(1, 3) = 1, C min(0, 3) = 0, D 12 - 12 = 0
    net = hand_net()
    r = schedule(net, HAND_D)
    assert r.es.tolist() == [0.0, 5.0, 6.0, 10.0]
    assert r.ef.tolist() == [6.0, 9.0, 9.0, 12.0]
    assert r.ls.tolist() == [0.0, 6.0, 6.0, 10.0]
    assert r.lf.tolist() == [6.0, 10.0, 9.0, 12.0]
    assert r.finish == 12.0
    assert r.total_float.tolist() == [0.0, 1.0, 0.0, 0.0]
    assert r.free_float.tolist() == [0.0, 1.0, 0.0, 0.0]
    assert r.critical.tolist() == [True, False, True, True]
    assert r.link_slack.tolist() == [3.0, 0.0, 1.0, 0.0, 0.0]
    # what each link allows (the Links sheet's columns), by hand from the same rules
    assert driving_push(net, r.es, r.ef, HAND_D).tolist() == [2.0, 5.0, 9.0, 6.0, 10.0]
    # latest finish each link allows its predecessor: SS LS_B - 2 + d_A = 10, FF LF_B - 3 = 7,
    # B->D LS_D = 10, A->C LS_C = 6, C->D LS_D - 1 = 9
    assert link_pull(net, r.ls, r.lf, HAND_D).tolist() == [10.0, 7.0, 10.0, 6.0, 9.0]
    # both independent references agree
    es, ef, ls, lf, finish = reference_cpm_expanded(
        HAND["n"], HAND["pred"], HAND["succ"], HAND["kind"], HAND["lag"], HAND_D
    )
    assert (es.tolist(), lf.tolist(), finish) == (r.es.tolist(), r.lf.tolist(), 12.0)


def test_hand_worked_ladder_near_critical_paths():
    # Paths start where no FS/SS link (lag >= 0) comes in (A) and end where no FS/FF link
    # leaves (D). A path through the ladder goes by either link, so there are three, each
    # worked by hand with the finish recurrences of Moder et al. (see test_paths.py):
    #  1. A -FS-> C -FS+1-> D: 6 + 3 + 1 + 2 = 12, coefficients 1 1 1, var 1 + .5 + .1 = 1.6
    #  2. A -FF+3-> B -FS-> D: EF_B = 6 + 3 = 9, EF_D = 11; coefficients 1 0 1 (B entered by
    #     FF does not add its duration), var 1 + .1 = 1.1
    #  3. A -SS+2-> B -FS-> D: EF_B = 6 - 6 + 2 + 4 = 6, EF_D = 8; coefficients 0 1 1 (A left
    #     by SS), var .25 + .1 = .35
    net = hand_net()
    got = k_longest_paths(net, HAND_D, HAND_VAR, 10)
    assert [(p.activities, p.links, p.coefficients, p.mean) for p in got] == [
        ([0, 2, 3], [3, 4], [1, 1, 1], 12.0),
        ([0, 1, 3], [1, 2], [1, 0, 1], 11.0),
        ([0, 1, 3], [0, 2], [0, 1, 1], 8.0),
    ]
    assert [p.variance for p in got] == pytest.approx([1.6, 1.1, 0.35])
    assert count_paths(net) == 3  # neither duplicated nor lost
    # the two paths through the ladder read apart
    ids = ["A", "B", "C", "D"]
    assert [route_text(ids, net, p.activities, p.links) for p in got] == [
        "A > C > D",
        "A[FF+3] > B > D",
        "A[SS+2] > B > D",
    ]


def test_hand_worked_ladder_health_checks_count_links_not_pairs():
    # 5 links between 4 pairs: the link-type check counts both ladder links (2 of 5 = 40%),
    # the lag check the three lagged links (issue 11: count links, not pairs; DCMA 2012 counts
    # relationships, from memory)
    net = hand_net()
    ids = ["A", "B", "C", "D"]
    r = schedule(net, HAND_D)
    checks = {c.key: c for c in run_checks(ids, HAND_D, HAND_D, HAND_D, net, r)}
    types = checks["link_types"]
    assert (types.count, types.out_of) == (2, 5)
    assert types.activities == ["A->B [SS+2]", "A->B [FF+3]"]
    assert "5 links between 4 pairs" in types.detail
    lags = checks["lags"]
    assert lags.activities == ["A->B [SS+2]", "A->B [FF+3]", "C->D"]
    assert "counted per link" in lags.detail
    assert link_names(ids, net, np.array([False, False, True, False, False])) == ["B->D"]


def test_hand_worked_ladder_simulation():
    # Fixed durations (O = M = P): every iteration is the hand-worked schedule above, so the
    # project takes 12 every time and A, C, D are critical in every iteration, B in none.
    net = hand_net()
    d = HAND_D.tolist()
    r = sim.simulate(net, d, d, d, iterations=200, seed=3)
    assert np.all(r.durations == 12.0)
    assert r.criticality.tolist() == [1.0, 0.0, 1.0, 1.0]


# --------------------------------------------------------------------------- random networks


@st.composite
def ladder_networks(draw, max_n: int = 9, lags=(-2.0, -1.0, 0.0, 0.0, 1.0, 1.5, 3.0)):
    """A random DAG on shuffled numbering where a linked pair has 1 to 4 links of distinct
    types (the input rules allow one link per type and pair), often SS with FF."""
    n = draw(st.integers(2, max_n))
    perm = draw(st.permutations(range(n)))
    links = []
    for i in range(n):
        for j in range(i + 1, n):
            if not draw(st.booleans()):
                continue
            kinds = draw(
                st.one_of(
                    st.just([SS, FF]),
                    st.lists(
                        st.sampled_from([FS, SS, FF, SF]), min_size=1, max_size=4, unique=True
                    ),
                )
            )
            for k in kinds:
                links.append((perm[i], perm[j], k, draw(st.sampled_from(lags))))
    d = draw(st.lists(st.sampled_from([0.0, 0.5, 1.0, 2.0, 3.5, 5.0, 8.0]), min_size=n, max_size=n))
    return n, links, np.array(d)


def arrays(links):
    return [[lk[x] for lk in links] for x in range(4)]


@settings(max_examples=300, deadline=None)
@given(ladder_networks())
def test_passes_floats_and_driving_links_match_networkx_longest_paths(case):
    n, links, d = case
    pred, succ, kind, lag = arrays(links)
    net = build_network(n, pred, succ, kind, lag)
    r = schedule(net, d)
    # networkx reference 1: start/finish nodes, one edge per link (MultiDiGraph)
    es, ef, ls, lf, finish = reference_cpm_expanded(n, pred, succ, kind, lag, d)
    np.testing.assert_allclose(r.es, es, atol=1e-9)
    np.testing.assert_allclose(r.ef, ef, atol=1e-9)
    np.testing.assert_allclose(r.ls, ls, atol=1e-9)
    np.testing.assert_allclose(r.lf, lf, atol=1e-9)
    assert r.finish == pytest.approx(finish, abs=1e-9)
    # networkx reference 2: one node per activity, parallel links folded by max weight
    es2, ls2, finish2 = reference_cpm(n, pred, succ, kind, lag, d)
    np.testing.assert_allclose(es, es2, atol=1e-9)
    np.testing.assert_allclose(ls, ls2, atol=1e-9)
    # floats from the reference times: total float LS - ES; each link's slack is the
    # successor's ES minus the start the link allows (Moder et al. rules, written out here);
    # free float the least slack out of the activity and to the finish
    tol = critical_tolerance(finish)
    tf = ls - es
    np.testing.assert_allclose(r.total_float, np.where(np.abs(tf) <= tol, 0.0, tf), atol=1e-9)
    allows = {
        FS: lambda p, s, g: ef[p] + g,
        SS: lambda p, s, g: es[p] + g,
        FF: lambda p, s, g: ef[p] + g - d[s],
        SF: lambda p, s, g: es[p] + g - d[s],
    }
    slack = np.array([es[s] - allows[k](p, s, g) for p, s, k, g in links])
    np.testing.assert_allclose(r.link_slack, slack, atol=1e-9)
    free = finish - ef
    for (p, _s, _k, _g), x in zip(links, slack, strict=True):
        free[p] = min(free[p], x)
    np.testing.assert_allclose(r.free_float, np.where(np.abs(free) <= tol, 0.0, free), atol=1e-9)
    # a driving link: one with no slack (the link that sets its successor's early start)
    driving = np.abs(r.link_slack) <= tol
    assert driving.tolist() == (np.abs(slack) <= tol).tolist()


@settings(max_examples=40, deadline=None)
@given(ladder_networks(max_n=7), st.integers(0, 2**31 - 1))
def test_simulation_passes_match_networkx_per_iteration(case, seed):
    # Every simulated iteration is one CPM over sampled durations: its project duration
    # and critical flags must be the networkx reference's for that column.
    n, links, d = case
    pred, succ, kind, lag = arrays(links)
    net = build_network(n, pred, succ, kind, lag)
    o, m, p = 0.5 * d, d, 2.0 * d + 1.0
    samples = sim.draw_samples(o, m, p, iterations=30, seed=seed).astype(float)
    r = sim.simulate_durations(net, samples)
    critical = np.zeros(n)
    for j in range(samples.shape[1]):
        es, _ef, ls, _lf, finish = reference_cpm_expanded(n, pred, succ, kind, lag, samples[:, j])
        assert r.durations[j] == pytest.approx(finish, abs=1e-9)
        critical += (ls - es) <= critical_tolerance(finish)
    np.testing.assert_allclose(r.criticality, critical / samples.shape[1])
    # the matrix pass used by the runs equals the vector pass column by column
    es_m, _ = forward_pass(net, samples)
    for j in range(samples.shape[1]):
        np.testing.assert_allclose(es_m[:, j], forward_pass(net, samples[:, j])[0])


# --------------------------------------------------------------------------- paths


def brute_force_paths(n, links, te, var):
    """Every start -> end path by ``networkx.all_simple_edge_paths`` over a MultiDiGraph keyed
    by link, so a ladder's links are separate edges. Figures by the finish recurrences of
    Moder et al. (FS: EF_p + L + d_s; SS: EF_p - d_p + L + d_s; FF: EF_p + L; SF: EF_p - d_p
    + L); the variance coefficients as finite differences of that recurrence."""

    def finish(acts, lks, dur):
        x = dur[acts[0]]
        for p, s, k in zip(acts, acts[1:], lks, strict=False):
            _p, _s, kind, lag = links[k]
            base = x if kind in (FS, FF) else x - dur[p]
            x = base + lag + (dur[s] if kind in (FS, SS) else 0.0)
        return x

    starts = [
        a for a in range(n) if not any(s == a and k in (FS, SS) and g >= 0 for _p, s, k, g in links)
    ]
    ends = [
        a for a in range(n) if not any(p == a and k in (FS, FF) and g >= 0 for p, _s, k, g in links)
    ]
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n))
    for i, (p, s, _k, _g) in enumerate(links):
        g.add_edge(p, s, key=i)
    zero = np.zeros(n)
    out = []
    for a in starts:
        seqs = [[]] if a in ends else []
        targets = [b for b in ends if b != a]
        if targets:
            seqs += [e for e in nx.all_simple_edge_paths(g, a, targets) if e]
        for seq in seqs:
            acts = [a] + [e[1] for e in seq]
            lks = [e[2] for e in seq]
            base = finish(acts, lks, zero)
            coefs = [finish(acts, lks, np.eye(n)[x]) - base for x in acts]
            variance = sum(c * c * var[x] for c, x in zip(coefs, acts, strict=True))
            out.append((finish(acts, lks, te), variance, acts, lks))
    out.sort(key=lambda r: (-r[0], -r[1], r[2], r[3]))
    return out


@settings(max_examples=200, deadline=None)
@given(
    ladder_networks(max_n=6, lags=(-1.0, 0.0, 0.0, 1.0, 2.0)),
    st.data(),
    st.integers(1, 12),
)
def test_near_critical_paths_through_ladders_match_brute_force(case, data, k):
    n, links, _d = case
    # small integers: every sum exact, ties common (the tie rule is fully specified)
    te = np.array(data.draw(st.lists(st.integers(0, 5), min_size=n, max_size=n)), float)
    var = np.array(data.draw(st.lists(st.integers(0, 3), min_size=n, max_size=n)), float)
    pred, succ, kind, lag = arrays(links)
    net = build_network(n, pred, succ, kind, lag)
    brute = brute_force_paths(n, links, te, var)
    got = k_longest_paths(net, te, var, k)
    assert [(p.mean, p.variance, p.activities, p.links) for p in got] == [
        (e[0], e[1], e[2], e[3]) for e in brute[:k]
    ]
    # no link sequence listed twice, none lost: the count is networkx's
    assert len({tuple(p.links) + tuple(p.activities[:1]) for p in got}) == len(got)
    assert count_paths(net) == len(brute)
    assert got[0].mean == pytest.approx(schedule(net, te).finish, abs=1e-9)


# --------------------------------------------------------------------------- redundant links


def implied_by_others(n, links, j):
    """Whether plain FS link ``j`` is implied by the other links (the rule in
    converter/analyse/redundant.py): on a networkx graph of start/finish nodes with an edge
    per link of lag >= 0 from the end it reads to the end it bounds, and start -> finish of
    each activity, the successor's start is reachable from the predecessor's finish
    without link ``j`` (``networkx.has_path``)."""
    reads = {FS: "F", FF: "F", SS: "S", SF: "S"}
    bounds = {FS: "S", SS: "S", FF: "F", SF: "F"}
    g = nx.MultiDiGraph()
    for i in range(n):
        g.add_edge(("S", i), ("F", i))
    for i, (p, s, k, lag) in enumerate(links):
        if i != j and lag >= 0:
            g.add_edge((reads[k], p), (bounds[k], s))
    p, s, _k, _lag = links[j]
    return nx.has_path(g, ("F", p), ("S", s))


def test_redundant_link_through_a_ladder_hand_worked():
    # A -> B by SS+2 and FF+3, B -> C FS, A -> C FS: C starts >= B finishes >= A finishes
    # + 3 (the FF rung), so A -> C says nothing new; without the FF rung it does (SS bounds
    # B's start by A's start only).
    ladder = build_network(3, [0, 0, 1, 0], [1, 1, 2, 2], [SS, FF, FS, FS], [2, 3, 0, 0])
    assert redundant_links(ladder).tolist() == [False, False, False, True]
    ss_only = build_network(3, [0, 1, 0], [1, 2, 2], [SS, FS, FS], [2, 0, 0])
    assert redundant_links(ss_only).tolist() == [False, False, False]


@settings(max_examples=200, deadline=None)
@given(ladder_networks(max_n=7, lags=(0.0, 0.0, 0.0, 1.0, -1.0)))
def test_redundant_links_match_networkx_reachability(case):
    n, links, _d = case
    pred, succ, kind, lag = arrays(links)
    net = build_network(n, pred, succ, kind, lag)
    got = redundant_links(net).tolist()
    expected = [
        k == FS and g == 0 and implied_by_others(n, links, j)
        for j, (_p, _s, k, g) in enumerate(links)
    ]
    assert got == expected
