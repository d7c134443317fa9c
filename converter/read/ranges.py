"""The range classes sheet: which sheet it is and its header row.

A range class gives low / most likely / high in percent of an activity's single duration
(the Duration column). The classes are on a sheet named ``Ranges`` (or ``Range classes``)
with the columns ``Range``, ``Low %``, ``Likely %``, ``High %``; like the links sheet, it
is found by its header row, and a sheet with that name is preferred. The values are read
in :mod:`converter.validate.ranges`.
"""

from __future__ import annotations

from converter.read.sheets import RawInput, SheetData, TableMatch, match_header, named
from converter.values import normalise

__all__ = ["RANGE_COLUMNS", "RANGE_SHEET_NAMES", "choose_ranges", "is_ranges_sheet", "range_match"]

#: Accepted header spellings for each column of the range classes sheet.
RANGE_COLUMNS: dict[str, tuple[str, ...]] = {
    "range": ("range", "range class", "class", "uncertainty"),
    "low": ("low %", "low", "low percent", "optimistic %"),
    "likely": ("likely %", "likely", "most likely %", "likely percent"),
    "high": ("high %", "high", "high percent", "pessimistic %"),
}
RANGE_SHEET_NAMES = ("ranges", "range classes", "range class", "ranges classes")
RANGE_ALIASES = {normalise(a): k for k, v in RANGE_COLUMNS.items() for a in v}


def range_match(sheet: SheetData) -> TableMatch | None:
    """The sheet's header row of a range classes table (all four columns), or None.

    Examples
    --------
    >>> sheet = SheetData("Ranges", [["Range", "Low %", "Likely %", "High %"], ["Low", 90]])
    >>> range_match(sheet).columns
    {'range': 0, 'low': 1, 'likely': 2, 'high': 3}
    """
    m = match_header(sheet, RANGE_ALIASES)
    if m is None or any(k not in m.columns for k in RANGE_COLUMNS):
        return None
    return m


def choose_ranges(raw: RawInput) -> None:
    """Set ``raw.ranges`` (a sheet named Ranges preferred) or ``raw.ranges_unreadable``.

    Called before the activity sheet is chosen: the sheet found is not an activity list.
    """
    for sheet in raw.sheets:
        m = range_match(sheet)
        if m is not None and (raw.ranges is None or named(sheet, RANGE_SHEET_NAMES)):
            if raw.ranges is None or not named(raw.ranges.sheet, RANGE_SHEET_NAMES):
                raw.ranges = m
    if raw.ranges is not None:
        raw.notes.append(f"Range classes sheet: {raw.ranges.sheet.name}.")
        return
    raw.ranges_unreadable = next((s for s in raw.sheets if named(s, RANGE_SHEET_NAMES)), None)


def is_ranges_sheet(raw: RawInput, sheet: SheetData) -> bool:
    """Whether ``sheet`` is the range classes sheet (or one named so): never an activity
    list or a links sheet."""
    found = raw.ranges.sheet if raw.ranges is not None else raw.ranges_unreadable
    return sheet is found
