"""Comparing two runs (``pertbook compare``, ``convert --baseline``): what moved.

What is checked against what:
- a hand-built network (invented here) with one estimate changed: TE = (O + 4M + P) / 6 and
  variance ((P - O) / 6)^2 (Malcolm, Roseboom, Clark & Fazar 1959) and the longest path
  (Kelley & Walker 1959), worked by hand in the comments;
- the warehouse sample with one estimate changed: the finish's move against the
  independent networkx CPM of tests/support/reference_cpm.py;
- the round trip through the workbook: the comparison read back from the two
  .analysis.xlsx files must equal the one from the two .analysis.json files;
- LibreOffice recalculating the Changes sheet's formulas reproduces their cached values
  (tests/support/recalc.py);
- exit codes 0 / 2 and "never overwrite a file" as the issue and the README ask.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from helpers import REPO, run_cli, sha256, write_csv
from recalc import compare_recalculated
from reference_cpm import LINK_CODES, reference_cpm

from converter.api import ConvertOptions, convert
from converter.cli import main
from converter.compare import compare_runs
from converter.compare.document import changes_document
from converter.compare.readback import read_run
from converter.comparison import compare

HEAD = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
#: A invented four-activity network: A -> B -> D and A -> C -> D.
#: TE: A (2+16+6)/6 = 4, B (3+20+13)/6 = 6, C (2+12+4)/6 = 3, D (1+8+3)/6 = 2;
#: critical path A-B-D, expected finish 4 + 6 + 2 = 12.
ROWS = [
    ["A", "Survey", "", 2, 4, 6],
    ["B", "Foundations", "A", 3, 5, 13],
    ["C", "Order steel", "A", 2, 3, 4],
    ["D", "Erect", "B, C", 1, 2, 3],
]


def _plan(folder: Path, name: str, changes: dict | None = None) -> Path:
    rows = [list(r) for r in ROWS]
    for ident, estimates in (changes or {}).items():  # ID -> new (O, M, P)
        next(r for r in rows if r[0] == ident)[3:6] = estimates
    folder.mkdir(parents=True, exist_ok=True)
    return write_csv(folder / f"{name}.csv", [HEAD, *rows])


def _convert(plan: Path, outdir: Path, **options) -> tuple[Path, Path]:
    opts = {"json": True, "iterations": 2000, "start_date": "2027-03-01", **options}
    result = convert(plan, ConvertOptions(**opts), outdir=outdir)
    assert result.ok, result.problems
    return result.workbook, result.json_path


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Old and new runs of the hand network; in the new one B's pessimistic 13 -> 25."""
    root = tmp_path_factory.mktemp("runs")
    old = _convert(_plan(root / "in", "may"), root / "may")
    new = _convert(_plan(root / "in2", "june", {"B": (3, 5, 25)}), root / "june")
    return {"old": old, "new": new, "root": root}


def _doc(old: Path, new: Path) -> dict:
    return changes_document(compare_runs(read_run(old), read_run(new)))


def test_one_estimate_changed_moves_the_finish_by_the_hand_worked_amount(runs):
    doc = _doc(runs["old"][1], runs["new"][1])
    # exactly B is listed as changed, with its old and new O/M/P
    assert [e["id"] for e in doc["estimates_changed"]] == ["B"]
    e = doc["estimates_changed"][0]
    assert e["old"] == {"optimistic": 3, "most_likely": 5, "pessimistic": 13}
    assert e["new"] == {"optimistic": 3, "most_likely": 5, "pessimistic": 25}
    # by hand: TE of B (3 + 20 + 25) / 6 = 8, was 6: the critical path A-B-D ends at 14
    assert e["te_change"] == pytest.approx(2.0)
    finish = {f["figure"]: f for f in doc["finish"]}
    assert finish["cpm_finish"]["old"] == pytest.approx(12.0)
    assert finish["cpm_finish"]["new"] == pytest.approx(14.0)
    assert finish["cpm_finish"]["change"] == pytest.approx(2.0)
    # by hand: variance on A-B-D = ((6-2)^2 + (P_B-3)^2 + (3-1)^2) / 36
    sd_old, sd_new = math.sqrt(16 + 100 + 4) / 6, math.sqrt(16 + 484 + 4) / 6
    assert finish["pert_sd"]["change"] == pytest.approx(sd_new - sd_old)
    # by hand: working days Mon-Fri from Monday 2027-03-01: day 12 is Tue 16 March,
    # day 14 Thu 18 March, two working days later
    assert finish["cpm_finish"]["old_date"] == "2027-03-16"
    assert finish["cpm_finish"]["new_date"] == "2027-03-18"
    assert finish["cpm_finish"]["days_moved"] == 2
    assert doc["added"] == doc["removed"] == []
    assert doc["critical_path"] == {"joined": [], "left": []}
    assert doc["settings_differ"] == []
    assert "activity B's pessimistic estimate rose from 13 to 25" in doc["account"]


