"""Quantile functions u -> F^-1(u) of the duration distributions, the PERT-beta by a table.

Every simulated duration is F^-1(u) of one uniform random number u, so that an
iteration is fully described by its uniforms (and can be recomputed from them on the
Trace sheet).

* Uniform on [O, P]: O + u (P - O).
* Triangular (O, M, P) with c = (M - O) / (P - O): O + sqrt(u (P - O)(M - O)) for
  u <= c, else P - sqrt((1 - u)(P - O)(P - M)).
* PERT-beta: O + (P - O) Q(r, u), where Q(r, .) is the quantile function of the
  Beta(1 + 4r, 1 + 4(1 - r)) distribution and r = (M - O) / (P - O) (its shapes from
  :func:`converter.analyse.pert.pert_beta_parameters`). The exact Q (the inverse of the
  regularised incomplete beta function, scipy's ``betaincinv``) is far too slow to call
  for every draw, so Q is tabulated once and interpolated:

  - the grid in u is uniform in a transformed coordinate t: t = (2u)^(1/8) / 2 for
    u <= 1/2 and 1 - (2(1 - u))^(1/8) / 2 above, with :data:`CELLS` cells. Near u = 0
    the quantile behaves like u^(1/alpha) (alpha <= 5), a smooth power t^(8 / alpha) in
    t; near u = 1 alike with beta. The table therefore holds the steep tails as well
    as the middle;
  - :data:`ROWS` + 1 rows in r = 0, 1/ROWS, ..., 1; an activity's own row is the
    cubic (4-point Lagrange) interpolation in r of the four nearest rows;
  - within a cell of t, the cubic Hermite interpolant of the quantile and its exact
    slope dQ/dt = (du/dt) / f(Q), f the beta density.

  :data:`ACCURACY`: every interpolated quantile is within 1e-6 of scipy's exact one
  (times P - O in duration units), over the whole range of u, tails included
  (``tests/analyse/test_inverse.py`` checks it at many random (r, u)).
"""

from __future__ import annotations

import functools

import numpy as np
from scipy import special

from converter.analyse.pert import pert_beta_parameters

#: Cells of the transformed coordinate t (a node at t = 1/2, u = 1/2).
CELLS = 256
#: Rows of the shape number r = (M - O) / (P - O) in the master table.
ROWS = 100
#: The power of the transform: t = (2u)^(1/POWER) / 2 on the lower half.
POWER = 8
#: The accuracy of the tabulated PERT-beta quantile, on [0, 1] (P - O times it in
#: duration units): the largest difference from the exact quantile.
ACCURACY = 1e-6

_BLOCK = 65536  # draws evaluated together (their temporaries stay in cache)
_F1, _F2, _HALF = np.float32(1.0), np.float32(2.0), np.float32(0.5)
_F_CELLS = np.float32(CELLS)
_TOP = np.nextafter(_F_CELLS, np.float32(0.0))  # just below the last node


def grid_coordinate(u) -> np.ndarray:
    """The transformed coordinate t of each u in [0, 1] (see the module docstring), in
    single precision (its rounding moves a quantile by less than 2e-7).

    Examples
    --------
    >>> [float(v) for v in grid_coordinate([0.0, 0.5, 1.0])]
    [0.0, 0.5, 1.0]
    """
    u = np.asarray(u, dtype=float)
    s = np.minimum(u, 1.0 - u).astype(np.float32)  # u or 1 - u, each exact
    s *= _F2
    for _ in range(3):  # the 8th root by three square roots
        np.sqrt(s, out=s)
    s *= _HALF
    upper = s.copy()
    np.subtract(_F1, s, out=upper)
    return np.where(u <= 0.5, s, upper)


