"""Three-point (PERT) formulas and normal probabilities.

The one home of the expected time, the variance and the PERT-beta shape parameters
(the analysis, the health checks and the simulation all use these). Sources: Malcolm,
Roseboom, Clark & Fazar, "Application of a technique for research and development
program evaluation", *Operations Research* 7(5), 1959 (TE, variance, and the normal
approximation of the project duration); the normal distribution via ``scipy.stats.norm``.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import norm


def expected_time(o, m, p):
    """TE = (O + 4M + P) / 6 (Malcolm et al. 1959).

    Examples
    --------
    >>> float(expected_time(2, 5, 14))
    6.0
    """
    return (np.asarray(o, float) + 4.0 * np.asarray(m, float) + np.asarray(p, float)) / 6.0


def variance(o, p):
    """Variance ((P - O) / 6)^2 (Malcolm et al. 1959).

    Examples
    --------
    >>> float(variance(2, 14))
    4.0
    """
    return ((np.asarray(p, float) - np.asarray(o, float)) / 6.0) ** 2


def z_score(due: float, mean: float, sd: float) -> float | None:
    """(due - mean) / sd; None when sd is 0 (the probability is then 0 or 1)."""
    if sd <= 0:
        return None
    return (due - mean) / sd


def p_meet(due: float, mean: float, sd: float) -> float:
    """Probability that a normal duration is at most ``due``.

    PERT takes the project duration as normal, with the critical path's TE sum as mean
    and its variance sum as variance, so P(duration <= due) = Phi((due - mean) / sd).

    Parameters
    ----------
    due : float
        The due date, as an offset in the schedule's time unit.
    mean, sd : float
        Mean and standard deviation of the duration. With ``sd`` 0 the duration is
        certain: the probability is 1 if ``due >= mean``, else 0.

    Returns
    -------
    float
        The probability of finishing by ``due``.

    References
    ----------
    Malcolm, Roseboom, Clark & Fazar (1959), "Application of a technique for research and
    development program evaluation", *Operations Research* 7(5), 646-669.

    Examples
    --------
    One standard deviation beyond the mean (z = 1):

    >>> round(p_meet(52.0, 50.0, 2.0), 4)
    0.8413
    >>> p_meet(49.0, 50.0, 0.0)
    0.0
    """
    if sd <= 0:
        return 1.0 if due >= mean else 0.0
    return float(norm.cdf((due - mean) / sd))


def duration_at(confidence: float, mean: float, sd: float) -> float:
    """The duration met with probability ``confidence``: mean + Phi^-1(c) sd.

    The inverse of :func:`p_meet` for the normal project duration of PERT.

    Parameters
    ----------
    confidence : float
        Probability in (0, 1), e.g. 0.8 for the P80 duration.
    mean, sd : float
        Mean and standard deviation of the duration (``sd`` 0 gives ``mean``).

    Returns
    -------
    float
        The duration.

    References
    ----------
    Malcolm, Roseboom, Clark & Fazar (1959), *Operations Research* 7(5) (see
    :func:`p_meet`).

    Examples
    --------
    >>> round(duration_at(0.9, 50.0, 2.0), 3)
    52.563
    >>> duration_at(0.5, 50.0, 2.0)
    50.0
    """
    return float(mean + norm.ppf(confidence) * sd)


def pert_beta_parameters(o, m, p) -> tuple[np.ndarray, np.ndarray]:
    """PERT-beta shape parameters alpha = 1 + 4(M-O)/(P-O), beta = 1 + 4(P-M)/(P-O).

    The beta distribution on [O, P] with these shapes has mean (O + 4M + P)/6 and
    variance (mean - O)(P - mean)/7 (e.g. Vose, *Risk Analysis: A Quantitative Guide*,
    3rd ed., 2008, the PERT distribution). Where O = P (a fixed duration) both are 1.
    The simulation draws its PERT durations with these shapes.

    Examples
    --------
    >>> alpha, beta = pert_beta_parameters(2.0, 5.0, 14.0)
    >>> float(alpha), float(beta)
    (2.0, 4.0)
    """
    o, m, p = (np.asarray(x, float) for x in (o, m, p))
    span = np.where(p > o, p - o, 1.0)
    return 1.0 + 4.0 * (m - o) / span, 1.0 + 4.0 * (p - m) / span
