"""Files -> sheets of raw values with their places; header matching.

Workbooks (.xlsx .xlsm .xls .ods) are read with pandas' ``calamine`` engine
(python-calamine); .csv with the standard csv module as text (ragged rows and title
lines above the header are common in exported CSV files). Values keep their sheet
position (row 0 = sheet row 1, column 0 = column A) so every problem can name its cell.
The reader only reads: it never writes to or moves the input.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path

from xlsxwriter.utility import xl_rowcol_to_cell

from converter.model import ERROR, Problem
from converter.read import SUFFIXES, suffix_list
from converter.values import is_blank, normalise

#: Accepted header spellings for each activity column (compared after `normalise`).
ACTIVITY_COLUMNS: dict[str, tuple[str, ...]] = {
    "id": ("id", "activity", "activity id", "task id", "code", "activity code", "wbs id"),
    "name": ("task", "name", "description", "activity name", "task name", "activity description"),
    "predecessors": ("predecessors", "predecessor", "depends on", "after", "preceded by",
                     "dependencies"),
    "optimistic": ("optimistic", "o", "a", "min", "best", "best case", "optimistic duration"),
    "most_likely": ("most likely", "likely", "m", "mode", "most likely duration", "ml"),
    "pessimistic": ("pessimistic", "p", "b", "max", "worst", "worst case",
                    "pessimistic duration"),
    "distribution": ("distribution", "dist", "shape"),
    "group": ("group", "correlation group", "risk group"),
    "target": ("target", "interim target", "target date", "target finish"),
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

HEADER_SEARCH_ROWS = 30


_ALIASES_ACT = {normalise(a): k for k, v in ACTIVITY_COLUMNS.items() for a in v}
_ALIASES_LINK = {normalise(a): k for k, v in LINK_COLUMNS.items() for a in v}
_ALIASES_LINK["lead/lag"] = "lag"


def cell_name(row: int, col: int) -> str:
    """Zero-based row/column to an A1 reference (``0, 2`` -> ``C1``)."""
    return xl_rowcol_to_cell(row, col)


@dataclass
class SheetData:
    """One sheet's values from A1; blanks are ``None``."""

    name: str
    rows: list[list[object]]

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


