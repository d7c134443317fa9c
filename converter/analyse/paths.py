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
without predecessors and without successors. Every other path is dominated by an
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
    mean: float  # sum(coef * te) + sum(lag of links)
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


def k_longest_paths(
    net: Network, te: np.ndarray, var: np.ndarray, k: int, ends: np.ndarray | None = None
) -> list[Path]:
    """The ``k`` longest start -> end paths, ranked as the module docstring says.

    ``te`` and ``var`` are per-activity expected durations (non-negative) and variances.
    ``ends`` (a boolean mask) restricts which activities a path may end at, e.g. one
    activity with an interim target: the longest path to it then has its early finish
    as mean. Fewer than ``k`` paths come back when the network has fewer.
    """
    n = net.n
    te = np.asarray(te, dtype=float).reshape(-1)
    var = np.asarray(var, dtype=float).reshape(-1)
    if te.size != n or var.size != n:
        raise ValueError(f"te and var need {n} values, got {te.size} and {var.size}")
    if k <= 0 or n == 0:
        return []

    finish = float(forward_pass(net, te)[1].max())
    q_mean = critical_tolerance(finish)
    q_var = critical_tolerance(float(var.sum()))
    can_start, can_end = path_ends(net)
    if ends is not None:
        can_end = np.asarray(ends, dtype=bool).reshape(-1)
    enters, leaves_start = _entry_exit(net)
    enters_i = enters.astype(np.int64)
    out_state = leaves_start.astype(np.int64)  # state of the predecessor a link leaves

    # Labels per (activity, state, slot). State 1: the activity is left by an SS/SF link.
    # A label describes the suffix after the activity (its own duration not yet counted).
    mean = np.zeros((n, 2, k))
    vari = np.zeros((n, 2, k))
    nxt_link = np.full((n, 2, k), -1, dtype=np.int64)  # -1: the path ends here
    nxt_state = np.zeros((n, 2, k), dtype=np.int64)
    nxt_slot = np.zeros((n, 2, k), dtype=np.int64)
    act_rank = np.zeros((n, 2, k), dtype=np.int64)  # rank of the activity sequence, per node
    full_rank = np.zeros((n, 2, k), dtype=np.int64)  # rank of (activities, links), per node
    count = np.zeros((n, 2), dtype=np.int64)
    count[can_end, 0] = 1  # the empty suffix; nodes with links are redone below

    slots = np.arange(k)
    for step in net.backward_steps:  # links grouped by the height of their predecessor
        links = step.links
        s = net.succ[links]
        valid = slots[None, None, :] < count[s][:, :, None]
        li, xs, ms = np.nonzero(valid)
        lk = links[li]
        sj = s[li]
        coef = enters_i[lk] - xs
        c_mean = mean[sj, xs, ms] + net.lag[lk] + coef * te[sj]
        c_var = vari[sj, xs, ms] + (coef * coef) * var[sj]
        node = net.pred[lk]
        state = out_state[lk]
        k_next, k_ar, k_link, k_fr = sj, act_rank[sj, xs, ms], lk, full_rank[sj, xs, ms]

        ends = step.nodes[can_end[step.nodes]]
        if ends.size:
            zero_i = np.zeros(ends.size, dtype=np.int64)
            minus = zero_i - 1
            c_mean = np.concatenate((c_mean, np.zeros(ends.size)))
            c_var = np.concatenate((c_var, np.zeros(ends.size)))
            node = np.concatenate((node, ends))
            state = np.concatenate((state, zero_i))
            k_next = np.concatenate((k_next, minus))
            k_ar = np.concatenate((k_ar, minus))
            k_link = np.concatenate((k_link, minus))
            k_fr = np.concatenate((k_fr, minus))
            xs = np.concatenate((xs, zero_i))
            ms = np.concatenate((ms, zero_i))

        order = np.lexsort(
            (
                k_fr,
                k_link,
                k_ar,
                k_next,
                -np.round(c_var / q_var),
                -np.round(c_mean / q_mean),
                state,
                node,
            )
        )
        group = (node * 2 + state)[order]
        pos = _group_positions(group)
        keep = pos < k
        order, pos = order[keep], pos[keep]
        nd, st = node[order], state[order]
        count[step.nodes] = 0
        np.add.at(count, (nd, st), 1)
        mean[nd, st, pos] = c_mean[order]
        vari[nd, st, pos] = c_var[order]
        nxt_link[nd, st, pos] = k_link[order]
        nxt_state[nd, st, pos] = xs[order]
        nxt_slot[nd, st, pos] = ms[order]

        # Ranks among each node's kept labels (both states): activities first, then links.
        kn, ka, kl, kf = k_next[order], k_ar[order], k_link[order], k_fr[order]
        rank_order = np.lexsort((kf, kl, ka, kn, nd))
        nd_r = nd[rank_order]
        full_rank[nd_r, st[rank_order], pos[rank_order]] = _group_positions(nd_r)
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
        act_rank[nd_r, st[rank_order], pos[rank_order]] = dense - base

    # Whole paths: add the starting activity's own term (it is entered with its duration).
    starts = np.flatnonzero(can_start)
    valid = slots[None, None, :] < count[starts][:, :, None]
    si, xs, ms = np.nonzero(valid)
    node = starts[si]
    coef = 1 - xs
    p_mean = mean[node, xs, ms] + coef * te[node]
    p_var = vari[node, xs, ms] + (coef * coef) * var[node]
    order = np.lexsort(
        (full_rank[node, xs, ms], node, -np.round(p_var / q_var), -np.round(p_mean / q_mean))
    )[:k]
    return [
        _trace(
            net,
            te,
            var,
            int(node[i]),
            int(xs[i]),
            int(ms[i]),
            nxt_link,
            nxt_state,
            nxt_slot,
            enters,
            leaves_start,
        )
        for i in order
    ]


def _run_lengths(first: np.ndarray) -> np.ndarray:
    starts = np.flatnonzero(first)
    return np.diff(np.append(starts, first.size))


def _trace(
    net: Network,
    te: np.ndarray,
    var: np.ndarray,
    node: int,
    state: int,
    slot: int,
    nxt_link: np.ndarray,
    nxt_state: np.ndarray,
    nxt_slot: np.ndarray,
    enters: np.ndarray,
    leaves_start: np.ndarray,
) -> Path:
    """Follow the labels' pointers from a start to the end; sum the figures exactly rounded."""
    activities = [node]
    links: list[int] = []
    while True:
        link = int(nxt_link[node, state, slot])
        if link < 0:
            break
        state, slot = int(nxt_state[node, state, slot]), int(nxt_slot[node, state, slot])
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
    )
    pairs = zip(coefficients, activities, strict=True)
    variance = math.fsum(c * c * float(var[a]) for c, a in pairs)
    return Path(activities, links, coefficients, mean, variance)
