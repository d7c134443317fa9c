"""The extent and the error cells of each sheet of an .xls (BIFF5/BIFF8) workbook.

The workbook stream is a list of records; this walks them once. A sheet's extent comes
from its value records (numbers, text, booleans, errors, formulas); the DIMENSIONS record
is checked as well, since a spreadsheet library may lay out its cells from it. Formatting-
only records (BLANK, MULBLANK) do not count. A FILEPASS record means the workbook is
protected by a password.

References
----------
[MS-XLS] Excel Binary File Format (.xls) Structure, Microsoft Open Specifications:
2.4.21 BOF, 2.4.28 BoundSheet8, 2.4.90 Dimensions, 2.4.117 FilePass, 2.4.127 Formula,
2.4.148 Label, 2.4.149 LabelSst, 2.4.175 MulRk, 2.4.180 Number, 2.4.220 Rk, 2.4.24 BoolErr,
2.5.97.2 BErr (the error codes), 2.5.133 FormulaValue.
"""

from __future__ import annotations

import struct

from converter.read.cfb import CompoundFile
from converter.read.extent import SheetScan, cell_ref
from converter.read.limits import Damaged, LimitExceeded, ReadLimits

BOF, EOF, BOUNDSHEET, DIMENSIONS, FILEPASS = 0x0809, 0x000A, 0x0085, 0x0200, 0x002F
FORMULA, BOOLERR, MULRK = 0x0006, 0x0205, 0x00BD
#: Records holding one value at (row, column) in their first four bytes.
SINGLE_VALUE = {0x0203, 0x027E, 0x00FD, 0x0204, 0x00D6, BOOLERR, FORMULA}
ERROR_CODES = {
    0x00: "#NULL!",
    0x07: "#DIV/0!",
    0x0F: "#VALUE!",
    0x17: "#REF!",
    0x1D: "#NAME?",
    0x24: "#NUM!",
    0x2A: "#N/A",
    0x2B: "#GETTING_DATA",
}


class Encrypted(Exception):
    """The .xls workbook is protected by a password (it has a FILEPASS record)."""


def workbook_stream(data: bytes) -> bytes:
    """The BIFF workbook stream of an .xls file (``Workbook``, or ``Book`` in BIFF5)."""
    container = CompoundFile(data)
    stream = container.stream("Workbook") or container.stream("Book")
    if stream is None:
        raise Damaged("the file has no workbook stream")
    return stream


def scan_xls(data: bytes, limits: ReadLimits) -> list[SheetScan]:
    """One SheetScan per worksheet, in workbook order; Encrypted, Damaged or LimitExceeded."""
    stream = workbook_stream(data)
    sheet_at: dict[int, str] = {}  # offset of a sheet's BOF -> its name
    scans: list[SheetScan] = []
    current: SheetScan | None = None
    pos, size = 0, len(stream)
    while pos + 4 <= size:
        kind, length = struct.unpack_from("<HH", stream, pos)
        body = stream[pos + 4 : pos + 4 + length]
        if kind == BOF:
            current = None
            if pos in sheet_at:
                current = SheetScan(sheet_at[pos], limits=limits)
                scans.append(current)
        elif kind == FILEPASS:
            raise Encrypted()
        elif kind == BOUNDSHEET and len(body) >= 8:
            name = _sheet_name(body)
            if body[5] == 0:  # a worksheet (not a chart or a macro sheet)
                sheet_at[struct.unpack_from("<I", body)[0]] = name
        elif current is not None:
            _record(current, kind, body, limits)
        pos += 4 + length
    return scans


def _sheet_name(body: bytes) -> str:
    count = body[6]
    if len(body) > 7 and body[7] in (0, 1) and len(body) >= 8 + count * (1 + body[7]):
        wide = body[7] == 1  # BIFF8: a flag byte, then 8- or 16-bit characters
        raw = body[8 : 8 + count * (2 if wide else 1)]
        return raw.decode("utf-16-le" if wide else "latin-1", "replace")
    return body[7 : 7 + count].decode("latin-1", "replace")  # BIFF5


def _record(scan: SheetScan, kind: int, body: bytes, limits: ReadLimits) -> None:
    if kind in SINGLE_VALUE and len(body) >= 4:
        row, col = struct.unpack_from("<HH", body)
        scan.add(row, col)
        code = _error_of(kind, body)
        if code is not None:
            scan.add_error(row, col, code)
    elif kind == MULRK and len(body) >= 6:
        row, first = struct.unpack_from("<HH", body)
        last = struct.unpack_from("<H", body, len(body) - 2)[0]
        scan.add(row, first, count_cols=max(last - first + 1, 1))
    elif kind == DIMENSIONS and len(body) >= 10:
        if len(body) >= 14:  # BIFF8: 32-bit rows
            _, rows, _, cols = struct.unpack_from("<IIHH", body)
        else:
            _, rows, _, cols = struct.unpack_from("<HHHH", body)
        if rows > limits.rows or cols > limits.columns:
            raise LimitExceeded(
                f"the sheet {scan.name} declares its cells reach {cell_ref(rows - 1, cols - 1)} "
                f"({rows:,} rows, {cols:,} columns), beyond the limits of {limits.rows:,} rows "
                f"and {limits.columns:,} columns",
                "Open the workbook, delete the rows and columns after the schedule, and save "
                "it again (or save it as .xlsx).",
                sheet=scan.name,
            )


def _error_of(kind: int, body: bytes) -> str | None:
    """The error text of a BOOLERR error cell or of a formula whose result is an error."""
    if kind == BOOLERR and len(body) >= 8 and body[7] == 1:
        return ERROR_CODES.get(body[6], "#N/A")
    if kind == FORMULA and len(body) >= 14 and body[12:14] == b"\xff\xff" and body[6] == 2:
        return ERROR_CODES.get(body[8], "#N/A")
    return None
