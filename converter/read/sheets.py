"""Files -> sheets of raw values with their places; header matching.

What the other stages use from the reader: :func:`read_input`, the sheets it gives
(:class:`SheetData`, :class:`TableMatch`, :class:`RawInput`) and the header spellings.
Workbooks (.xlsx .xlsm .xls .ods) are read with python-calamine, after the checks of
:mod:`converter.read.load`; .csv with the standard csv module as text (ragged rows and
title lines above the header are common in exported CSV files). Values keep their sheet
position (row 0 = sheet row 1, column 0 = column A) so every problem can name its cell,
and are kept as written: text stays text (``NA`` and ``None`` too), an error cell is a
:class:`~converter.read.extent.CellError`. Which sheet is which is decided in
:mod:`converter.read.choose`. The reader only reads: it never writes to or moves the input.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from xlsxwriter.utility import xl_rowcol_to_cell

from converter.model import ERROR, Problem
from converter.read.extent import CellError
from converter.read.limits import ReadLimits
from converter.values import is_blank, normalise

__all__ = [
    "ACTIVITY_COLUMNS",
    "CellError",
    "LINK_COLUMNS",
    "REQUIRED_ACTIVITY",
    "RawInput",
    "ReadLimits",
    "ReadResult",
    "SheetData",
    "TableMatch",
    "cell_name",
    "match_header",
    "read_input",
    "read_sheets",
]

#: Accepted header spellings for each activity column (compared after `normalise`).
ACTIVITY_COLUMNS: dict[str, tuple[str, ...]] = {
    "id": ("id", "activity", "activity id", "task id", "code", "activity code", "wbs id"),
    "name": ("task", "name", "description", "activity name", "task name", "activity description"),
    "predecessors": (
        "predecessors",
        "predecessor",
        "depends on",
        "after",
        "preceded by",
        "dependencies",
    ),
    "optimistic": ("optimistic", "o", "a", "min", "best", "best case", "optimistic duration"),
    "most_likely": ("most likely", "likely", "m", "mode", "most likely duration", "ml"),
    "pessimistic": ("pessimistic", "p", "b", "max", "worst", "worst case", "pessimistic duration"),
    "distribution": ("distribution", "dist", "shape"),
    "group": ("group", "correlation group", "risk group"),
    "target": ("target", "interim target", "target date", "target finish"),
    "wbs": (
        "wbs",
        "outline",
        "wbs code",
        "outline number",
        "outline code",
        "outline level code",
        "wbs number",
        "wbs element",
    ),
    "duration": ("duration", "planned duration", "baseline duration"),
    "range": ("range", "range class", "uncertainty"),
    "not_before": ("not before", "start no earlier than", "earliest start date", "not before date"),
    "actual_start": ("actual start", "actual start date", "started on"),
    "actual_finish": ("actual finish", "actual finish date", "actual end", "finished on"),
    "remaining": ("remaining", "remaining duration", "remaining work"),
    "remaining_optimistic": ("remaining optimistic", "remaining o"),
    "remaining_most_likely": ("remaining most likely", "remaining m", "remaining likely"),
    "remaining_pessimistic": ("remaining pessimistic", "remaining p"),
}
REQUIRED_ACTIVITY = ("id", "optimistic", "most_likely", "pessimistic")

LINK_COLUMNS: dict[str, tuple[str, ...]] = {
    "pred": ("predecessor", "from", "pred", "from activity", "predecessor id"),
    "succ": ("successor", "to", "succ", "to activity", "successor id"),
    "type": ("type", "relation", "link type", "relationship", "relation type"),
    "lag": ("lag", "lead/lag", "lag/lead", "lead lag", "delay"),
}

ACTIVITY_SHEET_NAMES = ("activities", "activity", "tasks", "task", "schedule", "activity list")
SETTINGS_SHEET_NAMES = ("settings", "options", "parameters", "project settings", "setup")
LINK_SHEET_NAMES = ("links", "relationships", "dependencies", "logic", "link list")

#: Rows of each sheet searched for the header row.
HEADER_SEARCH_ROWS = 30

ACTIVITY_ALIASES = {normalise(a): k for k, v in ACTIVITY_COLUMNS.items() for a in v}
LINK_ALIASES = {normalise(a): k for k, v in LINK_COLUMNS.items() for a in v}
LINK_ALIASES["lead/lag"] = "lag"
_ALIASES_ACT, _ALIASES_LINK = ACTIVITY_ALIASES, LINK_ALIASES  # the former names


def cell_name(row: int, col: int) -> str:
    """Zero-based row/column to an A1 reference (``0, 2`` -> ``C1``)."""
    return xl_rowcol_to_cell(row, col)


@dataclass
class SheetData:
    """One sheet's values from A1; blanks are ``None``, error cells CellError."""

    name: str
    rows: list[list[object]]
    #: How many cells hold an error value (CellError); 0 lets checks skip the sheet.
    error_cells: int = 0

    def value(self, r: int, c: int) -> object:
        if r < len(self.rows) and c < len(self.rows[r]):
            return self.rows[r][c]
        return None

    @property
    def empty(self) -> bool:
        return not any(not is_blank(v) for row in self.rows for v in row)


