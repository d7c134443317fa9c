"""The extent and the error cells of each sheet of an .xlsx/.xlsm package, from its XML.

A cell counts when it can hold a value: an empty-element ``<c r="Z9" s="1"/>`` (formatting
only) does not, since the spreadsheet library skips it too; every other ``<c>`` does. A cell
without an ``r`` reference sits right of the one before it, a row without ``r`` below the
one before it (SpreadsheetML's implicit positions). The shared string table's declared
counts are checked as well: a library may reserve memory for them before reading.

References
----------
ECMA-376 Office Open XML File Formats, Part 1, 5th edition (2016): 18.3.1.4 c (Cell),
18.3.1.73 row (Row), 18.4.9 sst (Shared String Table), 18.18.11 ST_CellType (``t="e"`` for
an error), 12.3.23 / 12.3.24 (workbook and worksheet part relationships).
"""

from __future__ import annotations

import html
import re

from converter.read.extent import SheetScan, column_index, parse_ref
from converter.read.limits import Damaged, LimitExceeded, ReadLimits
from converter.read.xmlscan import TagScanner, attributes

_CELL_END = re.compile(rb"</(?:[A-Za-z_][\w.-]*:)?c\s*>")
#: A cell's start tag without a namespace prefix (to count them).
_CELL_START = re.compile(rb"<c[\s/>]")
#: A cell start tag with a namespace prefix (then the scan goes tag by tag).
_PREFIXED_CELL = re.compile(rb":c[\s/>]")
#: A cell start tag of the form spreadsheet programs write, ``r`` first; the groups:
#: column letters, row digits, ``/`` when the tag is empty. (The literal start lets the
#: regular expression engine skip ahead quickly.)
_PLAIN_CELL = re.compile(rb'<c r="([A-Z]{1,3})([0-9]{1,7})"[^<>]*?(/?)>')
_VALUE = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?v(?:\s[^>]*)?>([^<]*)<")


class SheetXml:
    """Feeds on one worksheet part and fills a :class:`SheetScan`."""

    def __init__(self, name: str, limits: ReadLimits | None = None):
        self.scan = SheetScan(name, limits=limits)
        self.row = -1
        self.col = -1
        self.scanner = TagScanner(("row", "c"), self._tag, fast=self._fast)

    def _fast(self, region: bytes) -> bool:
        """Whole tags of the plain form at C speed; False (scan tag by tag) for anything
        else: a comment, CDATA or declaration, an error cell, a cell without ``r``."""
        if (
            b"<!" in region
            or b't="e"' in region
            or b"t='e'" in region
            or _PREFIXED_CELL.search(region)
        ):
            return False
        hits = _PLAIN_CELL.findall(region)
        if len(hits) != len(_CELL_START.findall(region)):
            return False
        valued = [h for h in hits if not h[2]]
        if valued:
            letters, digits, _ = zip(*valued)
            rows = list(map(int, digits))
            last = max(rows)
            if last < 1:
                raise Damaged("a row number is 0")
            at = rows.index(last)
            self.scan.add(last - 1, column_index(letters[at].decode()))
            widest = max(set(letters), key=lambda x: (len(x), x))
            at = letters.index(widest)
            self.scan.add(rows[at] - 1, column_index(widest.decode()))
        if hits:
            self.row = int(hits[-1][1]) - 1
            self.col = column_index(hits[-1][0].decode())
        return True

    def _tag(self, m: re.Match, buf: bytes, final: bool) -> int | None:
        if m.group("end"):
            return None
        attrs_text = m.group("attrs")
        attrs = attributes(attrs_text, local=False)  # r and t, as the library reads them
        if m.group("name") == b"row":
            self.row = int(attrs[b"r"]) - 1 if attrs.get(b"r", b"").isdigit() else self.row + 1
            if self.row < 0:
                raise Damaged("a row number is 0")
            self.col = -1
            return None
        ref = attrs.get(b"r")
        if ref:
            self.row, self.col = parse_ref(ref)
        else:
            self.col += 1
            self.row = max(self.row, 0)
        if attrs_text.rstrip().endswith(b"/"):  # <c .../>: formatting only, no value
            return None
        if attrs.get(b"t") == b"e":
            end = _CELL_END.search(buf, m.end())
            if end is None and not final:
                return m.start()  # see the whole cell first
            inner = buf[m.end() : end.start() if end else len(buf)]
            value = _VALUE.search(inner)
            code = html.unescape(value.group(1).decode("utf-8", "replace")) if value else "#N/A"
            self.scan.add_error(self.row, self.col, code)
        self.scan.add(self.row, self.col)
        return None


