"""The analysis workbook: formulas, names, charts, determinism, checked from outside.

What is checked against what:
- LibreOffice Calc recalculates every formula of each produced workbook (tests/support/recalc.py,
  a private profile that forces recalculation on load) and every recalculated value must
  equal the cached value the converter wrote: the three samples, the warehouse sample with
  a command-line due duration, and generated schedules with every link type, lags and
  leads, a Saturday start, holidays, interim targets, weeks and calendar days. This is
  the outside proof that the WORKDAY.INTL / NETWORKDAYS.INTL date formulas, the
  forward/backward pass formulas and the SUMPRODUCT path lengths give the cached values.
- The workbook package is read with zipfile, xml.etree and openpyxl (independent readers;
  the converter writes with XlsxWriter). Limits (formula length 8,192 characters, cell
  text 32,767 characters, sheet name 31 characters) are Excel's documented specification
  limits, from memory.
- Formula structure for a plain finish-to-start network is checked against the
  predecessor lists read straight from the sample input with openpyxl: the early start is
  a MAX over the predecessors' early finishes and the late finish a MIN over the
  successors' late starts (CPM forward/backward pass, Kelley & Walker 1959); TE is
  (O + 4M + P) / 6 (Malcolm, Roseboom, Clark & Fazar 1959).
- Path chances for the "riskier path" network are computed here with scipy.stats.norm.
- One date is worked by hand from a printed calendar (a Saturday start whose Monday is a
  holiday starts work on the Tuesday).
"""

from __future__ import annotations

import datetime as dt
import json
import math
import re
import shlex
import xml.etree.ElementTree as ET
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from helpers import write_xlsx
from openpyxl.utils import range_boundaries
from recalc import compare_recalculated
from reference_cpm import LINK_CODES, reference_cpm
from scipy.stats import norm
from substation_sample import build as build_substation

REPO = Path(__file__).resolve().parents[2]
SAMPLES = REPO / "samples"
SEED = 424242
ITERATIONS = 2000
HEADER = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]

# Excel specification limits (Microsoft "Excel specifications and limits", from memory).
FORMULA_LIMIT = 8192
CELL_TEXT_LIMIT = 32767
SHEET_NAME_LIMIT = 31


# --------------------------------------------------------------------------- generated inputs
def settings_rows(start, unit, days, holidays, due) -> list[list[object]]:
    """A Settings sheet: labels in column A, values in B; holidays on blank-labelled rows."""
    rows: list[list[object]] = [
        ["Setting", "Value"],
        ["Start date", start],
        ["Time unit", unit],
        ["Working days", days],
    ]
    for k, h in enumerate(holidays):
        rows.append(["Holidays" if k == 0 else None, h])
    rows.append(["Due date", due])
    return rows


D = dt.date
TYPED_START = D(2026, 8, 1)  # a Saturday
TYPED_HOLIDAYS = [D(2026, 8, 3), D(2026, 8, 28), D(2026, 8, 31)]  # Mon, Fri, Mon


def typed_input(path: Path) -> Path:
    """Every link type with lags and leads, a Saturday start, holidays and two targets."""
    rows = [
        HEADER + ["Target"],
        ["T01", "Mobilise crew", None, 1, 2, 3, None],
        ["T02", "Detailed design", "T01", 3, 5, 9, None],
        ["T03", "Procure long-lead items", "T02[SS+2]", 8, 10, 15, None],
        ["T04", "Fabricate frames", "T02[FF+1]", 4, 6, 11, None],
        ["T05", "Install base plates", "T03, T04[-1]", 2, 3, 5, D(2026, 9, 4)],
        ["T06", "Commission drives", "T05[SF+4]", 2, 4, 7, None],
        ["T07", "Write manuals", "T02[SS], T05[FF-2]", 3, 4, 8, 25],
        ["T08", "Train operators", "T06[+2], T07", 1, 2, 4, None],
        ["T09", "Handover", "T08, T06[FF]", 1, 1, 2, None],
        ["T10", "Sign-off (milestone)", "T09", 0, 0, 0, None],
    ]
    settings = settings_rows(TYPED_START, "working days", "Mon-Fri", TYPED_HOLIDAYS, D(2026, 10, 9))
    return write_xlsx(path, {"Activities": rows, "Settings": settings})


def weeks_input(path: Path) -> Path:
    """Estimates in working weeks of a Monday-to-Saturday calendar."""
    rows = [
        HEADER,
        ["W1", "Brief and survey", None, 0.5, 1, 2],
        ["W2", "Groundworks", "W1", 1, 2, 4],
        ["W3", "Drainage", "W1[SS+0.5]", 1, 1.5, 3],
        ["W4", "Slab", "W2, W3[FF+0.2]", 0.2, 0.4, 1],
        ["W5", "Frame", "W4[-0.4]", 1, 2, 3],
        ["W6", "Envelope", "W5[SS+1]", 2, 3, 5],
        ["W7", "Services", "W5, W6[SF+1]", 1, 2, 3.5],
    ]
    settings = settings_rows(
        D(2026, 3, 4), "weeks", "Mon-Sat", [D(2026, 4, 3), D(2026, 4, 6)], D(2026, 5, 29)
    )
    return write_xlsx(path, {"Activities": rows, "Settings": settings})


def calendar_days_input(path: Path) -> Path:
    """Elapsed calendar days from a Saturday (weekends and holidays do not matter)."""
    rows = [
        HEADER,
        ["C1", "Cure concrete", None, 5, 7, 10],
        ["C2", "Dry out screed", "C1[+2]", 10, 14, 21],
        ["C3", "Acclimatise timber", "C1[SS+3]", 7, 7, 10],
        ["C4", "Lay floor", "C2, C3[FF-1]", 2, 3, 5],
        ["C5", "Seal floor", "C4[SF+2]", 1, 1.5, 2],
    ]
    settings = settings_rows(D(2026, 11, 7), "calendar days", "Mon-Fri", [D(2026, 12, 25)], 40)
    return write_xlsx(path, {"Activities": rows, "Settings": settings})


