"""Monte Carlo schedule simulation over the array network.

Every iteration draws one duration per activity, runs the forward and backward
passes and records the project duration, which activities were critical (total
float ~ 0) and whether each targeted activity finished by its target. This is
the simulation approach to PERT networks of Van Slyke (1963), "Monte Carlo
methods and the PERT problem", *Operations Research* 11(5), with the
criticality index of that paper and of Martin (1965).

Iterations are handled a chunk at a time: the samples of a chunk form an
``(n, c)`` matrix and both passes run on all ``c`` columns at once (no Python
loop per iteration). The sampled durations are kept for the whole run as float32
(about 7 significant digits) because the rank correlation of each activity with
the project duration needs every sample; the passes use exactly those stored
values, so a sensitivity can be recomputed from :func:`draw_samples`.

Distributions (O optimistic, M most likely, P pessimistic; O = P is a constant):

* ``"pert"``: the PERT-beta on [O, P] with alpha = 1 + 4 (M - O) / (P - O) and
  beta = 1 + 4 (P - M) / (P - O), whose mean is (O + 4M + P) / 6 (Malcolm,
  Roseboom, Clark & Fazar 1959, "Application of a technique for research and
  development program evaluation", *Operations Research* 7(5));
* ``"triangular"`` on (O, M, P); ``"uniform"`` on [O, P].

Activities sharing a correlation group get rank correlation ``correlation``
by the method of Iman & Conover (1982), applied to each chunk of iterations.

Randomness: chunk ``j`` draws its durations from
``np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(0, j)))`` and its
correlation scores from ``spawn_key=(1, j)``, numpy's scheme for independent
streams. A seed therefore gives the same numbers on every run, whatever the
number of worker processes, and the uncorrelated comparison run has exactly the
same per-activity samples as the correlated one, only in another order.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import linalg, special, stats

from .model import DEFAULT_ITERATIONS, DEFAULT_SEED, DISTRIBUTIONS, FF, FS, SF, SS
from .network import Network

PERT, TRIANGULAR, UNIFORM = range(3)
KIND_CODES: dict[str, int] = {name: i for i, name in enumerate(DISTRIBUTIONS)}

#: Percentile keys reported in :attr:`SimulationResult.percentiles`.
PERCENTILE_KEYS: tuple[float, ...] = (
    0.01, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99,
)

_CHUNK_ELEMENTS = 5_000_000  # activities x iterations per chunk (about 40 MB a matrix)
_PARALLEL_ELEMENTS = 20_000_000  # use worker processes from this many samples on
_RANK_ROWS = 16  # activities ranked together in the sensitivity step


@dataclass
class SimulationResult:
    """Outcome of a simulation run (arrays indexed by activity)."""

    iterations: int
    seed: int
    distribution: str
    correlation: float
    durations: np.ndarray
    mean: float
    sd: float
    std_error_mean: float
    p_meet_due: float | None
    p_meet_due_std_error: float | None
    percentiles: dict[float, float]
    merge_bias: float
    criticality: np.ndarray
    sensitivity: np.ndarray
    target_p: dict[int, float] = field(default_factory=dict)
    independent: SimulationResult | None = None

    def percentile(self, q: float) -> float:
        """Project duration at probability ``q`` (numpy's default linear method)."""
        return float(np.percentile(self.durations, 100.0 * q))

    def p_finish_by(self, t: float) -> float:
        """Share of iterations whose project duration is at most ``t``."""
        return float(np.count_nonzero(self.durations <= t)) / self.durations.size


# --------------------------------------------------------------------------- sampling


def pert_beta_parameters(o, m, p) -> tuple[np.ndarray, np.ndarray]:
    """Shape parameters of the PERT-beta: 1 + 4 (M - O)/(P - O), 1 + 4 (P - M)/(P - O)."""
    o, m, p = (np.asarray(v, dtype=float) for v in (o, m, p))
    width = p - o
    return 1.0 + 4.0 * (m - o) / width, 1.0 + 4.0 * (p - m) / width


def _kind_codes(kinds, n: int) -> np.ndarray:
    if isinstance(kinds, (str, int, np.integer)):
        kinds = [kinds] * n
    out = np.empty(n, dtype=np.int8)
    for i, k in enumerate(kinds):
        if isinstance(k, str):
            if k not in KIND_CODES:
                raise ValueError(f"unknown distribution {k!r} (use one of {DISTRIBUTIONS})")
            out[i] = KIND_CODES[k]
        else:
            out[i] = int(k)
    if out.size != n:
        raise ValueError("one distribution per activity is needed")
    return out


def sample_durations(rng: np.random.Generator, o, m, p, kinds, size: int) -> np.ndarray:
    """Draw ``size`` durations for each activity: an ``(n, size)`` float64 matrix.

    ``kinds`` is one distribution name or code for all, or one per activity. The
    PERT-beta is drawn with ``Generator.beta`` and scaled to [O, P]; the triangular
    with ``Generator.triangular``; the uniform with ``Generator.uniform``. Rows are
    drawn kind by kind (PERT, triangular, uniform), each kind in activity order.
    """
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    n = o.size
    codes = _kind_codes(kinds, n)
    out = np.empty((n, size))
    const = o == p
    out[const] = o[const, None]
    for code in (PERT, TRIANGULAR, UNIFORM):
        rows = np.flatnonzero((codes == code) & ~const)
        if not rows.size:
            continue
        lo, mode, hi = o[rows, None], m[rows, None], p[rows, None]
        shape = (rows.size, size)
        if code == PERT:
            a, b = pert_beta_parameters(lo, mode, hi)
            out[rows] = lo + (hi - lo) * rng.beta(a, b, size=shape)
        elif code == TRIANGULAR:
            out[rows] = rng.triangular(lo, mode, hi, size=shape)
        else:
            out[rows] = rng.uniform(lo, hi, size=shape)
    return out


def induce_rank_correlation(rng: np.random.Generator, x: np.ndarray, rho: float) -> np.ndarray:
    """Re-order each row of ``x`` (g variables x c draws) to rank correlation ``rho``.

    Iman & Conover (1982), "A distribution-free approach to inducing rank
    correlation among input variables", *Communications in Statistics B* 11(3):
    van der Waerden scores Phi^-1(k / (c + 1)) are permuted independently per
    variable (matrix R), multiplied by S' where S = P Q^-1, P the Cholesky factor
    of the target correlation matrix and Q that of the scores' own correlation
    matrix, and each variable's draws are re-ordered to the ranks of its column.
    The target matrix has 1 on the diagonal and 2 sin(pi rho / 6) elsewhere, the
    Pearson correlation of normal scores whose rank correlation is ``rho``
    (Pearson 1907, from memory: rho_s = (6 / pi) arcsin(r / 2) for a bivariate
    normal). ``rho = 1`` gives every variable the same ranks.
    """
    g, c = x.shape
    if g < 2 or rho == 0.0 or c < 2:
        return x
    scores = special.ndtri(np.arange(1, c + 1) / (c + 1.0))
    r = rng.permuted(np.broadcast_to(scores[:, None], (c, g)), axis=0)
    if rho >= 1.0:
        r_star = np.repeat(r[:, :1], g, axis=1)
    else:
        target = np.full((g, g), 2.0 * math.sin(math.pi * rho / 6.0))
        np.fill_diagonal(target, 1.0)
        lower = linalg.cholesky(target, lower=True)
        try:
            own = linalg.cholesky(np.corrcoef(r, rowvar=False), lower=True)
            s = lower @ linalg.solve_triangular(own, np.eye(g), lower=True)
        except (linalg.LinAlgError, ValueError):
            s = lower  # fewer draws than variables: scores are taken as uncorrelated
        r_star = r @ s.T
    out = np.empty_like(x)
    ordered = np.sort(x, axis=1)
    for j in range(g):
        out[j, np.argsort(r_star[:, j], kind="stable")] = ordered[j]
    return out


@dataclass(frozen=True)
class _Inputs:
    """Validated simulation inputs."""

    o: np.ndarray
    m: np.ndarray
    p: np.ndarray
    codes: np.ndarray
    groups: tuple[np.ndarray, ...]  # member indices of each group with 2+ varying members
    iterations: int
    seed: int
    chunk: int

    @property
    def n(self) -> int:
        return self.o.size

    def chunks(self) -> list[tuple[int, int]]:
        return [
            (a, min(a + self.chunk, self.iterations))
            for a in range(0, self.iterations, self.chunk)
        ]


def chunk_size(n: int, iterations: int) -> int:
    """Iterations per chunk: about five million samples, at least 64 iterations."""
    return max(1, min(iterations, max(64, _CHUNK_ELEMENTS // max(n, 1))))


def _prepare(o, m, p, distribution, distributions, groups, iterations, seed) -> _Inputs:
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    n = o.size
    if not (m.size == p.size == n):
        raise ValueError("optimistic, most likely and pessimistic need one value per activity")
    if not (np.isfinite(o).all() and np.isfinite(m).all() and np.isfinite(p).all()):
        raise ValueError("durations must be finite")
    if (o > m).any() or (m > p).any():
        raise ValueError("each activity needs optimistic <= most likely <= pessimistic")
    if int(iterations) < 2:
        raise ValueError("at least 2 iterations are needed")
    if distribution not in KIND_CODES:
        raise ValueError(f"unknown distribution {distribution!r} (use one of {DISTRIBUTIONS})")
    if distributions is None:
        distributions = [None] * n
    if len(distributions) != n:
        raise ValueError("distributions needs one entry per activity")
    codes = _kind_codes([d if d is not None else distribution for d in distributions], n)
    members: list[np.ndarray] = []
    if groups is not None:
        if len(groups) != n:
            raise ValueError("groups needs one entry per activity")
        by_name: dict[str, list[int]] = {}
        for i, name in enumerate(groups):
            if name is not None and o[i] < p[i]:
                by_name.setdefault(str(name), []).append(i)
        members = [np.array(v, dtype=np.int64) for v in by_name.values() if len(v) > 1]
    iterations = int(iterations)
    return _Inputs(
        o=o, m=m, p=p, codes=codes, groups=tuple(members), iterations=iterations,
        seed=int(seed), chunk=chunk_size(n, iterations),
    )


def _rng(seed: int, stream: int, chunk: int) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(stream, chunk)))


def _sample_chunk(inp: _Inputs, j: int, size: int) -> np.ndarray:
    return sample_durations(_rng(inp.seed, 0, j), inp.o, inp.m, inp.p, inp.codes, size)


def _correlate_chunk(inp: _Inputs, j: int, d: np.ndarray, rho: float) -> None:
    """Iman-Conover within each group, in place, for chunk ``j``."""
    rng = _rng(inp.seed, 1, j)
    for rows in inp.groups:
        d[rows] = induce_rank_correlation(rng, d[rows], rho)


def draw_samples(
    optimistic, most_likely, pessimistic, *, distribution: str = "pert",
    distributions: Sequence[str | None] | None = None,
    groups: Sequence[str | None] | None = None, correlation: float = 0.0,
    iterations: int = DEFAULT_ITERATIONS, seed: int = DEFAULT_SEED,
) -> np.ndarray:
    """The ``(n, iterations)`` float32 durations :func:`simulate` uses for these inputs."""
    inp = _prepare(optimistic, most_likely, pessimistic, distribution, distributions, groups,
                   iterations, seed)
    _check_correlation(correlation)
    store = np.empty((inp.n, inp.iterations), dtype=np.float32)
    for j, (a, b) in enumerate(inp.chunks()):
        d = _sample_chunk(inp, j, b - a)
        if correlation > 0:
            _correlate_chunk(inp, j, d, correlation)
        store[:, a:b] = d
    return store


def _check_correlation(correlation: float) -> None:
    if not 0.0 <= float(correlation) <= 1.0:
        raise ValueError("correlation must lie between 0 and 1")


# --------------------------------------------------------------------------- passes


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


@dataclass(frozen=True)
class _Plan:
    """The passes of network.py rearranged for many columns at once.

    network.py reduces each level's links with ``reduceat``; here each level's
    links are laid out in *slots* (slot j holds the j-th link of every node with
    more than j links, nodes ordered by link count), so a level is a few gathers
    and in-place maxima. The arithmetic is the same, so the results are
    identical to ``forward_pass`` / ``backward_pass``.
    """

    n: int
    forward: tuple[_PlanStep, ...]
    backward: tuple[_PlanStep, ...]


def _slots(pos: np.ndarray, src: np.ndarray, lag: np.ndarray) -> tuple[list[_Slot], np.ndarray]:
    """Slots for links into step positions ``pos``; returns them and the node order."""
    if pos.size == 0:
        return [], np.zeros(0, dtype=np.int64)
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
    rest = np.setdiff1d(np.arange(nodes.size), p_nodes)
    order = np.r_[p_nodes, rest].astype(np.int64)
    new_pos = np.empty_like(order)
    new_pos[order] = np.arange(order.size)
    s_slots, s_nodes = _slots(new_pos[pos[shifted]], src[shifted], lag[shifted])
    clip = bool(shifted.any() or rest.size or clip_plain)
    return _PlanStep(nodes[order], tuple(p_slots), tuple(s_slots), s_nodes, clip)


def _plan(net: Network) -> _Plan:
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
    return _Plan(n, tuple(fwd), tuple(bwd))


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


def _forward(plan: _Plan, d: np.ndarray, x: np.ndarray, nonneg: bool) -> None:
    """Early starts into ``x[:n]`` and early finishes into ``x[n:]`` for (n, c) ``d``."""
    n, cols = plan.n, d.shape[1]
    x[:n] = 0.0
    x[n:] = d
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
        x[st.nodes] = acc
        acc += d[st.nodes]
        x[n + st.nodes] = acc


def _backward(plan: _Plan, d: np.ndarray, finish: np.ndarray, y: np.ndarray,
              nonneg: bool) -> None:
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


class _Tally:
    """Per-chunk passes and the counts they feed."""

    def __init__(self, net: Network, iterations: int, targets: dict[int, float] | None):
        self.net = net
        self.plan = _plan(net)
        self.project = np.empty(iterations)
        self.critical = np.zeros(net.n, dtype=np.int64)
        self.targets = dict(targets or {})
        for i in self.targets:
            if not 0 <= int(i) < net.n:
                raise ValueError(f"target activity index {i} out of range")
        self.target_hits = {int(i): 0 for i in self.targets}
        self._buffers: dict[int, tuple[np.ndarray, ...]] = {}

    def _buf(self, cols: int):
        if cols not in self._buffers:
            n = self.net.n
            self._buffers = {cols: (np.empty((2 * n, cols)), np.empty((2 * n, cols)),
                                    np.empty((n, cols), dtype=bool))}
        return self._buffers[cols]

    def add(self, a: int, d: np.ndarray) -> None:
        """Run the passes on float64 ``d`` (n, c) for iterations a .. a + c."""
        n, cols = d.shape
        x, y, crit = self._buf(cols)
        nonneg = bool(d.min() >= 0.0) if d.size else True
        _forward(self.plan, d, x, nonneg)
        finish = x[n:].max(axis=0) if n else np.zeros(cols)
        _backward(self.plan, d, finish, y, nonneg)
        tol = 1e-9 * np.maximum(1.0, np.abs(finish))  # network.critical_tolerance per column
        tf = y[:n]
        tf -= x[:n]
        np.less_equal(tf, tol, out=crit)
        self.critical += crit.sum(axis=1)
        self.project[a : a + cols] = finish
        for i, t in self.targets.items():
            self.target_hits[int(i)] += int(np.count_nonzero(x[n + int(i)] <= t))


# --------------------------------------------------------------------------- ranks


def _sorted_block(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per row: original column of each sorted position, and the sorted sort keys."""
    rows, cols = x.shape
    if x.dtype == np.float32 and cols < 2**32:
        bits = (x + np.float32(0.0)).view(np.uint32)  # + 0 turns -0.0 into +0.0
        flip = np.where(bits >> np.uint32(31), np.uint32(0xFFFFFFFF), np.uint32(0x80000000))
        keys = (bits ^ flip).astype(np.uint64)
        keys <<= np.uint64(32)
        keys |= np.arange(cols, dtype=np.uint64)
        keys.sort(axis=1)
        where = (keys & np.uint64(0xFFFFFFFF)).astype(np.intp)
        return where, keys >> np.uint64(32)
    where = np.argsort(x, axis=1, kind="stable")
    values = np.take_along_axis(x, where, axis=1)
    return where, values + 0.0


def _spearman_block(x: np.ndarray, centred_y: np.ndarray, syy: float) -> np.ndarray:
    """Spearman correlation of each row of ``x`` with the ranks behind ``centred_y``.

    Spearman's rho is Pearson's correlation of the average ranks (as
    ``scipy.stats.spearmanr``). Sorting each row gives its ranks 1..N; runs of
    equal values then get their average rank, which lowers the rank sum of
    squares by (t^3 - t) / 12 per run of t.
    """
    rows, cols = x.shape
    out = np.full(rows, np.nan)
    varying = x.min(axis=1) < x.max(axis=1)
    if not varying.any() or syy <= 0:
        return out
    x = x[varying]
    where, keys = _sorted_block(np.ascontiguousarray(x))
    ry = centred_y[where]  # y ranks in each row's sorted order
    centred = np.arange(1, cols + 1) - (cols + 1) / 2.0
    num = ry @ centred
    sxx = np.full(x.shape[0], cols * (cols * cols - 1.0) / 12.0)
    tie_row, tie_col = np.nonzero(keys[:, 1:] == keys[:, :-1])
    if tie_row.size:
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
    rho = num / np.sqrt(sxx * syy)
    out[varying] = np.clip(rho, -1.0, 1.0)
    return out


def _centred_ranks(y: np.ndarray) -> tuple[np.ndarray, float]:
    ry = stats.rankdata(y) - (y.size + 1) / 2.0
    return ry, float(ry @ ry)


def spearman_rows(samples: np.ndarray, y: np.ndarray, rows: np.ndarray | None = None):
    """Spearman rank correlation of each row of ``samples`` with ``y`` (nan if constant)."""
    ry, syy = _centred_ranks(np.asarray(y, dtype=float))
    idx = np.arange(samples.shape[0]) if rows is None else np.asarray(rows)
    out = np.full(idx.size, np.nan)
    for a in range(0, idx.size, _RANK_ROWS):
        sel = idx[a : a + _RANK_ROWS]
        out[a : a + sel.size] = _spearman_block(samples[sel], ry, syy)
    return out


# --------------------------------------------------------------------------- summary


def _summary(tally: _Tally, sensitivity: np.ndarray, *, iterations, seed, distribution,
             correlation, due, pert_mean) -> SimulationResult:
    y = tally.project
    count = y.size
    mean = float(y.mean())
    sd = float(y.std(ddof=1))
    p_due = se_due = None
    if due is not None:
        p_due = float(np.count_nonzero(y <= float(due))) / count
        se_due = math.sqrt(p_due * (1.0 - p_due) / count)
    values = np.percentile(y, [100.0 * q for q in PERCENTILE_KEYS])
    return SimulationResult(
        iterations=iterations,
        seed=seed,
        distribution=distribution,
        correlation=float(correlation),
        durations=y,
        mean=mean,
        sd=sd,
        std_error_mean=sd / math.sqrt(count),
        p_meet_due=p_due,
        p_meet_due_std_error=se_due,
        percentiles={q: float(v) for q, v in zip(PERCENTILE_KEYS, values, strict=True)},
        merge_bias=mean - float(pert_mean),
        criticality=tally.critical / count,
        sensitivity=sensitivity,
        target_p={i: h / count for i, h in tally.target_hits.items()},
    )


def simulate_durations(
    net: Network, durations: np.ndarray, *, due: float | None = None,
    targets: dict[int, float] | None = None, pert_mean: float = math.nan,
    seed: int = 0, distribution: str = "given", correlation: float = 0.0,
    progress: Callable[[int, int], None] | None = None,
) -> SimulationResult:
    """Analyse a given ``(n, iterations)`` matrix of durations as a simulation would.

    Useful to feed samples from any source (e.g. normal draws) through the same
    passes and statistics; :func:`simulate` is ``draw_samples`` followed by this.
    """
    durations = np.asarray(durations)
    if durations.ndim != 2 or durations.shape[0] != net.n or durations.shape[1] < 2:
        raise ValueError("durations must be (activities, iterations >= 2)")
    iterations = durations.shape[1]
    tally = _Tally(net, iterations, targets)
    step = chunk_size(net.n, iterations)
    for a in range(0, iterations, step):
        b = min(a + step, iterations)
        tally.add(a, np.asarray(durations[:, a:b], dtype=float))
        if progress is not None:
            progress(b, iterations)
    sensitivity = spearman_rows(durations, tally.project)
    return _summary(tally, sensitivity, iterations=iterations, seed=seed,
                    distribution=distribution, correlation=correlation, due=due,
                    pert_mean=pert_mean)


def _run_name(inp: _Inputs) -> str:
    kinds = set(inp.codes[inp.o < inp.p].tolist())
    if len(kinds) > 1:
        return "mixed"
    return DISTRIBUTIONS[kinds.pop()] if kinds else None  # type: ignore[return-value]


def simulate(
    net: Network, optimistic, most_likely, pessimistic, *, distribution: str = "pert",
    distributions: Sequence[str | None] | None = None,
    groups: Sequence[str | None] | None = None, correlation: float = 0.0,
    iterations: int = DEFAULT_ITERATIONS, seed: int = DEFAULT_SEED, due: float | None = None,
    targets: dict[int, float] | None = None, pert_mean: float = math.nan,
    progress: Callable[[int, int], None] | None = None, workers: int | None = None,
) -> SimulationResult:
    """Monte Carlo simulation of the network's project duration (see module docstring).

    With ``correlation > 0`` and at least one group of two or more activities the
    result's ``independent`` holds the same run (same samples) without the
    correlation. ``progress(done, total)`` is called after each chunk; ``total``
    counts the iterations of both runs when there are two. ``workers`` (default:
    automatic) splits large runs over that many processes; the numbers do not
    depend on it.
    """
    inp = _prepare(optimistic, most_likely, pessimistic, distribution, distributions, groups,
                   iterations, seed)
    _check_correlation(correlation)
    if inp.n != net.n:
        raise ValueError("one estimate per network activity is needed")
    name = _run_name(inp) or distribution
    correlated = float(correlation) > 0.0 and bool(inp.groups)
    runs = 2 if correlated else 1
    total = runs * inp.iterations
    common = dict(iterations=inp.iterations, seed=inp.seed, distribution=name, due=due,
                  pert_mean=pert_mean)
    store = np.empty((inp.n, inp.iterations), dtype=np.float32)

    tally = _Tally(net, inp.iterations, targets)
    for j, (a, b) in enumerate(inp.chunks()):
        d = _sample_chunk(inp, j, b - a)
        store[:, a:b] = d
        tally.add(a, store[:, a:b].astype(float))
        if progress is not None:
            progress(b, total)
    first = _summary(tally, spearman_rows(store, tally.project), correlation=0.0, **common)
    if not correlated:
        return first

    tally = _Tally(net, inp.iterations, targets)
    for j, (a, b) in enumerate(inp.chunks()):
        d = store[:, a:b].astype(float)
        _correlate_chunk(inp, j, d, float(correlation))
        store[:, a:b] = d
        tally.add(a, d)
        if progress is not None:
            progress(inp.iterations + b, total)
    result = _summary(tally, spearman_rows(store, tally.project), correlation=correlation,
                      **common)
    result.independent = first
    return result
