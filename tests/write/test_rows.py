"""Row heights for wrapped text (converter/write/workbook/rows.py), checked from outside.

- The character widths against the fonts themselves: each advance read from the font's
  ``hmtx`` table with fontTools, divided by the same font's digit advance (the column
  unit of Excel and LibreOffice), for DejaVu Sans (LibreOffice's fallback on Linux) and
  Liberation Sans (metric-compatible with Arial), Book/Regular and Bold.
- The heights against LibreOffice: a workbook whose rows have the heights rows.py gives
  is printed to PDF; every word of a wrapped cell must lie inside its own row, above the
  empty row that follows (pdftotext -bbox gives each word's box). A control row with
  room for half its lines must be caught, so the check can fail.
"""

from __future__ import annotations

import doctest
import re
from pathlib import Path

import pytest
import xlsxwriter
from fontTools.ttLib import TTFont

from converter.write.workbook import rows
from converter.write.workbook.rows import (
    BOLD_FACTOR,
    CHAR_WIDTHS,
    WIDTH_MARGIN,
    lines_needed,
    row_height,
    text_width,
    wrap_lines,
)

FONT_DIRS = [
    Path("/usr/share/fonts"),
    Path("/usr/local/share/fonts"),
    Path.home() / ".fonts",
    Path("/Library/Fonts"),
    Path("C:/Windows/Fonts"),
]
FONTS = {  # file name -> (family, bold)
    "DejaVuSans.ttf": ("DejaVu Sans", False),
    "DejaVuSans-Bold.ttf": ("DejaVu Sans", True),
    "LiberationSans-Regular.ttf": ("Liberation Sans", False),
    "LiberationSans-Bold.ttf": ("Liberation Sans", True),
}
PRINTABLE = [chr(c) for c in range(32, 127)]

# Text of the kind the workbook wraps (our own sentences, numbers, IDs, a hash).
TEXTS = [
    "The simulated mean is 0.57 later than the PERT mean: where parallel paths merge, the "
    "finish is the LATEST of them, and the expected maximum of several uncertain paths "
    "exceeds the longest expected path (merge bias; MacCrimmon & Ryavec 1964).",
    "Caution: these figures are estimates computed from the team's own three-point inputs "
    "and logic. They are not a promise or a guarantee of any date.",
    "10, 20, 30, 40[SS+2], 50[FF-1], 60, 70, 80, 90, 100, 110, 120, 130, 140, 150",
    "7f9050831238a25c67ebbf891ae2a03137cd8192258a0512a9ebcbbfb9424d07",
    "Line one\nLine two is a little longer than the first\n\nafter a blank line",
    "WWW MMM QQQ @@@ %%% WWW MMM QQQ GOOD NEWS ALL CAPITALS",
    "Survey and set out racking and mezzanine grid; office fit-out (phase 2/3)",
]
WIDTHS = [8.0, 14.0, 30.0, 52.0]
STYLES = [(rows.DEFAULT_FONT_SIZE, False), (8.0, False), (12.0, True)]


def _font_files() -> dict[str, Path]:
    found: dict[str, Path] = {}
    for folder in FONT_DIRS:
        if not folder.is_dir():
            continue
        for name in FONTS:
            if name not in found:
                hit = next(folder.rglob(name), None)
                if hit is not None:
                    found[name] = hit
    return found


@pytest.fixture(scope="module")
def metrics() -> dict[str, tuple[dict[str, float], float, bool]]:
    """Per font file: advance of each printable ASCII character in digit widths of the
    family's regular font, the regular digit advance in em, and whether it is bold."""
    files = _font_files()
    if len(files) < len(FONTS):
        missing = sorted(set(FONTS) - set(files))
        pytest.skip(
            f"font files not installed here: {', '.join(missing)} (fonts-dejavu-core, "
            "fonts-liberation2)"
        )
    em: dict[str, dict[str, float]] = {}
    for name, path in files.items():
        font = TTFont(str(path))
        cmap, hmtx, upm = font.getBestCmap(), font["hmtx"], font["head"].unitsPerEm
        em[name] = {c: hmtx[cmap[ord(c)]][0] / upm for c in PRINTABLE}
    regular = {family: name for name, (family, bold) in FONTS.items() if not bold}
    out = {}
    for name, (family, bold) in FONTS.items():
        digit = em[regular[family]]["0"]
        out[name] = ({c: w / digit for c, w in em[name].items()}, digit, bold)
    return out


