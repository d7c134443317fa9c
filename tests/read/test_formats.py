"""Every input format converts the same schedule to the same numbers.

One invented schedule (18 activities, every link type in the bracket notation, lags and
leads, a settings sheet with a start date and a due date) is written by independent
writers: openpyxl (.xlsx, and .xlsm with the macro-enabled content type), xlwt (.xls,
BIFF8), pandas with odfpy (.ods) and the standard csv module (.csv). The converter reads
all of them with calamine; the JSON figures it writes must be identical across formats.
CSV cannot hold a settings sheet, so its start and due date are given as options, the
way the command line gives them.

A further check: in a workbook whose activity list is not the first sheet, the sheet is
found by its column headers and the choice is reported in the notes and on the Summary.
"""

from __future__ import annotations

import datetime as dt
import json
import zipfile
from pathlib import Path

import openpyxl
import pytest
from helpers import write_csv, write_xlsx

SEED = 97531
ITERATIONS = 2000
START = dt.date(2026, 9, 7)
DUE = dt.date(2026, 11, 27)

HEADER = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic", "Target"]
ROWS: list[list[object]] = [
    HEADER,
    ["P01", "Agree scope with the client", None, 1, 2, 3, None],
    ["P02", "Survey existing plant room", "P01", 2, 3, 5, None],
    ["P03", "Outline design", "P02[SS+1]", 4, 6, 10, None],
    ["P04", "Planning consultation", "P03[FF+2]", 5, 8, 15, None],
    ["P05", "Detailed design", "P03", 6, 8, 13, None],
    ["P06", "Tender package", "P05[-2]", 2, 3, 4, None],
    ["P07", "Tender period", "P06", 10, 10, 15, None],
    ["P08", "Award contract", "P07, P04", 1, 2, 4, 40],
    ["P09", "Order chillers", "P08", 1, 1, 2, None],
    ["P10", "Chiller manufacture", "P09[+3]", 12, 15, 25, None],
    ["P11", "Strip out old plant", "P08[+1]", 3, 4, 7, None],
    ["P12", "Builder's work and bases", "P11[SS+2]", 3, 5, 8, None],
    ["P13", "Pipework first fix", "P12[FF+1], P11", 5, 7, 12, None],
    ["P14", "Install chillers", "P10, P12", 2, 3, 5, None],
    ["P15", "Controls wiring", "P13[SS+3], P14[SF+2]", 3, 4, 6, None],
    ["P16", "Flush and fill", "P14, P13", 1, 2, 3, None],
    ["P17", "Commissioning", "P15, P16[-1]", 3, 4, 8, None],
    ["P18", "Handover and training", "P17[FF]", 1, 2, 3, None],
]
SETTINGS: list[list[object]] = [
    ["Setting", "Value"],
    ["Start date", START],
    ["Due date", DUE],
]


# --------------------------------------------------------------------------- writers
def write_xlsm(path: Path) -> Path:
    """openpyxl workbook saved with the macro-enabled workbook content type (no macros).

    ``application/vnd.ms-excel.sheet.macroEnabled.main+xml`` is the main-part content type
    of an .xlsm package ([MS-OFFMACRO] / ECMA-376 conventions, from memory).
    """
    tmp = path.with_suffix(".tmp.xlsx")
    write_xlsx(tmp, {"Activities": ROWS, "Settings": SETTINGS})
    plain = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"
    macro = "application/vnd.ms-excel.sheet.macroEnabled.main+xml"
    with zipfile.ZipFile(tmp) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename == "[Content_Types].xml":
                assert plain.encode() in data
                data = data.replace(plain.encode(), macro.encode())
            dst.writestr(item, data)
    tmp.unlink()
    return path


def write_xls(path: Path, sheets: dict[str, list[list[object]]]) -> Path:
    xlwt = pytest.importorskip("xlwt")  # in pyproject's test extras
    book = xlwt.Workbook()
    date_style = xlwt.easyxf(num_format_str="YYYY-MM-DD")
    for name, rows in sheets.items():
        ws = book.add_sheet(name)
        for r, row in enumerate(rows):
            for c, v in enumerate(row):
                if v is None:
                    continue
                if isinstance(v, dt.date):
                    ws.write(r, c, dt.datetime.combine(v, dt.time()), date_style)
                else:
                    ws.write(r, c, v)
    book.save(str(path))
    return path


