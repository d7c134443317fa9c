"""The one paragraph at the top of a comparison: what moved, and why, in plain words."""

from __future__ import annotations

from converter.compare.run import shown

#: Estimate changes and activities named in the paragraph before "and N more".
NAMED = 3
_PARTS = ("optimistic", "most likely", "pessimistic")


def _n(x: float) -> str:
    """A figure as the paragraph writes it.

    Examples
    --------
    >>> _n(12.0), _n(12.25), _n(40.4567)
    ('12', '12.25', '40.46')
    """
    return f"{round(x, 2):g}"


def _list(ids: list[str]) -> str:
    """IDs in words, at most :data:`NAMED` of them.

    Examples
    --------
    >>> _list(["A"]), _list(["A", "B"]), _list(["A", "B", "C", "D", "E"])
    ('A', 'A and B', 'A, B, C and 2 more')
    """
    if len(ids) > NAMED:
        return ", ".join(ids[:NAMED]) + f" and {len(ids) - NAMED} more"
    return ids[0] if len(ids) == 1 else ", ".join(ids[:-1]) + " and " + ids[-1]


def headline(ch) -> str:
    """How the P80 finish (the simulated one where both runs simulated) moved."""
    key = "sim_p80" if ch.old.simulated and ch.new.simulated else "pert_p80"
    fig = next((f for f in ch.figures if f.key == key), None)
    name = "P80 finish" if key == "sim_p80" else "P80 finish on the critical path"
    if fig is None or fig.change is None:
        return f"The {name} cannot be compared (one run lacks it)"
    unit = ch.new.time_unit
    if fig.days_moved is not None and fig.new_date is not None:
        days = "days" if ch.new.calendar.unit == "calendar days" else "working days"
        if fig.days_moved == 0:
            return (
                f"The {name} stayed on {fig.new_date.isoformat()} "
                f"({_n(fig.old)} -> {_n(fig.new)} {unit})"
            )
        way = "later" if fig.days_moved > 0 else "earlier"
        one = days[:-1] if abs(fig.days_moved) == 1 else days
        return (
            f"The {name} moved {abs(fig.days_moved)} {one} {way}, to "
            f"{fig.new_date.isoformat()} ({_n(fig.old)} -> {_n(fig.new)} {unit})"
        )
    if abs(fig.change) < 0.005:
        return f"The {name} stayed at {_n(fig.new)} {unit}"
    way = "later" if fig.change > 0 else "earlier"
    return f"The {name} moved {_n(abs(fig.change))} {unit} {way}, to {_n(fig.new)} {unit}"


def _estimate_words(e) -> str:
    """``activity X's pessimistic estimate rose from 12 to 20`` (each part that changed)."""
    said = []
    for part, a, b in zip(_PARTS, e.old, e.new):
        if a == b:
            continue
        way = "rose" if b > a else "fell"
        said.append(f"{part} {'estimate ' if not said else ''}{way} from {_n(a)} to {_n(b)}")
    return f"activity {e.id}'s " + " and its ".join(said)


def reasons(ch) -> list[str]:
    """The changes of the schedule itself, the largest first."""
    out = []
    ests = sorted(ch.estimates, key=lambda e: -abs(e.te_change))
    out += [_estimate_words(e) for e in ests[:NAMED]]
    if len(ests) > NAMED:
        out.append(f"{len(ests) - NAMED} more estimates changed")
    if ch.joined:
        out.append(f"{_list([m.id for m in ch.joined])} joined the critical path")
    if ch.left:
        out.append(f"{_list([m.id for m in ch.left])} left the critical path")
    if ch.added:
        out.append(f"activities {_list([k for k, _ in ch.added])} were added")
    if ch.removed:
        out.append(f"activities {_list([k for k, _ in ch.removed])} were removed")
    return out


def account(ch) -> str:
    """The paragraph: the headline move, its reasons, the other finish, the settings.

    Examples
    --------
    See :func:`converter.compare.changes.compare_runs` and tests/compare/.
    """
    said = reasons(ch)
    if not said:
        text = headline(ch) + "; no estimate, activity or critical-path change."
    elif len(said) == 1:
        text = f"{headline(ch)}: {said[0]}."
    else:
        text = f"{headline(ch)}: {', '.join(said[:-1])}, and {said[-1]}."
    cpm = next((f for f in ch.figures if f.key == "cpm_finish"), None)
    if cpm is not None and cpm.change is not None and abs(cpm.change) >= 0.005:
        way = "later" if cpm.change > 0 else "earlier"
        text += (
            f" The expected finish on the critical path moved {_n(abs(cpm.change))} "
            f"{ch.new.time_unit} {way}, from {_n(cpm.old)} to {_n(cpm.new)}."
        )
    if ch.differ:
        diffs = "; ".join(
            f"{k.lower()} {old} -> {new}" for k, old, new in ch.settings if k in ch.differ
        )
        text += f" The runs' settings differ: {diffs}."
        chance = [k.lower() for k in ch.differ if k in ("Seed", "Iterations")]
        if chance:
            text += (
                f" A different {' and '.join(chance)} alone moves the simulated figures slightly."
            )
    status = ch.new.status or {}
    if status.get("status_date"):
        text += f" Status date of the new run: {shown(status['status_date'])}."
    return text
