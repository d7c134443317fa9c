"""Health checks of start constraints and of a project in flight.

Constraints (``Not before``) go with the logic checks; the progress checks (missed
activities, actual dates after the status date, out-of-sequence progress) form their own
group, present only when a status date is given. The baseline execution index needs a
baseline run: :func:`baseline_execution_index` is the hook for the comparison.
"""

from __future__ import annotations

import math

import numpy as np

from converter.analyse.calendar import Calendar
from converter.analyse.checks import COMMON, GAO, LOGIC, Check, Citation, Limit
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


def status_checks(schedule: Schedule, rem: Remaining, calendar: Calendar | None) -> list[Check]:
    """The constraint check (when any activity has a Not before) and, with a status date,
    the progress checks."""
    checks = []
    ids = [a.id for a in schedule.activities]
    if not np.isnan(rem.not_before).all():
        checks.append(constraint_check(ids, rem.not_before))
    if rem.progress is not None:
        checks += progress_checks(schedule, rem, calendar)
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

    The hook for a comparison with a baseline run: ``due_finish`` holds the baseline's
    expected finish per activity (offsets; ``nan`` for activities it does not have). None
    when nothing was due.

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


def progress_checks(schedule: Schedule, rem: Remaining, calendar: Calendar | None) -> list[Check]:
    """Missed activities, actual dates after the status date, out-of-sequence progress."""
    prog = rem.progress
    ids = [a.id for a in schedule.activities]
    late, due = missed(prog.state, planned_finishes(schedule, calendar), prog.status_offset)
    after = [
        a.id
        for a in schedule.activities
        if _after(finish_offset(a.actual_finish, calendar), prog.status_offset)
        or _after(start_offset(a.actual_start, calendar), prog.status_offset)
    ]
    oos = out_of_sequence(schedule, prog)
    why = (Citation(GAO, "best practice 9 (updating the schedule)", why=True),)
    return [
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
            detail=f"due by the status date by the planned early finish: {due}",
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


def _after(x: float | None, status: float) -> bool:
    return x is not None and x > status + critical_tolerance(status)


__all__ = [
    "NOT_STARTED",
    "PROGRESS",
    "baseline_execution_index",
    "constraint_check",
    "missed",
    "planned_finishes",
    "progress_checks",
    "status_checks",
]
