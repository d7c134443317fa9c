"""The extent and the error cells of each sheet of an .ods file, from its content.xml.

OpenDocument compresses runs of like rows and cells with ``table:number-rows-repeated`` and
``table:number-columns-repeated``: a real file ends each sheet with a million empty rows
written in one element, while a hostile one can repeat a *filled* cell a billion times. The
scan multiplies the repeats out arithmetically, never cell by cell: empty runs only move
the position, filled runs extend the sheet's extent. A cell counts as filled when it has a
value type or any content; an empty element (``<table:table-cell .../>``) without a value
type is empty. LibreOffice writes a formula's error result as a text cell with the
extension attribute ``calcext:value-type="error"``; its text (``#DIV/0!``) is the error.

References
----------
Open Document Format for Office Applications (OpenDocument) Version 1.2, Part 1, OASIS
Standard (2011): 9.1.2 table:table, 9.1.3 table:table-row, 9.1.4 table:table-cell,
9.1.5 table:covered-table-cell, 19.675 table:number-columns-repeated, 19.677
table:number-rows-repeated, 19.387 office:value-type.
"""

from __future__ import annotations

import html
import re

from converter.read.extent import SheetScan
from converter.read.limits import Damaged, ReadLimits
from converter.read.xmlscan import TagScanner, attributes

_CELL_END = re.compile(rb"</(?:[A-Za-z_][\w.-]*:)?(?:covered-)?table-cell\s*>")
_EMPTY_CONTENT = re.compile(rb"\s*</(?:[A-Za-z_][\w.-]*:)?(?:covered-)?table-cell\s*>")
_ERROR_TYPE = re.compile(rb"""(?:^|\s)(?:[\w.-]+:)?value-type\s*=\s*(["'])error\1""")
_TEXT = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?p(?:\s[^>]*)?>([^<]*)<")


def _count(attrs: dict[bytes, bytes], key: bytes) -> int:
    text = attrs.get(key, b"1").strip()
    if not text.isdigit() or int(text) < 1:
        raise Damaged(f"a repeat count {text[:20].decode('latin-1')!r} is not a whole number")
    return int(text)


class ContentXml:
    """Feeds on content.xml and fills one :class:`SheetScan` per table (sheet)."""

    def __init__(self, limits: ReadLimits | None = None) -> None:
        self.limits = limits
        self.scans: list[SheetScan] = []
        self.depth = 0
        self.row = 0
        self.row_repeat = 1
        self.col = 0
        self.row_last_col = -1
        self.scanner = TagScanner(
            ("table", "table-row", "table-cell", "covered-table-cell"),
            self._tag,
            end_names=("table", "table-row"),
        )

    def _tag(self, m: re.Match, buf: bytes, final: bool) -> int | None:
        name, end = m.group("name"), bool(m.group("end"))
        if name == b"table":
            self._table(m, end)
            return None
        if not self.scans:
            return None  # rows outside a table: not part of any sheet
        attrs_text = m.group("attrs")
        empty_element = attrs_text.rstrip().endswith(b"/")
        if name == b"table-row":
            if not end:
                attrs = attributes(attrs_text)
                self.row_repeat = _count(attrs, b"number-rows-repeated")
                self.col = 0
                self.row_last_col = -1
            if end or empty_element:
                self._end_row()
            return None
        if end:
            return None
        return self._cell(m, buf, final, attributes(attrs_text), empty_element)

    def _table(self, m: re.Match, end: bool) -> None:
        if end:
            self.depth = max(self.depth - 1, 0)
            return
        self.depth += 1
        if self.depth == 1:  # a table inside a cell's content stays with its sheet
            name = attributes(m.group("attrs")).get(b"name", b"")
            self.scans.append(
                SheetScan(html.unescape(name.decode("utf-8", "replace")), limits=self.limits)
            )
            self.row, self.col, self.row_last_col = 0, 0, -1
        if m.group("attrs").rstrip().endswith(b"/"):
            self.depth -= 1

    def _cell(
        self, m: re.Match, buf: bytes, final: bool, attrs: dict[bytes, bytes], empty_element: bool
    ) -> int | None:
        repeat = _count(attrs, b"number-columns-repeated")
        filled = b"value-type" in attrs
        error = _ERROR_TYPE.search(m.group("attrs")) is not None
        if not empty_element and not filled:
            if not final and len(buf) - m.end() < 256:
                return m.start()  # cannot tell yet: see more of the document
            filled = _EMPTY_CONTENT.match(buf, m.end()) is None
        if error:
            end = _CELL_END.search(buf, m.end())
            if end is None and not final:
                return m.start()
            text = _TEXT.search(buf, m.end(), end.start() if end else len(buf))
            code = html.unescape(text.group(1).decode("utf-8", "replace")) if text else ""
            self.scans[-1].add_error(self.row, self.col, code, self.row_repeat, repeat)
        if filled:
            self.row_last_col = self.col + repeat - 1
        self.col += repeat
        return None

    def _end_row(self) -> None:
        if self.row_last_col >= 0:
            self.scans[-1].add(
                self.row, 0, count_rows=self.row_repeat, count_cols=self.row_last_col + 1
            )
        self.row += self.row_repeat
        self.row_repeat = 1
        self.row_last_col = -1