def test_joined_and_left_the_critical_path(tmp_path):
    # C (5, 8, 11): TE (5 + 32 + 11) / 6 = 8 > B's 6, so A-C-D (14) becomes critical:
    # C joins, B leaves (common practice: critical = zero total float)
    old = _convert(_plan(tmp_path / "i1", "p"), tmp_path / "o1", simulate=False)
    new = _convert(_plan(tmp_path / "i2", "p", {"C": (5, 8, 11)}), tmp_path / "o2", simulate=False)
    doc = _doc(old[1], new[1])
    assert [m["id"] for m in doc["critical_path"]["joined"]] == ["C"]
    assert [m["id"] for m in doc["critical_path"]["left"]] == ["B"]
    # B's total float: 0 before; after, 14 - (4 + 6 + 2) = 2
    left = doc["critical_path"]["left"][0]
    assert (left["old"], left["new"]) == (pytest.approx(0.0), pytest.approx(2.0))
    assert "C joined the critical path" in doc["account"]
    assert "B left the critical path" in doc["account"]


def test_added_and_removed_by_id(tmp_path):
    old = _convert(_plan(tmp_path / "i1", "p"), tmp_path / "o1", simulate=False)
    plan = tmp_path / "i2" / "p.csv"
    plan.parent.mkdir()
    kept = [[*r[:2], "B" if r[0] == "D" else r[2], *r[3:]] for r in ROWS if r[0] != "C"]
    rows = [HEAD, *kept, ["E", "Handover", "D", 1, 1, 2]]
    write_csv(plan, rows)
    new = _convert(plan, tmp_path / "o2", simulate=False)
    doc = _doc(old[1], new[1])
    assert doc["added"] == [{"id": "E", "name": "Handover"}]
    assert doc["removed"] == [{"id": "C", "name": "Order steel"}]
    assert doc["estimates_changed"] == []


def test_settings_that_differ_are_named(tmp_path):
    plan = _plan(tmp_path / "in", "p")
    old = _convert(plan, tmp_path / "a", seed=1, iterations=1000)
    new = _convert(plan, tmp_path / "b", seed=2, iterations=1500)
    doc = _doc(old[1], new[1])
    assert doc["settings_differ"] == ["Iterations", "Seed"]
    assert doc["estimates_changed"] == []
    assert "iterations 1000 -> 1500; seed 1 -> 2" in doc["account"]
    assert "A different iterations and seed alone moves the simulated figures" in doc["account"]


def _same(a, b, path="") -> list[str]:
    """Differences between two JSON values, numbers compared to 1e-12 relative (the
    workbook stores 15 to 17 significant digits)."""
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            return [f"{path}: keys {sorted(a)} != {sorted(b)}"]
        return [d for k in a for d in _same(a[k], b[k], f"{path}.{k}")]
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return [f"{path}: {len(a)} items != {len(b)}"]
        return [d for i, (x, y) in enumerate(zip(a, b)) for d in _same(x, y, f"{path}[{i}]")]
    if isinstance(a, float) or isinstance(b, float):
        ok = a is not None and b is not None and math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-12)
        return [] if ok else [f"{path}: {a!r} != {b!r}"]
    return [] if a == b else [f"{path}: {a!r} != {b!r}"]


def test_round_trip_through_the_workbook_gives_the_same_comparison(runs):
    by_json = _doc(runs["old"][1], runs["new"][1])
    by_xlsx = _doc(runs["old"][0], runs["new"][0])
    for doc in (by_json, by_xlsx):
        doc.pop("old"), doc.pop("new")  # the files read differ, by design
        # the JSON records every setting, the workbook's Settings used sheet the usual ones
        doc["settings"] = [s for s in doc["settings"] if s["setting"] != "Hours per day"]
    assert not _same(by_json, by_xlsx)
    assert by_json["estimates_changed"]  # something was compared


