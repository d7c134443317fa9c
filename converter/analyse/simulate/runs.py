"""Monte Carlo schedule simulation over the array network.

Every iteration draws one duration per activity, runs the forward and backward
passes and records the project duration, which activities were critical (total
float ~ 0) and whether each targeted activity finished by its target. This is
the simulation approach to PERT networks of Van Slyke (1963), "Monte Carlo
methods and the PERT problem", *Operations Research* 11(5), with the
criticality index (share of iterations in which an activity is critical) of
that paper.

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
import mmap
import os
import threading
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import linalg, special, stats

from converter.analyse.network import Network, backward_into, forward_into, pass_plan
from converter.model import DEFAULT_ITERATIONS, DEFAULT_SEED, DISTRIBUTIONS

PERT, TRIANGULAR, UNIFORM = range(3)
KIND_CODES: dict[str, int] = {name: i for i, name in enumerate(DISTRIBUTIONS)}

#: Percentile keys reported in :attr:`SimulationResult.percentiles`.
PERCENTILE_KEYS: tuple[float, ...] = (
    0.01, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99,
)

_CHUNK_ELEMENTS = 2_500_000  # activities x iterations per chunk (20 MB a float64 matrix)
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
    """Distribution codes (PERT, TRIANGULAR, UNIFORM) from one name/code or one per activity."""
    if isinstance(kinds, (str, int, np.integer)):
        kinds = [kinds] * n
    if isinstance(kinds, np.ndarray) and kinds.dtype.kind in "iu":
        out = kinds.astype(np.int8).reshape(-1)
    else:
        kinds = list(kinds)
        if any(isinstance(k, str) and k not in KIND_CODES for k in kinds):
            bad = next(k for k in kinds if isinstance(k, str) and k not in KIND_CODES)
            raise ValueError(f"unknown distribution {bad!r} (use one of {DISTRIBUTIONS})")
        out = np.array([KIND_CODES[k] if isinstance(k, str) else int(k) for k in kinds],
                       dtype=np.int8)
    if out.size != n:
        raise ValueError("one distribution per activity is needed")
    if out.size and (out.min() < 0 or out.max() > UNIFORM):
        raise ValueError("distribution codes are 0 (pert), 1 (triangular), 2 (uniform)")
    return out


def sample_durations(
    rng: np.random.Generator, o, m, p, kinds, size: int, out: np.ndarray | None = None
) -> np.ndarray:
    """Draw ``size`` durations for each activity: an ``(n, size)`` float64 matrix.

    ``kinds`` is one distribution name or code for all, or one per activity. Rows
    are drawn kind by kind (PERT, triangular, uniform), each kind in activity
    order, a few rows at a time; O = P rows are the constant. The PERT-beta uses
    Cheng's algorithm (:func:`beta_cheng`) scaled to [O, P]; the triangular and
    uniform invert their distribution functions: for the triangular with
    c = (M - O) / (P - O), x = O + sqrt(u (P - O)(M - O)) if u <= c, else
    P - sqrt((1 - u)(P - O)(P - M)). ``out`` may be given to reuse memory.
    """
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    n = o.size
    codes = _kind_codes(kinds, n)
    if out is None:
        out = np.empty((n, size))
    const = o == p
    out[const] = o[const, None]
    rows_per = max(1, _BLOCK // max(size, 1))
    for code in (PERT, TRIANGULAR, UNIFORM):
        rows = np.flatnonzero((codes == code) & ~const)
        if not rows.size:
            continue
        if code == PERT:
            a, b = pert_beta_parameters(o[rows], m[rows], p[rows])
            _beta_into(rng, a, b, o[rows], p[rows] - o[rows], size, out, rows)
            continue
        for r0 in range(0, rows.size, rows_per):
            sel = rows[r0 : r0 + rows_per]
            lo, hi = o[sel, None], p[sel, None]
            u = rng.random((sel.size, size))
            if code == TRIANGULAR:
                mode = m[sel, None]
                width = hi - lo
                left = np.sqrt(u * (width * (mode - lo)))
                left += lo
                right = np.sqrt((1.0 - u) * (width * (hi - mode)))
                np.subtract(hi, right, out=right)
                out[sel] = np.where(u <= (mode - lo) / width, left, right)
            else:
                u *= hi - lo
                u += lo
                out[sel] = u
    return out


_LN4 = np.float32(math.log(4.0))
_ONE_PLUS_LN5 = np.float32(1.0 + math.log(5.0))
_F1, _F5 = np.float32(1.0), np.float32(5.0)
_BLOCK = 8192  # draws handled together (a block's temporaries stay in cache)


def beta_cheng(rng: np.random.Generator, alpha, beta, size: int) -> np.ndarray:
    """Beta(alpha_i, beta_i) draws, ``(k, size)``, for shape parameters >= 1.

    Cheng (1978), "Generating beta variates with nonintegral shape parameters",
    *Communications of the ACM* 21(4), algorithm BB (for min(alpha, beta) > 1), an
    exact rejection method, vectorised: for each cache-sized block of draws a
    few more candidates than needed are made and each row keeps its first
    accepted ones (rows left short draw again). The candidates are computed in
    single precision (uniforms with 24 bits), the precision the simulation keeps
    its samples in. A shape equal to 1 is drawn by inversion: Beta(1, b) =
    1 - U^(1/b), Beta(a, 1) = U^(1/a).
    """
    alpha = np.asarray(alpha, dtype=float).reshape(-1)
    beta = np.asarray(beta, dtype=float).reshape(-1)
    out = np.empty((alpha.size, size))
    _beta_into(rng, alpha, beta, np.zeros(alpha.size), np.ones(alpha.size), size, out,
               np.arange(alpha.size))
    return out


def _beta_into(rng, alpha, beta, lo, width, size, out, rows) -> None:
    """out[rows[i]] = lo[i] + width[i] * Beta(alpha[i], beta[i]) draws (see beta_cheng)."""
    if (alpha < 1).any() or (beta < 1).any():
        raise ValueError("beta_cheng needs shape parameters >= 1")
    a = np.minimum(alpha, beta)
    b = np.maximum(alpha, beta)
    edge = a == 1.0
    big = a + b
    scale = np.sqrt((big - 2.0) / np.where(edge, 1.0, 2.0 * a * b - big))
    shift = a + 1.0 / scale
    # x -> lo + width * x, or lo + width * (1 - x) = (lo + width) - width * x when flipped
    flip = alpha > beta
    base = np.where(flip, lo + width, lo)
    mult = np.where(flip, -width, width)
    params = (a, b, big, scale, shift)
    rows_per = max(1, _BLOCK // max(size, 1))
    cols_per = min(size, _BLOCK)
    inner = np.flatnonzero(~edge)
    with np.errstate(divide="ignore"):
        for r0 in range(0, inner.size, rows_per):
            idx = inner[r0 : r0 + rows_per]
            block = tuple(v[idx, None].astype(np.float32) for v in params)
            for c0 in range(0, size, cols_per):
                c1 = min(size, c0 + cols_per)
                x = _cheng_accepted(rng, block, idx.size, c1 - c0).astype(float)
                x *= mult[idx, None]
                x += base[idx, None]
                out[rows[idx], c0:c1] = x
    for i in np.flatnonzero(edge):  # a shape of 1: inversion
        u = rng.random(size)
        x = 1.0 - u ** (1.0 / beta[i]) if alpha[i] == 1.0 else u ** (1.0 / alpha[i])
        out[rows[i]] = lo[i] + width[i] * x


def _cheng_accepted(rng, params, rows: int, cols: int, extra: int | None = None) -> np.ndarray:
    """``cols`` accepted BB draws per row: the first accepted of a few more candidates."""
    if extra is None:
        # acceptance of BB is about 0.75 at a = 1, 0.8 at 1.2, 0.9 at 2 (measured); draw
        # enough candidates that a row is rarely short
        low = float(params[0].min())
        share = 0.72 + 0.3 * (low - 1.0) if low < 1.2 else min(0.87, 0.78 + 0.11 * (low - 1.2))
        expect = cols / share
        extra = int(expect - cols + 4.0 * math.sqrt(expect * (1.0 - share)) / share) + 8
    x, ok = _cheng_candidates(rng, params, (rows, cols + extra))
    rank = np.cumsum(ok, axis=1)
    got = rank[:, -1]
    if (got >= cols).all():
        return x[ok & (rank <= cols)].reshape(rows, cols)
    out = np.empty((rows, cols), dtype=np.float32)
    for i in range(rows):  # rare: keep drawing for the rows short of accepted draws
        have = x[i, ok[i]][:cols]
        row_params = tuple(v[i : i + 1] for v in params)
        while have.size < cols:
            more, more_ok = _cheng_candidates(rng, row_params, (1, cols - have.size + extra))
            have = np.concatenate([have, more[0, more_ok[0]]])[:cols]
        out[i] = have
    return out


def _cheng_candidates(rng, params, shape) -> tuple[np.ndarray, np.ndarray]:
    """One candidate of algorithm BB per draw and whether it is accepted (a <= b).

    Computed in single precision (``params`` are float32), the precision the
    samples are kept in.
    """
    a, b, big, scale, shift = params
    u1 = rng.random(shape, dtype=np.float32)
    u2 = rng.random(shape, dtype=np.float32)
    v = np.log(u1 / (_F1 - u1))
    v *= scale
    w = np.exp(v)
    w *= a
    z = u1 * u1
    z *= u2
    r = v * shift
    r -= _LN4
    s = r + a
    s -= w
    ok = (s + _ONE_PLUS_LN5) >= _F5 * z
    bw = w + b
    x = w / bw
    slow = np.flatnonzero(~ok)
    if slow.size:
        t = np.log(z.reshape(-1)[slow])
        big_s = np.broadcast_to(big, shape).reshape(-1)[slow]
        bw_s = bw.reshape(-1)[slow]
        tail = r.reshape(-1)[slow] + big_s * np.log(big_s / bw_s)
        accept = (s.reshape(-1)[slow] > t) | (tail >= t)
        ok.reshape(-1)[slow] = accept
    ok &= u1 > _F1 - _F1  # the algorithm works on the open interval (0, 1)
    return x, ok


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
    """Iterations per chunk: about 2.5 million samples, at least 64 iterations."""
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
        store[:, a:b] = _sample_chunk(inp, j, b - a)
        if correlation > 0 and inp.groups:
            d = store[:, a:b].astype(float)
            _correlate_chunk(inp, j, d, float(correlation))
            store[:, a:b] = d
    return store


def _check_correlation(correlation: float) -> None:
    if not 0.0 <= float(correlation) <= 1.0:
        raise ValueError("correlation must lie between 0 and 1")


class _Passes:
    """Both passes on a chunk of iterations and the counts taken from them."""

    def __init__(self, net: Network, targets: dict[int, float] | None):
        self.n = net.n
        self.plan = pass_plan(net)
        self.targets = {int(i): float(t) for i, t in (targets or {}).items()}
        for i in self.targets:
            if not 0 <= i < net.n:
                raise ValueError(f"target activity index {i} out of range")
        self._buffers: tuple[int, tuple[np.ndarray, ...]] | None = None

    def buffers(self, cols: int) -> tuple[np.ndarray, ...]:
        """Reused work matrices for ``cols`` iterations: durations, early, late, flags."""
        if self._buffers is None or self._buffers[0] != cols:
            n = self.n
            self._buffers = (cols, (_mapped((n, cols), float), _mapped((2 * n, cols), float),
                                    _mapped((2 * n, cols), float), _mapped((n, cols), bool)))
        return self._buffers[1]

    def run(self, d: np.ndarray) -> tuple[np.ndarray, np.ndarray, dict[int, int]]:
        """Project finish per column, critical counts per activity, target hits."""
        n, cols = d.shape
        _, x, y, crit = self.buffers(cols)
        nonneg = bool(d.min() >= 0.0) if d.size else True
        forward_into(self.plan, d, x, nonneg)
        finish = x[n:].max(axis=0) if n else np.zeros(cols)
        backward_into(self.plan, d, finish, y, nonneg)
        tol = 1e-9 * np.maximum(1.0, np.abs(finish))  # network.critical_tolerance per column
        tf = y[:n]
        tf -= x[:n]
        np.less_equal(tf, tol, out=crit)
        hits = {i: int(np.count_nonzero(x[n + i] <= t)) for i, t in self.targets.items()}
        return finish, crit.sum(axis=1), hits


@dataclass
class _Job:
    """What a run's chunks need; forked workers inherit it (see _run_parallel)."""

    inp: _Inputs
    passes: _Passes
    store: np.ndarray  # (n, iterations) float32 samples
    project: np.ndarray  # (iterations,) project durations of the current run
    centred: np.ndarray  # (iterations,) centred ranks of ``project`` for the rank step
    correlation: float