def edge_input(path: Path) -> Path:
    """The start date is itself a holiday, holidays fall before the start and on a weekend,
    leads push early starts below zero (clipped at the start), milestones at both ends, a
    date target and a due date before the expected finish."""
    rows = [
        HEADER + ["Target"],
        ["M0", "Start milestone", None, 0, 0, 0, None],
        ["E1", "Strip out", "M0", 2, 3, 4, None],
        ["E2", "Temporary supply", "E1[SF-5]", 1, 2, 3, None],
        ["E3", "Isolate", "E1[SS-1]", 1, 1, 1, D(2026, 4, 2)],
        ["E4", "Reconnect", "E2, E3[FF-3]", 2.5, 3.5, 6, None],
        ["E5", "Finish milestone", "E4", 0, 0, 0, 3],
    ]
    settings = settings_rows(
        D(2026, 4, 1),
        "working days",
        "Mon-Fri",
        [D(2026, 3, 20), D(2026, 4, 1), D(2026, 4, 4), D(2026, 4, 8)],
        D(2026, 4, 3),
    )
    return write_xlsx(path, {"Activities": rows, "Settings": settings})


def zero_spread_input(path: Path) -> Path:
    """No spread at all (sd 0: z is "n/a"), in weeks of a Sunday-to-Thursday calendar."""
    rows = [HEADER, ["A", "Fixed task", None, 2, 2, 2], ["B", "Fixed follow-on", "A", 3, 3, 3]]
    settings = settings_rows(D(2026, 4, 1), "weeks", "Sun-Thu", [D(2026, 4, 9)], D(2026, 5, 1))
    return write_xlsx(path, {"Activities": rows, "Settings": settings})


#: Critical path S-A-E (TE 13, small spread) against S-B-E (TE 12.5, large spread): for a
#: due duration between the two the shorter path is the less likely to be met.
RISKY_DUE = 13.5


def riskier_input(path: Path) -> Path:
    rows = [
        HEADER,
        ["S", "Start work", None, 1, 1, 1],
        ["A", "Steady task", "S", 10, 11, 12],
        ["B", "Uncertain task", "S", 1, 8, 30],
        ["E", "Finish work", "A, B", 1, 1, 1],
    ]
    return write_xlsx(path, {"Activities": rows})


BIG_N = 300


def big_input(path: Path) -> Path:
    """300 activities: 30 chains of 10 with cross links, estimates from a seeded generator."""
    rng = np.random.default_rng(7)
    rows: list[list[object]] = [HEADER]
    for i in range(BIG_N):
        chain, step = divmod(i, 10)
        preds = []
        if step:
            preds.append(f"N{i - 1:03d}")
        if chain and step in (3, 7):
            preds.append(f"N{i - 10 + 1:03d}")
        o = float(rng.integers(1, 5))
        m = o + float(rng.integers(0, 4))
        p = m + float(rng.integers(0, 6))
        rows.append([f"N{i:03d}", f"Task {i}", ", ".join(preds) or None, o, m, p])
    return write_xlsx(path, {"Activities": rows})


# --------------------------------------------------------------------------- conversions
#: key -> (input maker or sample path, ConvertOptions keywords)
CASES: dict[str, tuple[object, dict]] = {
    "warehouse": (SAMPLES / "warehouse-fitout.xlsx", {}),
    "warehouse-due45": (SAMPLES / "warehouse-fitout.xlsx", {"due": 45.0}),
    "clinic": (SAMPLES / "clinic-it-rollout.xlsx", {}),
    "boiler": (SAMPLES / "boiler-shutdown.csv", {}),
    "typed": (typed_input, {}),
    "weeks": (weeks_input, {}),
    "calendar-days": (calendar_days_input, {}),
    "riskier": (riskier_input, {"due": RISKY_DUE}),
    "edge": (edge_input, {}),
    "zero-spread": (zero_spread_input, {}),
    "big": (big_input, {"simulate": False}),
    "warehouse-nosim": (SAMPLES / "warehouse-fitout.xlsx", {"simulate": False}),
    # WBS rows, units, a ladder, ranges, Not before, a risk register; and in flight
    "substation": (SAMPLES / "substation-upgrade.xlsx", {}),
    "substation-in-flight": (lambda path: build_substation(path, in_flight=True), {}),
}
SAMPLE_CASES = ["warehouse", "warehouse-due45", "clinic", "boiler"]
GENERATED_CASES = ["typed", "weeks", "calendar-days", "riskier", "edge", "zero-spread"]
RECALC_CASES = SAMPLE_CASES + GENERATED_CASES + ["substation", "substation-in-flight"]


class Converted:
    """One conversion: input, workbook, JSON and lazily opened readers."""

    def __init__(self, source: Path, result, data: dict):
        self.source = source
        self.result = result
        self.data = data
        self.xlsx = result.workbook
        self._wb = {}

    def wb(self, data_only: bool = False):
        if data_only not in self._wb:
            self._wb[data_only] = openpyxl.load_workbook(self.xlsx, data_only=data_only)
        return self._wb[data_only]


def run_convert(source: Path, outdir: Path, **options) -> Converted:
    from converter.api import ConvertOptions, convert

    opts = {"json": True, "iterations": ITERATIONS, "seed": SEED, **options}
    result = convert(source, ConvertOptions(**opts), outdir=outdir)
    assert result.ok, [str(p) for p in result.problems]
    data = json.loads(result.json_path.read_text(encoding="utf-8"))
    return Converted(source, result, data)


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    """``made(key)``: the conversion of CASES[key], done once per module."""
    root = tmp_path_factory.mktemp("workbook")
    cache: dict[str, Converted] = {}

    def get(key: str) -> Converted:
        if key not in cache:
            maker, options = CASES[key]
            if callable(maker):
                source = maker(root / f"{key}.xlsx")
            else:
                source = maker
            cache[key] = run_convert(source, root / key, **options)
        return cache[key]

    return get


