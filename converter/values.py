"""What one cell's value is: blank, a number, a date, an activity ID, a header's words.

Cells arrive from calamine (numbers, dates, text) or from a CSV file (always text), and
options arrive from the command line (text); the same rules read all of them. These are
used by the option parsers (:mod:`converter.options`) and by validation.

The limits here are what the analysis can compute with (see the README, "Limits"):
durations up to :data:`LARGEST_DURATION` time units, lags and leads up to
:data:`LARGEST_LAG`, and dates from :data:`FIRST_DATE` to :data:`LAST_DATE`.
"""

from __future__ import annotations

import datetime as dt
import math
import re

#: The largest duration (an estimate, a due or a target duration) in time units.
LARGEST_DURATION = 1e7
#: The largest lag or lead, in time units (either sign).
LARGEST_LAG = 1e7
#: The first date pertbook works with: spreadsheet date serials agree between programs
#: only from 1 March 1900 (the 1900 date system counts a 29 February 1900 that never was).
FIRST_DATE = dt.date(1900, 3, 1)
#: The last date a spreadsheet can hold.
LAST_DATE = dt.date(9999, 12, 31)

#: A plain decimal number: an optional sign, digits with an optional decimal point, an
#: optional exponent. No digit group separators, underscores, words (inf, nan) or
#: digits of other scripts: what Python's float() accepts beyond this is refused.
_PLAIN_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_INTEGRAL_TEXT = re.compile(r"^[1-9][0-9]*\.0+$|^0\.0+$")
_ISO_DATE_TIME = re.compile(
    r"([0-9]{4}-[0-9]{2}-[0-9]{2})(?:[ T]([0-9]{1,2}:[0-9]{2}(?::[0-9]{2}(?:\.[0-9]{1,6})?)?))?"
)
_TIME = re.compile(r"([0-9]{1,2}):([0-9]{2})(?::([0-9]{2}))?")
_LONGEST_SHOWN = 60


def normalise(text: object) -> str:
    """Header text compared case-, space- and punctuation-insensitively.

    A trailing unit in brackets is dropped: ``"Optimistic (days)"`` -> ``"optimistic"``.

    Examples
    --------
    >>> normalise(" Most likely (days)"), normalise("Lead/Lag")
    ('mostlikely', 'lead/lag')
    """
    s = str(text).strip().lower()
    if s.endswith(")"):  # the bracket part: from the first "(" after any earlier ")"
        opening = s.find("(", s.rfind(")", 0, len(s) - 1) + 1, len(s) - 1)
        if opening >= 0:
            s = s[:opening]
    return re.sub(r"[\s_.\-]+", "", s)


def is_blank(value: object) -> bool:
    """``None``, NaN and whitespace-only text are blank.

    Examples
    --------
    >>> is_blank("  "), is_blank(0)
    (True, False)
    """
    if value is None:
        return True
    if isinstance(value, float) and math.isnan(value):
        return True
    return isinstance(value, str) and not value.strip()


# --------------------------------------------------------------------------- showing
def _time_text(t: dt.time) -> str:
    text = f"{t.hour:02d}:{t.minute:02d}"
    if t.second or t.microsecond:
        text += f":{t.second:02d}"
    if t.microsecond:
        text += f".{t.microsecond:06d}".rstrip("0")
    return text


def _date_time_text(value: dt.datetime) -> str:
    if value.time() == dt.time(0):
        return value.date().isoformat()
    return f"{value.date().isoformat()} {_time_text(value.time())}"


def _number_text(x: float) -> str:
    if math.isfinite(x) and x.is_integer() and abs(x) < 1e16:
        return str(int(x))
    return repr(x)


#: C0 controls but tab and line feed, DEL, C1 controls, and lone surrogates (a file name's
#: undecodable bytes under ``surrogateescape`` among them).
_UNPRINTABLE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\ud800-\udfff]")


