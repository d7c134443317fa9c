"""The activity sheet: its columns, then one Activity per row with its estimates.

Each row is read whole even when it has a problem, so that every problem of the sheet is
reported at once; a row with problems still gives an Activity (zero durations) so that
its links can be checked too, but the schedule is then refused.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

from converter.model import Activity, Settings
from converter.options import DurationWithUnit, parse_distribution, parse_due, parse_duration
from converter.read.sheets import (
    ACTIVITY_COLUMNS,
    REQUIRED_ACTIVITY,
    CellError,
    RawInput,
    SheetData,
    TableMatch,
    cell_name,
)
from converter.validate.problems import Collector
from converter.validate.progress import read_progress
from converter.validate.ranges import RangeBook, range_estimates, read_duration
from converter.validate.units import UNIT_FIX, as_converted, in_time_units
from converter.values import (
    LARGEST_DURATION,
    UnitError,
    id_text,
    is_blank,
    shown,
)

FIELD_TITLES = {
    "id": "ID",
    "name": "Description",
    "predecessors": "Predecessors",
    "optimistic": "Optimistic",
    "most_likely": "Most likely",
    "pessimistic": "Pessimistic",
}
ESTIMATES = ("optimistic", "most_likely", "pessimistic")


# --------------------------------------------------------------------------- columns
def fixed_durations_only(match: TableMatch | None) -> bool:
    """A sheet with neither an Optimistic nor a Pessimistic column: fixed durations."""
    return match is not None and not {"optimistic", "pessimistic"} & set(match.columns)


def durations_only(match: TableMatch | None) -> bool:
    """A sheet with a Duration column and no O, M or P column: estimates from ranges."""
    return (
        match is not None
        and "duration" in match.columns
        and not set(ESTIMATES) & set(match.columns)
    )


def check_columns(raw: RawInput, out: Collector) -> bool:
    """Whether the activity sheet has every column needed; a problem when it has not."""
    match = raw.activity
    fixed_only = fixed_durations_only(match)
    duration_only = durations_only(match)
    needed = [
        k
        for k in REQUIRED_ACTIVITY
        if not (fixed_only and k in ("optimistic", "pessimistic"))
        and not (duration_only and k in ESTIMATES)
    ]
    if match is None or any(k not in match.columns for k in needed):
        sheet = (
            match.sheet if match else next((s for s in raw.sheets if not s.empty), raw.sheets[0])
        )
        found = match.headers if match else _first_nonblank_row(sheet)
        present = set(match.columns) if match else set()
        missing = [FIELD_TITLES[k] for k in REQUIRED_ACTIVITY if k not in present]
        if "predecessors" not in present and raw.links is None:
            missing.append(FIELD_TITLES["predecessors"])
        out.error(
            "missing-column",
            f"required column(s) missing: {', '.join(missing)}; headers found: "
            f"{_header_list(found) or '(none)'}" + _searched(raw),
            sheet.name,
            cell_name(match.header_row, 0) if match else "A1",
            fix="Name the columns e.g. "
            + ", ".join(
                ACTIVITY_COLUMNS[k][0].title()
                for k in ("id", "predecessors", "optimistic", "most_likely", "pessimistic")
            ),
        )
        return False
    if "predecessors" not in match.columns and raw.links is None:
        out.error(
            "missing-column",
            "required column missing: Predecessors (and no links sheet); headers found: "
            + _header_list(match.headers)
            + _searched(raw),
            match.sheet.name,
            cell_name(match.header_row, 0),
        )
        return False
    if fixed_only and "duration" not in match.columns:
        out.warn(
            "fixed-durations",
            "no Optimistic or Pessimistic column: every duration is "
            "fixed at its Most likely value, so the chances shown carry no spread",
            match.sheet.name,
            cell_name(match.header_row, match.columns["most_likely"]),
            fix="Add Optimistic and Pessimistic columns for a risk analysis.",
        )
    return True


def _searched(raw: RawInput) -> str:
    """What the reader searched and why it passed sheets over, as a sentence to append."""
    summary = raw.search_summary()
    return f". {summary}" if summary else ""


def _header_list(headers: list[str]) -> str:
    return ", ".join(f'"{" ".join(h.split())}"' for h in headers if h)


def _first_nonblank_row(sheet: SheetData) -> list[str]:
    for row in sheet.rows:
        if any(not is_blank(v) for v in row):
            return ["" if is_blank(v) else str(v) for v in row]
    return []


# --------------------------------------------------------------------------- rows
@dataclass
class ActivityRows:
    """The activities read from the sheet and each one's (row, predecessor cell value)."""

    activities: list[Activity] = field(default_factory=list)
    predecessor_cells: list[tuple[int, object]] = field(default_factory=list)