@pytest.fixture(scope="module")
def recalculated(made, tmp_path_factory, libreoffice):
    """``recalculated(key)``: (LibreOffice's copy, comparison report), once per case.

    Every case goes to the session's one running LibreOffice (tests/conftest.py).
    """
    root = tmp_path_factory.mktemp("recalc")
    cache: dict[str, tuple[Path, object]] = {}

    def get(key: str):
        if key not in cache:
            c = made(key)
            copy = libreoffice.recalculate(c.xlsx, root / key)
            cache[key] = (copy, compare_recalculated(c.xlsx, copy))
        return cache[key]

    return get


# --------------------------------------------------------------------------- sheet helpers
def label_cell(ws, label: str, col: int = 2, start: bool = True):
    """The cell in column ``col`` beside the column-A label (prefix match by default)."""
    for row in ws.iter_rows(min_col=1, max_col=1):
        v = row[0].value
        if isinstance(v, str) and (v.startswith(label) if start else v == label):
            return ws.cell(row[0].row, col)
    raise AssertionError(f"no row labelled {label!r} on {ws.title}")


def activity_columns(ws) -> tuple[int, dict[str, int]]:
    """(header row, header text -> column number) of the Activities table."""
    for row in ws.iter_rows(min_row=1, max_row=12):
        texts = {c.value: c.column for c in row if isinstance(c.value, str)}
        if "ID" in texts and "Early start" in texts:
            return row[0].row, texts
    raise AssertionError("no activity header row")


def activity_rows(ws) -> dict[str, int]:
    top, cols = activity_columns(ws)
    out = {}
    for r in range(top + 1, ws.max_row + 1):
        v = ws.cell(r, cols["ID"]).value
        if v is not None:
            out[str(v)] = r
    return out


CELL_REF = re.compile(r"(?<![A-Za-z_])\$?([A-Z]{1,3})\$?(\d+)(?![\d(])")


def refs(formula: str) -> list[tuple[int, int]]:
    """(column number, row) of every plain cell reference in a formula."""
    from openpyxl.utils import column_index_from_string

    return [(column_index_from_string(c), int(r)) for c, r in CELL_REF.findall(formula)]


def name_target(wb, name: str) -> tuple[str, str]:
    dn = wb.defined_names[name]
    dests = list(dn.destinations)
    assert len(dests) == 1, (name, dests)
    return dests[0]


def name_value(wb, name: str):
    sheet, coord = name_target(wb, name)
    return wb[sheet][coord.replace("$", "")].value


# --------------------------------------------------------------------------- LibreOffice
@pytest.mark.libreoffice
@pytest.mark.parametrize("key", RECALC_CASES)
def test_libreoffice_recalculation_matches_cached_values(recalculated, key):
    # Outside check: LibreOffice recomputes every formula; each must give the cached value.
    _, report = recalculated(key)
    assert report.compared > 100, report
    assert list(report) == [], "\n".join(report[:20])


@pytest.mark.libreoffice
def test_recalculated_dates_match_json_and_a_hand_worked_start(made, recalculated):
    # The Saturday start 2026-08-01 is followed by the holiday Monday 2026-08-03, so the
    # first day of work is Tuesday 2026-08-04 (read off a calendar by hand).
    c = made("typed")
    copy, _ = recalculated("typed")
    wb = openpyxl.load_workbook(copy, data_only=True)
    ws = wb["Activities"]
    top, cols = activity_columns(ws)
    rows = activity_rows(ws)
    by_id = {a["id"]: a for a in c.data["activities"]}
    assert by_id["T01"]["early_start_date"] == "2026-08-04"
    for ident, r in rows.items():
        for head, key in (
            ("Early start date", "early_start_date"),
            ("Early finish date", "early_finish_date"),
            ("Late start date", "late_start_date"),
            ("Late finish date", "late_finish_date"),
        ):
            got = ws.cell(r, cols[head]).value
            assert got.date().isoformat() == by_id[ident][key], (ident, head)
    # no activity date falls on a weekend or a holiday of the calendar
    for a in c.data["activities"]:
        for key in ("early_start_date", "early_finish_date", "late_start_date", "late_finish_date"):
            d = D.fromisoformat(a[key])
            assert d.weekday() < 5 and d not in TYPED_HOLIDAYS, (a["id"], key, d)


@pytest.mark.libreoffice
def test_weeks_and_calendar_days_dates_recalculate(made, recalculated):
    # Mon-Sat working weeks: no date on a Sunday or a holiday; calendar days: the finish date
    # is start + ceil(offset) - 1 days (a finish at offset t is the end of day ceil(t)).
    weeks = made("weeks")
    for a in weeks.data["activities"]:
        for key in ("early_start_date", "early_finish_date"):
            d = D.fromisoformat(a[key])
            assert d.weekday() != 6 and d not in (D(2026, 4, 3), D(2026, 4, 6)), (a["id"], d)
    cal = made("calendar-days")
    start = D(2026, 11, 7)
    for a in cal.data["activities"]:
        if a["ef"] > 0:
            want = start + dt.timedelta(days=math.ceil(round(a["ef"], 9)) - 1)
            assert a["early_finish_date"] == want.isoformat(), a["id"]
        want_start = start + dt.timedelta(days=math.floor(round(a["es"], 9)))
        assert a["early_start_date"] == want_start.isoformat(), a["id"]
    for key in ("weeks", "calendar-days"):
        copy, report = recalculated(key)
        assert list(report) == [] and report.compared > 100, report


# --------------------------------------------------------------------------- package
@pytest.mark.libreoffice
@pytest.mark.parametrize("key", ["clinic", "typed", "boiler"])
def test_opens_without_repair(made, recalculated, key):
    c = made(key)
    copy, _ = recalculated(key)  # LibreOffice loaded and re-saved it
    assert copy.is_file() and copy.stat().st_size > 0
    check_package(c.xlsx)


@pytest.mark.parametrize("key", ["big", "warehouse-nosim"])
def test_package_is_clean_without_libreoffice(made, key):
    check_package(made(key).xlsx)


