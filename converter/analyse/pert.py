"""Three-point (PERT) formulas and normal probabilities.

Sources: Malcolm, Roseboom, Clark & Fazar, "Application of a technique for research
and development program evaluation", Operations Research 7(5), 1959 (TE and
variance); the normal distribution via ``scipy.stats.norm``.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import norm


def expected_time(o, m, p):
    """TE = (O + 4M + P) / 6."""
    return (np.asarray(o, float) + 4.0 * np.asarray(m, float) + np.asarray(p, float)) / 6.0


def variance(o, p):
    """Variance ((P - O) / 6)^2."""
    return ((np.asarray(p, float) - np.asarray(o, float)) / 6.0) ** 2


def z_score(due: float, mean: float, sd: float) -> float | None:
    """(due - mean) / sd; None when sd is 0 (the probability is then 0 or 1)."""
    if sd <= 0:
        return None
    return (due - mean) / sd


def p_meet(due: float, mean: float, sd: float) -> float:
    """P(duration <= due) for a normal duration; with sd 0, 1 if due >= mean else 0."""
    if sd <= 0:
        return 1.0 if due >= mean else 0.0
    return float(norm.cdf((due - mean) / sd))


def duration_at(confidence: float, mean: float, sd: float) -> float:
    """mean + Phi^-1(c) * sd: the duration met with probability ``confidence``."""
    return float(mean + norm.ppf(confidence) * sd)


def pert_beta_parameters(o, m, p) -> tuple[np.ndarray, np.ndarray]:
    """PERT-beta shape parameters alpha = 1 + 4(M-O)/(P-O), beta = 1 + 4(P-M)/(P-O).

    The beta distribution on [O, P] with these shapes has mean (O + 4M + P)/6
    (e.g. Vose, *Risk Analysis: A Quantitative Guide*, 3rd ed., 2008, the PERT distribution).
    """
    o, m, p = (np.asarray(x, float) for x in (o, m, p))
    span = np.where(p > o, p - o, 1.0)
    return 1.0 + 4.0 * (m - o) / span, 1.0 + 4.0 * (p - m) / span
