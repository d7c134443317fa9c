"""Builders of crafted (hostile or odd) input files, written byte by byte for the reader tests.

Each builder writes the container itself from its published format, independently of the
reader's code: Office Open XML packages with the standard library's zipfile (ECMA-376
Part 2: ``[Content_Types].xml``, the relationships, ``xl/workbook.xml``, one worksheet per
sheet), OpenDocument spreadsheets (OpenDocument 1.2 Part 3: a stored ``mimetype`` first,
then ``content.xml``), and OLE compound files ([MS-CFB]: a version 3 header with 512-byte
sectors, one FAT sector, one directory sector, streams of at least 4096 bytes so that no
mini stream is needed).
"""

from __future__ import annotations

import struct
import zipfile
import zlib
from pathlib import Path

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"


def xlsx(
    path: Path,
    sheets: dict[str, str],
    shared: str | None = None,
    extra: dict[str, bytes] | None = None,
) -> Path:
    """A package whose worksheets hold the given ``<sheetData>`` contents (XML text)."""
    overrides = "".join(
        f'<Override PartName="/xl/worksheets/sheet{k}.xml" ContentType="application/'
        f'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        for k in range(1, len(sheets) + 1)
    )
    types = (
        '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats'
        '.org/package/2006/content-types"><Default Extension="rels" ContentType="application'
        '/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" '
        'ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType='
        '"application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
        + overrides
        + "</Types>"
    )
    rels = (
        f'<Relationships xmlns="{PKG_REL_NS}"><Relationship Id="rId1" Type="{REL_NS}/'
        'officeDocument" Target="xl/workbook.xml"/></Relationships>'
    )
    entries = "".join(
        f'<sheet name="{name}" sheetId="{k}" r:id="rId{k}"/>'
        for k, name in enumerate(sheets, start=1)
    )
    workbook = (
        f'<workbook xmlns="{MAIN_NS}" xmlns:r="{REL_NS}"><sheets>{entries}</sheets></workbook>'
    )
    targets = "".join(
        f'<Relationship Id="rId{k}" Type="{REL_NS}/worksheet" Target="worksheets/sheet{k}.xml"/>'
        for k in range(1, len(sheets) + 1)
    )
    if shared is not None:
        targets += (
            f'<Relationship Id="rId99" Type="{REL_NS}/sharedStrings" Target="sharedStrings.xml"/>'
        )
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("[Content_Types].xml", types)
        z.writestr("_rels/.rels", rels)
        z.writestr("xl/workbook.xml", workbook)
        z.writestr(
            "xl/_rels/workbook.xml.rels",
            f'<Relationships xmlns="{PKG_REL_NS}">{targets}</Relationships>',
        )
        for k, data in enumerate(sheets.values(), start=1):
            z.writestr(
                f"xl/worksheets/sheet{k}.xml",
                f'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="{MAIN_NS}">'
                f"<sheetData>{data}</sheetData></worksheet>",
            )
        if shared is not None:
            z.writestr("xl/sharedStrings.xml", shared)
        for name, data in (extra or {}).items():
            z.writestr(name, data)
    return path


def text_cell(ref: str, text: str) -> str:
    return f'<c r="{ref}" t="inlineStr"><is><t>{text}</t></is></c>'


def number_cell(ref: str, value: float) -> str:
    return f'<c r="{ref}"><v>{value}</v></c>'


def header_row(headers: list[str], row: int = 1) -> str:
    from xlsxwriter.utility import xl_rowcol_to_cell

    cells = "".join(text_cell(xl_rowcol_to_cell(row - 1, c), h) for c, h in enumerate(headers))
    return f'<row r="{row}">{cells}</row>'