def read_activities(
    match: TableMatch,
    settings: Settings,
    out: Collector,
    ranges: RangeBook | None = None,
    skip: frozenset[int] = frozenset(),
) -> ActivityRows:
    """One Activity per non-blank row below the header; every row's problems recorded.

    ``ranges``: the range classes and default range (:mod:`converter.validate.ranges`).
    ``skip``: 0-based sheet rows that are not activities (WBS summary rows).
    """
    cols = match.columns
    ranges = ranges if ranges is not None else RangeBook()
    sheet = match.sheet.name
    found = ActivityRows()
    first_row_of: dict[str, int] = {}
    for offset, row in enumerate(match.sheet.rows[match.header_row + 1 :]):
        r = match.header_row + 1 + offset
        if r in skip or all(is_blank(row[c]) for c in cols.values() if c < len(row)):
            continue
        raw_id = _cell(row, cols, "id")
        if is_blank(raw_id):
            out.error(
                "blank-id",
                "this row has data but no activity ID",
                sheet,
                cell_name(r, cols["id"]),
                fix="Give the activity an ID or delete the row.",
            )
            _estimates(row, cols, r, sheet, None, settings, ranges, out)  # its other problems
            continue
        ident = id_text(raw_id)
        if ident in first_row_of:
            out.error(
                "duplicate-id",
                f'ID "{ident}" is used again (first on row {first_row_of[ident] + 1})',
                sheet,
                cell_name(r, cols["id"]),
                ident,
                fix="Every activity needs its own ID.",
            )
            _estimates(row, cols, r, sheet, ident, settings, ranges, out)
            continue
        first_row_of[ident] = r
        found.activities.append(_activity(row, cols, r, sheet, ident, settings, ranges, out))
        found.predecessor_cells.append((r, _cell(row, cols, "predecessors")))
    return found


def _cell(row: list, cols: dict[str, int], key: str) -> object:
    c = cols.get(key)
    if c is None or c >= len(row):
        return None
    return row[c]


def _activity(row, cols, r, sheet, ident, settings: Settings, ranges, out: Collector) -> Activity:
    """The Activity of one row (zero durations when its estimates have problems)."""
    est, duration, rc = _estimates(row, cols, r, sheet, ident, settings, ranges, out)
    o, m, p = (0.0, 0.0, 0.0) if est is None else est[:3]
    name_raw = _cell(row, cols, "name")
    name = ident if is_blank(name_raw) else str(name_raw).strip()
    dist = None
    d_raw = _cell(row, cols, "distribution")
    if not is_blank(d_raw) and not isinstance(d_raw, CellError):
        try:
            dist = parse_distribution(d_raw)
        except ValueError as exc:
            out.error(
                "bad-distribution", str(exc), sheet, cell_name(r, cols["distribution"]), ident
            )
    group_raw = _cell(row, cols, "group")
    group = None if is_blank(group_raw) or isinstance(group_raw, CellError) else id_text(group_raw)
    target = _target(_cell(row, cols, "target"), cols, r, sheet, ident, settings, out)
    progress = read_progress(row, cols, r, sheet, ident, settings, out)
    return Activity(
        ident,
        name,
        o,
        m,
        p,
        row=r + 1,
        distribution=dist,
        group=group,
        target=target,
        duration=duration,
        range=None if rc is None else rc.name,
        range_percent=None if rc is None else (rc.low, rc.likely, rc.high),
        **progress,
    )


