"""The Activities sheet's Not before and progress columns, and the pass formulas' parts
that honour them (rules in :mod:`converter.analyse.status`).

A date typed in the input is shown as the formula that turns it into an offset, so the
auditor sees both: a start on date d is ``offset_of(d - 1)`` (the start of that day), a
finish ``offset_of(d)`` (its end). The status offset is the named cell ``StatusOffset`` on
the Summary.
"""

from __future__ import annotations

import datetime as dt

from converter.analyse.status import FINISHED, IN_PROGRESS, NOT_STARTED
from converter.analyse.status_checks import BEI_LEAST
from converter.model import FS, SS
from converter.write.workbook import formulas as f
from converter.write.workbook.layout import Layout

HEADERS = {
    "not_before": "Not before",
    "not_before_date": "Not before date",
    "actual_start": "Actual start",
    "actual_start_date": "Actual start date",
    "actual_finish": "Actual finish",
    "actual_finish_date": "Actual finish date",
    "rem_o": "Remaining optimistic",
    "rem_m": "Remaining most likely",
    "rem_p": "Remaining pessimistic",
    "state": "State",
}
STATUS = "StatusOffset"


def _date_literal(d: dt.date) -> str:
    return f"DATE({d.year},{d.month},{d.day})"


def _holidays(a) -> str | None:
    return "Holidays" if (a.calendar is not None and a.calendar.holidays) else None


def _moment(ws, fmt, a, r: int, col: int, value, cached: float, start: bool) -> None:
    """An offset cell: the number as given, or the formula of the date given."""
    if value is None:
        return
    if isinstance(value, dt.date):
        date = _date_literal(value)
        date = f"({date}-1)" if start else date
        formula = a.calendar.offset_of_formula(date, "ProjectStart", _holidays(a))
        ws.write_formula(r, col, "=" + formula, fmt.num, cached)
    else:
        ws.write_number(r, col, float(value), fmt.input_num)


def _moment_date(ws, fmt, a, lay: Layout, i: int, key: str, finish_key: str | None) -> None:
    """The date of activity ``i``'s ``key`` offset, from the analysis' dates (blank where
    the offset is): a start by the start-date builder (never after the actual finish in
    ``finish_key``, if given), a finish by the finish-date builder."""
    from converter.write.workbook.activities import serial  # (activities imports this)

    date_key = f"{key}_date"
    when = getattr(a.activity_dates, key)[i] if date_key in lay.cols else None
    if when is None:
        return
    offset, hol = lay.cell(i, key), _holidays(a)
    if key == "actual_finish":
        text = a.calendar.finish_date_formula(offset, "ProjectStart", hol)
    else:
        finish = lay.cell(i, finish_key) if finish_key else None
        text = a.calendar.start_date_formula(offset, "ProjectStart", hol, finish_ref=finish)
    ws.write_formula(lay.row(i), lay.cols[date_key], "=" + text, fmt.date, serial(when))


def state(a, i: int) -> str:
    prog = a.remaining_work.progress if a.remaining_work is not None else None
    return NOT_STARTED if prog is None else prog.state[i]


def start_floor_terms(a, lay: Layout, i: int, sheet: bool = False) -> list[str]:
    """The cells inside activity ``i``'s early-start MAX besides its links: its actual
    start once started; else its Not before cell and the status offset."""
    if lay.status and state(a, i) != NOT_STARTED:
        return [lay.cell(i, "actual_start", sheet)]
    terms = [lay.cell(i, "not_before", sheet)] if lay.not_before else []
    return terms + ([STATUS] if lay.status else [])


def elapsed(lay: Layout, i: int, sheet: bool = False) -> str:
    """Time worked on activity ``i`` by the status date: ``MAX(0,StatusOffset-AS)``."""
    return f"MAX(0,{STATUS}-{lay.cell(i, 'actual_start', sheet)})"


def te_var_formulas(a, lay: Layout, i: int) -> tuple[str, str] | None:
    """TE and variance of a started activity: actual duration with no spread once
    finished; the time elapsed plus the remaining PERT time while in progress."""
    st = state(a, i)
    if st == FINISHED:
        return f.minus(lay.cell(i, "actual_finish"), lay.cell(i, "actual_start")), "=0"
    if st == IN_PROGRESS:
        ro, rm, rp = (lay.cell(i, k) for k in ("rem_o", "rem_m", "rem_p"))
        return f"={elapsed(lay, i)}+({ro}+4*{rm}+{rp})/6", f.pert_variance(ro, rp)
    return None


def lag_formula(a, lay: Layout, k: int) -> str | None:
    """The Links sheet's lag of network link ``k`` where retained logic shifted it: the lag
    as given less the time worked on its successor (in progress, FS or SS link)."""
    rem = a.remaining_work
    if rem is None or rem.progress is None:
        return None
    s, kind = int(a.net.succ[k]), int(a.net.kind[k])
    if rem.progress.state[s] != IN_PROGRESS or kind not in (FS, SS):
        return None
    given = a.schedule.links[rem.links[k]].lag
    return f"={f.number(given)}-{elapsed(lay, s, True)}"


