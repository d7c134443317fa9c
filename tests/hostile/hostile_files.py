"""Writers of the corpus's containers, byte by byte from their published formats.

Nothing here uses the converter's own code, so a crafted file is what the format says it
is, not what the reader expects:

- zip archives are written entry by entry (APPNOTE.TXT 6.3: local file header 4.3.7,
  central directory header 4.3.12, end of central directory record 4.3.16), so an entry
  can declare any size, checksum, flag or method whatever its data;
- spreadsheets in Office Open XML (ECMA-376 Part 1, 18.3 worksheets and 18.4 shared
  strings; Part 2 for the package parts), with text cells written inline
  (``t="inlineStr"``) or shared, numbers, booleans (``t="b"``), error values (``t="e"``),
  dates as serial numbers with a built-in date format (18.8.30: numFmtId 14 is a date,
  22 a date and time, 20 a time), and characters XML cannot hold escaped as ``_xHHHH_``
  (22.9.2.19, ST_Xstring);
- OpenDocument spreadsheets (OpenDocument 1.2 Part 1, 9.1 tables; Part 3, 3.3: a stored
  ``mimetype`` part first);
- OLE compound files ([MS-CFB] version 3: a 512-byte header, one FAT sector, one directory
  sector, every stream at least 4096 bytes so that no mini stream is needed).
"""

from __future__ import annotations

import datetime as dt
import math
import struct
import zlib
from dataclasses import dataclass
from pathlib import Path
from xml.sax.saxutils import escape

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
SHEET_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
BOOK_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"
MACRO_BOOK_TYPE = "application/vnd.ms-excel.sheet.macroEnabled.main+xml"
#: Day 0 of the 1900 date system as spreadsheets count it (ECMA-376 Part 1, 18.17.4.1).
EPOCH = dt.datetime(1899, 12, 30)


# --------------------------------------------------------------------------- cell values
@dataclass(frozen=True)
class Error:
    """An error value cell such as ``#DIV/0!``."""

    text: str


@dataclass(frozen=True)
class Formula:
    """A formula cell with the value it last computed (``cached``)."""

    text: str
    cached: object


@dataclass(frozen=True)
class Raw:
    """A cell written exactly as the given XML (its reference included)."""

    xml: str


# --------------------------------------------------------------------------- zip
@dataclass
class Entry:
    """One zip entry. ``data`` is the unpacked content; ``packed`` (if given) is written as
    the entry's data as it is, with ``size`` and ``crc`` declared whatever they are."""

    name: str
    data: bytes = b""
    method: int = 8  # 0 stored, 8 deflated
    packed: bytes | None = None
    size: int | None = None
    crc: int | None = None
    flags: int = 0


def deflate(data: bytes) -> bytes:
    squeeze = zlib.compressobj(6, zlib.DEFLATED, -15)
    return squeeze.compress(data) + squeeze.flush()


def write_zip(path: Path, entries: list[Entry], prefix: bytes = b"") -> Path:
    """A zip archive of ``entries`` in order, after ``prefix`` bytes (offsets count it)."""
    out = bytearray(prefix)
    central = bytearray()
    for e in entries:
        name = e.name.encode("utf-8")
        if e.packed is not None:
            packed = e.packed
        else:
            packed = deflate(e.data) if e.method == 8 else e.data
        crc = zlib.crc32(e.data) if e.crc is None else e.crc
        size = len(e.data) if e.size is None else e.size
        fields = (20, e.flags | 0x800, e.method, 0, 0x21, crc, len(packed), size, len(name))
        offset = len(out)
        out += struct.pack("<4sHHHHHIIIHH", b"PK\x03\x04", *fields, 0) + name + packed
        central += (
            struct.pack("<4sHHHHHHIIIHHHHHII", b"PK\x01\x02", 20, *fields, 0, 0, 0, 0, 0, offset)
            + name
        )
    out += central
    out += struct.pack(
        "<4sHHHHIIH",
        b"PK\x05\x06",
        0,
        0,
        len(entries),
        len(entries),
        len(central),
        len(out) - len(central),
        0,
    )
    path.write_bytes(bytes(out))
    return path


def bomb_stream(head: bytes, block: bytes, count: int, tail: bytes) -> bytes:
    """A raw deflate stream of ``head + block * count + tail``, built in time linear in the
    packed size: after a full flush the compressor starts afresh (RFC 1951 blocks refer
    only to what follows the flush), so the packed block can be repeated as it is."""
    squeeze = zlib.compressobj(9, zlib.DEFLATED, -15)
    start = squeeze.compress(head) + squeeze.flush(zlib.Z_FULL_FLUSH)
    body = squeeze.compress(block) + squeeze.flush(zlib.Z_FULL_FLUSH)
    end = squeeze.compress(tail) + squeeze.flush()
    return start + body * count + end