def _chunk(job: _Job, j: int, correlate: bool) -> tuple[int, np.ndarray, dict[int, int]]:
    """Sample (or, for the correlated run, re-order) chunk ``j``, run the passes."""
    a, b = job.inp.chunks()[j]
    d = job.passes.buffers(b - a)[0]
    if correlate:
        d[...] = job.store[:, a:b]
        _correlate_chunk(job.inp, j, d, job.correlation)
        job.store[:, a:b] = d
    else:
        sample_durations(_rng(job.inp.seed, 0, j), job.inp.o, job.inp.m, job.inp.p,
                         job.inp.codes, b - a, out=d)
        job.store[:, a:b] = d
        d[...] = job.store[:, a:b]  # the passes use the stored (float32) values
    finish, crit, hits = job.passes.run(d)
    job.project[a:b] = finish
    return b - a, crit, hits


def _rank_rows(job: _Job, r0: int, r1: int, syy: float) -> np.ndarray:
    out = np.empty(r1 - r0)
    for a in range(r0, r1, _RANK_ROWS):
        b = min(r1, a + _RANK_ROWS)
        out[a - r0 : b - r0] = _spearman_block(job.store[a:b], job.centred, syy)
    return out


class _Counts:
    def __init__(self, n: int, targets: dict[int, float]):
        self.critical = np.zeros(n, dtype=np.int64)
        self.hits = {i: 0 for i in targets}

    def add(self, crit: np.ndarray, hits: dict[int, int]) -> None:
        self.critical += crit
        for i, h in hits.items():
            self.hits[i] += h