def _estimates(row, cols, r, sheet, ident, settings: Settings, ranges: RangeBook, out):
    """(O, M, P, fixed) or None, the Duration as read, and the range class that made them.

    Explicit O / M / P cells win over a Duration with a range (a warning when a range is
    then left unused); a row with a Duration and blank O / M / P takes its range.
    """
    duration, ok = read_duration(row, cols, r, sheet, ident, settings, out)
    omp_blank = all(is_blank(_cell(row, cols, k)) for k in ESTIMATES)
    if "duration" in cols and omp_blank and not is_blank(_cell(row, cols, "duration")):
        if not ok:
            return None, None, None
        est, rc = range_estimates(duration, row, cols, r, sheet, ident, ranges, out, settings)
        return est, duration, rc
    if "most_likely" not in cols:  # a sheet of durations; this row has none
        out.error(
            "no-estimates",
            "the activity has no Duration",
            sheet,
            cell_name(r, cols["duration"]),
            ident,
            fix="Fill in the Duration (and a Range), or delete the row.",
        )
        return None, None, None
    if not is_blank(_cell(row, cols, "range")) and not omp_blank:
        out.warn(
            "range-not-used",
            "Optimistic, Most likely and Pessimistic are given, so they are used and the "
            f"Range {shown(_cell(row, cols, 'range'))} is not",
            sheet,
            cell_name(r, cols["range"]),
            ident,
            fix="Clear the O / M / P cells to use the range, or clear the Range.",
        )
    return read_estimates(row, cols, r, sheet, ident, out, settings), duration, None


def _target(
    value, cols, r, sheet, ident, settings: Settings, out: Collector
) -> float | dt.date | None:
    """An interim target: a duration, or a date when there is a start date."""
    if is_blank(value) or isinstance(value, CellError):  # an error cell: the reader's error
        return None
    where = cell_name(r, cols["target"])
    try:
        target = parse_due(value)
        if isinstance(target, DurationWithUnit):  # e.g. 3w, in the time unit
            target = parse_duration(in_time_units(target.text, settings))
    except UnitError as exc:
        out.error("bad-unit", f"target: {exc}", sheet, where, ident, fix=UNIT_FIX)
        return None
    except ValueError as exc:
        out.error("bad-target", f"target: {exc}", sheet, where, ident)
        return None
    if isinstance(target, dt.date) and settings.start_date is None:
        out.error(
            "target-date-without-start",
            f"target {target.isoformat()} is a date but there is no start date",
            sheet,
            where,
            ident,
            fix="Add a 'Start date' setting or give the target as a duration.",
        )
        return None
    if isinstance(target, dt.date) and target < settings.start_date:
        out.warn(
            "target-before-start",
            f"target {target.isoformat()} is before the start date "
            f"{settings.start_date.isoformat()}: the chance of meeting it is 0%",
            sheet,
            where,
            ident,
            fix="Check the year of the target date.",
        )
    return target


# --------------------------------------------------------------------------- estimates
def _estimate_values(row, cols, r, sheet, ident, out: Collector, settings=None) -> dict | None:
    """O, M, P cells as numbers (None where blank); None when one is not a valid number."""
    values: dict[str, float | None] = {}
    bad = False
    for key in ESTIMATES:
        c = cols.get(key)
        raw = row[c] if c is not None and c < len(row) else None
        if is_blank(raw):
            values[key] = None
            continue
        if isinstance(raw, CellError):  # the reader's error-value names the cell
            bad = True
            continue
        where = cell_name(r, c)
        try:
            x = in_time_units(raw, settings)
        except UnitError as exc:
            out.error(
                "bad-unit", f"{FIELD_TITLES[key]} estimate {exc}", sheet, where, ident, fix=UNIT_FIX
            )
            bad = True
            continue
        except ValueError as exc:
            dated = isinstance(raw, (dt.date, dt.time, dt.timedelta))
            out.error(
                "not-a-number",
                f"{FIELD_TITLES[key]} estimate {exc}",
                sheet,
                where,
                ident,
                fix="Format the cell as a number, not a date or time, and type "
                "the duration in time units."
                if dated
                else "Type a number of time units, or a number with a unit (16h, 3d, 2w).",
            )
            bad = True
            continue
        if x < 0:
            out.error(
                "negative-estimate",
                f"{FIELD_TITLES[key]} estimate {as_converted(raw, x, settings)} is negative",
                sheet,
                where,
                ident,
                fix="Durations cannot be negative.",
            )
            bad = True
        elif x > LARGEST_DURATION:
            out.error(
                "too-large",
                f"{FIELD_TITLES[key]} estimate {as_converted(raw, x, settings)} is more than "
                f"{LARGEST_DURATION:,.0f} time units, the longest duration pertbook "
                "computes with",
                sheet,
                where,
                ident,
                fix="Check the number and the time unit of the schedule.",
            )
            bad = True
        else:
            values[key] = x
    return None if bad else values