def lie_about_size(path: Path, part: str, declared: int) -> Path:
    """Rewrite the unpacked size of ``part`` in its local header and central directory entry
    (APPNOTE 4.3.7 offset 22, 4.3.12 offset 24), leaving the packed data as it is."""
    data = bytearray(path.read_bytes())
    name = part.encode()
    local = data.find(b"PK\x03\x04")  # the first local header
    while local >= 0:
        n, m = struct.unpack_from("<HH", data, local + 26)
        if bytes(data[local + 30 : local + 30 + n]) == name:
            struct.pack_into("<I", data, local + 22, declared)
        local = data.find(b"PK\x03\x04", local + 30 + n + m)
    central = data.find(b"PK\x01\x02")
    while central >= 0:
        n = struct.unpack_from("<H", data, central + 28)[0]
        if bytes(data[central + 46 : central + 46 + n]) == name:
            struct.pack_into("<I", data, central + 24, declared)
        central = data.find(b"PK\x01\x02", central + 46)
    path.write_bytes(bytes(data))
    return path


def deflate_bomb(path: Path, unpacked: int) -> Path:
    """A package whose one worksheet unpacks to ``unpacked`` bytes of blanks after a header
    (about 1 KB packed per MB unpacked)."""
    head = (
        f'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="{MAIN_NS}"><sheetData>'
        + header_row(["ID", "Most likely"])
        + "</sheetData>"
    )
    squeeze = zlib.compressobj(9, zlib.DEFLATED, -15)
    packed = [squeeze.compress(head.encode())]
    block = b" " * (1 << 20)
    for _ in range(unpacked >> 20):
        packed.append(squeeze.compress(block))
    packed.append(squeeze.compress(b"</worksheet>"))
    packed.append(squeeze.flush())
    body = b"".join(packed)
    xlsx(path, {"Plan": header_row(["ID", "Most likely"])})
    # replace the worksheet part by the packed stream through a stored-then-patched entry
    with zipfile.ZipFile(path) as src:
        parts = {i.filename: src.read(i.filename) for i in src.infolist()}
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            if name != "xl/worksheets/sheet1.xml":
                z.writestr(name, data)
        info = zipfile.ZipInfo("xl/worksheets/sheet1.xml")
        info.compress_type = zipfile.ZIP_STORED
        z.writestr(info, body)  # written stored; the method is switched to deflated below
    data = bytearray(path.read_bytes())
    size = len(head) + (unpacked >> 20 << 20) + len("</worksheet>")
    for sig, method_at, size_at in ((b"PK\x03\x04", 8, 22), (b"PK\x01\x02", 10, 24)):
        at = data.find(sig)
        while at >= 0:
            n = struct.unpack_from("<H", data, at + (26 if sig == b"PK\x03\x04" else 28))[0]
            start = at + (30 if sig == b"PK\x03\x04" else 46)
            if bytes(data[start : start + n]) == b"xl/worksheets/sheet1.xml":
                struct.pack_into("<H", data, at + method_at, 8)
                struct.pack_into("<I", data, at + size_at, size & 0xFFFFFFFF)
            at = data.find(sig, at + 4)
    path.write_bytes(bytes(data))
    return path


def ods(path: Path, tables: dict[str, str]) -> Path:
    """An OpenDocument spreadsheet whose tables hold the given rows (XML text)."""
    body = "".join(
        f'<table:table table:name="{name}">{rows}</table:table>' for name, rows in tables.items()
    )
    content = (
        '<?xml version="1.0" encoding="UTF-8"?><office:document-content '
        'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
        'xmlns:calcext="urn:org:documentfoundation:names:experimental:calc:xmlns:'
        'calcext:1.0" office:version="1.2"><office:body><office:spreadsheet>'
        f"{body}</office:spreadsheet></office:body></office:document-content>"
    )
    manifest = (
        '<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:'
        'oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
        '<manifest:file-entry manifest:full-path="/" manifest:media-type="application/'
        'vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path='
        '"content.xml" manifest:media-type="text/xml"/></manifest:manifest>'
    )
    with zipfile.ZipFile(path, "w") as z:
        z.writestr(
            "mimetype",
            "application/vnd.oasis.opendocument.spreadsheet",
            compress_type=zipfile.ZIP_STORED,
        )
        z.writestr("META-INF/manifest.xml", manifest, compress_type=zipfile.ZIP_DEFLATED)
        z.writestr("content.xml", content, compress_type=zipfile.ZIP_DEFLATED)
    return path


