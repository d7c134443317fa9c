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


def reference_cpm(n, pred, succ, kinds, lags, d) -> tuple[np.ndarray, np.ndarray, float]:
    """``(early starts, late starts, project finish)``; ``kinds`` as 0..3 = FS, SS, FF, SF."""
    fs, ff, sf = 0, 2, 3  # SS (1) adds only its lag
    g = nx.DiGraph()
    for i in range(n):
        g.add_edge("origin", i, weight=0.0)
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