def write_ods(path: Path, sheets: dict[str, list[list[object]]]) -> Path:
    pytest.importorskip("odf")  # odfpy, in pyproject's test extras
    import pandas as pd

    with pd.ExcelWriter(path, engine="odf") as writer:
        for name, rows in sheets.items():
            width = max(len(r) for r in rows)
            frame = pd.DataFrame([list(r) + [None] * (width - len(r)) for r in rows], dtype=object)
            frame.to_excel(writer, sheet_name=name, header=False, index=False)
    return path


def make_input(fmt: str, folder: Path) -> tuple[Path, dict]:
    """The schedule in format ``fmt``; returns (path, extra ConvertOptions keywords)."""
    path = folder / f"plant-room.{fmt}"
    sheets = {"Activities": ROWS, "Settings": SETTINGS}
    if fmt == "xlsx":
        write_xlsx(path, sheets)
    elif fmt == "xlsm":
        write_xlsm(path)
    elif fmt == "xls":
        write_xls(path, sheets)
    elif fmt == "ods":
        write_ods(path, sheets)
    elif fmt == "csv":
        write_csv(path, ROWS)
        return path, {"start_date": START.isoformat(), "due": DUE.isoformat()}
    else:
        raise ValueError(fmt)
    return path, {}


FORMATS = ["xlsx", "xlsm", "xls", "ods", "csv"]
#: JSON sections that must not depend on the file format (everything but the input's
#: name, hash and the problems list, whose places name the sheet).
SAME = (
    "time_unit",
    "activity_count",
    "start_date",
    "calendar",
    "project",
    "activities",
    "links",
    "paths",
    "simulation",
    "targets",
    "checks",
)


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    from converter.api import ConvertOptions, convert

    root = tmp_path_factory.mktemp("formats")
    out: dict[str, dict] = {}

    def get(fmt: str) -> dict:
        if fmt not in out:
            folder = root / fmt
            folder.mkdir()
            path, extra = make_input(fmt, folder)
            result = convert(
                path,
                ConvertOptions(json=True, seed=SEED, iterations=ITERATIONS, **extra),
                outdir=folder / "out",
            )
            assert result.ok, [str(p) for p in result.problems]
            out[fmt] = json.loads(result.json_path.read_text(encoding="utf-8"))
        return out[fmt]

    return get


def test_xlsm_is_a_macro_enabled_package_calamine_reads(tmp_path):
    import python_calamine

    path = write_xlsm(tmp_path / "plan.xlsm")
    with zipfile.ZipFile(path) as z:
        assert b"macroEnabled.main+xml" in z.read("[Content_Types].xml")
    book = python_calamine.CalamineWorkbook.from_path(str(path))
    assert book.sheet_names == ["Activities", "Settings"]
    rows = book.get_sheet_by_name("Activities").to_python()
    assert rows[0][:3] == ["ID", "Description", "Predecessors"] and rows[3][2] == "P02[SS+1]"
    openpyxl.load_workbook(path).close()  # a second, independent reader opens it too


def test_schedule_exercises_every_link_type(converted):
    data = converted("xlsx")
    assert data["activity_count"] == len(ROWS) - 1
    assert {lk["type"] for lk in data["links"]} == {"FS", "SS", "FF", "SF"}
    lags = [lk["lag"] for lk in data["links"]]
    assert any(g > 0 for g in lags) and any(g < 0 for g in lags)
    assert data["start_date"] == START.isoformat()
    assert data["project"]["due_date"] == DUE.isoformat()
    assert [t["activity"] for t in data["targets"]] == ["P08"]


@pytest.mark.parametrize("fmt", [f for f in FORMATS if f != "xlsx"])
def test_every_format_gives_the_same_numbers(converted, fmt):
    want, got = converted("xlsx"), converted(fmt)
    for key in SAME:
        assert got[key] == want[key], f"{fmt}: {key} differs from .xlsx"
    assert got["simulation"]["seed"] == SEED and got["simulation"]["iterations"] == ITERATIONS
    # spot the figures the issue names, in case a section above was empty in both
    for a, b in zip(got["activities"], want["activities"]):
        for k in (
            "te",
            "es",
            "ef",
            "ls",
            "lf",
            "total_float",
            "free_float",
            "early_start_date",
            "early_finish_date",
            "late_start_date",
            "late_finish_date",
            "criticality",
            "sensitivity",
        ):
            assert a[k] == b[k] and a[k] is not None, (fmt, a["id"], k)