def test_sample_with_one_estimate_changed_against_an_independent_cpm(tmp_path):
    sample = REPO / "samples" / "warehouse-fitout.xlsx"
    old_xlsx, old_json = _convert(sample, tmp_path / "old", simulate=False)
    old = json.loads(old_json.read_text())
    target = old["project"]["critical_path"][1]
    changed = tmp_path / "warehouse-fitout.xlsx"
    wb = openpyxl.load_workbook(sample)
    ws = wb["Activities"]
    heads = [c.value for c in ws[1]]
    head_row = 1
    while "Pessimistic" not in heads:
        head_row += 1
        heads = [c.value for c in ws[head_row]]
    col = heads.index("Pessimistic") + 1
    row = next(r for r in range(head_row + 1, ws.max_row + 1) if str(ws.cell(r, 1).value) == target)
    before = float(ws.cell(row, col).value)
    ws.cell(row, col).value = before + 12  # TE rises by 12 / 6 = 2
    wb.save(changed)
    _, new_json = _convert(changed, tmp_path / "new", simulate=False)
    doc = _doc(old_json, new_json)
    assert [e["id"] for e in doc["estimates_changed"]] == [target]
    assert doc["estimates_changed"][0]["new"]["pessimistic"] == before + 12

    def finish(document: dict) -> float:  # networkx longest path on TE (reference_cpm.py)
        acts = document["activities"]
        index = {a["id"]: i for i, a in enumerate(acts)}
        d = np.array(
            [(a["optimistic"] + 4 * a["most_likely"] + a["pessimistic"]) / 6 for a in acts]
        )
        links = document["links"]
        return reference_cpm(
            len(acts),
            [index[k["from"]] for k in links],
            [index[k["to"]] for k in links],
            [LINK_CODES[k["type"]] for k in links],
            [k["lag"] for k in links],
            d,
        )[2]

    move = finish(json.loads(new_json.read_text())) - finish(old)
    assert move == pytest.approx(2.0)  # on the critical path, so the finish moves by all of it
    fig = next(f for f in doc["finish"] if f["figure"] == "cpm_finish")
    assert fig["change"] == pytest.approx(move)


# --------------------------------------------------------------------------- commands
def test_cli_compare_writes_beside_new_and_never_overwrites(runs):
    old_json, new_json = runs["old"][1], runs["new"][1]
    before = {p: sha256(p) for p in (old_json, new_json)}
    first = run_cli("compare", old_json, new_json, "--json")
    assert first.returncode == 0, first.stderr
    assert "activity B's pessimistic estimate rose from 13 to 25" in first.stdout
    folder = new_json.parent
    assert (folder / "june.changes.xlsx").is_file() and (folder / "june.changes.json").is_file()
    mark = sha256(folder / "june.changes.xlsx")
    second = run_cli("compare", old_json, new_json)
    assert second.returncode == 0, second.stderr
    assert (folder / "june-2.changes.xlsx").is_file()
    assert sha256(folder / "june.changes.xlsx") == mark  # the first result is untouched
    assert {p: sha256(p) for p in (old_json, new_json)} == before  # inputs only read
    saved = json.loads((folder / "june.changes.json").read_text())
    assert saved["estimates_changed"][0]["id"] == "B"


def test_cli_compare_outdir(runs, tmp_path):
    done = run_cli("compare", runs["old"][0], runs["new"][0], "--outdir", tmp_path / "out")
    assert done.returncode == 0, done.stderr
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == ["june.changes.xlsx"]


