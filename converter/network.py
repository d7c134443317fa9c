"""Critical path method over numpy arrays.

The network is held as link arrays (predecessor, successor, type, lag). Activities
are grouped into *levels* (a level's activities depend only on earlier levels), so
the forward and backward passes do one vectorised step per level, not one Python
step per activity. Durations may be a vector ``(n,)`` or a matrix ``(n, m)`` of
``m`` scenarios (the Monte Carlo simulation passes a chunk of iterations at once).
Cost is linear in activities + links.

Link rules (precedence diagramming method, e.g. Moder, Phillips & Davis,
*Project Management with CPM, PERT and Precedence Diagramming*, 3rd ed., 1983),
for a link p -> s with lag L and fixed durations d:

* FS: ES_s >= EF_p + L
* SS: ES_s >= ES_p + L
* FF: ES_s >= EF_p + L - d_s
* SF: ES_s >= ES_p + L - d_s

and ES >= 0 for every activity. The backward pass is anchored at the project
finish (the largest early finish): no activity may finish later than it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import FF, FS, SF, SS


class CycleError(ValueError):
    """The links contain a dependency cycle (validation should have caught it)."""


@dataclass(frozen=True)
class _Step:
    nodes: np.ndarray  # activities fixed in this step (those with links)
    links: np.ndarray  # link indices, grouped by ``nodes`` in order
    starts: np.ndarray  # reduceat segment starts into ``links``


@dataclass(frozen=True)
class Network:
    """An activity network in array form (see module docstring)."""

    n: int
    pred: np.ndarray
    succ: np.ndarray
    kind: np.ndarray
    lag: np.ndarray
    order: np.ndarray  # a topological order of the activities
    level: np.ndarray  # forward level: 0 for activities without predecessors
    forward_steps: tuple[_Step, ...]
    backward_steps: tuple[_Step, ...]

    @property
    def link_count(self) -> int:
        return int(self.pred.size)

    def predecessors(self, j: int) -> np.ndarray:
        return self.pred[self.succ == j]

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
        steps.append(_Step(nodes=nodes[starts], links=links, starts=starts))
    return tuple(steps)


def build_network(
    n: int,
    pred: np.ndarray | list[int],
    succ: np.ndarray | list[int],
    kind: np.ndarray | list[int] | None = None,
    lag: np.ndarray | list[float] | None = None,
) -> Network:
    """Build the array form of a network of ``n`` activities.

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
    return Network(
        n=n,
        pred=pred,
        succ=succ,
        kind=kind,
        lag=lag,
        order=order,
        level=level,
        forward_steps=_steps(level, succ),
        backward_steps=_steps(height, pred),
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


def forward_pass(net: Network, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Early start and early finish for durations ``d`` of shape (n,) or (n, m)."""
    d = np.asarray(d, dtype=float)
    es = np.zeros_like(d)
    ef = d.copy()
    for step in net.forward_steps:
        push = _link_push(net, step.links, es, ef, d)
        best = np.maximum.reduceat(push, step.starts, axis=0)
        best = np.maximum(best, 0.0)
        es[step.nodes] = best
        ef[step.nodes] = best + d[step.nodes]
    return es, ef


def backward_pass(
    net: Network, d: np.ndarray, finish: np.ndarray | float
) -> tuple[np.ndarray, np.ndarray]:
    """Late start and late finish anchored at ``finish`` (per scenario for 2-D ``d``)."""
    d = np.asarray(d, dtype=float)
    lf = np.broadcast_to(np.asarray(finish, dtype=float), d.shape).copy()
    ls = lf - d
    for step in net.backward_steps:
        links = step.links
        p, s, k = net.pred[links], net.succ[links], net.kind[links]
        lag = net.lag[links]
        if d.ndim == 2:
            lag = lag[:, None]
        to_finish = (k == FF) | (k == SF)  # successor's finish is what the link ties
        from_start = (k == SS) | (k == SF)  # predecessor's start is what the link ties
        sel_t = to_finish if d.ndim == 1 else to_finish[:, None]
        sel_f = from_start if d.ndim == 1 else from_start[:, None]
        anchor = np.where(sel_t, lf[s], ls[s]) if to_finish.any() else ls[s]
        pull = anchor - lag
        if from_start.any():
            pull = pull + np.where(sel_f, d[p], 0.0)
        best = np.minimum.reduceat(pull, step.starts, axis=0)
        nodes = step.nodes
        lf[nodes] = np.minimum(best, lf[nodes])
        ls[nodes] = lf[nodes] - d[nodes]
    return ls, lf


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


def critical_tolerance(finish: float) -> float:
    """Float at or below this counts as zero: 1e-9 relative to the project length."""
    return 1e-9 * max(1.0, abs(float(finish)))


def schedule(net: Network, d: np.ndarray) -> CpmResult:
    """Forward pass, backward pass, total and free float, critical flags (1-D ``d``).

    Free float is the least slack over the activity's outgoing links and to the
    project finish; total float is LS - ES.
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
