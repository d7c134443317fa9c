"""An activity row's start constraint and progress cells: Not before, Actual start, Actual
finish and the remaining estimates, each checked with its cell.

A date cell needs a start date (the analysis counts offsets from it); an offset, and a
remaining estimate, is a duration in the schedule's time unit or with a unit (``3d``,
``16h``), read by :func:`converter.values.parse_duration`.
"""

from __future__ import annotations

import datetime as dt

from converter.model import Activity, Settings
from converter.options import parse_due
from converter.read.sheets import CellError, cell_name
from converter.validate.problems import Collector
from converter.values import LARGEST_DURATION, as_date, is_blank, parse_duration, shown

#: The cells read here: column key -> the words a problem uses for it.
PROGRESS_FIELDS = {
    "not_before": "Not before",
    "actual_start": "Actual start",
    "actual_finish": "Actual finish",
    "remaining": "Remaining",
    "remaining_optimistic": "Remaining optimistic",
    "remaining_most_likely": "Remaining most likely",
    "remaining_pessimistic": "Remaining pessimistic",
}
_TRIPLE = ("remaining_optimistic", "remaining_most_likely", "remaining_pessimistic")


class _Row:
    """One row's cells, with the words to report a problem at one of them."""

    def __init__(self, row, cols, r, sheet, ident, settings: Settings, out: Collector):
        self.row, self.cols, self.r, self.sheet, self.ident = row, cols, r, sheet, ident
        self.settings, self.out = settings, out

    def raw(self, key: str) -> object:
        c = self.cols.get(key)
        value = None if c is None or c >= len(self.row) else self.row[c]
        return None if isinstance(value, CellError) else value  # the reader names error cells

    def where(self, key: str) -> str:
        return cell_name(self.r, self.cols[key])

    def error(self, code: str, key: str, message: str, fix: str | None = None) -> None:
        self.out.error(code, message, self.sheet, self.where(key), self.ident, fix=fix)

    def warn(self, code: str, key: str, message: str, fix: str | None = None) -> None:
        self.out.warn(code, message, self.sheet, self.where(key), self.ident, fix=fix)

    def duration(self, key: str) -> float | None:
        """A non-negative duration cell (None: blank or refused with a problem)."""
        value = self.raw(key)
        if is_blank(value):
            return None
        s = self.settings
        try:
            x = parse_duration(value, s.time_unit, s.hours_per_day, len(s.working_days))
        except ValueError as exc:
            self.error("not-a-number", key, f"{PROGRESS_FIELDS[key]} {exc}")
            return None
        if not 0 <= x <= LARGEST_DURATION:
            self.error(
                "bad-duration",
                key,
                f"{PROGRESS_FIELDS[key]} {shown(x)} is not between 0 and "
                f"{LARGEST_DURATION:,.0f} time units",
            )
            return None
        return x

    def moment(self, key: str) -> float | dt.date | None:
        """A date (with a start date set) or an offset in the time unit."""
        value = self.raw(key)
        if is_blank(value):
            return None
        if as_date(value) is None:
            return self.duration(key)
        try:
            when = parse_due(value)
        except ValueError as exc:
            self.error("bad-date", key, f"{PROGRESS_FIELDS[key]}: {exc}")
            return None
        if self.settings.start_date is None:
            self.error(
                "date-without-start",
                key,
                f"{PROGRESS_FIELDS[key]} {when.isoformat()} is a date but there is no start date",
                fix="Add a 'Start date' setting, or give the value as an offset in time units.",
            )
            return None
        return when


def _later(a, b) -> bool:
    """Whether moment ``a`` is after ``b`` (compared only when both are dates or both offsets;
    a date moment is the end of its day for a finish and the start of it for a start)."""
    if a is None or b is None or isinstance(a, dt.date) != isinstance(b, dt.date):
        return False
    return a > b


def read_progress(row, cols, r, sheet, ident, settings: Settings, out: Collector) -> dict:
    """The row's Not before, actual dates and remaining estimates as Activity fields."""
    cells = _Row(row, cols, r, sheet, ident, settings, out)
    found: dict = {"not_before": cells.moment("not_before") if "not_before" in cols else None}
    start = cells.moment("actual_start") if "actual_start" in cols else None
    finish = cells.moment("actual_finish") if "actual_finish" in cols else None
    remaining, single = _remaining(cells)
    given = [k for k in ("actual_start", "actual_finish") if not is_blank(cells.raw(k))]
    given += [k for k in ("remaining", *_TRIPLE) if not is_blank(cells.raw(k))]
    if given and settings.status_date is None:
        cells.error(
            "progress-without-status-date",
            given[0],
            f"{PROGRESS_FIELDS[given[0]]} is given but there is no status date",
            fix="Add a 'Status date' setting (or --status-date): the date the progress is "
            "recorded as of.",
        )
        return found
    _check_actuals(cells, start, finish)
    if finish is not None and remaining is not None and any(remaining):
        key = "remaining" if single else next(k for k in _TRIPLE if k in cols)
        cells.error(
            "remaining-on-finished",
            key,
            "remaining work is given for an activity with an actual finish",
            fix="Clear the remaining estimate, or the actual finish if the work goes on.",
        )
    if start is not None and finish is None and remaining is None:
        key = next((k for k in ("remaining", *_TRIPLE) if k in cols), "actual_start")
        cells.warn(
            "no-remaining",
            key,
            "the activity is in progress but has no remaining estimate: its remaining work "
            "is pro-rated from its estimates and the time elapsed",
            fix="Give the Remaining duration the team now expects.",
        )
    if start is None and finish is None and remaining is not None:
        key = "remaining" if single else next(k for k in _TRIPLE if k in cells.cols)
        cells.warn(
            "remaining-not-started",
            key,
            "remaining work is given but the activity has no actual start: it is ignored "
            "and the activity is planned from its estimates",
            fix="Fill in the Actual start if the work has begun.",
        )
    found.update(
        actual_start=start,
        actual_finish=finish,
        remaining=remaining if start is not None and finish is None else None,
        remaining_single=single,
    )
    return found