def _escape(match: re.Match) -> str:
    code = ord(match.group())
    if 0xDC80 <= code <= 0xDCFF:  # a byte that was not UTF-8, kept by surrogateescape
        return f"\\x{code - 0xDC00:02x}"
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text: str) -> str:
    r"""``text`` safe to print or log: control characters as visible escapes.

    Every C0 control character but tab and line feed, DEL and every C1 control character
    become ``\xNN`` (so an escape sequence from a cell or a file name cannot drive the
    terminal, CWE-150 "Improper Neutralization of Escape, Meta, or Control Sequences");
    a byte of a file name that was not UTF-8 (``os.fsdecode``'s ``surrogateescape``)
    becomes ``\xNN`` of that byte, another lone surrogate ``\uNNNN``, so the text always
    encodes as UTF-8.

    Examples
    --------
    >>> print(printable("plan\x1b[2J.csv"), printable("bell\x07"), printable("two\nlines"))
    plan\x1b[2J.csv bell\x07 two
    lines
    >>> print(printable("plan-\udcff\udcfe.csv"), printable("\x9b"), printable("\ud800"))
    plan-\xff\xfe.csv \x9b \ud800
    """
    return _UNPRINTABLE.sub(_escape, text)


def shown(value: object) -> str:
    """A cell's value as the user typed or sees it, for messages.

    Text in double quotes (long text cut short), numbers without a needless ``.0``, dates
    as ``YYYY-MM-DD``, times of day as ``HH:MM``; never Python's own notation.

    Examples
    --------
    >>> shown(dt.date(2024, 3, 1)), shown(dt.datetime(2024, 1, 2, 10, 30)), shown(3.0)
    ('2024-03-01', '2024-01-02 10:30', '3')
    >>> shown(" two "), shown(dt.time(9, 5)), shown(1e155)
    ('"two"', '09:05', '1e+155')
    """
    if isinstance(value, bool):
        return str(value).upper()
    if isinstance(value, float):
        return _number_text(value)
    if isinstance(value, int):
        text = str(value)
        return text if len(text) <= _LONGEST_SHOWN else f"a {len(text)}-digit number"
    if isinstance(value, dt.datetime):
        return _date_time_text(value)
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, dt.time):
        return _time_text(value)
    text = str(value).strip()
    if len(text) > _LONGEST_SHOWN:
        return f'"{text[: _LONGEST_SHOWN - 20]}...{text[-10:]}" ({len(text)} characters)'
    return f'"{text}"'


# --------------------------------------------------------------------------- numbers
def parse_number(value: object, *, percent: bool = False) -> float:
    """A finite number from a numeric cell or plain decimal text; ``ValueError`` otherwise.

    Text must be a plain decimal number: an optional sign (``-``, ``+`` or the minus sign
    U+2212), digits with an optional decimal point and an optional exponent (``2.5``,
    ``-1``, ``1e3``). Python's ``float`` also reads ``1_0``, ``nan``, ``inf`` and digits
    of other scripts; these are refused. With ``percent``, ``25%`` is read as 0.25.

    Parameters
    ----------
    value : object
        A cell value (number, text, date, ...) or a command-line text.
    percent : bool
        Whether a trailing ``%`` is allowed (the number is then divided by 100).

    Returns
    -------
    float
        The number, finite.

    Raises
    ------
    ValueError
        With a message that starts with the value as shown to the user.

    Examples
    --------
    >>> parse_number(" 2.5 "), parse_number("\u22121e3"), parse_number("25%", percent=True)
    (2.5, -1000.0, 0.25)
    >>> parse_number("1_0")
    Traceback (most recent call last):
    ...
    ValueError: "1_0" is not a plain number (such as 2.5, -1 or 1e3)
    """
    if type(value) is float and math.isfinite(value):  # the common case first
        return value
    if isinstance(value, bool):
        raise ValueError(f"{shown(value)} is a true/false value, not a number")
    if isinstance(value, (dt.date, dt.datetime)):
        raise ValueError(f"{shown(value)} is a date, not a number")
    if isinstance(value, (dt.time, dt.timedelta)):
        raise ValueError(f"{shown(value)} is a time, not a number")
    if isinstance(value, (int, float)):
        try:
            x = float(value)
        except OverflowError:
            raise ValueError(f"{shown(value)} is too large to compute with") from None
        if not math.isfinite(x):
            raise ValueError(f"{shown(value)} is not a finite number")
        return x
    if not isinstance(value, str):
        raise ValueError(f"{shown(value)} is not a number")
    text = value.strip().replace("\u2212", "-")
    scale = 1.0
    if percent and text.endswith("%"):
        text, scale = text[:-1].rstrip(), 0.01
    if not _PLAIN_NUMBER.fullmatch(text):
        raise ValueError(f"{shown(value)} is not a plain number (such as 2.5, -1 or 1e3)")
    x = float(text)
    if not math.isfinite(x):
        raise ValueError(f"{shown(value)} is too large to compute with")
    return x * scale


