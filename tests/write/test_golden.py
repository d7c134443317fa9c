"""Golden files: each sample converts to exactly the committed JSON and workbook parts.

The expected files under tests/golden/<sample>/ were produced by
``pertbook convert <sample> --json`` (default options, fixed seed) and normalised by
tests/support/golden.py: absolute paths replaced, every XML part of the .xlsx package
pretty-printed one element per line. The committed copies were made by the code
before the package was restructured (commit 0ba73a6), so a pass here shows every
figure, formula, style and chart survived it. The method is XlsxWriter's own: its test
suite compares the XML parts of the files it writes, part by part, with expected files.

A deliberate change of the output: ``python tests/golden/regenerate.py``, then review
``git diff tests/golden``.

The normalisation itself is checked against xml.etree's Canonical XML 2.0
(W3C C14N 2.0): a pretty-printed part is the same document as the original.
"""

from __future__ import annotations

import zipfile
from xml.etree.ElementTree import canonicalize

import pytest
from golden import (
    GOLDEN,
    JSON_NAME,
    MANIFEST,
    SAMPLE_FILES,
    SAMPLES,
    convert_sample,
    diff_text,
    pretty_xml,
    read_golden,
)

STEMS = [name.rsplit(".", 1)[0] for name in SAMPLE_FILES]
GOLDEN_FILES = [
    (stem, p.relative_to(GOLDEN / stem).as_posix())
    for stem in STEMS
    for p in sorted((GOLDEN / stem).rglob("*"))
    if p.is_file()
]
REGENERATE = "If the change is deliberate: python tests/golden/regenerate.py, review git diff."


@pytest.fixture(scope="module")
def produced(tmp_path_factory):
    """``produced(stem)``: the normalised files of one sample's conversion, made once.

    ``produced.xlsx(stem)`` is the workbook itself (after ``produced(stem)``).
    """
    root = tmp_path_factory.mktemp("golden")
    cache: dict[str, dict[str, str]] = {}

    def get(stem: str) -> dict[str, str]:
        if stem not in cache:
            name = SAMPLE_FILES[STEMS.index(stem)]
            cache[stem] = convert_sample(SAMPLES / name, root / stem)
        return cache[stem]

    get.xlsx = lambda stem: root / stem / f"{stem}.analysis.xlsx"
    return get


def test_every_sample_has_golden_files():
    for stem in STEMS:
        files = {rel for s, rel in GOLDEN_FILES if s == stem}
        assert {
            JSON_NAME,
            MANIFEST,
            "xlsx/xl/workbook.xml",
            "xlsx/xl/sharedStrings.xml",
            "xlsx/xl/styles.xml",
            "xlsx/xl/worksheets/sheet1.xml",
            "xlsx/xl/charts/chart1.xml",
        } <= files, stem


@pytest.mark.parametrize(("stem", "rel"), GOLDEN_FILES, ids=[f"{s}:{r}" for s, r in GOLDEN_FILES])
def test_part_matches_golden(produced, stem, rel):
    expected = (GOLDEN / stem / rel).read_text(encoding="utf-8")
    got = produced(stem).get(rel)
    if got is None:
        pytest.fail(f"{stem}/{rel} is no longer produced. {REGENERATE}", pytrace=False)
    if got != expected:
        label = f"{stem}/{rel}"
        for line in (GOLDEN / stem / MANIFEST).read_text(encoding="utf-8").splitlines():
            if rel == f"xlsx/{line.split('  (')[0]}" and "  (" in line:
                label += "  (" + line.split("  (", 1)[1]  # the sheet's title
        pytest.fail(f"{diff_text(expected, got, label)}\n{REGENERATE}", pytrace=False)


@pytest.mark.parametrize("stem", STEMS)
def test_no_part_without_a_golden_file(produced, stem):
    # parts.txt lists the package's parts in order; this catches a new part as a file too
    extra = sorted(set(produced(stem)) - set(read_golden(stem)))
    assert extra == [], f"new output files {extra}. {REGENERATE}"


@pytest.mark.parametrize("stem", ["boiler-shutdown"])  # one sample has every kind of part
def test_pretty_printing_keeps_the_document(produced, stem):
    # W3C Canonical XML 2.0 (xml.etree.ElementTree.canonicalize) of each original part
    # equals that of its pretty-printed text: only whitespace between elements differs.
    produced(stem)
    with zipfile.ZipFile(produced.xlsx(stem)) as z:
        for part in z.namelist():
            data = z.read(part)
            assert canonicalize(data.decode("utf-8"), strip_text=True) == canonicalize(
                pretty_xml(data), strip_text=True
            ), part


def test_a_changed_figure_fails_with_a_readable_diff(produced):
    # the comparison can fail: one cached value altered shows as a -/+ pair naming the cell
    stem = STEMS[0]
    rel = "xlsx/xl/worksheets/sheet1.xml"
    expected = produced(stem)[rel]
    line = next(x for x in expected.splitlines() if "<f>" in x and "<v>" in x)
    start = line.index("<v>") + 3
    altered_line = line[:start] + "12345.678" + line[line.index("</v>", start) :]
    altered = expected.replace(line, altered_line, 1)
    report = diff_text(expected, altered, f"{stem}/{rel}")
    assert report.startswith(f"{stem}/{rel}: 2 changed lines")
    assert f"-{line}" in report and f"+{altered_line}" in report
    assert "--- golden/" in report and "+++ produced/" in report


def test_substation_sample_is_what_its_generator_writes(tmp_path):
    # samples/substation-upgrade.xlsx is made by tests/support/substation_sample.py: every
    # sheet's cells, read back by python-calamine, are those of a fresh build.
    from python_calamine import CalamineWorkbook
    from substation_sample import build

    fresh = build(tmp_path / "substation-upgrade.xlsx")

    def cells(path):
        book = CalamineWorkbook.from_path(str(path))
        return {name: book.get_sheet_by_name(name).to_python() for name in book.sheet_names}

    assert cells(SAMPLES / "substation-upgrade.xlsx") == cells(fresh), (
        "run python tests/support/substation_sample.py"
    )
