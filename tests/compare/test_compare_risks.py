"""Comparing two runs with a risk register: the named risks read back from the two
.analysis.xlsx files (their Risks sheets) equal those from the two .analysis.json files.

What is checked against what: the JSON that pertbook writes beside each workbook is the
reference; the workbook's cells must give the same named-risk figures (floats to 1e-9),
and the one risk whose probability was changed in the input (openpyxl, here) shows the
old and the new probability as typed.
"""

from __future__ import annotations

import math
from pathlib import Path

import openpyxl
import pytest
from helpers import REPO

from converter.api import ConvertOptions, convert
from converter.compare import compare_runs
from converter.compare.document import changes_document
from converter.compare.readback import read_run

#: The risk whose probability the new run changes, and its probabilities old and new.
RISK, OLD_P, NEW_P = "R03", 0.1, 0.35


def _convert(plan: Path, outdir: Path) -> tuple[Path, Path]:
    options = ConvertOptions(json=True, iterations=1000)
    result = convert(plan, options, outdir=outdir)
    assert result.ok, result.problems
    return result.workbook, result.json_path


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The substation sample as it is, and a copy with R03's probability 0.1 -> 0.35."""
    root = tmp_path_factory.mktemp("risk-runs")
    sample = REPO / "samples" / "substation-upgrade.xlsx"
    book = openpyxl.load_workbook(sample)
    sheet = book["Risks"]
    heads = [c.value for c in sheet[1]]
    row = next(r for r in sheet.iter_rows(min_row=2) if r[0].value == RISK)
    assert row[heads.index("Probability")].value == OLD_P
    row[heads.index("Probability")].value = NEW_P
    (root / "in").mkdir()
    changed = root / "in" / "substation-upgrade.xlsx"
    book.save(changed)
    return {"old": _convert(sample, root / "old"), "new": _convert(changed, root / "new")}


def _named_risks(old: Path, new: Path) -> list[dict]:
    return changes_document(compare_runs(read_run(old), read_run(new)))["named_risks"]


def _differences(a, b, path="") -> list[str]:
    """Where two JSON values differ, floats compared to 1e-9."""
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            return [f"{path}: keys {sorted(a)} != {sorted(b)}"]
        return [d for k in a for d in _differences(a[k], b[k], f"{path}.{k}")]
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return [f"{path}: {len(a)} items != {len(b)}"]
        pairs = enumerate(zip(a, b, strict=True))
        return [d for i, (x, y) in pairs for d in _differences(x, y, f"{path}[{i}]")]
    if isinstance(a, float) or isinstance(b, float):
        ok = a is not None and b is not None and math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)
        return [] if ok else [f"{path}: {a!r} != {b!r}"]
    return [] if a == b else [f"{path}: {a!r} != {b!r}"]


def test_named_risks_through_workbooks_equal_those_through_json(runs):
    by_json = _named_risks(runs["old"][1], runs["new"][1])
    by_xlsx = _named_risks(runs["old"][0], runs["new"][0])
    assert by_json and len(by_json) == 7  # the sample's register: R01 to R07
    assert not _differences(by_json, by_xlsx)
    changed = next(r for r in by_xlsx if r["id"] == RISK)
    assert changed["old"]["probability"] == OLD_P
    assert changed["new"]["probability"] == NEW_P
    others = [r for r in by_xlsx if r["id"] != RISK]
    assert all(r["old"]["probability"] == r["new"]["probability"] for r in others)


def test_a_workbook_reads_back_every_key_the_json_gives_per_risk(runs):
    """Each risk from the workbook has the JSON's keys, with the deltas where the JSON has
    them and None where it has null (risks outside the top by sensitivity)."""
    from_json = read_run(runs["new"][1]).risks
    from_xlsx = read_run(runs["new"][0]).risks
    assert [set(r) for r in from_xlsx] == [set(r) for r in from_json]
    assert not _differences(from_json, from_xlsx)
    assert [r["activities"] for r in from_xlsx if r["id"] == "R06"] == [["T02", "T03"]]
