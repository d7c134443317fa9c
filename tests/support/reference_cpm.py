"""An independent CPM for checks: precedence-diagramming passes solved with networkx.

Each link is an edge p -> s weighted by its type's rule on start times (FS: d_p + lag;
SS: lag; FF: d_p + lag - d_s; SF: lag - d_s), plus an origin with a zero edge to every
activity (ES >= 0). The early start is the longest path from the origin (the standard
precedence-diagramming result; Kelley 1961), computed with
``networkx.single_source_bellman_ford_path_length`` on negated weights; the late start
reads the same difference constraints backwards from the project finish.
"""

from __future__ import annotations

import networkx as nx
import numpy as np

LINK_CODES = {"FS": 0, "SS": 1, "FF": 2, "SF": 3}


def reference_cpm(
    n, pred, succ, kinds, lags, d, floor=None
) -> tuple[np.ndarray, np.ndarray, float]:
    """``(early starts, late starts, project finish)``; ``kinds`` as 0..3 = FS, SS, FF, SF.

    ``floor`` (optional): each activity's start floor, the weight of its origin edge."""
    fs, ff, sf = 0, 2, 3  # SS (1) adds only its lag
    g = nx.DiGraph()
    for i in range(n):
        g.add_edge("origin", i, weight=0.0 if floor is None else float(max(0.0, floor[i])))
    for p, s, k, lag in zip(pred, succ, kinds, lags):
        w = lag + (d[p] if k in (fs, ff) else 0.0) - (d[s] if k in (ff, sf) else 0.0)
        if g.has_edge(p, s):
            w = max(w, g[p][s]["weight"])
        g.add_edge(p, s, weight=w)
    neg = nx.DiGraph()
    for u, v, w in g.edges(data="weight"):
        neg.add_edge(u, v, weight=-w)
    dist = nx.single_source_bellman_ford_path_length(neg, "origin", weight="weight")
    es = np.array([-dist[i] for i in range(n)])
    finish = float(max(es[i] + d[i] for i in range(n)))
    ls = np.array([finish - d[i] for i in range(n)], dtype=float)
    for i in reversed(list(nx.topological_sort(g.subgraph(range(n))))):
        for s in g.successors(i):
            ls[i] = min(ls[i], ls[s] - g[i][s]["weight"])
    return es, ls, finish


def reference_status_cpm(
    n, pred, succ, kinds, lags, d, state, actual_start, actual_finish, status, remaining
):
    """Early and late event times of a project in flight, on an event graph of its own.

    Each activity has a start event and a finish event (nodes ``("S", i)``, ``("F", i)``);
    an edge u -> v of weight w says ``t_v >= t_u + w``, and early times are the longest
    paths from an origin (networkx Bellman-Ford on negated weights). Written from the rules
    of a status update directly, not from pertbook's lag-shifting:

    * finished: start and finish fixed at the actual dates (origin edges; no edges into
      them);
    * in progress: start fixed at the actual start; finish >= status + remaining, and for
      the remaining work (retained logic) finish >= the event a start-constraining link
      (FS, SS) names + lag + remaining; FF / SF links bound the finish as usual;
    * not started: start >= status; finish = start + d (edges both ways); links as usual.

    Returns ``(early start, early finish, late finish, project finish)``: the late finish
    of each finish event is the project finish less the longest path from it to the end.
    """
    g = nx.DiGraph()
    S = [("S", i) for i in range(n)]
    F = [("F", i) for i in range(n)]

    def edge(u, v, w):
        if g.has_edge(u, v):
            w = max(w, g[u][v]["weight"])
        g.add_edge(u, v, weight=float(w))

    for i in range(n):
        if state[i] == "finished":
            edge("origin", S[i], actual_start[i])
            edge("origin", F[i], actual_finish[i])
        elif state[i] == "in progress":
            edge("origin", S[i], actual_start[i])
            edge("origin", F[i], status + remaining[i])
        else:
            edge("origin", S[i], status)
            edge(S[i], F[i], d[i])
            edge(F[i], S[i], -d[i])
        edge(F[i], "end", 0.0)
    for p, s, k, lag in zip(pred, succ, kinds, lags):
        if state[s] == "finished":
            continue
        source = F[p] if k in (0, 2) else S[p]  # FS, FF from the finish
        if state[s] == "in progress":
            if k in (0, 1):  # FS, SS: the remaining work waits
                edge(source, F[s], lag + remaining[s])
            else:
                edge(source, F[s], lag)
        else:
            edge(source, S[s] if k in (0, 1) else F[s], lag)
    neg = nx.DiGraph()
    for u, v, w in g.edges(data="weight"):
        neg.add_edge(u, v, weight=-w)
    dist = nx.single_source_bellman_ford_path_length(neg, "origin", weight="weight")
    es = np.array([-dist[S[i]] for i in range(n)])
    ef = np.array([-dist[F[i]] for i in range(n)])
    finish = float(ef.max())
    rev = nx.DiGraph()
    for u, v, w in neg.edges(data="weight"):
        rev.add_edge(v, u, weight=w)
    to_end = nx.single_source_bellman_ford_path_length(rev, "end", weight="weight")
    lf = np.array([finish + to_end[F[i]] for i in range(n)])
    return es, ef, lf, finish


