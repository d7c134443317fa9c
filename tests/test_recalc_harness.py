"""The LibreOffice recalculation harness (tests/support/recalc.py) can pass and can fail.

Reference values come from scipy.stats.norm (normal distribution) and
numpy.busday_offset (working-day arithmetic), never from the harness itself;
LibreOffice recomputes them from the formulas. Most tests use the session's one running
LibreOffice (the ``libreoffice`` fixture, tests/support/libreoffice.py); the tests of the
recalculation setting and of the ``--convert-to`` fallback start their own.
"""

from __future__ import annotations

import datetime as dt
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter
from libreoffice import RECALC_NEVER, LibreOffice
from recalc import RecalcError, compare_recalculated, recalculate
from scipy.stats import norm

pytestmark = pytest.mark.libreoffice

EPOCH = dt.date(1899, 12, 30)  # Excel 1900 date system serial 0 (ECMA-376 Part 1, 18.17.4.1)

Z = [-1.96, -0.5, 0.0, 1.2816, 2.5]
P = [0.025, 0.5, 0.8, 0.9, 0.95]
STARTS = [dt.date(2027, 3, 1), dt.date(2027, 3, 27), dt.date(2027, 3, 31), dt.date(2027, 12, 20)]
OFFSETS = [10, 3, 4, 15]
HOLIDAYS = [dt.date(2027, 4, 2), dt.date(2027, 4, 5), dt.date(2027, 12, 24)]
DURATIONS = [4.0, 7.5, 2.25, 11.0, 6.0, 3.5, 9.0]
WEIGHTS = [1.0, 0.5, 2.0, 0.25, 1.5, 3.0, 0.75]
DUE = 10.0


def serial(day: dt.date) -> int:
    return (day - EPOCH).days


def workday_intl(start: dt.date, days: int, weekend: str) -> dt.date:
    """WORKDAY.INTL for days > 0 via numpy.busday_offset.

    WORKDAY.INTL's weekend string marks non-working days Monday..Sunday with 1
    (Microsoft's WORKDAY.INTL function reference, from memory); numpy's weekmask
    marks working days with 1, so it is the complement. For a positive count the
    start day itself is not counted, which is numpy's roll="backward".
    """
    mask = "".join("0" if c == "1" else "1" for c in weekend)
    out = np.busday_offset(
        np.datetime64(start),
        days,
        roll="backward",
        weekmask=mask,
        holidays=[np.datetime64(h) for h in HOLIDAYS],
    )
    return out.astype(dt.date)


def write_demo(path: Path) -> set[str]:
    """A workbook of formulas with true cached values plus some deliberately wrong ones.

    Returns the cells whose cached value is wrong (what the harness must report).
    """
    wb = xlsxwriter.Workbook(path)
    date_fmt = wb.add_format({"num_format": "yyyy-mm-dd"})
    ws = wb.add_worksheet("Calc")
    for r, (z, p) in enumerate(zip(Z, P, strict=True), start=1):
        ws.write(r, 0, z)
        ws.write_formula(r, 1, f"=_xlfn.NORM.S.DIST(A{r + 1},TRUE)", None, norm.cdf(z))
        ws.write_formula(r, 2, f"=_xlfn.NORM.S.DIST(A{r + 1},FALSE)", None, norm.pdf(z))
        ws.write(r, 3, p)
        ws.write_formula(r, 4, f"=_xlfn.NORM.S.INV(D{r + 1})", None, norm.ppf(p))
    for r, (start, n) in enumerate(zip(STARTS, OFFSETS, strict=True), start=1):
        ws.write_datetime(r, 6, dt.datetime.combine(start, dt.time()), date_fmt)
        ws.write(r, 7, n)
        sat_sun = serial(workday_intl(start, n, "0000011"))
        fri_sat = serial(workday_intl(start, n, "0000110"))
        ws.write_formula(
            r, 8, f'=WORKDAY.INTL(G{r + 1},H{r + 1},"0000011",Holidays)', date_fmt, sat_sun
        )
        ws.write_formula(
            r, 9, f'=WORKDAY.INTL(G{r + 1},H{r + 1},"0000110",Holidays)', date_fmt, fri_sat
        )
    for r, day in enumerate(HOLIDAYS, start=1):
        ws.write_datetime(r, 10, dt.datetime.combine(day, dt.time()), date_fmt)
    for r, (d, w) in enumerate(zip(DURATIONS, WEIGHTS, strict=True), start=1):
        ws.write(r, 12, d)
        ws.write(r, 13, w)
    ws.write(1, 15, DUE)
    wb.define_name("Holidays", "=Calc!$K$2:$K$4")
    wb.define_name("Durations", "=Calc!$M$2:$M$8")
    wb.define_name("Weights", "=Calc!$N$2:$N$8")
    wb.define_name("Due", "=Calc!$P$2")

    d, w = np.array(DURATIONS), np.array(WEIGHTS)
    late = bool(d.max() > DUE)
    sm = wb.add_worksheet("Summary")
    sm.write_formula("A1", "=MAX(Durations)", None, d.max())
    sm.write_formula("A2", "=MIN(Durations)", None, d.min())
    sm.write_formula("A3", "=SUMPRODUCT(Durations,Weights)", None, float(d @ w))
    sm.write_formula("A4", "=MAX(Durations)>Due", None, late)
    sm.write_formula(
        "A5", '=IF(MAX(Durations)>Due,"late","on time")', None, "late" if late else "on time"
    )
    sm.write_formula("A6", "=Calc!B2*2", None, 2 * norm.cdf(Z[0]))
    # within the tolerance (rel 1e-12 off): must NOT be reported
    sm.write_formula("A7", "=_xlfn.NORM.S.INV(0.9)", None, norm.ppf(0.9) * (1 + 1e-12))

    bad = wb.add_worksheet("Wrong")
    bad.write_formula("A1", "=SUM(Durations)", None, d.sum() * (1 + 1e-6))
    bad.write_formula("A2", "=_xlfn.NORM.S.INV(0.9)", None, 1.2816)  # rounded: rel 3e-5 off
    bad.write_formula(
        "A3",
        '=WORKDAY.INTL(Calc!G2,10,"0000011",Holidays)',
        date_fmt,
        serial(workday_intl(STARTS[0], 10, "0000011")) + 1,
    )
    bad.write_formula("A4", "=MIN(Durations)>Due", None, True)
    bad.write_formula("A5", '=IF(MIN(Durations)>Due,"late","on time")', None, "late")
    bad.write_formula("A6", "=MAX(Durations)*2")  # no value given: xlsxwriter caches 0
    wb.close()
    return {f"Wrong!A{i}" for i in range(1, 7)}


