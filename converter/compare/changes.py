"""Two runs -> what moved between them: the comparison behind ``pertbook compare`` and the
Changes sheet of ``convert --baseline``.

Activities are matched by ID. The finish figures are compared as they are; activities
that joined or left the critical path are those whose critical flag (total float zero)
changed; the largest movers are ranked by the size of their change.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from converter.analyse.pert import expected_time
from converter.compare.account import account
from converter.compare.run import FIGURES, ActivityFigures, Run

#: How many activities each "largest movers" and "top risk drivers" list keeps.
TOP = 10
#: Changes smaller than this are no change (float noise of a rerun, common practice).
TINY = 1e-9
#: A setting one run does not record (an older workbook's sheet): not counted as a difference.
NOT_RECORDED = "(not recorded)"


def _difference(old: float | None, new: float | None) -> float | None:
    """New less old; None where a run lacks the figure."""
    return None if old is None or new is None else new - old


@dataclass
class FigureChange:
    """One finish figure, old / new / change (None where a run lacks it)."""

    key: str
    label: str
    kind: str
    old: float | None
    new: float | None
    old_date: object = None
    new_date: object = None
    days_moved: int | None = None  # working days (calendar days) between the two dates

    change = property(lambda self: _difference(self.old, self.new))


@dataclass
class Move:
    """One activity's value in the old and the new run."""

    id: str
    name: str
    old: float | None
    new: float | None

    change = property(lambda self: _difference(self.old, self.new))


@dataclass
class EstimateChange:
    """An activity whose O, M or P changed."""

    id: str
    name: str
    old: tuple[float, float, float]
    new: tuple[float, float, float]

    @property
    def te_change(self) -> float:
        """TE new - TE old, in the order the sheet's formula computes it."""
        return float(expected_time(*self.new)) - float(expected_time(*self.old))


@dataclass
class RiskChange:
    """A named risk of either run: its figures old and new (None where absent)."""

    id: str
    description: str
    old: dict | None
    new: dict | None


@dataclass
class Changes:
    """What moved from run ``old`` to run ``new``."""

    old: Run
    new: Run
    settings: list[tuple[str, str, str]]  # label, old, new: every setting of either run
    differ: list[str]  # labels of the settings that differ
    figures: list[FigureChange]
    joined: list[Move]  # total float old / new
    left: list[Move]
    added: list[tuple[str, str]]  # id, name
    removed: list[tuple[str, str]]
    estimates: list[EstimateChange]
    movers: dict[str, list[Move]]  # "total_float", "criticality", "sensitivity"
    drivers: dict[str, list[Move]]  # "old", "new": (sensitivity, criticality) of one run
    risks: list[RiskChange] | None = None
    account: str = ""
    notes: list[str] = field(default_factory=list)


def _days_moved(new: Run, old_date, new_date) -> int | None:
    """Working days from ``old_date`` to ``new_date`` on the new run's calendar (negative:
    earlier); calendar days when the schedule counts in calendar days."""
    if old_date is None or new_date is None or new.calendar is None:
        return None
    cal = new.calendar
    if cal.unit == "calendar days":
        return (new_date - old_date).days
    holidays = [np.datetime64(h) for h in cal.holidays]
    return int(
        np.busday_count(np.datetime64(old_date), np.datetime64(new_date), cal.weekmask, holidays)
    )


def _figures(old: Run, new: Run) -> list[FigureChange]:
    out = []
    for key, label, kind in FIGURES:
        a, b = old.figures.get(key), new.figures.get(key)
        if a is None and b is None:
            continue
        fc = FigureChange(key, label, kind, a, b, old.dates.get(key), new.dates.get(key))
        fc.days_moved = _days_moved(new, fc.old_date, fc.new_date)
        out.append(fc)
    return out


def _moved(pairs: list[Move]) -> list[Move]:
    """The moves that changed, largest change first (then by ID), at most :data:`TOP`."""
    changed = [m for m in pairs if m.change is not None and abs(m.change) > TINY]
    return sorted(changed, key=lambda m: (-abs(m.change), m.id))[:TOP]


