"""Spearman rank correlation of each activity's durations with the project duration.

The sensitivity of the simulation: for every activity, Spearman's rho between its
sampled durations and the simulated project durations, computed a block of rows at a
time from one sort per row (no per-activity Python loop over iterations).
"""

from __future__ import annotations

import numpy as np
from scipy import stats

RANK_ROWS = 16  # activities ranked together in one block


def _centre(ranks: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """Ranks 1..N minus their mean (N + 1) / 2."""
    return np.subtract(ranks, (ranks.size + 1) / 2.0, out=out)


def centred_ranks(y: np.ndarray, out: np.ndarray | None = None) -> tuple[np.ndarray, float]:
    """Average ranks of ``y`` (ties share theirs, as ``scipy.stats.rankdata``) minus their mean.

    Returns the centred ranks (written into ``out`` when given) and their sum of squares.

    Examples
    --------
    >>> ranks, squares = centred_ranks(np.array([3.0, 1.0, 2.0, 2.0]))
    >>> ranks.tolist(), squares
    ([1.5, -1.5, 0.0, 0.0], 4.5)
    """
    centred = _centre(stats.rankdata(y), out)
    return centred, float(centred @ centred)


def _sorted_block(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per row: original column of each sorted position, and the sorted sort keys.

    float32 rows are sorted as 64-bit integers holding the value's order-preserving
    bit pattern above the column number (one integer sort instead of an argsort).
    """
    rows, cols = x.shape
    if x.dtype == np.float32 and cols < 2**32 and np.little_endian:
        keys = np.empty((rows, cols), dtype=np.uint64)
        halves = keys.view(np.uint32).reshape(rows, cols, 2)  # [..., 0] is the low half
        if x.min() > 0:
            halves[..., 1] = x.view(np.uint32)  # positive floats order as their bits
        else:
            bits = (x + np.float32(0.0)).view(np.uint32)  # + 0 turns -0.0 into +0.0
            flip = np.where(bits >> np.uint32(31), np.uint32(0xFFFFFFFF), np.uint32(0x80000000))
            halves[..., 1] = bits ^ flip
        halves[..., 0] = np.arange(cols, dtype=np.uint32)
        keys.sort(axis=1)
        return halves[..., 0], halves[..., 1]
    where = np.argsort(x, axis=1, kind="stable")
    values = np.take_along_axis(x, where, axis=1)
    return where, values + 0.0


def _untie(tie_row, tie_col, cols, centred, ry, num, sxx) -> None:
    """Average ranks for runs of equal sorted values, in place on ``num`` and ``sxx``.

    ``(tie_row, tie_col)``: each sorted position equal to the next, in row-major order.
    Every run of t equal values lowers the row's rank sum of squares by (t^3 - t) / 12
    and moves its members' ranks to their average. The updates of a row are applied
    in position order whether its rows are done together or one by one (the same
    numbers either way).
    """
    if not tie_row.size:
        return
    flat = tie_row * cols + tie_col
    starts = np.r_[0, np.flatnonzero(np.diff(flat) != 1) + 1]
    ends = np.r_[starts[1:], flat.size] - 1
    run_row = tie_row[starts]
    first, last = tie_col[starts], tie_col[ends] + 1
    length = last - first + 1
    avg = (first + last) / 2.0 + 1.0 - (cols + 1) / 2.0
    np.subtract.at(sxx, run_row, (length**3 - length) / 12.0)
    pos = np.repeat(first, length) + (
        np.arange(length.sum()) - np.repeat(np.cumsum(length) - length, length)
    )
    r = np.repeat(run_row, length)
    delta = (np.repeat(avg, length) - centred[pos]) * ry[r, pos]
    np.add.at(num, r, delta)


def spearman_block(x: np.ndarray, centred_y: np.ndarray, syy: float) -> np.ndarray:
    """Spearman correlation of each row of ``x`` with the ranks behind ``centred_y``.

    ``centred_y`` and ``syy`` come from :func:`centred_ranks`. Sorting each row gives
    its ranks 1..N; runs of equal values then get their average rank, which lowers the
    rank sum of squares by (t^3 - t) / 12 per run of t. A constant row gives nan.
    """
    rows, cols = x.shape
    out = np.full(rows, np.nan)
    varying = x.min(axis=1) < x.max(axis=1)
    if not varying.any() or syy <= 0:
        return out
    if not varying.all():
        x = x[varying]
    where, keys = _sorted_block(np.ascontiguousarray(x))
    ry = centred_y[where]  # y ranks in each row's sorted order
    centred = _centre(np.arange(1, cols + 1))  # ranks of a sorted row without ties
    num = ry @ centred
    sxx = np.full(x.shape[0], cols * (cols * cols - 1.0) / 12.0)
    equal = keys[:, 1:] == keys[:, :-1]
    if np.count_nonzero(equal) <= cols:  # few ties: all rows at once
        _untie(*np.nonzero(equal), cols, centred, ry, num, sxx)
    else:  # many: a row at a time, so the work arrays stay within one row's size
        for i in np.flatnonzero(equal.any(axis=1)):
            tie_col = np.flatnonzero(equal[i])
            _untie(np.full(tie_col.size, i), tie_col, cols, centred, ry, num, sxx)
    rho = num / np.sqrt(sxx * syy)
    out[varying] = np.clip(rho, -1.0, 1.0)
    return out


def spearman_rows(samples: np.ndarray, y: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
    """Spearman rank correlation of each row of ``samples`` with ``y``.

    Spearman's rho is Pearson's correlation of the average ranks (ties share the mean
    of their ranks), as ``scipy.stats.spearmanr`` computes it.

    Parameters
    ----------
    samples : numpy.ndarray
        ``(n, N)``: N draws of each of n variables (activity durations).
    y : numpy.ndarray
        ``(N,)``: the outcome (project durations).
    rows : numpy.ndarray, optional
        Only these rows of ``samples``.

    Returns
    -------
    numpy.ndarray
        One rho per row, nan where the row (or ``y``) is constant.

    References
    ----------
    Spearman (1904), "The proof and measurement of association between two things",
    *The American Journal of Psychology* 15(1), 72-101. Used as a sensitivity measure
    of simulation inputs by e.g. Iman & Conover (1982) (see :mod:`.correlation`).

    Examples
    --------
    >>> samples = np.array([[1.0, 2.0, 3.0, 4.0], [4.0, 3.0, 2.0, 1.0], [1.0, 1.0, 1.0, 1.0]])
    >>> np.round(spearman_rows(samples, np.array([10.0, 20.0, 30.0, 25.0])), 12).tolist()
    [0.8, -0.8, nan]
    """
    ry, syy = centred_ranks(np.asarray(y, dtype=float))
    idx = np.arange(samples.shape[0]) if rows is None else np.asarray(rows)
    out = np.full(idx.size, np.nan)
    for a in range(0, idx.size, RANK_ROWS):
        sel = idx[a : a + RANK_ROWS]
        out[a : a + sel.size] = spearman_block(samples[sel], ry, syy)
    return out