def _bad_files(folder: Path, runs) -> dict[str, tuple[Path, str]]:
    good = json.loads(runs["old"][1].read_text())
    folder.mkdir(exist_ok=True)
    cases = {
        "missing": (folder / "gone.analysis.json", "no such file"),
        "not json": (folder / "text.analysis.json", "is not valid JSON"),
        "other program": (folder / "other.json", "lacks the pertbook_format key"),
        "version": (folder / "v99.analysis.json", "format 99"),
        "older pertbook": (folder / "old.analysis.json", "earlier pertbook"),
        "invalid run": (folder / "bad.analysis.json", "records an invalid input"),
        "folder": (folder, "not a regular file"),
        # an input schedule: no Summary sheet, no format mark
        "input workbook": (REPO / "samples" / "clinic-it-rollout.xlsx", "not an analysis workbook"),
        "pdf": (folder / "x.pdf", "a PDF document"),
        "comparison": (folder / "june.changes.json", "is a comparison"),
        "workbook version": (folder / "v99.analysis.xlsx", "format 99"),
        "older workbook": (folder / "old.analysis.xlsx", "earlier pertbook"),
    }
    cases["comparison"][0].write_text(json.dumps(_doc(runs["old"][1], runs["new"][1])))
    for key, mark in (("workbook version", 99), ("older workbook", None)):
        book = openpyxl.load_workbook(runs["old"][0], data_only=True)  # cached values kept
        props = book.custom_doc_props
        for name in list(props.names):
            del props[name]
        if mark is not None:
            props.append(openpyxl.packaging.custom.IntProperty("pertbook format", mark))
        book.save(cases[key][0])
    cases["not json"][0].write_text("{this is not json", encoding="utf-8")
    cases["other program"][0].write_text('{"name": "x", "version": 3}', encoding="utf-8")
    cases["version"][0].write_text(json.dumps({**good, "pertbook_format": 99}))
    older = {k: v for k, v in good.items() if k != "pertbook_format"}
    cases["older pertbook"][0].write_text(json.dumps(older))
    cases["invalid run"][0].write_text(json.dumps({**good, "ok": False, "project": None}))
    cases["pdf"][0].write_bytes(b"%PDF-1.7\n%...")
    return cases


def test_bad_runs_exit_2_with_a_message(runs, tmp_path, capsys):
    cases = _bad_files(tmp_path / "bad", runs)
    out = tmp_path / "out"
    for name, (path, words) in cases.items():  # in this process: main() as the CLI runs it
        code = main(["compare", str(path), str(runs["new"][1]), "--outdir", str(out)])
        err = capsys.readouterr().err
        assert code == 2, (name, err)
        assert words in err, (name, err)
        assert "Traceback" not in err
    done = run_cli("compare", cases["version"][0], runs["new"][1], "--outdir", out)
    assert done.returncode == 2 and "format 99" in done.stderr  # and from the command line
    assert not (tmp_path / "out").exists()  # nothing written


def test_convert_baseline_adds_the_changes_sheet_and_key(runs, tmp_path):
    plan = _plan(tmp_path / "in", "june", {"B": (3, 5, 25)})
    done = run_cli(
        "convert",
        plan,
        "--json",
        "--iterations",
        2000,
        "--start-date",
        "2027-03-01",
        "--baseline",
        runs["old"][1],
        "--outdir",
        tmp_path / "out",
    )
    assert done.returncode == 0, done.stderr
    assert "since the baseline: The P80 finish moved" in done.stdout
    book = openpyxl.load_workbook(tmp_path / "out" / "june.analysis.xlsx")
    assert book.sheetnames[:2] == ["Summary", "Changes"]
    data = json.loads((tmp_path / "out" / "june.analysis.json").read_text())
    alone = _doc(runs["old"][1], runs["new"][1])
    for doc in (data["changes"], alone):
        doc.pop("new")  # the new run's file differs: the workbook, the JSON
    assert not _same(data["changes"], alone)  # the same comparison as `pertbook compare`


def test_convert_with_a_bad_baseline_exits_2_and_writes_nothing(runs, tmp_path):
    plan = _plan(tmp_path / "in", "june")
    bad = tmp_path / "other.json"
    bad.write_text('{"rows": []}', encoding="utf-8")
    done = run_cli(
        "convert", plan, "--no-simulation", "--baseline", bad, "--outdir", tmp_path / "out"
    )
    assert done.returncode == 2
    assert "--baseline" in done.stderr and "pertbook_format" in done.stderr
    assert not (tmp_path / "out" / "june.analysis.xlsx").exists()


def test_convert_refuses_to_replace_its_baseline(runs, tmp_path):
    shutil.copy(runs["old"][1], tmp_path / "may.analysis.json")
    mark = sha256(tmp_path / "may.analysis.json")
    plan = _plan(tmp_path, "may")
    done = run_cli(
        "convert", plan, "--json", "--no-simulation", "--baseline", tmp_path / "may.analysis.json"
    )
    assert done.returncode == 2
    assert "would be replaced" in done.stderr
    assert sha256(tmp_path / "may.analysis.json") == mark


def test_the_watcher_takes_baseline_as_a_conversion_option():
    from converter.cli import command_parsers

    assert "--baseline" in command_parsers()["watch"].format_help()


