"""What a reviewer would see wrong on a sheet, found by reading the workbook file.

The workbook is read with openpyxl (cells, formats, sizes, merges, page breaks) and, for
charts, as XML straight from the package (zipfile + ElementTree): independent of
xlsxwriter, which wrote it. Text widths and line counts come from the converter's own
model (converter/write/workbook/rows.py), which tests/write/test_rows.py checks against
the fonts and LibreOffice.

Each check returns a list of findings, ``"Sheet!B7: what is wrong"``; none is good.

Not a test module: tests/write/test_pages.py imports it.
"""

from __future__ import annotations

import datetime as dt
import posixpath
import re
import xml.etree.ElementTree as ET
import zipfile
from pathlib import Path

from openpyxl.utils import get_column_letter, range_boundaries

from converter.write.workbook.rows import (
    DEFAULT_FONT_SIZE,
    line_height,
    lines_held,
    lines_needed,
    merged_width,
    text_width,
)

DEFAULT_WIDTH = 8.43  # characters: the spreadsheet default column width
DEFAULT_HEIGHT = 15.0  # points, where the sheet does not give its own default

NS = {
    "c": "http://schemas.openxmlformats.org/drawingml/2006/chart",
    "a": "http://schemas.openxmlformats.org/drawingml/2006/main",
    "m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main",
    "r": "http://schemas.openxmlformats.org/officeDocument/2006/relationships",
    "pr": "http://schemas.openxmlformats.org/package/2006/relationships",
}


# --------------------------------------------------------------------------- geometry
class Sheet:
    """One worksheet read with openpyxl (values as cached), with its sizes resolved."""

    def __init__(self, ws) -> None:
        self.ws = ws
        self.name = ws.title
        self.widths: dict[int, float] = {}
        for dim in ws.column_dimensions.values():
            if dim.width and dim.min is not None:
                for col in range(dim.min, (dim.max or dim.min) + 1):
                    self.widths[col] = float(dim.width)
        self.merged = {}  # top-left (row, col) -> (min_col, min_row, max_col, max_row)
        self.covered = set()  # cells inside a merge other than its top left
        for rng in ws.merged_cells.ranges:
            c0, r0, c1, r1 = range_boundaries(str(rng))
            self.merged[(r0, c0)] = (c0, r0, c1, r1)
            for r in range(r0, r1 + 1):
                for c in range(c0, c1 + 1):
                    if (r, c) != (r0, c0):
                        self.covered.add((r, c))
        self.breaks = sorted(b.id for b in ws.col_breaks.brk) if ws.col_breaks else []
        fmt = ws.sheet_format
        self.default_height = (
            float(fmt.defaultRowHeight)
            if fmt is not None and fmt.defaultRowHeight
            else DEFAULT_HEIGHT
        )
        self.last_col = ws.max_column
        if ws.print_area:
            area = ws.print_area if isinstance(ws.print_area, str) else ws.print_area[0]
            self.last_col = range_boundaries(area.split("!")[-1].replace("$", ""))[2]

    def width(self, col: int) -> float:
        return self.widths.get(col, DEFAULT_WIDTH)

    def height(self, row: int) -> float:
        h = self.ws.row_dimensions[row].height if row in self.ws.row_dimensions else None
        return float(h) if h else self.default_height

    def box(self, row: int, col: int) -> tuple[float, float]:
        """Width (characters) and height (points) of the cell, merges included."""
        if (row, col) in self.merged:
            c0, r0, c1, r1 = self.merged[(row, col)]
            return (
                merged_width(self.width(c) for c in range(c0, c1 + 1)),
                sum(self.height(r) for r in range(r0, r1 + 1)),
            )
        return self.width(col), self.height(row)

    def value(self, row: int, col: int):
        return self.ws.cell(row=row, column=col).value

    def where(self, row: int, col: int) -> str:
        return f"{self.name}!{get_column_letter(col)}{row}"


def _font(cell) -> tuple[float, bool]:
    size = float(cell.font.sz) if cell.font is not None and cell.font.sz else DEFAULT_FONT_SIZE
    return size, bool(cell.font is not None and cell.font.b)


