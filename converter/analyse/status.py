"""Start constraints and a project in flight: the remaining-work network the passes run on.

Moments. Offsets count from the project start in the schedule's time unit. A date is
turned into an offset by the calendar: a *finish* on date d (actual finish, the status
date) is the end of that day, ``Calendar.offset_of(d)``; a *start* on date d (actual
start, Not before) is the start of that day, ``offset_of(d - 1 day)``. A status date on a
holiday or a weekend is therefore the end of the working day before it: the remaining work
resumes on the next working day.

States. An activity with an actual finish is *finished*; one with an actual start only is
*in progress*; any other is *not started*.

The remaining-work network (the one rule; the passes, floats, paths and simulation all run
on it):

* a finished activity is fixed at its actual dates: its duration is ``AF - AS`` with no
  spread (O = M = P), its start floor is ``AS``, and the links into it are dropped (its
  dates are facts; the links stay on the Predecessors column as given);
* an activity in progress keeps its actual start (its start floor, ``AS``); its duration
  is the time elapsed ``e = max(0, S - AS)`` plus the remaining estimate, so it finishes at
  ``S + remaining`` (``S`` the status offset). Retained logic for the remaining work: a
  link into it that constrains its start (finish-to-start, start-to-start) constrains the
  remaining work instead, which is the link with its lag less ``e``; finish-to-finish and
  start-to-finish links act on its finish as before;
* an activity not started cannot start before the status date: its start floor is
  ``max(S, Not before)``.

With no status date only the Not before floors apply.

Remaining estimates. One ``Remaining`` number R gives remaining O, M, P of
``R*O/M, R, R*P/M`` (the activity's own ratios). With none, the remaining work is
pro-rated: each estimate times ``max(0, 1 - e / TE)``, TE the activity's PERT expected time.

Share of the work done: by expected duration, ``sum(done) / sum(done + remaining TE)``:
a finished activity's actual duration, the time elapsed on one in progress, over all
activities' durations in the remaining-work network.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from converter.analyse.calendar import Calendar
from converter.model import FS, SS, Link, Schedule
from converter.validate.progress import scaled_remaining

FINISHED, IN_PROGRESS, NOT_STARTED = "finished", "in progress", "not started"


def start_offset(value, calendar: Calendar | None) -> float | None:
    """The offset at the start of a date (or an offset as given).

    Examples
    --------
    >>> cal = Calendar(dt.date(2025, 3, 3))  # a Monday
    >>> start_offset(dt.date(2025, 3, 5), cal), start_offset(4.5, None)
    (2.0, 4.5)
    """
    if value is None:
        return None
    if isinstance(value, dt.date):
        assert calendar is not None  # validation guarantees a start date
        return float(calendar.offset_of(value - dt.timedelta(days=1)))
    return float(value)


def finish_offset(value, calendar: Calendar | None) -> float | None:
    """The offset at the end of a date (or an offset as given).

    Examples
    --------
    >>> cal = Calendar(dt.date(2025, 3, 3), holidays=(dt.date(2025, 3, 5),))
    >>> finish_offset(dt.date(2025, 3, 5), cal)  # a holiday: the end of the day before
    2.0
    """
    if value is None:
        return None
    if isinstance(value, dt.date):
        assert calendar is not None
        return float(calendar.offset_of(value))
    return float(value)


@dataclass
class Progress:
    """Where a project in flight stands (arrays per activity, ``nan`` where blank)."""

    status_offset: float
    status_date: dt.date | None
    state: list[str]
    actual_start: np.ndarray
    actual_finish: np.ndarray
    remaining: np.ndarray  # (n, 3) remaining O, M, P used; nan unless in progress
    prorated: np.ndarray  # in progress without a remaining estimate
    elapsed: np.ndarray  # e: time worked on an activity in progress (0 otherwise)
    done_share: float = 0.0
    counts: dict[str, int] = field(default_factory=dict)


@dataclass
class Remaining:
    """The remaining-work network's inputs: estimates, start floors and links."""

    o: np.ndarray
    m: np.ndarray
    p: np.ndarray
    floor: np.ndarray | None  # None: no floors at all (plain passes)
    not_before: np.ndarray  # offsets, nan where none
    links: list[int]  # indices into ``schedule.links`` kept in the network
    lags: np.ndarray  # the kept links' lags (less the elapsed time where retained logic)
    progress: Progress | None


def _states(schedule: Schedule) -> list[str]:
    out = []
    for a in schedule.activities:
        if a.actual_finish is not None:
            out.append(FINISHED)
        elif a.actual_start is not None:
            out.append(IN_PROGRESS)
        else:
            out.append(NOT_STARTED)
    return out


