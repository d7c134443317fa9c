"""The forward and backward passes laid out for many columns (scenarios) at once.

:func:`pass_plan` turns a :class:`~converter.analyse.network.Network` into a
:class:`PassPlan`; :func:`forward_into` and :func:`backward_into` then run the passes
of the critical path method (link rules in :mod:`converter.analyse.network`) on an
``(n, c)`` matrix of durations, one vectorised step per topological level, writing
into caller-given arrays so that a simulation reuses its memory chunk after chunk.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from converter.model import FF, FS, SF, SS

if TYPE_CHECKING:
    from converter.analyse.network import Network


@dataclass(frozen=True)
class _Slot:
    """One link per node for the first ``count`` nodes of a step."""

    count: int
    src: np.ndarray  # rows of the state matrix (starts 0..n-1, finishes n..2n-1)
    lag: np.ndarray | None  # (count, 1) signed lag, None when all zero


@dataclass(frozen=True)
class _PlanStep:
    nodes: np.ndarray  # nodes fixed by the step, those with most links first
    plain: tuple[_Slot, ...]  # bounds without a duration term
    shifted: tuple[_Slot, ...]  # bounds that need the node's duration (see _plan)
    shifted_pos: np.ndarray  # positions in ``nodes`` the shifted slots refer to
    clip: bool  # the bound may cross 0 (forward) or the finish (backward)
    floor: np.ndarray | None = None  # (k, 1) start floors of ``nodes`` (forward only)


@dataclass(frozen=True)
class PassPlan:
    """The passes laid out for many columns at once.

    Each level's links are laid out in *slots* (slot j holds the j-th link of every
    node with more than j links, nodes ordered by link count), so a level is a few
    gathers and in-place maxima over all columns (scenarios) together.
    """

    n: int
    forward: tuple[_PlanStep, ...]
    backward: tuple[_PlanStep, ...]
    floor: np.ndarray | None = None  # (n, 1) start floors, None when all are 0


def _slots(pos: np.ndarray, src: np.ndarray, lag: np.ndarray) -> tuple[list[_Slot], np.ndarray]:
    """Slots for links into step positions ``pos``; returns them and the node order."""
    if pos.size == 0:
        return [], np.zeros(0, dtype=np.int64)
    order = np.argsort(pos, kind="stable")
    if pos.size == 1 or (np.diff(pos[order]) > 0).all():  # one link per node: one slot
        lg = lag[order]
        slot = _Slot(int(pos.size), src[order], lg[:, None].copy() if lg.any() else None)
        return [slot], pos[order]
    uniq, inv, deg = np.unique(pos, return_inverse=True, return_counts=True)
    by_degree = np.argsort(-deg, kind="stable")
    rank = np.empty_like(by_degree)
    rank[by_degree] = np.arange(uniq.size)
    link_rank = rank[inv]
    order = np.argsort(link_rank, kind="stable")
    sorted_rank = link_rank[order]
    first = np.r_[0, np.flatnonzero(np.diff(sorted_rank)) + 1]
    slot_of = np.empty(pos.size, dtype=np.int64)
    slot_of[order] = np.arange(pos.size) - np.repeat(first, np.diff(np.r_[first, pos.size]))
    slots = []
    for j in range(int(slot_of.max()) + 1):
        sel = np.flatnonzero(slot_of == j)
        sel = sel[np.argsort(link_rank[sel], kind="stable")]
        lg = lag[sel]
        slots.append(_Slot(int(sel.size), src[sel], lg[:, None].copy() if lg.any() else None))
    return slots, uniq[by_degree]


def _plan_step(nodes, pos, src, shifted, lag, clip_plain) -> _PlanStep:
    plain = ~shifted
    p_slots, p_nodes = _slots(pos[plain], src[plain], lag[plain])
    left = np.ones(nodes.size, dtype=bool)
    left[p_nodes] = False
    rest = np.flatnonzero(left)
    order = np.r_[p_nodes, rest].astype(np.int64)
    new_pos = np.empty_like(order)
    new_pos[order] = np.arange(order.size)
    s_slots, s_nodes = _slots(new_pos[pos[shifted]], src[shifted], lag[shifted])
    clip = bool(shifted.any() or rest.size or clip_plain)
    return _PlanStep(nodes[order], tuple(p_slots), tuple(s_slots), s_nodes, clip)


def pass_plan(net: Network) -> PassPlan:
    """Forward: ES_s >= X[src] + lag (- d_s for FF/SF). Backward: LF_p <= Y[src] - lag (+ d_p
    for SS/SF), with X, Y holding starts in rows 0..n-1 and finishes in rows n..2n-1."""
    n = net.n
    fwd = []
    for st in net.forward_steps:
        links = st.links
        k = net.kind[links]
        src = net.pred[links] + n * ((k == FS) | (k == FF))
        shifted = (k == FF) | (k == SF)
        lag = net.lag[links]
        pos = np.searchsorted(st.nodes, net.succ[links])
        fwd.append(_plan_step(st.nodes, pos, src, shifted, lag, (lag[~shifted] < 0).any()))
    bwd = []
    for st in net.backward_steps:
        links = st.links
        k = net.kind[links]
        src = net.succ[links] + n * ((k == FF) | (k == SF))
        shifted = (k == SS) | (k == SF)
        lag = net.lag[links]
        pos = np.searchsorted(st.nodes, net.pred[links])
        bwd.append(_plan_step(st.nodes, pos, src, shifted, -lag, (lag[~shifted] < 0).any()))
    floor = net.floor
    if floor is None:
        return PassPlan(n, tuple(fwd), tuple(bwd))
    fwd = [
        _PlanStep(st.nodes, st.plain, st.shifted, st.shifted_pos, st.clip, floor[st.nodes, None])
        for st in fwd
    ]
    return PassPlan(n, tuple(fwd), tuple(bwd), floor[:, None].copy())


def _bound(state: np.ndarray, slots: Sequence[_Slot], rows: int, cols: int, op, init):
    """Combine the slots' bounds with ``op`` (np.maximum / np.minimum)."""
    if init is None:
        acc = state[slots[0].src]
        if slots[0].lag is not None:
            acc += slots[0].lag
        rest = slots[1:]
        if acc.shape[0] < rows:
            pad = -np.inf if op is np.maximum else np.inf
            acc = np.concatenate([acc, np.full((rows - acc.shape[0], cols), pad)])
    else:
        acc = np.full((rows, cols), init)
        rest = slots
    for sl in rest:
        t = state[sl.src]
        if sl.lag is not None:
            t += sl.lag
        view = acc[: sl.count]
        op(view, t, out=view)
    return acc