def check_package(xlsx: Path) -> None:
    """No macros, no external links; every part well-formed and typed; Excel's limits kept."""
    with zipfile.ZipFile(xlsx) as z:
        assert z.testzip() is None
        names = z.namelist()
        assert not [n for n in names if "vbaProject" in n or "externalLink" in n], names
        types = ET.fromstring(z.read("[Content_Types].xml"))
        ns = "{http://schemas.openxmlformats.org/package/2006/content-types}"
        defaults = {e.get("Extension").lower() for e in types.iter(ns + "Default")}
        overrides = {e.get("PartName") for e in types.iter(ns + "Override")}
        for n in names:
            if n.endswith("/"):
                continue
            ET.fromstring(z.read(n))  # every part is well-formed XML
            assert "/" + n in overrides or n.rsplit(".", 1)[-1].lower() in defaults, n
        for n in names:
            if n.endswith(".rels"):
                for rel in ET.fromstring(z.read(n)):
                    assert rel.get("TargetMode") != "External", (n, rel.attrib)
    wb = openpyxl.load_workbook(xlsx)
    for ws in wb.worksheets:
        assert len(ws.title) <= SHEET_NAME_LIMIT
        for row in ws.iter_rows():
            for cell in row:
                v = cell.value
                if isinstance(v, str):
                    limit = FORMULA_LIMIT if v.startswith("=") else CELL_TEXT_LIMIT
                    assert len(v) <= limit, (ws.title, cell.coordinate, len(v))
    wb.close()


# --------------------------------------------------------------------------- defined names
BASE_NAMES = ("ProjectMean", "ProjectSD", "ProjectFinish", "ProjectVariance", "FloatTolerance")


@pytest.mark.parametrize("key", SAMPLE_CASES + GENERATED_CASES)
def test_defined_names_exist_and_hold_the_json_figures(made, key):
    c = made(key)
    wb, cached = c.wb(), c.wb(data_only=True)
    project = c.data["project"]
    names = set(wb.defined_names)
    assert set(BASE_NAMES) <= names
    assert ("DueDuration" in names) == (project["due"] is not None)
    cal = c.data["calendar"]
    assert ("ProjectStart" in names) == (cal is not None)
    assert ("Holidays" in names) == bool(cal and cal["holidays"])
    close = lambda a, b: math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-12)  # noqa: E731
    assert close(name_value(cached, "ProjectMean"), project["expected_duration"])
    assert close(name_value(cached, "ProjectFinish"), project["expected_duration"])
    assert close(name_value(cached, "ProjectSD"), project["sd"])
    assert close(name_value(cached, "ProjectVariance"), project["variance"])
    assert close(name_value(cached, "ProjectSD") ** 2, name_value(cached, "ProjectVariance"))
    if project["due"] is not None:
        assert close(name_value(cached, "DueDuration"), project["due"])
    if cal is not None:
        assert name_value(cached, "ProjectStart").date().isoformat() == cal["start"]
    if cal and cal["holidays"]:
        sheet, area = name_target(wb, "Holidays")
        days = [
            cell.value.date().isoformat()
            for row in cached[sheet][area.replace("$", "")]
            for cell in row
        ]
        assert days == cal["holidays"]


@pytest.mark.parametrize("key", ["warehouse", "warehouse-due45", "clinic", "typed"])
def test_summary_z_and_probability_read_with_names(made, key):
    c = made(key)
    ws, cached = c.wb()["Summary"], c.wb(data_only=True)["Summary"]
    z_cell = label_cell(ws, "z =")
    p_cell = label_cell(ws, "Chance of meeting the due date")
    for cell in (z_cell, p_cell):
        f = cell.value
        assert (
            f.startswith("=") and "DueDuration" in f and "ProjectMean" in f and "ProjectSD" in f
        ), f
        assert not refs(f), f"reads cells, not names: {f}"
    assert "NORM.S.DIST" in p_cell.value
    z = cached[z_cell.coordinate].value
    p = cached[p_cell.coordinate].value
    project = c.data["project"]
    assert math.isclose(z, project["z"], rel_tol=1e-12)
    assert math.isclose(p, project["p_meet_due"], rel_tol=1e-12)
    # scipy.stats.norm: P = Phi(z) with z = (due - mean) / sd
    want_z = (project["due"] - project["expected_duration"]) / project["sd"]
    assert math.isclose(z, want_z, rel_tol=1e-9)
    assert math.isclose(p, norm.cdf(want_z), rel_tol=1e-9)


# --------------------------------------------------------------------------- formulas
def sample_predecessors(path: Path) -> dict[str, set[str]]:
    """ID -> predecessor IDs read from the sample with openpyxl (plain FS lists)."""
    ws = openpyxl.load_workbook(path, data_only=True)["Activities"]
    out: dict[str, set[str]] = {}
    header = None
    for row in ws.iter_rows(values_only=True):
        if header is None:
            if row and row[0] == "ID":
                header = list(row)
            continue
        if row[0] is None:
            continue
        preds = row[header.index("Predecessors")]
        toks = [] if preds is None else [t.strip() for t in str(preds).split(",")]
        out[str(row[0])] = {t for t in toks if t}
    return out