def as_number(value: object) -> float | None:
    """:func:`parse_number` without a message: the number, or None when it is not one.

    Examples
    --------
    >>> as_number(" 2.5 "), as_number("\u22121"), as_number("two"), as_number(True)
    (2.5, -1.0, None, None)
    """
    try:
        return parse_number(value)
    except ValueError:
        return None


# --------------------------------------------------------------------------- dates
def as_date(value: object) -> dt.date | None:
    """A date from a date cell or ``YYYY-MM-DD`` text (a time of day is dropped).

    Text must be the whole date, optionally followed by a time of day
    (``2025-03-03 09:00`` or ``2025-03-03T09:00``); ``20250303`` is a number, not a date.

    Examples
    --------
    >>> as_date("2025-03-03"), as_date("next monday"), as_date("20250303")
    (datetime.date(2025, 3, 3), None, None)
    """
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        m = _ISO_DATE_TIME.fullmatch(value.strip())
        if m is None:
            return None
        try:
            return dt.date.fromisoformat(m.group(1))
        except ValueError:
            return None
    return None


def date_out_of_range(d: dt.date) -> str | None:
    """Why ``d`` is outside the dates pertbook works with; None when it is inside.

    Examples
    --------
    >>> date_out_of_range(dt.date(1899, 12, 31)) is None, date_out_of_range(LAST_DATE)
    (False, None)
    """
    if d < FIRST_DATE:
        return (
            f"{d.isoformat()} is before {FIRST_DATE.isoformat()}, the first date "
            "pertbook works with"
        )
    return None  # no Python date is after LAST_DATE


# --------------------------------------------------------------------------- IDs
def _id_of_text(text: str) -> str:
    if not text[:1].isdigit():  # every rule below is for text that starts with a digit
        return text
    if _INTEGRAL_TEXT.match(text):
        return text.split(".")[0]
    m = _ISO_DATE_TIME.fullmatch(text)
    if m is not None:
        try:
            when = dt.datetime.fromisoformat(f"{m.group(1)} {m.group(2) or '00:00'}")
        except ValueError:
            return text
        return _date_time_text(when)
    m = _TIME.fullmatch(text)
    if m is not None:
        hour, minute, second = (int(g or 0) for g in m.groups())
        if hour < 24 and minute < 60 and second < 60:
            return _time_text(dt.time(hour, minute, second))
    return text


