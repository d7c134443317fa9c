"""The named risks of a traced iteration, drawn again from the risks' own streams.

Each risk's occurrence and impact uniforms come from its own streams
(:mod:`.risks`: stream 2 keyed by the risk's ID, or by ``"group:" + name`` for a grouped
risk, and stream 3 keyed by its ID), a whole run's worth per stream; the traced
iteration's are taken from them by its index. The risk occurred when its occurrence
uniform u is below its probability; its impact is ``F^-1(v)`` of its impact uniform v
(computed exactly, whether or not it occurred, so the Trace sheet can show it). The
delay it adds to each activity it hits is the impact, or for a percentage impact the
impact times that activity's sampled duration (before any risk's delay), as
:func:`.risks.add_delays` adds them in the run.

Always the unmitigated register: the trace follows the run whose figures it stands for.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from converter.analyse.simulate.risks import (
    IMPACT_STREAM,
    OCCURRENCE_STREAM,
    RiskDraws,
    add_delays,
    impact_inverse,
    occurrence_key,
    risk_key,
    uniforms,
)

OCCURRENCE, IMPACT = "occurrence", "impact"


@dataclass
class RiskUniforms:
    """Every risk's occurrence and impact uniforms at the traced iterations
    (``(risks, traced)`` arrays)."""

    occurrence: np.ndarray
    impact: np.ndarray


def risk_uniforms(draws: RiskDraws, iterations: list[int]) -> RiskUniforms:
    """The occurrence and impact uniforms of every risk at ``iterations``.

    Examples
    --------
    >>> from converter.model import Risk
    >>> from converter.analyse.simulate.risks import draw_risks
    >>> r = Risk("R", "", 0.5, 1.0, 2.0, 3.0, ("A",))
    >>> d = draw_risks([r], {"A": 0}, distribution="pert", iterations=50, seed=3)
    >>> got = risk_uniforms(d, [7, 9])
    >>> ((got.occurrence[0] < 0.5) == d.occurred[0, [7, 9]]).all()
    np.True_
    """
    total = draws.occurred.shape[1]
    shape = (draws.count, len(iterations))
    occurrence, impact = np.empty(shape), np.empty(shape)
    for k, risk in enumerate(draws.register):
        occurrence[k] = uniforms(draws.seed, OCCURRENCE_STREAM, occurrence_key(risk), total)[
            iterations
        ]
        impact[k] = uniforms(draws.seed, IMPACT_STREAM, risk_key(risk.id), total)[iterations]
    return RiskUniforms(occurrence, impact)


def traced_risks(draws: RiskDraws, u: np.ndarray, v: np.ndarray) -> list[tuple]:
    """Per risk (register order): (index, occurrence u, occurred, impact v, exact impact)
    for one traced iteration's uniforms ``u`` and ``v``."""
    out = []
    for k, risk in enumerate(draws.register):
        occurred = bool(u[k] < risk.probability)
        impact = impact_inverse([v[k]], risk.low, risk.likely, risk.high, draws.distribution)
        out.append((k, float(u[k]), occurred, float(v[k]), float(impact[0])))
    return out


def exact_delays(draws: RiskDraws, hits: list[tuple], base: np.ndarray) -> np.ndarray:
    """Each activity's delay from the risks that occurred (``hits`` from
    :func:`traced_risks`), on the exact sampled durations ``base``.

    Examples
    --------
    >>> from converter.model import Risk
    >>> from converter.analyse.simulate.risks import draw_risks
    >>> rs = [Risk("F", "", 1.0, 2.0, 2.0, 2.0, ("A", "B")),
    ...       Risk("P", "", 1.0, 0.5, 0.5, 0.5, ("B",), percent=True)]
    >>> d = draw_risks(rs, {"A": 0, "B": 1}, distribution="pert", iterations=2, seed=1)
    >>> exact_delays(d, traced_risks(d, [0.1, 0.1], [0.5, 0.5]), np.array([3.0, 4.0]))
    array([2., 4.])
    """
    delay = np.zeros(base.shape)
    for k, _, occurred, _, impact in hits:
        if not occurred:
            continue
        rows = draws.rows[k]
        delay[rows] += base[rows] * impact if draws.percent[k] else impact
    return delay


def simulated_with_delays(draws: RiskDraws, sampled: np.ndarray, iteration: int) -> np.ndarray:
    """The durations the run passed on for ``iteration``: its sampled durations with the
    risks' delays added exactly as the run added them (:func:`.risks.add_delays`)."""
    d = sampled[:, None].copy()
    add_delays(draws, d, iteration, iteration + 1)
    return d[:, 0]


def delay_spread(
    draws: RiskDraws, hits: list[tuple], spread: np.ndarray, sampled: np.ndarray
) -> np.ndarray:
    """Bound per activity on |exact delay - run's delay|: the run keeps each impact to
    single precision (|I| 2^-23), and a percentage impact scales a sampled duration
    that is itself within ``spread`` of the exact one (|I| spread + |I| |d| 2^-23)."""
    out = np.zeros(spread.shape)
    for k, _, occurred, _, impact in hits:
        if not occurred:
            continue
        rows = draws.rows[k]
        size = abs(impact)
        if draws.percent[k]:
            out[rows] += size * spread[rows] + size * np.abs(sampled[rows]) * 2.0**-23
        else:
            out[rows] += size * 2.0**-23
    return out
