"""Validate: raw sheets -> a Schedule, or every problem at once, each with its cell.

Nothing here stops at the first problem: the whole input is checked and all problems
are returned together, errors (which block the analysis) and warnings (which go into
the output). The steps, one module each:

- :mod:`~converter.validate.settings`: the settings sheet, resolved against the command
  line (the rules for each option are in :mod:`converter.options`);
- :mod:`~converter.validate.activities`: the activity sheet's columns and rows;
- :mod:`~converter.validate.links`: predecessor tokens, a links sheet, cycles;
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
from converter.validate.problems import Collector
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
    rows = read_activities(match, settings, out)
    if not rows.activities and not out.has("blank-id", "duplicate-id"):
        out.error(
            "empty",
            "no activities below the header row",
            match.sheet.name,
            cell_name(match.header_row + 1, match.columns["id"]),
            fix="Add one row per activity under the header.",
        )
        return None, out.problems
    book = LinkBook({a.id for a in rows.activities}, out)
    if "predecessors" in match.columns:
        read_predecessor_column(book, rows.activities, rows.predecessor_cells, match)
    if raw.links is not None:
        read_links_sheet(book, raw.links)
    risks = []
    if raw.risks is not None:
        risks = read_risks(raw.risks, settings, {a.id for a in rows.activities}, out)
    check_cycles(rows.activities, book.links, out)
    warn_unlinked(rows.activities, book.links, match, out)
    if not out.errors:  # the sum of sane numbers: only once each of them is sane
        check_dates_fit(rows.activities, book.links, settings, places, match, out)
    if out.errors:
        return None, out.problems
    schedule = Schedule(
        activities=rows.activities,
        links=book.links,
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
        notes=list(raw.notes),
        risks=risks,
        risk_sheet=raw.risks.sheet.name if raw.risks is not None else None,
    )
    return schedule, out.problems
