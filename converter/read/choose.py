"""Which sheet is which: the activity list by its headers, the settings and links sheets by
name and headers; and what the reader says about the choice.

Besides the choice itself, the reader reports:

- what was searched and why each sheet was passed over (``RawInput.searched``), and a
  header row found below the rows searched (an error naming its cell);
- a field named by two columns (two "Most likely" columns): a warning naming both cells;
  the first column is used;
- an error value (``#DIV/0!``, ``#N/A``) in a column pertbook reads: an error naming the
  cell (at most :data:`MAX_ERROR_CELLS` per sheet, then one line for the rest).
"""

from __future__ import annotations

from converter.model import ERROR, WARNING, Problem
from converter.read.extent import CellError
from converter.read.ranges import RANGE_COLUMNS, choose_ranges, is_ranges_sheet
from converter.read.sheets import (
    ACTIVITY_ALIASES,
    ACTIVITY_COLUMNS,
    ACTIVITY_SHEET_NAMES,
    HEADER_SEARCH_ROWS,
    LINK_ALIASES,
    LINK_COLUMNS,
    LINK_SHEET_NAMES,
    SETTINGS_SHEET_NAMES,
    RawInput,
    SheetData,
    TableMatch,
    cell_name,
    match_header,
    named,
)
from converter.values import id_text, is_blank

#: Rows searched, beyond the first HEADER_SEARCH_ROWS, to explain a header found too low.
DEEP_SEARCH_ROWS = 10_000
#: Error cells reported one by one on each sheet.
MAX_ERROR_CELLS = 50


def complete(match: TableMatch | None) -> bool:
    """Whether a header row has the columns an activity list cannot do without (an ID, and
    a most likely estimate or a single duration)."""
    return (
        match is not None
        and "id" in match.columns
        and ("most_likely" in match.columns or "duration" in match.columns)
    )


def choose_sheets(raw: RawInput) -> list[Problem]:
    """Set ``raw.activity``, ``raw.settings``, ``raw.links``; return the reader's problems."""
    from converter.read.risks import find_risk_sheet

    raw.risks = find_risk_sheet(raw)
    register = raw.risks.sheet if raw.risks is not None else None
    settings = [s for s in raw.sheets if named(s, SETTINGS_SHEET_NAMES)]
    raw.settings = settings[0] if settings else None
    choose_ranges(raw)
    candidates: list[tuple[tuple, TableMatch]] = []
    settings_match = None
    for pos, sheet in enumerate(raw.sheets):
        if sheet is register:
            continue
        m = match_header(sheet, ACTIVITY_ALIASES)
        if sheet is raw.settings:
            settings_match = m
            continue
        if is_ranges_sheet(raw, sheet):
            raw.searched.append(f"{sheet.name}: passed over as the range classes sheet.")
            continue
        if m is None:
            raw.searched.append(
                f"{sheet.name}: passed over, no row names two or more activity columns."
            )
            continue
        has_required = sum(
            k in m.columns for k in ("id", "optimistic", "most_likely", "pessimistic")
        )
        rank = (has_required, named(sheet, ACTIVITY_SHEET_NAMES), m.score(), -pos)
        candidates.append((rank, m))
    if complete(settings_match) and not any(complete(m) for _, m in candidates):
        _settings_as_activity(raw, settings_match, candidates, settings)
    elif raw.settings is not None:
        found = (
            f" (its row {settings_match.header_row + 1} names activity columns)"
            if settings_match
            else ""
        )
        raw.searched.append(
            f"{raw.settings.name}: passed over as the settings sheet, by its name{found}."
        )
    if candidates:
        candidates.sort(key=lambda t: t[0], reverse=True)
        raw.activity = candidates[0][1]
        _note_activity_choice(raw, candidates)
    _choose_links(raw)
    problems: list[Problem] = []
    if not complete(raw.activity):
        problems.extend(_header_too_low(raw))
    for match in (raw.activity, raw.links, raw.ranges):
        if match is not None:
            problems.extend(_duplicate_columns(match))
    problems.extend(_error_cells(raw))
    return problems


def _settings_as_activity(
    raw: RawInput, match: TableMatch, candidates: list, settings: list[SheetData]
) -> None:
    """A sheet named like a settings sheet that holds the only activity list is read as one."""
    sheet = match.sheet
    raw.settings = next((s for s in settings if s is not sheet), None)
    candidates.append(((9, True, match.score(), 0), match))
    raw.notes.append(
        f"Activity sheet: {sheet.name} (its name is one for a settings sheet, "
        "but it holds the activity columns and no other sheet does)."
    )


def _note_activity_choice(raw: RawInput, candidates: list) -> None:
    rank, chosen = candidates[0]
    for _, m in candidates[1:]:
        raw.searched.append(
            f"{m.sheet.name}: passed over, {chosen.sheet.name} names more of "
            "the required columns or is named as the activity list."
        )
    if len(raw.sheets) > 1 and rank[0] != 9:
        why = (
            "its name and its column headers mark it as the activity list"
            if rank[1]
            else "it has the most recognised column headers"
        )
        raw.notes.append(
            f"Activity sheet: {chosen.sheet.name} (of {len(raw.sheets)} sheets; {why})."
        )


