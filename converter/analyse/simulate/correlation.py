"""Rank correlation among sampled durations, by the method of Iman & Conover (1982)."""

from __future__ import annotations

import math

import numpy as np
from scipy import linalg, special


def induce_rank_correlation(rng: np.random.Generator, x: np.ndarray, rho: float) -> np.ndarray:
    """Re-order each row of ``x`` so that every pair of rows has rank correlation ``rho``.

    Van der Waerden scores Phi^-1(k / (c + 1)) are permuted independently per variable
    (matrix R), multiplied by S' where S = P Q^-1, P the Cholesky factor of the target
    correlation matrix and Q that of the scores' own correlation matrix, and each
    variable's draws are re-ordered to the ranks of its column. The target matrix has 1
    on the diagonal and 2 sin(pi rho / 6) elsewhere, the Pearson correlation of normal
    scores whose rank correlation is ``rho`` (Pearson 1907, from memory: rho_s = (6 / pi)
    arcsin(r / 2) for a bivariate normal). ``rho = 1`` gives every variable the same
    ranks. Each row keeps its own values, only their order changes, so every marginal
    distribution is kept exactly.

    Parameters
    ----------
    rng : numpy.random.Generator
        The stream the scores are permuted with.
    x : numpy.ndarray
        ``(g, c)``: ``g`` variables (activities of one group) by ``c`` draws.
    rho : float
        The target rank correlation, in [0, 1].

    Returns
    -------
    numpy.ndarray
        ``x`` with each row re-ordered (``x`` itself when there is nothing to do: fewer
        than 2 variables or draws, or ``rho`` 0).

    References
    ----------
    Iman & Conover (1982), "A distribution-free approach to inducing rank correlation
    among input variables", *Communications in Statistics - Simulation and Computation*
    11(3), 311-334.

    Examples
    --------
    >>> from scipy.stats import spearmanr
    >>> x = np.random.default_rng(2).random((2, 5000))
    >>> y = induce_rank_correlation(np.random.default_rng(3), x, 0.7)
    >>> round(float(spearmanr(y[0], y[1]).statistic), 1)
    0.7
    >>> bool((np.sort(y, axis=1) == np.sort(x, axis=1)).all())  # the same values
    True
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
