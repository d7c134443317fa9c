"""What a sheet holds before it is read: its extent (the last row and column with a value)
and its error cells; the limits each extent is checked against.

The scanners (:mod:`~converter.read.xlsx_scan`, :mod:`~converter.read.ods_scan`,
:mod:`~converter.read.xls_scan`) fill one :class:`SheetScan` per sheet from the file's own
structure; :func:`check_extents` refuses the workbook when a sheet reaches further than the
limits allow, naming the sheet and the farthest cell.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from converter.read.limits import Damaged, LimitExceeded, ReadLimits

_REF = re.compile(rb"^\$?([A-Za-z]{1,12})\$?([0-9]{1,15})$")


class CellError:
    """A cell holding a spreadsheet error value (``#DIV/0!``, ``#N/A``...), not a value.

    The reader puts one of these in the rows where the file has an error cell (the result
    of a formula that failed), so that validation can name the cell instead of reading it as
    a blank. ``str()`` gives the error as the spreadsheet shows it.

    Examples
    --------
    >>> e = CellError("#DIV/0!")
    >>> str(e), repr(e), e == CellError("#DIV/0!")
    ('#DIV/0!', '#DIV/0!', True)
    """

    __slots__ = ("code",)

    def __init__(self, code: str):
        self.code = code

    def __str__(self) -> str:
        return self.code

    __repr__ = __str__

    def __eq__(self, other: object) -> bool:
        return isinstance(other, CellError) and other.code == self.code

    def __hash__(self) -> int:
        return hash(("CellError", self.code))


@dataclass
class SheetScan:
    """One sheet's extent from A1 and its error cells.

    ``errors`` holds blocks ``(row, column, rows, columns, error text)``, 0-based, so that
    a repeated error cell of an .ods file is one entry however often it repeats.
    """

    name: str
    rows: int = 0
    columns: int = 0
    errors: list[tuple[int, int, int, int, str]] = field(default_factory=list)
    far_row: tuple[int, int] = (0, 0)  # the cell that sets ``rows``
    far_column: tuple[int, int] = (0, 0)  # the cell that sets ``columns``
    #: When given, the scan stops as soon as the sheet alone passes a limit.
    limits: ReadLimits | None = None

    def add(self, row: int, col: int, count_rows: int = 1, count_cols: int = 1) -> None:
        """A value at (row, col), repeated over ``count_rows`` x ``count_cols`` cells."""
        last_row, last_col = row + count_rows - 1, col + count_cols - 1
        grew = False
        if last_row + 1 > self.rows:
            self.rows = last_row + 1
            self.far_row = (last_row, last_col)
            grew = True
        if last_col + 1 > self.columns:
            self.columns = last_col + 1
            self.far_column = (last_row, last_col)
            grew = True
        if grew and self.limits is not None:
            check_extents([self], self.limits)

    def add_error(
        self, row: int, col: int, code: str, count_rows: int = 1, count_cols: int = 1
    ) -> None:
        """An error value (``#DIV/0!``) at (row, col), repeated like :meth:`add`."""
        self.errors.append((row, col, count_rows, count_cols, code.strip() or "#N/A"))

    @property
    def cells(self) -> int:
        return self.rows * self.columns


def column_index(letters: str) -> int:
    """Column letters to a 0-based index (``A`` -> 0, ``XFD`` -> 16383).

    Examples
    --------
    >>> column_index("A"), column_index("AA"), column_index("XFD")
    (0, 26, 16383)
    """
    n = 0
    for ch in letters.upper():
        n = n * 26 + (ord(ch) - 64)
    return n - 1


def column_letters(index: int) -> str:
    """A 0-based column index to its letters (any size; ``16383`` -> ``XFD``).

    Examples
    --------
    >>> column_letters(0), column_letters(27), column_letters(16383)
    ('A', 'AB', 'XFD')
    """
    letters = ""
    n = index + 1
    while n:
        n, rem = divmod(n - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def cell_ref(row: int, col: int) -> str:
    """0-based (row, column) to an A1 reference of any size (``ZZZZZ99999999`` too)."""
    return f"{column_letters(col)}{row + 1}"


def parse_ref(ref: bytes) -> tuple[int, int]:
    """An A1 reference (bytes, as in the file) to 0-based (row, column); Damaged if invalid.

    Examples
    --------
    >>> parse_ref(b"B3"), parse_ref(b"XFD1048576")
    ((2, 1), (1048575, 16383))
    """
    m = _REF.match(ref.strip())
    if not m or int(m.group(2)) < 1:
        raise Damaged(f"the cell reference {ref[:40].decode('latin-1')!r} is not valid")
    return int(m.group(2)) - 1, column_index(m.group(1).decode("ascii"))


def check_extents(scans: list[SheetScan], limits: ReadLimits) -> None:
    """Refuse (LimitExceeded) a sheet with too many rows or columns, or too many cells in all.

    Examples
    --------
    >>> s = SheetScan("Plan"); s.add(0, 0); s.add(1048575, 16383)
    >>> check_extents([s], ReadLimits())
    Traceback (most recent call last):
    ...
    converter.read.limits.LimitExceeded: the sheet Plan has a value in cell XFD1048576, \
row 1,048,576, beyond the limit of 300,000 rows
    """
    total = 0
    for s in scans:
        if s.rows > limits.rows:
            raise _beyond(s, s.far_row, f"row {s.rows:,}", f"{limits.rows:,} rows", "ROWS")
        if s.columns > limits.columns:
            where = f"column {column_letters(s.columns - 1)} ({s.columns:,} columns)"
            raise _beyond(s, s.far_column, where, f"{limits.columns:,} columns", "COLUMNS")
        total += s.cells
        if total > limits.cells:
            raise LimitExceeded(
                f"the workbook's sheets hold {total:,} cells or more (up to the sheet {s.name}, "
                f"counted from A1 to the last row and column with a value), beyond the limit "
                f"of {limits.cells:,} cells",
                "Delete the sheets and columns the schedule does not need, or raise the limit "
                "with the environment variable PERTBOOK_MAX_CELLS.",
                sheet=s.name,
            )


def _beyond(
    s: SheetScan, cell: tuple[int, int], where: str, limit: str, variable: str
) -> LimitExceeded:
    ref = cell_ref(*cell)
    return LimitExceeded(
        f"the sheet {s.name} has a value in cell {ref}, {where}, beyond the limit of {limit}",
        f"Delete the stray content at {ref} (select the cell, press Delete) and save; or "
        f"raise the limit with the environment variable PERTBOOK_MAX_{variable}.",
        sheet=s.name,
        cell=ref,
    )
