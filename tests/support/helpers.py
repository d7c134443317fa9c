"""Builders of small invented input files for the validation and command-line tests.

Workbooks are written with openpyxl (an independent writer: the converter reads with
calamine and writes with XlsxWriter), CSV files with the standard library's csv module.
Every ``str`` is stored as a text cell, never as a formula, so that inputs such as
``=HYPERLINK(...)`` arrive at the converter as the text a user typed.
"""

from __future__ import annotations

import csv
import hashlib
import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import openpyxl

REPO = Path(__file__).resolve().parents[2]

#: The plain header: A=ID, B=Description, C=Predecessors, D=Optimistic, E=Most likely,
#: F=Pessimistic. Cells named in the tests are worked out by hand from this layout.
HEADER = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]

#: An invented four-activity network A -> B -> D, A -> C -> D (sheet rows 2..5).
GOOD_ROWS: list[list[object]] = [
    HEADER,
    ["A", "Survey site", None, 2, 4, 6],
    ["B", "Order steel", "A", 1, 3, 11],
    ["C", "Pour slab", "A", 1, 2, 3],
    ["D", "Erect frame", "B, C", 3, 5, 7],
]

Rows = list[list[object]]


def write_xlsx(path: Path, sheets: dict[str, Rows]) -> Path:
    """A workbook with the given sheets in order; ``None`` leaves a cell empty."""
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for r, row in enumerate(rows, start=1):
            for c, value in enumerate(row, start=1):
                if value is None:
                    continue
                cell = ws.cell(r, c)
                cell.value = value
                if isinstance(value, str):
                    cell.data_type = "s"  # text as typed, even when it starts with "="
    wb.save(path)
    return path


def write_csv(path: Path, rows: Rows) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as f:
        csv.writer(f).writerows([["" if v is None else v for v in row] for row in rows])
    return path


def good_xlsx(path: Path) -> Path:
    return write_xlsx(path, {"Activities": GOOD_ROWS})


def sha256(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def run_cli(*args: object, cwd: Path | None = None) -> subprocess.CompletedProcess:
    """``python -m converter ARGS`` in a fresh interpreter (the installed entry point's code)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run(
        [sys.executable, "-m", "converter", *map(str, args)],
        capture_output=True,
        text=True,
        cwd=cwd,
        env=env,
        check=False,
    )


# --------------------------------------------------------------------------- bad inputs
def _bad_rows(path: Path, row: list[object]) -> Path:
    return write_xlsx(path, {"Activities": [HEADER, ["A", "a", None, 1, 2, 3], row]})


def _random_bytes(path: Path) -> Path:
    path.write_bytes(bytes((i * 131 + 7) % 256 for i in range(4096)))  # not a zip, not OLE
    return path


def _text(path: Path) -> Path:
    path.write_text("ID,Optimistic,Most likely,Pessimistic\nA,1,2,3\n", encoding="utf-8")
    return path


def _cycle(path: Path) -> Path:
    return write_xlsx(
        path,
        {
            "Activities": [
                HEADER,
                ["K2", None, "K4", 1, 2, 3],
                ["K3", None, "K2", 1, 2, 3],
                ["K4", None, "K3", 1, 2, 3],
            ]
        },
    )


def _missing_column(path: Path) -> Path:
    return write_xlsx(
        path,
        {"Activities": [["ID", "Predecessors", "Optimistic", "Pessimistic"], ["A", None, 1, 3]]},
    )


def _empty(path: Path) -> Path:
    return write_xlsx(path, {"Sheet1": []})


def _bad_setting(path: Path) -> Path:
    return write_xlsx(
        path, {"Activities": GOOD_ROWS, "Settings": [["Setting", "Value"], ["Start date", "soon"]]}
    )


#: name -> (file name, builder, the places (``Sheet!Cell``, or the file name) worked out by
#: hand from the rows written). Each is invalid input: exit code 2, never a traceback.
BAD_INPUTS: dict[str, tuple[str, Callable[[Path], Path], set[str]]] = {
    "duplicate-id": (
        "dup.xlsx",
        lambda p: _bad_rows(p, ["A", "again", None, 1, 2, 3]),
        {"Activities!A3"},
    ),
    "blank-id": (
        "blank.xlsx",
        lambda p: _bad_rows(p, [None, "no id", "A", 1, 2, 3]),
        {"Activities!A3"},
    ),
    "missing-link": (
        "link.xlsx",
        lambda p: _bad_rows(p, ["B", "b", "Q7", 1, 2, 3]),
        {"Activities!C3"},
    ),
    "self-link": ("self.xlsx", lambda p: _bad_rows(p, ["B", "b", "B", 1, 2, 3]), {"Activities!C3"}),
    "cycle": ("cycle.xlsx", _cycle, {"Activities!C2"}),
    "not-a-number": (
        "nan.xlsx",
        lambda p: _bad_rows(p, ["B", "b", "A", 1, "two", 3]),
        {"Activities!E3"},
    ),
    "negative": ("neg.xlsx", lambda p: _bad_rows(p, ["B", "b", "A", -1, 2, 3]), {"Activities!D3"}),
    "order": ("order.xlsx", lambda p: _bad_rows(p, ["B", "b", "A", 5, 2, 9]), {"Activities!E3"}),
    "bad-bracket": (
        "bracket.xlsx",
        lambda p: _bad_rows(p, ["B", "b", "A[XX]", 1, 2, 3]),
        {"Activities!C3"},
    ),
    "missing-column": ("cols.xlsx", _missing_column, {"Activities!A1"}),
    "empty": ("empty.xlsx", _empty, {"Sheet1!A1"}),
    "random-bytes": ("noise.xlsx", _random_bytes, {"noise.xlsx"}),
    "text-file": ("notes.txt", _text, {"notes.txt"}),
    "missing-file": ("absent.xlsx", lambda p: p, {"absent.xlsx"}),
    "bad-setting": ("setting.xlsx", _bad_setting, {"Settings!B2"}),
}


def build_bad(name: str, folder: Path) -> tuple[Path, set[str]]:
    file_name, builder, places = BAD_INPUTS[name]
    return builder(folder / file_name), places
