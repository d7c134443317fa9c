"""Critical path method over numpy arrays.

The network is held as link arrays (predecessor, successor, type, lag). Activities
are grouped into *levels* (a level's activities depend only on earlier levels), so
the forward and backward passes do one vectorised step per level, not one Python
step per activity; within a level the links are laid out in slots (``PassPlan``, in
:mod:`converter.analyse.passes`) so a step is a few gathers and in-place maxima.
Durations may be a vector ``(n,)`` or a matrix ``(n, m)`` of ``m`` scenarios: the Monte
Carlo simulation pushes a chunk of iterations through the very same passes. Cost is
linear in activities + links.

Link rules (precedence diagramming method, e.g. Moder, Phillips & Davis,
*Project Management with CPM, PERT and Precedence Diagramming*, 3rd ed., 1983),
for a link p -> s with lag L and fixed durations d:

* FS: ES_s >= EF_p + L
* SS: ES_s >= ES_p + L
* FF: ES_s >= EF_p + L - d_s
* SF: ES_s >= ES_p + L - d_s

and ES >= 0 for every activity, and ES >= its start floor where the network has one
(``floor``: a "Not before" constraint, or the status date for work not started). The
backward pass is anchored at the project
finish (the largest early finish): no activity may finish later than it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from converter.analyse.passes import PassPlan, backward_into, forward_into, pass_plan
from converter.model import FF, FS, SF, SS


class CycleError(ValueError):
    """The links contain a dependency cycle (validation should have caught it)."""


@dataclass(frozen=True)
class _Step:
    nodes: np.ndarray  # activities fixed in this step (those with links)
    links: np.ndarray  # link indices, grouped by ``nodes`` in order


@dataclass(frozen=True)
class Network:
    """An activity network in array form (see module docstring)."""

    n: int
    pred: np.ndarray
    succ: np.ndarray
    kind: np.ndarray
    lag: np.ndarray
    order: np.ndarray  # a topological order of the activities
    forward_steps: tuple[_Step, ...]
    backward_steps: tuple[_Step, ...]
    floor: np.ndarray | None = None  # per-activity start floor (None: 0 for every activity)

    @cached_property
    def plan(self) -> PassPlan:
        """The passes' slot layout (built once per network)."""
        return pass_plan(self)

    @property
    def link_count(self) -> int:
        return int(self.pred.size)

    def has_pred(self) -> np.ndarray:
        out = np.zeros(self.n, dtype=bool)
        out[self.succ] = True
        return out

    def has_succ(self) -> np.ndarray:
        out = np.zeros(self.n, dtype=bool)
        out[self.pred] = True
        return out


def _levels(n: int, tail: np.ndarray, head: np.ndarray) -> np.ndarray:
    """Longest number of links from a node without incoming links (Kahn 1962, by frontier)."""
    indeg = np.bincount(head, minlength=n)
    order_links = np.argsort(tail, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(tail, minlength=n), out=ptr[1:])
    heads_by_tail = head[order_links]
    level = np.full(n, -1, dtype=np.int64)
    frontier = np.flatnonzero(indeg == 0)
    depth = 0
    remaining = indeg.copy()
    while frontier.size:
        level[frontier] = depth
        lo, hi = ptr[frontier], ptr[frontier + 1]
        counts = hi - lo
        if counts.sum() == 0:
            break
        idx = np.repeat(lo - np.cumsum(counts) + counts, counts) + np.arange(counts.sum())
        targets = heads_by_tail[idx]
        np.subtract.at(remaining, targets, 1)
        cand = np.unique(targets)
        frontier = cand[remaining[cand] == 0]
        depth += 1
    if (level < 0).any():
        raise CycleError(f"dependency cycle among activities {np.flatnonzero(level < 0)[:10]}")
    return level


def _steps(level: np.ndarray, group_node: np.ndarray) -> tuple[_Step, ...]:
    """Group links by the level of the node they fix, then by that node."""
    if group_node.size == 0:
        return ()
    link_level = level[group_node]
    order = np.lexsort((group_node, link_level))
    lv = link_level[order]
    nodes_sorted = group_node[order]
    steps = []
    bounds = np.flatnonzero(np.diff(lv)) + 1
    for chunk in np.split(np.arange(order.size), bounds):
        links = order[chunk]
        nodes = nodes_sorted[chunk]
        starts = np.concatenate(([0], np.flatnonzero(np.diff(nodes)) + 1))
        steps.append(_Step(nodes=nodes[starts], links=links))
    return tuple(steps)


