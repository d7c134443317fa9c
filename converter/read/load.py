"""One input file -> its sheets, or the one problem that stops it being read.

The steps, each in its own module: the bytes of a regular file only, bounded
(:mod:`~converter.read.source`); what the content really is (:mod:`~converter.read.kind`);
for a workbook, the container and extent checks and then the cells
(:mod:`~converter.read.workbook`); for a CSV file, its encoding and delimiter
(:mod:`~converter.read.csv_text`). Every failure is a :class:`~converter.model.Problem`
in plain words naming the file; nothing here raises for a bad input.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from converter.model import ERROR, Problem
from converter.read import SUFFIXES, suffix_list
from converter.read.csv_text import read_csv
from converter.read.kind import WORDS, WORKBOOK_KINDS, sniff
from converter.read.limits import Damaged, LimitExceeded, ReadLimits
from converter.read.sheets import ACTIVITY_ALIASES, REQUIRED_ACTIVITY, SheetData, match_header
from converter.read.source import NotAFile, read_bounded
from converter.read.workbook import WrongKind, read_cells, scan_workbook
from converter.read.xls_scan import Encrypted
from converter.values import printable

RESAVE = "Open the file in a spreadsheet program and save it again."


@dataclass
class Loaded:
    """A file's sheets (None when it cannot be read), its hash, problems and notes."""

    sheets: list[SheetData] | None
    sha256: str | None
    problems: list[Problem] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _problem(
    code: str,
    message: str,
    where: str,
    fix: str | None = None,
    sheet: str | None = None,
    cell: str | None = None,
) -> Problem:
    return Problem(ERROR, code, message, sheet=sheet or where, cell=cell, fix=fix)


def load_sheets(path: Path, limits: ReadLimits | None = None) -> Loaded:
    """Read ``path`` within ``limits`` (default: the module constants and environment)."""
    limits = limits or ReadLimits.from_environment()
    where = printable(path.name)  # a name that is not UTF-8 as its bytes' escapes
    try:
        content = read_bounded(path, limits.file_bytes)
    except NotAFile as exc:
        fix = (
            "Check the file name and folder."
            if exc.code == "file-missing"
            else "Give the path of a saved workbook or CSV file."
            if exc.code == "not-a-file"
            else None
        )
        return Loaded(None, None, [_problem(exc.code, str(exc), where, fix)])
    except LimitExceeded as exc:
        return Loaded(None, None, [_problem("too-large", str(exc), where, exc.fix)])
    loaded = Loaded(None, content.sha256)
    suffix = path.suffix.lower()
    if suffix not in SUFFIXES:
        loaded.problems.append(
            _problem(
                "unreadable",
                f"{path.name} is not a readable workbook: the file type {path.suffix or '(none)'} "
                f"is not one of {', '.join(SUFFIXES)}",
                where,
                f"Save the activity list as {suffix_list()}.",
            )
        )
        return loaded
    kind = sniff(content.data)
    if kind == "zip" and suffix == ".csv":
        kind = "zip-as-csv"
    problem = _wrong_kind(path, suffix, kind)
    if problem is not None:
        loaded.problems.append(problem)
        return loaded
    try:
        if suffix == ".csv":
            text = read_csv(content.data, limits, _header_rank)
            loaded.sheets = [SheetData(name=where, rows=text.rows)]
            loaded.notes.extend(text.notes)
        else:
            loaded.sheets = _workbook(path, content.data, kind, limits, loaded.notes)
    except LimitExceeded as exc:
        message = str(exc) if exc.sheet else f"{path.name}: {exc}"
        loaded.problems.append(
            _problem("too-large", message, where, exc.fix, sheet=exc.sheet, cell=exc.cell)
        )
    except Encrypted:
        loaded.problems.append(_encrypted(path))
    except WrongKind as exc:
        loaded.problems.append(_wrong_kind(path, suffix, exc.kind) or _damaged(path, str(exc)))
    except (Damaged, ValueError) as exc:
        loaded.problems.append(_damaged(path, str(exc)))
    return loaded


def _workbook(
    path: Path, data: bytes, kind: str, limits: ReadLimits, notes: list[str]
) -> list[SheetData]:
    kind, scans = scan_workbook(data, kind, limits)
    expected = {".xlsx": "xlsx", ".xlsm": "xlsx", ".xls": "xls", ".ods": "ods"}
    if expected[path.suffix.lower()] != kind:
        name = printable(path.name)
        notes.append(f"{name} is {WORDS[kind]} by its content; it was read as one.")
    return [
        SheetData(name=name, rows=rows, error_cells=errors)
        for name, rows, errors in read_cells(data, scans, limits)
    ]


def _header_rank(rows: list[list[object]]) -> tuple[int, int]:
    """How well the top rows read with one delimiter give the activity columns."""
    match = match_header(SheetData("csv", rows), ACTIVITY_ALIASES)
    if match is None:
        return (0, 0)
    return (sum(k in match.columns for k in REQUIRED_ACTIVITY), match.score())


def _encrypted(path: Path) -> Problem:
    return _problem(
        "encrypted",
        f"{path.name} is not a readable workbook: it is an encrypted workbook (protected by "
        "a password to open), so its cells cannot be read",
        path.name,
        "Save a copy without a password: open it with the password, remove the password to "
        "open in the file's protection settings, and save the copy.",
    )


def _damaged(path: Path, detail: str) -> Problem:
    return _problem(
        "unreadable",
        f"{path.name} is not a readable workbook: it is damaged ({detail})",
        path.name,
        RESAVE,
    )


def _wrong_kind(path: Path, suffix: str, kind: str) -> Problem | None:
    """A problem in plain words when the content is not what the name says (None if fine)."""
    if kind == "encrypted":
        return _encrypted(path)
    if suffix == ".csv":
        if kind in ("text", "empty"):
            return None
        what = WORDS["xlsx" if kind == "zip-as-csv" else kind]
        fix = (
            "Give the file its real type (e.g. .xlsx) and try again."
            if kind in WORKBOOK_KINDS or kind == "zip-as-csv"
            else "Save the activity list as a CSV file."
        )
        return _problem(
            "unreadable",
            f"{path.name} is not a CSV file: by its content it is {what}",
            path.name,
            fix,
        )
    if kind in ("zip", "xls") or kind in WORKBOOK_KINDS:
        return None  # zip: which kind is told once the archive checks have passed
    fixes = {
        "text": f"If it is comma-separated text, rename it to {path.stem}.csv.",
        "html": "Open it in a spreadsheet program and save it as .xlsx.",
        "xml": "Open it in a spreadsheet program and save it as .xlsx.",
        "xlsb": "Save it as .xlsx.",
    }
    return _problem(
        "unreadable",
        f"{path.name} is not a readable workbook: by its content it is "
        f"{WORDS[kind]}, not {'an' if suffix in ('.xlsx', '.xlsm', '.xls') else 'a'} "
        f"{suffix} workbook",
        path.name,
        fixes.get(kind, RESAVE),
    )