def sha256_of(path: Path) -> str:
    """The SHA-256 of a file's bytes, as hex, read in 1 MB blocks (FIPS 180-4 via hashlib)."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _digest_or_none(path: Path) -> str | None:
    try:
        return sha256_of(path)
    except OSError:  # missing, a folder, no permission: the problem is reported elsewhere
        return None


def _clean(value: object) -> object:
    if is_blank(value):
        return None
    if hasattr(value, "to_pydatetime"):  # pandas Timestamp
        value = value.to_pydatetime()
    if isinstance(value, dt.datetime) and value.time() == dt.time(0):
        return value.date()
    if isinstance(value, str):
        return value.strip()
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):  # numpy scalar
        return value.item()
    return value


def _frame_rows(frame) -> list[list[object]]:
    return [[_clean(v) for v in row] for row in frame.itertuples(index=False, name=None)]


def read_sheets(path: Path) -> list[SheetData]:
    """All sheets of a workbook or the single table of a CSV file, values from A1."""
    import pandas as pd

    suffix = path.suffix.lower()
    if suffix == ".csv":
        return [SheetData(name=path.name, rows=read_csv_rows(path))]
    frames = pd.read_excel(path, sheet_name=None, header=None, engine="calamine")
    return [SheetData(name=str(name), rows=_frame_rows(frame)) for name, frame in frames.items()]


CSV_DELIMITERS = (",", ";", "\t", "|")


def read_csv_rows(path: Path) -> list[list[object]]:
    """Rows of a CSV file as text (ragged rows allowed, title lines above the header too).

    The delimiter is the candidate seen most often outside quotes in the first 64 KB,
    so a title line without any delimiter does not mislead it. Encodings tried: UTF-8
    (with or without BOM), then Windows-1252, which spreadsheet exports often use.
    """
    import csv

    data = path.read_bytes()
    for encoding in ("utf-8-sig", "cp1252"):
        try:
            text = data.decode(encoding)
            break
        except UnicodeDecodeError:
            continue
    else:
        text = data.decode("latin-1")
    sample = re.sub(r'"[^"]*"', "", text[:65536])
    counts = {d: sample.count(d) for d in CSV_DELIMITERS}
    delimiter = max(CSV_DELIMITERS, key=lambda d: (counts[d], d == ","))
    rows = []
    for row in csv.reader(text.splitlines(), delimiter=delimiter):
        rows.append([_clean(v) for v in row])
    return rows


def match_header(sheet: SheetData, aliases: dict[str, str]) -> TableMatch | None:
    """The row (among the first rows) that names the most known columns."""
    best: TableMatch | None = None
    for r, row in enumerate(sheet.rows[:HEADER_SEARCH_ROWS]):
        columns: dict[str, int] = {}
        for c, v in enumerate(row):
            if is_blank(v) or not isinstance(v, str):
                continue
            key = aliases.get(normalise(v))
            if key and key not in columns:
                columns[key] = c
        if len(columns) >= 2 and (best is None or len(columns) > best.score()):
            headers = ["" if is_blank(v) else str(v) for v in row]
            best = TableMatch(sheet=sheet, header_row=r, columns=columns, headers=headers)
    return best


def _named(sheet: SheetData, names: tuple[str, ...]) -> bool:
    n = normalise(sheet.name)
    return any(n == normalise(x) for x in names)


def read_input(path: str | Path) -> ReadResult:
    """Read one input file; a file that cannot be read is a problem, not an exception."""
    path = Path(path)
    digest = _digest_or_none(path) if path.is_file() else None
    raw, problems = _read(path, digest)
    return ReadResult(path=path, sha256=digest, raw=raw, problems=problems)


def _read(path: Path, digest: str | None) -> tuple[RawInput | None, list[Problem]]:
    where = path.name
    if not path.exists():
        return None, [Problem(ERROR, "file-missing", f"file not found: {path}", sheet=where,
                              fix="Check the file name and folder.")]
    if path.is_dir():
        return None, [Problem(ERROR, "not-a-file", f"{path} is a folder, not a file",
                              sheet=where)]
    if path.suffix.lower() not in SUFFIXES:
        return None, [Problem(
            ERROR, "unreadable",
            f"{path.name} is not a readable workbook: the file type {path.suffix or '(none)'} "
            f"is not one of {', '.join(SUFFIXES)}",
            sheet=where, fix=f"Save the activity list as {suffix_list()}.")]
    try:
        sheets = read_sheets(path)
    except PermissionError as exc:
        return None, [Problem(ERROR, "unreadable", f"{path.name} cannot be opened: {exc}",
                              sheet=where)]
    except Exception as exc:  # calamine/pandas raise many types for damaged files
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        return None, [Problem(
            ERROR, "unreadable", f"{path.name} is not a readable workbook ({detail})",
            sheet=where, fix="Open the file in a spreadsheet program and save it again.")]
    if not sheets or all(s.empty for s in sheets):
        name = sheets[0].name if sheets else where
        return None, [Problem(ERROR, "empty", f"the sheet {name} is empty: no activities",
                              sheet=name, cell="A1",
                              fix="Put a header row (ID, Predecessors, Optimistic, Most likely, "
                                  "Pessimistic) and one row per activity.")]
    raw = RawInput(path=path, sha256=digest, sheets=sheets)
    _choose_sheets(raw)
    return raw, []


def _choose_sheets(raw: RawInput) -> None:
    """Find the activity sheet by its headers, the settings and links sheets by name/headers."""
    settings = [s for s in raw.sheets if _named(s, SETTINGS_SHEET_NAMES)]
    raw.settings = settings[0] if settings else None
    candidates: list[tuple[tuple, TableMatch]] = []
    for pos, sheet in enumerate(raw.sheets):
        if sheet is raw.settings:
            continue
        m = match_header(sheet, _ALIASES_ACT)
        if m is None:
            continue
        has_required = sum(k in m.columns for k in REQUIRED_ACTIVITY)
        rank = (has_required, _named(sheet, ACTIVITY_SHEET_NAMES), m.score(), -pos)
        candidates.append((rank, m))
    if candidates:
        candidates.sort(key=lambda t: t[0], reverse=True)
        raw.activity = candidates[0][1]
        if len(raw.sheets) > 1:
            rank = candidates[0][0]
            why = ("its name and its column headers mark it as the activity list" if rank[1]
                   else "it has the most recognised column headers")
            raw.notes.append(
                f"Activity sheet: {raw.activity.sheet.name} (of {len(raw.sheets)} sheets; {why})."
            )
    for sheet in raw.sheets:
        if sheet is raw.settings or (raw.activity and sheet is raw.activity.sheet):
            continue
        m = match_header(sheet, _ALIASES_LINK)
        if m and "pred" in m.columns and "succ" in m.columns:
            if raw.links is None or _named(sheet, LINK_SHEET_NAMES):
                raw.links = m
    if raw.links:
        raw.notes.append(f"Links sheet: {raw.links.sheet.name}.")
    if raw.settings:
        raw.notes.append(f"Settings sheet: {raw.settings.name}.")