# --------------------------------------------------------------------------- LibreOffice
@pytest.mark.libreoffice
def test_libreoffice_recalculates_the_changes_sheet(runs, tmp_path, libreoffice):
    result = compare(runs["old"][1], runs["new"][1], outdir=tmp_path)
    copy = libreoffice.recalculate(result.workbook, tmp_path / "recalc")
    report = compare_recalculated(result.workbook, copy)  # LibreOffice vs cached values
    assert not report
    assert report.compared >= 20  # the changes, TE changes and days moved are formulas


@pytest.mark.libreoffice
def test_libreoffice_recalculates_a_workbook_made_with_a_baseline(runs, tmp_path, libreoffice):
    plan = _plan(tmp_path / "in", "june", {"B": (3, 5, 25)})
    options = ConvertOptions(iterations=500, start_date="2027-03-01", baseline=str(runs["old"][1]))
    result = convert(plan, options, outdir=tmp_path / "out")
    assert result.ok, result.problems
    copy = libreoffice.recalculate(result.workbook, tmp_path / "recalc")
    report = compare_recalculated(result.workbook, copy)  # LibreOffice vs cached values
    assert not report
    book = openpyxl.load_workbook(copy, data_only=True)
    # the days moved, recalculated by LibreOffice's NETWORKDAYS.INTL: by hand, the CPM
    # finish moves from Tue 16 to Thu 18 March 2027, two working days
    sheet = book["Changes"]
    row = next(r for r in sheet.iter_rows(values_only=True) if r[0] and "CPM on TE" in r[0])
    assert row[7] == 2


def test_change_cells_are_formulas_on_the_two_columns(runs, tmp_path):
    """Common practice for an auditable sheet: each change is new - old on the cells beside."""
    result = compare(runs["old"][1], runs["new"][1], outdir=tmp_path)
    sheet = openpyxl.load_workbook(result.workbook)["Changes"]
    finish = [
        r for r in sheet.iter_rows() if isinstance(r[0].value, str) and "finish" in r[0].value
    ]
    assert finish
    for row in finish:
        if isinstance(row[2].value, (int, float)) and isinstance(row[3].value, (int, float)):
            n = row[0].row
            assert row[4].value == f"=D{n}-C{n}"
    te = next(r for r in sheet.iter_rows() if r[0].value == "B" and r[8].value)
    n = te[0].row
    assert te[8].value == f"=(F{n}+4*G{n}+H{n})/6-(C{n}+4*D{n}+E{n})/6"


def test_named_risks_and_status_are_read_when_present(runs, tmp_path):
    """Keys other parts of pertbook add ("risks", "status", each activity's "state") are
    used when a run has them and not required (the hand network's runs have none)."""
    old = json.loads(runs["old"][1].read_text())
    new = json.loads(runs["new"][1].read_text())
    risk = {
        "id": "R1",
        "description": "Late steel",
        "probability": 0.3,
        "activities": ["C"],
        "occurred": 0.3,
        "mean_delay_when_occurred": 4.0,
        "sensitivity": 0.2,
        "delta_mean": 1.0,
        "delta_p50": 0.5,
        "delta_p80": 2.5,
    }
    old["risks"] = [risk]
    new["risks"] = [
        {**risk, "probability": 0.5, "delta_p80": 4.0},
        {**risk, "id": "R2", "description": "Rain", "delta_p80": 1.0},
    ]
    new["status"] = {
        "status_date": "2027-03-08",
        "status_offset": 5.0,
        "done_share": 0.4,
        "finished": 1,
        "in_progress": 1,
        "not_started": 2,
    }
    for act in new["activities"]:
        act["state"] = "finished" if act["id"] == "A" else "not started"
    (tmp_path / "old.analysis.json").write_text(json.dumps(old))
    (tmp_path / "new.analysis.json").write_text(json.dumps(new))
    result = compare(
        tmp_path / "old.analysis.json",
        tmp_path / "new.analysis.json",
        outdir=tmp_path,
        write_json=True,
    )
    assert result.ok, result.problems
    doc = json.loads(result.json_path.read_text())
    risks = doc["named_risks"]
    assert [r["id"] for r in risks] == ["R1", "R2"]  # by their effect on the P80 finish
    assert risks[0]["old"]["delta_p80"] == 2.5 and risks[0]["new"]["delta_p80"] == 4.0
    assert risks[1]["old"] is None
    assert "Status date of the new run: 2027-03-08" in doc["account"]
    sheet = openpyxl.load_workbook(result.workbook)["Changes"]
    r1 = next(r for r in sheet.iter_rows() if r[0].value == "R1")
    assert r1[6].value == f"=F{r1[0].row}-E{r1[0].row}"  # change of the P80 delay
