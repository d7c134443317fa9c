"""Duration samplers: PERT-beta (Cheng's algorithm BB), triangular and uniform.

Distributions (O optimistic, M most likely, P pessimistic; O = P is a constant):

* ``"pert"``: the PERT-beta on [O, P] with the shapes of
  :func:`converter.analyse.pert.pert_beta_parameters`, whose mean is (O + 4M + P) / 6
  (Malcolm, Roseboom, Clark & Fazar 1959, "Application of a technique for research and
  development program evaluation", *Operations Research* 7(5));
* ``"triangular"`` on (O, M, P); ``"uniform"`` on [O, P].
"""

from __future__ import annotations

import math

import numpy as np

from converter.analyse.pert import pert_beta_parameters
from converter.model import DISTRIBUTIONS

PERT, TRIANGULAR, UNIFORM = range(3)
KIND_CODES: dict[str, int] = {name: i for i, name in enumerate(DISTRIBUTIONS)}

_LN4 = np.float32(math.log(4.0))
_ONE_PLUS_LN5 = np.float32(1.0 + math.log(5.0))
_F1, _F5 = np.float32(1.0), np.float32(5.0)
_BLOCK = 8192  # draws handled together (a block's temporaries stay in cache)


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


def sample_durations(
    rng: np.random.Generator, o, m, p, kinds, size: int, out: np.ndarray | None = None
) -> np.ndarray:
    """Draw ``size`` durations for each activity: an ``(n, size)`` float64 matrix.

    Rows are drawn kind by kind (PERT, triangular, uniform), each kind in activity
    order, a few rows at a time; O = P rows are the constant. The PERT-beta uses
    Cheng's algorithm (:func:`beta_cheng`) scaled to [O, P]; the triangular and
    uniform invert their distribution functions: for the triangular with
    c = (M - O) / (P - O), x = O + sqrt(u (P - O)(M - O)) if u <= c, else
    P - sqrt((1 - u)(P - O)(P - M)).

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
    o, m, p = (np.asarray(v, dtype=float).reshape(-1) for v in (o, m, p))
    n = o.size
    codes = kind_codes(kinds, n)
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
            if code == TRIANGULAR:
                out[sel] = _triangular(rng, o[sel, None], m[sel, None], p[sel, None], size)
            else:
                out[sel] = _uniform(rng, o[sel, None], p[sel, None], size)
    return out


def _triangular(rng, lo: np.ndarray, mode: np.ndarray, hi: np.ndarray, size: int) -> np.ndarray:
    """Triangular draws by inversion, one row per ``(k, 1)`` column of parameters."""
    u = rng.random((lo.shape[0], size))
    width = hi - lo
    left = np.sqrt(u * (width * (mode - lo)))
    left += lo
    right = np.sqrt((1.0 - u) * (width * (hi - mode)))
    np.subtract(hi, right, out=right)
    return np.where(u <= (mode - lo) / width, left, right)


def _uniform(rng, lo: np.ndarray, hi: np.ndarray, size: int) -> np.ndarray:
    """Uniform draws on [lo, hi], one row per ``(k, 1)`` column of bounds."""
    u = rng.random((lo.shape[0], size))
    u *= hi - lo
    u += lo
    return u


def beta_cheng(rng: np.random.Generator, alpha, beta, size: int) -> np.ndarray:
    """Beta(alpha_i, beta_i) draws, ``(k, size)``, for shape parameters >= 1.

    Algorithm BB of Cheng (for min(alpha, beta) > 1), an exact rejection method,
    vectorised: for each cache-sized block of draws a few more candidates than needed
    are made and each row keeps its first accepted ones (rows left short draw again).
    The candidates are computed in single precision (uniforms with 24 bits), the
    precision the simulation keeps its samples in. A shape equal to 1 is drawn by
    inversion: Beta(1, b) = 1 - U^(1/b), Beta(a, 1) = U^(1/a).

    Parameters
    ----------
    rng : numpy.random.Generator
        The random stream.
    alpha, beta : array_like
        Shape parameters (>= 1), one pair per row.
    size : int
        Draws per row.

    Returns
    -------
    numpy.ndarray
        The ``(k, size)`` draws in [0, 1].

    References
    ----------
    Cheng (1978), "Generating beta variates with nonintegral shape parameters",
    *Communications of the ACM* 21(4), 317-322.

    Examples
    --------
    >>> x = beta_cheng(np.random.default_rng(5), [2.0, 3.0], [4.0, 3.0], 20_000)
    >>> x.shape, [round(float(v), 2) for v in x.mean(axis=1)]  # means 1/3 and 1/2
    ((2, 20000), [0.33, 0.5])
    """
    alpha = np.asarray(alpha, dtype=float).reshape(-1)
    beta = np.asarray(beta, dtype=float).reshape(-1)
    out = np.empty((alpha.size, size))
    _beta_into(
        rng,
        alpha,
        beta,
        np.zeros(alpha.size),
        np.ones(alpha.size),
        size,
        out,
        np.arange(alpha.size),
    )
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
