"""The workbook of a schedule with ladders (two or more links between one pair, issue 11).

External reference: LibreOffice recalculating every formula of the workbook (pass
formulas on the Activities sheet, the Links sheet's driven starts, slacks, latest finishes
and driving flags, the Paths sheet) must reproduce the cached values
(tests/support/recalc.py). Cells are found by their headers, not guessed.
"""

from __future__ import annotations

import json
import re

import numpy as np
import openpyxl
import pytest
from helpers import HEADER, write_xlsx
from recalc import compare_recalculated

from converter.api import ConvertOptions, convert

KINDS = ["FS", "SS", "FF", "SF"]


def ladder_input(path):
    """An invented road-works schedule: a hand-made ladder (B after A by SS+2 and FF+3,
    written in one cell), a ladder on the links sheet (E after D), and 30 more activities
    with random links, several per pair (seeded numpy), some with leads."""
    rng = np.random.default_rng(20261202)
    rows = [
        HEADER,
        ["A", "Strip topsoil", None, 4, 6, 9],
        ["B", "Lay sub-base", "A[SS+2], A[FF+3]", 3, 4, 7],
        ["C", "Kerbs", "B", 2, 3, 5],
        ["D", "Drainage", "A", 2, 2, 4],
        ["E", "Surface", "C", 1, 2, 3],
    ]
    links = [["From", "To", "Type", "Lag"], ["D", "E", "SS", 1], ["D", "E", "FF", 2]]
    ids = [f"R{i}" for i in range(30)]
    for i, ident in enumerate(ids):
        o = int(rng.integers(0, 4))
        rows.append([ident, f"Item {i}", None, o, o + int(rng.integers(0, 3)), o + 4])
        for j in rng.choice(i, size=min(i, 2), replace=False) if i else []:
            for kind in rng.choice(4, size=int(rng.integers(1, 4)), replace=False):
                lag = int(rng.choice([-1, 0, 0, 1, 2]))
                links.append([ids[int(j)], ident, KINDS[int(kind)], lag])
    links.append(["E", "R0", "FF", 0])
    links.append(["E", "R0", "SS", 1])
    settings = [["Setting", "Value"], ["Start date", "2027-03-01"], ["Due date", 40]]
    return write_xlsx(path, {"Activities": rows, "Links": links, "Settings": settings})


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    root = tmp_path_factory.mktemp("ladders")
    source = ladder_input(root / "ladders.xlsx")
    result = convert(source, ConvertOptions(json=True, iterations=300, seed=5), outdir=root)
    assert result.ok, [str(p) for p in result.problems]
    return result


def header_columns(ws, header_row_text: str) -> tuple[int, dict[str, int]]:
    for row in ws.iter_rows(min_row=1, max_row=10):
        texts = {c.value: c.column for c in row if isinstance(c.value, str)}
        if header_row_text in texts:
            return row[0].row, texts
    raise AssertionError(f"no header {header_row_text!r}")


def test_pass_formulas_read_both_links_of_a_ladder(converted):
    wb = openpyxl.load_workbook(converted.workbook)
    links = wb["Links"]
    head, cols = header_columns(links, "Driven start of successor")
    rows = {}
    for r in range(head + 1, links.max_row + 1):
        key = (links.cell(r, 1).value, links.cell(r, 2).value, links.cell(r, 3).value)
        rows[key] = r
    ss, ff = rows[("A", "B", "SS")], rows[("A", "B", "FF")]
    push = cols["Driven start of successor"]
    pull = cols["Latest finish allowed to predecessor"]
    acts = wb["Activities"]
    a_head, a_cols = header_columns(acts, "ID")
    es_formulas = {}
    lf_formulas = {}
    for r in range(a_head + 1, acts.max_row + 1):
        ident = acts.cell(r, a_cols["ID"]).value
        formulas = [
            c.value for c in acts[r] if isinstance(c.value, str) and c.value.startswith("=MAX(0,")
        ]
        if ident in ("A", "B"):
            es_formulas[ident] = formulas
            lf_formulas[ident] = [
                c.value
                for c in acts[r]
                if isinstance(c.value, str) and c.value.startswith("=MIN(ProjectFinish,")
            ]
    letter = openpyxl.utils.get_column_letter
    # B's early start is a MAX over what both ladder links allow (their driven starts)
    (es_b,) = es_formulas["B"]
    assert f"Links!{letter(push)}{ss}" in es_b and f"Links!{letter(push)}{ff}" in es_b, es_b
    # A's late finish is a MIN over what both ladder links allow it
    (lf_a,) = lf_formulas["A"]
    assert f"Links!{letter(pull)}{ss}" in lf_a and f"Links!{letter(pull)}{ff}" in lf_a, lf_a
    # the values, worked by hand (PDM rules, Moder, Phillips & Davis 1983): TE_A = (4 + 24 +
    # 9) / 6 = 37/6, TE_B = (3 + 16 + 7) / 6 = 26/6; SS allows 0 + 2 = 2, FF allows
    # 37/6 + 3 - 26/6 = 29/6; so B starts at 29/6 and the FF link drives
    values = openpyxl.load_workbook(converted.workbook, data_only=True)["Links"]
    assert values.cell(ss, push).value == pytest.approx(2.0)
    assert values.cell(ff, push).value == pytest.approx(29 / 6)
    assert values.cell(ff, cols["Driving link"]).value == "Yes"
    assert values.cell(ss, cols["Driving link"]).value == "No"


def test_json_lists_every_link_of_every_ladder(converted):
    data = json.loads(converted.json_path.read_text(encoding="utf-8"))
    pairs = [(x["from"], x["to"]) for x in data["links"]]
    assert pairs.count(("A", "B")) == 2 and pairs.count(("D", "E")) == 2
    checks = {c["name"]: c for c in data["checks"]}
    # the link checks count links: the percentage's base is every link, ladders twice
    types = checks["links other than finish-to-start"]
    non_fs = sum(1 for x in data["links"] if x["type"] != "FS")
    assert types["count"] == non_fs
    assert types["percent"] == pytest.approx(100 * non_fs / len(data["links"]))
    assert "A->B [SS+2]" in types["activities"] and "A->B [FF+3]" in types["activities"]
    # every listed path is a distinct link sequence
    seqs = [(tuple(p["activities"][:1]), tuple(p["links"])) for p in data["paths"]]
    assert len(set(seqs)) == len(seqs)
    for p in data["paths"]:
        for a, b, k in zip(p["activities"], p["activities"][1:], p["links"]):
            assert (data["links"][k]["from"], data["links"][k]["to"]) == (a, b)


def test_paths_sheet_names_the_ladder_link_taken(converted):
    ws = openpyxl.load_workbook(converted.workbook)["Paths"]
    routes = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert any(re.search(r"\bA\[(SS\+2|FF\+3)\] > B\b", r) for r in routes), routes[:20]


@pytest.mark.libreoffice
def test_ladder_workbook_recalculates_to_its_cached_values(converted, tmp_path, libreoffice):
    copy = libreoffice.recalculate(converted.workbook, tmp_path / "re")
    report = compare_recalculated(converted.workbook, copy)
    assert report.compared > 500
    assert not report, report[:5]
