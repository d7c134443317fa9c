"""The k longest paths of an activity network (near-critical paths), by dynamic programming.

A path is a chain of activities joined by links. With fixed durations ``d`` its
finish time follows the precedence diagramming rules (Moder, Phillips & Davis,
*Project Management with CPM, PERT and Precedence Diagramming*, 3rd ed., 1983):
the first activity finishes at ``d``; along a link p -> s with lag L

* FS: EF_s = EF_p + L + d_s
* SS: EF_s = EF_p - d_p + L + d_s
* FF: EF_s = EF_p + L
* SF: EF_s = EF_p - d_p + L

so an activity's duration enters the path length with coefficient
``[first, or entered by FS/SS] - [left by SS/SF]`` (+1, 0 or -1). The PERT mean and
variance of the path are ``sum(c * te) + sum(lags)`` and ``sum(c**2 * var)``
(Malcolm, Roseboom, Clark & Fazar, Operations Research 7(5), 1959: path variance
is the sum of the activity variances, for independent activities).

Where a path may start and end. An activity may start a path unless an incoming
FS or SS link with lag >= 0 already implies its start is >= 0; it may end a path
unless an outgoing FS or FF link with lag >= 0 makes a successor finish no earlier.
For finish-to-start networks with non-negative lags these are the activities
without predecessors and without successors. An activity with a start floor
(``Network.floor``: a "Not before" date, the status date) may also start a path, whose
length then counts from that floor. Every other path is dominated by an
extension of itself, so the longest path's mean is the CPM project finish
(``network.schedule(net, te).finish``) when durations are non-negative.

Algorithm. The k-th best paths by dynamic programming keep the k best labels
(mean, variance, pointer) per node (Bellman & Kalaba, "On kth best policies",
J. SIAM 8(4), 1960). Because the variance uses the coefficient squared, each
activity is split into two states: left by a start-based link (SS/SF) or not.
Over those states (mean, variance) is additive, and the pass runs backwards over
the network's heights (``net.backward_steps``), one vectorised step per height.
Cost is about k x (activities + links) labels and one sort per height; the paths
themselves are never enumerated.

Ranking. Paths are ranked by mean (descending); means within 1e-9 relative to the
project length count as tied (``network.critical_tolerance``; compared on that
grid) and are ranked by variance (descending, same 1e-9 grid relative to the total
variance), then by activity indices in lexicographic order, then by link indices.
The lexicographic order is suffix-compatible, which is why the pass runs from the
ends backwards: the k best suffixes from a state are all a ranked list needs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from converter.analyse.network import Network, critical_tolerance, forward_pass
from converter.model import FF, FS, SF, SS


@dataclass
class Path:
    """One path: activities in order, the links joining them, and its PERT figures."""

    activities: list[int]
    links: list[int]  # len(activities) - 1 link indices
    coefficients: list[int]  # coefficient of each activity's duration in the length
    mean: float  # sum(coef * te) + sum(lag of links) + the first activity's start floor
    variance: float  # sum(coef**2 * var)

    @property
    def sd(self) -> float:
        return math.sqrt(max(self.variance, 0.0))


def _entry_exit(net: Network) -> tuple[np.ndarray, np.ndarray]:
    """Per link: enters the successor with its duration (FS/SS); leaves by a start (SS/SF)."""
    kind = net.kind
    enters = (kind == FS) | (kind == SS)
    leaves_start = (kind == SS) | (kind == SF)
    return enters, leaves_start


def path_ends(net: Network) -> tuple[np.ndarray, np.ndarray]:
    """Boolean masks: activities that may start a path, and that may end one (module docstring)."""
    kind, lag = net.kind, net.lag
    can_start = np.ones(net.n, dtype=bool)
    can_end = np.ones(net.n, dtype=bool)
    nonneg = lag >= 0
    can_start[net.succ[((kind == FS) | (kind == SS)) & nonneg]] = False
    can_end[net.pred[((kind == FS) | (kind == FF)) & nonneg]] = False
    return can_start, can_end


def count_paths(net: Network) -> int:
    """Number of start -> end paths (module docstring), as an exact Python int.

    Counts link sequences, so parallel links between two activities give separate paths.
    """
    can_start, can_end = path_ends(net)
    if net.floor is not None:  # a path may start at a start floor (module docstring)
        can_start = can_start | (net.floor > 0)
    count: list[int] = [int(s) for s in can_start]
    for step in net.forward_steps:  # links grouped by the level of their successor
        for link in step.links.tolist():
            count[int(net.succ[link])] += count[int(net.pred[link])]
    return sum(c for c, e in zip(count, can_end, strict=True) if e)


def _group_positions(group: np.ndarray) -> np.ndarray:
    """Position of each element within its run of equal values of sorted ``group``."""
    size = group.size
    if size == 0:
        return np.zeros(0, dtype=np.int64)
    new = np.ones(size, dtype=bool)
    new[1:] = group[1:] != group[:-1]
    first = np.flatnonzero(new)
    run_start = np.repeat(first, np.diff(np.append(first, size)))
    return np.arange(size) - run_start


@dataclass
class _Labels:
    """The k best suffixes from each (activity, state): label arrays ``(n, 2, k)``.

    State 1: the activity is left by an SS/SF link. A label describes the suffix after
    the activity (its own duration not yet counted): its mean and variance, a pointer
    to the next label (link, state, slot; link -1: the path ends here) and two ranks
    among the activity's labels for the tie-break (by activity sequence, and by
    activities then links).
    """

    mean: np.ndarray
    vari: np.ndarray
    nxt_link: np.ndarray
    nxt_state: np.ndarray
    nxt_slot: np.ndarray
    act_rank: np.ndarray
    full_rank: np.ndarray
    count: np.ndarray  # (n, 2): labels held per activity and state

    @classmethod
    def empty(cls, n: int, k: int, can_end: np.ndarray) -> _Labels:
        count = np.zeros((n, 2), dtype=np.int64)
        count[can_end, 0] = 1  # the empty suffix; nodes with links are redone step by step
        return cls(
            mean=np.zeros((n, 2, k)),
            vari=np.zeros((n, 2, k)),
            nxt_link=np.full((n, 2, k), -1, dtype=np.int64),
            nxt_state=np.zeros((n, 2, k), dtype=np.int64),
            nxt_slot=np.zeros((n, 2, k), dtype=np.int64),
            act_rank=np.zeros((n, 2, k), dtype=np.int64),
            full_rank=np.zeros((n, 2, k), dtype=np.int64),
            count=count,
        )


@dataclass
class _Search:
    """What every step of the search needs: the network, the figures, the tie grid."""

    net: Network
    te: np.ndarray
    var: np.ndarray
    k: int
    can_end: np.ndarray
    enters_i: np.ndarray  # per link: 1 if it enters its successor with its duration
    out_state: np.ndarray  # per link: the state of the predecessor it leaves
    q_mean: float  # tie grid of the means (network.critical_tolerance of the finish)
    q_var: float  # tie grid of the variances


@dataclass
class _Candidates:
    """Candidate labels for the activities of one step (one per label of a successor)."""

    mean: np.ndarray
    var: np.ndarray
    node: np.ndarray
    state: np.ndarray
    next_node: np.ndarray  # -1 for the empty suffix
    next_act_rank: np.ndarray
    link: np.ndarray
    next_full_rank: np.ndarray
    next_state: np.ndarray
    next_slot: np.ndarray


def _candidates(search: _Search, labels: _Labels, step) -> _Candidates:
    """Every link of the step extends every label of its successor; ends add the empty one."""
    net, slots = search.net, np.arange(search.k)
    links = step.links
    s = net.succ[links]
    valid = slots[None, None, :] < labels.count[s][:, :, None]
    li, xs, ms = np.nonzero(valid)
    lk = links[li]
    sj = s[li]
    coef = search.enters_i[lk] - xs
    cand = _Candidates(
        mean=labels.mean[sj, xs, ms] + net.lag[lk] + coef * search.te[sj],
        var=labels.vari[sj, xs, ms] + (coef * coef) * search.var[sj],
        node=net.pred[lk],
        state=search.out_state[lk],
        next_node=sj,
        next_act_rank=labels.act_rank[sj, xs, ms],
        link=lk,
        next_full_rank=labels.full_rank[sj, xs, ms],
        next_state=xs,
        next_slot=ms,
    )
    ends = step.nodes[search.can_end[step.nodes]]
    if ends.size:
        zero_i = np.zeros(ends.size, dtype=np.int64)
        minus = zero_i - 1
        zero_f = np.zeros(ends.size)
        extra = dict(
            mean=zero_f,
            var=zero_f,
            node=ends,
            state=zero_i,
            next_node=minus,
            next_act_rank=minus,
            link=minus,
            next_full_rank=minus,
            next_state=zero_i,
            next_slot=zero_i,
        )
        cand = _Candidates(
            **{name: np.concatenate((getattr(cand, name), extra[name])) for name in extra}
        )
    return cand


def _keep_best(search: _Search, labels: _Labels, step, cand: _Candidates) -> None:
    """Rank the candidates of each (activity, state) and keep the best k as its labels."""
    order = np.lexsort(
        (
            cand.next_full_rank,
            cand.link,
            cand.next_act_rank,
            cand.next_node,
            -np.round(cand.var / search.q_var),
            -np.round(cand.mean / search.q_mean),
            cand.state,
            cand.node,
        )
    )
    group = (cand.node * 2 + cand.state)[order]
    pos = _group_positions(group)
    keep = pos < search.k
    order, pos = order[keep], pos[keep]
    nd, st = cand.node[order], cand.state[order]
    labels.count[step.nodes] = 0
    np.add.at(labels.count, (nd, st), 1)
    labels.mean[nd, st, pos] = cand.mean[order]
    labels.vari[nd, st, pos] = cand.var[order]
    labels.nxt_link[nd, st, pos] = cand.link[order]
    labels.nxt_state[nd, st, pos] = cand.next_state[order]
    labels.nxt_slot[nd, st, pos] = cand.next_slot[order]
    _rank_kept(labels, cand, order, nd, st, pos)


def _rank_kept(labels: _Labels, cand: _Candidates, order, nd, st, pos) -> None:
    """Ranks among each node's kept labels (both states): activities first, then links."""
    kn, ka = cand.next_node[order], cand.next_act_rank[order]
    kl, kf = cand.link[order], cand.next_full_rank[order]
    rank_order = np.lexsort((kf, kl, ka, kn, nd))
    nd_r = nd[rank_order]
    labels.full_rank[nd_r, st[rank_order], pos[rank_order]] = _group_positions(nd_r)
    new_act = np.ones(nd_r.size, dtype=bool)
    new_act[1:] = (
        (nd_r[1:] != nd_r[:-1])
        | (kn[rank_order][1:] != kn[rank_order][:-1])
        | (ka[rank_order][1:] != ka[rank_order][:-1])
    )
    dense = np.cumsum(new_act)
    first_of_node = np.ones(nd_r.size, dtype=bool)
    first_of_node[1:] = nd_r[1:] != nd_r[:-1]
    base = np.repeat(dense[first_of_node], _run_lengths(first_of_node))
    labels.act_rank[nd_r, st[rank_order], pos[rank_order]] = dense - base


