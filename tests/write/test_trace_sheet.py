"""The Trace sheet: traced iterations recomputed by formulas from their random numbers.

Checks against the outside: LibreOffice recalculates every formula of the workbook
(tests/support/recalc.py) and must reproduce the cached values, BETA.INV included (the
cached durations are scipy's exact quantiles); each recalculated PERT-beta duration is
checked again against scipy.stats.beta.ppf of its u, within the stated accuracy; each
recalculated traced finish equals the finish the simulation recorded for that
iteration within the bound the sheet states, and that iteration's finish is the one
nearest numpy's percentile of the run (the simulated figure it stands for).
"""

from __future__ import annotations

import openpyxl
import pytest
from helpers import HEADER, write_xlsx
from recalc import compare_recalculated
from scipy import stats

from converter.analyse.simulate.inverse import ACCURACY
from converter.api import ConvertOptions, convert
from converter.write.workbook import trace as trace_sheet
from converter.write.workbook.layout import TRACE_FIRST

HEAD = [*HEADER, "Distribution"]
#: An invented schedule with every distribution, a fixed duration and typed links.
ROWS = [
    HEAD,
    ["A", "Survey", None, 2, 4, 9, "pert"],
    ["B", "Order", "A", 1, 3, 11, "triangular"],
    ["C", "Slab", "A[SS+1]", 1, 2, 3, "uniform"],
    ["D", "Frame", "B, C[FF+2]", 3, 5, 7, "pert"],
    ["E", "Inspect", "D", 1, 1, 1, None],
    ["F", "Roof", "D[SS+1], C", 2, 6, 8, "pert"],
    ["G", "Hand over", "E, F", 0.5, 1, 4, None],
]


def _convert(tmp_path, **options):
    source = write_xlsx(tmp_path / "trace.xlsx", {"Activities": ROWS})
    opts = ConvertOptions(iterations=3000, seed=5, **options)
    result = convert(source, opts, outdir=tmp_path / "out")
    assert result.ok, [str(p) for p in result.problems]
    return result.workbook


@pytest.fixture(scope="module")
def traced(tmp_path_factory):
    return _convert(tmp_path_factory.mktemp("trace"), trace="50,80,max")


def _blocks(ws):
    """(summary row, block's first column) per traced iteration, and the data rows."""
    count = 0
    while ws.cell(TRACE_FIRST + 1 + count, 1).value:
        count += 1
    first = TRACE_FIRST + count + 5  # 1-based first data row
    rows = range(first, first + len(ROWS) - 1)
    return [(TRACE_FIRST + 1 + k, trace_sheet.FIXED + 1 + 4 * k) for k in range(count)], rows


def test_trace_sheet_formulas(traced):
    ws = openpyxl.load_workbook(traced)["Trace"]
    blocks, rows = _blocks(ws)
    assert [ws.cell(r, 1).value for r, _ in blocks] == ["P50", "P80", "longest"]
    kinds = [ws.cell(r, 2).value for r in rows]
    assert kinds == ["pert", "triangular", "uniform", "pert", "fixed", "pert", "pert"]
    for _, c in blocks:
        d = [ws.cell(r, c + 1).value for r in rows]
        assert d[0].startswith("=_xlfn.BETA.INV(") and "SQRT" in d[1] and "IF(" in d[1]
        assert d[2].startswith("=C") and d[4] == f"=C{rows[4]}"
        es = [ws.cell(r, c + 2).value for r in rows]
        assert es[0] == "=MAX(0)" and "MAX(0," in es[3]
    assert ws.cell(rows[0], 6).value.startswith("=1+4*(")  # alpha from O, M, P
    assert ws.cell(rows[0], 3).value == "=Activities!D5"  # O from the Activities sheet


def test_no_trace_sheet_with_trace_0(tmp_path):
    wb = openpyxl.load_workbook(_convert(tmp_path, trace="0"))
    assert "Trace" not in wb.sheetnames
    assert not any(
        isinstance(c.value, str) and "Trace" in c.value
        for c in wb["Summary"]["B"]  # no sentence points at a missing sheet
    )


def test_large_schedule_shows_the_critical_activities_only(tmp_path, monkeypatch):
    monkeypatch.setattr(trace_sheet, "FULL_TRACE_LIMIT", 3)
    wb = openpyxl.load_workbook(_convert(tmp_path, trace="80"))
    ws = wb["Trace"]
    assert "only the activities on a traced" in ws["B2"].value
    blocks, rows = _blocks(ws)
    shown = [ws.cell(r, 1).value for r in rows if ws.cell(r, 1).value]
    assert 0 < len(shown) < len(ROWS) - 1
    assert "G" in shown  # the last activity is on every critical path


@pytest.mark.libreoffice
def test_libreoffice_recalculates_the_trace(traced, libreoffice, tmp_path):
    copy = libreoffice.recalculate(traced, tmp_path)
    report = compare_recalculated(traced, copy)
    assert not report, "\n".join(report[:20])
    assert report.compared > 100
    formulas = openpyxl.load_workbook(traced)["Trace"]
    values = openpyxl.load_workbook(copy, data_only=True)["Trace"]
    blocks, rows = _blocks(values)
    for r_sum, c in blocks:
        for i, r in enumerate(rows):
            if ROWS[i + 1][6] == "pert":
                u = values.cell(r, c).value
                o, m, p = (values.cell(r, k).value for k in (3, 4, 5))
                x = (m - o) / (p - o)
                exact = stats.beta.ppf(u, 1 + 4 * x, 1 + 4 * (1 - x), o, p - o)  # scipy
                assert abs(values.cell(r, c + 1).value - exact) <= ACCURACY * (p - o)
        recomputed = values.cell(r_sum, 4).value
        recorded = values.cell(r_sum, 5).value
        assert abs(recomputed - recorded) <= values.cell(r_sum, 7).value
        assert formulas.cell(r_sum, 4).value.startswith("=MAX(")
        assert values.cell(r_sum, 8).value == "Yes"
    summary = openpyxl.load_workbook(copy, data_only=True)["Summary"]
    sentences = [
        c.value for c in summary["B"] if isinstance(c.value, str) and "Trace sheet" in c.value
    ]
    assert sentences[1].startswith("the P80 of ")
    assert "recomputed on the Trace sheet from its random numbers" in sentences[1]


def test_bad_trace_option_is_a_problem_not_a_traceback(tmp_path):
    source = write_xlsx(tmp_path / "bad.xlsx", {"Activities": ROWS})
    result = convert(source, ConvertOptions(trace="fast", iterations=100), outdir=tmp_path)
    assert not result.ok and result.exit_code == 2
    bad = [p for p in result.problems if p.code == "bad-option"]
    assert len(bad) == 1 and "--trace" in bad[0].message
