"""Corpus cases: containers, damaged parts, resource bombs, wrong names, empty and garbage.

Expected outcomes, and where they come from:

- a package missing a part its relationships require, or with a part that is not
  well-formed XML (XML 1.0, 2.1), is damaged: exit 2 naming the file (the project's
  issue: "a file that is not a readable workbook");
- the limits (README "Limits": 100 MB file, 300 MB unpacked, 300,000 rows, 1,000
  columns, 3,000,000 cells, 10,000 parts) refuse a file before its cells are laid out,
  with a message naming the limit; these are ``resource`` cases, run under a tight memory
  limit;
- a cell that holds no value (only a style, ECMA-376 Part 1 18.3.1.4) and a sheet's
  ``<dimension>`` element (18.3.1.35, a hint that may be wrong) do not count towards the
  extent (README: "from A1 to the last row and column that hold a value");
- what a file is comes from its first bytes, not its name (README "By content, not by
  name": a workbook under another workbook suffix is read with a note; anything else is
  named in plain words);
- zip details from APPNOTE.TXT: bit 0 of the flags is encryption (4.4.4), the CRC-32 is
  checked against the unpacked data (4.4.7), methods other than 0 and 8 are not read.
"""

from __future__ import annotations

import random
import struct
import zlib
from pathlib import Path

import xlwt
from hostile_corpus import BASE, BASE_TE, invalid, valid
from hostile_files import (
    MAIN_NS,
    Entry,
    bomb_stream,
    ods_cell,
    shared_strings_xml,
    sheet_xml,
    write_compound,
    write_ods,
    write_xlsx,
    write_zip,
    xlsx_parts,
)

#: What the base schedule must read as (the JSON summary's TE of each activity).
READ_BASE = {k: {"te": v} for k, v in BASE_TE.items()}
READ_NAMES = {
    "T1": {"name": "Dig trench", "te": BASE_TE["T1"]},
    "T4": {"name": "Reinstate road", "te": BASE_TE["T4"]},
}
MB = 1 << 20
#: The base rows with every cell present (an empty text where the base has none).
FULL = [["" if v is None else v for v in row] for row in BASE]


def base_xlsx(path: Path, **kw) -> Path:
    return write_xlsx(path, {"Plan": BASE}, **kw)


def base_xls(path: Path) -> Path:
    """The base schedule as an Excel 97-2003 workbook, written by xlwt (BIFF8)."""
    book = xlwt.Workbook()
    sheet = book.add_sheet("Plan")
    for r, row in enumerate(BASE):
        for c, value in enumerate(row):
            if value is not None:
                sheet.write(r, c, value)
    book.save(str(path))
    return path


def zip_of(parts: dict[str, bytes], changes: dict[str, dict[str, object]]) -> list[Entry]:
    """Entries of ``parts``; ``changes[name]`` sets fields of that part's entry."""
    entries = []
    for name, data in parts.items():
        e = Entry(name, data)
        for key, value in changes.get(name, {}).items():
            setattr(e, key, value)
        entries.append(e)
    return entries


SHEET = "xl/worksheets/sheet1.xml"


def package(path: Path, **fields: object) -> Path:
    """The base workbook with some entry fields of its worksheet part changed."""
    parts = xlsx_parts({"Plan": BASE})
    return write_zip(path, zip_of(parts, {SHEET: fields}))


def sheet_with(extra_cells: str, rows=None) -> str:
    """The base sheet's XML with raw ``<row>`` elements added after its rows."""
    xml = sheet_xml(rows or BASE)
    return xml.replace("</sheetData>", extra_cells + "</sheetData>")