def _best_starts(search: _Search, labels: _Labels, can_start: np.ndarray):
    """The k best whole paths as (start activity, state, slot) of their first label.

    A whole path adds its starting activity's own term (it is entered with its duration).
    """
    starts = np.flatnonzero(can_start)
    floor = search.net.floor
    valid = np.arange(search.k)[None, None, :] < labels.count[starts][:, :, None]
    si, xs, ms = np.nonzero(valid)
    node = starts[si]
    coef = 1 - xs
    p_mean = labels.mean[node, xs, ms] + coef * search.te[node]
    if floor is not None:  # a path starts at its first activity's start floor
        p_mean = p_mean + floor[node]
    p_var = labels.vari[node, xs, ms] + (coef * coef) * search.var[node]
    order = np.lexsort(
        (
            labels.full_rank[node, xs, ms],
            node,
            -np.round(p_var / search.q_var),
            -np.round(p_mean / search.q_mean),
        )
    )
    return [(int(node[i]), int(xs[i]), int(ms[i])) for i in order[: search.k]]


def k_longest_paths(
    net: Network, te: np.ndarray, var: np.ndarray, k: int, ends: np.ndarray | None = None
) -> list[Path]:
    """The ``k`` longest start -> end paths, ranked as the module docstring says.

    A backward dynamic programme over the network's heights keeps the k best suffixes
    (labels) from every activity; whole paths are then the best labels of the
    activities that may start a path. The paths are never enumerated.

    Parameters
    ----------
    net : Network
        The network, from :func:`converter.analyse.network.build_network`.
    te, var : numpy.ndarray
        Expected duration (non-negative) and variance per activity.
    k : int
        How many paths; fewer come back when the network has fewer.
    ends : numpy.ndarray, optional
        Boolean mask of the activities a path may end at (default: those of
        :func:`path_ends`), e.g. one activity with an interim target: the longest path
        to it then has its early finish as mean.

    Returns
    -------
    list of Path
        Longest first; ties in mean are ranked by variance, then by activities and links.

    References
    ----------
    Bellman & Kalaba (1960), "On kth best policies", *Journal of the Society for
    Industrial and Applied Mathematics* 8(4), 582-588; the path variance as the sum of
    the activity variances: Malcolm, Roseboom, Clark & Fazar (1959), *Operations
    Research* 7(5).

    Examples
    --------
    Activity 0 precedes 1 and 2, which both precede 3:

    >>> from converter.analyse.network import build_network
    >>> net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
    >>> te, var = np.array([2.0, 3.0, 5.0, 1.0]), np.array([0.1, 0.4, 0.2, 0.1])
    >>> [(p.activities, p.mean, round(p.variance, 6)) for p in k_longest_paths(net, te, var, 3)]
    [([0, 2, 3], 8.0, 0.4), ([0, 1, 3], 6.0, 0.6)]
    """
    n = net.n
    te = np.asarray(te, dtype=float).reshape(-1)
    var = np.asarray(var, dtype=float).reshape(-1)
    if te.size != n or var.size != n:
        raise ValueError(f"te and var need {n} values, got {te.size} and {var.size}")
    if k <= 0 or n == 0:
        return []

    finish = float(forward_pass(net, te)[1].max())
    can_start, can_end = path_ends(net)
    if net.floor is not None:
        can_start = can_start | (net.floor > 0)
    if ends is not None:
        can_end = np.asarray(ends, dtype=bool).reshape(-1)
    enters, leaves_start = _entry_exit(net)
    search = _Search(
        net=net,
        te=te,
        var=var,
        k=k,
        can_end=can_end,
        enters_i=enters.astype(np.int64),
        out_state=leaves_start.astype(np.int64),
        q_mean=critical_tolerance(finish),
        q_var=critical_tolerance(float(var.sum())),
    )
    labels = _Labels.empty(n, k, can_end)
    for step in net.backward_steps:  # links grouped by the height of their predecessor
        _keep_best(search, labels, step, _candidates(search, labels, step))
    return [
        _trace(net, te, var, start, labels, enters, leaves_start)
        for start in _best_starts(search, labels, can_start)
    ]