@functools.cache
def master_table() -> tuple[np.ndarray, np.ndarray]:
    """Exact standardised PERT-beta quantiles and slopes dQ/dt at the grid's nodes.

    Returns
    -------
    tuple of numpy.ndarray
        ``(values, slopes)``, each ``(ROWS + 1, CELLS + 1)``: row k is r = k / ROWS,
        column i is t = i / CELLS. The upper half is computed from the mirror image
        (Q(alpha, beta, u) = 1 - Q(beta, alpha, 1 - u)) so that 1 - u is never rounded.

    References
    ----------
    The quantile by scipy.special.betaincinv (the inverse of the regularised
    incomplete beta function); the slope dQ/du = 1 / f(Q), f the beta density.

    Examples
    --------
    >>> values, slopes = master_table()
    >>> values.shape, float(values[0, 0]), float(values[0, -1]), float(slopes[0, 0])
    ((101, 257), 0.0, 1.0, 0.0)
    """
    r = np.linspace(0.0, 1.0, ROWS + 1)[:, None]
    t = np.linspace(0.0, 1.0, CELLS + 1)[None, :]
    a, b = pert_beta_parameters(0.0, r, 1.0)  # the shapes of O = 0, M = r, P = 1
    low = t <= 0.5
    half = 2.0 * np.where(low, t, 1.0 - t)
    tail = 0.5 * half**POWER  # u below the middle, 1 - u above it
    near = np.where(low, special.betaincinv(a, b, tail), special.betaincinv(b, a, tail))
    q = np.where(low, near, 1.0 - near)  # near = Q on the lower half, 1 - Q above
    lower, upper = np.where(low, near, 1.0 - near), np.where(low, 1.0 - near, near)
    du_dt = POWER * half ** (POWER - 1)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        log_f = special.xlogy(a - 1.0, lower) + special.xlogy(b - 1.0, upper) - special.betaln(a, b)
        slope = du_dt / np.exp(log_f)
    # at u = 0 or 1 the slope in t is 0 (Q ~ u^(1/alpha) = t^(8/alpha), alpha < 8)
    slope = np.where(np.isfinite(slope) & (half > 0.0), slope, 0.0)
    return q, slope


def pert_table(r) -> np.ndarray:
    """Cubic coefficients of each activity's quantile in each cell: ``(k, CELLS, 4)`` float32.

    Row ``i`` serves shape number ``r[i]``: in cell ``j`` (t in [j, j + 1] / CELLS, local
    f = t CELLS - j) the standardised quantile is c0 + c1 f + c2 f^2 + c3 f^3, the cubic
    Hermite interpolant of the node values and slopes, themselves interpolated in r from
    :func:`master_table` by 4-point Lagrange.

    Examples
    --------
    >>> table = pert_table([0.5])
    >>> table.shape, round(float(table[0, CELLS // 2, 0]), 6)  # the median of Beta(3, 3)
    ((1, 256, 4), 0.5)
    """
    r = np.clip(np.asarray(r, dtype=float).reshape(-1), 0.0, 1.0)
    out = np.empty((r.size, CELLS, 4), dtype=np.float32)
    step = 128  # activities at a time (the temporaries stay in cache)
    for a in range(0, r.size, step):
        _table_rows(r[a : a + step], out[a : a + step])
    return out


def _table_rows(r: np.ndarray, out: np.ndarray) -> None:
    """:func:`pert_table` for a few activities, into ``out``."""
    values, slopes = master_table()
    x = r * ROWS
    k = np.clip(np.floor(x).astype(np.int64) - 1, 0, ROWS - 3)
    s = (x - k)[:, None]  # the four rows k..k+3 sit at s = 0..3
    weights = (
        -(s - 1.0) * (s - 2.0) * (s - 3.0) / 6.0,
        s * (s - 2.0) * (s - 3.0) / 2.0,
        -s * (s - 1.0) * (s - 3.0) / 2.0,
        s * (s - 1.0) * (s - 2.0) / 6.0,
    )
    v = weights[0] * values[k]
    d = weights[0] * slopes[k]
    for j in (1, 2, 3):
        v += weights[j] * values[k + j]
        d += weights[j] * slopes[k + j]
    d *= 1.0 / CELLS
    v0, v1, d0, d1 = v[:, :-1], v[:, 1:], d[:, :-1], d[:, 1:]
    step = v1 - v0
    out[..., 0] = v0
    out[..., 1] = d0
    out[..., 2] = 3.0 * step - 2.0 * d0 - d1
    out[..., 3] = d0 + d1 - 2.0 * step