def shown_text(cell) -> str | None:
    """The text a spreadsheet shows for ``cell`` (numbers in their number format)."""
    value = cell.value
    if value is None:
        return None
    if isinstance(value, str):
        return value
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, (dt.datetime, dt.date)):
        return "0000-00-00"
    fmt = cell.number_format or "General"
    if not isinstance(value, (int, float)):
        return str(value)
    if "%" in fmt:
        decimals = len(fmt.split(".")[1].rstrip("%")) if "." in fmt else 0
        return f"{value * 100:.{decimals}f}%"
    if "E+" in fmt:
        return f"{value:.1E}"
    if re.fullmatch(r"0(\.0+)?", fmt):
        decimals = len(fmt.split(".")[1]) if "." in fmt else 0
        return f"{value:,.{decimals}f}".replace(",", "")
    if re.fullmatch(r"#,##0(\.0+)?", fmt):
        decimals = len(fmt.split(".")[1]) if "." in fmt else 0
        return f"{value:,.{decimals}f}"
    if fmt.startswith("0.#"):
        return f"{value:.3f}".rstrip("0").rstrip(".")
    return f"{value:.10g}"


def _align(cell) -> str:
    """Effective horizontal alignment: left, right or center."""
    horizontal = cell.alignment.horizontal if cell.alignment is not None else None
    if horizontal in ("center", "centerContinuous", "fill", "justify", "distributed"):
        return "center"
    if horizontal in ("left", "right"):
        return horizontal
    value = cell.value
    return "left" if isinstance(value, str) else "right"


def _indented(cell) -> bool:
    """Indented as shown: an indent applies to left-, right- or distributed-aligned cells,
    not under the general alignment (ECMA-376 Part 1, the alignment element's indent
    attribute, from memory; LibreOffice's PDF of the samples shows the same)."""
    al = cell.alignment
    return bool(al is not None and al.indent and al.horizontal in ("left", "right", "distributed"))


def _is_header(cell) -> bool:
    fill = cell.fill
    return bool(
        cell.font is not None and cell.font.b and fill is not None and fill.patternType == "solid"
    )


# ------------------------------------------------------------------------------ checks
def wrapped_text_fits(sheet: Sheet) -> list[str]:
    """Every wrapped text cell's row (or merged block) is tall enough for its lines."""
    found = []
    for row in sheet.ws.iter_rows():
        for cell in row:
            if not isinstance(cell.value, str) or not cell.value:
                continue
            if (cell.row, cell.column) in sheet.covered:
                continue
            if not (cell.alignment is not None and cell.alignment.wrap_text):
                continue
            size, bold = _font(cell)
            width, height = sheet.box(cell.row, cell.column)
            need = lines_needed(cell.value, width, size, bold)
            held = lines_held(height, size)
            if need > held:
                found.append(
                    f"{sheet.where(cell.row, cell.column)}: wrapped text needs {need} "
                    f"lines, the row shows {held} ({cell.value[:40]!r})"
                )
    return found


def text_not_cut(sheet: Sheet) -> list[str]:
    """No text or number is cut: one-line text spills only over empty cells within its
    printed band, and a number fits its column (a spreadsheet shows ### otherwise)."""
    found = []
    for row in sheet.ws.iter_rows():
        for cell in row:
            text = shown_text(cell)
            if not text or (cell.row, cell.column) in sheet.covered:
                continue
            if cell.alignment is not None and cell.alignment.wrap_text:
                continue
            size, bold = _font(cell)
            need = max(text_width(line, size, bold) for line in text.split("\n"))
            width, _ = sheet.box(cell.row, cell.column)
            if need <= width:
                continue
            where = sheet.where(cell.row, cell.column)
            if not isinstance(cell.value, str):
                found.append(f"{where}: {text!r} is wider than its column ({width:g})")
                continue
            if _align(cell) != "left":
                found.append(f"{where}: {text[:40]!r} overflows a {_align(cell)}-aligned cell")
                continue
            found.extend(_spill(sheet, cell, need - width, where, text))
    return found


def _spill(sheet: Sheet, cell, extra: float, where: str, text: str) -> list[str]:
    c0, _r0, c1, _r1 = sheet.merged.get(
        (cell.row, cell.column), (cell.column, cell.row, cell.column, cell.row)
    )
    col = c1
    while extra > 0:
        col += 1
        if col > sheet.last_col or col - 1 in sheet.breaks:
            return [f"{where}: {text[:40]!r} runs past the printed page edge"]
        if sheet.value(cell.row, col) is not None or (cell.row, col) in sheet.covered:
            return [f"{where}: {text[:40]!r} is cut by the next cell {sheet.where(cell.row, col)}"]
        extra -= sheet.width(col)
    return []