def _progress(schedule: Schedule, calendar: Calendar | None, o, m, p) -> Progress:
    acts = schedule.activities
    n = len(acts)
    status = finish_offset(schedule.settings.status_date, calendar)
    sdate = schedule.settings.status_date
    if not isinstance(sdate, dt.date):
        sdate = calendar.finish_date(status) if calendar is not None else None
    state = _states(schedule)
    a_start = np.array([_nan(start_offset(a.actual_start, calendar)) for a in acts])
    a_finish = np.array([_nan(finish_offset(a.actual_finish, calendar)) for a in acts])
    a_finish = np.where(np.isnan(a_finish), a_finish, np.fmax(a_finish, a_start))
    remaining = np.full((n, 3), np.nan)
    prorated = np.zeros(n, dtype=bool)
    elapsed = np.zeros(n)
    te = (o + 4.0 * m + p) / 6.0
    for i, a in enumerate(acts):
        if state[i] != IN_PROGRESS:
            continue
        elapsed[i] = max(0.0, status - a_start[i])
        given = scaled_remaining(a)
        if given is None:
            prorated[i] = True
            left = max(0.0, 1.0 - elapsed[i] / te[i]) if te[i] > 0 else 0.0
            given = (o[i] * left, m[i] * left, p[i] * left)
        remaining[i] = given
    counts = {s: state.count(s) for s in (FINISHED, IN_PROGRESS, NOT_STARTED)}
    return Progress(
        status, sdate, state, a_start, a_finish, remaining, prorated, elapsed, counts=counts
    )


def _nan(x: float | None) -> float:
    return np.nan if x is None else x


def remaining_network(
    schedule: Schedule, calendar: Calendar | None, o: np.ndarray, m: np.ndarray, p: np.ndarray
) -> Remaining:
    """The estimates, start floors and links the passes run on (module docstring).

    Examples
    --------
    A finished, an in-progress and a not-started activity in a chain, status offset 5:

    >>> from converter.model import Activity, Link, Settings
    >>> acts = [Activity("A", "A", 3, 3, 3, actual_start=0.0, actual_finish=2.0),
    ...         Activity("B", "B", 4, 4, 4, actual_start=2.0, remaining=(1, 1, 1)),
    ...         Activity("C", "C", 2, 2, 2)]
    >>> links = [Link("A", "B"), Link("B", "C")]
    >>> s = Schedule(acts, links, Settings(status_date=5.0), "x", "", "Activities")
    >>> r = remaining_network(s, None, *(np.array([3.0, 4.0, 2.0]),) * 3)
    >>> r.m.tolist(), r.floor.tolist(), r.progress.state
    ([2.0, 4.0, 2.0], [0.0, 2.0, 5.0], ['finished', 'in progress', 'not started'])
    >>> r.links, r.lags.tolist()  # A -> B holds B's remaining work: lag 0 less 3 worked
    ([0, 1], [-3.0, 0.0])
    """
    acts = schedule.activities
    nb = np.array([_nan(start_offset(a.not_before, calendar)) for a in acts])
    o, m, p = (np.array(x, dtype=float) for x in (o, m, p))
    links = list(range(len(schedule.links)))
    lags = np.array([lk.lag for lk in schedule.links], dtype=float)
    if schedule.settings.status_date is None:
        floor = None if np.isnan(nb).all() else np.nan_to_num(nb, nan=0.0)
        return Remaining(o, m, p, floor, nb, links, lags, None)
    prog = _progress(schedule, calendar, o, m, p)
    floor = np.fmax(nb, prog.status_offset)
    state = np.array(prog.state)
    done, going = state == FINISHED, state == IN_PROGRESS
    actual = (prog.actual_finish - prog.actual_start)[done]
    for x, k in ((o, 0), (m, 1), (p, 2)):
        x[done] = actual
        x[going] = prog.elapsed[going] + prog.remaining[going, k]
    floor[done | going] = prog.actual_start[done | going]
    index = schedule.index()
    keep, kept_lags = [], []
    for k, lk in enumerate(schedule.links):
        s = index[lk.succ]
        if prog.state[s] == FINISHED:
            continue
        lag = lk.lag
        if prog.state[s] == IN_PROGRESS and lk.code in (FS, SS):
            lag -= prog.elapsed[s]
        keep.append(k)
        kept_lags.append(lag)
    te = (o + 4.0 * m + p) / 6.0
    done = sum(
        te[i] if st == FINISHED else prog.elapsed[i]
        for i, st in enumerate(prog.state)
        if st != NOT_STARTED
    )
    prog.done_share = float(done / te.sum()) if te.sum() > 0 else 1.0
    return Remaining(
        o, m, p, np.maximum(floor, 0.0), nb, keep, np.array(kept_lags, dtype=float), prog
    )


def out_of_sequence(schedule: Schedule, progress: Progress) -> list[Link]:
    """Finish-to-start links whose successor has started while the predecessor has not
    finished (out-of-sequence progress)."""
    index = schedule.index()
    return [
        lk
        for lk in schedule.links
        if lk.code == FS
        and progress.state[index[lk.succ]] != NOT_STARTED
        and progress.state[index[lk.pred]] != FINISHED
    ]