def id_text(value: object) -> str:
    """An activity ID as text: the one rule for IDs wherever they appear.

    The ID column, each predecessor token, the links sheet and groups all read IDs
    through this, so the same ID typed as a number, a date or text is the same ID:
    a number 3 or 3.0 and the text ``3.0`` are ``"3"``; a date is ``YYYY-MM-DD``; a date
    and time (a cell, or text with ``T`` or a space) is ``YYYY-MM-DD HH:MM`` (seconds
    when not zero); a time of day is ``HH:MM``.

    Examples
    --------
    >>> id_text(3.0), id_text("3.0"), id_text(" A3 ")
    ('3', '3', 'A3')
    >>> id_text(dt.datetime(2024, 1, 2, 10, 30)), id_text("2024-01-02T10:30:00")
    ('2024-01-02 10:30', '2024-01-02 10:30')
    """
    if isinstance(value, str):
        return _id_of_text(value.strip())
    if isinstance(value, bool):
        return str(value).upper()
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() else repr(value)
    if isinstance(value, (dt.date, dt.time)):  # a datetime is a date too
        return shown(value)
    return _id_of_text(str(value).strip())


def as_written(value: object) -> str:
    """A cell's value the way the user sees it in the sheet, for messages (not ``repr``).

    Dates show as ``YYYY-MM-DD``, a time of day as ``HH:MM`` (seconds when they are not
    zero), whole numbers without ``.0``, text as it is, an error cell as its error text.

    Examples
    --------
    >>> import datetime as dt
    >>> as_written(dt.date(2024, 3, 1)), as_written(dt.datetime(2024, 1, 2, 10, 30))
    ('2024-03-01', '2024-01-02 10:30')
    >>> as_written(dt.time(8, 0)), as_written(3.0), as_written(2.5), as_written(" NA ")
    ('08:00', '3', '2.5', 'NA')
    """
    if isinstance(value, (bool, int, float, dt.date, dt.time)):
        return shown(value)
    return str(value).strip()


#: Weekday names and abbreviations (Monday = 0), for the working days.
WEEKDAYS = {
    **dict.fromkeys(("mon", "monday"), 0),
    **dict.fromkeys(("tue", "tues", "tuesday"), 1),
    **dict.fromkeys(("wed", "wednesday"), 2),
    **dict.fromkeys(("thu", "thur", "thurs", "thursday"), 3),
    **dict.fromkeys(("fri", "friday"), 4),
    **dict.fromkeys(("sat", "saturday"), 5),
    **dict.fromkeys(("sun", "sunday"), 6),
}


def parse_working_days(value: object) -> tuple[int, ...]:
    """Weekdays (Monday = 0) from e.g. ``Mon-Fri``, ``Sun-Thu``, ``Mon, Tue, Thu``.

    Examples
    --------
    >>> parse_working_days("Mon-Fri"), parse_working_days("Fri-Mon")
    ((0, 1, 2, 3, 4), (0, 4, 5, 6))
    """
    s = str(value).strip().lower().replace("\u2013", "-")
    days: set[int] = set()
    for part in re.split(r"[,;/ ]+", s):
        if not part:
            continue
        if "-" in part:
            a, b = part.split("-", 1)
            if a not in WEEKDAYS or b not in WEEKDAYS:
                raise ValueError(part)
            first, last = WEEKDAYS[a], WEEKDAYS[b]
            days.update((first + k) % 7 for k in range((last - first) % 7 + 1))
        elif part in WEEKDAYS:
            days.add(WEEKDAYS[part])
        else:
            raise ValueError(part)
    if not days:
        raise ValueError(s)
    return tuple(sorted(days))


# --------------------------------------------------------------------------- durations with units
#: Unit words a duration or lag may carry, to the unit they stand for (lower case, no dots).
DURATION_UNIT_WORDS = {
    **dict.fromkeys(("h", "hr", "hrs", "hour", "hours"), "hours"),
    **dict.fromkeys(("d", "dy", "dys", "day", "days"), "days"),
    **dict.fromkeys(("w", "wk", "wks", "week", "weeks"), "weeks"),
}
#: Units refused because their length in working time is ambiguous.
AMBIGUOUS_UNIT_WORDS = frozenset(
    ("mo", "mos", "mon", "mons", "month", "months", "y", "yr", "yrs", "year", "years")
)


class UnitError(ValueError):
    """A duration or lag written with a unit pertbook does not convert (months, years, ...)."""