def _drivers(run: Run) -> list[Move]:
    """The run's top risk drivers by |sensitivity| (then criticality, then sheet order),
    as Move(old=sensitivity, new=criticality)."""
    if not run.simulated:
        return []
    acts = list(run.activities.values())
    order = sorted(
        range(len(acts)),
        key=lambda i: (-abs(acts[i].sensitivity or 0.0), -(acts[i].criticality or 0.0), i),
    )
    return [
        Move(acts[i].id, acts[i].name, acts[i].sensitivity, acts[i].criticality)
        for i in order[:TOP]
    ]


def _estimate(a: ActivityFigures, b: ActivityFigures) -> EstimateChange | None:
    old, new = (a.o, a.m, a.p), (b.o, b.m, b.p)
    if None in old or None in new:
        return None
    if all(abs(x - y) <= TINY * max(1.0, abs(x)) for x, y in zip(old, new)):
        return None
    return EstimateChange(b.id, b.name, old, new)


def _risks(old: Run, new: Run) -> list[RiskChange] | None:
    if old.risks is None and new.risks is None:
        return None
    olds = {str(r.get("id")): r for r in old.risks or []}
    news = {str(r.get("id")): r for r in new.risks or []}
    ids = list(news) + [k for k in olds if k not in news]
    out = [
        RiskChange(
            k, str((news.get(k) or olds.get(k)).get("description") or ""), olds.get(k), news.get(k)
        )
        for k in ids
    ]

    def size(r: RiskChange) -> float:
        return max(abs((x or {}).get("delta_p80") or 0.0) for x in (r.old, r.new))

    return sorted(out, key=lambda r: -size(r))


def compare_runs(old: Run, new: Run) -> Changes:
    """What moved from ``old`` to ``new`` (activities matched by ID).

    Examples
    --------
    >>> from converter.compare.run import Run, ActivityFigures
    >>> def run(p):
    ...     act = ActivityFigures("A", "Dig", 2.0, 4.0, p, (2 + 16 + p) / 6, 0.0, True)
    ...     fig = {"cpm_finish": act.te, "pert_sd": (p - 2) / 6}
    ...     return Run("x", None, None, "working days", None, {}, fig, {"A": act})
    >>> ch = compare_runs(run(12.0), run(18.0))
    >>> [(e.id, e.old, e.new, e.te_change) for e in ch.estimates]
    [('A', (2.0, 4.0, 12.0), (2.0, 4.0, 18.0), 1.0)]
    >>> ch.figures[0].label, ch.figures[0].change
    ('Expected finish (critical path: CPM on TE, the PERT mean)', 1.0)

    References
    ----------
    Common practice in schedule review (no single published method): activities matched
    by their ID, critical meaning zero total float (Kelley & Walker 1959), TE as in
    Malcolm, Roseboom, Clark & Fazar (1959).
    """
    both = [k for k in new.activities if k in old.activities]
    pairs = [(old.activities[k], new.activities[k]) for k in both]
    labels = list(new.settings) + [k for k in old.settings if k not in new.settings]
    settings = [
        (k, old.settings.get(k, NOT_RECORDED), new.settings.get(k, NOT_RECORDED)) for k in labels
    ]
    ch = Changes(
        old=old,
        new=new,
        settings=settings,
        differ=[k for k, a, b in settings if a != b and NOT_RECORDED not in (a, b)],
        figures=_figures(old, new),
        joined=[
            Move(b.id, b.name, a.total_float, b.total_float)
            for a, b in pairs
            if b.critical and not a.critical
        ],
        left=[
            Move(b.id, b.name, a.total_float, b.total_float)
            for a, b in pairs
            if a.critical and not b.critical
        ],
        added=[(k, new.activities[k].name) for k in new.activities if k not in old.activities],
        removed=[(k, old.activities[k].name) for k in old.activities if k not in new.activities],
        estimates=[e for a, b in pairs if (e := _estimate(a, b)) is not None],
        movers={
            key: _moved([Move(b.id, b.name, getattr(a, key), getattr(b, key)) for a, b in pairs])
            for key in ("total_float", "criticality", "sensitivity")
        },
        drivers={"old": _drivers(old), "new": _drivers(new)},
        risks=_risks(old, new),
    )
    ch.account = account(ch)
    return ch
