"""The parser of each option's value: one per option, for the command line, the settings sheet
and the API alike. A parser takes a cell value or a text and returns the value, or raises
``ValueError`` with a message that says what was expected.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Iterable
from dataclasses import dataclass

from converter.model import DISTRIBUTIONS
from converter.values import (
    LARGEST_DURATION,
    UnitError,
    as_date,
    as_number,
    date_out_of_range,
    id_text,
    is_blank,
    normalise,
    parse_number,
    shown,
    split_unit,
)

DISTRIBUTION_ALIASES = {
    "pert": "pert",
    "beta": "pert",
    "pertbeta": "pert",
    "betapert": "pert",
    "triangular": "triangular",
    "triangle": "triangular",
    "tri": "triangular",
    "uniform": "uniform",
    "flat": "uniform",
    "rectangular": "uniform",
}

TIME_UNITS = {
    "workingdays": "working days",
    "workdays": "working days",
    "days": "working days",
    "day": "working days",
    "workingday": "working days",
    "businessdays": "working days",
    "weeks": "weeks",
    "week": "weeks",
    "workingweeks": "weeks",
    "calendardays": "calendar days",
    "calendarday": "calendar days",
    "elapseddays": "calendar days",
    "workinghours": "working hours",
    "workinghour": "working hours",
    "workhours": "working hours",
    "hours": "working hours",
    "hour": "working hours",
    "hrs": "working hours",
    "hr": "working hours",
}

#: The longest working day, in hours (``Hours per day`` is above 0 and at most this).
MOST_HOURS_PER_DAY = 24.0


CONFIDENCE_EXAMPLE = "50, 80, 90 or 50%, 80%, 90% or 0.5, 0.8, 0.9"


# --------------------------------------------------------------------------- parsers
def parse_confidence(value: object) -> tuple[float, ...]:
    """Confidence levels as fractions, sorted, from text, a number or a sequence of these.

    A level written with ``%`` is a percentage. A bare number above 1 (in size) is a
    percentage too (``80`` is 80%), one up to 1 a fraction (``0.8``); bare numbers of both
    kinds in one list are refused as ambiguous. Every level must lie strictly between 0% and
    100%.

    Parameters
    ----------
    value : str, number or sequence
        e.g. ``"50,80,90,95"``, ``"50%, 80%"``, ``0.8``, ``80``, ``(0.5, 0.9)``.

    Returns
    -------
    tuple of float
        The distinct levels in increasing order.

    Raises
    ------
    ValueError
        With a message naming the bad level.

    Examples
    --------
    >>> parse_confidence("50,80,90,95")
    (0.5, 0.8, 0.9, 0.95)
    >>> parse_confidence("80%; 50%"), parse_confidence(0.8), parse_confidence(80)
    ((0.5, 0.8), (0.8,), (0.8,))
    >>> parse_confidence("100")
    Traceback (most recent call last):
    ...
    ValueError: confidence level 100 (= 100%) must be above 0% and below 100%
    """
    tokens = _confidence_tokens(value)
    if not tokens:
        raise ValueError(f"no confidence levels given (write e.g. {CONFIDENCE_EXAMPLE})")
    levels: list[tuple[str, float]] = []  # (as written, fraction)
    bare: list[tuple[str, float]] = []
    for text, number, percent in tokens:
        if percent:
            levels.append((text, number / 100.0))
        else:
            bare.append((text, number))
    small = [t for t, x in bare if 0 < abs(x) <= 1]
    large = [t for t, x in bare if abs(x) > 1]
    if small and large:
        raise ValueError(
            f"confidence levels {small[0]} and {large[0]} mix fractions and "
            "percentages: write them all as percentages (50, 80, 90) or all as "
            "fractions (0.5, 0.8, 0.9)"
        )
    levels += [(t, x / 100.0 if large else x) for t, x in bare]
    for text, level in levels:
        if not 0.0 < level < 1.0:
            shown = "" if text.endswith("%") else f" (= {level * 100:g}%)"
            raise ValueError(f"confidence level {text}{shown} must be above 0% and below 100%")
    return tuple(sorted({level for _, level in levels}))


def _confidence_tokens(value: object) -> list[tuple[str, float, bool]]:
    """``(as written, number, written with %)`` for each level in ``value``."""
    if isinstance(value, str):
        parts: Iterable[object] = re.split(r"[,;\s]+", value.strip())
    elif isinstance(value, Iterable):
        parts = value
    else:
        parts = [value]
    out = []
    for part in parts:
        if is_blank(part):
            continue
        number = as_number(part)
        text = f"{number:g}" if number is not None else str(part).strip()
        percent = number is None and text.endswith("%")
        if percent:
            number = as_number(text[:-1])
        if number is None:
            raise ValueError(
                f'confidence level "{text}" is not a number (write e.g. {CONFIDENCE_EXAMPLE})'
            )
        out.append((text, number, percent))
    return out


def parse_date(value: object) -> dt.date:
    """A date (a date cell or ``YYYY-MM-DD`` text) from 1900-03-01 on.

    The one rule for every date given: the start date, a due date, a holiday, a target.

    Examples
    --------
    >>> parse_date("2027-06-30")
    datetime.date(2027, 6, 30)
    >>> parse_date("1899-12-31")
    Traceback (most recent call last):
    ...
    ValueError: 1899-12-31 is before 1900-03-01, the first date pertbook works with
    """
    d = as_date(value)
    if d is None:
        raise ValueError(f"{shown(value)} is not a date (use a date cell or YYYY-MM-DD)")
    reason = date_out_of_range(d)
    if reason is not None:
        raise ValueError(reason)
    return d


def parse_duration(value: object) -> float:
    """A duration in time units: a plain number from 0 to 10,000,000.

    Examples
    --------
    >>> parse_duration("60"), parse_duration(2.5)
    (60.0, 2.5)
    """
    x = parse_number(value)
    if not 0 <= x <= LARGEST_DURATION:
        raise ValueError(
            f"{shown(value)} is not a duration from 0 to {LARGEST_DURATION:,.0f} time units"
        )
    return x


@dataclass(frozen=True)
class DurationWithUnit:
    """A due or target duration typed with a unit (``3w``, ``16h``), as typed.

    It is converted to the time unit once the settings are known (the due duration by
    :func:`converter.options.resolve`, a target when its row is read).
    """

    text: str


def parse_due(value: object) -> float | dt.date | DurationWithUnit | None:
    """A due value: a date (cell or YYYY-MM-DD text) or a duration; blank: None.

    The same rule reads a due date on the command line, on the settings sheet and an
    activity's interim target. A duration is a plain number from 0 to 10,000,000, or a
    number with a unit (``3w``: a :class:`DurationWithUnit`, converted with the settings;
    months and years refused); a date is from 1900-03-01 on (:func:`parse_date`).

    Examples
    --------
    >>> parse_due("60"), parse_due("2027-06-30"), parse_due(" "), parse_due("3 wks")
    (60.0, datetime.date(2027, 6, 30), None, DurationWithUnit(text='3 wks'))
    """
    if isinstance(value, DurationWithUnit):
        return value
    if isinstance(value, float) and math.isnan(value):
        raise ValueError("nan is not a date or a duration")
    if is_blank(value):
        return None
    if as_date(value) is not None:
        return parse_date(value)
    x = as_number(value)
    if x is None:
        return _with_unit(value)
    return parse_duration(x)


def _with_unit(value: object) -> DurationWithUnit:
    """A duration typed with a unit, not negative; ``ValueError`` for anything else."""
    try:
        x, unit = split_unit(value) if isinstance(value, str) else (None, None)
    except UnitError:
        raise
    except ValueError:
        unit = None
    if unit is None:
        raise ValueError(f"{shown(value)} is neither a date (YYYY-MM-DD) nor a duration")
    if x < 0:
        raise ValueError(f"{shown(value)} is negative, not a duration")
    return DurationWithUnit(value.strip())


def parse_start_date(value: object) -> dt.date:
    """The project start: a date cell or ``YYYY-MM-DD`` text, from 1900-03-01 on."""
    return parse_date(value)


def _whole(value: object, low: int, high: int) -> int:
    x = as_number(value)
    if x is None or not x.is_integer() or not low <= x <= high:
        raise ValueError(f"{shown(value)} is not a whole number from {low:,} to {high:,}")
    return int(x)


def parse_iterations(value: object) -> int:
    """Monte Carlo iterations: a whole number from 1 to 10,000,000."""
    return _whole(value, 1, 10_000_000)


#: The simulation's memory budget in MB: the default and the smallest accepted.
DEFAULT_SIMULATION_MEMORY_MB = 1024
MIN_SIMULATION_MEMORY_MB = 32


def parse_memory_mb(value: object) -> int:
    """The simulation's memory budget: a whole number of MB, at least 32."""
    return _whole(value, MIN_SIMULATION_MEMORY_MB, 1 << 20)


