"""A streaming scan of a workbook's XML for a few tags, in bounded memory.

The sheet XML of a workbook can unpack to hundreds of megabytes; the scan sees it in
chunks as it is unpacked and keeps only the unfinished tag between chunks. It reads the
markup the way an XML parser does (comments, CDATA sections and processing instructions
are skipped whole; a ``>`` inside a quoted attribute value does not end a tag), so a file
cannot hide a cell from the scan that the spreadsheet library would then read. A document
type declaration (which no spreadsheet program writes, and which could declare entities)
is refused.

References
----------
Extensible Markup Language (XML) 1.0 (Fifth Edition), W3C Recommendation, 2008,
sections 2.4-2.8 (character data, comments, processing instructions, CDATA sections) and
3.1 (start tags, end tags, empty-element tags).
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Callable, Iterable, Iterator

from converter.read.limits import Damaged

#: Longest single tag, comment or CDATA section kept between chunks.
MAX_TOKEN = 4 * 1024 * 1024

#: The most bytes after the last ``<`` of a buffer that the fast path keeps for later.
FAST_TAIL = 64 * 1024

_ATTRS = rb"""((?:[^>"']|"[^"]*"|'[^']*')*)"""
_PREFIX = rb"(?:[A-Za-z_][\w.-]*:)?"
_OTHER_MARKUP = (
    rb"<!--.*?-->|<!\[CDATA\[.*?\]\]>|<\?.*?\?>|"
    rb"</(?!" + _PREFIX + rb"(?:ENDS)[\s>])[^>]*>|"
    rb"<(?![!?/])(?!" + _PREFIX + rb"(?:STARTS)[\s/>])" + _ATTRS.replace(b"(", b"(?:", 1) + rb">"
)
_ATTRIBUTE = re.compile(rb"""([^\s=/]+)\s*=\s*(?:"([^"]*)"|'([^']*)')""")


def attributes(text: bytes, local: bool = True) -> dict[bytes, bytes]:
    """A start tag's attributes by local name (the prefix dropped; by full name when
    ``local`` is false); the first one wins.

    Examples
    --------
    >>> attributes(b' r="B2" t=\\'e\\' x:s="3"')
    {b'r': b'B2', b't': b'e', b's': b'3'}
    >>> attributes(b' x:r="B2"', local=False)
    {b'x:r': b'B2'}
    """
    found: dict[bytes, bytes] = {}
    for m in _ATTRIBUTE.finditer(text):
        name = m.group(1).rpartition(b":")[2] if local else m.group(1)
        if name not in found:
            found[name] = m.group(2) if m.group(2) is not None else m.group(3)
    return found


class TagScanner:
    """Feeds chunks of XML; calls ``on_tag(match, buffer, final)`` for each start tag named in
    ``names`` and each end tag named in ``end_names``.

    A match's groups: ``end`` (``b"/"`` for an end tag), ``name`` (local name), ``attrs``
    (the attribute text; it ends in ``/`` for an empty-element tag). The handler returns
    None, or a position in the buffer to resume from once more of the document has come.

    ``fast(region)``, when given, may take a region of whole tags first and return True
    when it has dealt with it exactly (e.g. with one regular expression over the region);
    otherwise the region is scanned tag by tag.
    """

    def __init__(
        self,
        names: Iterable[str],
        on_tag: Callable[[re.Match, bytes, bool], int | None],
        end_names: Iterable[str] = (),
        fast: Callable[[bytes], bool] | None = None,
    ):
        starts = b"|".join(re.escape(n.encode()) for n in names)
        ends = b"|".join(re.escape(n.encode()) for n in end_names) or b"(?!)"
        other = _OTHER_MARKUP.replace(b"ENDS", ends).replace(b"STARTS", starts)
        wanted = (
            rb"<(?P<end>/(?="
            + _PREFIX
            + rb"(?:"
            + ends
            + rb")[\s>]))?"
            + _PREFIX
            + rb"(?P<name>"
            + starts
            + rb")(?=[\s/>])"
            + _ATTRS.replace(b"(", b"(?P<attrs>", 1)
            + rb">"
        )
        self._next = re.compile(rb"(?:[^<]*(?:" + other + rb"))*[^<]*" + wanted, re.DOTALL)
        self._skip = re.compile(rb"(?:[^<]*(?:" + other + rb"))*[^<]*", re.DOTALL)
        self._on_tag = on_tag
        self._fast = fast
        self._carry = b""
        self._decoder = None
        self._started = False

    def feed(self, chunk: bytes, final: bool = False) -> None:
        """Scan one more chunk (``final`` for the last one)."""
        chunk = self._transcode(chunk, final)
        buf = self._carry + chunk if self._carry else chunk
        if b"<" not in buf:  # text only (e.g. padding): nothing to scan, nothing to keep
            self._keep(buf, len(buf), final)
            return
        if self._fast is not None:
            cut = len(buf) if final else buf.rfind(b"<")
            cut = len(buf) if cut < 0 else cut
            # a long tail after the last "<" is text (padding): the slow path drops it
            if len(buf) - cut < FAST_TAIL and self._fast(buf[:cut]):
                self._keep(buf, cut, final)
                return
        pos = 0
        while True:
            m = self._next.match(buf, pos)
            if m is None:
                break
            resume = self._on_tag(m, buf, final)
            if resume is not None:  # the handler needs more of the document first
                self._keep(buf, resume, final)
                return
            pos = m.end()
        pos = self._skip.match(buf, pos).end()
        self._keep(buf, pos, final)

    def _keep(self, buf: bytes, pos: int, final: bool) -> None:
        rest = buf[pos:]
        if rest.startswith(b"<!DOCTYPE"):
            raise Damaged(
                "the XML holds a document type declaration, which spreadsheet programs never write"
            )
        if final:
            if rest.strip():
                raise Damaged("the XML ends in the middle of a tag")
            self._carry = b""
            return
        if len(rest) > MAX_TOKEN:
            raise Damaged(
                "the XML holds a single tag, comment or text section over "
                f"{MAX_TOKEN // (1024 * 1024)} MB"
            )
        self._carry = rest

    def _transcode(self, chunk: bytes, final: bool) -> bytes:
        """UTF-16 XML (with its byte order mark) becomes UTF-8; other XML is left as is."""
        if not self._started:
            self._started = True
            if chunk.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
                self._decoder = codecs.getincrementaldecoder("utf-16")()
        if self._decoder is None:
            return chunk
        return self._decoder.decode(chunk, final).encode("utf-8")


def scan(scanner: TagScanner, chunks: Iterator[bytes]) -> None:
    """Feed every chunk, then an empty final one."""
    for chunk in chunks:
        scanner.feed(chunk)
    scanner.feed(b"", final=True)
