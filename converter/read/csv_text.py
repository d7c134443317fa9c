"""CSV files -> rows of text: the encoding, the delimiter, and the whole stream parsed.

- **Encoding**: a byte order mark says UTF-8 or UTF-16; UTF-16 without one is recognised
  by its zero bytes; otherwise UTF-8, then Windows-1252 (which spreadsheet exports often
  use), then Latin-1. The notes say which, when it was not plain UTF-8.
- **Delimiter**: each of ``,`` ``;`` tab ``|`` is tried, and the one whose header row names
  the most of the required columns wins (then the most recognised columns, then the most
  fields per row); the notes say which was used when it was not a comma.
- **Rows**: the csv module reads the whole text, so a line break inside a quoted cell
  stays in the cell, and only ``\\r`` and ``\\n`` end a row (U+2028 and the other Unicode
  line separators stay in the cell where they were typed).

References
----------
RFC 4180, Common Format and MIME Type for Comma-Separated Values (CSV) Files (2005),
section 2 (quoted fields may hold line breaks); The Unicode Standard, section 5.8
(newline guidelines: U+2028, U+2029, U+0085 are line separators to a text editor, not
to CSV); Python's csv module documentation (``newline=""`` semantics).
"""

from __future__ import annotations

import codecs
import csv
from collections.abc import Callable
from dataclasses import dataclass, field, replace

from converter.read.limits import LimitExceeded, ReadLimits

CSV_DELIMITERS = (",", ";", "\t", "|")
DELIMITER_WORDS = {",": "comma", ";": "semicolon", "\t": "tab", "|": "vertical bar"}
#: Rows read with each candidate delimiter to rank it.
HEADER_ROWS_TRIED = 50
#: Longest cell text read (characters); longer is refused, not cut.
MAX_FIELD = 1_000_000


@dataclass
class CsvText:
    """A CSV file's rows (text, blanks None) and how it was read."""

    rows: list[list[object]]
    encoding: str
    delimiter: str
    notes: list[str] = field(default_factory=list)


def decode(data: bytes) -> tuple[str, str]:
    """(text, encoding name) of a CSV file's bytes.

    Examples
    --------
    >>> decode("ID;Tâche".encode("utf-16"))
    ('ID;Tâche', 'UTF-16')
    >>> decode(b"\\xef\\xbb\\xbfID"), decode("Coût".encode("cp1252"))
    (('ID', 'UTF-8 with BOM'), ('Coût', 'Windows-1252'))
    """
    if data.startswith(codecs.BOM_UTF8):
        return data[3:].decode("utf-8", "replace"), "UTF-8 with BOM"
    for bom, name in ((codecs.BOM_UTF32_LE, "UTF-32"), (codecs.BOM_UTF32_BE, "UTF-32")):
        if data.startswith(bom):
            return data.decode("utf-32", "replace"), name
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return data.decode("utf-16", "replace"), "UTF-16"
    head = data[:4096]
    if len(head) >= 4 and head.count(0) >= len(head) // 4:
        codec = "utf-16-le" if head[1::2].count(0) > head[0::2].count(0) else "utf-16-be"
        return data.decode(codec, "replace"), codec.upper().replace("-LE", " LE").replace(
            "-BE", " BE"
        ) + " without BOM"
    for codec, name in (("utf-8", "UTF-8"), ("cp1252", "Windows-1252")):
        try:
            return data.decode(codec), name
        except UnicodeDecodeError:
            continue
    return data.decode("latin-1"), "Latin-1"


def parse(
    text: str, delimiter: str, limits: ReadLimits, first: int | None = None
) -> list[list[object]]:
    """Every row of the text (blank cells None, text stripped), within the limits; only the
    ``first`` rows when that is given (to try a delimiter on the top of the file)."""
    rows: list[list[object]] = []
    cells = 0
    limit = csv.field_size_limit()
    try:
        csv.field_size_limit(MAX_FIELD)
        reader = csv.reader(_Lines(text), delimiter=delimiter)
        for row in reader:
            if first is not None and len(rows) >= first:
                break
            if len(rows) >= limits.rows:
                raise _too_many(f"more than {limits.rows:,} rows", "ROWS")
            if len(row) > limits.columns:
                raise _too_many(
                    f"{len(row):,} fields on row {len(rows) + 1:,}, more than "
                    f"{limits.columns:,} columns",
                    "COLUMNS",
                )
            cells += len(row)
            if cells > limits.cells:
                raise _too_many(f"more than {limits.cells:,} cells", "CELLS")
            rows.append([v.strip() or None for v in row])
    except csv.Error as exc:
        raise ValueError(f"cannot be read as CSV ({exc})") from None
    finally:
        csv.field_size_limit(limit)
    return rows


class _Lines:
    """The text cut into lines at ``\\r\\n``, ``\\r`` or ``\\n`` only (each kept with its end),
    as the csv module expects from a file opened with ``newline=""``."""

    def __init__(self, text: str):
        self.text = text
        self.pos = 0

    def __iter__(self):
        return self

    def __next__(self) -> str:
        text, pos = self.text, self.pos
        if pos >= len(text):
            raise StopIteration
        n, r = text.find("\n", pos), text.find("\r", pos)
        ends = [e for e in (n, r) if e >= 0]
        if not ends:
            self.pos = len(text)
            return text[pos:]
        end = min(ends)
        if text[end] == "\r" and text.startswith("\n", end + 1):
            end += 1
        self.pos = end + 1
        return text[pos : end + 1]


def _too_many(what: str, variable: str) -> LimitExceeded:
    return LimitExceeded(
        f"the CSV file has {what}, beyond the limit",
        f"Split the file, or raise the limit with the environment variable "
        f"PERTBOOK_MAX_{variable}.",
    )


def read_csv(
    data: bytes, limits: ReadLimits, header_score: Callable[[list[list[object]]], tuple]
) -> CsvText:
    """Decode, choose the delimiter by what its header row yields, and parse.

    ``header_score(rows)`` ranks the first rows read with one delimiter (higher is better:
    e.g. the number of required columns found, then of recognised ones).
    """
    text, encoding = decode(data)
    sample = text[:65536]
    # the sample alone is small: a delimiter is ranked by its headers even when its rows
    # are wider than the column limit, so that the limit, not a missing column, is reported
    # when the whole file is parsed with it
    wide = replace(limits, columns=len(sample) + 1, cells=len(sample) + 1)
    best, best_rank = ",", None
    for k, delimiter in enumerate(CSV_DELIMITERS):
        try:
            head = parse(sample, delimiter, wide, first=HEADER_ROWS_TRIED)
        except (ValueError, LimitExceeded):
            continue
        widest = max((len(r) for r in head), default=0)
        rank = (*header_score(head), widest > 1, widest, -k)
        if best_rank is None or rank > best_rank:
            best, best_rank = delimiter, rank
    rows = parse(text, best, limits)
    notes = []
    if encoding != "UTF-8":
        notes.append(f"Encoding: {encoding}.")
    if best != ",":
        notes.append(
            f"Delimiter: {DELIMITER_WORDS[best]} ({best!r}), chosen because it gives "
            "the most recognised column headers."
        )
    return CsvText(rows, encoding, best, notes)