def evaluate(table: np.ndarray, u: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """Standardised quantiles: row ``i`` of ``u`` (k, c) through row ``i`` of ``table``.

    Parameters
    ----------
    table : numpy.ndarray
        ``(k, CELLS, 4)`` from :func:`pert_table`.
    u : numpy.ndarray
        ``(k, c)`` uniforms in [0, 1].
    out : numpy.ndarray, optional
        ``(k, c)`` float64 to fill.

    Returns
    -------
    numpy.ndarray
        ``(k, c)`` quantiles in [0, 1].

    References
    ----------
    The inversion method: Devroye (1986), *Non-Uniform Random Variate Generation*,
    Springer, chapter II.2; the cubic Hermite interpolant from values and slopes at a
    cell's ends (common practice).

    Examples
    --------
    >>> round(float(evaluate(pert_table([0.25]), np.array([[0.3]]))[0, 0]), 6)
    0.218027
    """
    k, c = u.shape
    if out is None:
        out = np.empty((k, c))
    cells = np.ascontiguousarray(table).view(np.complex128).reshape(-1)  # a cell's 4 floats
    rows_per = max(1, _BLOCK // max(c, 1))
    for r0 in range(0, k, rows_per):
        r1 = min(k, r0 + rows_per)
        x = grid_coordinate(u[r0:r1])
        x *= _F_CELLS
        np.minimum(x, _TOP, out=x)  # u = 1 (never drawn) stays in the last cell
        f = np.floor(x)
        j = f.astype(np.int32)
        np.subtract(x, f, out=f)  # the place within the cell, in single precision
        j += (np.arange(r0, r1, dtype=np.int32) * CELLS)[:, None]
        coef = np.take(cells, j).view(np.float32).reshape(r1 - r0, c, 4)
        y = coef[..., 3] * f
        y += coef[..., 2]
        y *= f
        y += coef[..., 1]
        y *= f
        y += coef[..., 0]
        out[r0:r1] = y
    return out


def pert_quantile(r, u) -> np.ndarray:
    """The tabulated standardised PERT-beta quantile Q(r, u), broadcasting r and u.

    Examples
    --------
    >>> from scipy import stats
    >>> q = float(pert_quantile(0.2, 0.999))
    >>> bool(abs(q - stats.beta.ppf(0.999, 1.8, 4.2)) < ACCURACY)
    True
    """
    r, u = np.broadcast_arrays(np.asarray(r, dtype=float), np.asarray(u, dtype=float))
    flat_r, flat_u = r.reshape(-1), u.reshape(-1)
    out = evaluate(pert_table(flat_r), flat_u[:, None])[:, 0]
    return out.reshape(r.shape)


def triangular_quantile(lo, mode, hi, u) -> np.ndarray:
    """Triangular (lo, mode, hi) quantile of u, by the inverse of its distribution function.

    References
    ----------
    The triangular distribution function inverted in closed form (common practice;
    scipy.stats.triang.ppf is the check).

    Examples
    --------
    >>> [float(v) for v in triangular_quantile(0.0, 1.0, 2.0, np.array([0.0, 0.5, 1.0]))]
    [0.0, 1.0, 2.0]
    """
    lo, mode, hi, u = (np.asarray(v, dtype=float) for v in (lo, mode, hi, u))
    width = hi - lo
    left = np.sqrt(u * (width * (mode - lo)))
    left += lo
    right = np.sqrt((1.0 - u) * (width * (hi - mode)))
    right = hi - right
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(u <= (mode - lo) / width, left, right)


def uniform_quantile(lo, hi, u) -> np.ndarray:
    """Uniform [lo, hi] quantile of u: lo + u (hi - lo).

    Examples
    --------
    >>> float(uniform_quantile(2.0, 6.0, 0.25))
    3.0
    """
    lo, hi, u = (np.asarray(v, dtype=float) for v in (lo, hi, u))
    return lo + u * (hi - lo)