@pytest.fixture(scope="module")
def demo(tmp_path_factory, libreoffice):
    folder = tmp_path_factory.mktemp("recalc")
    src = folder / "demo.xlsx"
    wrong = write_demo(src)
    out = libreoffice.recalculate(src, folder / "out")
    return src, out, wrong


def test_recalculated_copy_is_a_new_xlsx(demo):
    src, out, _ = demo
    assert out != src and out.is_file()
    assert zipfile.is_zipfile(out)
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    assert names == ["Calc", "Summary", "Wrong"]


def test_true_cached_values_pass_and_wrong_ones_are_reported(demo):
    src, out, wrong = demo
    report = compare_recalculated(src, out)
    # 5 rows x 3 normal formulas, 4 rows x 2 WORKDAY.INTL, 7 summary, 6 wrong
    assert report.compared == 15 + 8 + 7 + 6
    flagged = {m.split(":")[0] for m in report}
    assert flagged == wrong, "\n".join(report)
    line = next(m for m in report if m.startswith("Wrong!A2:"))
    assert "=_xlfn.NORM.S.INV(0.9)" in line and "cached 1.2816" in line


def test_tolerance_is_applied(demo):
    src, out, _ = demo
    # rel 1e-4 swallows the rounded NORM.S.INV and the 1e-6 SUM error, nothing else
    loose = {m.split(":")[0] for m in compare_recalculated(src, out, rel=1e-4)}
    assert loose == {"Wrong!A3", "Wrong!A4", "Wrong!A5", "Wrong!A6"}


def test_missing_cached_value_is_reported(tmp_path, soffice):
    src = tmp_path / "nocache.xlsx"
    wb = openpyxl.Workbook()  # openpyxl writes formulas without any cached value
    wb.active.title = "S"
    wb.active["A1"] = 3
    wb.active["A2"] = "=A1*2"
    wb.save(src)
    report = compare_recalculated(src, recalculate(src, tmp_path / "out", soffice=soffice))
    assert report.compared == 1
    assert len(report) == 1 and "no cached value" in report[0] and "recalculated 6" in report[0]


def write_stale(path: Path) -> Path:
    """One formula, =A1*3 with A1 = 2, whose cached value (99) is wrong."""
    wb = xlsxwriter.Workbook(path)
    ws = wb.add_worksheet("S")
    ws.write("A1", 2)
    ws.write_formula("A2", "=A1*3", None, 99)
    wb.close()
    return path