def build_network(
    n: int,
    pred: np.ndarray | list[int],
    succ: np.ndarray | list[int],
    kind: np.ndarray | list[int] | None = None,
    lag: np.ndarray | list[float] | None = None,
    floor: np.ndarray | list[float] | None = None,
) -> Network:
    """Build the array form of a network of ``n`` activities.

    ``floor`` (optional) is each activity's start floor: its early start is at least that
    (and at least 0); None or all zero gives the plain passes.

    Raises
    ------
    CycleError
        If the links contain a cycle.
    """
    pred = np.asarray(pred, dtype=np.int64).reshape(-1)
    succ = np.asarray(succ, dtype=np.int64).reshape(-1)
    kind = (
        np.zeros(pred.size, dtype=np.int8)
        if kind is None
        else np.asarray(kind, dtype=np.int8).reshape(-1)
    )
    lag = np.zeros(pred.size) if lag is None else np.asarray(lag, dtype=float).reshape(-1)
    level = _levels(n, pred, succ)
    height = _levels(n, succ, pred)
    order = np.argsort(level, kind="stable")
    floors = None
    if floor is not None:
        floors = np.maximum(np.asarray(floor, dtype=float).reshape(-1), 0.0)
        if floors.size != n:
            raise ValueError(f"floor needs {n} values, got {floors.size}")
        if not floors.any():
            floors = None
    return Network(
        n=n,
        pred=pred,
        succ=succ,
        kind=kind,
        lag=lag,
        order=order,
        forward_steps=_steps(level, succ),
        backward_steps=_steps(height, pred),
        floor=floors,
    )


def _link_push(net: Network, links: np.ndarray, es: np.ndarray, ef: np.ndarray, d: np.ndarray):
    """Earliest start each link allows its successor (see module docstring)."""
    p, s, k = net.pred[links], net.succ[links], net.kind[links]
    lag = net.lag[links]
    if es.ndim == 2:
        lag = lag[:, None]
    from_finish = (k == FS) | (k == FF)
    to_finish = (k == FF) | (k == SF)
    if from_finish.all():
        base = ef[p]
    elif not from_finish.any():
        base = es[p]
    else:
        sel = from_finish if es.ndim == 1 else from_finish[:, None]
        base = np.where(sel, ef[p], es[p])
    push = base + lag
    if to_finish.any():
        sel = to_finish if es.ndim == 1 else to_finish[:, None]
        push = push - np.where(sel, d[s], 0.0)
    return push


def _columns(d: np.ndarray) -> np.ndarray:
    d = np.asarray(d, dtype=float)
    return d[:, None] if d.ndim == 1 else d


