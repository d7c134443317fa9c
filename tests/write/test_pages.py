"""Printed pages and on-screen layout of the analysis workbook.

- The page planner (converter/write/workbook/pages.py) on made-up sizes: bands of columns
  stay inside the page, the text never prints below 8 pt, no last page holds a stray
  row, charts and kept blocks are not split.
- Every sheet of every sample, read back with openpyxl and as chart XML (sheet_checks.py):
  wrapped text fits its row, no text or number is cut, neighbouring values do not run
  together, headers sit over their numbers, values beside tall text sit at its top, every
  chart has a title and axis titles.
- Every sample printed by LibreOffice (PDF, read with poppler's pdftotext): each sheet
  stays within the page budget recorded below, and no page holds a single table row.

Sheets not yet reworked for print are marked xfail(strict=True) per sheet, so an
accidental fix shows up; the marks go when the sheets are done.
"""

from __future__ import annotations

import re
from pathlib import Path

import openpyxl
import pytest
import sheet_checks
from hypothesis import given
from hypothesis import strategies as st

from converter.write.workbook import pages
from converter.write.workbook.pages import (
    MIN_FONT,
    STRAY_ROWS,
    column_points,
    plan,
    plan_rows,
    printable,
)

REPO = Path(__file__).resolve().parents[2]
#: The substation sample a few months on (status date, actuals; tests/support/
#: substation_sample.py), converted with ``--baseline`` the plain sample's JSON.
IN_FLIGHT = "substation-upgrade (in flight)"
SAMPLES = [
    "warehouse-fitout.xlsx",
    "clinic-it-rollout.xlsx",
    "boiler-shutdown.csv",
    "substation-upgrade.xlsx",
    IN_FLIGHT,
]
SHEETS = [
    "Summary",
    "Activities",
    "Links",
    "Paths",
    "Probability",
    "Simulation",
    "Trace",
    "Timeline",
    "Health check",
    "Settings used",
    "Method",
    "Input as read",
    "Warnings",
]

#: Pages each sheet may take when printed, for the three samples (16 to 30 activities): the
#: count each took when the sheets were laid out for print, a reviewer's check of every
#: page, and no more. Activities: two bands (the passes; float, dates and simulated
#: figures) of one or two pages; Paths: the path table, then the steps of ten paths.
PAGE_BUDGET = {
    "Summary": 2,
    "Activities": 4,
    "Links": 2,
    "Paths": 5,
    "Probability": 2,
    "Simulation": 5,
    "Trace": 4,
    "Timeline": 2,
    "Health check": 2,
    "Settings used": 1,
    "Method": 2,
    "Input as read": 1,
    "Warnings": 1,
}

#: The sheets only some samples have, and the larger budgets of the substation sample
#: (39 rows under WBS summaries, a Ranges and a Risks sheet; in flight, the progress
#: columns and a Changes sheet; more health checks and Method rows, the Summary's risk
#: sentences): the counts each took when the sheets were reviewed page by page.
#: Activities: three or four bands of three pages; Risks: the register in four bands
#: (register, simulated figures, mitigated values, path weights), the ranking, the
#: mitigated run; Changes: a page per section that does not fit beside another. Simulation:
#: the traced-iteration sentences; in flight, the baseline checks and their Method rows.
EXTRA_SHEETS = {
    "substation-upgrade.xlsx": ["Ranges", "Risks"],
    IN_FLIGHT: ["Changes", "Ranges", "Risks"],
}
BUDGET = {
    "substation-upgrade.xlsx": {
        "Summary": 3,
        "Activities": 9,
        "Simulation": 8,
        "Ranges": 1,
        "Risks": 6,
        "Health check": 3,
        "Method": 3,
        "Input as read": 2,
    },
    IN_FLIGHT: {
        "Summary": 3,
        "Health check": 4,
        "Method": 4,
        "Activities": 12,
        "Simulation": 8,
        "Ranges": 1,
        "Risks": 6,
        "Changes": 9,
        "Input as read": 4,
    },
}

#: Sheets not laid out for the screen and for print yet (none now). Strict: a sheet that
#: starts to pass must lose its mark.
NOT_YET_ON_SCREEN: dict[str, str] = {}
NOT_YET_IN_PRINT: dict[str, str] = {}


def _cases(not_yet: dict[str, str]) -> list:
    return [
        pytest.param(
            sample,
            sheet,
            id=f"{sample}-{sheet}",
            marks=[pytest.mark.xfail(strict=True, reason=not_yet[sheet])]
            if sheet in not_yet
            else [],
        )
        for sample in SAMPLES
        for sheet in SHEETS + EXTRA_SHEETS.get(sample, [])
    ]


