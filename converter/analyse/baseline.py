"""A baseline run's expected finishes, as the progress checks need them.

``convert --baseline OLD --status-date D`` judges progress against the earlier run: an
activity was *due* by the status date when the baseline's early finish (its expected
finish, the passes on TE) falls on or before it. The api reads the baseline file and hands
over plain data (:class:`Baseline`); this stage never reads a file or imports the
comparison.

How a baseline finish becomes an offset of this run (one rule, :func:`due_offsets`):

* both runs have dates (a start date): the baseline's early finish *date* is turned into
  this run's offset by this run's calendar, as the end of that day
  (:func:`converter.analyse.status.finish_offset`), the same as an actual finish. A date
  is a date: a start date moved between the runs does not shift what was due when;
* otherwise the baseline's early finish *offset* is taken as it is, when the two runs
  count in the same time unit (both offsets count from the project start);
* an activity the baseline does not have has no baseline finish (``nan``): it is not due.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from converter.analyse.calendar import Calendar
from converter.analyse.status import finish_offset

DATES, OFFSETS = "dates", "offsets"


@dataclass(frozen=True)
class Baseline:
    """What the progress checks use of an earlier run.

    ``finishes`` maps an activity ID to the baseline's early finish: its offset in the
    baseline's ``time_unit`` and its date (None where the baseline had no start date).
    """

    file: str
    time_unit: str
    finishes: dict[str, tuple[float | None, dt.date | None]] = field(default_factory=dict)


@dataclass(frozen=True)
class DueFinish:
    """The baseline finish per activity of this run (offsets, ``nan`` where none) and how
    they were found: :data:`DATES`, :data:`OFFSETS`, or None when the baseline could not be
    used (``why`` says why)."""

    offsets: np.ndarray
    basis: str | None
    why: str = ""

    @property
    def lacking(self) -> int:
        """Activities of this run without a baseline finish."""
        return int(np.isnan(self.offsets).sum())


def due_offsets(
    ids: list[str], baseline: Baseline, calendar: Calendar | None, time_unit: str
) -> DueFinish:
    """Each activity's baseline finish as an offset of this run (module docstring).

    Parameters
    ----------
    ids : list of str
        This run's activity IDs, in order.
    baseline : Baseline
        The earlier run's early finishes by ID.
    calendar : Calendar or None
        This run's calendar (None without a start date).
    time_unit : str
        This run's time unit.

    Returns
    -------
    DueFinish
        Offsets (``nan`` for an activity the baseline lacks) and the basis used.

    Examples
    --------
    Dates: the baseline finished B on Wednesday 2025-03-05; this run starts on Monday
    2025-03-03, so that is the end of its third working day:

    >>> b = Baseline("old.json", "working days",
    ...              {"A": (1.0, dt.date(2025, 3, 3)), "B": (3.0, dt.date(2025, 3, 5))})
    >>> d = due_offsets(["A", "B", "C"], b, Calendar(dt.date(2025, 3, 3)), "working days")
    >>> d.offsets.tolist(), d.basis, d.lacking
    ([1.0, 3.0, nan], 'dates', 1)

    Offsets in another time unit cannot be compared:

    >>> due_offsets(["A"], Baseline("x", "weeks", {"A": (1.0, None)}), None, "working days").why
    'the baseline counts in weeks, this run in working days, and has no dates'

    References
    ----------
    Common practice: an activity is due by the status date when its baseline finish is on
    or before it (the denominator of the baseline execution index, DCMA 2012, check 14).
    """
    values = [baseline.finishes.get(i, (None, None)) for i in ids]
    if calendar is not None and any(d is not None for _, d in values):
        offsets = [finish_offset(d, calendar) if d is not None else None for _, d in values]
        return DueFinish(_array(offsets), DATES)
    if baseline.time_unit != time_unit:
        why = (
            f"the baseline counts in {baseline.time_unit}, this run in {time_unit}, "
            "and has no dates"
        )
        return DueFinish(np.full(len(ids), np.nan), None, why)
    return DueFinish(_array([x for x, _ in values]), OFFSETS)


def _array(values: list[float | None]) -> np.ndarray:
    return np.array([np.nan if x is None else float(x) for x in values], dtype=float)


__all__ = ["DATES", "OFFSETS", "Baseline", "DueFinish", "due_offsets"]
