"""Corpus cases: CSV text as people send it, things that are not files, odd file names.

Expected outcomes, and where they come from:

- CSV: RFC 4180 (quoted fields may hold the delimiter, quotes doubled, line breaks);
  README "CSV": the delimiter (comma, semicolon, tab or bar) is the one whose header row
  gives the required columns; UTF-8, UTF-8 or UTF-16 with a byte order mark, UTF-16
  without one, else Windows-1252; only CR and LF end a row, so U+2028, U+2029, U+0085
  and the C0 separators stay in their cell (Python's ``str.splitlines`` would split on
  all of them); a header row is looked for in the first 30 rows; ragged rows are common;
- not files (README "Only regular files are read"): a named pipe, a device, a socket, a
  folder, a link to any of them, are refused before they are opened (POSIX ``stat``
  file types, <sys/stat.h>); a link to a regular file is followed; a link that leads
  nowhere (dangling, or a loop: ``ELOOP``) is a file not found;
- names (README "Names too long for the disk"): any name the file system takes (255
  bytes on Linux, ``os.pathconf(..., "PC_NAME_MAX")``) gets a result, shortened when its
  derived names would be too long.

Cases named ``issue-...`` are the issue's own examples; the rest go beyond them.
"""

from __future__ import annotations

import codecs
import os
import stat
from pathlib import Path

from hostile_corpus import BASE, BASE_TE, HEADER, invalid, replaced, rows_with, valid, write_csv
from hostile_structure import base_xlsx

READ = {"T1": {"te": BASE_TE["T1"]}, "T4": {"te": BASE_TE["T4"]}}


def csv_of(rows, **kw):
    def make(path: Path) -> Path:
        return write_csv(path, rows, **kw)

    return make


def text(data: str, encoding: str = "utf-8", prefix: bytes = b""):
    def make(path: Path) -> Path:
        path.write_bytes(prefix + data.encode(encoding))
        return path

    return make


def lines(rows, delimiter: str = ",", end: str = "\n") -> str:
    """Rows joined without quoting (the cells hold no delimiter)."""
    return "".join(delimiter.join("" if v is None else str(v) for v in r) + end for r in rows)


CAFE = "Caf\u00e9 \u2013 \u20ac5"  # é, en dash, euro sign: all in Windows-1252
SEPARATORS = {"T1": "a\x85b", "T2": "a\u2029b", "T3": "a\u2028b"}
#: FileMaker writes a line break inside a field as a vertical tab (ASCII 11) in its CSV
#: exports (FileMaker Pro help, "Exporting data", from memory).
NOTES = {
    "T1": "Dig trench\x0bcheck permits\x0bcall utilities",
    "T2": "Lay pipe\x0bpressure test",
    "T3": "Backfill\x0bcompact\x0bsurvey",
}
READER = "h-read (converter/read)"


def described(names: dict[str, str]) -> list[list[object]]:
    rows = [list(r) for r in BASE]
    for row in rows[1:]:
        row[1] = names.get(row[0], row[1])
    return rows


def fifo(path: Path) -> Path:
    os.mkfifo(path)
    return path


def link_to(target: str):
    def make(path: Path) -> Path:
        path.symlink_to(target)
        return path

    return make


def link_to_fifo(path: Path) -> Path:
    os.mkfifo(path.parent / ".pipe")
    path.symlink_to(path.parent / ".pipe")
    return path


def link_to_good(path: Path) -> Path:
    base_xlsx(path.parent / ".real.xlsx")
    path.symlink_to(".real.xlsx")
    return path


def folder(path: Path) -> Path:
    path.mkdir()
    write_csv(path / "inside.csv", BASE)
    return path


def socket_file(path: Path) -> Path:
    os.mknod(path, stat.S_IFSOCK | 0o600)  # a socket inode, no process behind it
    return path


def link_loop(path: Path) -> Path:
    (path.parent / ".b.csv").symlink_to(path.name)
    path.symlink_to(".b.csv")
    return path