def test_forward_and_backward_pass_formulas_name_the_linked_rows(made):
    c = made("warehouse")
    preds = sample_predecessors(c.source)
    assert all("[" not in p for ps in preds.values() for p in ps)  # a plain FS network
    succs: dict[str, set[str]] = {k: set() for k in preds}
    for k, ps in preds.items():
        for p in ps:
            succs[p].add(k)
    ws = c.wb()["Activities"]
    top, cols = activity_columns(ws)
    rows = activity_rows(ws)
    id_at = {r: i for i, r in rows.items()}
    assert set(rows) == set(preds)
    letters = {cols["Optimistic"]: "O", cols["Most likely"]: "M", cols["Pessimistic"]: "P"}

    def shape_of(formula: str) -> str:
        return CELL_REF.sub(lambda m: letters[refs(m.group(0))[0][0]], formula)

    for ident, r in rows.items():
        es = ws.cell(r, cols["Early start"]).value
        assert re.fullmatch(r"=MAX\(0(,\$?[A-Z]+\$?\d+)*\)", es), es
        got = refs(es)
        assert {col for col, _ in got} <= {cols["Early finish"]}, es
        assert {id_at[row] for _, row in got} == preds[ident], (ident, es)
        lf = ws.cell(r, cols["Late finish"]).value
        assert re.fullmatch(r"=MIN\(ProjectFinish(,\$?[A-Z]+\$?\d+)*\)", lf), lf
        got = refs(lf)
        assert {col for col, _ in got} <= {cols["Late start"]}, lf
        assert {id_at[row] for _, row in got} == succs[ident], (ident, lf)
        te = ws.cell(r, cols["Expected time TE"]).value
        assert all(row == r for _, row in refs(te)), te
        assert shape_of(te) == "=(O+4*M+P)/6", te
        ef = ws.cell(r, cols["Early finish"]).value
        assert sorted(refs(ef)) == sorted(
            [(cols["Early start"], r), (cols["Expected time TE"], r)]
        ), ef


@pytest.mark.parametrize("key", ["warehouse", "clinic", "typed", "weeks"])
def test_cached_activity_values_match_an_independent_cpm(made, key):
    """The Activities sheet's cached figures against outside references.

    TE and variance: the published PERT formulas on the estimates shown (Malcolm et al.
    1959). Early/late starts and finishes and total float: an independent CPM solved with
    networkx over the links as read (tests/support/reference_cpm.py).
    """
    c = made(key)
    ws = c.wb(data_only=True)["Activities"]
    top, cols = activity_columns(ws)
    rows = activity_rows(ws)
    ids = list(rows)
    index = {ident: i for i, ident in enumerate(ids)}
    value = lambda ident, head: ws.cell(rows[ident], cols[head]).value  # noqa: E731
    te = np.array([value(i, "Expected time TE") for i in ids], dtype=float)
    for ident in ids:
        o, m, p = (value(ident, h) for h in ("Optimistic", "Most likely", "Pessimistic"))
        assert math.isclose(
            value(ident, "Expected time TE"), (o + 4 * m + p) / 6, rel_tol=1e-12, abs_tol=1e-12
        ), ident
        assert math.isclose(
            value(ident, "Variance"), ((p - o) / 6) ** 2, rel_tol=1e-12, abs_tol=1e-12
        ), ident
    links = c.data["links"]  # the links as read from the input (IDs, type, lag)
    es, ls, finish = reference_cpm(
        len(ids),
        [index[lk["from"]] for lk in links],
        [index[lk["to"]] for lk in links],
        [LINK_CODES[lk["type"]] for lk in links],
        [lk["lag"] for lk in links],
        te,
    )
    close = lambda a, b: math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)  # noqa: E731
    for i, ident in enumerate(ids):
        assert close(value(ident, "Early start"), es[i]), (ident, "ES")
        assert close(value(ident, "Early finish"), es[i] + te[i]), (ident, "EF")
        assert close(value(ident, "Late start"), ls[i]), (ident, "LS")
        assert close(value(ident, "Late finish"), ls[i] + te[i]), (ident, "LF")
        assert close(value(ident, "Total float"), ls[i] - es[i]), (ident, "TF")
        tol = 1e-9 * max(1.0, abs(finish))  # critical = float within 1e-9 relative
        assert value(ident, "Critical") == ("Yes" if ls[i] - es[i] <= tol else "No"), ident


# --------------------------------------------------------------------------- charts
C = "{http://schemas.openxmlformats.org/drawingml/2006/chart}"
A = "{http://schemas.openxmlformats.org/drawingml/2006/main}"
R = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"
PKG = "{http://schemas.openxmlformats.org/package/2006/relationships}"
MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"


def _rels(z: zipfile.ZipFile, part: str) -> dict[str, str]:
    folder, name = part.rsplit("/", 1)
    rels = f"{folder}/_rels/{name}.rels"
    if rels not in z.namelist():
        return {}
    out = {}
    for rel in ET.fromstring(z.read(rels)).iter(PKG + "Relationship"):
        target = rel.get("Target")
        parts = (folder + "/" + target).split("/")
        norm_parts: list[str] = []
        for p in parts:
            if p == "..":
                norm_parts.pop()
            else:
                norm_parts.append(p)
        out[rel.get("Id")] = "/".join(norm_parts)
    return out


def charts_by_sheet(xlsx: Path) -> dict[str, list[dict]]:
    """Sheet name -> its charts (kinds, bar direction, grouping, title, data ranges)."""
    out: dict[str, list[dict]] = {}
    with zipfile.ZipFile(xlsx) as z:
        book = ET.fromstring(z.read("xl/workbook.xml"))
        book_rels = _rels(z, "xl/workbook.xml")
        for sheet in book.iter(MAIN + "sheet"):
            part = book_rels[sheet.get(R + "id")]
            for drawing in _rels(z, part).values():
                if "/drawings/" not in drawing:
                    continue
                for chart in _rels(z, drawing).values():
                    root = ET.fromstring(z.read(chart))
                    plot = root.find(f"{C}chart/{C}plotArea")
                    kinds = [e.tag[len(C) :] for e in plot if e.tag.endswith("Chart")]
                    title = root.find(f"{C}chart/{C}title")
                    text = "".join(t.text or "" for t in title.iter(A + "t")) if title else ""
                    out.setdefault(sheet.get("name"), []).append(
                        {
                            "part": chart,
                            "kinds": kinds,
                            "title": text,
                            "bar_dir": [e.get("val") for e in plot.iter(C + "barDir")],
                            "grouping": [e.get("val") for e in plot.iter(C + "grouping")],
                            "values": [
                                f.text
                                for tag in ("val", "yVal")
                                for v in plot.iter(C + tag)
                                for f in v.iter(C + "f")
                            ],
                            "series": {
                                _series_name(ser): [
                                    f.text
                                    for tag in ("val", "yVal")
                                    for v in ser.iter(C + tag)
                                    for f in v.iter(C + "f")
                                ]
                                for ser in plot.iter(C + "ser")
                            },
                        }
                    )
    return out