# --------------------------------------------------------------------------- xlsx
def column_name(index: int) -> str:
    """Spreadsheet column letters of a 0-based index: 0 -> A, 26 -> AA, 16383 -> XFD."""
    name = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        name = chr(65 + rest) + name
    return name


def xml_text(text: str) -> str:
    """Text for an ST_Xstring: XML-escaped, characters XML 1.0 cannot hold as ``_xHHHH_``
    and a literal ``_x`` escape sequence protected by ``_x005F_``."""
    out = []
    for i, ch in enumerate(text):
        code = ord(ch)
        if ch == "_" and text[i + 1 : i + 2] == "x" and len(text) >= i + 7 and text[i + 6] == "_":
            out.append("_x005F_")
        elif (
            (code < 32 and ch not in "\t\n\r")
            or code in (0xFFFE, 0xFFFF)
            or 0xD800 <= code <= 0xDFFF
        ):
            out.append(f"_x{code:04X}_")
        else:
            out.append(ch)
    return escape("".join(out))


def serial(value: dt.date | dt.datetime | dt.time) -> float:
    """The 1900-system serial number of a date, date-time or time of day."""
    if isinstance(value, dt.time):
        return (value.hour * 3600 + value.minute * 60 + value.second) / 86400
    if not isinstance(value, dt.datetime):
        value = dt.datetime(value.year, value.month, value.day)
    delta = value - EPOCH
    return delta.days + delta.seconds / 86400


def cell_xml(ref: str, value: object, shared: list[str] | None) -> str:
    """One ``<c>`` element; ``shared`` collects shared strings when given."""
    if isinstance(value, Raw):
        return value.xml
    if isinstance(value, Error):
        return f'<c r="{ref}" t="e"><v>{escape(value.text)}</v></c>'
    if isinstance(value, Formula):
        cached = value.cached
        if isinstance(cached, Error):
            kind, text = ' t="e"', escape(cached.text)
        elif isinstance(cached, str):
            kind, text = ' t="str"', xml_text(cached)
        else:
            kind, text = "", repr(float(cached))
        return f'<c r="{ref}"{kind}><f>{escape(value.text)}</f><v>{text}</v></c>'
    if isinstance(value, bool):
        return f'<c r="{ref}" t="b"><v>{int(value)}</v></c>'
    if isinstance(value, (int, float)):
        x = float(value)
        text = "-0" if x == 0 and math.copysign(1, x) < 0 else repr(value)
        return f'<c r="{ref}"><v>{text}</v></c>'
    if isinstance(value, (dt.date, dt.time)):
        style = 3 if isinstance(value, dt.time) else 2 if isinstance(value, dt.datetime) else 1
        return f'<c r="{ref}" s="{style}"><v>{serial(value)!r}</v></c>'
    text = str(value)
    if shared is not None:
        shared.append(text)
        return f'<c r="{ref}" t="s"><v>{len(shared) - 1}</v></c>'
    return f'<c r="{ref}" t="inlineStr"><is><t xml:space="preserve">{xml_text(text)}</t></is></c>'


def sheet_xml(
    rows: list[list[object]],
    shared: list[str] | None = None,
    first_row: int = 1,
    dimension: str | None = None,
) -> str:
    body = []
    for r, row in enumerate(rows, start=first_row):
        cells = "".join(
            cell_xml(f"{column_name(c)}{r}", v, shared) for c, v in enumerate(row) if v is not None
        )
        if cells:
            body.append(f'<row r="{r}">{cells}</row>')
    dim = f'<dimension ref="{dimension}"/>' if dimension else ""
    return (
        f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet xmlns='
        f'"{MAIN_NS}">{dim}<sheetData>{"".join(body)}</sheetData></worksheet>'
    )


STYLES = (
    f'<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="{MAIN_NS}">'
    '<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts>'
    '<fills count="1"><fill><patternFill patternType="none"/></fill></fills>'
    '<borders count="1"><border/></borders>'
    '<cellStyleXfs count="1"><xf numFmtId="0"/></cellStyleXfs>'
    '<cellXfs count="4"><xf numFmtId="0"/><xf numFmtId="14" applyNumberFormat="1"/>'
    '<xf numFmtId="22" applyNumberFormat="1"/><xf numFmtId="20" applyNumberFormat="1"/>'
    "</cellXfs></styleSheet>"
)