def _run_serial(job: _Job, correlate: bool, tick) -> tuple[_Counts, np.ndarray]:
    counts = _Counts(job.inp.n, job.passes.targets)
    for j in range(len(job.inp.chunks())):
        done, crit, hits = _chunk(job, j, correlate)
        counts.add(crit, hits)
        tick(done)
    syy = _centre_ranks(job)
    return counts, _rank_rows(job, 0, job.inp.n, syy)


def _centre_ranks(job: _Job) -> float:
    y = job.project
    job.centred[:] = stats.rankdata(y) - (y.size + 1) / 2.0
    return float(job.centred @ job.centred)


_JOB: _Job | None = None  # the job of the parallel run in progress (inherited by fork)
_JOB_LOCK = threading.Lock()  # one parallel run at a time per process


def _worker_start() -> None:
    """Keep freed memory in the worker: many short-lived numpy temporaries otherwise
    cost a page fault per page each time (glibc mallopt; ignored elsewhere)."""
    try:
        import ctypes

        libc = ctypes.CDLL("libc.so.6")
        m_trim_threshold, m_top_pad, m_mmap_threshold = -1, -2, -3
        libc.mallopt(m_trim_threshold, 1 << 30)
        libc.mallopt(m_top_pad, 64 << 20)
        libc.mallopt(m_mmap_threshold, 32 << 20)  # glibc's largest allowed value
    except (OSError, AttributeError):
        pass