def test_doctests() -> None:
    result = doctest.testmod(rows)
    assert result.attempted >= 10 and result.failed == 0


def test_table_covers_every_regular_font(metrics) -> None:
    # fontTools hmtx advances, each font against its own digit (the column unit).
    for name, (widths, _digit, bold) in metrics.items():
        if bold:
            continue
        for c in PRINTABLE:
            assert CHAR_WIDTHS[c] >= widths[c] - 1e-9, (name, c)


def test_table_is_not_wider_than_the_widest_font(metrics) -> None:
    # Rounded up to 0.05 from the larger of the two fonts, never more.
    for c in PRINTABLE:
        widest = max(w[c] for w, _d, bold in metrics.values() if not bold)
        assert CHAR_WIDTHS[c] <= widest + 0.05 + 1e-9, c


def test_bold_text_is_covered(metrics) -> None:
    # Whole texts in the bold fonts against the bold model (single narrow letters widen
    # more, 'i' by 23%, but text mixes them with wide ones).
    for name, (widths, _digit, bold) in metrics.items():
        if not bold:
            continue
        for text in TEXTS:
            for line in text.split("\n"):
                actual = sum(widths[c] for c in line)
                assert text_width(line, bold=True) >= actual, (name, line)
    assert BOLD_FACTOR * WIDTH_MARGIN < 1.25  # and not wildly wider than the fonts


def test_wrapping_rules() -> None:
    # Greedy packing at spaces, hard breaks at newlines, long words cut (common practice
    # of spreadsheet line breaking, as LibreOffice shows in the rendering test below).
    assert wrap_lines("", 10) == [""]
    assert wrap_lines("a\n\nb", 10) == ["a", "", "b"]
    long = "x" * 50
    pieces = wrap_lines(long, 10)
    assert "".join(pieces) == long and all(text_width(p) <= 10 for p in pieces)
    words = TEXTS[0]
    for width in (8, 20, 60):
        lines = wrap_lines(words, width)
        assert "".join(lines).replace(" ", "") == words.replace(" ", "")
        assert all(text_width(line) <= width for line in lines)
        if width >= 20:  # no word of this text is that long: none is cut
            assert " ".join(lines).split() == words.split()
    assert lines_needed(words, 300) == 1
    assert lines_needed(words, 20, font_size=22.0) > lines_needed(words, 20)
    assert lines_needed(words, 20, bold=True) >= lines_needed(words, 20)


def test_heights_grow_with_lines_and_size() -> None:
    one = row_height([("x", 10)])
    assert one <= 15.0  # one line of the default font fits the default row (Excel's 15 pt)
    assert row_height([("x\ny", 10)]) > one
    assert row_height([("x", 10, 14.0)]) > one
    assert row_height([("x" * 10000, 5)]) == rows.MAX_ROW_HEIGHT


# ------------------------------------------------------------------ LibreOffice rendering
def _cases() -> list[tuple[str, float, float, bool]]:
    cases = []
    for k, text in enumerate(TEXTS):
        for j, width in enumerate(WIDTHS):
            size, bold = STYLES[(k + j) % len(STYLES)]
            if row_height([(text, width, size, bold)]) < rows.MAX_ROW_HEIGHT:  # fits a row
                cases.append((text, width, size, bold))
    return cases


def _calibration_workbook(path: Path, cases, heights, font: str) -> None:
    """One sheet per case: the wrapped cell in B1 (its row ``heights[k]`` tall), an empty
    row, markers in column A; ``font`` is the workbook's default font, at the default size."""
    wb = xlsxwriter.Workbook(
        str(path),
        {"default_format_properties": {"font_name": font, "font_size": rows.DEFAULT_FONT_SIZE}},
    )
    marker = wb.add_format({"font_size": 8, "valign": "top"})
    for k, ((text, width, size, bold), height) in enumerate(zip(cases, heights)):
        ws = wb.add_worksheet(f"c{k}")
        ws.set_landscape()
        ws.set_paper(9)
        ws.set_column(0, 0, 6)
        ws.set_column(1, 1, width)
        fmt = wb.add_format({"text_wrap": True, "valign": "top", "font_size": size, "bold": bold})
        ws.write_string(0, 0, f"r{k}", marker)
        ws.write_string(0, 1, text, fmt)
        ws.set_row(0, height)
        ws.write_string(1, 0, f"s{k}", marker)
        ws.set_row(1, 40)
        ws.write_string(2, 0, f"e{k}", marker)
    wb.close()


