"""Workbooks (.xlsx .xlsm .ods .xls) -> sheets of values as written, within the limits.

The order matters: the container is checked (:mod:`~converter.read.archive` for zip
packages, :mod:`~converter.read.xls_scan` for .xls), each sheet's extent is found and
checked against the limits (:func:`~converter.read.extent.check_extents`), and only then
does python-calamine read the cells, from the very bytes that were checked and hashed.
A panic inside the library (pyo3's ``PanicException``, which is not an ``Exception``) is
caught and reported as a damaged file like any other failure.

Cells are read as written: the text ``NA``, ``N/A``, ``None``, ``NULL`` or ``NaN`` stays
text (pandas would have read them as blanks); an error cell (``#DIV/0!``) becomes a
:class:`~converter.read.extent.CellError`, not a blank.
"""

from __future__ import annotations

import datetime as dt
import io
import zipfile

from converter.read.archive import Budget, open_archive, unpack
from converter.read.extent import CellError, SheetScan, check_extents
from converter.read.kind import WORKBOOK_KINDS, zip_kind
from converter.read.limits import Damaged, LimitExceeded, ReadLimits
from converter.read.ods_scan import ContentXml
from converter.read.xls_scan import scan_xls
from converter.read.xlsx_scan import SharedStrings, SheetXml, sheet_parts
from converter.read.xmlscan import scan


class WrongKind(Exception):
    """The content is a zip or OLE file of a kind that is not a workbook (``kind``)."""

    def __init__(self, kind: str):
        super().__init__(kind)
        self.kind = kind


def scan_workbook(data: bytes, kind: str, limits: ReadLimits) -> tuple[str, list[SheetScan]]:
    """The workbook kind (``xlsx``, ``ods``, ``xls``) and each sheet's scan, checked.

    Raises WrongKind, Damaged, LimitExceeded (or xls_scan.Encrypted).
    """
    if kind == "xls":
        scans = scan_xls(data, limits)
        if not scans:
            raise Damaged("no worksheet found in the .xls workbook stream")
    else:
        archive = open_archive(data, limits)
        kind = zip_kind(archive)
        if kind not in WORKBOOK_KINDS:
            raise WrongKind(kind)
        scans = _scan_zip(data, archive, kind, limits)
    check_extents(scans, limits)
    return kind, scans


def _read_part(archive: zipfile.ZipFile, name: str, limit: int) -> bytes:
    """A small part whole (the workbook's list of sheets and its relationships)."""
    try:
        info = archive.getinfo(name)
    except KeyError:
        return b""
    if info.file_size > limit:
        raise Damaged(f"the part {name} is over {limit // (1024 * 1024)} MB")
    try:
        return archive.read(name)
    except (zipfile.BadZipFile, ValueError, OSError, EOFError, RuntimeError) as exc:
        raise Damaged(f"the part {name} cannot be unpacked ({exc})") from None


def _scan_zip(
    data: bytes, archive: zipfile.ZipFile, kind: str, limits: ReadLimits
) -> list[SheetScan]:
    """Unpack every part once (bounded), scanning the sheet parts on the way."""
    budget = Budget(limits)
    scanners: dict[str, object] = {}
    scans: list[SheetScan] = []
    if kind == "xlsx":
        small = 32 * 1024 * 1024
        named = dict(
            (path, name)
            for name, path in sheet_parts(
                _read_part(archive, "xl/workbook.xml", small),
                _read_part(archive, "xl/_rels/workbook.xml.rels", small),
            )
        )
        for info in archive.infolist():
            lower = info.filename.lower()
            if info.filename in named or (
                "sheet" in lower and lower.endswith(".xml") and "sharedstrings" not in lower
            ):
                sheet = SheetXml(named.get(info.filename, info.filename), limits)
                scanners[info.filename] = sheet.scanner
                scans.append(sheet.scan)
            elif lower.endswith("sharedstrings.xml"):
                scanners[info.filename] = SharedStrings(limits).scanner
        order = {name: k for k, name in enumerate(named.values())}
        scans.sort(key=lambda s: order.get(s.name, len(order)))
    else:
        content = ContentXml(limits)
        scanners["content.xml"] = content.scanner
    for info in archive.infolist():
        chunks = unpack(data, info, budget)
        if info.filename in scanners:
            scan(scanners[info.filename], chunks)
        else:
            for _ in chunks:  # unpacked only to count what it really holds
                pass
    return scans if kind == "xlsx" else content.scans