def _run_lengths(first: np.ndarray) -> np.ndarray:
    starts = np.flatnonzero(first)
    return np.diff(np.append(starts, first.size))


def _trace(
    net: Network,
    te: np.ndarray,
    var: np.ndarray,
    start: tuple[int, int, int],
    labels: _Labels,
    enters: np.ndarray,
    leaves_start: np.ndarray,
) -> Path:
    """Follow the labels' pointers from a start to the end; sum the figures exactly rounded."""
    node, state, slot = start
    activities = [node]
    links: list[int] = []
    while True:
        link = int(labels.nxt_link[node, state, slot])
        if link < 0:
            break
        state, slot = (
            int(labels.nxt_state[node, state, slot]),
            int(labels.nxt_slot[node, state, slot]),
        )
        node = int(net.succ[link])
        links.append(link)
        activities.append(node)
    coefficients = []
    for i in range(len(activities)):
        entered = i == 0 or bool(enters[links[i - 1]])
        left_start = i < len(links) and bool(leaves_start[links[i]])
        coefficients.append(int(entered) - int(left_start))
    mean = math.fsum(
        [c * float(te[a]) for c, a in zip(coefficients, activities, strict=True)]
        + [float(net.lag[x]) for x in links]
        + ([float(net.floor[activities[0]])] if net.floor is not None else [])
    )
    pairs = zip(coefficients, activities, strict=True)
    variance = math.fsum(c * c * float(var[a]) for c, a in pairs)
    return Path(activities, links, coefficients, mean, variance)