def forward_pass(net: Network, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Early starts and early finishes: the forward pass of the critical path method.

    Each activity starts as early as its incoming links allow (link rules in the module
    docstring) and never before 0; it finishes its duration later. The pass visits the
    topological levels in order, one vectorised step per level.

    Parameters
    ----------
    net : Network
        The network, from :func:`build_network`.
    d : numpy.ndarray
        Durations, shape ``(n,)``, or ``(n, m)`` for ``m`` scenarios at once.

    Returns
    -------
    es, ef : numpy.ndarray
        Early start and early finish, the shape of ``d``.

    References
    ----------
    Kelley & Walker (1959), "Critical-path planning and scheduling", *Proceedings of the
    Eastern Joint IRE-AIEE-ACM Computer Conference*, 160-173; Kelley (1961),
    "Critical-path planning and scheduling: mathematical basis", *Operations Research*
    9(3), 296-320. Typed links and lags: Moder, Phillips & Davis (1983), see the module
    docstring.

    Examples
    --------
    Activity 0 precedes 1 and 2, which both precede 3 (finish-to-start):

    >>> net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
    >>> es, ef = forward_pass(net, np.array([2.0, 3.0, 5.0, 1.0]))
    >>> es.tolist(), ef.tolist()
    ([0.0, 2.0, 2.0, 7.0], [2.0, 5.0, 7.0, 8.0])
    """
    d = np.asarray(d, dtype=float)
    dd = _columns(d)
    x = np.empty((2 * net.n, dd.shape[1]))
    nonneg = bool(dd.min() >= 0.0) if dd.size else True
    forward_into(net.plan, dd, x, nonneg)
    es, ef = x[: net.n], x[net.n :]
    return (es[:, 0], ef[:, 0]) if d.ndim == 1 else (es, ef)


def backward_pass(
    net: Network, d: np.ndarray, finish: np.ndarray | float
) -> tuple[np.ndarray, np.ndarray]:
    """Late starts and late finishes: the backward pass of the critical path method.

    Each activity finishes as late as its outgoing links allow and never after
    ``finish``; it starts its duration earlier. The pass visits the topological heights
    in order (the activities without successors first).

    Parameters
    ----------
    net : Network
        The network, from :func:`build_network`.
    d : numpy.ndarray
        Durations, shape ``(n,)`` or ``(n, m)``.
    finish : float or numpy.ndarray
        The project finish the pass is anchored at; one per scenario for 2-D ``d``.

    Returns
    -------
    ls, lf : numpy.ndarray
        Late start and late finish, the shape of ``d``.

    References
    ----------
    Kelley & Walker (1959); Kelley (1961), *Operations Research* 9(3) (see
    :func:`forward_pass`).

    Examples
    --------
    The network of :func:`forward_pass`, anchored at its finish 8: activity 1 may
    start 2 units late.

    >>> net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
    >>> ls, lf = backward_pass(net, np.array([2.0, 3.0, 5.0, 1.0]), 8.0)
    >>> ls.tolist(), lf.tolist()
    ([0.0, 4.0, 2.0, 7.0], [2.0, 7.0, 7.0, 8.0])
    """
    d = np.asarray(d, dtype=float)
    dd = _columns(d)
    cols = dd.shape[1]
    anchor = np.broadcast_to(np.asarray(finish, dtype=float).reshape(-1), (cols,)).copy()
    y = np.empty((2 * net.n, cols))
    nonneg = bool(dd.min() >= 0.0) if dd.size else True
    backward_into(net.plan, dd, anchor, y, nonneg)
    ls, lf = y[: net.n], y[net.n :]
    return (ls[:, 0], lf[:, 0]) if d.ndim == 1 else (ls, lf)


@dataclass
class CpmResult:
    """Results of one forward and backward pass (arrays indexed by activity)."""

    es: np.ndarray
    ef: np.ndarray
    ls: np.ndarray
    lf: np.ndarray
    total_float: np.ndarray
    free_float: np.ndarray
    critical: np.ndarray
    finish: float
    link_slack: np.ndarray  # per link: successor ES minus the start the link allows


#: Relative float tolerance: a float within this share of the project length (at least
#: 1 time unit) counts as zero. The one home of the rule; see :func:`critical_tolerance`.
RELATIVE_TOLERANCE = 1e-9


def critical_tolerance(finish: float) -> float:
    """Float at or below this counts as zero: 1e-9 relative to the project length.

    ``RELATIVE_TOLERANCE * max(1, |finish|)``; :func:`critical_tolerances` is the same
    rule for one finish per column. Summing durations along a path rounds at about
    1e-16 relative, far below this, while schedule figures are given to far coarser
    steps, so true floats are never mistaken for zero.

    Examples
    --------
    >>> critical_tolerance(16.0)
    1.6e-08
    >>> critical_tolerance(0.5)
    1e-09
    """
    return RELATIVE_TOLERANCE * max(1.0, abs(float(finish)))


def critical_tolerances(finish: np.ndarray) -> np.ndarray:
    """:func:`critical_tolerance` of each value of ``finish`` (e.g. one per simulated iteration).

    Examples
    --------
    >>> critical_tolerances(np.array([0.5, 16.0])).tolist()
    [1e-09, 1.6e-08]
    """
    return RELATIVE_TOLERANCE * np.maximum(1.0, np.abs(finish))


def schedule(net: Network, d: np.ndarray) -> CpmResult:
    """Forward pass, backward pass, total and free float, critical flags (1-D ``d``).

    The project finish is the largest early finish; the backward pass is anchored at it.
    Total float is LS - ES; free float is the least slack over the activity's outgoing
    links and to the project finish. Floats within :func:`critical_tolerance` of zero
    are set to zero, and an activity is critical when its total float is zero.

    Parameters
    ----------
    net : Network
        The network, from :func:`build_network`.
    d : numpy.ndarray
        Durations, shape ``(n,)``.

    Returns
    -------
    CpmResult
        Early and late dates, floats, critical flags, the finish and each link's slack.

    References
    ----------
    Kelley & Walker (1959); Kelley (1961), *Operations Research* 9(3) (see
    :func:`forward_pass`); free float as in Moder, Phillips & Davis (1983).

    Examples
    --------
    >>> net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
    >>> r = schedule(net, np.array([2.0, 3.0, 5.0, 1.0]))
    >>> r.finish, r.total_float.tolist(), r.critical.tolist()
    (8.0, [0.0, 2.0, 0.0, 0.0], [True, False, True, True])
    """
    d = np.asarray(d, dtype=float)
    es, ef = forward_pass(net, d)
    finish = float(ef.max()) if d.size else 0.0
    ls, lf = backward_pass(net, d, finish)
    tf = ls - es
    all_links = np.arange(net.link_count)
    slack = es[net.succ] - _link_push(net, all_links, es, ef, d) if net.link_count else np.zeros(0)
    ff = finish - ef
    if net.link_count:
        np.minimum.at(ff, net.pred, slack)
    tol = critical_tolerance(finish)
    tf = np.where(np.abs(tf) <= tol, 0.0, tf)
    ff = np.where(np.abs(ff) <= tol, 0.0, ff)
    return CpmResult(
        es=es,
        ef=ef,
        ls=ls,
        lf=lf,
        total_float=tf,
        free_float=ff,
        critical=tf <= tol,
        finish=finish,
        link_slack=slack,
    )


def driving_push(net: Network, es: np.ndarray, ef: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Per link, the earliest start it allows its successor (for the links table)."""
    if not net.link_count:
        return np.zeros(0)
    return _link_push(net, np.arange(net.link_count), es, ef, d)


def link_pull(net: Network, ls: np.ndarray, lf: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Per link, the latest finish it allows its predecessor (backward-pass rules)."""
    if not net.link_count:
        return np.zeros(0)
    p, s, k = net.pred, net.succ, net.kind
    to_finish = (k == FF) | (k == SF)
    from_start = (k == SS) | (k == SF)
    return np.where(to_finish, lf[s], ls[s]) - net.lag + np.where(from_start, d[p], 0.0)
