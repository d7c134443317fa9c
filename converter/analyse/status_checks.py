"""Health checks of start constraints and of a project in flight.

Constraints (``Not before``) go with the logic checks; the progress checks (missed
activities, actual dates after the status date, out-of-sequence progress) form their own
group, present only when a status date is given. With a baseline run
(:class:`converter.analyse.baseline.Baseline`, from ``convert --baseline``) an activity is
due when the baseline's early finish is on or before the status date, and the baseline
execution index joins them; without one, the plan's own early finish says what was due.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from converter.analyse.baseline import DATES, Baseline, DueFinish, due_offsets
from converter.analyse.calendar import Calendar
from converter.analyse.checks import COMMON, DCMA, GAO, LOGIC, Check, Citation, Limit
from converter.analyse.network import build_network, critical_tolerance, forward_pass
from converter.analyse.status import (
    FINISHED,
    NOT_STARTED,
    Remaining,
    finish_offset,
    out_of_sequence,
    start_offset,
)
from converter.model import Schedule

PROGRESS = "progress"

#: The least baseline execution index that passes (DCMA 2012, check 14; from memory, like
#: the other DCMA figures in converter.analyse.checks). The Percent column shows BEI x 100.
BEI_LEAST = 0.95
BEI_WORDING = f"BEI >= {BEI_LEAST:g} (percent >= {BEI_LEAST * 100:g}%)"


@dataclass(frozen=True)
class AtLeast(Limit):
    """A floor instead of a ceiling: ``most`` percent of ``share_of`` is the least share
    that passes (exactly it passes; nothing due passes). ``wording`` is the limit's text.

    Examples
    --------
    >>> AtLeast(95, "activities", wording="BEI >= 0.95").allows(19, 20), AtLeast(95).text
    (True, '>= 95%')
    """

    def allows(self, count: int, out_of: int | None) -> bool:
        return count * 100 >= self.most * (out_of or 0)

    @property
    def text(self) -> str:
        return self.wording or f">= {self.most:g}%"


@dataclass
class TallyCheck(Check):
    """A check whose count is a tally of its own, not its offenders: the baseline execution
    index counts the finished activities and lists those due that have not finished."""

    tally: int = 0

    @property
    def count(self) -> int:
        return self.tally


def status_checks(
    schedule: Schedule,
    rem: Remaining,
    calendar: Calendar | None,
    baseline: Baseline | None = None,
) -> list[Check]:
    """The constraint check (when any activity has a Not before) and, with a status date,
    the progress checks (judged against ``baseline`` when one is given)."""
    checks = []
    ids = [a.id for a in schedule.activities]
    if not np.isnan(rem.not_before).all():
        checks.append(constraint_check(ids, rem.not_before))
    if rem.progress is not None:
        checks += progress_checks(schedule, rem, calendar, baseline)
    return checks


def constraint_check(ids: list[str], not_before: np.ndarray) -> Check:
    """Activities with a start constraint, at most 5% of the activities.

    Examples
    --------
    >>> c = constraint_check(["A", "B"], np.array([np.nan, 3.0]))
    >>> c.activities, c.passed
    (['B'], False)
    """
    return Check(
        key="constraints",
        name="start constraints (Not before)",
        group=LOGIC,
        limit=Limit(5, share_of="activities"),
        activities=[i for i, x in zip(ids, not_before, strict=True) if not math.isnan(x)],
        out_of=len(ids),
        matters="A date constraint holds an activity instead of logic: it distorts the "
        "float of everything around it and hides what really drives the dates.",
        cited=(Citation(COMMON),),
    )


def planned_finishes(schedule: Schedule, calendar: Calendar | None) -> np.ndarray:
    """Each activity's early finish as planned: the passes on the PERT expected times with
    the Not before floors and every link, as if nothing had started."""
    acts = schedule.activities
    index = schedule.index()
    te = np.array([(a.optimistic + 4 * a.most_likely + a.pessimistic) / 6 for a in acts])
    nb = [start_offset(a.not_before, calendar) for a in acts]
    net = build_network(
        len(acts),
        [index[lk.pred] for lk in schedule.links],
        [index[lk.succ] for lk in schedule.links],
        [lk.code for lk in schedule.links],
        [lk.lag for lk in schedule.links],
        floor=[0.0 if x is None else x for x in nb],
    )
    return forward_pass(net, te)[1]


def missed(state: list[str], due_finish: np.ndarray, status: float) -> tuple[list[int], int]:
    """Activities due to finish by the status offset (``due_finish <= status``) that have
    not finished, and how many were due.

    ``due_finish`` is each activity's expected finish from the earlier run (a baseline) or,
    without one, the plan's early finish (:func:`planned_finishes`).

    Examples
    --------
    >>> missed(["finished", "in progress", "not started"], np.array([2.0, 4.0, 9.0]), 5.0)
    ([1], 2)
    """
    tol = critical_tolerance(status)
    due = due_finish <= status + tol
    late = [i for i, st in enumerate(state) if due[i] and st != FINISHED]
    return late, int(due.sum())


def baseline_execution_index(
    state: list[str], due_finish: np.ndarray, status: float
) -> float | None:
    """Activities finished by the status date over those due to finish by then.

    ``due_finish`` holds the baseline run's expected finish per activity as offsets of this
    run (:func:`converter.analyse.baseline.due_offsets`; ``nan`` for activities it does not
    have). Every finished activity counts, also one finished early or unknown to the
    baseline (the DCMA definition). None when nothing was due.

    Examples
    --------
    >>> baseline_execution_index(["finished", "finished", "not started"],
    ...                          np.array([2.0, 9.0, 4.0]), 5.0)
    1.0
    """
    due = np.nan_to_num(due_finish, nan=np.inf) <= status + critical_tolerance(status)
    if not due.any():
        return None
    return sum(1 for st in state if st == FINISHED) / int(due.sum())


def progress_checks(
    schedule: Schedule,
    rem: Remaining,
    calendar: Calendar | None,
    baseline: Baseline | None = None,
) -> list[Check]:
    """Missed activities, actual dates after the status date, out-of-sequence progress; with
    a usable baseline also the baseline execution index (after the missed activities)."""
    prog = rem.progress
    ids = [a.id for a in schedule.activities]
    due_by = None
    if baseline is not None:
        due_by = due_offsets(ids, baseline, calendar, schedule.settings.time_unit)
    usable = due_by is not None and due_by.basis is not None
    planned = due_by.offsets if usable else planned_finishes(schedule, calendar)
    late, due = missed(prog.state, planned, prog.status_offset)
    after = [
        a.id
        for a in schedule.activities
        if _after(finish_offset(a.actual_finish, calendar), prog.status_offset)
        or _after(start_offset(a.actual_start, calendar), prog.status_offset)
    ]
    oos = out_of_sequence(schedule, prog)
    why = (Citation(GAO, "best practice 9 (updating the schedule)", why=True),)
    checks = [
        Check(
            key="missed",
            name="missed activities (due by the status date, not finished)",
            group=PROGRESS,
            limit=Limit(5, share_of="activities", note="of those due by the status date"),
            activities=[ids[i] for i in late],
            out_of=due,
            matters="Work the plan needed done by now is not done: the remaining schedule "
            "assumes a catch-up nobody has planned.",
            cited=(Citation(COMMON), *why),
            detail=f"due by the status date, judged {_due_words(due_by, baseline)}: {due}",
        ),
        Check(
            key="actuals_after_status",
            name="actual dates after the status date",
            group=PROGRESS,
            limit=Limit(0, unit="activities"),
            activities=after,
            out_of=len(ids),
            matters="An actual date is a fact of the past: one after the status date is a "
            "forecast typed as an actual, or a wrong status date.",
            cited=(Citation(COMMON), *why),
        ),
        Check(
            key="out_of_sequence",
            name="out-of-sequence progress",
            group=PROGRESS,
            limit=Limit(0, unit="links"),
            activities=[f"{lk.pred}->{lk.succ}" for lk in oos],
            out_of=len(schedule.links),
            matters="An activity started before its finish-to-start predecessor finished: "
            "the logic is wrong or the work is at risk. The analysis keeps the link for "
            "the remaining work (retained logic).",
            cited=(Citation(COMMON), *why),
        ),
    ]
    if usable:
        words = _due_words(due_by, baseline)
        checks.insert(1, bei_check(prog.state, ids, planned, prog.status_offset, words))
    return checks


def bei_check(
    state: list[str],
    ids: list[str],
    due_finish: np.ndarray,
    status: float,
    basis: str = "by the baseline finish",
) -> Check:
    """The baseline execution index as a check: activities finished by the status offset
    over those due by then by the baseline finish ``due_finish`` (:func:`missed`,
    :func:`baseline_execution_index`), at least :data:`BEI_LEAST`. Its count is the
    finished activities; it lists the due ones not finished.

    Examples
    --------
    Status 5: A, B, C, D due (finish <= 5), E not (9); A, B, C and E finished, D not:
    BEI = 4 / 4 = 1.0 (E finished early makes up for D), which passes.

    >>> c = bei_check(["finished"] * 3 + ["in progress", "finished"], list("ABCDE"),
    ...               np.array([1.0, 2.0, 5.0, 4.0, 9.0]), 5.0)
    >>> c.count, c.out_of, c.percent, c.passed, c.activities
    (4, 4, 100.0, True, ['D'])

    References
    ----------
    US Defense Contract Management Agency, DCMA-EA PAM 200.1 (2012), the 14-point
    schedule assessment, check 14 (baseline execution index), threshold 0.95.
    """
    late, due = missed(state, due_finish, status)
    finished = sum(1 for st in state if st == FINISHED)
    bei = baseline_execution_index(state, due_finish, status)
    value = "none due: no index" if bei is None else f"BEI = {finished} / {due} = {bei:.3g}"
    return TallyCheck(
        key="baseline_execution_index",
        name="baseline execution index (finished / due by the baseline)",
        group=PROGRESS,
        limit=AtLeast(BEI_LEAST * 100, "activities", wording=BEI_WORDING),
        activities=[ids[i] for i in late],
        out_of=due,
        matters="Fewer activities finished than the baseline had due by now: the team is "
        "falling behind the plan it committed to, whatever the forecast finish says.",
        cited=(Citation(DCMA, "check 14 (baseline execution index)"),),
        detail=f"{value}; due judged {basis}; the activities listed were due and have not finished",
        tally=finished,
    )


def _due_words(due_by: DueFinish | None, baseline: Baseline | None) -> str:
    """How "due" was judged, for the checks' details."""
    if due_by is None or baseline is None:
        return "by the planned early finish"
    if due_by.basis is None:
        return f"by the planned early finish (baseline {baseline.file} not used: {due_by.why})"
    how = "early finish dates" if due_by.basis == DATES else "early finish offsets"
    lacking = f"; {due_by.lacking} activities it lacks are not due" if due_by.lacking else ""
    return f"by the baseline's {how} ({baseline.file}{lacking})"


def _after(x: float | None, status: float) -> bool:
    return x is not None and x > status + critical_tolerance(status)


__all__ = [
    "BEI_LEAST",
    "NOT_STARTED",
    "PROGRESS",
    "AtLeast",
    "TallyCheck",
    "baseline_execution_index",
    "bei_check",
    "constraint_check",
    "missed",
    "planned_finishes",
    "progress_checks",
    "status_checks",
]