@dataclass
class TableMatch:
    """A header row found on a sheet and the column of each recognised field."""

    sheet: SheetData
    header_row: int  # 0-based
    columns: dict[str, int]
    headers: list[str]
    #: A field named by two columns: (field, the column used, the other column), 0-based.
    duplicates: list[tuple[str, int, int]] = field(default_factory=list)

    def score(self) -> int:
        return len(self.columns)


@dataclass
class RawInput:
    """Everything read from one file, before validation."""

    path: Path
    sha256: str
    sheets: list[SheetData]
    activity: TableMatch | None = None
    settings: SheetData | None = None
    links: TableMatch | None = None
    notes: list[str] = field(default_factory=list)
    #: What was searched for the activity header and why each sheet was passed over, one
    #: sentence per sheet (for a message when no activity list is found).
    searched: list[str] = field(default_factory=list)
    #: The range classes sheet (Range, Low %, Likely %, High %), if any.
    ranges: TableMatch | None = None
    #: A sheet named like a range classes sheet whose header row was not found.
    ranges_unreadable: SheetData | None = None
    #: The risk register's header row (None: no register).
    risks: TableMatch | None = None

    def search_summary(self) -> str:
        """The search in one paragraph: ``"Searched ...: Plan: ...; Settings: ..."``."""
        return (
            (
                f"Searched the first {HEADER_SEARCH_ROWS} rows of each sheet for the header "
                "row: " + " ".join(self.searched)
            )
            if self.searched
            else ""
        )


@dataclass
class ReadResult:
    """What reading one file gave: its sheets (None when unreadable), problems, its hash.

    ``sha256`` is computed here, once, for every file that can be opened (also one of the
    wrong type or a damaged one), so that later stages never read the input again.
    """

    path: Path
    sha256: str | None
    raw: RawInput | None
    problems: list[Problem]


def read_input(path: str | Path, limits: ReadLimits | None = None) -> ReadResult:
    """Read one input file; a file that cannot be read is a problem, not an exception.

    Parameters
    ----------
    path
        The file. Only a regular file is opened, never a pipe, device or folder.
    limits
        File size, unpacked size, rows, columns and cells allowed; default
        ``ReadLimits.from_environment()`` (the constants of :mod:`converter.read.limits`,
        each adjustable with its ``PERTBOOK_MAX_...`` environment variable).

    Returns
    -------
    ReadResult
        The sheets with the activity, links and settings sheets chosen (``raw``; None when
        the file cannot be read), the problems met while reading (errors and warnings,
        each naming the file or the sheet and cell), and the SHA-256 of the bytes read.
    """
    from converter.read.choose import choose_sheets
    from converter.read.load import load_sheets

    path = Path(path)
    loaded = load_sheets(path, limits)
    if loaded.sheets is None or loaded.problems:
        return ReadResult(path, loaded.sha256, None, loaded.problems)
    sheets = loaded.sheets
    if not sheets or all(s.empty for s in sheets):
        name = sheets[0].name if sheets else path.name
        return ReadResult(
            path,
            loaded.sha256,
            None,
            [
                Problem(
                    ERROR,
                    "empty",
                    f"the sheet {name} is empty: no activities",
                    sheet=name,
                    cell="A1",
                    fix="Put a header row (ID, Predecessors, Optimistic, Most likely, "
                    "Pessimistic) and "
                    "one row per activity.",
                )
            ],
        )
    raw = RawInput(path=path, sha256=loaded.sha256, sheets=sheets, notes=list(loaded.notes))
    problems = choose_sheets(raw)
    return ReadResult(path, loaded.sha256, raw, problems)


def read_sheets(path: Path, limits: ReadLimits | None = None) -> list[SheetData]:
    """All sheets of a workbook, or the single table of a CSV file, values from A1.

    Raises ValueError with the reader's message when the file cannot be read.
    """
    from converter.read.load import load_sheets

    loaded = load_sheets(Path(path), limits)
    if loaded.sheets is None or loaded.problems:
        raise ValueError("; ".join(p.message for p in loaded.problems) or "unreadable")
    return loaded.sheets


def match_header(
    sheet: SheetData, aliases: dict[str, str], first: int = 0, last: int = HEADER_SEARCH_ROWS
) -> TableMatch | None:
    """The row (of rows ``first`` to ``last - 1``) that names the most known columns.

    A field named twice keeps its first column; the other is listed in ``duplicates``.
    """
    best: TableMatch | None = None
    for r in range(first, min(last, len(sheet.rows))):
        row = sheet.rows[r]
        columns: dict[str, int] = {}
        duplicates: list[tuple[str, int, int]] = []
        for c, v in enumerate(row):
            if not isinstance(v, str) or is_blank(v):
                continue
            key = aliases.get(normalise(v))
            if key and key not in columns:
                columns[key] = c
            elif key:
                duplicates.append((key, columns[key], c))
        if len(columns) >= 2 and (best is None or len(columns) > best.score()):
            headers = ["" if is_blank(v) else str(v) for v in row]
            best = TableMatch(
                sheet=sheet, header_row=r, columns=columns, headers=headers, duplicates=duplicates
            )
    return best


def named(sheet: SheetData, names: tuple[str, ...]) -> bool:
    """Whether the sheet's name is one of ``names`` (compared like headers)."""
    n = normalise(sheet.name)
    return any(n == normalise(x) for x in names)