def read_estimates(row, cols, r, sheet, ident, out: Collector, settings: Settings | None = None):
    """(O, M, P, fixed) of one row in the schedule's time unit, or None with its problems
    recorded. A cell may carry a unit (``16h``, ``3d``, ``2w``), converted with ``settings``."""
    values = _estimate_values(row, cols, r, sheet, ident, out, settings)
    if values is None:
        return None
    o, m, p = values["optimistic"], values["most_likely"], values["pessimistic"]
    m_cell = cell_name(r, cols["most_likely"])
    if o is None and m is None and p is None:
        out.error(
            "no-estimates",
            "the activity has no duration estimates",
            sheet,
            m_cell,
            ident,
            fix="Fill in Optimistic, Most likely and Pessimistic (or Most likely alone "
            "for a fixed duration).",
        )
        return None
    if m is None:
        out.error(
            "missing-most-likely",
            "the most likely estimate is blank",
            sheet,
            m_cell,
            ident,
            fix="Fill in the Most likely estimate.",
        )
        return None
    if o is None and p is None:
        if m == 0 or "optimistic" not in cols:  # a milestone / a sheet of fixed durations
            return m, m, m, True
        typed = as_converted(_cell(row, cols, "most_likely"), m, settings)
        out.warn(
            "deterministic",
            f"only a most likely value ({typed}) is given: treated as a fixed duration (O = M = P)",
            sheet,
            m_cell,
            ident,
        )
        return m, m, m, True
    if o is None or p is None:
        key = "optimistic" if o is None else "pessimistic"
        out.error(
            "missing-estimate",
            f"the {FIELD_TITLES[key].lower()} estimate is blank",
            sheet,
            cell_name(r, cols[key]),
            ident,
            fix="Give all three estimates, or only Most likely for a fixed duration.",
        )
        return None
    if not _in_order(o, m, p, cell_name(r, cols["pessimistic"]), m_cell, sheet, ident, out):
        return None
    if o == m == p and m > 0:
        out.warn(
            "deterministic",
            f"O = M = P = {shown(m)}: a fixed duration with no spread",
            sheet,
            m_cell,
            ident,
        )
    return o, m, p, o == m == p


def _in_order(o, m, p, p_cell, m_cell, sheet, ident, out: Collector) -> bool:
    """O <= M <= P, each violation a problem at the cell that breaks it."""
    ok = True
    if m < o:
        out.error(
            "order",
            f"most likely {shown(m)} is less than optimistic {shown(o)} (need O <= M <= P)",
            sheet,
            m_cell,
            ident,
            fix="Check the order of the three estimates.",
        )
        ok = False
    if p < m:
        out.error(
            "order",
            f"pessimistic {shown(p)} is less than most likely {shown(m)} (need O <= M <= P)",
            sheet,
            p_cell,
            ident,
            fix="Check the order of the three estimates.",
        )
        ok = False
    if p < o and ok:
        out.error(
            "order",
            f"pessimistic {shown(p)} is less than optimistic {shown(o)}",
            sheet,
            p_cell,
            ident,
        )
        ok = False
    return ok