def _series_name(ser) -> str:
    tx = ser.find(C + "tx")
    return "" if tx is None else "".join(e.text or "" for e in tx.iter(C + "v"))


def range_numbers(wb, ref: str) -> list[object]:
    sheet, area = ref.rsplit("!", 1)
    sheet = sheet.strip("'").replace("''", "'")
    lo_c, lo_r, hi_c, hi_r = range_boundaries(area.replace("$", ""))
    ws = wb[sheet]
    return [ws.cell(r, col).value for r in range(lo_r, hi_r + 1) for col in range(lo_c, hi_c + 1)]


def test_charts_present_with_data(made):
    c = made("clinic")
    with zipfile.ZipFile(c.xlsx) as z:
        parts = [n for n in z.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)]
    found = charts_by_sheet(c.xlsx)
    assert sorted(ch["part"] for chs in found.values() for ch in chs) == sorted(parts)
    timeline = found["Timeline"]
    assert any(ch["bar_dir"] == ["bar"] and "stacked" in ch["grouping"] for ch in timeline)
    assert any("scatterChart" in ch["kinds"] for ch in found["Probability"])
    sim = found["Simulation"]
    histogram = [ch for ch in sim if "col" in ch["bar_dir"]]
    assert histogram and "simulated finish" in histogram[0]["title"].lower()
    bars = [ch["title"].lower() for ch in sim if ch["bar_dir"] == ["bar"]]
    assert any("sensitivity" in t for t in bars) and any("criticality" in t for t in bars)
    assert len(parts) == 5
    cached = c.wb(data_only=True)
    for chs in found.values():
        for ch in chs:
            assert ch["values"], ch
            for ref in ch["values"]:
                vals = range_numbers(cached, ref)
                # numbers; a date cell (the timeline's start dates) is a serial number too,
                # which openpyxl reads as a datetime
                assert vals and all(isinstance(v, (int, float, dt.datetime)) for v in vals), (
                    ch["title"],
                    ref,
                )
    # the histogram's counts add up to the iterations
    counts = range_numbers(cached, histogram[0]["series"]["Iterations"][0])
    assert sum(counts) == c.data["simulation"]["iterations"] == ITERATIONS


def test_without_simulation_only_timeline_and_probability_charts(made):
    c = made("warehouse-nosim")
    found = charts_by_sheet(c.xlsx)
    assert sorted(found) == ["Probability", "Timeline"]
    assert "Simulation" not in c.wb().sheetnames
    assert c.data["simulation"] is None


# --------------------------------------------------------------------------- determinism
class _AnyDatetime(type):
    def __instancecheck__(cls, obj):
        return isinstance(obj, dt.datetime)


class _LaterClock(dt.datetime, metaclass=_AnyDatetime):
    """Stands in for ``datetime`` in xlsxwriter.core: "now" is years away from today."""

    @classmethod
    def now(cls, tz=None):
        return dt.datetime(2031, 5, 17, 13, 45, 9, tzinfo=tz)