def _choose_links(raw: RawInput) -> None:
    for sheet in raw.sheets:
        if sheet is raw.settings or (raw.activity and sheet is raw.activity.sheet):
            continue
        if is_ranges_sheet(raw, sheet) or (raw.risks is not None and sheet is raw.risks.sheet):
            continue
        m = match_header(sheet, LINK_ALIASES)
        if m and "pred" in m.columns and "succ" in m.columns:
            if raw.links is None or named(sheet, LINK_SHEET_NAMES):
                raw.links = m
    if raw.links:
        raw.notes.append(f"Links sheet: {raw.links.sheet.name}.")
    if raw.settings:
        raw.notes.append(f"Settings sheet: {raw.settings.name}.")
    if raw.risks:
        raw.notes.append(f"Risk register: {raw.risks.sheet.name}.")


def _header_too_low(raw: RawInput) -> list[Problem]:
    """An error for an activity header row found below the rows searched."""
    for sheet in raw.sheets:
        if sheet is raw.settings:
            continue
        m = match_header(
            sheet, ACTIVITY_ALIASES, HEADER_SEARCH_ROWS, HEADER_SEARCH_ROWS + DEEP_SEARCH_ROWS
        )
        if complete(m):
            names = ", ".join(h for h in m.headers if h)
            return [
                Problem(
                    ERROR,
                    "header-too-low",
                    f"the header row ({names}) is on row {m.header_row + 1}, but pertbook looks "
                    f"for it only in the first {HEADER_SEARCH_ROWS} rows of each sheet",
                    sheet.name,
                    cell_name(m.header_row, 0),
                    fix=f"Delete the rows above the header (or move the table up) so that the "
                    f"header is within the first {HEADER_SEARCH_ROWS} rows.",
                )
            ]
    return []


def _title(key: str) -> str:
    """A column's name for a message: its first spelling, or ``key`` itself (a header as
    written)."""
    words = ACTIVITY_COLUMNS.get(key) or LINK_COLUMNS.get(key) or RANGE_COLUMNS.get(key) or (key,)
    return words[0].capitalize() if words != (key,) else key


def _duplicate_columns(match: TableMatch) -> list[Problem]:
    out = []
    seen: set[str] = set()
    for key, used, other in match.duplicates:
        if key in seen:
            continue
        seen.add(key)
        first, second = cell_name(match.header_row, used), cell_name(match.header_row, other)
        out.append(
            Problem(
                WARNING,
                "duplicate-column",
                f'two columns are headed as "{_title(key)}": {first} ("{match.headers[used]}") and '
                f'{second} ("{match.headers[other]}"); the first, {first}, is used',
                match.sheet.name,
                second,
                fix="Rename or delete one of the two columns.",
            )
        )
    return out


def _error_cells(raw: RawInput) -> list[Problem]:
    """Errors for error values in the columns pertbook reads (activity, links, settings)."""
    places: list[tuple[SheetData, int, dict[str, int], int | None]] = []
    for match in (raw.activity, raw.links, raw.risks):
        if match is not None:
            ident = match.columns.get("id")
            places.append((match.sheet, match.header_row + 1, match.columns, ident))
    if raw.settings is not None:
        places.append((raw.settings, 0, {"label": 0, "value": 1}, None))
    out: list[Problem] = []
    for sheet, first, columns, ident_col in places:
        if raw.risks is not None and sheet is raw.risks.sheet:  # its headers as written
            head = sheet.rows[first - 1]
            columns = {str(head[c]).strip(): c for c in columns.values()}
        if not sheet.error_cells:
            continue
        found = 0
        for r in range(first, len(sheet.rows)):
            row = sheet.rows[r]
            for key, c in columns.items():
                value = row[c] if c < len(row) else None
                if not isinstance(value, CellError):
                    continue
                found += 1
                if found <= MAX_ERROR_CELLS:
                    out.append(_error_problem(sheet, r, c, key, value, row, ident_col))
        if found > MAX_ERROR_CELLS:
            out.append(
                Problem(
                    ERROR,
                    "error-value",
                    f"{found - MAX_ERROR_CELLS:,} more cells hold error values",
                    sheet.name,
                )
            )
    return out


def _error_problem(
    sheet: SheetData, r: int, c: int, key: str, value: CellError, row: list, ident_col: int | None
) -> Problem:
    ident = row[ident_col] if ident_col is not None and ident_col < len(row) else None
    activity = None if is_blank(ident) or isinstance(ident, CellError) else id_text(ident)
    what = {"label": "the setting's label", "value": "the setting's value"}.get(
        key, f"the {_title(key)} cell"
    )
    return Problem(
        ERROR,
        "error-value",
        f"{what} holds the error value {value.code} (a formula that failed), not a value",
        sheet.name,
        cell_name(r, c),
        activity,
        fix="Correct the formula, or type the value itself.",
    )
