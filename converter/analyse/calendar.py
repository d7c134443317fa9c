"""Working-day arithmetic: schedule offsets to dates and back, in Python and as sheet formulas.

A schedule is computed in one time unit (``Calendar.unit``):

* ``"working days"`` (default): one unit is one working day of the calendar;
* ``"weeks"``: one unit is one working week, i.e. as many working days as the
  calendar has working weekdays (5 for Monday to Friday, 6 for Monday to Saturday);
* ``"calendar days"``: every date counts; weekends and holidays are ignored;
* ``"working hours"``: one unit is one working hour; a working day holds
  ``hours_per_day`` of them (``Hours per day``, default 8), so offset ``t`` is
  ``t / hours_per_day`` working days. Dates show the day only: work at hour offset ``t``
  falls on working day ``floor(t / hours_per_day) + 1``, a finish at the end of hour ``t``
  on working day ``ceil(t / hours_per_day)`` (the conventions below, in working days).

Offset 0 is the start of the project start date. If the start date is not a working
day, work begins on the next working day ("day 1" below).

Conventions for an offset ``t`` (``x`` = ``t`` in working days, after rounding to
9 decimals so that float noise such as 6.999999999999999 counts as 7):

* work done at ``x`` in ``[k, k+1)`` is done on working day ``k + 1`` (counting from 1):
  :meth:`Calendar.start_date` gives working day ``floor(x) + 1``;
* a finish at ``x`` in ``(k-1, k]`` (``x > 0``) is reached at the end of working day
  ``k``: :meth:`Calendar.finish_date` gives working day ``ceil(x)``. A finish at
  ``x <= 0`` (a milestone at the project start) is on the date of work at ``x``,
  i.e. ``finish_date(t) == start_date(t)`` for ``t <= 0``; ``t = 0`` is day 1.

* an activity's start date never falls after its finish date: given the finish offset
  too (:meth:`Calendar.start_dates` with ``finishes``), the start is working day
  ``min(floor(x_start) + 1, finish day)``. This matters only for an activity of zero
  length on the calendar, a milestone: at offset 5 it starts and finishes on working
  day 5, the day the work before it is finished (the end of day 5 and the start of
  day 6 are the same instant; the milestone takes the date of the day that ends).
  For any positive length ``floor(x_start) + 1 <= ceil(x_finish)`` already.

Python dates come from numpy's business-day functions (``numpy.busday_offset``,
``numpy.busday_count``). The sheet formulas use ``WORKDAY.INTL`` (documented by
Microsoft: for ``days > 0`` the nth working day *after* ``start_date``, for
``days = 0`` ``start_date`` itself even if it is not a working day, for ``days < 0``
the nth working day before; the weekend string is seven characters, Monday first,
"1" = non-working). Formula text is returned WITHOUT a leading "=", in English
function names with comma separators (the OOXML formula syntax), so callers can
embed it in larger formulas. Cell references passed in must be single references
or parenthesised expressions (they are not wrapped in parentheses).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from converter.values import unit_factor

UNITS: tuple[str, ...] = ("working days", "weeks", "calendar days", "working hours")

#: Offsets are rounded to this many decimals before floor/ceil (Python and formulas).
DECIMALS = 9

_ONE_DAY = np.timedelta64(1, "D")


def days_per_unit(unit: str, working_days: tuple[int, ...], hours_per_day: float = 8.0) -> float:
    """Working days in one unit of a schedule (also without a start date): 1 for working
    days, the number of working weekdays for weeks, ``len(working_days) / 7`` for
    calendar days, ``1 / hours_per_day`` for working hours.

    Examples
    --------
    >>> days_per_unit("weeks", (0, 1, 2, 3, 4)), days_per_unit("working hours", (0, 1), 8)
    (5.0, 0.125)
    """
    if unit == "weeks":
        return float(len(working_days))
    if unit == "calendar days":
        return len(working_days) / 7.0
    if unit == "working hours":
        return 1.0 / hours_per_day
    return 1.0


def _number(x: float) -> str:
    """A number as formula text: ``8``, ``7.5`` (the shortest text that reads back as ``x``)."""
    return str(int(x)) if float(x).is_integer() else repr(float(x))


def _round_half_away(x: np.ndarray, decimals: int) -> np.ndarray:
    """Round halves away from zero, as the spreadsheet ROUND does (numpy rounds half to even)."""
    scale = 10.0**decimals
    return np.sign(x) * np.floor(np.abs(x) * scale + 0.5) / scale


@dataclass(frozen=True)
class Calendar:
    """A working-day calendar: offsets of the schedule to dates, and dates to offsets.

    Conventions in the module docstring: work at offset ``x`` is done on working day
    ``floor(x) + 1``; a finish at ``x > 0`` is at the end of working day ``ceil(x)``.
    The same rules are written as sheet formulas by the ``*_formula`` methods.

    Parameters
    ----------
    start : datetime.date
        The project start date (offset 0); work begins on the first working day from it.
    unit : str
        ``"working days"``, ``"weeks"``, ``"calendar days"`` or ``"working hours"``: one
        unit of the schedule.
    working_days : tuple of int
        Working weekdays, Monday = 0 (default Monday to Friday).
    holidays : tuple of datetime.date
        Dates on which no work is done.
    hours_per_day : float
        Working hours in one working day (used by ``"working hours"`` only).

    References
    ----------
    numpy's business-day functions (``numpy.busday_offset``, ``numpy.busday_count``), which
    the dates come from; the spreadsheet functions WORKDAY.INTL and NETWORKDAYS.INTL of
    ECMA-376 (Office Open XML) as Microsoft's function reference documents them, which
    the formulas use.

    Examples
    --------
    Start on Friday 7 March 2025, Tuesday 11 March a holiday:

    >>> cal = Calendar(dt.date(2025, 3, 7), holidays=(dt.date(2025, 3, 11),))
    >>> cal.start_date(0), cal.start_date(1)  # working days 1 and 2 (Friday, Monday)
    (datetime.date(2025, 3, 7), datetime.date(2025, 3, 10))
    >>> cal.finish_date(3)  # the end of working day 3, after the holiday
    datetime.date(2025, 3, 12)
    >>> cal.offset_of(dt.date(2025, 3, 12))
    3.0
    >>> cal.start_date(3), cal.start_date(3, finish=3)  # a milestone takes its finish date
    (datetime.date(2025, 3, 13), datetime.date(2025, 3, 12))
    >>> cal.start_date_formula("T", "S", "H")
    'WORKDAY.INTL(WORKDAY.INTL(S-1,1,"0000011",H),INT(ROUND(T,9)),"0000011",H)'

    By the hour, 8 hours a day: hour 12 is worked on day 2, a finish at hour 16 ends day 2.

    >>> hours = Calendar(dt.date(2025, 3, 7), "working hours", hours_per_day=8)
    >>> hours.start_date(12), hours.finish_date(16), hours.offset_of(dt.date(2025, 3, 10))
    (datetime.date(2025, 3, 10), datetime.date(2025, 3, 10), 16.0)
    >>> hours.steps_formula("T")
    'ROUND(T/8,9)'
    """

    start: dt.date
    unit: str = "working days"
    working_days: tuple[int, ...] = (0, 1, 2, 3, 4)
    holidays: tuple[dt.date, ...] = ()
    hours_per_day: float = 8.0

    def __post_init__(self) -> None:
        if self.unit not in UNITS:
            raise ValueError(f"unknown time unit {self.unit!r}; expected one of {UNITS}")
        if not 0.0 < self.hours_per_day <= 24.0:
            raise ValueError(
                f"hours per day must be above 0 and at most 24, got {self.hours_per_day}"
            )
        days = tuple(sorted(set(int(d) for d in self.working_days)))
        if not days or days[0] < 0 or days[-1] > 6:
            raise ValueError(f"working days must be weekdays 0..6 (Monday = 0), got {days}")
        object.__setattr__(self, "working_days", days)
        object.__setattr__(self, "holidays", tuple(sorted(set(self.holidays))))

    @classmethod
    def from_settings(cls, settings, start: dt.date | None = None) -> Calendar:
        """Calendar of a :class:`converter.model.Settings` (``start`` overrides its date)."""
        start = start or settings.start_date
        if start is None:
            raise ValueError("no project start date")
        return cls(
            start=start,
            unit=settings.time_unit,
            working_days=tuple(settings.working_days),
            holidays=tuple(settings.holidays),
            hours_per_day=float(getattr(settings, "hours_per_day", 8.0)),
        )

    # ----------------------------------------------------------------- properties

    @property
    def weekmask(self) -> str:
        """numpy busday weekmask, Monday first, "1" = working day (e.g. "1111100")."""
        return "".join("1" if i in self.working_days else "0" for i in range(7))

    @property
    def weekend_code(self) -> str:
        """The WORKDAY.INTL weekend string, Monday first, "1" = NON-working (e.g. "0000011")."""
        return "".join("0" if i in self.working_days else "1" for i in range(7))

    @property
    def days_per_unit(self) -> float:
        """Working days in one unit of the schedule.

        1 for working days; the number of working weekdays for weeks; for calendar
        days the average share of working weekdays, ``len(working_days) / 7``
        (5/7 for Monday to Friday; holidays are not counted in); ``1 / hours_per_day``
        for working hours.
        """
        return days_per_unit(self.unit, self.working_days, self.hours_per_day)

    @property
    def _steps_per_unit(self) -> float:
        """Day steps (working days, or calendar days) per schedule unit."""
        if self.unit == "working hours":
            return 1.0 / self.hours_per_day
        return float(len(self.working_days)) if self.unit == "weeks" else 1.0

    @property
    def _units_per_step(self) -> float | None:
        """Schedule units per day step when one unit is less than a day (working hours):
        offsets are divided by it, as the formulas do, rather than multiplied by its inverse."""
        return self.hours_per_day if self.unit == "working hours" else None

    @cached_property
    def _busdaycal(self) -> np.busdaycalendar:
        return np.busdaycalendar(
            weekmask=self.weekmask,
            holidays=np.array(self.holidays, dtype="datetime64[D]"),
        )

    @property
    def _start64(self) -> np.datetime64:
        return np.datetime64(self.start, "D")

    @property
    def first_day(self) -> dt.date:
        """Working day 1: the start date, or the next working day after it."""
        return self.start_date(0.0)

    # ------------------------------------------------------------ offset -> date

    def _steps(self, ts) -> np.ndarray:
        per_step = self._units_per_step
        x = np.asarray(ts, dtype=float)
        x = x / per_step if per_step is not None else x * self._steps_per_unit
        if not np.all(np.isfinite(x)):
            raise ValueError("offsets must be finite numbers")
        return _round_half_away(x, DECIMALS)

    def _dates(self, n: np.ndarray) -> list[dt.date]:
        """Day ``n`` counting from 0 = working day 1 (negative: days before it)."""
        n = np.asarray(n, dtype=np.int64)
        if self.unit == "calendar days":
            out = self._start64 + n
        else:
            out = np.busday_offset(self._start64, n, roll="forward", busdaycal=self._busdaycal)
        return np.atleast_1d(out).astype("datetime64[D]").tolist()

    def _finish_steps(self, ts) -> np.ndarray:
        x = self._steps(ts)
        return np.where(x > 0, np.ceil(x) - 1, np.floor(x))

    def start_dates(self, ts, finishes=None) -> list[dt.date]:
        """:meth:`start_date` for each offset in ``ts`` (vectorised).

        Parameters
        ----------
        ts : array_like
            Start offsets.
        finishes : array_like, optional
            Each activity's finish offset. Given, a start date is never after the finish
            date of ``finishes``: a milestone (zero length) starts on the day it finishes,
            the day the work before it ends.

        Returns
        -------
        list of datetime.date
        """
        n = np.floor(self._steps(ts))
        if finishes is not None:
            n = np.minimum(n, self._finish_steps(finishes))
        return self._dates(n)

    def finish_dates(self, ts) -> list[dt.date]:
        """:meth:`finish_date` for each offset in ``ts`` (vectorised)."""
        return self._dates(self._finish_steps(ts))

    def start_date(self, t: float, finish: float | None = None) -> dt.date:
        """Date on which work at offset ``t`` is done: working day ``floor(x) + 1``.

        ``t = 4.3`` working days is during the 5th working day. With ``finish`` (the
        activity's finish offset), never after :meth:`finish_date` of it: a milestone at
        ``t = finish = 5`` starts on working day 5.
        """
        return self.start_dates([t], None if finish is None else [finish])[0]

    def finish_date(self, t: float) -> dt.date:
        """Date at the END of which offset ``t`` is reached: working day ``ceil(x)``.

        ``t = 3`` is the end of the 3rd working day; ``t <= 0`` gives ``start_date(t)``
        (``t = 0``: the first working day, a milestone at the start).
        """
        return self.finish_dates([t])[0]

    # ------------------------------------------------------------ date -> offset

    def offset_of(self, d: dt.date) -> float:
        """Offset reached at the end of date ``d``: working units in [start, d].

        A due date ``d`` is met by any finish offset <= ``offset_of(d)``. For a date
        before the start the result is minus the working units in [d + 1, start - 1].
        For weeks the working-day count is divided by the days in a week; for working
        hours it is multiplied by the hours per day.
        """
        if self.unit == "calendar days":
            return float((d - self.start).days + 1)
        after = np.datetime64(d, "D") + _ONE_DAY
        if after >= self._start64:  # [start, d]; busday_count counts [begin, end)
            count = int(np.busday_count(self._start64, after, busdaycal=self._busdaycal))
        else:  # minus [d + 1, start - 1]
            count = -int(np.busday_count(after, self._start64, busdaycal=self._busdaycal))
        if self._units_per_step is not None:
            return float(count * self._units_per_step)
        return count / self._steps_per_unit

    # ----------------------------------------------------------------- formulas

    def _holiday_arg(self, holidays_ref: str | None) -> str:
        if holidays_ref:
            return f",{holidays_ref}"
        if self.holidays:
            raise ValueError("the calendar has holidays: pass the range that holds them")
        return ""

    def steps_formula(self, offset_ref: str) -> str:
        """Formula text: the offset in working days (calendar days for that unit), rounded.

        ``ROUND(ref,9)``, ``ROUND(ref*5,9)`` for weeks of five working days,
        ``ROUND(ref/8,9)`` for working hours, 8 to the day.
        """
        if self.unit == "weeks":
            return f"ROUND({offset_ref}*{len(self.working_days)},{DECIMALS})"
        if self.unit == "working hours":
            return f"ROUND({offset_ref}/{_number(self.hours_per_day)},{DECIMALS})"
        return f"ROUND({offset_ref},{DECIMALS})"

    def first_day_formula(self, start_ref: str, holidays_ref: str | None = None) -> str:
        """Formula text for working day 1 (the start date rolled forward to a working day).

        ``WORKDAY.INTL(start-1,1,...)``: the first working day after the day before
        the start. For calendar days, the start itself.
        """
        if self.unit == "calendar days":
            return start_ref
        hol = self._holiday_arg(holidays_ref)
        return f'WORKDAY.INTL({start_ref}-1,1,"{self.weekend_code}"{hol})'

    def _day_formula(self, n_text: str, start_ref: str, holidays_ref: str | None) -> str:
        if self.unit == "calendar days":
            return f"{start_ref}+{n_text}"
        first = self.first_day_formula(start_ref, holidays_ref)
        hol = self._holiday_arg(holidays_ref)
        return f'WORKDAY.INTL({first},{n_text},"{self.weekend_code}"{hol})'

    def _finish_steps_formula(self, offset_ref: str) -> str:
        x = self.steps_formula(offset_ref)
        return f"IF({x}>0,ROUNDUP({x},0)-1,INT({x}))"

    def start_date_formula(
        self,
        offset_ref: str,
        start_ref: str,
        holidays_ref: str | None = None,
        finish_ref: str | None = None,
    ) -> str:
        """Formula text (no leading "=") giving :meth:`start_date` of the offset in ``offset_ref``.

        Working days / weeks:
        ``WORKDAY.INTL(WORKDAY.INTL(S-1,1,"0000011",H),INT(ROUND(T,9)),"0000011",H)``:
        the inner call is working day 1, the outer steps ``floor(x)`` working days from
        it (``days = 0`` returns working day 1 itself; negative steps go back).
        Calendar days: ``S+INT(ROUND(T,9))`` (no WORKDAY.INTL; format the cell as a date).
        ``holidays_ref`` may be None only when the calendar has no holidays.

        With ``finish_ref`` (the cell of the activity's finish offset) the step count is
        ``MIN(INT(ROUND(T,9)),<the finish step count of F>)``, as
        :meth:`start_dates` with ``finishes``: a milestone starts on its finish date.
        """
        n_text = f"INT({self.steps_formula(offset_ref)})"
        if finish_ref is not None:
            n_text = f"MIN({n_text},{self._finish_steps_formula(finish_ref)})"
        return self._day_formula(n_text, start_ref, holidays_ref)

    def finish_date_formula(
        self, offset_ref: str, start_ref: str, holidays_ref: str | None = None
    ) -> str:
        """Formula text (no leading "=") giving :meth:`finish_date` of the offset in ``offset_ref``.

        As :meth:`start_date_formula` with the step count
        ``IF(x>0,ROUNDUP(x,0)-1,INT(x))`` where ``x = ROUND(T,9)`` (``T*days`` for weeks).
        """
        return self._day_formula(self._finish_steps_formula(offset_ref), start_ref, holidays_ref)

    def offset_of_formula(
        self, date_ref: str, start_ref: str, holidays_ref: str | None = None
    ) -> str:
        """Formula text (no leading "=") giving :meth:`offset_of` of the date in ``date_ref``.

        ``NETWORKDAYS.INTL`` counts both ends and, for an end before the start, returns
        minus the count of [end, start]; so dates before the start are handled apart:
        ``IF(D>=S,NETWORKDAYS.INTL(S,D,w,H),IF(D>=S-1,0,-NETWORKDAYS.INTL(D+1,S-1,w,H)))``,
        divided by the days in a week for weeks. Calendar days: ``D-S+1``.
        """
        d, s = date_ref, start_ref
        if self.unit == "calendar days":
            return f"{d}-{s}+1"
        w = f'"{self.weekend_code}"'
        hol = self._holiday_arg(holidays_ref)
        text = (
            f"IF({d}>={s},NETWORKDAYS.INTL({s},{d},{w}{hol}),"
            f"IF({d}>={s}-1,0,-NETWORKDAYS.INTL({d}+1,{s}-1,{w}{hol})))"
        )
        if self.unit == "weeks":
            return f"{text}/{len(self.working_days)}"
        if self.unit == "working hours":
            return f"({text})*{_number(self.hours_per_day)}"
        return text


def conversion_words(time_unit: str, hours_per_day: float = 8.0, days_per_week: int = 5) -> str:
    """The factors :func:`unit_factor` converts with, in words (for the Method sheet).

    Examples
    --------
    >>> print(conversion_words("working days"))
    in working days: 1 h = 0.125, 1 d = 1, 1 w = 5 (8 hours per day, 5 working days per week)
    >>> print(conversion_words("weeks", 7.5, 4))
    in weeks: 1 h = 0.0333333, 1 d = 0.25, 1 w = 1 (7.5 hours per day, 4 working days per week)
    """
    factors = ", ".join(
        f"1 {unit[0]} = {unit_factor(unit, time_unit, hours_per_day, days_per_week):.6g}"
        for unit in ("hours", "days", "weeks")
    )
    week = (
        "7 calendar days per week"
        if time_unit == "calendar days"
        else f"{days_per_week} working days per week"
    )
    return f"in {time_unit}: {factors} ({hours_per_day:g} hours per day, {week})"