def shared_strings_xml(
    strings: list[str], count: int | None = None, unique: int | None = None
) -> str:
    items = "".join(f'<si><t xml:space="preserve">{xml_text(s)}</t></si>' for s in strings)
    return (
        f'<?xml version="1.0" encoding="UTF-8"?><sst xmlns="{MAIN_NS}" count="'
        f'{len(strings) if count is None else count}" uniqueCount="'
        f'{len(strings) if unique is None else unique}">{items}</sst>'
    )


def xlsx_parts(
    sheets: dict[str, list[list[object]] | str], *, shared: bool = False, macro: bool = False
) -> dict[str, bytes]:
    """The parts of a workbook, by name, in the order they are written. A sheet given as
    a ``str`` is that worksheet XML as it is."""
    strings: list[str] | None = [] if shared else None
    parts: dict[str, bytes] = {}
    n = len(sheets)
    overrides = "".join(
        f'<Override PartName="/xl/worksheets/sheet{k}.xml" ContentType="{SHEET_TYPE}"/>'
        for k in range(1, n + 1)
    )
    book_type = MACRO_BOOK_TYPE if macro else BOOK_TYPE
    parts["[Content_Types].xml"] = (
        '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats'
        '.org/package/2006/content-types"><Default Extension="rels" ContentType="application'
        '/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" '
        f'ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType='
        f'"{book_type}"/>{overrides}</Types>'
    ).encode()
    parts["_rels/.rels"] = (
        f'<Relationships xmlns="{PKG_REL_NS}"><Relationship Id="rId1" Type="{REL_NS}/'
        'officeDocument" Target="xl/workbook.xml"/></Relationships>'
    ).encode()
    entries = "".join(
        f'<sheet name="{escape(name, {chr(34): "&quot;"})}" sheetId="{k}" r:id="rId{k}"/>'
        for k, name in enumerate(sheets, start=1)
    )
    parts["xl/workbook.xml"] = (
        f'<workbook xmlns="{MAIN_NS}" xmlns:r="{REL_NS}"><sheets>{entries}</sheets></workbook>'
    ).encode()
    targets = "".join(
        f'<Relationship Id="rId{k}" Type="{REL_NS}/worksheet" Target="worksheets/sheet{k}.xml"/>'
        for k in range(1, n + 1)
    )
    targets += (
        f'<Relationship Id="rId900" Type="{REL_NS}/styles" Target="styles.xml"/>'
        f'<Relationship Id="rId901" Type="{REL_NS}/sharedStrings" '
        'Target="sharedStrings.xml"/>'
    )
    parts["xl/_rels/workbook.xml.rels"] = (
        f'<Relationships xmlns="{PKG_REL_NS}">{targets}</Relationships>'
    ).encode()
    parts["xl/styles.xml"] = STYLES.encode()
    for k, rows in enumerate(sheets.values(), start=1):
        xml = rows if isinstance(rows, str) else sheet_xml(rows, strings)
        parts[f"xl/worksheets/sheet{k}.xml"] = xml.encode("utf-8")
    parts["xl/sharedStrings.xml"] = shared_strings_xml(strings or []).encode("utf-8")
    return parts


def write_xlsx(
    path: Path,
    sheets: dict[str, list[list[object]] | str],
    *,
    shared: bool = False,
    macro: bool = False,
    change: dict[str, bytes | None] | None = None,
) -> Path:
    """A workbook of the given sheets; ``change`` replaces parts (``None`` leaves one out,
    a new name adds it)."""
    parts = xlsx_parts(sheets, shared=shared, macro=macro)
    for name, data in (change or {}).items():
        if data is None:
            parts.pop(name, None)
        else:
            parts[name] = data
    return write_zip(path, [Entry(name, data) for name, data in parts.items()])


# --------------------------------------------------------------------------- ods
_ODS_NS = (
    'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
    'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
    'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"'
)


def ods_cell(value: object, repeat: int = 1) -> str:
    rep = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
    if value is None:
        return f"<table:table-cell{rep}/>"
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return (
            f'<table:table-cell{rep} office:value-type="float" office:value="{value!r}">'
            f"<text:p>{value!r}</text:p></table:table-cell>"
        )
    if isinstance(value, dt.date):
        return (
            f'<table:table-cell{rep} office:value-type="date" office:date-value='
            f'"{value.isoformat()}"><text:p>{value.isoformat()}</text:p></table:table-cell>'
        )
    return (
        f'<table:table-cell{rep} office:value-type="string"><text:p>'
        f"{escape(str(value))}</text:p></table:table-cell>"
    )