def reference_cpm_expanded(
    n, pred, succ, kinds, lags, d
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, float]:
    """``(ES, EF, LS, LF, finish)`` from a second, differently built longest-path model.

    Every activity i becomes two nodes, its start ``("S", i)`` and finish ``("F", i)``,
    held exactly ``d_i`` apart by an edge S -> F of weight ``d_i`` and an edge F -> S of
    weight ``-d_i`` (a zero-weight cycle, so Bellman-Ford rather than a DAG routine).
    Each link is its own edge of a ``networkx.MultiDiGraph`` from the end of the
    predecessor its type reads (FS, FF: finish; SS, SF: start) to the end of the successor
    it bounds (FS, SS: start; FF, SF: finish), weighted by its lag; two links between one
    pair (a ladder, or any number of them) are simply parallel or separate edges. An origin
    with a zero edge to every start gives ES >= 0. Early times are the longest paths from
    the origin (Kelley 1961), late times ``finish`` minus the longest paths to a sink fed
    by every finish, both by ``networkx.single_source_bellman_ford_path_length`` on negated
    weights (for parallel edges networkx takes the least negated weight: the binding link).
    """
    start_end = {0: "F", 1: "S", 2: "F", 3: "S"}  # the predecessor's end each type reads
    bound_end = {0: "S", 1: "S", 2: "F", 3: "F"}  # the successor's end each type bounds
    g = nx.MultiDiGraph()
    for i in range(n):
        g.add_edge("origin", ("S", i), weight=0.0)
        g.add_edge(("S", i), ("F", i), weight=float(d[i]))
        g.add_edge(("F", i), ("S", i), weight=-float(d[i]))
        g.add_edge(("F", i), "sink", weight=0.0)
    for p, s, k, lag in zip(pred, succ, kinds, lags):
        g.add_edge((start_end[int(k)], p), (bound_end[int(k)], s), weight=float(lag))
    neg = nx.MultiDiGraph()
    neg.add_weighted_edges_from((u, v, -w) for u, v, w in g.edges(data="weight"))
    early = nx.single_source_bellman_ford_path_length(neg, "origin", weight="weight")
    es = np.array([-early[("S", i)] for i in range(n)])
    ef = np.array([-early[("F", i)] for i in range(n)])
    finish = float(ef.max()) if n else 0.0
    to_sink = nx.single_source_bellman_ford_path_length(
        neg.reverse(copy=True), "sink", weight="weight"
    )
    ls = np.array([finish + to_sink[("S", i)] for i in range(n)])
    lf = np.array([finish + to_sink[("F", i)] for i in range(n)])
    return es, ef, ls, lf, finish