class SharedStrings:
    """Checks the shared string table: its declared counts and its number of entries."""

    def __init__(self, limits: ReadLimits):
        self.limits = limits
        self.entries = 0
        self.scanner = TagScanner(("sst", "si"), self._tag)

    def _tag(self, m: re.Match, buf: bytes, final: bool) -> int | None:
        if m.group("end"):
            return None
        if m.group("name") == b"si":
            self.entries += 1
            if self.entries > self.limits.cells:
                raise self._too_many(f"holds more than {self.limits.cells:,} entries")
            return None
        for key in (b"count", b"uniqueCount"):
            value = attributes(m.group("attrs")).get(key, b"0").strip()
            if not value.isdigit():
                raise Damaged(f"the shared text table's {key.decode()} is not a number")
            if int(value) > self.limits.cells:
                raise self._too_many(f"says it holds {int(value):,} entries")
        return None

    def _too_many(self, what: str) -> LimitExceeded:
        return LimitExceeded(
            f"the workbook's table of texts {what}, beyond the limit of "
            f"{self.limits.cells:,} cells",
            "Save the workbook again from a spreadsheet program (this usually rebuilds the "
            "table), or raise the limit with the environment variable PERTBOOK_MAX_CELLS.",
        )


def sheet_parts(workbook_xml: bytes, rels_xml: bytes) -> list[tuple[str, str]]:
    """(sheet name, part path) of each worksheet in workbook order.

    Examples
    --------
    >>> wb = b'<workbook><sheets><sheet name="Plan &amp; risks" r:id="rId1"/></sheets></workbook>'
    >>> rels = b'<Relationships><Relationship Id="rId1" Target="worksheets/sheet1.xml"/>'
    >>> sheet_parts(wb, rels + b'</Relationships>')
    [('Plan & risks', 'xl/worksheets/sheet1.xml')]
    """
    targets: dict[bytes, bytes] = {}
    sheets: list[tuple[bytes, bytes]] = []

    def on_rel(m: re.Match, buf: bytes, final: bool) -> None:
        attrs = attributes(m.group("attrs"))
        if b"Id" in attrs and b"Target" in attrs:
            targets.setdefault(attrs[b"Id"], attrs[b"Target"])

    def on_sheet(m: re.Match, buf: bytes, final: bool) -> None:
        attrs = attributes(m.group("attrs"))
        if not m.group("end"):
            sheets.append((attrs.get(b"name", b""), attrs.get(b"id", b"")))

    for text, names, handler in (
        (rels_xml, ("Relationship",), on_rel),
        (workbook_xml, ("sheet",), on_sheet),
    ):
        scanner = TagScanner(names, handler)
        scanner.feed(text)
        scanner.feed(b"", final=True)
    parts = []
    for name, rid in sheets:
        target = targets.get(rid)
        if target is None:
            continue
        path = html.unescape(target.decode("utf-8", "replace"))
        path = path[1:] if path.startswith("/xl/") else path
        path = path if path.startswith("xl/") else "xl/" + path
        if path.split("/")[1:2] == ["worksheets"]:
            parts.append((html.unescape(name.decode("utf-8", "replace")), path))
    return parts