# --------------------------------------------------------------------------- the planner
def test_a_narrow_sheet_prints_upright_at_full_size() -> None:
    p = plan([12, 40, 12], [15.0] * 20, font_name="Arial", font_size=10.0)
    assert (p.landscape, p.scale, p.col_breaks, p.row_breaks) == (False, 100, [], [])


def test_a_wide_sheet_is_shrunk_only_while_readable() -> None:
    widths = [10.0, 30.0] + [10.0] * 10  # about 860 pt at 10 pt Arial: 0.91 of it fits
    p = plan(widths, [15.0] * 10, title_cols=(0, 1), font_name="Arial", font_size=10.0)
    total = sum(column_points(w, "Arial", 10.0) for w in widths)
    assert p.landscape and p.col_breaks == [] and p.title_cols is None
    assert p.scale == int(100 * printable(True)[0] / total)
    assert p.scale / 100 * 10.0 >= MIN_FONT


@given(
    st.lists(st.floats(4.0, 40.0), min_size=3, max_size=60),
    st.sampled_from([8.0, 10.0, 11.0, 12.0]),
)
def test_bands_fit_the_page_and_keep_the_text_readable(widths, size) -> None:
    p = plan(
        [10.0, 30.0] + widths, [15.0] * 5, title_cols=(0, 1), font_size=size, font_name="Arial"
    )
    assert p.scale / 100 * size >= MIN_FONT - 1e-9
    points = [column_points(w, "Arial", size) for w in [10.0, 30.0] + widths]
    room = printable(p.landscape)[0] / (p.scale / 100)
    starts = [2] + p.col_breaks
    for a, b in zip(starts, p.col_breaks + [len(points)]):
        shown = sum(points[a:b]) + (sum(points[:2]) if p.col_breaks else 0.0)
        assert shown <= room + 1e-6 or b - a == 1
    assert all(2 < b < len(points) for b in p.col_breaks)


@given(st.lists(st.floats(10.0, 60.0), min_size=2, max_size=300))
def test_no_last_page_holds_a_stray_row(heights) -> None:
    room = 300.0
    heights = [20.0] + heights  # row 0 is the header, repeated on each page
    breaks = plan_rows(heights, (0, 0), room)
    pages_ = list(zip([0] + breaks, breaks + [len(heights)]))
    for k, (a, b) in enumerate(pages_):
        assert sum(heights[a:b]) + (heights[0] if k else 0.0) <= room + 1e-6 or b - a == 1
    if breaks:
        a, b = pages_[-1]
        assert b - a >= STRAY_ROWS or sum(heights[a:b]) >= pages.STRAY_SHARE * room