def write_progress_cells(ws, fmt, a, lay: Layout, r: int, i: int) -> None:
    """Not before, actual start and finish, remaining estimates and state of one row."""
    c = lay.cols
    act = a.schedule.activities[i]
    rem = a.remaining_work
    if lay.not_before:
        _moment(ws, fmt, a, r, c["not_before"], act.not_before, float(rem.not_before[i]), True)
        _moment_date(ws, fmt, a, lay, i, "not_before", None)
    if not lay.status:
        return
    prog = rem.progress
    _moment(ws, fmt, a, r, c["actual_start"], act.actual_start, prog.actual_start[i], True)
    _moment(ws, fmt, a, r, c["actual_finish"], act.actual_finish, prog.actual_finish[i], False)
    done = prog.state[i] == FINISHED
    _moment_date(ws, fmt, a, lay, i, "actual_start", "actual_finish" if done else None)
    _moment_date(ws, fmt, a, lay, i, "actual_finish", None)
    if prog.state[i] == IN_PROGRESS:
        _remaining_cells(ws, fmt, a, lay, r, i)
    af, as_ = lay.cell(i, "actual_finish"), lay.cell(i, "actual_start")
    ws.write_formula(
        r,
        c["state"],
        f'=IF(ISNUMBER({af}),"{FINISHED}",IF(ISNUMBER({as_}),"{IN_PROGRESS}","{NOT_STARTED}"))',
        fmt.center,
        prog.state[i],
    )


def _remaining_cells(ws, fmt, a, lay: Layout, r: int, i: int) -> None:
    """Remaining O, M, P as given; scaled from one Remaining number by the activity's own
    ratios; or pro-rated from the estimates and the time elapsed."""
    act = a.schedule.activities[i]
    values = a.remaining_work.progress.remaining[i]
    cols = [lay.cols[k] for k in ("rem_o", "rem_m", "rem_p")]
    o, m, p = (lay.cell(i, k) for k in ("o", "m", "p"))
    if a.remaining_work.progress.prorated[i]:
        te = f"(({o}+4*{m}+{p})/6)"
        left = f"IF({te}>0,MAX(0,1-{elapsed(lay, i)}/{te}),0)"
        for col, est, v in zip(cols, (o, m, p), values, strict=True):
            ws.write_formula(r, col, f"={est}*{left}", fmt.num, float(v))
        return
    if act.remaining_single:
        rm = lay.cell(i, "rem_m")
        ws.write_number(r, cols[1], float(values[1]), fmt.input_num)
        for col, est, v in ((cols[0], o, values[0]), (cols[2], p, values[2])):
            text = f"={rm}*{est}/{m}" if act.most_likely else f"={rm}"
            ws.write_formula(r, col, text, fmt.num, float(v))
        return
    for col, v in zip(cols, values, strict=True):
        ws.write_number(r, col, float(v), fmt.input_num)


NOT_BEFORE_METHOD = (
    "Start constraints",
    "An activity's early start is at least its Not before value (a date is the start of "
    "that day, as an offset): the constraint cell is inside the early-start MAX of the "
    "Activities sheet, and a near-critical path may start at it (its first step's 'lag' "
    "is that floor). Constraints distort float; the Health check counts them.",
)
STATUS_METHOD = (
    (
        "Status date",
        "Progress is recorded as of the END of the status date (a status date on a "
        "non-working day means the end of the working day before it). An actual start on a "
        "date is the start of that day; an actual finish the end of it. An activity with an "
        "actual finish is finished; with an actual start only, in progress; else not "
        "started.",
    ),
    (
        "Remaining work",
        "The passes, floats, near-critical paths and the simulation run on the remaining "
        "work. A finished activity is fixed at its actual dates: its duration is actual "
        "finish - actual start, with no spread, and the links into it no longer constrain "
        "anything (they are left off the Links sheet). An activity in progress keeps its "
        "actual start; its duration is the time worked (status date - actual start) plus "
        "the remaining estimate, so it finishes at the status date plus its remaining "
        "duration. An activity not started cannot start before the status date.",
    ),
    (
        "Remaining estimates",
        "Remaining optimistic / most likely / pessimistic as given; one Remaining number R "
        "gives R*O/M, R and R*P/M (the activity's own ratios); with none (a warning), each "
        "estimate is pro-rated: times MAX(0, 1 - time worked / TE), TE = (O+4M+P)/6.",
    ),
    (
        "Out of sequence",
        "An activity started while a finish-to-start predecessor has not finished is "
        "flagged on the Health check. The logic is retained for its remaining work: a "
        "finish-to-start or start-to-start link into an activity in progress holds its "
        "remaining work, i.e. the link's lag less the time worked (Links sheet), so the "
        "remaining work starts after the predecessor allows and then takes its remaining "
        "duration. Where a link holds the remaining work (this, or a finish-to-finish link), "
        "the early start shown is the actual start moved by the hold (early finish less "
        "the duration); the Actual start column keeps the actual.",
    ),
    (
        "Work done",
        "Share of the work done, by expected duration: finished activities' actual "
        "durations plus the time worked on those in progress, over the sum of all "
        "activities' durations in the remaining-work passes.",
    ),
)


BASELINE_METHOD = (
    "Baseline checks",
    "With a baseline run (convert --baseline) an activity was due by the status date when "
    "the baseline's early finish (its expected finish there) falls on or before the status "
    "date; without one, when this plan's own early finish as if nothing had started does. "
    "When both runs have a start date, the baseline's early finish DATES are used, each "
    "the end of that day by this run's calendar, so a start date moved between the runs "
    "does not shift what was due when; otherwise its offsets are used as they are (both "
    "runs in the same time unit, or the baseline is not used: the check says so). An "
    "activity the baseline does not have was not due. Missed activities: due and not "
    "finished. Baseline execution index (BEI) = activities finished by the status date / "
    f"activities due by then (finished early ones count too); at least {BEI_LEAST:g} passes (DCMA "
    "2012, check 14). The Health check counts the finished ones on the State column.",
)


def method_rows(a) -> list[tuple[str, str]]:
    """The Method sheet's rows on constraints and progress (none when neither is given)."""
    rows = []
    if any(act.not_before is not None for act in a.schedule.activities):
        rows.append(NOT_BEFORE_METHOD)
    if a.schedule.settings.status_date is not None:
        rows += list(STATUS_METHOD)
        rows += [BASELINE_METHOD] if a.baseline is not None else []
    return rows