_NUMBER_WITH_UNIT = re.compile(
    r"\s*([+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)\s*([A-Za-z.]*)\s*"
)


def split_unit(value: object) -> tuple[float, str | None]:
    """A number and the unit written after it (``"hours"``, ``"days"``, ``"weeks"``).

    A numeric cell, or text that is a plain number, has no unit (``None``): it is in the
    schedule's time unit. Units are case-insensitive and the space before them is optional
    (``16h``, ``4 hrs``, ``3 Days``, ``1.5 wks``). Months and years are refused, since the
    working time in them is ambiguous.

    Raises
    ------
    ValueError
        With a message that starts with the value as shown to the user; a
        :class:`UnitError` when the number is followed by a unit that is not read.

    Examples
    --------
    >>> split_unit(2.5), split_unit("16h"), split_unit("1.5 Wks"), split_unit("-2d")
    ((2.5, None), (16.0, 'hours'), (1.5, 'weeks'), (-2.0, 'days'))
    >>> try:
    ...     split_unit("2 months")
    ... except ValueError as exc:  # a UnitError
    ...     print(exc)
    "2 months" is in months, whose length in working time is ambiguous
    """
    if not isinstance(value, str):
        return parse_number(value), None
    text = value.replace("\u2212", "-")
    m = _NUMBER_WITH_UNIT.fullmatch(text)
    if m is None or not m.group(2):
        return parse_number(value), None
    word = m.group(2).lower().rstrip(".")
    if word in AMBIGUOUS_UNIT_WORDS:
        kind = "years" if word.startswith("y") else "months"
        raise UnitError(f"{shown(value)} is in {kind}, whose length in working time is ambiguous")
    unit = DURATION_UNIT_WORDS.get(word)
    if unit is None:
        raise UnitError(
            f"{shown(value)} has the unit {shown(m.group(2))}; pertbook reads hours (h), "
            "days (d) and weeks (w)"
        )
    x = float(m.group(1))
    if not math.isfinite(x):
        raise ValueError(f"{shown(value)} is too large to compute with")
    return x, unit


def unit_factor(
    unit: str | None, time_unit: str, hours_per_day: float = 8.0, days_per_week: int = 5
) -> float:
    """How many of the schedule's time units one ``unit`` (hours, days or weeks) is.

    A day is one day of the schedule's calendar (a working day, or a calendar day in a
    calendar-day schedule) of ``hours_per_day`` hours; a week is ``days_per_week`` working
    days (7 days in a calendar-day schedule). ``None`` (no unit written) is 1.

    Examples
    --------
    >>> unit_factor("hours", "working days"), unit_factor("weeks", "working days")
    (0.125, 5.0)
    >>> unit_factor("days", "weeks"), unit_factor("days", "working hours", 7.5)
    (0.2, 7.5)
    >>> unit_factor("weeks", "calendar days"), unit_factor(None, "weeks")
    (7.0, 1.0)
    """
    if unit is None:
        return 1.0
    week_days = 7 if time_unit == "calendar days" else days_per_week
    hours = {"hours": 1.0, "days": hours_per_day, "weeks": hours_per_day * week_days}[unit]
    per_unit = {
        "working hours": 1.0,
        "weeks": hours_per_day * week_days,
    }.get(time_unit, hours_per_day)
    return hours / per_unit


def parse_duration(
    value: object, time_unit: str, hours_per_day: float = 8.0, days_per_week: int = 5
) -> float:
    """A duration or lag cell in the schedule's time unit: a number, or a number with a unit.

    Examples
    --------
    >>> parse_duration("16h", "working days"), parse_duration("2w", "working days")
    (2.0, 10.0)
    >>> parse_duration(" 3 days ", "working hours", hours_per_day=8)
    24.0
    """
    x, unit = split_unit(value)
    return x * unit_factor(unit, time_unit, hours_per_day, days_per_week)