def test_recalc_setting_is_what_forces_recalculation(tmp_path, libreoffice):
    """With OOXMLRecalcMode = 1 (RECALC_NEVER) LibreOffice keeps the wrong cache.

    Confirms the value meaning (LibreOffice sc/inc/calcconfig.hxx: 0 always,
    1 never, 2 ask) and that xlsxwriter's fullCalcOnLoad="1" alone is not obeyed:
    the same way of converting (same backend) with only the setting changed.
    """
    src = write_stale(tmp_path / "stale.xlsx")
    forced = compare_recalculated(src, libreoffice.recalculate(src, tmp_path / "on"))
    assert [m.split(":")[0] for m in forced] == ["S!A2"]
    assert "recalculated 6" in forced[0]
    with LibreOffice(
        libreoffice.soffice, recalc_mode=RECALC_NEVER, backend=libreoffice.backend
    ) as never_office:
        never = compare_recalculated(src, never_office.recalculate(src, tmp_path / "off"))
    assert list(never) == [] and never.compared == 1


def test_convert_to_fallback_recalculates_a_batch_in_one_start(tmp_path, demo, soffice):
    """Without a Python that has ``uno``, one ``soffice --convert-to`` run takes many books."""
    src, _, wrong = demo
    stale = write_stale(tmp_path / "stale.xlsx")
    with LibreOffice(soffice, backend="convert-to") as office:
        copies = office.recalculate_many([src, stale], tmp_path / "out")
        assert office.starts == 1
    assert {m.split(":")[0] for m in compare_recalculated(src, copies[0])} == wrong
    assert [m.split(":")[0] for m in compare_recalculated(stale, copies[1])] == ["S!A2"]


def test_session_libreoffice_is_started_once_for_many_books(tmp_path, libreoffice):
    books = [write_stale(tmp_path / f"book{i}.xlsx") for i in range(3)]
    libreoffice.recalculate(books[0], tmp_path / "warm")  # make sure it is running
    before = libreoffice.starts
    for book in books:
        assert len(compare_recalculated(book, libreoffice.recalculate(book, tmp_path))) == 1
    copies = libreoffice.recalculate_many(books, tmp_path / "batch")
    assert [len(compare_recalculated(b, c)) for b, c in zip(books, copies, strict=True)] == [1] * 3
    # the listening LibreOffice serves every call (at most one restart, after a call that
    # timed out on a loaded machine; one start per call would be 4); the fallback starts
    # one per call
    if libreoffice.backend == "uno":
        assert libreoffice.starts - before <= 1
    else:
        assert libreoffice.starts - before == 4


def test_function_prefixes_libreoffice_understands(tmp_path, soffice):
    """NORM.S.DIST / NORM.S.INV need the _xlfn. prefix in the file; WORKDAY.INTL must not have it.

    Without the prefix LibreOffice does not know NORM.S.DIST (#NAME?); WORKDAY.INTL is
    in the original OOXML function list, and a prefixed one is unknown (#NAME?).
    """
    src = tmp_path / "prefix.xlsx"
    wb = xlsxwriter.Workbook(src)  # use_future_functions off: formulas written as given
    ws = wb.add_worksheet("S")
    ws.write_formula("A1", "=NORM.S.DIST(1,TRUE)", None, norm.cdf(1))
    ws.write_formula("A2", "=_xlfn.NORM.S.DIST(1,TRUE)", None, norm.cdf(1))
    ws.write_formula(
        "A3", '=_xlfn.WORKDAY.INTL(DATE(2027,3,1),1,"0000011")', None, serial(dt.date(2027, 3, 2))
    )
    ws.write_formula(
        "A4", '=WORKDAY.INTL(DATE(2027,3,1),1,"0000011")', None, serial(dt.date(2027, 3, 2))
    )
    wb.close()
    out = recalculate(src, tmp_path / "out", soffice=soffice)
    values = openpyxl.load_workbook(out, data_only=True)["S"]
    assert values["A1"].value == "#NAME?"
    assert values["A2"].value == pytest.approx(norm.cdf(1), rel=1e-12)
    assert values["A3"].value == "#NAME?"
    # LibreOffice gives a date function's result a date format of its own accord
    assert values["A4"].value == dt.datetime(2027, 3, 2)


def test_unloadable_workbook_raises(tmp_path, soffice):
    good = tmp_path / "good.xlsx"
    wb = xlsxwriter.Workbook(good)
    wb.add_worksheet("S").write("A1", 1)
    wb.close()
    broken = tmp_path / "broken.xlsx"
    broken.write_bytes(good.read_bytes()[: good.stat().st_size // 2])
    with pytest.raises(RecalcError, match="broken.xlsx"):
        recalculate(broken, tmp_path / "out", soffice=soffice)


def test_output_never_overwrites_input(tmp_path, soffice):
    src = tmp_path / "same.xlsx"
    wb = xlsxwriter.Workbook(src)
    wb.add_worksheet("S").write_formula("A1", "=1+1", None, 2)
    wb.close()
    before = src.read_bytes()
    out = recalculate(src, tmp_path, soffice=soffice)  # outdir == input folder
    assert out.name == "same.recalc.xlsx"
    assert src.read_bytes() == before
