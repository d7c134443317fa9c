"""CSV as people send it: other delimiters, line breaks in cells, UTF-16, other encodings.

References: RFC 4180 section 2 (a quoted field may hold line breaks and the delimiter);
the Unicode Standard 5.8 (U+2028 LINE SEPARATOR is a line break to text editors, not a
CSV record end); Python's csv module (the reference parser the expected rows come from).
"""

from __future__ import annotations

import csv
import io

import pytest

from converter.api import load
from converter.read.csv_text import decode
from converter.read.sheets import read_input

HEADER = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
ROWS = [
    HEADER,
    ["A", "Survey, set out and peg", "", "1", "2", "3"],
    ["B", "Dig, cart away", "A", "2", "3", "5"],
    ["C", "Pour; cure", "A", "1", "1", "2"],
    ["D", "Frame, clad, roof", "B, C", "3", "5", "8"],
]


def as_csv(rows, delimiter=",") -> str:
    """The rows written by Python's csv module (the reference writer)."""
    out = io.StringIO()
    csv.writer(out, delimiter=delimiter, lineterminator="\r\n").writerows(rows)
    return out.getvalue()


@pytest.mark.parametrize(
    ("delimiter", "word"), [(";", "semicolon"), ("\t", "tab"), ("|", "vertical bar")]
)
def test_delimiter_is_the_one_that_yields_the_headers(tmp_path, delimiter, word):
    # descriptions full of commas: counting characters would pick the comma
    path = tmp_path / "plan.csv"
    path.write_text(as_csv(ROWS, delimiter), encoding="utf-8")
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert [a.name for a in schedule.activities] == [r[1] for r in ROWS[1:]]
    assert any(n.startswith(f"Delimiter: {word}") for n in schedule.notes), schedule.notes


def test_comma_file_has_no_delimiter_note(tmp_path):
    path = tmp_path / "plan.csv"
    path.write_text(as_csv(ROWS), encoding="utf-8")
    schedule, _ = load(path)
    assert not [n for n in schedule.notes if n.startswith(("Delimiter", "Encoding"))]


def test_line_break_inside_a_quoted_cell_stays_in_the_cell(tmp_path):
    rows = [r[:] for r in ROWS]
    rows[4][2] = "B\nC"  # two predecessors on two lines of one cell
    rows[2][1] = "Dig\r\ncart away"
    path = tmp_path / "plan.csv"
    path.write_text(as_csv(rows), encoding="utf-8", newline="")
    result = read_input(path)
    expected = list(csv.reader(io.StringIO(as_csv(rows), newline="")))
    assert len(result.raw.sheets[0].rows) == len(expected) == 5
    assert result.raw.sheets[0].rows[4][2] == "B\nC"
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    d = next(a for a in schedule.activities if a.id == "D")
    assert sorted(lk.pred for lk in schedule.links if lk.succ == "D") == ["B", "C"], d


@pytest.mark.parametrize("separator", ["\u2028", "\u2029", "\x85", "\x0b", "\x0c", "\x1e"])
def test_unicode_line_separators_do_not_split_rows(tmp_path, separator):
    rows = [r[:] for r in ROWS]
    rows[1][1] = f"Survey{separator}set out"
    path = tmp_path / "plan.csv"
    path.write_text(as_csv(rows), encoding="utf-8", newline="")
    sheet = read_input(path).raw.sheets[0]
    assert len(sheet.rows) == 5 and sheet.rows[1][1] == f"Survey{separator}set out"


@pytest.mark.parametrize(
    ("encoding", "bom", "name"),
    [
        ("utf-16", b"", "UTF-16"),  # Python writes the BOM for "utf-16"
        ("utf-16-le", b"", "UTF-16 LE without BOM"),
        ("utf-16-be", b"", "UTF-16 BE without BOM"),
        ("utf-8", b"\xef\xbb\xbf", "UTF-8 with BOM"),
        ("cp1252", b"", "Windows-1252"),
    ],
)
def test_encoding_is_detected_and_named(tmp_path, encoding, bom, name):
    rows = [r[:] for r in ROWS]
    rows[1][1] = "Relevé, géomètre"  # letters outside ASCII, in every one of these codecs
    path = tmp_path / "plan.csv"
    path.write_bytes(bom + as_csv(rows, ";").encode(encoding))
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.activities[0].name == "Relevé, géomètre"
    assert f"Encoding: {name}." in schedule.notes


def test_decode_falls_back_to_latin_1():
    # 0x81 is undefined in Windows-1252 (its code chart), defined in Latin-1
    assert decode(b"ID\x81") == ("ID\x81", "Latin-1")


def test_title_lines_and_ragged_rows_still_read(tmp_path):
    text = "Depot extension, issue 3\r\n\r\n" + as_csv(ROWS, ";")
    path = tmp_path / "plan.csv"
    path.write_text(text, encoding="utf-8")
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.raw.header_row == 3


def test_a_field_too_long_is_a_problem_not_a_crash(tmp_path):
    path = tmp_path / "plan.csv"
    path.write_text('ID,Most likely\nA,"' + "x" * 1_100_000 + '"\n', encoding="utf-8")
    result = read_input(path)
    (p,) = result.problems
    assert p.code == "unreadable" and "field larger than field limit" in p.message