def zip_members(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


def test_same_seed_same_numbers_and_same_workbook(tmp_path, monkeypatch):
    import xlsxwriter.core

    source = typed_input(tmp_path / "plan.xlsx")
    first = run_convert(source, tmp_path / "one")
    # A second run with the clock moved: the document date must not come from "now".
    monkeypatch.setattr(xlsxwriter.core, "datetime", _LaterClock)
    second = run_convert(source, tmp_path / "two")
    assert first.data == second.data
    a, b = zip_members(first.xlsx), zip_members(second.xlsx)
    assert list(a) == list(b)
    differ = [n for n in a if a[n] != b[n]]
    assert differ == []


def test_different_seed_different_simulated_figures(tmp_path):
    source = typed_input(tmp_path / "plan.xlsx")
    one = run_convert(source, tmp_path / "one", seed=1)
    two = run_convert(source, tmp_path / "two", seed=2)
    s1, s2 = one.data["simulation"], two.data["simulation"]
    assert (s1["seed"], s2["seed"]) == (1, 2)
    assert s1["mean"] != s2["mean"] and s1["sd"] != s2["sd"]
    assert s1["percentiles"] != s2["percentiles"]
    assert [a["sensitivity"] for a in one.data["activities"]] != [
        a["sensitivity"] for a in two.data["activities"]
    ]
    # the analytic side does not depend on the seed
    assert one.data["project"] == two.data["project"]
    assert one.data["paths"] == two.data["paths"]


# --------------------------------------------------------------------------- big schedules
def test_large_schedule_timeline_charts_only_some_and_says_so(made):
    c = made("big")
    assert c.data["activity_count"] == BIG_N
    ws = c.wb()["Timeline"]
    note = ws["A2"].value
    charted = [
        ws.cell(r, 1).value for r in range(5, ws.max_row + 1) if ws.cell(r, 1).value is not None
    ]
    cached = c.wb(data_only=True)["Timeline"]
    charted_ids = [cached.cell(r, 1).value for r in range(5, 5 + len(charted))]
    assert 0 < len(charted) < BIG_N
    assert f"{BIG_N}" in note and f"only the {len(charted)}" in note, note
    # every activity on a listed path is charted; the others charted have the least float
    on_paths = {i for p in c.data["paths"] for i in p["activities"]}
    assert on_paths <= set(charted_ids)
    floats = {a["id"]: a["total_float"] for a in c.data["activities"]}
    left_out = [floats[i] for i in floats if i not in set(charted_ids)]
    extra = [floats[i] for i in charted_ids if i not in on_paths]
    assert left_out and (not extra or max(extra) <= min(left_out) + 1e-9)
    # the chart plots exactly the rows of the table
    chart = charts_by_sheet(c.xlsx)["Timeline"][0]
    for ref in chart["values"]:
        _, lo_r, _, hi_r = range_boundaries(ref.rsplit("!", 1)[1].replace("$", ""))
        assert hi_r - lo_r + 1 == len(charted), ref


def test_small_schedule_timeline_charts_every_activity(made):
    c = made("clinic")
    cached = c.wb(data_only=True)["Timeline"]
    ids = [
        cached.cell(r, 1).value
        for r in range(5, cached.max_row + 1)
        if cached.cell(r, 1).value is not None
    ]
    assert sorted(ids) == sorted(a["id"] for a in c.data["activities"])
    assert "only the" not in (cached["A2"].value or "")


# --------------------------------------------------------------------------- simulation sheet
@pytest.mark.parametrize("key", ["warehouse-due45", "clinic"])
def test_simulation_sheet_states_the_run_and_merge_bias_formula(made, key):
    c = made(key)
    ws, cached = c.wb()["Simulation"], c.wb(data_only=True)["Simulation"]
    sim = c.data["simulation"]
    assert label_cell(ws, "Seed", start=False).value == SEED == sim["seed"]
    assert label_cell(ws, "Iterations", start=False).value == ITERATIONS == sim["iterations"]
    assert label_cell(ws, "Distribution", start=False).value == sim["distribution"] == "pert"
    command = label_cell(ws, "To reproduce").value
    words = shlex.split(command)
    assert words[:2] == ["pertbook", "convert"] and words[2] == c.source.name
    assert f"--seed {SEED}" in command and f"--iterations {ITERATIONS}" in command
    bias = label_cell(ws, "Merge bias")
    m = re.fullmatch(r"=B(\d+)-ProjectMean", bias.value)
    assert m, bias.value
    mean_row = int(m.group(1))
    assert ws.cell(mean_row, 1).value.startswith("Mean")
    assert math.isclose(cached.cell(mean_row, 2).value, sim["mean"], rel_tol=1e-12)
    got = cached[bias.coordinate].value
    assert math.isclose(got, sim["merge_bias"], rel_tol=1e-9, abs_tol=1e-12)
    assert math.isclose(
        got, sim["mean"] - c.data["project"]["expected_duration"], rel_tol=1e-9, abs_tol=1e-12
    )


def _rerun_reproduce_command(c: Converted, outdir: Path) -> dict:
    from converter import cli

    words = shlex.split(label_cell(c.wb()["Simulation"], "To reproduce").value)
    args = ["convert", str(c.source), *words[3:], "--json", "--outdir", str(outdir)]
    assert cli.main(args) == 0
    return json.loads((outdir / f"{c.source.stem}.analysis.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize("key", ["warehouse-due45", "typed"])
def test_reproduce_command_reproduces_the_simulation(made, tmp_path, capsys, key):
    c = made(key)
    again = _rerun_reproduce_command(c, tmp_path)
    assert again["simulation"] == c.data["simulation"]


@pytest.mark.parametrize(
    "sample, options",
    [
        ("clinic-it-rollout.xlsx", {"due": 80.0}),  # calendar schedule, due as a duration
        ("clinic-it-rollout.xlsx", {"due": "2027-06-30"}),  # calendar schedule, due as a date
        ("boiler-shutdown.csv", {"start_date": "2027-05-03", "due": "2027-05-20"}),
        ("warehouse-fitout.xlsx", {"due": 45.123456}),  # no calendar: digits lost
    ],
    ids=["due-number-calendar", "due-date", "csv-start-and-due", "due-digits"],
)
def test_reproduce_command_keeps_command_line_settings(tmp_path, capsys, sample, options):
    c = run_convert(SAMPLES / sample, tmp_path / "one", **options)
    again = _rerun_reproduce_command(c, tmp_path / "two")
    assert again["project"]["due"] == c.data["project"]["due"]
    assert again["simulation"] == c.data["simulation"]


# --------------------------------------------------------------------------- paths
@pytest.mark.libreoffice
@pytest.mark.parametrize("key", ["clinic", "typed", "riskier"])
def test_path_lengths_recalculate_to_the_json_path_means(made, recalculated, key):
    c = made(key)
    copy, report = recalculated(key)
    assert list(report) == []
    ws = c.wb()["Paths"]
    lo = openpyxl.load_workbook(copy, data_only=True)["Paths"]
    paths = c.data["paths"]
    step_rows: dict[int, list[int]] = {}
    first_step = None
    for r in range(1, ws.max_row + 1):
        if ws.cell(r, 1).value == "Path" and ws.cell(r, 2).value == "Step":
            first_step = r + 1
    assert first_step
    for r in range(first_step, ws.max_row + 1):
        n = ws.cell(r, 1).value
        if isinstance(n, (int, float)):
            step_rows.setdefault(int(n), []).append(r)
    for k, path in enumerate(paths):
        row = 5 + k
        f = ws.cell(row, 2).value
        assert f.startswith("=SUMPRODUCT("), f
        used = {r for _, r in refs(f)}
        rows = step_rows[k + 1]
        assert used == {rows[0], rows[-1]}, (f, rows)
        assert [ws.cell(r, 3).value for r in rows] == path["activities"]
        assert math.isclose(lo.cell(row, 2).value, path["mean"], rel_tol=1e-9)
        assert math.isclose(lo.cell(row, 3).value, path["variance"], rel_tol=1e-9, abs_tol=1e-12)


def test_shorter_but_wider_path_is_flagged_riskier(made):
    c = made("riskier")
    paths = c.data["paths"]
    assert [p["activities"] for p in paths] == [["S", "A", "E"], ["S", "B", "E"]]
    te_a, te_b = (10 + 44 + 12) / 6, (1 + 32 + 30) / 6  # (O + 4M + P) / 6
    sd_a, sd_b = (12 - 10) / 6, (30 - 1) / 6
    assert math.isclose(paths[0]["mean"], 2 + te_a) and math.isclose(paths[1]["mean"], 2 + te_b)
    p_crit = norm.cdf((RISKY_DUE - 2 - te_a) / sd_a)  # scipy.stats.norm
    p_other = norm.cdf((RISKY_DUE - 2 - te_b) / sd_b)
    assert paths[1]["mean"] < paths[0]["mean"] < RISKY_DUE and p_other < p_crit
    assert math.isclose(paths[0]["p_meet_due"], p_crit, rel_tol=1e-9)
    assert math.isclose(paths[1]["p_meet_due"], p_other, rel_tol=1e-9)
    ws = c.wb()["Paths"]
    assert ws["G5"].value == "critical path"
    assert ws["G6"].value.startswith("YES")
    summary = c.wb()["Summary"]
    flagged = label_cell(summary, "Paths riskier than the critical path")
    assert flagged.value == "2"  # column B: the path numbers
    words = summary.cell(flagged.row, 4).value  # column D: the paths in plain words
    assert re.findall(r"path (\d+)", words) == ["2"], words
    assert "S > B > E" in words
    assert "riskier" in summary.cell(flagged.row, 1).value.lower()


def test_no_path_flagged_when_the_critical_path_is_also_the_riskiest(made):
    # warehouse with --due 45: is any listed path less likely than the critical one?
    # Worked from the JSON with scipy: flagged iff Phi((due - mean_k) / sd_k) < Phi(z).
    c = made("warehouse-due45")
    due = c.data["project"]["due"]
    p_crit = norm.cdf((due - c.data["paths"][0]["mean"]) / c.data["paths"][0]["sd"])
    want = [
        k + 1
        for k, p in enumerate(c.data["paths"])
        if k and p["sd"] > 0 and norm.cdf((due - p["mean"]) / p["sd"]) < p_crit - 1e-12
    ]
    summary = c.wb()["Summary"]
    labels = [row[0].value for row in summary.iter_rows(min_col=1, max_col=1)]
    if want:
        cell = label_cell(summary, "Paths riskier than the critical path")
        assert [int(k) for k in re.findall(r"path (\d+)", cell.value)] == want[:5], cell.value
    else:
        assert "Paths riskier than the critical path" not in labels


def test_generated_schedules_cover_what_they_claim(made):
    # guards the recalculation cases above: they must exercise what their names say
    typed = made("typed").data
    kinds = {lk["type"] for lk in typed["links"]}
    lags = [lk["lag"] for lk in typed["links"]]
    assert kinds == {"FS", "SS", "FF", "SF"}
    assert any(g > 0 for g in lags) and any(g < 0 for g in lags)
    assert D.fromisoformat(typed["calendar"]["start"]).weekday() == 5  # Saturday
    assert typed["calendar"]["holidays"] == [h.isoformat() for h in TYPED_HOLIDAYS]
    assert {t["activity"] for t in typed["targets"]} == {"T05", "T07"}
    assert any(t["target_date"] == "2026-09-04" for t in typed["targets"])
    assert typed["project"]["due_date"] == "2026-10-09"
    assert made("weeks").data["calendar"]["unit"] == "weeks"
    assert made("weeks").data["calendar"]["working_days"] == [0, 1, 2, 3, 4, 5]
    assert made("calendar-days").data["calendar"]["unit"] == "calendar days"


def test_edge_calendar_and_zero_spread_by_hand(made):
    # 2026-04-01 (a Wednesday) is a holiday, so work starts on Thursday 2026-04-02 (read off
    # a calendar by hand); leads never start an activity before the project start.
    edge = made("edge").data
    by_id = {a["id"]: a for a in edge["activities"]}
    assert by_id["M0"]["early_start_date"] == "2026-04-02"
    assert all(a["es"] >= 0 for a in edge["activities"])
    assert edge["project"]["due"] < edge["project"]["expected_duration"]  # z < 0
    assert edge["project"]["z"] < 0
    # zero spread: z undefined, the chance is 1 or 0 (due on or after the finish, or not)
    zero = made("zero-spread")
    project = zero.data["project"]
    assert project["sd"] == 0 and project["z"] is None
    assert project["p_meet_due"] == (1.0 if project["due"] >= project["expected_duration"] else 0.0)
    summary = zero.wb(data_only=True)["Summary"]
    assert label_cell(summary, "z =").value == "n/a"


@pytest.mark.libreoffice
def test_very_wide_merge_uses_a_conditional_formula_that_recalculates(tmp_path, libreoffice):
    # An activity with 900 typed predecessors: MAX over 900 link cells would pass Excel's
    # 8,192-character formula limit (Excel specifications and limits, from memory), so the
    # early start falls back to MAXIFS over the Links table; LibreOffice must agree.
    from converter.api import ConvertOptions, convert

    n = 900
    rows = [["ID", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]]
    rows += [[f"P{i}", None, 1, 2 + i % 7, 9] for i in range(n)]
    # an ID with spreadsheet wildcards, and a decoy the wildcards would match: the criterion
    # must match the ID exactly
    rows.append(["FAN*IN?", ", ".join(f"P{i}[SS+1]" for i in range(n)), 1, 1, 2])
    rows.append(["FANxINy", "P3[FS+40]", 1, 1, 2])
    rows.append(["OUT", "FAN*IN?, FANxINy", 1, 2, 3])
    src = write_xlsx(tmp_path / "fan.xlsx", {"Activities": rows})
    result = convert(src, ConvertOptions(iterations=200), outdir=tmp_path)
    assert result.ok
    ws = openpyxl.load_workbook(result.workbook)["Activities"]
    es = ws.cell(5 + n, 9).value  # FAN*IN?'s early start (row 5 + 900, column I)
    assert es.startswith("=MAX(0,_xlfn.MAXIFS(Links!"), es
    assert all(
        len(c.value) <= 8192
        for row in ws.iter_rows()
        for c in row
        if isinstance(c.value, str) and c.value.startswith("=")
    )
    copy = libreoffice.recalculate(result.workbook, tmp_path / "re")
    report = compare_recalculated(result.workbook, copy)
    assert report.compared > 5000
    assert not report, report[:5]
