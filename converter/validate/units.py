"""Durations and lags written with a unit (``16h``, ``3 days``, ``2w``), read with the settings.

The rule for one cell lives in :mod:`converter.values` (:func:`~converter.values.split_unit`,
:func:`~converter.values.unit_factor`); here it meets the schedule's settings (time unit,
``Hours per day``, the working week), which are resolved before any activity is read.
"""

from __future__ import annotations

from converter.model import Settings
from converter.values import parse_number, shown, split_unit, unit_factor

#: The remedy for a unit pertbook does not convert.
UNIT_FIX = (
    "Write the duration in hours (16h), days (3d) or weeks (2w), or as a plain number "
    "in the schedule's time unit; months and years vary in working time."
)


def in_time_units(value: object, settings: Settings | None) -> float:
    """A duration or lag cell in the schedule's time unit.

    A bare number is already in the time unit; a number with a unit is converted with the
    settings' ``Hours per day`` and working week (:func:`converter.values.unit_factor`).
    Without settings (a row that is only checked, never scheduled) units are read with the
    defaults.

    Raises
    ------
    ValueError
        With the value as shown to the user; a :class:`~converter.values.UnitError` for a
        unit that is not converted (months, years, an unknown word).

    Examples
    --------
    >>> s = Settings(time_unit="working hours", hours_per_day=7.5)
    >>> in_time_units("2d", s), in_time_units("1 wk", s), in_time_units(4.0, s)
    (15.0, 37.5, 4.0)
    >>> in_time_units("16h", Settings())
    2.0
    """
    if isinstance(value, float) or (isinstance(value, str) and value.rstrip()[-1:].isdigit()):
        return parse_number(value)  # no unit can end in a digit: the common cases first
    s = settings or Settings()
    x, unit = split_unit(value)
    return x * unit_factor(unit, s.time_unit, s.hours_per_day, len(s.working_days))


def as_converted(value: object, x: float, settings: Settings | None) -> str:
    """``value`` as typed, with what it was converted to when it carried a unit.

    Examples
    --------
    >>> as_converted("3d", 24.0, Settings(time_unit="working hours")), as_converted(5.0, 5.0, None)
    ('"3d" (= 24 working hours)', '5')
    """
    if isinstance(value, str):
        try:
            unit = split_unit(value)[1]
        except ValueError:
            unit = None
        if unit is not None:
            return f"{shown(value)} (= {shown(x)} {(settings or Settings()).time_unit})"
    return shown(x)
