"""A file is recognised by its content, and a mismatch is said in plain words.

Signatures: zip ``PK\\x03\\x04`` (APPNOTE 4.3.7), OLE ``D0 CF 11 E0 A1 B1 1A E1`` ([MS-CFB]
2.2), PDF ``%PDF`` (ISO 32000-1 7.5.2). An encrypted Office Open XML document is an OLE
file holding the streams ``EncryptionInfo`` and ``EncryptedPackage`` ([MS-OFFCRYPTO]
2.3.4.4-2.3.4.5); an encrypted .xls has a FILEPASS record after its BOF ([MS-XLS] 2.4.117).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import crafted
import pytest
from helpers import GOOD_ROWS, good_xlsx, run_cli, write_csv

from converter.api import load
from converter.read.sheets import read_input


def only_problem(path: Path):
    result = read_input(path)
    assert result.raw is None
    (problem,) = result.problems
    assert problem.sheet == path.name
    return problem


def test_workbook_renamed_csv_is_named_for_what_it_is(tmp_path):
    path = tmp_path / "plan.csv"
    shutil.copy(good_xlsx(tmp_path / "plan.xlsx"), path)
    p = only_problem(path)
    assert p.code == "unreadable"
    assert p.message == (
        "plan.csv is not a CSV file: by its content it is an Excel workbook (.xlsx)"
    )
    assert "real type" in p.fix


def test_csv_renamed_xlsx_is_named_for_what_it_is(tmp_path):
    path = tmp_path / "plan.xlsx"
    shutil.copy(write_csv(tmp_path / "plan.csv", GOOD_ROWS), path)
    p = only_problem(path)
    assert "by its content it is plain text (perhaps comma-separated values)" in p.message
    assert "rename it to plan.csv" in p.fix


ENCRYPTION_INFO = b"\x04\x00\x04\x00\x40\x00\x00\x00"  # version 4.4 (agile), then XML


def test_encrypted_workbook_says_save_a_copy_without_a_password(tmp_path):
    path = crafted.compound_file(
        tmp_path / "secret.xlsx",
        {"EncryptionInfo": ENCRYPTION_INFO + b"<encryption/>", "EncryptedPackage": b"\x00" * 5000},
    )
    p = only_problem(path)
    assert p.code == "encrypted"
    assert "is an encrypted workbook (protected by a password" in p.message
    assert p.fix.startswith("Save a copy without a password")
    proc = run_cli("check", path)
    assert proc.returncode == 2 and "encrypted workbook" in proc.stderr
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize("suffix", [".csv", ".xls", ".ods"])
def test_encrypted_workbook_is_told_whatever_its_name(tmp_path, suffix):
    path = crafted.compound_file(
        tmp_path / f"secret{suffix}",
        {"EncryptionInfo": ENCRYPTION_INFO, "EncryptedPackage": b"\x00" * 5000},
    )
    assert only_problem(path).code == "encrypted"


def test_encrypted_xls_with_a_filepass_record(tmp_path):
    records = crafted.biff_records(crafted.xls_stream(GOOD_ROWS))
    filepass = (0x002F, b"\x00\x00" + b"\x00" * 4)  # XOR obfuscation: key and verifier
    stream = crafted.biff_join(records[:1] + [filepass] + records[1:])
    path = crafted.compound_file(tmp_path / "secret.xls", {"Workbook": stream})
    assert only_problem(path).code == "encrypted"


def test_xls_written_by_an_independent_writer_reads_through_the_crafted_container(tmp_path):
    # the container builder itself: xlwt's BIFF stream in crafted.compound_file reads back
    path = crafted.compound_file(
        tmp_path / "plain.xls", {"Workbook": crafted.xls_stream(GOOD_ROWS)}
    )
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert [a.id for a in schedule.activities] == ["A", "B", "C", "D"]


def test_xlsx_named_xls_is_read_by_its_content_with_a_note(tmp_path):
    path = tmp_path / "plan.xls"
    shutil.copy(good_xlsx(tmp_path / "plan.xlsx"), path)
    schedule, problems = load(path)
    assert schedule is not None and not problems
    assert (
        "plan.xls is an Excel workbook (.xlsx) by its content; it was read as one."
        in schedule.notes
    )


@pytest.mark.parametrize(
    ("name", "content", "words"),
    [
        (
            "page.xls",
            b"<html><body><table><tr><td>ID</td></tr></table></body></html>",
            "a web page (HTML)",
        ),
        ("report.xlsx", b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n", "a PDF document"),
        ("letter.xlsx", None, "a word-processor document (.docx)"),
        ("noise.ods", bytes(range(256)) * 8, "not a workbook of any kind pertbook reads"),
        ("zero.xlsx", b"", "empty (0 bytes)"),
    ],
)
def test_other_contents_are_named(tmp_path, name, content, words):
    path = tmp_path / name
    if content is None:  # a zip whose parts are a word-processor document's
        import zipfile

        with zipfile.ZipFile(path, "w") as z:
            z.writestr("[Content_Types].xml", "<Types/>")
            z.writestr("word/document.xml", "<document/>")
    else:
        path.write_bytes(content)
    p = only_problem(path)
    assert p.code == "unreadable" and f"by its content it is {words}" in p.message


def test_damaged_zip_is_damaged_not_a_crash(tmp_path):
    data = good_xlsx(tmp_path / "plan.xlsx").read_bytes()
    path = tmp_path / "cut.xlsx"
    path.write_bytes(data[: len(data) // 2])
    p = only_problem(path)
    assert p.code == "unreadable" and "not a readable workbook" in p.message


def test_a_panic_in_the_library_is_a_damaged_file(tmp_path, monkeypatch):
    # pyo3 raises PanicException, a BaseException (not an Exception), for a Rust panic
    import python_calamine

    class PanicException(BaseException):
        pass

    def panic(*args, **kwargs):
        raise PanicException("called `Option::unwrap()` on a `None` value")

    monkeypatch.setattr(python_calamine.CalamineWorkbook, "from_filelike", panic)
    p = only_problem(good_xlsx(tmp_path / "plan.xlsx"))
    assert p.code == "unreadable" and "unwrap" in p.message
