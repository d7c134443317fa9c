"""Validated simulation inputs and how a run is cut into chunks of iterations."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from converter.analyse.simulate.sampling import KIND_CODES, kind_codes, quantile_table
from converter.model import DISTRIBUTIONS

_CHUNK_ELEMENTS = 2_500_000  # activities x iterations per chunk (20 MB a float64 matrix)


@dataclass(frozen=True)
class Inputs:
    """Validated simulation inputs."""

    o: np.ndarray
    m: np.ndarray
    p: np.ndarray
    codes: np.ndarray
    groups: tuple[np.ndarray, ...]  # member indices of each group with 2+ varying members
    iterations: int
    seed: int
    chunk: int
    #: The PERT-beta quantile table of the varying PERT-beta activities
    #: (:func:`.sampling.quantile_table`), made once per run.
    table: np.ndarray | None = None

    @property
    def n(self) -> int:
        return self.o.size

    def chunks(self) -> list[tuple[int, int]]:
        return [
            (a, min(a + self.chunk, self.iterations)) for a in range(0, self.iterations, self.chunk)
        ]


def chunk_size(n: int, iterations: int) -> int:
    """Iterations per chunk: about 2.5 million samples, at least 64 iterations."""
    return max(1, min(iterations, max(64, _CHUNK_ELEMENTS // max(n, 1))))


def prepare(o, m, p, distribution, distributions, groups, iterations, seed) -> Inputs:
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
    codes = kind_codes([d if d is not None else distribution for d in distributions], n)
    iterations = int(iterations)
    return Inputs(
        o=o,
        m=m,
        p=p,
        codes=codes,
        groups=_group_members(groups, o < p),
        iterations=iterations,
        seed=int(seed),
        chunk=chunk_size(n, iterations),
        table=quantile_table(o, m, p, codes),
    )


def _group_members(groups: Sequence[str | None] | None, varying: np.ndarray):
    """Indices of the varying members of each group that has two or more of them."""
    if groups is None:
        return ()
    if len(groups) != varying.size:
        raise ValueError("groups needs one entry per activity")
    by_name: dict[str, list[int]] = {}
    for i, name in enumerate(groups):
        if name is not None and varying[i]:
            by_name.setdefault(str(name), []).append(i)
    return tuple(np.array(v, dtype=np.int64) for v in by_name.values() if len(v) > 1)


def check_correlation(correlation: float) -> None:
    if not 0.0 <= float(correlation) <= 1.0:
        raise ValueError("correlation must lie between 0 and 1")
