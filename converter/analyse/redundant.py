"""Redundant links: plain finish-to-start links that other links already imply.

The search for the schedule health check "redundant links" (:mod:`converter.analyse.checks`).
"""

from __future__ import annotations

import numpy as np

from converter.analyse.network import Network
from converter.model import FF, FS, SF, SS

#: Reachability is tracked for this many target nodes at a time (bounds memory).
_CHUNK = 4096


def redundant_links(net: Network) -> np.ndarray:
    """Mask of plain finish-to-start links (lag 0) implied by other links.

    A link A->C (FS, lag 0) says C starts no earlier than A finishes. It is redundant
    when other links already say so. With durations >= 0, track what each link
    bounds: FS (lag >= 0) bounds the successor's start by the predecessor's finish,
    SS its start by the predecessor's start, FF its finish by the predecessor's finish,
    SF its finish by the predecessor's start, and an activity's start bounds its own
    finish. On the graph of (activity, start|finish) nodes built from all links with
    lag >= 0, the link A->C is redundant when (C, start) is reachable from
    (A, finish) by a path of two or more edges, i.e. the edge is not in the graph's
    transitive reduction. A second copy of the same plain link, or a plain link beside
    an FS link with a positive lag between the same pair, is redundant too.
    Negative-lag links imply nothing here.

    Reachability is computed as bitsets over the targets, in reverse topological
    order, ``_CHUNK`` targets at a time: linear in nodes + edges per chunk.

    Parameters
    ----------
    net : Network
        The activity network (links with their types and lags).

    Returns
    -------
    numpy.ndarray of bool, shape (net.link_count,)
        True for each plain finish-to-start link that other links imply; other link
        types and lagged links are never marked.

    References
    ----------
    A. V. Aho, M. R. Garey and J. D. Ullman, "The transitive reduction of a directed
    graph", SIAM Journal on Computing 1(2), 131-137, 1972. The tests compare the result
    with ``networkx.transitive_reduction`` on plain finish-to-start networks.

    Examples
    --------
    A -> B -> C and A -> C: the direct link A -> C is implied by the chain.

    >>> from converter.analyse.network import build_network
    >>> net = build_network(3, pred=[0, 1, 0], succ=[1, 2, 2])
    >>> redundant_links(net).tolist()
    [False, False, True]

    With B -> C finish-to-finish, B bounds only C's finish, so A -> C is needed:

    >>> net = build_network(3, pred=[0, 1, 0], succ=[1, 2, 2], kind=[FS, FF, FS])
    >>> redundant_links(net).tolist()
    [False, False, False]
    """
    n, m = net.n, net.link_count
    out = np.zeros(m, dtype=bool)
    plain = (net.kind == FS) & (net.lag == 0)
    if not plain.any():
        return out
    # node 2i = start of activity i, 2i + 1 = its finish
    adj: list[set[int]] = [set() for _ in range(2 * n)]
    for i in range(n):
        adj[2 * i].add(2 * i + 1)  # a start bounds its own finish (duration >= 0)
    tail_end = {FS: 1, FF: 1, SS: 0, SF: 0}  # 1: the link starts from the predecessor's finish
    head_end = {FS: 0, SS: 0, FF: 1, SF: 1}  # 1: the link bounds the successor's finish
    lagged: set[tuple[int, int]] = set()
    links = zip(
        net.pred.tolist(), net.succ.tolist(), net.kind.tolist(), net.lag.tolist(), strict=True
    )
    for p, s, k, lag in links:
        if lag < 0:
            continue
        adj[2 * p + tail_end[k]].add(2 * s + head_end[k])
        if k == FS and lag > 0:
            lagged.add((p, s))
    judged: list[tuple[int, int, int]] = []  # (link, node of A's finish, node of C's start)
    seen: set[tuple[int, int]] = set()
    for j in np.flatnonzero(plain).tolist():
        p, s = int(net.pred[j]), int(net.succ[j])
        if (p, s) in seen or (p, s) in lagged:
            out[j] = True
        else:
            judged.append((j, 2 * p + 1, 2 * s))
        seen.add((p, s))
    targets = sorted({v for _, _, v in judged})
    order: list[int] = []
    for i in net.order[::-1].tolist():  # successors before predecessors; finish before start
        order += [2 * i + 1, 2 * i]
    for lo in range(0, len(targets), _CHUNK):
        bit = {v: 1 << b for b, v in enumerate(targets[lo : lo + _CHUNK])}
        reach = [0] * (2 * n)  # reach[u]: targets in this chunk reachable from u (u included)
        for u in order:
            r = bit.get(u, 0)
            for w in adj[u]:
                r |= reach[w]
            reach[u] = r
        for j, u, v in judged:
            b = bit.get(v)
            if b is not None and any(reach[w] & b for w in adj[u] if w != v):
                out[j] = True
    return out