def ods_rows(rows: list[list[object]]) -> str:
    return "".join(
        "<table:table-row>" + "".join(ods_cell(v) for v in row) + "</table:table-row>"
        for row in rows
    )


def write_ods(
    path: Path,
    tables: dict[str, list[list[object]] | str],
    mimetype: bytes = b"application/vnd.oasis.opendocument.spreadsheet",
    content: bytes | None = None,
) -> Path:
    """An OpenDocument spreadsheet; a table given as ``str`` is its rows' XML as it is."""
    body = "".join(
        f'<table:table table:name="{escape(name)}">'
        f"{rows if isinstance(rows, str) else ods_rows(rows)}</table:table>"
        for name, rows in tables.items()
    )
    if content is None:
        content = (
            f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {_ODS_NS}'
            ' office:version="1.2"><office:body><office:spreadsheet>'
            f"{body}</office:spreadsheet></office:body></office:document-content>"
        ).encode()
    manifest = (
        b'<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:'
        b'oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
        b'<manifest:file-entry manifest:full-path="/" manifest:media-type="application/'
        b'vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path='
        b'"content.xml" manifest:media-type="text/xml"/></manifest:manifest>'
    )
    return write_zip(
        path,
        [
            Entry("mimetype", mimetype, method=0),
            Entry("META-INF/manifest.xml", manifest),
            Entry("content.xml", content),
        ],
    )


# --------------------------------------------------------------------------- OLE
def _dir_entry(
    name: str, kind: int, start: int, size: int, child: int = 0xFFFFFFFF, right: int = 0xFFFFFFFF
) -> bytes:
    """A 128-byte directory entry ([MS-CFB] 2.6.1); black, no left sibling."""
    raw = name.encode("utf-16-le") + b"\x00\x00"
    out = bytearray(128)
    out[: len(raw)] = raw
    struct.pack_into("<HBBIII", out, 64, len(raw), kind, 1, 0xFFFFFFFF, right, child)
    struct.pack_into("<II", out, 116, start, size)
    return bytes(out)


def write_compound(path: Path, streams: dict[str, bytes]) -> Path:
    """An OLE compound file holding ``streams`` (at most three) in its root storage.

    The streams hang off the root as a chain of right siblings in the order the format
    compares names (length first, then upper case; [MS-CFB] 2.6.4)."""
    sector = 512
    order = sorted(streams, key=lambda n: (len(n), n.upper()))
    fat = [0xFFFFFFFD, 0xFFFFFFFE]  # sector 0 holds the FAT, sector 1 the directory
    body, placed, nxt = [], {}, 2
    for name in order:
        data = streams[name] + b"\x00" * max(0, 4096 - len(streams[name]))
        data += b"\x00" * (-len(data) % sector)
        count = len(data) // sector
        placed[name] = (nxt, len(streams[name]) if len(streams[name]) >= 4096 else 4096)
        fat += list(range(nxt + 1, nxt + count)) + [0xFFFFFFFE]
        nxt += count
        body.append(data)
    if len(fat) > 128 or len(order) > 3:
        raise ValueError("too big for this small writer")
    header = bytearray(512)
    header[:8] = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
    struct.pack_into("<HHHHH", header, 0x18, 0x3E, 3, 0xFFFE, 9, 6)
    struct.pack_into("<IIIIIIIII", header, 0x2C, 1, 1, 0, 4096, 0xFFFFFFFE, 0, 0xFFFFFFFE, 0, 0)
    struct.pack_into("<109I", header, 0x4C, 0, *([0xFFFFFFFF] * 108))
    fat_sector = struct.pack("<128I", *(fat + [0xFFFFFFFF] * (128 - len(fat))))
    entries = [_dir_entry("Root Entry", 5, 0xFFFFFFFE, 0, child=1 if order else 0xFFFFFFFF)]
    for k, name in enumerate(order, start=1):
        right = k + 1 if k < len(order) else 0xFFFFFFFF
        entries.append(_dir_entry(name, 2, *placed[name], right=right))
    directory = b"".join(entries)
    directory += b"\x00" * (sector - len(directory))
    path.write_bytes(bytes(header) + fat_sector + directory + b"".join(body))
    return path
