"""Duration samplers: every duration is F^-1(u) of one uniform random number u.

Distributions (O optimistic, M most likely, P pessimistic; O = P is a constant):

* ``"pert"``: the PERT-beta on [O, P] with the shapes of
  :func:`converter.analyse.pert.pert_beta_parameters`, whose mean is (O + 4M + P) / 6
  (Malcolm, Roseboom, Clark & Fazar 1959, "Application of a technique for research and
  development program evaluation", *Operations Research* 7(5)); its quantile by the
  table of :mod:`.inverse` (within :data:`.inverse.ACCURACY` of the exact one);
* ``"triangular"`` on (O, M, P); ``"uniform"`` on [O, P], each by its closed-form
  inverse distribution function.

An iteration is therefore fully described by its uniforms: the Iman-Conover rank
correlation re-orders the uniforms of a group (:mod:`.correlation`), and the Trace
sheet recomputes chosen iterations from theirs.
"""

from __future__ import annotations

import numpy as np

from converter.analyse.simulate.inverse import (
    evaluate,
    pert_table,
    triangular_quantile,
    uniform_quantile,
)
from converter.model import DISTRIBUTIONS

PERT, TRIANGULAR, UNIFORM = range(3)
KIND_CODES: dict[str, int] = {name: i for i, name in enumerate(DISTRIBUTIONS)}

_BLOCK = 65536  # draws handled together (a block's temporaries stay in cache)


def kind_codes(kinds, n: int) -> np.ndarray:
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
        out = np.array(
            [KIND_CODES[k] if isinstance(k, str) else int(k) for k in kinds], dtype=np.int8
        )
    if out.size != n:
        raise ValueError("one distribution per activity is needed")
    if out.size and (out.min() < 0 or out.max() > UNIFORM):
        raise ValueError("distribution codes are 0 (pert), 1 (triangular), 2 (uniform)")
    return out


def shape_numbers(o, m, p) -> np.ndarray:
    """r = (M - O) / (P - O) per activity (0 where O = P): the PERT-beta's shape number.

    Examples
    --------
    >>> [float(v) for v in shape_numbers([0.0, 2.0], [1.0, 2.0], [4.0, 2.0])]
    [0.25, 0.0]
    """
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    width = p - o
    return np.divide(m - o, width, out=np.zeros_like(width), where=width > 0)


def quantile_table(o, m, p, codes) -> np.ndarray:
    """The interpolation table (:func:`.inverse.pert_table`) of the varying PERT-beta rows,
    in activity order: row ``i`` of the table serves the ``i``-th such activity."""
    rows = _pert_rows(np.asarray(o, dtype=float), np.asarray(p, dtype=float), codes)
    return pert_table(shape_numbers(o, m, p)[rows])


def _pert_rows(o: np.ndarray, p: np.ndarray, codes: np.ndarray) -> np.ndarray:
    return np.flatnonzero((codes == PERT) & (o < p))


def draw_uniforms(
    rng: np.random.Generator, n: int, size: int, out: np.ndarray | None = None
) -> np.ndarray:
    """The ``(n, size)`` uniforms of a chunk: one per activity and iteration, drawn in one
    call (row ``i`` is activity ``i``, also where its duration is fixed), so that any
    iteration's uniforms can be drawn again from the chunk's stream. ``out``: a
    C-contiguous ``(n, size)`` float64 matrix to fill."""
    if out is None:
        return rng.random((n, size))
    return rng.random((n, size), out=out)


def durations_from_uniforms(
    u: np.ndarray, o, m, p, codes, table: np.ndarray | None = None, out=None
) -> np.ndarray:
    """Durations x = F^-1(u), row by row: ``(n, c)`` uniforms to ``(n, c)`` float64 durations.

    Parameters
    ----------
    u : numpy.ndarray
        ``(n, c)`` uniforms in [0, 1).
    o, m, p : array_like
        Optimistic, most likely and pessimistic duration per activity.
    codes : numpy.ndarray
        Distribution code per activity (:func:`kind_codes`).
    table : numpy.ndarray, optional
        :func:`quantile_table` of these activities (made here when not given).
    out : numpy.ndarray, optional
        ``(n, c)`` float64 to fill; may be ``u`` itself (each row is read before it is
        written).

    Returns
    -------
    numpy.ndarray
        The durations; O = P rows are the constant.

    Examples
    --------
    >>> u = np.array([[0.5, 0.25], [0.1, 0.9]])
    >>> x = durations_from_uniforms(u, [0.0, 2.0], [5.0, 3.0], [10.0, 6.0],
    ...                             np.array([0, 2], dtype=np.int8))
    >>> [[round(float(v), 6) for v in row] for row in x]
    [[5.0, 3.594362], [2.4, 5.6]]
    """
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    n, size = u.shape
    if out is None:
        out = np.empty((n, size))
    const = o == p
    out[const] = o[const, None]
    pert = _pert_rows(o, p, codes)
    if table is None:
        table = pert_table(shape_numbers(o, m, p)[pert])
    rows_per = max(1, _BLOCK // max(size, 1))
    for r0 in range(0, pert.size, rows_per):
        sel = pert[r0 : r0 + rows_per]
        x = evaluate(table[r0 : r0 + rows_per], u[sel])
        x *= (p[sel] - o[sel])[:, None]
        x += o[sel, None]
        out[sel] = x
    for code in (TRIANGULAR, UNIFORM):
        rows = np.flatnonzero((codes == code) & ~const)
        for r0 in range(0, rows.size, rows_per):
            sel = rows[r0 : r0 + rows_per]
            lo, hi = o[sel, None], p[sel, None]
            if code == TRIANGULAR:
                out[sel] = triangular_quantile(lo, m[sel, None], hi, u[sel])
            else:
                out[sel] = uniform_quantile(lo, hi, u[sel])
    return out


def sample_durations(
    rng: np.random.Generator, o, m, p, kinds, size: int, out: np.ndarray | None = None
) -> np.ndarray:
    """Draw ``size`` durations for each activity: an ``(n, size)`` float64 matrix.

    The uniforms of :func:`draw_uniforms` through :func:`durations_from_uniforms`.

    Parameters
    ----------
    rng : numpy.random.Generator
        The random stream.
    o, m, p : array_like
        Optimistic, most likely and pessimistic duration per activity.
    kinds : str, int or sequence
        One distribution name (``"pert"``, ``"triangular"``, ``"uniform"``) or code for
        all, or one per activity.
    size : int
        Draws per activity.
    out : numpy.ndarray, optional
        An ``(n, size)`` float64 matrix to fill (reuses memory).

    Returns
    -------
    numpy.ndarray
        The ``(n, size)`` draws.

    Examples
    --------
    >>> x = sample_durations(np.random.default_rng(1), [2.0, 4.0], [3.0, 4.0], [9.0, 4.0],
    ...                      "pert", 1000)
    >>> x.shape, bool((x[0] >= 2.0).all() and (x[0] <= 9.0).all()), set(x[1].tolist())
    ((2, 1000), True, {4.0})
    """
    o = np.asarray(o, dtype=float).reshape(-1)
    codes = kind_codes(kinds, o.size)
    u = draw_uniforms(rng, o.size, size)
    return durations_from_uniforms(u, o, m, p, codes, out=out)