CSV = [
    valid(
        "issue-semicolons-with-commas-inside",
        "plan.csv",
        csv_of(replaced(3, 1, "Lay pipe, test, backfill"), delimiter=";"),
        {"T2": {"name": "Lay pipe, test, backfill"}},
    ),
    valid(
        "csv-tab-with-commas-and-semicolons",
        "plan.csv",
        csv_of(replaced(3, 1, "a, b; c"), delimiter="\t"),
        {"T2": {"name": "a, b; c"}},
    ),
    valid("csv-vertical-bar", "plan.csv", csv_of(BASE, delimiter="|"), READ),
    valid("csv-excel-separator-hint", "plan.csv", text("sep=;\n" + lines(BASE, ";")), READ),
    valid(
        "csv-quoted-crlf-in-cell",
        "plan.csv",
        csv_of(replaced(3, 1, "Lay\r\npipe")),
        {"T2": {"name": "Lay\r\npipe"}, "T3": {"te": BASE_TE["T3"]}},
    ),
    valid(
        "csv-doubled-quotes",
        "plan.csv",
        csv_of(replaced(3, 1, 'say "hi", then "go"')),
        {"T2": {"name": 'say "hi", then "go"'}},
    ),
    valid(
        "csv-line-separators-stay-in-cells",
        "plan.csv",
        csv_of(described(SEPARATORS)),
        {k: {"name": v} for k, v in SEPARATORS.items()},
    ),
    valid(
        "csv-utf16-big-endian-bom",
        "plan.csv",
        text(lines(replaced(3, 1, CAFE)), "utf-16-be", codecs.BOM_UTF16_BE),
        {"T2": {"name": CAFE}},
    ),
    valid(
        "csv-utf16-little-endian-no-bom",
        "plan.csv",
        text(lines(replaced(3, 1, CAFE)), "utf-16-le"),
        {"T2": {"name": CAFE}},
    ),
    valid(
        "csv-utf8-bom",
        "plan.csv",
        text(lines(replaced(3, 1, CAFE)), "utf-8-sig"),
        {"T2": {"name": CAFE}},
    ),
    valid(
        "csv-windows-1252",
        "plan.csv",
        text(lines(replaced(3, 1, CAFE)), "cp1252"),
        {"T2": {"name": CAFE}},
        watch=True,
    ),
    invalid("csv-utf32-bom", "plan.csv", text(lines(BASE), "utf-32"), "plan.csv"),
    valid(
        "csv-fixed-duration-short-row",
        "plan.csv",
        text(lines(BASE[:3]) + "T3,Backfill,T2,,1\n" + lines(BASE[4:])),
        {"T3": {"te": 1.0}},
        places=("T3",),
    ),
    invalid(
        "csv-truncated-row",
        "plan.csv",
        text(lines(BASE[:3]) + "T3,Backfill\n" + lines(BASE[4:])),
        "plan.csv!E4",
        "T3",
    ),
    valid(
        "csv-long-rows",
        "plan.csv",
        text("".join(r.rstrip("\n") + ",extra,more,\n" for r in lines(BASE).splitlines(True))),
        READ,
    ),
    valid(
        "csv-title-lines",
        "plan.csv",
        text("Project: Water main\nIssued,2025-01-06\n\n" + lines(BASE)),
        READ,
    ),
    invalid(
        "csv-header-on-row-31", "plan.csv", text("note\n" * 30 + lines(BASE)), "plan.csv", "30"
    ),
    valid("csv-cr-only-line-ends", "plan.csv", text(lines(BASE, end="\r")), READ),
    valid(
        "csv-mixed-line-ends",
        "plan.csv",
        text(
            "".join(
                r.rstrip("\n") + e
                for r, e in zip(lines(BASE).splitlines(True), ["\r\n", "\n", "\r", "\r\n", "\n"])
            )
        ),
        READ,
    ),
    valid("csv-blank-lines-between", "plan.csv", text(lines(BASE, end="\n\n\n")), READ),
    valid("csv-trailing-delimiters", "plan.csv", text(lines(BASE, end=",,,\n")), READ),
    invalid("csv-header-only", "plan.csv", text(lines(BASE[:1])), "plan.csv"),
    invalid("csv-whitespace-only", "plan.csv", text(" \t\r\n  \n"), "plan.csv"),
    invalid("csv-bom-only", "plan.csv", text("", "utf-8-sig"), "plan.csv"),
    valid(
        "csv-most-likely-twice",
        "plan.csv",
        csv_of(rows_with(header=HEADER + ["Most likely"])),
        READ,
        places=("E1", "G1", "Most likely"),
    ),
    valid(
        "csv-excel-text-formula-id",
        "plan.csv",
        csv_of(rows_with(['="0012"', "kept", "T4", 1, 1, 1])),
        {'="0012"': {"name": "kept"}},
        texts=('="0012"',),
    ),
    valid(
        "csv-40000-char-cell",
        "plan.csv",
        csv_of(replaced(3, 1, "w" * 40_000)),
        {"T2": {"name": "w" * 40_000}},
    ),
    invalid(
        "csv-one-megabyte-cell",
        "plan.csv",
        csv_of(replaced(3, 1, "w" * (1 << 20))),
        "plan.csv",
        "field limit",
    ),
    invalid(
        "csv-decimal-comma-in-semicolon-file",
        "plan.csv",
        csv_of(replaced(3, 4, "1,5"), delimiter=";"),
        "plan.csv!E3",
        "T2",
        "1,5",
    ),
    valid(
        "csv-vertical-tab-line-breaks",
        "plan.csv",
        csv_of(described(NOTES)),
        {k: {"name": v} for k, v in NOTES.items()},
    ),
    invalid(
        "csv-2000-columns",
        "plan.csv",
        csv_of([r + [f"c{k}" for k in range(2000)] for r in BASE]),
        "plan.csv",
        "1,000",
    ),
]