def ods_cell(value: str, repeat: int = 1) -> str:
    rep = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
    return (
        f'<table:table-cell office:value-type="string"{rep}><text:p>{value}</text:p>'
        "</table:table-cell>"
    )


def compound_file(path: Path, streams: dict[str, bytes]) -> Path:
    """An OLE compound file ([MS-CFB] version 3) holding the given streams in its root.

    Each stream is padded to at least 4096 bytes (the mini stream cutoff) so that all live
    in regular 512-byte sectors, chained in one FAT sector.
    """
    sector = 512
    payload = []
    entries = []
    next_sector = 2  # sector 0: FAT, sector 1: directory
    fat = [0xFFFFFFFD, 0xFFFFFFFE]  # FATSECT, ENDOFCHAIN (the directory)
    for name, data in streams.items():
        data = data + b"\x00" * max(0, 4096 - len(data))
        data += b"\x00" * (-len(data) % sector)
        count = len(data) // sector
        entries.append((name, next_sector, len(data)))
        fat.extend(list(range(next_sector + 1, next_sector + count)) + [0xFFFFFFFE])
        next_sector += count
        payload.append(data)
    if len(fat) > 128 or len(entries) > 3:
        raise ValueError("too big for this small builder")
    fat += [0xFFFFFFFF] * (128 - len(fat))
    header = bytearray(512)
    header[0:8] = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
    struct.pack_into("<HHHHH", header, 0x18, 0x3E, 3, 0xFFFE, 9, 6)
    struct.pack_into("<IIIIIIIII", header, 0x2C, 1, 1, 0, 4096, 0xFFFFFFFE, 0, 0xFFFFFFFE, 0, 0)
    difat = [0] + [0xFFFFFFFF] * 108
    struct.pack_into("<109I", header, 0x4C, *difat)

    def entry(
        name: str,
        kind: int,
        start: int,
        size: int,
        child: int = 0xFFFFFFFF,
        right: int = 0xFFFFFFFF,
    ) -> bytes:
        raw = bytearray(128)
        encoded = name.encode("utf-16-le") + b"\x00\x00"
        raw[0 : len(encoded)] = encoded
        struct.pack_into("<HBB", raw, 0x40, len(encoded), kind, 1)
        struct.pack_into("<III", raw, 0x44, 0xFFFFFFFF, right, child)
        struct.pack_into("<IQ", raw, 0x74, start, size)
        return bytes(raw)

    directory = entry("Root Entry", 5, 0xFFFFFFFE, 0, child=1 if entries else 0xFFFFFFFF)
    for k, (name, start, size) in enumerate(entries, start=1):
        right = k + 1 if k < len(entries) else 0xFFFFFFFF
        directory += entry(name, 2, start, size, right=right)
    directory += b"\x00" * (sector - len(directory))
    path.write_bytes(bytes(header) + struct.pack("<128I", *fat) + directory + b"".join(payload))
    return path


def xls_stream(rows: list[list[object]]) -> bytes:
    """The BIFF8 workbook stream xlwt writes for one sheet ``Plan`` with these rows."""
    import xlwt

    book = xlwt.Workbook()
    sheet = book.add_sheet("Plan")
    for r, row in enumerate(rows):
        for c, value in enumerate(row):
            if value is not None:
                sheet.write(r, c, value)
    return book.get_biff_data()


def biff_records(stream: bytes) -> list[tuple[int, bytes]]:
    out, pos = [], 0
    while pos + 4 <= len(stream):
        kind, length = struct.unpack_from("<HH", stream, pos)
        out.append((kind, stream[pos + 4 : pos + 4 + length]))
        pos += 4 + length
    return out


def biff_join(records: list[tuple[int, bytes]]) -> bytes:
    return b"".join(struct.pack("<HH", k, len(b)) + b for k, b in records)
