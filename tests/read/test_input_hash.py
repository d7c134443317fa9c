"""The input's SHA-256 is computed once, by the reader, and carried to the outputs.

Reference: hashlib.sha256 of the file's bytes (FIPS 180-4), computed here independently.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest
from helpers import GOOD_ROWS, write_xlsx

from converter.api import ConvertOptions, convert, load_input
from converter.read import load, source

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def hash_calls(monkeypatch):
    # the reader reads the input's bytes once (converter.read.source.read_bounded) and
    # hashes exactly those bytes; count the readings that gave bytes (and so a hash)
    calls: list[Path] = []
    real = source.read_bounded

    def counting(path, limit):
        content = real(path, limit)  # raises for a missing file: nothing read, no hash
        calls.append(Path(path))
        return content

    monkeypatch.setattr(load, "read_bounded", counting)
    return calls


def _json(result) -> dict:
    return json.loads(result.json_path.read_text(encoding="utf-8"))


def test_valid_input_hashed_once_and_the_hash_reaches_json_and_workbook(tmp_path, hash_calls):
    path = write_xlsx(tmp_path / "plan.xlsx", {"Activities": GOOD_ROWS})
    want = hashlib.sha256(path.read_bytes()).hexdigest()
    result = convert(path, ConvertOptions(json=True, simulate=False))
    assert result.ok
    assert hash_calls == [path]
    assert _json(result)["input"]["sha256"] == want
    loaded = load_input(path)
    assert loaded.sha256 == want and loaded.schedule.sha256 == want


@pytest.mark.parametrize(
    "name, content",
    [
        ("notes.txt", b"not a schedule"),  # a type pertbook does not read
        ("noise.xlsx", b"\x00\x01 not a zip"),  # a damaged workbook
    ],
)
def test_invalid_input_hashed_once_by_the_reader(tmp_path, hash_calls, name, content):
    path = tmp_path / name
    path.write_bytes(content)
    result = convert(path, ConvertOptions(json=True, simulate=False))
    assert not result.ok
    assert hash_calls == [path]
    assert _json(result)["input"]["sha256"] == hashlib.sha256(content).hexdigest()


def test_missing_input_has_no_hash(tmp_path, hash_calls):
    result = convert(
        tmp_path / "absent.xlsx", ConvertOptions(json=True, simulate=False), outdir=tmp_path
    )
    assert hash_calls == [] and _json(result)["input"]["sha256"] is None


def test_nothing_under_write_reads_or_hashes_the_input():
    # the writers get the hash from the reader; none of them may compute one (common practice:
    # one reading of the input, so the hash describes exactly the bytes that were analysed)
    for module in (ROOT / "converter" / "write").rglob("*.py"):
        text = module.read_text(encoding="utf-8")
        assert "hashlib" not in text and "read_bounded" not in text, module
        assert "converter.read" not in text, module