FILES = [
    invalid(
        "issue-fifo-named-csv",
        "plan.csv",
        fifo,
        "plan.csv",
        "named pipe",
        regular=False,
        watch=True,
    ),
    invalid(
        "issue-link-to-dev-zero",
        "plan.xlsx",
        link_to("/dev/zero"),
        "plan.xlsx",
        regular=False,
        watch=True,
    ),
    invalid("file-fifo-named-xlsx", "plan.xlsx", fifo, "plan.xlsx", "named pipe", regular=False),
    invalid("file-link-to-fifo", "plan.csv", link_to_fifo, "plan.csv", "named pipe", regular=False),
    invalid(
        "file-link-to-dev-urandom", "plan.csv", link_to("/dev/urandom"), "plan.csv", regular=False
    ),
    invalid("file-link-to-dev-null", "plan.xlsx", link_to("/dev/null"), "plan.xlsx", regular=False),
    invalid(
        "file-folder-named-xlsx",
        "plan.xlsx",
        folder,
        "plan.xlsx",
        "folder",
        regular=False,
        watch=True,
    ),
    invalid("file-socket", "plan.csv", socket_file, "plan.csv", "socket", regular=False),
    invalid("file-dangling-link", "plan.csv", link_to(".gone.csv"), "plan.csv", regular=False),
    invalid(
        "file-link-loop",
        "plan.csv",
        link_loop,
        "plan.csv",
        regular=False,
    ),
    valid("file-link-to-regular-file", "plan.xlsx", link_to_good, READ),
]

NAMES = [
    valid("issue-253-character-name", "N" * 248 + ".xlsx", base_xlsx, READ, watch=True),
    valid("name-255-bytes", "M" * 250 + ".xlsx", base_xlsx, READ),
    valid("name-multibyte-near-limit", "\u00fc" * 125 + ".csv", csv_of(BASE), READ),
    valid("name-quotes-and-symbols", 'plan "final" (2) & co; $(x) `y`.xlsx', base_xlsx, READ),
    valid(
        "name-not-utf8",
        "plan-\udcff\udcfe.csv",
        csv_of(BASE),
        READ,
    ),
    valid("name-leading-dash", "-rf --help.csv", csv_of(BASE), READ),
    valid("name-decomposed-accent", "Cafe\u0301 plan.xlsx", base_xlsx, READ),
    valid("name-right-to-left-override", "plan\u202excod.csv", csv_of(BASE), READ),
]

CASES = CSV + FILES + NAMES