def forward_into(plan: PassPlan, d: np.ndarray, x: np.ndarray, nonneg: bool) -> None:
    """Early starts into ``x[:n]`` and early finishes into ``x[n:]`` for (n, c) ``d``.

    An activity's early start is at least its start floor (``plan.floor``) where the
    network has floors."""
    n, cols = plan.n, d.shape[1]
    x[:n] = 0.0 if plan.floor is None else plan.floor
    np.add(x[:n], d, out=x[n:])
    for st in plan.forward:
        k = st.nodes.size
        clip = st.clip or not nonneg
        if st.plain:
            acc = _bound(x, st.plain, k, cols, np.maximum, 0.0 if clip else None)
        else:
            acc = np.zeros((k, cols))
        if st.shifted:
            f = _bound(x, st.shifted, st.shifted_pos.size, cols, np.maximum, None)
            f -= d[st.nodes[st.shifted_pos]]
            acc[st.shifted_pos] = np.maximum(acc[st.shifted_pos], f)
        if st.floor is not None:
            np.maximum(acc, st.floor, out=acc)
        x[st.nodes] = acc
        acc += d[st.nodes]
        x[n + st.nodes] = acc


def backward_into(
    plan: PassPlan, d: np.ndarray, finish: np.ndarray, y: np.ndarray, nonneg: bool
) -> None:
    """Late starts into ``y[:n]`` and late finishes into ``y[n:]``, anchored per column."""
    n, cols = plan.n, d.shape[1]
    y[n:] = finish
    np.subtract(y[n:], d, out=y[:n])
    for st in plan.backward:
        k = st.nodes.size
        if st.plain:
            acc = _bound(y, st.plain, k, cols, np.minimum, None)
        else:
            acc = np.full((k, cols), np.inf)
        if st.shifted:
            f = _bound(y, st.shifted, st.shifted_pos.size, cols, np.minimum, None)
            f += d[st.nodes[st.shifted_pos]]
            acc[st.shifted_pos] = np.minimum(acc[st.shifted_pos], f)
        if st.clip or not nonneg:
            np.minimum(acc, finish, out=acc)
        y[n + st.nodes] = acc
        acc -= d[st.nodes]
        y[st.nodes] = acc