def aligned_apart(sheet: Sheet) -> list[str]:
    """Neighbouring values do not run together, and headers sit over their numbers.

    A right-aligned value directly left of a left-aligned one touches it ("1" and "10"
    read "110") unless one of them is indented; a header over a column of numbers is
    aligned like them (or either is centred), so a number is not read under the next
    column's header.
    """
    found = []
    ws = sheet.ws
    for row in ws.iter_rows():
        for cell in row:
            if cell.value is None or (cell.row, cell.column) in sheet.covered:
                continue
            if (cell.row, cell.column) in sheet.merged:
                continue
            right = ws.cell(row=cell.row, column=cell.column + 1)
            if (
                right.value is not None
                and (right.row, right.column) not in sheet.covered
                and _align(cell) == "right"
                and _align(right) == "left"
                and not _indented(cell)
                and not _indented(right)
            ):
                found.append(
                    f"{sheet.where(cell.row, cell.column)}: right-aligned "
                    f"{shown_text(cell)!r} touches {shown_text(right)!r} on its right"
                )
            below = ws.cell(row=cell.row + 1, column=cell.column)
            if (
                isinstance(cell.value, str)
                and _is_header(cell)
                and isinstance(below.value, (int, float, dt.date))
                and not isinstance(below.value, bool)
                and "center" not in (_align(cell), _align(below))
                and _align(cell) != _align(below)
            ):
                found.append(
                    f"{sheet.where(cell.row, cell.column)}: header {cell.value!r} is "
                    f"{_align(cell)}-aligned over {_align(below)}-aligned numbers"
                )
    return found


def chart_titles(xlsx: Path) -> dict[str, list[str]]:
    """Per sheet name: findings for charts without a title or with an untitled axis."""
    found: dict[str, list[str]] = {}
    with zipfile.ZipFile(xlsx) as z:
        for sheet, chart_paths in _charts_by_sheet(z).items():
            for path in chart_paths:
                root = ET.fromstring(z.read(path))
                chart = root.find("c:chart", NS)
                name = posixpath.basename(path)
                problems = []
                deleted = chart.find("c:autoTitleDeleted", NS)
                title = chart.find("c:title", NS)
                if (
                    title is None
                    or not _has_text(title)
                    or (deleted is not None and deleted.get("val") in ("1", "true"))
                ):
                    problems.append(f"{sheet} {name}: chart has no title")
                for axis in chart.find("c:plotArea", NS):
                    tag = axis.tag.split("}")[1]
                    if tag not in ("catAx", "valAx", "dateAx", "serAx"):
                        continue
                    gone = axis.find("c:delete", NS)
                    if gone is not None and gone.get("val") in ("1", "true"):
                        continue
                    axis_title = axis.find("c:title", NS)
                    if axis_title is None or not _has_text(axis_title):
                        problems.append(f"{sheet} {name}: a {tag} has no title")
                found.setdefault(sheet, []).extend(problems)
    return found


def _has_text(title) -> bool:
    texts = [t.text for t in title.iter(f"{{{NS['a']}}}t") if t.text and t.text.strip()]
    return bool(texts) or title.find(".//c:strRef", NS) is not None


def _rels(z: zipfile.ZipFile, part: str) -> dict[str, str]:
    folder, base = posixpath.split(part)
    rels_path = posixpath.join(folder, "_rels", base + ".rels")
    if rels_path not in z.namelist():
        return {}
    root = ET.fromstring(z.read(rels_path))
    return {
        rel.get("Id"): posixpath.normpath(posixpath.join(folder, rel.get("Target")))
        for rel in root.findall("pr:Relationship", NS)
    }


def _charts_by_sheet(z: zipfile.ZipFile) -> dict[str, list[str]]:
    book = ET.fromstring(z.read("xl/workbook.xml"))
    book_rels = _rels(z, "xl/workbook.xml")
    out: dict[str, list[str]] = {}
    for sheet in book.find("m:sheets", NS):
        part = book_rels[sheet.get(f"{{{NS['r']}}}id")]
        charts = []
        for target in _rels(z, part).values():
            if "/drawings/" in target:
                charts += [t for t in _rels(z, target).values() if "/charts/" in t]
        out[sheet.get("name")] = sorted(charts)
    return out


def labels_beside_tall_text(sheet: Sheet) -> list[str]:
    """In a row taller than one line, every value sits at the top, beside the first line
    of the tall text, not at the foot of the row below it."""
    found = []
    for row in sheet.ws.iter_rows():
        for cell in row:
            if cell.value is None or (cell.row, cell.column) in sheet.covered:
                continue
            if (cell.row, cell.column) in sheet.merged:
                continue
            size, _bold = _font(cell)
            if sheet.height(cell.row) <= 1.5 * line_height(size) + 1.0:
                continue
            vertical = cell.alignment.vertical if cell.alignment is not None else None
            if vertical not in ("top", "justify", "distributed"):
                found.append(
                    f"{sheet.where(cell.row, cell.column)}: {shown_text(cell)[:30]!r} "
                    f"sits at the {vertical or 'bottom'} of a "
                    f"{sheet.height(cell.row):g} pt row"
                )
    return found