def parse_seed(value: object) -> int:
    """The random seed: a whole number from 0 to 2^63 - 1."""
    return _whole(value, 0, 2**63 - 1)


def parse_paths(value: object) -> int:
    """How many of the longest paths to list: 1 to 1000."""
    return _whole(value, 1, 1000)


def parse_correlation(value: object) -> float:
    """Rank correlation within a group: 0 up to (not including) 1; ``25%`` is 0.25."""
    try:
        x = parse_number(value, percent=True)
    except ValueError:
        x = None
    if x is None or not 0.0 <= x < 1.0:
        raise ValueError(f"{shown(value)} is not a correlation from 0 up to (not including) 1")
    return x


def parse_distribution(value: object) -> str:
    """``pert`` (also ``beta``), ``triangular`` (``tri``) or ``uniform`` (``flat``)."""
    d = DISTRIBUTION_ALIASES.get(normalise(value))
    if d is None:
        raise ValueError(f"{shown(value)} is not one of {', '.join(DISTRIBUTIONS)}")
    return d


def parse_time_unit(value: object) -> str:
    """``working days``, ``weeks`` (working weeks), ``calendar days`` or ``working hours``.

    Examples
    --------
    >>> parse_time_unit("Working hours"), parse_time_unit("hrs"), parse_time_unit("days")
    ('working hours', 'working hours', 'working days')
    """
    u = TIME_UNITS.get(normalise(value))
    if u is None:
        raise ValueError(
            f"{shown(value)} is not working days, weeks, calendar days or working hours"
        )
    return u


