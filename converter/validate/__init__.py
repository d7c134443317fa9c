"""Validate: raw sheets -> a Schedule, or every problem at once, each with its cell.

Nothing here stops at the first problem: the whole input is checked and all problems
are returned together, errors (which block the analysis) and warnings (which go into
the output). The steps, one module each:

- :mod:`~converter.validate.settings`: the settings sheet, resolved against the command
  line (the rules for each option are in :mod:`converter.options`);
- :mod:`~converter.validate.activities`: the activity sheet's columns and rows;
- :mod:`~converter.validate.links`: predecessor tokens, a links sheet, cycles;
- :mod:`~converter.validate.outline`: WBS summary rows and the links written on them.
- :mod:`~converter.validate.risks`: the risk register.
"""

from __future__ import annotations

from converter.model import Problem, RawTable, Schedule
from converter.options import ConvertOptions
from converter.read.sheets import RawInput, cell_name
from converter.validate.activities import check_columns, read_activities
from converter.validate.bounds import check_dates_fit
from converter.validate.links import (
    LinkBook,
    check_cycles,
    read_links_sheet,
    read_predecessor_column,
    warn_unlinked,
)
from converter.validate.outline import (
    expand_summary_links,
    place_activities,
    read_outline,
)
from converter.validate.problems import Collector
from converter.validate.progress import warn_out_of_sequence
from converter.validate.ranges import read_range_classes
from converter.validate.risks import read_risks
from converter.validate.settings import resolve_settings

__all__ = ["validate"]


def validate(
    raw: RawInput, options: ConvertOptions | None = None
) -> tuple[Schedule | None, list[Problem]]:
    """Check everything; return the Schedule (None if any error) and all problems.

    Parameters
    ----------
    raw
        The sheets read from one file, with the activity, links and settings sheets chosen.
    options
        The caller's options, which override the settings sheet.

    Returns
    -------
    (Schedule or None, problems)
        The schedule only when there is no error; the problems in the order found.
    """
    out = Collector()
    settings, setting_problems, places = resolve_settings(raw.settings, options)
    out.problems.extend(setting_problems)
    if not check_columns(raw, out):
        return None, out.problems
    match = raw.activity
    outline = read_outline(match, out)
    ranges = read_range_classes(raw.ranges, raw.ranges_unreadable, settings, places, out)
    skip = outline.summary_rows if outline else frozenset()
    rows = read_activities(match, settings, out, ranges, skip)
    if not rows.activities and not out.has("blank-id", "duplicate-id"):
        out.error(
            "empty",
            "no activities below the header row",
            match.sheet.name,
            cell_name(match.header_row + 1, match.columns["id"]),
            fix="Add one row per activity under the header.",
        )
        return None, out.problems
    summaries = outline.summaries if outline else []
    if outline is not None:
        place_activities(outline, rows.activities, out, match.sheet.name)
    book = LinkBook({a.id for a in rows.activities} | {s.id for s in summaries}, out)
    if "predecessors" in match.columns:
        read_predecessor_column(book, rows.activities, rows.predecessor_cells, match, settings)
        if outline is not None:
            read_predecessor_column(book, summaries, outline.summary_cells, match, settings)
    if raw.links is not None:
        read_links_sheet(book, raw.links, settings)
    risks = []
    if raw.risks is not None:
        risks = read_risks(raw.risks, settings, {a.id for a in rows.activities}, out)
    links = expand_summary_links(book.links, rows.activities, summaries, out)
    check_cycles(rows.activities, links, out)
    warn_unlinked(rows.activities, links, match, out)
    warn_out_of_sequence(rows.activities, links, match, out)
    if not out.errors:  # the sum of sane numbers: only once each of them is sane
        check_dates_fit(rows.activities, links, settings, places, match, out)
    if out.errors:
        return None, out.problems
    schedule = Schedule(
        activities=rows.activities,
        links=links,
        settings=settings,
        input_file=str(raw.path),
        sha256=raw.sha256,
        sheet=match.sheet.name,
        raw=RawTable(
            sheet=match.sheet.name,
            header_row=match.header_row + 1,
            headers=match.headers,
            rows=match.sheet.rows[match.header_row + 1 :],
            first_row=match.header_row + 2,
        ),
        warnings=out.warnings,
        notes=list(raw.notes) + _unused_ranges(ranges),
        summaries=summaries,
        ranges=list(ranges.used.values()),
        risks=risks,
        risk_sheet=raw.risks.sheet.name if raw.risks is not None else None,
    )
    return schedule, out.problems


def _unused_ranges(ranges) -> list[str]:
    """A note naming the range classes defined but used by no activity."""
    unused = ranges.unused()
    if not unused:
        return []
    return [
        f"Range classes defined on {ranges.sheet} but used by no activity: {', '.join(unused)}."
    ]
