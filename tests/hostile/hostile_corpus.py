"""The hostile corpus: crafted input files, each with what pertbook must make of it.

A :class:`Case` names a file, the builder that writes it, the exit code that ``check``
and ``convert`` must both give (0 valid, 2 invalid: never 1, never a crash), the places
(``Sheet!Cell``, activity IDs, words) that its messages must name, the values that must
be read (checked in the JSON summary of ``convert --json``), and the input text that must
stay text in every workbook written. The cases live in the themed modules
``hostile_issue`` (the issue's own examples), ``hostile_structure`` (containers and
limits), ``hostile_text`` (formula injection and odd text), ``hostile_values`` (numbers,
dates, IDs, links, settings), ``hostile_registers`` (the Risks and Ranges sheets) and
``hostile_csv`` (CSV files, things that are not files,
file names); :func:`all_cases` gathers them.

Expected outcomes are worked out from the project's issue and README (what must be
refused, what must be read as written) and from the formats' own rules (cited in the
case modules); none is copied from a run of the converter.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

#: The invented schedule most cases start from: a trench dug, a pipe laid, then the trench
#: backfilled and the road reinstated (sheet rows 2 to 5; columns A to F).
HEADER = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
BASE = [
    HEADER,
    ["T1", "Dig trench", None, 2, 3, 5],
    ["T2", "Lay pipe", "T1", 1, 2, 4],
    ["T3", "Backfill", "T2", 1, 1, 2],
    ["T4", "Reinstate road", "T3", 2, 2, 3],
]
#: TE = (O + 4M + P) / 6 of each base row (PERT, Malcolm et al. 1959), worked by hand.
BASE_TE = {"T1": 19 / 6, "T2": 13 / 6, "T3": 7 / 6, "T4": 13 / 6}


def rows_with(
    *extra: list[object], header: list[str] | None = None, base: list[list[object]] | None = None
) -> list[list[object]]:
    """The base rows (or ``base``) with ``extra`` rows appended (sheet rows 6, 7, ...)."""
    rows = [list(r) for r in (base or BASE)]
    if header is not None:
        rows[0] = header
    return rows + [list(r) for r in extra]


def replaced(
    row: int, column: int, value: object, base: list[list[object]] | None = None
) -> list[list[object]]:
    """The base rows with the cell at sheet ``row`` (1-based) and ``column`` (0 = A)
    replaced."""
    rows = [list(r) for r in (base or BASE)]
    rows[row - 1][column] = value
    return rows


def write_csv(
    path: Path,
    rows: list[list[object]],
    *,
    delimiter: str = ",",
    encoding: str = "utf-8",
    terminator: str = "\r\n",
) -> Path:
    """Rows as CSV text (RFC 4180 quoting, by the standard library's csv module)."""
    out = io.StringIO()
    writer = csv.writer(out, delimiter=delimiter, lineterminator=terminator)
    writer.writerows([["" if v is None else v for v in row] for row in rows])
    path.write_bytes(out.getvalue().encode(encoding))
    return path


Builder = Callable[[Path], object]


@dataclass(frozen=True)
class Case:
    """One crafted input and what pertbook must make of it.

    ``build(path)`` writes the input at ``path`` (the case's own folder + ``file``).
    ``places``: text each message set must contain (cells, IDs, words of the message).
    ``values``: activity ID -> {JSON activity key: value} that must be read (valid cases).
    ``texts``: input text that must appear in the workbook as text, never as a formula.
    ``options``: extra ``convert`` options. ``defect``: a known defect (the case is an
    expected failure until it is fixed; the text says what and who owns it).
    ``watch``: also dropped into the drop folder. ``resource``: run in the batch with the
    tight memory limit (the file is refused before it is read). ``alone``: converted by a
    command of its own, started first (a slow case).
    """

    name: str
    file: str
    build: Builder
    exit: int
    places: tuple[str, ...] = ()
    values: dict[str, dict[str, object]] = field(default_factory=dict)
    texts: tuple[str, ...] = ()
    options: tuple[str, ...] = ()
    defect: str | None = None
    watch: bool = False
    resource: bool = False
    regular: bool = True  # a regular file (hashed before and after)
    alone: bool = False


def valid(name: str, file: str, build: Builder, values=None, **kw) -> Case:
    return Case(name, file, build, 0, values=values or {}, **kw)


def invalid(name: str, file: str, build: Builder, *places: str, **kw) -> Case:
    return Case(name, file, build, 2, places=places, **kw)


def all_cases() -> list[Case]:
    """Every case of the corpus, in a fixed order; names are unique."""
    import hostile_csv
    import hostile_issue
    import hostile_registers
    import hostile_structure
    import hostile_text
    import hostile_values

    cases = (
        hostile_issue.CASES
        + hostile_structure.CASES
        + hostile_text.CASES
        + hostile_values.CASES
        + hostile_registers.CASES
        + hostile_csv.CASES
    )
    names = [c.name for c in cases]
    duplicates = {n for n in names if names.count(n) > 1}
    assert not duplicates, duplicates
    return cases


def build_case(case: Case, root: Path) -> Path:
    """Write ``case`` into its own folder under ``root``; returns the input's path."""
    folder = root / case.name
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / case.file
    case.build(path)
    return path