def parse_default_range(value: object) -> str:
    """The default range: the name of a range class, or inline percentages ``80/100/120``.

    Whether the class exists is checked against the Ranges sheet in
    :mod:`converter.validate.ranges`; here only that a name is given.

    Examples
    --------
    >>> parse_default_range("  Medium "), parse_default_range(2.0)
    ('Medium', '2')
    """
    if is_blank(value) or isinstance(value, bool):
        raise ValueError(f"{shown(value)} is not the name of a range class")
    if isinstance(value, (int, float)):
        return id_text(value)
    if not isinstance(value, str):
        raise ValueError(f"{shown(value)} is not the name of a range class")
    return " ".join(value.split())


def parse_hours_per_day(value: object) -> float:
    """Working hours in one day: a number above 0 and at most 24.

    Examples
    --------
    >>> parse_hours_per_day("7.5"), parse_hours_per_day(8)
    (7.5, 8.0)
    >>> parse_hours_per_day("0")
    Traceback (most recent call last):
    ...
    ValueError: "0" is not a number of hours above 0 and at most 24
    """
    x = as_number(value)
    if x is None or not 0.0 < x <= MOST_HOURS_PER_DAY:
        raise ValueError(
            f"{shown(value)} is not a number of hours above 0 and at most {MOST_HOURS_PER_DAY:g}"
        )
    return x


def parse_baseline(value: object) -> str:
    """The path of a baseline run (an ``.analysis.json`` or ``.analysis.xlsx``) as given;
    whether it is one is checked when it is read (:mod:`converter.compare.readback`).

    Examples
    --------
    >>> parse_baseline(" march.analysis.json ")
    'march.analysis.json'
    >>> parse_baseline("")
    Traceback (most recent call last):
    ...
    ValueError: expected the path of an earlier run's .analysis.json or .analysis.xlsx
    """
    text = str(value).strip() if value is not None else ""
    if not text:
        raise ValueError("expected the path of an earlier run's .analysis.json or .analysis.xlsx")
    return text


#: The iterations a count of traced iterations takes, in this order (1: the longest).
TRACE_ORDER: tuple[float, ...] = (0.8, 0.5, 0.9, 1.0, 0.1, 0.95, 0.99)


def parse_trace(value: object) -> tuple[float, ...]:
    """The quantiles whose nearest iterations the Trace sheet shows (1.0: the longest).

    A count ``N`` (0 to 7) takes the first ``N`` of P80, P50, P90, the longest, P10,
    P95, P99; ``0`` traces none. A list names them: percentiles (``80`` or ``80%``,
    strictly between 0 and 100) and ``max`` (or ``longest``) for the longest iteration.
    A whole number alone is a count up to 7 and a percentile from 8 (``5%`` alone is P5).

    Examples
    --------
    >>> parse_trace("4"), parse_trace(0), parse_trace("50,80,95,max")
    ((0.5, 0.8, 0.9, 1.0), (), (0.5, 0.8, 0.95, 1.0))
    >>> parse_trace("80"), parse_trace("5%")
    ((0.8,), (0.05,))
    >>> parse_trace("120")
    Traceback (most recent call last):
    ...
    ValueError: "120" in "120" is not a percentile between 0 and 100 nor max
    """
    text = str(value).strip().lower()
    if re.fullmatch(r"\d+", text) and int(text) <= len(TRACE_ORDER):
        return tuple(sorted(TRACE_ORDER[: int(text)]))
    out = set()
    for part in re.split(r"[,;\s]+", text):
        if not part:
            continue
        if part in ("max", "longest"):
            out.add(1.0)
            continue
        try:
            x = float(part.removesuffix("%"))
        except ValueError:
            x = math.nan
        if not 0.0 < x < 100.0:
            raise ValueError(
                f"{shown(part)} in {shown(value)} is not a percentile between 0 and 100 nor max"
            )
        out.add(round(x / 100.0, 6))
    if not out:
        raise ValueError(f"{shown(value)} names no iteration to trace")
    return tuple(sorted(out))