def _pool_chunk(args: tuple[int, bool]):
    assert _JOB is not None
    return _chunk(_JOB, *args)


def _pool_rank(args: tuple[int, int, float]):
    assert _JOB is not None
    r0, r1, syy = args
    return r0, _rank_rows(_JOB, r0, r1, syy)


def _run_parallel(pool, job: _Job, correlate: bool, tick) -> tuple[_Counts, np.ndarray]:
    counts = _Counts(job.inp.n, job.passes.targets)
    tasks = [(j, correlate) for j in range(len(job.inp.chunks()))]
    for done, crit, hits in pool.imap_unordered(_pool_chunk, tasks):
        counts.add(crit, hits)
        tick(done)
    syy = _centre_ranks(job)
    n = job.inp.n
    step = max(_RANK_ROWS, -(-n // (8 * _RANK_ROWS)) * _RANK_ROWS)
    sensitivity = np.empty(n)
    for r0, values in pool.imap_unordered(
        _pool_rank, [(r0, min(n, r0 + step), syy) for r0 in range(0, n, step)]
    ):
        sensitivity[r0 : r0 + values.size] = values
    return counts, sensitivity


def _usable_cores() -> int:
    """Cores this process may use; 1 when OMP_NUM_THREADS=1 asks for one numeric thread
    (as a pool of converters does, see watch.py)."""
    if os.environ.get("OMP_NUM_THREADS", "").strip() == "1":
        return 1
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def _worker_count(workers: int | None, inp: _Inputs) -> int:
    if workers is None:
        if inp.n * inp.iterations < _PARALLEL_ELEMENTS:
            return 1
        workers = min(4, _usable_cores())
    workers = max(1, int(workers))
    if workers > 1:
        import multiprocessing

        if (
            "fork" not in multiprocessing.get_all_start_methods()
            or multiprocessing.current_process().daemon
        ):
            return 1
    return min(workers, len(inp.chunks()))


def _mapped(shape: tuple[int, ...], dtype, shared: bool = False) -> np.ndarray:
    """A zeroed array in anonymous memory, shared with forked workers if ``shared``.

    The pages are mapped up front (MAP_POPULATE where the platform has it): one
    call instead of a page fault per 4 KB page, several times faster on first use
    for the large sample store and work matrices. The mapping lives as long as the
    array (numpy keeps it as the array's base).
    """
    count = int(np.prod(shape))
    size = max(1, count * np.dtype(dtype).itemsize)
    flags = mmap.MAP_SHARED if shared else mmap.MAP_PRIVATE
    populate = getattr(mmap, "MAP_POPULATE", 0)
    anonymous = getattr(mmap, "MAP_ANONYMOUS", getattr(mmap, "MAP_ANON", 0))
    try:
        mem = mmap.mmap(-1, size, flags=flags | anonymous | populate)
    except (OSError, ValueError, TypeError):
        if not shared:
            return np.zeros(shape, dtype=dtype)
        mem = mmap.mmap(-1, size)
    return np.frombuffer(mem, dtype=dtype, count=count).reshape(shape)


# --------------------------------------------------------------------------- ranks


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
    if not varying.all():
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


def _summary(project: np.ndarray, counts: _Counts, sensitivity: np.ndarray, *, iterations,
             seed, distribution, correlation, due, pert_mean) -> SimulationResult:
    y = project
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
        criticality=counts.critical / count,
        sensitivity=sensitivity,
        target_p={i: h / count for i, h in counts.hits.items()},
    )


def simulate_durations(
    net: Network, durations: np.ndarray, *, due: float | None = None,
    targets: dict[int, float] | None = None, pert_mean: float = math.nan,
    seed: int = 0, distribution: str = "given", correlation: float = 0.0,
    progress: Callable[[int, int], None] | None = None,
) -> SimulationResult:
    """Analyse a given ``(n, iterations)`` matrix of durations as a simulation would.

    Feeds samples from any source (e.g. normal draws) through the same passes and
    statistics as :func:`simulate`; ``simulate(...)`` equals
    ``simulate_durations(net, draw_samples(...))`` for the same inputs.
    """
    durations = np.asarray(durations)
    if durations.ndim != 2 or durations.shape[0] != net.n or durations.shape[1] < 2:
        raise ValueError("durations must be (activities, iterations >= 2)")
    iterations = durations.shape[1]
    passes = _Passes(net, targets)
    counts = _Counts(net.n, passes.targets)
    project = np.empty(iterations)
    step = chunk_size(net.n, iterations)
    for a in range(0, iterations, step):
        b = min(a + step, iterations)
        finish, crit, hits = passes.run(np.array(durations[:, a:b], dtype=float))
        project[a:b] = finish
        counts.add(crit, hits)
        if progress is not None:
            progress(b, iterations)
    sensitivity = spearman_rows(durations, project)
    return _summary(project, counts, sensitivity, iterations=iterations, seed=seed,
                    distribution=distribution, correlation=correlation, due=due,
                    pert_mean=pert_mean)


def _run_name(inp: _Inputs, default: str) -> str:
    kinds = set(inp.codes[inp.o < inp.p].tolist())
    if len(kinds) > 1:
        return "mixed"
    return DISTRIBUTIONS[kinds.pop()] if kinds else default


def simulate(
    net: Network, optimistic, most_likely, pessimistic, *, distribution: str = "pert",
    distributions: Sequence[str | None] | None = None,
    groups: Sequence[str | None] | None = None, correlation: float = 0.0,
    iterations: int = DEFAULT_ITERATIONS, seed: int = DEFAULT_SEED, due: float | None = None,
    targets: dict[int, float] | None = None, pert_mean: float = math.nan,
    progress: Callable[[int, int], None] | None = None, workers: int | None = None,
) -> SimulationResult:
    """Monte Carlo simulation of the network's project duration (see module docstring).

    With ``correlation > 0`` and at least one group of two or more varying
    activities, the result's ``independent`` is the same run (same samples, same
    seed) without the correlation. ``progress(done, total)`` is called after each
    chunk; ``total`` counts the iterations of both runs when there are two.
    ``workers``: processes to share a large run (default: from 20 million samples,
    one per usable core up to 4, where ``fork`` is available and this is not itself
    a daemonic worker; else 1); the numbers do not depend on it.
    """
    global _JOB
    inp = _prepare(optimistic, most_likely, pessimistic, distribution, distributions, groups,
                   iterations, seed)
    _check_correlation(correlation)
    if inp.n != net.n:
        raise ValueError("one estimate per network activity is needed")
    correlated = float(correlation) > 0.0 and bool(inp.groups)
    total = (2 if correlated else 1) * inp.iterations
    done = [0]

    def tick(count: int) -> None:
        done[0] += count
        if progress is not None:
            progress(done[0], total)

    common = dict(iterations=inp.iterations, seed=inp.seed, due=due, pert_mean=pert_mean,
                  distribution=_run_name(inp, distribution))
    count = _worker_count(workers, inp)
    store = _mapped((inp.n, inp.iterations), np.float32, shared=count > 1)
    project = _mapped((inp.iterations,), float, shared=count > 1)
    centred = _mapped((inp.iterations,), float, shared=count > 1)
    job = _Job(inp, _Passes(net, targets), store, project, centred, float(correlation))
    runs = (False, True)[: 1 + correlated]
    results = []
    if count > 1:
        import multiprocessing

        with _JOB_LOCK:
            _JOB = job
            try:
                with multiprocessing.get_context("fork").Pool(count, _worker_start) as pool:
                    for correlate in runs:
                        counts, sens = _run_parallel(pool, job, correlate, tick)
                        results.append((project.copy(), counts, sens))
            finally:
                _JOB = None
    else:
        for correlate in runs:
            counts, sens = _run_serial(job, correlate, tick)
            results.append((project.copy(), counts, sens))
    first = _summary(*results[0], correlation=0.0, **common)
    if not correlated:
        return first
    result = _summary(*results[1], correlation=correlation, **common)
    result.independent = first
    return result