def _clipped(pdf: Path, cases) -> tuple[set[int], dict[int, int]]:
    """Cases whose wrapped cell LibreOffice did not show whole, and the number of lines it
    drew for each case.

    LibreOffice leaves out a line that falls wholly below the row and draws a line that
    straddles the row's foot clipped: so a case is cut when its drawn words do not spell
    the whole text, or when a drawn word reaches below the top of the next row (the
    marker of the empty row below stands at that row's top).
    """
    from render import page_words

    cut: set[int] = set()
    drawn: dict[int, int] = {}
    for words in page_words(pdf):
        marks = {
            w.text[0]: (w, int(w.text[1:])) for w in words if re.fullmatch(r"[rse]\d+", w.text)
        }
        if "r" not in marks:
            continue
        k = marks["r"][1]
        foot = marks["s"][0].y0
        edge = max(m.x1 for m, _k in marks.values())
        cell = [w for w in words if w.x0 > edge]
        shown = "".join(w.text for w in sorted(cell, key=lambda w: (round(w.y0), w.x0)))
        if shown != re.sub(r"\s+", "", cases[k][0]) or any(w.y1 > foot + 0.5 for w in cell):
            cut.add(k)
        drawn[k] = len({round(w.y0) for w in cell})
    return cut, drawn


@pytest.mark.libreoffice
@pytest.mark.parametrize("font", [rows.FONT_NAME, "DejaVu Sans"])
def test_libreoffice_shows_every_line_inside_its_row(soffice, tmp_path, font) -> None:
    # The workbook's font (Arial: LibreOffice draws its metric twin Liberation Sans where
    # Arial is absent), and the wide font LibreOffice falls back on where a font is missing.
    from render import poppler_missing, to_pdf

    reason = poppler_missing()
    if reason:
        pytest.skip(reason)
    cases = _cases()
    heights = [row_height([c]) for c in cases]
    # controls: the cases of four lines or more again, with room for half their lines
    long = [c for c in cases if lines_needed(*c) >= 4]
    controls = set(range(len(cases), len(cases) + len(long)))
    heights += [rows.height_for_lines(lines_needed(*c) // 2, c[2]) for c in long]
    cases += long
    book = tmp_path / "rows.xlsx"
    _calibration_workbook(book, cases, heights, font)
    cut, drawn = _clipped(to_pdf(book, tmp_path, soffice=soffice), cases)
    assert len(drawn) == len(cases) and len(controls) >= 10
    # LibreOffice shows every line of every row of computed height (and the check catches
    # each control row with room for half its lines) ...
    assert cut == controls, sorted(cut ^ controls)
    # ... and the model is cautious but not wasteful: at most a third more lines overall
    # than LibreOffice needed (a line or more of slack per cell would bloat the pages).
    model = sum(lines_needed(*c) for k, c in enumerate(cases) if k not in controls)
    real = sum(n for k, n in drawn.items() if k not in controls)
    assert real <= model <= 1.34 * real, (model, real)


def test_a_long_unbroken_word_is_cut_into_pieces_that_each_fit():
    """A word wider than the line is cut into line-wide pieces: nothing lost, each piece
    fits, and only the last may be short (common practice for wrapping long tokens)."""
    from converter.write.workbook.rows import _wrap_paragraph, text_width

    word = "w" * 5_000 + "iii"
    pieces = _wrap_paragraph(word, 40.0, 10.0, False)
    assert "".join(pieces) == word
    assert all(text_width(p, 10.0, False) <= 40.0 for p in pieces)
    assert all(text_width(p + "w", 10.0, False) > 40.0 for p in pieces[:-1])
