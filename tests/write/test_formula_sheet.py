"""The worksheet class that takes formula text as written (a private xlsxwriter hook).

``converter.write.workbook`` overrides ``Worksheet._prepare_formula``, a private method of
XlsxWriter, to skip its regular-expression scan for newer functions. These tests fail
if XlsxWriter stops calling that method, so a new XlsxWriter release cannot silently
bring the slow scan back (or change formula text behind our back).

Outside reference: XlsxWriter's own behaviour (its documentation, "Formulas added in
Excel 2010 and later", from memory): a dynamic-array function such as XLOOKUP is stored with the
``_xlfn.`` prefix unless the text already carries one. The plain ``xlsxwriter.Workbook``
is run beside ours to show that the formula below is one it would rewrite.
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path

import xlsxwriter

from converter.write import workbook as wbmod

REPO = Path(__file__).resolve().parents[2]
NEWER = "=XLOOKUP(1,A1:A2,B1:B2)"


def _formula_text(xlsx: Path) -> str:
    with zipfile.ZipFile(xlsx) as z:
        xml = z.read("xl/worksheets/sheet1.xml").decode("utf-8")
    return re.search(r"<f[^>]*>(.*?)</f>", xml).group(1)


def _write(book_class, path: Path) -> Path:
    book = book_class(str(path))
    book.add_worksheet().write_formula("C1", NEWER, None, 0)
    book.close()
    return path


def test_plain_xlsxwriter_would_prefix_the_newer_function(tmp_path):
    # The control: without our class, XlsxWriter rewrites the name.
    assert _formula_text(_write(xlsxwriter.Workbook, tmp_path / "plain.xlsx")) == (
        "_xlfn.XLOOKUP(1,A1:A2,B1:B2)"
    )


def test_our_sheet_keeps_the_formula_as_written(tmp_path):
    assert _formula_text(_write(wbmod._Workbook, tmp_path / "ours.xlsx")) == (
        "XLOOKUP(1,A1:A2,B1:B2)"
    )


def test_the_override_is_called_for_every_formula_of_a_real_workbook(tmp_path, monkeypatch):
    from converter.analyse.analysis import analyse
    from converter.api import ConvertOptions, load

    calls: list[str] = []
    own = wbmod._PreparedFormulaSheet._prepare_formula

    def spy(self, formula, expand_future_functions=False):
        calls.append(formula)
        return own(self, formula, expand_future_functions)

    monkeypatch.setattr(wbmod._PreparedFormulaSheet, "_prepare_formula", spy)
    schedule, problems = load(REPO / "samples" / "warehouse-fitout.xlsx", ConvertOptions())
    assert schedule is not None, problems
    out = tmp_path / "book.xlsx"
    wbmod.write_workbook(analyse(schedule, ConvertOptions(simulate=False)), out)
    with zipfile.ZipFile(out) as z:
        formulas = sum(
            len(re.findall(r"<f[ >]", z.read(n).decode("utf-8")))
            for n in z.namelist()
            if n.startswith("xl/worksheets/sheet")
        )
    assert formulas > 100
    assert len(calls) == formulas