def test_a_tiny_overflow_prints_a_little_smaller() -> None:
    room = printable(True)[1] * pages.HEIGHT_SHARE  # landscape: the sheet is wide
    rows = int(room // 15.0) + 1  # one row more than a page holds at full size
    p = plan([10.0, 60.0, 60.0, 60.0], [15.0] * rows, font_name="Arial", font_size=10.0)
    assert p.landscape and p.row_breaks == [] and 80 <= p.scale < 100


def test_a_chart_is_not_split() -> None:
    heights = [15.0] * 60
    breaks = plan_rows(heights, None, 400.0, keep=[(20, 40)])
    assert breaks and all(not 20 < b <= 40 for b in breaks)


def test_a_block_around_a_chart_moves_whole() -> None:
    # a title row (20) above a chart (21-35), both kept: the page must not break between
    # them (the chart's own block alone would let the title stay behind)
    heights = [15.0] * 60
    breaks = plan_rows(heights, None, 400.0, keep=[(20, 35), (21, 35)])
    assert breaks and all(not 20 < b <= 35 for b in breaks)
    breaks = plan_rows(heights, None, 400.0, keep=[(21, 35), (20, 35)])  # either order
    assert breaks and all(not 20 < b <= 35 for b in breaks)


# ---------------------------------------------------------------- the samples, as produced
@pytest.fixture(scope="session")
def produced(tmp_path_factory) -> dict[str, Path]:
    from substation_sample import build

    from converter.api import ConvertOptions, convert

    out = tmp_path_factory.mktemp("pages")
    books = {}
    for sample in SAMPLES:
        options = ConvertOptions(json=True)
        if sample == IN_FLIGHT:  # after the plain sample, whose JSON is its baseline
            path = build(out / "substation-upgrade-july.xlsx", in_flight=True)
            baseline = str(out / "substation-upgrade.analysis.json")
            options = ConvertOptions(json=True, baseline=baseline)
        else:
            path = REPO / "samples" / sample
        result = convert(path, options, outdir=out)
        assert result.ok, result.problems
        books[sample] = out / f"{path.stem}.analysis.xlsx"
    return books


@pytest.fixture(scope="session")
def sheets(produced):
    cache: dict[str, dict[str, sheet_checks.Sheet]] = {}

    def get(sample: str) -> dict[str, sheet_checks.Sheet]:
        if sample not in cache:
            wb = openpyxl.load_workbook(produced[sample], data_only=True)
            cache[sample] = {ws.title: sheet_checks.Sheet(ws) for ws in wb.worksheets}
        return cache[sample]

    return get


@pytest.fixture(scope="session")
def printed(produced, soffice, tmp_path_factory):
    """sample -> {sheet name: [words of each page]} as LibreOffice prints it."""
    from render import page_texts, page_words, poppler_missing, to_pdf_many

    reason = poppler_missing()
    if reason:
        pytest.skip(reason)
    out = tmp_path_factory.mktemp("pdf")
    cache: dict[str, dict[str, list]] = {}

    def get(sample: str) -> dict[str, list]:
        if not cache:  # every sample in one LibreOffice run
            pdfs = to_pdf_many([produced[s] for s in SAMPLES], out, soffice=soffice)
            for name, pdf in zip(SAMPLES, pdfs, strict=True):
                by_sheet: dict[str, list] = {}
                for text, words in zip(page_texts(pdf), page_words(pdf), strict=True):
                    by_sheet.setdefault(_footer_sheet(text), []).append(words)
                cache[name] = by_sheet
        return cache[sample]

    return get


def _footer_sheet(page: str) -> str:
    """The sheet name the footer prints at the left of the last line of a page."""
    lines = [line for line in page.splitlines() if line.strip()]
    assert lines and re.search(r"Page \d+ of \d+\s*$", lines[-1]), lines[-1:]
    return re.split(r"\s{2,}", lines[-1].strip())[0]


def _lines(words) -> list[list[str]]:
    """The words of each printed line, top down, the footer left out. A row whose cells
    wrap counts once per line, which only makes the stray-row check more lenient."""
    foot = max(w.y0 for w in words)
    lines: dict[int, list[str]] = {}
    for w in sorted(words, key=lambda w: (w.y0, w.x0)):
        if w.y0 < foot - 1.0:
            lines.setdefault(round(w.y0), []).append(w.text)
    return list(lines.values())


def _title_words(sheet) -> set[str]:
    """Every word of the print-title rows, which repeat at the top of later pages."""
    rows = sheet.ws.print_title_rows
    if not rows:
        return set()
    first, last = (int(x) for x in rows.replace("$", "").split(":"))
    words: set[str] = set()
    for r in range(first, last + 1):
        for c in range(1, sheet.ws.max_column + 1):
            value = sheet.value(r, c)
            if value is not None:
                words.update(str(value).split())
    return words


@pytest.mark.parametrize(("sample", "sheet"), _cases(NOT_YET_ON_SCREEN))
def test_sheet_reads_cleanly_on_screen(sample, sheet, sheets, produced) -> None:
    found = sheets(sample).get(sheet)
    assert found is not None, f"{sample} has no sheet {sheet}"
    problems = (
        sheet_checks.wrapped_text_fits(found)
        + sheet_checks.text_not_cut(found)
        + sheet_checks.aligned_apart(found)
        + sheet_checks.labels_beside_tall_text(found)
        + sheet_checks.chart_titles(produced[sample]).get(sheet, [])
    )
    assert not problems, "\n".join(problems)


@pytest.mark.libreoffice
@pytest.mark.parametrize(("sample", "sheet"), _cases(NOT_YET_IN_PRINT))
def test_sheet_prints_within_budget_without_stray_rows(sample, sheet, printed, sheets) -> None:
    pages_ = printed(sample).get(sheet)
    assert pages_, f"{sheet} printed no page"
    budget = BUDGET.get(sample, {}).get(sheet, PAGE_BUDGET.get(sheet))
    assert len(pages_) <= budget, f"{sheet}: {len(pages_)} pages, budget {budget}"
    titles = _title_words(sheets(sample)[sheet])
    for k, words in enumerate(pages_):
        lines = _lines(words)
        if k:  # print titles repeated at the top of a later page are not its rows
            while lines and titles and set(lines[0]) <= titles:
                lines.pop(0)
        assert len(lines) >= 2, f"{sheet} page {k + 1} of {len(pages_)} holds only {lines!r}"
