"""How much the reader accepts: file size, unpacked size, rows, columns and cells.

Every input is checked against these limits *before* a spreadsheet library reads it, so a
small hostile file (a stray cell at XFD1048576, a sheet that unpacks to gigabytes, a shared
string table that claims four billion entries) is refused quickly with a message naming
the limit, instead of taking the machine's memory. The defaults fit the largest real
schedules with room to spare and keep the reader well under 2 GB of memory.

The defaults are the module constants below. Each can be changed without code through an
environment variable (``PERTBOOK_MAX_ROWS=500000``); a caller can also pass its own
:class:`ReadLimits` to :func:`converter.read.sheets.read_input`.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, fields

#: Largest input file read, in bytes (all types). Bounds the bytes hashed and held.
MAX_FILE_BYTES = 100 * 1024 * 1024
#: Largest total of a workbook's unpacked parts (zip entries), in bytes.
MAX_UNPACKED_BYTES = 300 * 1024 * 1024
#: Most rows of one sheet (counted from row 1 to the last row holding a value).
MAX_ROWS = 300_000
#: Most columns of one sheet (from column A to the last column holding a value).
MAX_COLUMNS = 1_000
#: Most cells of all sheets together (each sheet's rows x columns, from A1).
MAX_CELLS = 3_000_000
#: Most parts in a workbook's zip archive (real workbooks have tens).
MAX_PARTS = 10_000

#: Environment variable of each limit (whole numbers; sizes in megabytes).
ENVIRONMENT = {
    "file_bytes": "PERTBOOK_MAX_FILE_MB",
    "unpacked_bytes": "PERTBOOK_MAX_UNPACKED_MB",
    "rows": "PERTBOOK_MAX_ROWS",
    "columns": "PERTBOOK_MAX_COLUMNS",
    "cells": "PERTBOOK_MAX_CELLS",
    "parts": "PERTBOOK_MAX_PARTS",
}
_MEGABYTE = 1024 * 1024


@dataclass(frozen=True)
class ReadLimits:
    """The limits one reading is held to (see the module constants for the defaults)."""

    file_bytes: int = MAX_FILE_BYTES
    unpacked_bytes: int = MAX_UNPACKED_BYTES
    rows: int = MAX_ROWS
    columns: int = MAX_COLUMNS
    cells: int = MAX_CELLS
    parts: int = MAX_PARTS

    @classmethod
    def from_environment(cls, environ: dict[str, str] | None = None) -> ReadLimits:
        """The defaults, each replaced by its environment variable when that is set.

        A value that is not a positive whole number is ignored (the default stays).

        Examples
        --------
        >>> ReadLimits.from_environment({"PERTBOOK_MAX_ROWS": "5000"}).rows
        5000
        >>> ReadLimits.from_environment({"PERTBOOK_MAX_FILE_MB": "2"}).file_bytes
        2097152
        >>> ReadLimits.from_environment({"PERTBOOK_MAX_ROWS": "lots"}).rows == MAX_ROWS
        True
        """
        environ = os.environ if environ is None else environ
        values = {}
        for f in fields(cls):
            text = environ.get(ENVIRONMENT[f.name], "").strip()
            if text.isdigit() and int(text) > 0:
                scale = _MEGABYTE if f.name.endswith("_bytes") else 1
                values[f.name] = int(text) * scale
        return cls(**values)


class LimitExceeded(Exception):
    """Raised inside the reader when an input passes a limit; becomes a Problem.

    ``sheet`` and ``cell`` say where, when the limit was passed at a place.
    """

    def __init__(self, message: str, fix: str, sheet: str | None = None, cell: str | None = None):
        super().__init__(message)
        self.fix = fix
        self.sheet = sheet
        self.cell = cell


class Damaged(Exception):
    """Raised inside the reader when a file's structure is broken; becomes a Problem."""


def megabytes(n: int) -> str:
    """A byte count in megabytes for messages (``314572800`` -> ``"300 MB"``).

    Examples
    --------
    >>> megabytes(300 * 1024 * 1024), megabytes(1536 * 1024)
    ('300 MB', '1.5 MB')
    """
    return f"{n / _MEGABYTE:,.1f}".removesuffix(".0") + " MB"
