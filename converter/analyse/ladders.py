"""Pairs of activities joined by more than one link (ladders): naming and counting links.

Two links of different types between one pair are normal practice: start-to-start with a
lag together with finish-to-finish with a lag lets the successor overlap its predecessor
but not finish before it (a "ladder"; Fondahl 1961 introduced the overlapping links of
precedence diagramming). The passes, floats, paths and simulation work per link, so a
ladder needs nothing special there; what needs care is saying *which* link of a pair is
meant, and that the health checks count links, not pairs. Both rules live here.
"""

from __future__ import annotations

import numpy as np

from converter.analyse.network import Network
from converter.model import LINK_TYPES


def shared_pair(net: Network) -> np.ndarray:
    """Per link: whether another link joins the same two activities in the same direction.

    Examples
    --------
    >>> from converter.analyse.network import build_network
    >>> from converter.model import FF, SS
    >>> net = build_network(3, [0, 0, 1], [1, 1, 2], [SS, FF, 0], [2.0, 3.0, 0.0])
    >>> shared_pair(net).tolist()
    [True, True, False]
    """
    if not net.link_count:
        return np.zeros(0, dtype=bool)
    _, inverse, counts = np.unique(_pair_keys(net), return_inverse=True, return_counts=True)
    return counts[inverse] > 1


def type_and_lag(kind: int, lag: float) -> str:
    """``SS+2``, ``FF-1``, ``FS``: a link's type and lag, as the bracket notation has them.

    Examples
    --------
    >>> type_and_lag(1, 2.0), type_and_lag(2, -1.5), type_and_lag(0, 0.0)
    ('SS+2', 'FF-1.5', 'FS')
    """
    return LINK_TYPES[int(kind)] + ("" if not lag else f"{float(lag):+g}")


def link_names(ids: list[str], net: Network, mask: np.ndarray) -> list[str]:
    """``"PRED->SUCC"`` for each link in ``mask`` (link order); a link of a pair with more
    than one link carries its type and lag, ``"PRED->SUCC [SS+2]"``, so that each name
    means one link.

    Examples
    --------
    >>> from converter.analyse.network import build_network
    >>> from converter.model import FF, SS
    >>> net = build_network(3, [0, 0, 1], [1, 1, 2], [SS, FF, 0], [2.0, 3.0, 0.0])
    >>> link_names(["A", "B", "C"], net, np.ones(3, dtype=bool))
    ['A->B [SS+2]', 'A->B [FF+3]', 'B->C']
    """
    shared = shared_pair(net)
    names = []
    for k in np.flatnonzero(mask).tolist():
        name = f"{ids[int(net.pred[k])]}->{ids[int(net.succ[k])]}"
        if shared[k]:
            name += f" [{type_and_lag(net.kind[k], net.lag[k])}]"
        names.append(name)
    return names


def _pair_keys(net: Network) -> np.ndarray:
    return net.pred.astype(np.int64) * max(net.n, 1) + net.succ


def per_link_text(net: Network) -> str:
    """What the link checks count, said where it matters (a pair with several links).

    Examples
    --------
    >>> from converter.analyse.network import build_network
    >>> from converter.model import FF, SS
    >>> per_link_text(build_network(3, [0, 0, 1], [1, 1, 2], [SS, FF, 0], [2.0, 3.0, 0.0]))[:45]
    'counted per link: 3 links between 2 pairs of '
    >>> per_link_text(build_network(2, [0], [1]))
    ''
    """
    pairs = int(np.unique(_pair_keys(net)).size)
    if pairs == net.link_count:
        return ""
    return (
        f"counted per link: {net.link_count} links between {pairs} pairs of activities "
        "(a pair linked twice, e.g. SS and FF, counts as two links)"
    )


def route_text(
    ids: list[str],
    net: Network,
    activities: list[int],
    links: list[int],
    shared: np.ndarray | None = None,
) -> str:
    """A path as people read it, ``A > B > C``; where the path leaves a pair that has
    more than one link, the link taken follows the ID in the bracket notation of the
    input (``A[SS+2] > B``), so two paths through a ladder read differently. ``shared``
    is :func:`shared_pair` of ``net`` when the caller has it already (many paths).

    Examples
    --------
    >>> from converter.analyse.network import build_network
    >>> from converter.model import FF, SS
    >>> net = build_network(3, [0, 0, 1], [1, 1, 2], [SS, FF, 0], [2.0, 3.0, 0.0])
    >>> route_text(["A", "B", "C"], net, [0, 1, 2], [1, 2])
    'A[FF+3] > B > C'
    """
    shared = shared_pair(net) if shared is None else shared
    parts = []
    for step, act in enumerate(activities):
        text = ids[act]
        if step < len(links) and shared[links[step]]:
            k = links[step]
            text += f"[{type_and_lag(net.kind[k], net.lag[k])}]"
        parts.append(text)
    return " > ".join(parts)