def bomb_xlsx(
    path: Path,
    part: str,
    head: bytes,
    block: bytes,
    count: int,
    tail: bytes,
    declared: int | None = None,
    checksum: bool = False,
) -> Path:
    """The base workbook with ``part`` replaced by a deflate bomb of ``count`` blocks (its
    CRC-32 worked out when ``checksum``, else 0: a bomb is refused before it is checked)."""
    parts = xlsx_parts({"Plan": BASE})
    packed = bomb_stream(head, block, count, tail)
    size = len(head) + len(block) * count + len(tail) if declared is None else declared
    crc = 0
    if checksum:
        crc = zlib.crc32(head)
        for _ in range(count):
            crc = zlib.crc32(block, crc)
        crc = zlib.crc32(tail, crc)
    entries = [Entry(n, d) for n, d in parts.items() if n != part]
    entries.append(Entry(part, packed=packed, size=size & 0xFFFFFFFF, crc=crc))
    return write_zip(path, entries)


def sheet_bomb(path: Path, declared: int | None = None) -> Path:
    head = sheet_xml(BASE).replace("</sheetData></worksheet>", "").encode()
    return bomb_xlsx(path, SHEET, head, b" " * MB, 1024, b"</sheetData></worksheet>", declared)


def padded(mb: int, block: bytes):
    """The base sheet followed by ``mb`` MB of ``block`` (whitespace, empty rows) inside its
    ``<sheetData>``: within the unpacked limit, with a true size and checksum."""

    def make(path: Path) -> Path:
        head = sheet_xml(BASE).replace("</sheetData></worksheet>", "").encode()
        return bomb_xlsx(
            path,
            SHEET,
            head,
            block * (MB // len(block)),
            mb,
            b"</sheetData></worksheet>",
            checksum=True,
        )

    return make


def row_bomb(path: Path) -> Path:
    head = sheet_xml(BASE).replace("</sheetData></worksheet>", "").encode()
    row = b'<row><c t="inlineStr"><is><t>x</t></is></c></row>'
    block = row * (MB // len(row))
    return bomb_xlsx(path, SHEET, head, block, 400, b"</sheetData></worksheet>")


def strings_bomb(path: Path) -> Path:
    head = f'<?xml version="1.0"?><sst xmlns="{MAIN_NS}">'.encode()
    item = b"<si><t>x</t></si>"
    return bomb_xlsx(path, "xl/sharedStrings.xml", head, item * (MB // len(item)), 1024, b"</sst>")


def embedded_bomb(path: Path) -> Path:
    parts = xlsx_parts({"Plan": BASE})
    packed = bomb_stream(b"", b"\x00" * MB, 400, b"")
    entries = [Entry(n, d) for n, d in parts.items()]
    entries.append(Entry("xl/embeddings/oleObject1.bin", packed=packed, size=400 * MB, crc=0))
    return write_zip(path, entries)


def huge_shared_count(count: int):
    """The base workbook with shared strings whose table claims ``count`` entries."""

    def make(path: Path) -> Path:
        parts = xlsx_parts({"Plan": BASE}, shared=True)
        strings = [v for row in BASE for v in row if isinstance(v, str)]
        parts["xl/sharedStrings.xml"] = shared_strings_xml(
            strings, count=count, unique=count
        ).encode()
        return write_zip(path, [Entry(n, d) for n, d in parts.items()])

    return make


def many_parts(path: Path) -> Path:
    parts = xlsx_parts({"Plan": BASE})
    entries = [Entry(n, d) for n, d in parts.items()]
    entries += [Entry(f"customXml/item{k}.xml", b"", method=0) for k in range(20_000)]
    return write_zip(path, entries)


def sparse(path: Path, size: int, head: bytes) -> Path:
    with open(path, "wb") as f:
        f.write(head)
        f.truncate(size)
    return path


def truncated(build, fraction: float):
    def make(path: Path) -> Path:
        build(path)
        data = path.read_bytes()
        path.write_bytes(data[: int(len(data) * fraction)])
        return path

    return make


def garbage(seed: int, size: int = 6000, head: bytes = b""):
    def make(path: Path) -> Path:
        rng = random.Random(seed)
        path.write_bytes(head + bytes(rng.randrange(256) for _ in range(size)))
        return path

    return make


def as_bytes(data: bytes):
    def make(path: Path) -> Path:
        path.write_bytes(data)
        return path

    return make


def ods_base(path: Path, **kw) -> Path:
    return write_ods(path, {"Plan": BASE}, **kw)


def ods_repeat(cells: str, rows: int = 1) -> str:
    from hostile_files import ods_rows

    rep = f' table:number-rows-repeated="{rows}"' if rows > 1 else ""
    return ods_rows(BASE) + f"<table:table-row{rep}>{cells}</table:table-row>"


def encrypted(path: Path) -> Path:
    # [MS-OFFCRYPTO] 2.3.4.5: an agile EncryptionInfo stream starts with version 4.4
    info = b'\x04\x00\x04\x00\x40\x00\x00\x00<?xml version="1.0"?><encryption/>'
    return write_compound(
        path, {"EncryptionInfo": info, "EncryptedPackage": b"\x10\x00" + bytes(range(256)) * 20}
    )


def plain(path: Path, text: str, encoding: str = "utf-8") -> Path:
    path.write_bytes(text.encode(encoding))
    return path


CSV_TEXT = "".join(",".join("" if v is None else str(v) for v in row) + "\n" for row in BASE)
XML_2003 = (
    '<?xml version="1.0"?><?mso-application progid="Excel.Sheet"?><Workbook xmlns='
    '"urn:schemas-microsoft-com:office:spreadsheet"><Worksheet ss:Name="Plan"/>'
    "</Workbook>"
)


def docx_like(path: Path) -> Path:
    return write_zip(
        path,
        [Entry("[Content_Types].xml", b"<Types/>"), Entry("word/document.xml", b"<w:document/>")],
    )


def xlsb_like(path: Path) -> Path:
    return write_zip(
        path, [Entry("[Content_Types].xml", b"<Types/>"), Entry("xl/workbook.bin", b"\x83\x01\x00")]
    )


def traversal(path: Path) -> Path:
    parts = xlsx_parts({"Plan": BASE})
    entries = [Entry(n, d) for n, d in parts.items()]
    entries += [Entry("../../escaped.txt", b"outside"), Entry("/abs/escaped.txt", b"x")]
    return write_zip(path, entries)


def xls_dimensions(rows: int, columns: int):
    """xlwt's DIMENSIONS record (BIFF8 record 0x0200, [MS-XLS] 2.4.90: first row, last row
    + 1 as 32-bit numbers, first column, last column + 1) rewritten to claim ``rows`` rows
    and ``columns`` columns."""

    def make(path: Path) -> Path:
        base_xls(path)
        data = bytearray(path.read_bytes())
        at = data.find(b"\x00\x02\x0e\x00")  # record type 0x0200, length 14
        assert at > 0
        struct.pack_into("<IIHH", data, at + 4, 0, rows, 0, columns)
        path.write_bytes(bytes(data))
        return path

    return make


BAD_XML = b'<?xml version="1.0"?><worksheet xmlns="' + MAIN_NS.encode() + b'"><sheetData><row'
LAUGHS = (
    '<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY a "aaaaaaaaaa">'
    + "".join(f'<!ENTITY {chr(98 + k)} "{("&" + chr(97 + k) + ";") * 10}">' for k in range(9))
    + f']><worksheet xmlns="{MAIN_NS}"><sheetData><row r="1"><c r="A1" t="inlineStr">'
    "<is><t>&j;</t></is></c></row></sheetData></worksheet>"
)
XXE = (
    f'<?xml version="1.0"?><!DOCTYPE sst [<!ENTITY x SYSTEM "file:///etc/passwd">]>'
    f'<sst xmlns="{MAIN_NS}" count="1" uniqueCount="1"><si><t>&x;</t></si></sst>'
)
FAR = '<row r="{r}"><c r="{ref}" t="inlineStr"><is><t>stray</t></is></c></row>'

_CASES = [
    # ---- readable containers: values must come through
    valid("xlsx-inline", "plan.xlsx", base_xlsx, READ_NAMES, watch=True),
    valid("xlsx-shared-strings", "plan.xlsx", lambda p: base_xlsx(p, shared=True), READ_NAMES),
    valid("xlsm-macro-type", "plan.xlsm", lambda p: base_xlsx(p, macro=True), READ_BASE),
    valid("xlsx-upper-suffix", "PLAN.XLSX", base_xlsx, READ_BASE),
    valid(
        "xlsx-stored-parts",
        "plan.xlsx",
        lambda p: write_zip(
            p, [Entry(n, d, method=0) for n, d in xlsx_parts({"Plan": BASE}).items()]
        ),
        READ_BASE,
    ),
    valid(
        "xlsx-lying-dimension",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: sheet_xml(BASE, dimension="A1:XFD1048576").encode()}),
        READ_BASE,
        resource=True,
    ),
    valid(
        "xlsx-styled-far-cell",
        "plan.xlsx",
        lambda p: base_xlsx(
            p,
            change={SHEET: sheet_with('<row r="1048576"><c r="XFD1048576" s="1"/></row>').encode()},
        ),
        READ_BASE,
        resource=True,
    ),
    valid(
        "xlsx-empty-far-row",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: sheet_with('<row r="1048576"/>').encode()}),
        READ_BASE,
        resource=True,
    ),
    # cells and rows without a reference follow the one before (18.3.1.4, 18.3.1.73)
    valid(
        "xlsx-cells-without-refs",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: sheet_xml(FULL).replace(' r="', ' x="').encode()}),
        READ_BASE,
    ),
    # the shared string table's counts are claims: a large one must not be laid out ...
    valid(
        "xlsx-shared-count-2-million",
        "plan.xlsx",
        huge_shared_count(2_000_000),
        READ_BASE,
        resource=True,
    ),
    # large but within the limits: read, in bounded memory (the 2 GB of every command)
    valid("xlsx-100-mb-of-whitespace", "plan.xlsx", padded(100, b" "), READ_BASE),
    valid("xlsx-50-mb-of-empty-rows", "plan.xlsx", padded(50, b'<row r="9"/>'), READ_BASE),
    valid("xlsx-path-traversal-names", "plan.xlsx", traversal, READ_BASE),
    valid("xlsx-named-xls", "plan.xls", base_xlsx, READ_BASE, places=("plan.xls",)),
    valid("xlsx-named-ods", "plan.ods", base_xlsx, READ_BASE),
    valid("ods-plain", "plan.ods", ods_base, READ_NAMES),
    valid("ods-named-xlsx", "plan.xlsx", ods_base, READ_BASE),
    valid(
        "ods-blank-repeats",
        "plan.ods",
        lambda p: write_ods(p, {"Plan": ods_repeat(ods_cell(None, 16384), 1_048_000)}),
        READ_BASE,
        resource=True,
    ),
    valid("xls-plain", "plan.xls", base_xls, READ_NAMES),
    # a DIMENSIONS record within the row and column limits is only a claim: read the cells
    valid(
        "xls-dimensions-whole-grid",
        "plan.xls",
        xls_dimensions(65_536, 256),
        READ_BASE,
        resource=True,
    ),
    valid("xls-named-xlsx", "plan.xlsx", base_xls, READ_BASE),
    # ---- damaged packages: exit 2 naming the file
    invalid(
        "xlsx-no-workbook-part",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={"xl/workbook.xml": None}),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-no-sheet-part", "plan.xlsx", lambda p: base_xlsx(p, change={SHEET: None}), "plan.xlsx"
    ),
    invalid(
        "xlsx-no-workbook-rels",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={"xl/_rels/workbook.xml.rels": None}),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-no-shared-strings",
        "plan.xlsx",
        lambda p: base_xlsx(p, shared=True, change={"xl/sharedStrings.xml": None}),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-truncated-sheet-xml",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: BAD_XML}),
        "plan.xlsx",
        watch=True,
    ),
    invalid(
        "xlsx-garbage-workbook-xml",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={"xl/workbook.xml": b"\x00\xff<<<"}),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-bad-utf8-in-sheet",
        "plan.xlsx",
        lambda p: base_xlsx(
            p,
            change={SHEET: sheet_xml(BASE).encode().replace(b"Dig trench", b"Dig \xff\xfe trench")},
        ),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-shared-string-out-of-range",
        "plan.xlsx",
        lambda p: base_xlsx(
            p,
            change={
                SHEET: sheet_with('<row r="6"><c r="A6" t="s"><v>999999</v></c></row>').encode()
            },
        ),
        "plan.xlsx",
    ),
    invalid(
        "xlsx-entity-expansion",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: LAUGHS.encode()}),
        "plan.xlsx",
        resource=True,
    ),
    invalid(
        "xlsx-external-entity",
        "plan.xlsx",
        lambda p: base_xlsx(p, shared=True, change={"xl/sharedStrings.xml": XXE.encode()}),
        "plan.xlsx",
    ),
    invalid("xlsx-bad-crc", "plan.xlsx", lambda p: package(p, crc=0x12345678), "plan.xlsx"),
    invalid("xlsx-encrypted-entry-flag", "plan.xlsx", lambda p: package(p, flags=1), "plan.xlsx"),
    invalid("xlsx-unknown-method", "plan.xlsx", lambda p: package(p, method=99), "plan.xlsx"),
    invalid(
        "xlsx-part-larger-than-declared", "plan.xlsx", lambda p: package(p, size=100), "plan.xlsx"
    ),
    invalid("xlsx-truncated-archive", "plan.xlsx", truncated(base_xlsx, 0.6), "plan.xlsx"),
    invalid(
        "xlsx-junk-prefix",
        "plan.xlsx",
        lambda p: write_zip(
            p,
            [Entry(n, d) for n, d in xlsx_parts({"Plan": BASE}).items()],
            prefix=b"MZ" + bytes(200),
        ),
        "plan.xlsx",
    ),
    invalid("zip-empty", "plan.xlsx", lambda p: write_zip(p, []), "plan.xlsx", "zip"),
    invalid("zip-docx-named-xlsx", "plan.xlsx", docx_like, "plan.xlsx", "word-processor"),
    invalid("zip-xlsb-named-xlsx", "plan.xlsx", xlsb_like, "plan.xlsx", ".xlsb"),
    invalid("xlsx-no-sheets", "plan.xlsx", lambda p: write_xlsx(p, {}), "plan.xlsx"),
    invalid("xlsx-empty-sheet", "plan.xlsx", lambda p: write_xlsx(p, {"Plan": []}), "Plan"),
    # ---- far cells and limits: refused early, naming the cell and the limit
    invalid(
        "xlsx-cell-beyond-grid-row",
        "plan.xlsx",
        lambda p: base_xlsx(
            p, change={SHEET: sheet_with(FAR.format(r=1048577, ref="A1048577")).encode()}
        ),
        "A1048577",
        "limit",
        resource=True,
    ),
    invalid(
        "xlsx-row-just-past-limit",
        "plan.xlsx",
        lambda p: base_xlsx(
            p, change={SHEET: sheet_with(FAR.format(r=300001, ref="B300001")).encode()}
        ),
        "Plan!B300001",
        "300,000",
        resource=True,
    ),
    invalid(
        "xlsx-column-just-past-limit",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: sheet_with(FAR.format(r=2, ref="ALM2")).encode()}),
        "ALM2",
        "1,000",
        resource=True,
    ),
    invalid(
        "xlsx-far-cell-text-shared",
        "plan.xlsx",
        lambda p: base_xlsx(
            p,
            shared=True,
            change={
                SHEET: sheet_with(
                    '<row r="900000"><c r="C900000" t="s"><v>0</v></c></row>'
                ).encode()
            },
        ),
        "C900000",
        "limit",
        resource=True,
    ),
    invalid(
        "xlsx-negative-row",
        "plan.xlsx",
        lambda p: base_xlsx(p, change={SHEET: sheet_with(FAR.format(r=-5, ref="A-5")).encode()}),
        "plan.xlsx",
        resource=True,
    ),
    invalid(
        "xlsx-sheet-bomb-1gb",
        "plan.xlsx",
        sheet_bomb,
        "plan.xlsx",
        "limit",
        resource=True,
        watch=True,
    ),
    invalid(
        "xlsx-sheet-bomb-lying-size",
        "plan.xlsx",
        lambda p: sheet_bomb(p, declared=2048),
        "plan.xlsx",
        resource=True,
    ),
    invalid("xlsx-row-bomb", "plan.xlsx", row_bomb, "plan.xlsx", "limit", resource=True),
    invalid(
        "xlsx-shared-strings-bomb", "plan.xlsx", strings_bomb, "plan.xlsx", "limit", resource=True
    ),
    invalid("xlsx-embedded-bomb", "plan.xlsx", embedded_bomb, "plan.xlsx", "limit", resource=True),
    # ... and one past the cell limit is refused (converter/read/limits.py)
    invalid(
        "xlsx-shared-count-4-billion",
        "plan.xlsx",
        huge_shared_count(4_294_967_295),
        "plan.xlsx",
        "4,294,967,295",
        "limit",
        resource=True,
    ),
    invalid("xlsx-20000-parts", "plan.xlsx", many_parts, "plan.xlsx", "10,000", resource=True),
    invalid(
        "xlsx-sparse-200mb",
        "plan.xlsx",
        lambda p: sparse(p, 200 * MB, b"PK\x03\x04"),
        "plan.xlsx",
        "100 MB",
        resource=True,
    ),
    invalid(
        "csv-sparse-150mb",
        "plan.csv",
        lambda p: sparse(p, 150 * MB, CSV_TEXT.encode()),
        "plan.csv",
        "100 MB",
        resource=True,
    ),
    invalid(
        "ods-columns-repeated",
        "plan.ods",
        lambda p: write_ods(p, {"Plan": ods_repeat(ods_cell("x", 16384))}),
        "Plan",
        "1,000",
        resource=True,
    ),
    invalid(
        "ods-rows-repeated",
        "plan.ods",
        lambda p: write_ods(p, {"Plan": ods_repeat(ods_cell("x"), 1_048_576)}),
        "Plan",
        "300,000",
        resource=True,
    ),
    invalid(
        "ods-content-bomb",
        "plan.ods",
        lambda p: write_zip(
            p,
            [
                Entry("mimetype", b"application/vnd.oasis.opendocument.spreadsheet", method=0),
                Entry(
                    "content.xml",
                    packed=bomb_stream(b"<x>", b" " * MB, 1024, b"</x>"),
                    size=0,
                    crc=0,
                ),
            ],
        ),
        "plan.ods",
        resource=True,
    ),
    invalid(
        "xls-dimensions-past-row-limit",
        "plan.xls",
        xls_dimensions(1_000_000, 6),
        "Plan",
        "300,000",
        resource=True,
    ),
    # ---- other damaged or foreign containers
    # the mimetype part may be missing (OpenDocument 1.2 Part 3, 3.3 "should"); reading or
    # refusing is allowed, the reader refuses it as damaged
    invalid(
        "ods-without-mimetype-part",
        "plan.ods",
        lambda p: write_zip(p, [Entry("content.xml", _ods_content())]),
        "plan.ods",
    ),
    invalid(
        "ods-no-content",
        "plan.ods",
        lambda p: write_zip(
            p, [Entry("mimetype", b"application/vnd.oasis.opendocument.spreadsheet", method=0)]
        ),
        "plan.ods",
    ),
    invalid(
        "ods-bad-xml", "plan.ods", lambda p: ods_base(p, content=b"<office:document"), "plan.ods"
    ),
    invalid(
        "ods-text-document",
        "plan.ods",
        lambda p: ods_base(p, mimetype=b"application/vnd.oasis.opendocument.text"),
        "plan.ods",
        "OpenDocument",
    ),
    invalid("xls-truncated", "plan.xls", truncated(base_xls, 0.5), "plan.xls"),
    invalid(
        "ole-garbage-workbook-stream",
        "plan.xls",
        lambda p: write_compound(p, {"Workbook": bytes(range(256)) * 20}),
        "plan.xls",
    ),
    invalid(
        "ole-word-document",
        "plan.xls",
        lambda p: write_compound(p, {"WordDocument": b"\xec\xa5" + bytes(5000)}),
        "plan.xls",
        "Word",
    ),
    invalid(
        "encrypted-named-xlsx",
        "plan.xlsx",
        encrypted,
        "plan.xlsx",
        "encrypted",
        "password",
        watch=True,
    ),
    invalid("encrypted-named-xls", "plan.xls", encrypted, "plan.xls", "encrypted"),
    invalid("encrypted-named-csv", "plan.csv", encrypted, "plan.csv", "encrypted"),
    # ---- wrong names for what the file is
    invalid(
        "xlsm-named-csv", "plan.csv", lambda p: base_xlsx(p, macro=True), "plan.csv", "workbook"
    ),
    invalid("csv-named-xlsx", "plan.xlsx", lambda p: plain(p, CSV_TEXT), "plan.xlsx", "plain text"),
    invalid("csv-named-xls", "plan.xls", lambda p: plain(p, CSV_TEXT), "plan.xls", "plain text"),
    invalid("csv-named-txt", "plan.txt", lambda p: plain(p, CSV_TEXT), "plan.txt"),
    invalid("csv-no-suffix", "plan", lambda p: plain(p, CSV_TEXT), "plan"),
    invalid(
        "html-named-xls",
        "plan.xls",
        lambda p: plain(p, "<html><body><table><tr><td>ID</td></tr></table></body></html>"),
        "plan.xls",
        "web page",
    ),
    invalid(
        "pdf-named-xlsx",
        "plan.xlsx",
        as_bytes(b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n1 0 obj\n"),
        "plan.xlsx",
        "PDF",
    ),
    invalid("xml2003-named-xls", "plan.xls", lambda p: plain(p, XML_2003), "plan.xls", "XML"),
    invalid("elf-named-xlsx", "plan.xlsx", garbage(3, head=b"\x7fELF\x02\x01\x01"), "plan.xlsx"),
    # ---- empty files and garbage
    invalid("empty-xlsx", "plan.xlsx", as_bytes(b""), "plan.xlsx", "empty"),
    invalid("empty-xlsm", "plan.xlsm", as_bytes(b""), "plan.xlsm", "empty"),
    invalid("empty-xls", "plan.xls", as_bytes(b""), "plan.xls", "empty"),
    invalid("empty-ods", "plan.ods", as_bytes(b""), "plan.ods", "empty"),
    invalid("empty-csv", "plan.csv", as_bytes(b""), "plan.csv", "empty"),
    invalid("garbage-xlsx", "plan.xlsx", garbage(11), "plan.xlsx"),
    invalid("garbage-ods", "plan.ods", garbage(12), "plan.ods"),
    invalid("garbage-xls", "plan.xls", garbage(13), "plan.xls"),
    invalid("garbage-csv", "plan.csv", garbage(14), "plan.csv"),
    invalid("zeros-csv", "plan.csv", as_bytes(bytes(5000)), "plan.csv"),
    invalid("zip-signature-only", "plan.xlsx", as_bytes(b"PK\x03\x04" + bytes(26)), "plan.xlsx"),
    invalid(
        "ole-signature-only",
        "plan.xls",
        as_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(600)),
        "plan.xls",
    ),
]


def _ods_content() -> bytes:
    from hostile_files import _ODS_NS, ods_rows

    return (
        f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {_ODS_NS} '
        'office:version="1.2"><office:body><office:spreadsheet><table:table '
        f'table:name="Plan">{ods_rows(BASE)}</table:table></office:spreadsheet>'
        "</office:body></office:document-content>"
    ).encode()


CASES = _CASES