# --------------------------------------------------------------------------- sheet choice
COVER = [
    ["Plant room replacement"],
    ["Prepared for the estates team"],
    [],
    ["The activity list is on the 'Project plan' sheet."],
]
DECOY = [["ID", "Task", "Owner"], ["R1", "Book crane", "Sam"], ["R2", "Order skips", "Ali"]]
PLAN = [["Plant room replacement: three-point estimates (working days)"], []] + ROWS


@pytest.mark.parametrize("fmt", ["xlsx", "xls", "ods"])
def test_activity_sheet_found_by_its_headers_when_not_first(tmp_path, fmt):
    from converter.api import ConvertOptions, convert, load

    # "Tasks" is a usual activity-sheet name but lacks the estimate columns; the real
    # list is third, under a title, on a sheet whose name says nothing.
    sheets = {"Cover": COVER, "Tasks": DECOY, "Project plan": PLAN, "Settings": SETTINGS}
    path = tmp_path / f"multi.{fmt}"
    {"xlsx": write_xlsx, "xls": write_xls, "ods": write_ods}[fmt](path, sheets)
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.sheet == "Project plan"
    assert [a.id for a in schedule.activities] == [r[0] for r in ROWS[1:]]
    notes = [n for n in schedule.notes if n.startswith("Activity sheet:")]
    assert len(notes) == 1 and "Project plan" in notes[0] and "of 4 sheets" in notes[0], notes
    assert "headers" in notes[0]
    assert any("Settings" in n for n in schedule.notes)
    result = convert(
        path, ConvertOptions(json=True, seed=SEED, iterations=200), outdir=tmp_path / "out"
    )
    assert result.ok and result.sheet == "Project plan"
    summary = openpyxl.load_workbook(result.workbook)["Summary"]
    row = next(r for r in summary.iter_rows() if r[0].value == "Activity sheet")
    assert row[1].value == "Project plan"
    assert notes[0] in (row[3].value or "")
    # same schedule, same figures as the single-sheet workbook of the same rows
    data = json.loads(result.json_path.read_text(encoding="utf-8"))
    single = tmp_path / "single.xlsx"
    write_xlsx(single, {"Activities": ROWS, "Settings": SETTINGS})
    base = convert(
        single, ConvertOptions(json=True, seed=SEED, iterations=200), outdir=tmp_path / "single-out"
    )
    base_data = json.loads(base.json_path.read_text(encoding="utf-8"))
    for key in ("project", "activities", "paths", "simulation"):
        assert data[key] == base_data[key], key


# --------------------------------------------------------------------------- numeric IDs
@pytest.mark.parametrize("fmt", ["xls", "ods", "csv"])
def test_sample_with_numeric_ids_and_a_title_row_converts_alike(tmp_path, fmt):
    # The warehouse sample (numeric IDs, a title above the header, a settings sheet) read
    # with openpyxl and rewritten by another writer gives the sample's own figures.
    from converter.api import ConvertOptions, convert

    sample = Path(__file__).resolve().parents[2] / "samples" / "warehouse-fitout.xlsx"
    book = openpyxl.load_workbook(sample, data_only=True)
    sheets = {
        ws.title: [list(r) for r in ws.iter_rows(values_only=True) if any(v is not None for v in r)]
        for ws in book.worksheets
    }
    book.close()
    assert isinstance(sheets["Activities"][3][0], int)  # numeric IDs in the sample
    options = {"json": True, "seed": SEED, "iterations": 500}
    base = convert(sample, ConvertOptions(**options), outdir=tmp_path / "base")
    path = tmp_path / f"warehouse.{fmt}"
    if fmt == "csv":
        write_csv(path, sheets["Activities"])
        due = json.loads(base.json_path.read_text(encoding="utf-8"))["project"]["due"]
        options["due"] = due  # the settings sheet's due, given the command-line way
    else:
        {"xls": write_xls, "ods": write_ods}[fmt](path, sheets)
    result = convert(path, ConvertOptions(**options), outdir=tmp_path / "out")
    assert base.ok and result.ok, [str(p) for p in result.problems]
    want = json.loads(base.json_path.read_text(encoding="utf-8"))
    got = json.loads(result.json_path.read_text(encoding="utf-8"))
    for key in ("project", "activities", "links", "paths", "simulation", "checks"):
        assert got[key] == want[key], key
    assert [a["id"] for a in got["activities"]][:3] == ["10", "20", "30"]
