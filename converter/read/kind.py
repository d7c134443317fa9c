"""What a file is by its content (its first bytes and, for containers, their parts).

The file name's type is only a claim: a workbook renamed ``.csv``, a CSV file renamed
``.xlsx``, a web page saved as ``.xls`` and a password-protected workbook (an OLE container
holding ``EncryptionInfo`` and ``EncryptedPackage``, whatever the name says) are each
told apart here, so that the message can say in plain words what the file really is.

References
----------
APPNOTE.TXT (zip: ``PK\\x03\\x04``); [MS-CFB] 2.2 (the OLE signature ``D0 CF 11 E0 A1 B1
1A E1``); [MS-OFFCRYPTO] 2.3.4.4 and 2.3.4.5 (an encrypted Office Open XML document is an
OLE file with the streams ``EncryptionInfo`` and ``EncryptedPackage``); ECMA-376 Part 2
(``[Content_Types].xml``); OpenDocument 1.2 Part 3, 3.3 (the ``mimetype`` part).
"""

from __future__ import annotations

import codecs
import zipfile

from converter.read.cfb import SIGNATURE as OLE_SIGNATURE
from converter.read.cfb import CompoundFile
from converter.read.limits import Damaged

ZIP_SIGNATURES = (b"PK\x03\x04", b"PK\x05\x06")
ODS_MIMETYPE = b"application/vnd.oasis.opendocument.spreadsheet"

#: Plain words for each kind, used in messages ("plan.xlsx is <words>").
WORDS = {
    "xlsx": "an Excel workbook (.xlsx)",
    "ods": "an OpenDocument spreadsheet (.ods)",
    "xls": "an Excel 97-2003 workbook (.xls)",
    "encrypted": "an encrypted workbook (protected by a password)",
    "xlsb": "an Excel binary workbook (.xlsb), a type pertbook does not read",
    "docx": "a word-processor document (.docx)",
    "pptx": "a presentation (.pptx)",
    "odf": "an OpenDocument file that is not a spreadsheet",
    "zip": "a zip archive that is not a workbook",  # also: any zip, before zip_kind()
    "doc": "a Word 97-2003 document (.doc)",
    "ole": "an Office 97-2003 file that is not a workbook",
    "pdf": "a PDF document",
    "html": "a web page (HTML)",
    "xml": "an XML file (perhaps an Excel 2003 XML spreadsheet)",
    "text": "plain text (perhaps comma-separated values)",
    "empty": "empty (0 bytes)",
    "binary": "not a workbook of any kind pertbook reads",
}
WORKBOOK_KINDS = ("xlsx", "ods", "xls")


def sniff(data: bytes) -> str:
    """The kind of a file's content: a key of :data:`WORDS`.

    Examples
    --------
    >>> sniff(b"ID,Task\\r\\nA,Dig\\r\\n"), sniff(b"%PDF-1.7"), sniff(b"")
    ('text', 'pdf', 'empty')
    >>> sniff("ID;Task".encode("utf-16"))
    'text'
    """
    if not data:
        return "empty"
    if data.startswith(ZIP_SIGNATURES):
        return "zip"  # which kind: zip_kind(), once the archive checks have passed
    if data.startswith(OLE_SIGNATURE):
        return _ole_kind(data)
    if data.startswith(b"%PDF"):
        return "pdf"
    text = _as_text(data[:4096])
    if text is None:
        return "binary"
    head = text.lstrip().lower()
    if head.startswith(("<!doctype html", "<html")) or "<html" in head[:1000]:
        return "html"
    if head.startswith("<?xml"):
        return "xml"
    return "text"


def _as_text(head: bytes) -> str | None:
    """The start of the file as text when it reads as text (no control bytes), else None."""
    for bom, codec in (
        (codecs.BOM_UTF8, "utf-8-sig"),
        (codecs.BOM_UTF16_LE, "utf-16"),
        (codecs.BOM_UTF16_BE, "utf-16"),
    ):
        if head.startswith(bom):
            text = head.decode(codec, "ignore")
            break
    else:
        if b"\x00" in head:  # UTF-16 without a byte order mark reads as text too
            even, odd = head[0::2], head[1::2]
            codec = "utf-16-le" if odd.count(0) > len(odd) * 0.4 else "utf-16-be"
            if max(even.count(0), odd.count(0)) < len(head) * 0.2:
                return None
            text = head.decode(codec, "ignore")
        else:
            text = head.decode("utf-8", "ignore") or head.decode("latin-1")
    bad = sum(1 for ch in text if ord(ch) < 32 and ch not in "\t\r\n\f\v")
    return text if bad <= len(text) // 100 else None


def zip_kind(archive: zipfile.ZipFile) -> str:
    """The kind of a zip archive from its part names (opened by the archive checks first,
    since a hostile archive can declare millions of parts)."""
    names = set(archive.namelist())
    if "mimetype" in names:
        info = archive.getinfo("mimetype")
        if info.file_size <= 200 and info.compress_size <= 200:
            try:
                mime = archive.read("mimetype").strip()
            except (zipfile.BadZipFile, ValueError, OSError, EOFError, RuntimeError):
                mime = b""
            return "ods" if mime == ODS_MIMETYPE else "odf"
    lower = {n.lower() for n in names}
    if "xl/workbook.bin" in lower:
        return "xlsb"
    if any(n.startswith("xl/") for n in lower):
        return "xlsx"
    if any(n.startswith("word/") for n in lower):
        return "docx"
    if any(n.startswith("ppt/") for n in lower):
        return "pptx"
    if "content.xml" in names:
        return "ods"  # an OpenDocument package without its mimetype part
    return "zip"


def _ole_kind(data: bytes) -> str:
    try:
        names = {n.lower() for n in CompoundFile(data).names}
    except Damaged:
        return "ole"
    if {"encryptioninfo", "encryptedpackage"} <= names:
        return "encrypted"
    if "workbook" in names or "book" in names:
        return "xls"
    if "worddocument" in names:
        return "doc"
    return "ole"
