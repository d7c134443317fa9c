"""Resource bounds: small hostile files are refused before a library lays out their cells.

Each case is crafted in tmp_path (tests/read/crafted.py) and read in a child process that
reports its peak resident memory (``VmHWM`` of /proc/self/status on Linux, else
``resource.getrusage(RUSAGE_SELF).ru_maxrss``) and runs under an address-space cap, so a
regression fails here instead of taking the machine down. Before this reader,
python-calamine aborted the process on the stray-cell cases ("memory allocation of
549755813888 bytes failed", exit 134; observed here with python-calamine 0.9.1) and
reserved memory for a shared string table's declared count. The limits are the reader's
documented defaults (converter/read/limits.py); the expected extents are worked out by
hand from the cells written.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import crafted
import pytest
from helpers import REPO, run_cli

from converter.read.limits import MAX_COLUMNS, MAX_ROWS

#: Peak memory allowed for reading any hostile case (the reader alone needs about 30 MB).
PEAK_MB = 400
#: Address space of the child: far above what a correct reading needs, far below the
#: 512 GB a stray cell at XFD1048576 asked for.
CAP_BYTES = 3 << 30

CHILD = """
import json, resource, sys, time
resource.setrlimit(resource.RLIMIT_AS, ({cap}, {cap}))
from converter.read.sheets import read_input
def peak_mb():
    # VmHWM: this process's own high-water mark; ru_maxrss also counts the parent's pages
    # at a vfork-and-exec (Linux keeps the larger value across exec)
    try:
        with open("/proc/self/status") as f:
            return next(int(l.split()[1]) for l in f if l.startswith("VmHWM")) / 1024
    except (OSError, StopIteration):
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
start = time.perf_counter()
result = read_input(sys.argv[1])
print(json.dumps({{
    "read": result.raw is not None,
    "problems": [[p.code, p.sheet, p.cell, p.message] for p in result.problems],
    "sheets": [[s.name, len(s.rows)] for s in (result.raw.sheets if result.raw else [])],
    "sha256": result.sha256,
    "peak_mb": peak_mb(),
    "seconds": time.perf_counter() - start,
}}))
"""


def read_in_child(path: Path, **env: str) -> dict:
    """Read ``path`` in a fresh interpreter; its report (measured figures included)."""
    environ = dict(os.environ, PYTHONPATH=str(REPO), **env)
    proc = subprocess.run(
        [sys.executable, "-c", CHILD.format(cap=CAP_BYTES), str(path)],
        capture_output=True,
        text=True,
        env=environ,
        timeout=300,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr[-2000:]  # no abort, no panic, no traceback
    report = json.loads(proc.stdout)
    print(f"{path.name}: peak {report['peak_mb']:.0f} MB, {report['seconds']:.3f} s")
    assert report["peak_mb"] < PEAK_MB, report
    return report


def refused(report: dict, code: str = "too-large") -> list:
    assert not report["read"], report
    (problem,) = report["problems"]
    assert problem[0] == code, problem
    return problem


HEADER = crafted.header_row(["ID", "Optimistic", "Most likely", "Pessimistic"])


# --------------------------------------------------------------------------- xlsx
@pytest.mark.parametrize(
    ("ref", "limit"),
    [
        ("XFD1048576", f"limit of {MAX_ROWS:,} rows"),  # the last cell of a sheet
        ("ZZZZZ99999999", f"limit of {MAX_ROWS:,} rows"),  # beyond any spreadsheet's grid
        ("XFD12000", f"limit of {MAX_COLUMNS:,} columns"),  # 16,384 columns, few rows
    ],
)
def test_stray_far_cell_is_refused_naming_the_cell_and_the_limit(tmp_path, ref, limit):
    path = crafted.xlsx(
        tmp_path / "stray.xlsx",
        {"Plan": HEADER + f'<row r="2">{crafted.number_cell(ref, 1)}</row>'},
    )
    assert path.stat().st_size < 2048
    sheet, cell, message = refused(read_in_child(path))[1:]
    assert (sheet, cell) == ("Plan", ref)
    assert ref in message and limit in message


def test_formatting_only_far_cell_reads_the_used_block(tmp_path):
    # <c r=".." s="1"/> has no value (ECMA-376 18.3.1.4): the library skips it, so may we
    path = crafted.xlsx(
        tmp_path / "styled.xlsx",
        {"Plan": HEADER + '<row r="1048576"><c r="XFD1048576" s="1"/></row>'},
    )
    report = read_in_child(path)
    assert report["read"] and report["sheets"] == [["Plan", 1]]


def test_rows_without_references_count_too(tmp_path):
    # cells without r follow the one before (ECMA-376 18.3.1.4); 1,001 of them in a row
    cells = "".join("<c><v>1</v></c>" for _ in range(MAX_COLUMNS + 1))
    path = crafted.xlsx(tmp_path / "implicit.xlsx", {"Plan": HEADER + f"<row>{cells}</row>"})
    problem = refused(read_in_child(path))
    assert problem[2] == "ALM2"  # column 1,001 (ALM) of row 2, worked out by hand


def test_a_cell_hidden_behind_a_quoted_angle_bracket_is_still_seen(tmp_path):
    # ">" is allowed inside an attribute value (XML 1.0, 3.1); the scan must not stop there
    cell = '<c x=">" r="XFD1048576"><v>1</v></c>'
    path = crafted.xlsx(tmp_path / "quoted.xlsx", {"Plan": HEADER + f'<row r="2">{cell}</row>'})
    assert refused(read_in_child(path))[2] == "XFD1048576"


def test_a_cell_after_a_comment_is_still_seen(tmp_path):
    cell = '<!-- " --><c r="XFD1048576"><v>1</v></c>'
    path = crafted.xlsx(tmp_path / "comment.xlsx", {"Plan": HEADER + f"<row>{cell}</row>"})
    assert refused(read_in_child(path))[2] == "XFD1048576"


def test_declared_unpacked_size_over_the_limit_is_refused_unread(tmp_path):
    path = crafted.deflate_bomb(tmp_path / "bomb.xlsx", 400 << 20)  # 400 MB of blanks
    assert path.stat().st_size < 1 << 20
    message = refused(read_in_child(path))[3]
    assert "declare 400" in message and "limit of 300 MB" in message


def test_lying_unpacked_size_is_caught_while_unpacking(tmp_path):
    path = crafted.deflate_bomb(tmp_path / "liar.xlsx", 400 << 20)
    crafted.lie_about_size(path, "xl/worksheets/sheet1.xml", 1000)
    with zipfile.ZipFile(path) as z:  # the archive itself now claims a small part
        assert z.getinfo("xl/worksheets/sheet1.xml").file_size == 1000
    message = refused(read_in_child(path), "unreadable")[3]
    assert "unpacks to more than the 1,000 bytes its entry says" in message


def test_shared_string_table_claiming_billions_is_refused(tmp_path):
    shared = (
        '<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
        'count="4000000000" uniqueCount="4000000000"><si><t>ID</t></si></sst>'
    )
    path = crafted.xlsx(
        tmp_path / "sst.xlsx", {"Plan": '<row r="1"><c r="A1" t="s"><v>0</v></c></row>'}, shared
    )
    assert "4,000,000,000 entries" in refused(read_in_child(path))[3]


def test_too_many_parts_is_refused_before_listing_them(tmp_path):
    path = crafted.xlsx(
        tmp_path / "parts.xlsx",
        {"Plan": HEADER},
        extra={f"xl/media/p{k}.bin": b"" for k in range(30)},
    )
    report = read_in_child(path, PERTBOOK_MAX_PARTS="20")  # the limit set from outside
    assert "35 parts" in refused(report)[3]  # 30 + the package's 5 parts, by hand


# --------------------------------------------------------------------------- ods
ODS_HEAD = (
    "<table:table-row>" + crafted.ods_cell("ID") + crafted.ods_cell("M") + "</table:table-row>"
)


def test_ods_with_repeated_empty_tail_reads(tmp_path):
    # LibreOffice ends a sheet like this: a million empty rows, 16,384 empty cells each
    tail = (
        '<table:table-row table:number-rows-repeated="1048575"><table:table-cell '
        'table:number-columns-repeated="16384"/></table:table-row>'
    )
    report = read_in_child(crafted.ods(tmp_path / "tail.ods", {"Plan": ODS_HEAD + tail}))
    assert report["read"] and report["sheets"] == [["Plan", 1]]


@pytest.mark.parametrize(
    ("rows", "cols", "cell"),
    [
        (1_048_575, 1, "A1048576"),  # a filled row repeated a million times
        (1, 16_384, "XFD2"),  # a filled cell repeated across the sheet
        (100_000, 16_384, "XFD100001"),  # both: 1.6 billion cells in 900 bytes
    ],
)
def test_ods_repeated_filled_cells_are_refused(tmp_path, rows, cols, cell):
    body = (
        f'<table:table-row table:number-rows-repeated="{rows}">'
        f"{crafted.ods_cell('x', cols)}</table:table-row>"
    )
    path = crafted.ods(tmp_path / "repeat.ods", {"Plan": ODS_HEAD + body})
    assert refused(read_in_child(path))[1:3] == ["Plan", cell]


# --------------------------------------------------------------------------- xls
def test_xls_far_cell_is_refused(tmp_path):
    stream = crafted.xls_stream([["ID", "M"]] + [[None]] * 65534 + [[None] * 255 + [1.5]])
    path = crafted.compound_file(tmp_path / "far.xls", {"Workbook": stream})
    message = refused(read_in_child(path))[3]
    assert "16,777,216 cells" in message  # 65,536 rows x 256 columns from A1, by hand


def test_xls_dimensions_record_that_lies_is_refused(tmp_path):
    # the library lays out an .xls sheet from its DIMENSIONS record ([MS-XLS] 2.4.90)
    records = crafted.biff_records(crafted.xls_stream([["ID", "M"], ["A", 2]]))
    patched = [
        (
            k,
            (b"\x00" * 4 + b"\xff\xff\xff\xff" + b"\x00\x00\xff\xff" + b[12:])
            if k == 0x0200
            else b,
        )
        for k, b in records
    ]
    path = crafted.compound_file(tmp_path / "dims.xls", {"Workbook": crafted.biff_join(patched)})
    message = refused(read_in_child(path))[3]
    assert "declares its cells reach" in message and "4,294,967,295 rows" in message


# --------------------------------------------------------------------------- size, csv
def test_file_over_the_size_limit_is_refused_and_not_hashed(tmp_path):
    path = tmp_path / "big.csv"
    path.write_bytes(b"ID,Most likely\n" + b"A,1\n" * 600_000)  # 2.4 MB
    report = read_in_child(path, PERTBOOK_MAX_FILE_MB="1")
    assert "more than the 1 MB" in refused(report)[3] and report["sha256"] is None


def test_csv_over_the_row_limit_is_refused(tmp_path):
    path = tmp_path / "rows.csv"
    path.write_bytes(b"ID,Most likely\n" + b"A,1\n" * 200)
    report = read_in_child(path, PERTBOOK_MAX_ROWS="100")
    assert "more than 100 rows" in refused(report)[3]


def test_csv_over_the_column_limit_is_refused_as_such(tmp_path):
    # Every delimiter but the comma finds none of the headers, and the comma gives rows
    # wider than the limit: the limit is what is reported, not a missing column.
    path = tmp_path / "wide.csv"
    extra = ",".join(f"c{k}" for k in range(200))
    path.write_text(f"ID,Most likely,{extra}\nA,1,{extra}\n")
    report = read_in_child(path, PERTBOOK_MAX_COLUMNS="100")
    assert "202 fields on row 1, more than 100 columns" in refused(report)[3]


# --------------------------------------------------------------------------- command line
def test_check_and_convert_refuse_a_stray_cell_with_exit_2(tmp_path):
    path = crafted.xlsx(
        tmp_path / "stray.xlsx",
        {"Plan": HEADER + '<row r="2"><c r="XFD1048576"><v>1</v></c></row>'},
    )
    before = path.read_bytes()
    for command in (["check", path], ["convert", path, "--outdir", tmp_path / "out"]):
        proc = run_cli(*command)
        assert proc.returncode == 2, proc.stderr
        assert "Traceback" not in proc.stderr + proc.stdout
        assert "XFD1048576" in proc.stderr and "limit" in proc.stderr
    assert path.read_bytes() == before
    assert not list((tmp_path / "out").glob("*.xlsx")) if (tmp_path / "out").exists() else True