# --------------------------------------------------------------------------- reading cells
def read_cells(
    data: bytes, scans: list[SheetScan], limits: ReadLimits
) -> list[tuple[str, list, int]]:
    """(sheet name, rows from A1, error cells) of every worksheet, read with python-calamine.

    Raises Damaged when the library fails in any way (a panic included).
    """
    import python_calamine

    errors = {s.name: s.errors for s in scans}
    try:
        book = python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(data))
        names = [
            m.name for m in book.sheets_metadata if m.typ == python_calamine.SheetTypeEnum.WorkSheet
        ]
        sheets = []
        for name in names:
            sheet = book.get_sheet_by_name(name)
            rows = _rows(sheet, name, limits)
            sheets.append((name, rows, _place_errors(rows, errors.get(name, []))))
        return sheets
    except (KeyboardInterrupt, SystemExit):
        raise
    except LimitExceeded:
        raise
    except BaseException as exc:  # noqa: BLE001 - a Rust panic is a BaseException
        detail = str(exc).splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise Damaged(detail[:300]) from None


def _rows(sheet, name: str, limits: ReadLimits) -> list[list[object]]:
    """The sheet's rows from A1 (blank cells None), after checking the library's extent."""
    if sheet.height == 0 or sheet.width == 0:
        return []
    (top, left), (bottom, right) = sheet.start, sheet.end
    if (
        bottom + 1 > limits.rows
        or right + 1 > limits.columns
        or (bottom + 1) * (right + 1) > limits.cells
    ):
        raise LimitExceeded(
            f"the sheet {name} reaches row {bottom + 1:,} and column {right + 1:,}, beyond "
            f"the limits ({limits.rows:,} rows, {limits.columns:,} columns, "
            f"{limits.cells:,} cells)",
            "Delete the stray content after the schedule.",
            sheet=name,
        )
    width = right + 1
    rows: list[list[object]] = [[None] * width for _ in range(top)]
    pad = [None] * left
    for values in sheet.iter_rows():  # text and numbers inline: most cells are one of them
        rows.append(
            pad
            + [
                (v.strip() or None)
                if v.__class__ is str
                else (int(v) if v.is_integer() else v)
                if v.__class__ is float
                else cell_value(v)
                for v in values
            ]
        )
    return rows


def cell_value(value: object) -> object:
    """One cell as read: None for blank; whole numbers as int; dates without a time as date.

    Examples
    --------
    >>> import datetime as dt
    >>> cell_value(""), cell_value(3.0), cell_value(2.5), cell_value(" NA ")
    (None, 3, 2.5, 'NA')
    >>> cell_value(dt.datetime(2025, 3, 3)), cell_value(dt.date(2025, 3, 3))
    (datetime.date(2025, 3, 3), datetime.date(2025, 3, 3))
    """
    if isinstance(value, str):
        text = value.strip()
        return text or None
    if isinstance(value, bool):
        return value
    if isinstance(value, float):
        return int(value) if value.is_integer() else value
    if isinstance(value, dt.datetime):
        return value.date() if value.time() == dt.time(0) and value.tzinfo is None else value
    return value  # int, date, time, timedelta


def _place_errors(rows: list[list[object]], blocks: list) -> int:
    """Put a CellError where the file has an error cell (the library reads it as blank);
    returns how many were placed."""
    placed = 0
    for row, col, count_rows, count_cols, code in blocks:
        marker = CellError(code)
        for r in range(row, min(row + count_rows, len(rows))):
            line = rows[r]
            for c in range(col, min(col + count_cols, len(line))):
                if line[c] is None:
                    line[c] = marker
                    placed += 1
    return placed
