"""The zip package of an .xlsx/.xlsm/.ods workbook, checked before any library opens it.

Checks, in order: the number of parts (from the end-of-archive record, before the part
list is built), each part's packing method and the total of the declared unpacked sizes;
then every part is unpacked as a stream, counting the bytes really produced (a declared
size can lie) and stopping as soon as the total passes the limit. The sheet parts are
scanned on the way for their extent (:mod:`~converter.read.xlsx_scan`,
:mod:`~converter.read.ods_scan`), so nothing is unpacked twice and nothing whole is kept.

References
----------
APPNOTE.TXT - .ZIP File Format Specification, version 6.3.10, PKWARE Inc. (2022):
4.3.7 local file header, 4.3.12 central directory, 4.3.16 end of central directory record,
4.3.14-4.3.15 Zip64 end of central directory record and locator, 4.4.4 general purpose
bit flag (bit 0: encrypted), 4.4.5 compression method (0 stored, 8 deflated).
RFC 1951, DEFLATE Compressed Data Format Specification version 1.3 (1996).
"""

from __future__ import annotations

import io
import struct
import zipfile
import zlib
from collections.abc import Iterator

from converter.read.limits import Damaged, LimitExceeded, ReadLimits, megabytes

#: Unpacked bytes handed to a scanner at a time.
CHUNK = 1 << 20
_EOCD = b"PK\x05\x06"
_ZIP64_LOCATOR = b"PK\x06\x07"


def part_count(data: bytes) -> int:
    """The number of parts the archive's end record declares; Damaged if there is none.

    Examples
    --------
    >>> import io, zipfile
    >>> buf = io.BytesIO()
    >>> with zipfile.ZipFile(buf, "w") as z:
    ...     z.writestr("a.xml", "<a/>"); z.writestr("b.xml", "<b/>")
    >>> part_count(buf.getvalue())
    2
    """
    at = data.rfind(_EOCD, max(0, len(data) - 65557))
    if at < 0 or at + 22 > len(data):
        raise Damaged("the zip archive has no end record")
    count = struct.unpack_from("<H", data, at + 10)[0]
    locator = at - 20
    if locator >= 0 and data[locator : locator + 4] == _ZIP64_LOCATOR:
        offset = struct.unpack_from("<Q", data, locator + 8)[0]
        if offset + 40 > len(data) or data[offset : offset + 4] != b"PK\x06\x06":
            raise Damaged("the zip archive's Zip64 end record is missing")
        count = struct.unpack_from("<Q", data, offset + 32)[0]
    return count


def open_archive(data: bytes, limits: ReadLimits) -> zipfile.ZipFile:
    """The archive, once its part count, packing methods and declared sizes pass."""
    count = part_count(data)
    if count > limits.parts:
        raise LimitExceeded(
            f"the workbook's zip archive has {count:,} parts, beyond the limit of {limits.parts:,}",
            "Save the workbook again from a spreadsheet program.",
        )
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, OSError) as exc:
        raise Damaged(f"the zip archive is damaged ({exc})") from None
    declared = 0
    for info in archive.infolist():
        if info.flag_bits & 0x1:
            raise Damaged(f"the part {info.filename} is encrypted")
        if info.compress_type not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED):
            raise Damaged(
                f"the part {info.filename} is packed with method "
                f"{info.compress_type}, which spreadsheet programs do not use"
            )
        declared += info.file_size
    if declared > limits.unpacked_bytes:
        raise _too_big(declared, limits, "declare")
    return archive


def _too_big(size: int, limits: ReadLimits, verb: str) -> LimitExceeded:
    return LimitExceeded(
        f"the workbook's parts {verb} {megabytes(size)} or more when unpacked, beyond the "
        f"limit of {megabytes(limits.unpacked_bytes)}",
        "Remove what the schedule does not need (pictures, other sheets, formatting of "
        "empty rows), or raise the limit with the environment variable "
        "PERTBOOK_MAX_UNPACKED_MB.",
    )


def _oversized(info: zipfile.ZipInfo) -> Damaged:
    return Damaged(
        f"the part {info.filename} unpacks to more than the {info.file_size:,} "
        "bytes its entry says (a file made to look small)"
    )


class Budget:
    """The unpacked bytes still allowed across all parts of one archive."""

    def __init__(self, limits: ReadLimits):
        self.limits = limits
        self.used = 0

    def spend(self, n: int) -> None:
        self.used += n
        if self.used > self.limits.unpacked_bytes:
            raise _too_big(self.used, self.limits, "reach")


def unpack(data: bytes, info: zipfile.ZipInfo, budget: Budget) -> Iterator[bytes]:
    """The unpacked bytes of one part, in chunks, whatever its declared size says.

    The packed bytes are taken from the local header the central directory points to; the
    output is counted against ``budget`` as it is produced, and unpacking stops as soon as
    it passes the part's declared size (Damaged: a part made to look small); a part that
    ends short of its declared size is Damaged too.
    """
    start = info.header_offset
    if data[start : start + 4] != b"PK\x03\x04":
        raise Damaged(f"the part {info.filename} has no local header")
    name_len, extra_len = struct.unpack_from("<HH", data, start + 26)
    begin = start + 30 + name_len + extra_len
    packed = memoryview(data)[begin : begin + info.compress_size]
    produced = 0
    if info.compress_type == zipfile.ZIP_STORED:
        for at in range(0, len(packed), CHUNK):
            piece = bytes(packed[at : at + CHUNK])
            budget.spend(len(piece))
            produced += len(piece)
            if produced > info.file_size:
                raise _oversized(info)
            yield piece
    else:
        inflate = zlib.decompressobj(-15)
        for at in range(0, len(packed), 64 * 1024):
            pending = bytes(packed[at : at + 64 * 1024])
            while pending and not inflate.eof:
                try:
                    out = inflate.decompress(pending, CHUNK)
                except zlib.error as exc:
                    raise Damaged(f"the part {info.filename} cannot be unpacked ({exc})") from None
                pending = inflate.unconsumed_tail
                budget.spend(len(out))
                produced += len(out)
                if produced > info.file_size:
                    raise _oversized(info)
                if out:
                    yield out
            if inflate.eof:
                break
        tail = inflate.flush()  # at most the 32 KB window (RFC 1951)
        budget.spend(len(tail))
        produced += len(tail)
        if produced > info.file_size:
            raise _oversized(info)
        if tail:
            yield tail
    if produced != info.file_size:
        raise Damaged(
            f"the part {info.filename} unpacks to {produced:,} bytes but its "
            f"entry says {info.file_size:,}"
        )