def _check_actuals(cells: _Row, start, finish) -> None:
    """An actual finish without a start or before it, a start before the project start,
    actual dates after the status date: each at its cell."""
    settings = cells.settings
    if finish is not None and is_blank(cells.raw("actual_start")):
        cells.error(
            "finish-without-start",
            "actual_finish",
            "an actual finish without an actual start",
            fix="Fill in the Actual start too.",
        )
    if _later(start, finish):
        cells.error(
            "finish-before-start",
            "actual_finish",
            f"actual finish {shown(finish)} is before the actual start {shown(start)}",
            fix="Check the two actual dates.",
        )
    first = settings.start_date
    if isinstance(start, dt.date) and first is not None and start < first:
        cells.error(
            "actual-before-project-start",
            "actual_start",
            f"actual start {start.isoformat()} is before the project start {first.isoformat()}",
            fix="Set the Start date to the first actual start (offsets count from it).",
        )
    for key, when in (("actual_start", start), ("actual_finish", finish)):
        if _later(when, settings.status_date):
            cells.warn(
                "actual-after-status",
                key,
                f"{PROGRESS_FIELDS[key]} {shown(when)} is after the status date "
                f"{shown(settings.status_date)}",
                fix="An actual date is in the past: check it, or move the status date.",
            )


def _remaining(cells: _Row) -> tuple[tuple[float, float, float] | None, bool]:
    """(remaining O, M, P, whether one Remaining number gave them); O and P of a single
    number are scaled by the caller from the activity's own ratios."""
    one = cells.duration("remaining") if "remaining" in cells.cols else None
    if one is not None:
        return (one, one, one), True
    values = [cells.duration(k) if k in cells.cols else None for k in _TRIPLE]
    if all(v is None for v in values):
        return None, False
    if any(v is None for v in values):
        key = next(k for k, v in zip(_TRIPLE, values, strict=True) if v is None)
        if key in cells.cols:
            cells.error(
                "missing-estimate",
                key,
                f"{PROGRESS_FIELDS[key]} is blank while other remaining estimates are given",
                fix="Give all three remaining estimates, or one Remaining number.",
            )
        return None, False
    o, m, p = values
    if not o <= m <= p:
        cells.error(
            "order",
            "remaining_most_likely",
            f"remaining estimates {shown(o)}, {shown(m)}, {shown(p)} are not in order "
            "(need O <= M <= P)",
            fix="Check the order of the three remaining estimates.",
        )
        return None, False
    return (o, m, p), False


def scaled_remaining(act: Activity) -> tuple[float, float, float] | None:
    """Remaining O, M, P: one Remaining number scales O and P by the activity's own O/M and
    P/M ratios (O = M = P when M is 0).

    Examples
    --------
    >>> a = Activity("A", "A", 4, 8, 16, remaining=(2, 2, 2), remaining_single=True)
    >>> scaled_remaining(a)
    (1.0, 2.0, 4.0)
    """
    if act.remaining is None:
        return None
    if not act.remaining_single or act.most_likely == 0:
        return tuple(float(v) for v in act.remaining)
    r = float(act.remaining[1])
    return r * act.optimistic / act.most_likely, r, r * act.pessimistic / act.most_likely


def warn_out_of_sequence(activities: list[Activity], links, match, out: Collector) -> None:
    """A warning at the successor's Actual start for each finish-to-start link whose
    successor has started while its predecessor has not finished (out-of-sequence
    progress; the analysis keeps the link for the remaining work)."""
    col = match.columns.get("actual_start")
    if col is None:
        return
    by_id = {a.id: a for a in activities}
    for lk in links:
        p, s = by_id.get(lk.pred), by_id.get(lk.succ)
        if lk.type != "FS" or p is None or s is None:
            continue
        if s.actual_start is not None and p.actual_finish is None:
            out.warn(
                "out-of-sequence",
                f"{s.id} has started but its finish-to-start predecessor {p.id} has not "
                f"finished: out-of-sequence progress; the link still holds {s.id}'s "
                "remaining work",
                match.sheet.name,
                cell_name(s.row - 1, col),
                s.id,
                fix="Check the progress and the logic: record the predecessor's finish, or "
                "change the link (e.g. to start-to-start) if the work really overlaps.",
            )
