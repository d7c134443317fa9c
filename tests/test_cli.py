"""The command line (``python -m converter`` / ``converter.cli.main``) and the JSON summary.

What is checked against what:
- exit codes 0 / 1 / 2, output names and "the input is never touched" come from the
  project's issue; input bytes are compared with hashlib's SHA-256 before and after;
- the produced workbook is opened with openpyxl (an independent reader) and its zip parts
  listed with zipfile, to check that user text stays text and nothing external is linked;
- JSON figures for the invented network in ``helpers.GOOD_ROWS`` are worked by hand from
  PERT's TE = (O + 4M + P) / 6 and variance ((P - O) / 6)^2 (Malcolm, Roseboom, Clark &
  Fazar 1959) and the CPM forward/backward pass (Kelley & Walker 1959); the probability and
  confidence durations are taken from scipy.stats.norm.
The simulation is switched off (``--no-simulation``) except in the one test that needs it.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import os
import re
import zipfile

import numpy as np
import openpyxl
import pytest
from helpers import (
    BAD_INPUTS,
    GOOD_ROWS,
    HEADER,
    build_bad,
    good_xlsx,
    run_cli,
    sha256,
    write_csv,
    write_xlsx,
)
from scipy.stats import norm

import converter
from converter import cli, terminal
from converter.api import ConvertOptions, PertbookError, convert
from converter.options import options_from_args


def main(capsys, *args):
    """Run the CLI in-process; returns (exit code, stdout, stderr)."""
    code = cli.main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def outputs(folder):
    return sorted(p.name for p in folder.iterdir() if ".analysis." in p.name)


# --------------------------------------------------------------------------- help, version
@pytest.mark.parametrize("args", [["--help"], ["convert", "--help"], ["check", "--help"]])
def test_help_exits_zero(args):
    r = run_cli(*args)
    assert r.returncode == 0, r.stderr
    assert "usage:" in r.stdout
    assert "Traceback" not in r.stderr


def test_version_exits_zero():
    r = run_cli("--version")
    assert r.returncode == 0
    assert converter.__version__ in r.stdout


def test_convert_help_ends_with_an_example():
    r = run_cli("convert", "--help")
    assert "example:" in r.stdout and "pertbook convert" in r.stdout


# --------------------------------------------------------------------------- invalid input
@pytest.mark.parametrize("name", sorted(BAD_INPUTS))
def test_invalid_input_exit_2_places_on_stderr_nothing_written(tmp_path, capsys, name):
    path, places = build_bad(name, tmp_path)
    before = sha256(path) if path.exists() else None
    out_dir = tmp_path / "out"
    code, out, err = main(capsys, "convert", path, "--no-simulation", "--json", "--outdir", out_dir)
    assert code == 2
    assert "Traceback" not in err
    problem_lines = [ln for ln in err.splitlines() if re.match(r".*: (error|warning): ", ln)]
    assert problem_lines, err
    # every problem line names a place; the places are the hand-worked ones
    named = set()
    for line in problem_lines:
        m = re.match(rf"{re.escape(str(path))}: (?:error|warning): (\S+?): ", line)
        assert m, line
        named.add(m.group(1))
    assert places <= named
    assert "no workbook written" in err
    assert not (out_dir / f"{path.stem}.analysis.xlsx").exists()
    assert not list(tmp_path.rglob("*.analysis.xlsx"))
    assert (sha256(path) if path.exists() else None) == before
    data = json.loads((out_dir / f"{path.stem}.analysis.json").read_text(encoding="utf-8"))
    assert data["ok"] is False
    assert data["input"]["file"] == str(path)
    assert data["input"]["sha256"] == before  # None for the missing file
    assert {
        f"{p['sheet']}!{p['cell']}" if p["cell"] else p["sheet"]
        for p in data["problems"]
        if p["severity"] == "error"
    } >= places
    assert data["activities"] == [] and data["project"] is None


def test_all_bad_inputs_in_one_process_never_a_traceback(tmp_path):
    paths = [build_bad(name, tmp_path)[0] for name in sorted(BAD_INPUTS)]
    hashes = {p: sha256(p) for p in paths if p.exists()}
    r = run_cli("convert", *paths, "--no-simulation", "--json")
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and "Traceback" not in r.stdout
    for p in paths:
        assert f"{p}: invalid input" in r.stderr
    assert not list(tmp_path.glob("*.analysis.xlsx"))
    assert {p: sha256(p) for p in hashes} == hashes
    r = run_cli("check", *paths)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr
    assert r.stdout.count("INVALID") == len(paths)


def test_problem_lines_one_per_problem(tmp_path, capsys):
    rows = [
        HEADER,
        ["A", None, None, 1, 2, 3],
        ["B", None, "Q", 1, 2, 3],  # C3 missing link
        ["C", None, "A", "x", 2, 3],  # D4 not a number
        ["D", None, "A", 1, 2, -3],
    ]  # F5 negative
    path = write_xlsx(tmp_path / "three.xlsx", {"Activities": rows})
    code, _, err = main(capsys, "convert", path, "--no-simulation")
    assert code == 2
    errors = [ln for ln in err.splitlines() if ": error: " in ln]
    assert sorted(ln.split(": ")[2] for ln in errors) == [
        "Activities!C3",
        "Activities!D4",
        "Activities!F5",
    ]
    assert f"{path}: invalid input (3 problem(s)); no workbook written" in err


def test_wrapped_header_text_stays_on_one_line(tmp_path, capsys):
    rows = [["ID", "Predecessors", "Optimistic", "Most\nlikely"], ["A", None, 1, 2]]
    path = write_xlsx(tmp_path / "wrap.xlsx", {"Activities": rows})
    code, _, err = main(capsys, "check", path)
    assert code == 2
    lines = err.splitlines()
    assert len(lines) == 1 and "Activities!A1" in lines[0] and "Pessimistic" in lines[0]


# --------------------------------------------------------------------------- several inputs
def test_several_inputs_good_ones_converted_exit_is_worst(tmp_path, capsys):
    good1 = good_xlsx(tmp_path / "first.xlsx")
    bad, _ = build_bad("missing-link", tmp_path)
    good2 = write_csv(tmp_path / "second.csv", GOOD_ROWS)
    code, out, err = main(capsys, "convert", good1, bad, good2, "--no-simulation")
    assert code == 2
    assert (tmp_path / "first.analysis.xlsx").is_file()
    assert (tmp_path / "second.analysis.xlsx").is_file()
    assert not (tmp_path / "link.analysis.xlsx").exists()
    assert f"wrote {tmp_path / 'first.analysis.xlsx'}" in out
    assert f"wrote {tmp_path / 'second.analysis.xlsx'}" in out
    assert "Traceback" not in err
    for p in (good1, good2):
        openpyxl.load_workbook(tmp_path / f"{p.stem}.analysis.xlsx")  # a complete workbook


def test_all_good_exit_zero(tmp_path, capsys):
    good_xlsx(tmp_path / "a.xlsx")
    write_csv(tmp_path / "b.csv", GOOD_ROWS)
    code, _, err = main(
        capsys, "convert", tmp_path / "a.xlsx", tmp_path / "b.csv", "--no-simulation"
    )
    assert code == 0, err
    assert outputs(tmp_path) == ["a.analysis.xlsx", "b.analysis.xlsx"]


def test_check_exit_codes_and_writes_nothing(tmp_path, capsys):
    good = good_xlsx(tmp_path / "good.xlsx")
    bad, _ = build_bad("cycle", tmp_path)
    code, out, _ = main(capsys, "check", good)
    assert code == 0
    assert f"{good}: valid (activity sheet Activities)" in out
    code, out, err = main(capsys, "check", bad)
    assert code == 2
    assert f"{bad}: INVALID" in out
    assert "K2 -> K3 -> K4 -> K2" in err
    code, _, _ = main(capsys, "check", good, bad)
    assert code == 2
    assert outputs(tmp_path) == []


# --------------------------------------------------------------------------- output files
def test_outdir_and_output_names(tmp_path, capsys):
    src = tmp_path / "in"
    src.mkdir()
    xlsx = good_xlsx(src / "depot plan.xlsx")
    csv_in = write_csv(src / "boiler.v2.csv", GOOD_ROWS)
    out_dir = tmp_path / "results" / "june"  # does not exist yet
    code, out, err = main(
        capsys, "convert", xlsx, csv_in, "--outdir", out_dir, "--no-simulation", "--json"
    )
    assert code == 0, err
    assert outputs(out_dir) == [
        "boiler.v2.analysis.json",
        "boiler.v2.analysis.xlsx",
        "depot plan.analysis.json",
        "depot plan.analysis.xlsx",
    ]
    assert outputs(src) == []  # nothing beside the inputs
    assert f"wrote {out_dir / 'depot plan.analysis.json'}" in out
    assert not [p for p in out_dir.iterdir() if p.name.startswith(".")]  # no temp files left


def test_default_output_beside_input(tmp_path, capsys):
    path = good_xlsx(tmp_path / "site.xlsx")
    code, _, _ = main(capsys, "convert", path, "--no-simulation", "--json")
    assert code == 0
    assert outputs(tmp_path) == ["site.analysis.json", "site.analysis.xlsx"]


def test_input_is_never_modified(tmp_path, capsys):
    path = good_xlsx(tmp_path / "plan.xlsx")
    before, mtime = sha256(path), path.stat().st_mtime_ns
    for _ in range(2):  # a second run replaces the outputs, never the input
        code, _, _ = main(
            capsys, "convert", path, "--no-simulation", "--json", "--outdir", tmp_path
        )
        assert code == 0
    assert sha256(path) == before and path.stat().st_mtime_ns == mtime
    assert outputs(tmp_path) == ["plan.analysis.json", "plan.analysis.xlsx"]


def test_api_refuses_to_write_over_the_input(tmp_path):
    path = good_xlsx(tmp_path / "plan.xlsx")
    before = sha256(path)
    with pytest.raises(PertbookError, match="overwrite"):
        convert(path, ConvertOptions(simulate=False), workbook_path=path)
    assert sha256(path) == before
    assert [p.name for p in tmp_path.iterdir()] == ["plan.xlsx"]


# --------------------------------------------------------------------------- internal fault
def _boom(*args, **kwargs):
    raise RuntimeError("boom in the analysis")


def test_internal_fault_exit_1_short_message(tmp_path, capsys, monkeypatch):
    import converter.analyse.analysis

    monkeypatch.setattr(converter.analyse.analysis, "analyse", _boom)
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(capsys, "convert", path, "--no-simulation")
    assert code == 1
    assert "internal error" in err and "boom in the analysis" in err
    assert "Traceback" not in err
    assert len(err.strip().splitlines()) <= 3  # short
    assert outputs(tmp_path) == []


def test_internal_fault_with_debug_shows_traceback(tmp_path, capsys, monkeypatch):
    import converter.analyse.analysis

    monkeypatch.setattr(converter.analyse.analysis, "analyse", _boom)
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(capsys, "--debug", "convert", path, "--no-simulation")
    assert code == 1
    assert "Traceback" in err and "RuntimeError: boom in the analysis" in err


def test_internal_fault_outranks_invalid_input(tmp_path, capsys, monkeypatch):
    import converter.analyse.analysis

    monkeypatch.setattr(converter.analyse.analysis, "analyse", _boom)
    bad, _ = build_bad("self-link", tmp_path)
    good = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(capsys, "convert", bad, good, "--no-simulation")
    assert code == 1
    assert "Traceback" not in err


# --------------------------------------------------------------------------- formula injection
INJECTED = {
    "ids": ["+A1", "-B2", "@C3", "=D4"],
    "names": ['=HYPERLINK("http://x","y")', "+cmd|' /C calc'!A0", "@SUM(1+1)", "-2+3"],
}


@pytest.mark.parametrize("kind", ["xlsx", "csv"])
def test_user_text_is_written_as_text_not_formulas(tmp_path, capsys, kind):
    ids, names = INJECTED["ids"], INJECTED["names"]
    rows = [HEADER] + [[ids[k], names[k], ids[k - 1] if k else None, 1, 2, 3] for k in range(4)]
    path = (
        write_xlsx(tmp_path / "inj.xlsx", {"Activities": rows})
        if kind == "xlsx"
        else write_csv(tmp_path / "inj.csv", rows)
    )
    code, _, err = main(capsys, "convert", path, "--no-simulation")
    assert code == 0, err
    out = tmp_path / "inj.analysis.xlsx"
    wb = openpyxl.load_workbook(out, data_only=False)
    found: dict[str, int] = dict.fromkeys(ids + names, 0)
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.value in found:
                    assert cell.data_type == "s", (ws.title, cell.coordinate, cell.value)
                    found[cell.value] += 1
                if cell.data_type == "f":
                    assert "HYPERLINK" not in str(cell.value).upper()
                    assert "cmd|" not in str(cell.value)
    assert all(found.values()), found  # every text reached the workbook
    acts = wb["Activities"]
    id_cells = [c for c in acts["A"] if c.value in ids]
    name_cells = [c for c in acts["B"] if c.value in names]
    assert [c.value for c in id_cells] == ids and [c.value for c in name_cells] == names
    assert all(c.data_type == "s" for c in id_cells + name_cells)
    _assert_no_external_parts(out)


def _assert_no_external_parts(path) -> None:
    with zipfile.ZipFile(path) as z:
        names = z.namelist()
        assert not [n for n in names if "externalLink" in n or "vbaProject" in n], names
        for n in names:
            if n.endswith(".rels"):
                assert 'TargetMode="External"' not in z.read(n).decode("utf-8"), n
        types = z.read("[Content_Types].xml").decode("utf-8")
        assert "macroEnabled" not in types and "vbaProject" not in types


# --------------------------------------------------------------------------- JSON
def _good_json(tmp_path, capsys, *extra):
    path = good_xlsx(tmp_path / "net.xlsx")
    code, _, err = main(capsys, "convert", path, "--no-simulation", "--json", *extra)
    assert code == 0, err
    return path, json.loads((tmp_path / "net.analysis.json").read_text(encoding="utf-8"))


def test_json_public_keys(tmp_path, capsys):
    path, data = _good_json(tmp_path, capsys, "--due", "15")
    assert {
        "ok",
        "input",
        "time_unit",
        "activity_count",
        "project",
        "activities",
        "problems",
    } <= set(data)
    assert data["ok"] is True
    assert set(data["input"]) >= {"file", "sha256"}
    assert data["input"]["sha256"] == sha256(path)
    assert {
        "expected_duration",
        "variance",
        "sd",
        "critical_path",
        "due",
        "z",
        "p_meet_due",
        "duration_at_confidence",
    } <= set(data["project"])
    assert set(data["project"]["duration_at_confidence"]) == {"0.5", "0.8", "0.9", "0.95"}
    assert data["activity_count"] == len(data["activities"]) == 4
    for row in data["activities"]:
        assert {
            "id",
            "te",
            "variance",
            "es",
            "ef",
            "ls",
            "lf",
            "total_float",
            "free_float",
            "critical",
        } <= set(row)
        assert isinstance(row["id"], str) and isinstance(row["critical"], bool)
    assert data["problems"] == []


def test_json_figures_match_hand_working_and_scipy(tmp_path, capsys):
    _, data = _good_json(tmp_path, capsys, "--due", "15")
    # TE = (O + 4M + P)/6, var = ((P - O)/6)^2 (Malcolm et al. 1959), by hand:
    #   A 2,4,6 -> 4, (4/6)^2;  B 1,3,11 -> 4, (10/6)^2;  C 1,2,3 -> 2, (2/6)^2;
    #   D 3,5,7 -> 5, (4/6)^2.  Forward/backward pass (Kelley & Walker 1959), by hand:
    #   ES A0 B4 C4 D8; EF A4 B8 C6 D13; LS A0 B4 C6 D8; LF A4 B8 C8 D13; C floats 2.
    want = {
        "A": (4, 16 / 36, 0, 4, 0, 4, 0, 0, True),
        "B": (4, 100 / 36, 4, 8, 4, 8, 0, 0, True),
        "C": (2, 4 / 36, 4, 6, 6, 8, 2, 2, False),
        "D": (5, 16 / 36, 8, 13, 8, 13, 0, 0, True),
    }
    keys = ("te", "variance", "es", "ef", "ls", "lf", "total_float", "free_float")
    for row in data["activities"]:
        *nums, crit = want[row["id"]]
        assert [row[k] for k in keys] == pytest.approx(nums, abs=1e-9), row["id"]
        assert row["critical"] is crit
    pr = data["project"]
    var = (16 + 100 + 16) / 36  # sum over the critical path A, B, D
    sd = math.sqrt(var)
    assert pr["critical_path"] == ["A", "B", "D"]
    assert pr["expected_duration"] == pytest.approx(13)
    assert pr["variance"] == pytest.approx(var) and pr["sd"] == pytest.approx(sd)
    assert pr["due"] == 15
    assert pr["z"] == pytest.approx((15 - 13) / sd)
    assert pr["p_meet_due"] == pytest.approx(norm.cdf((15 - 13) / sd))
    for c in ("0.5", "0.8", "0.9", "0.95"):
        assert pr["duration_at_confidence"][c] == pytest.approx(13 + norm.ppf(float(c)) * sd)


def test_json_ids_are_strings_for_numeric_id_cells(tmp_path, capsys):
    rows = [
        HEADER,
        [10, None, None, 1, 2, 3],
        [20.0, None, 10, 1, 2, 3],
        [30, None, "10; 20", 2, 2, 2],
    ]
    path = write_xlsx(tmp_path / "num.xlsx", {"Activities": rows})
    code, _, err = main(capsys, "convert", path, "--no-simulation", "--json")
    assert code == 0, err
    data = json.loads((tmp_path / "num.analysis.json").read_text(encoding="utf-8"))
    assert [a["id"] for a in data["activities"]] == ["10", "20", "30"]
    assert data["project"]["critical_path"] == ["10", "20", "30"]
    # row 4 has O = M = P: a warning (Activities!E4) that does not block
    assert [
        (p["severity"], p["code"], p["sheet"], p["cell"], p["activity"]) for p in data["problems"]
    ] == [("warning", "deterministic", "Activities", "E4", "30")]


def test_json_warnings_for_valid_input(tmp_path, capsys):
    rows = [
        HEADER,
        ["A", None, None, 1, 2, 3],
        ["B", None, "A", None, 4, None],  # only M: E3
        ["C", None, None, 1, 2, 3],
    ]  # unlinked: C4
    path = write_xlsx(tmp_path / "warn.xlsx", {"Activities": rows})
    code, _, err = main(capsys, "convert", path, "--no-simulation", "--json")
    assert code == 0
    assert "warning: Activities!E3" in err and "warning: Activities!C4" in err
    data = json.loads((tmp_path / "warn.analysis.json").read_text(encoding="utf-8"))
    assert data["ok"] is True
    assert sorted(
        (p["severity"], p["code"], p["cell"], p["activity"]) for p in data["problems"]
    ) == [("warning", "deterministic", "E3", "B"), ("warning", "no-links", "C4", "C")]
    for p in data["problems"]:
        assert set(p) == {"severity", "code", "message", "sheet", "cell", "activity"}
    assert (tmp_path / "warn.analysis.xlsx").is_file()


def test_command_line_overrides_settings_sheet_in_json(tmp_path, capsys):
    settings = [
        ["Setting", "Value"],
        ["Due", 30],
        ["Start date", "2025-03-03"],
        ["Confidence levels", "0.6"],
    ]
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": GOOD_ROWS, "Settings": settings})
    code, _, err = main(capsys, "convert", path, "--no-simulation", "--json")
    assert code == 0, err
    data = json.loads((tmp_path / "s.analysis.json").read_text(encoding="utf-8"))
    assert data["project"]["due"] == 30
    assert data["start_date"] == "2025-03-03"
    assert set(data["project"]["duration_at_confidence"]) == {"0.6"}
    code, _, err = main(
        capsys,
        "convert",
        path,
        "--no-simulation",
        "--json",
        "--due",
        "14",
        "--start-date",
        "2025-04-07",
        "--confidence",
        "50%,90%",
    )
    assert code == 0, err
    data = json.loads((tmp_path / "s.analysis.json").read_text(encoding="utf-8"))
    assert data["project"]["due"] == 14
    assert data["start_date"] == "2025-04-07"
    assert set(data["project"]["duration_at_confidence"]) == {"0.5", "0.9"}
    sd = math.sqrt(132 / 36)  # critical path A, B, D as worked above
    assert data["project"]["p_meet_due"] == pytest.approx(norm.cdf((14 - 13) / sd))


def test_bad_due_option_is_invalid_input_not_a_crash(tmp_path, capsys):
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(capsys, "convert", path, "--no-simulation", "--due", "soon")
    assert code == 2
    assert "--due" in err and "Traceback" not in err
    assert outputs(tmp_path) == []


# --------------------------------------------------------------------------- with simulation
def test_convert_with_simulation(tmp_path, capsys):
    path = good_xlsx(tmp_path / "sim.xlsx")
    code, _, err = main(capsys, "convert", path, "--json", "--iterations", "500", "--seed", "3")
    assert code == 0, err
    data = json.loads((tmp_path / "sim.analysis.json").read_text(encoding="utf-8"))
    assert data["simulation"]["iterations"] == 500
    assert "Simulation" in openpyxl.load_workbook(tmp_path / "sim.analysis.xlsx").sheetnames


def test_template_command_writes_once_and_never_overwrites(tmp_path, capsys):
    out = tmp_path / "plan.xlsx"
    code, _, _ = main(capsys, "template", str(out))
    assert code == 0 and out.exists()
    before = out.read_bytes()
    code, _, err = main(capsys, "template", str(out))  # a second call must not replace it
    assert code == 2 and "not overwritten" in err
    assert out.read_bytes() == before
    wb = openpyxl.load_workbook(out)
    assert {"Activities", "Settings"} <= set(wb.sheetnames)
    code, _, _ = main(capsys, "template", str(tmp_path / "plan.csv"))
    assert code == 2


def test_same_stem_inputs_keep_both_results(tmp_path, capsys):
    xlsx = tmp_path / "plan.xlsx"
    csv = tmp_path / "plan.csv"
    rows = [
        ["ID", "Predecessors", "Optimistic", "Most likely", "Pessimistic"],
        ["A", "", 1, 2, 3],
        ["B", "A", 2, 3, 5],
    ]
    wb = openpyxl.Workbook()
    for r in rows:
        wb.active.append(r)
    wb.save(xlsx)
    csv.write_text("\n".join(",".join(str(v) for v in r) for r in rows) + "\n")
    code, _, _ = main(capsys, "convert", str(xlsx), str(csv), "--no-simulation")
    assert code == 0
    assert (tmp_path / "plan.analysis.xlsx").exists()
    assert (tmp_path / "plan-csv.analysis.xlsx").exists()


def test_unwritable_output_folder_is_a_clear_message_not_a_traceback(tmp_path, capsys):
    src = tmp_path / "plan.csv"
    src.write_text("ID,Predecessors,Optimistic,Most likely,Pessimistic\nA,,1,2,3\n")
    blocker = tmp_path / "out"
    blocker.write_text("a file where the output folder should be")
    code, _, err = main(capsys, "convert", str(src), "--outdir", str(blocker), "--no-simulation")
    assert code == 1
    assert "cannot write the results" in err and "Traceback" not in err
    assert blocker.read_text() == "a file where the output folder should be"


# --------------------------------------------------------------------------- options
# The project's issue: "--confidence 50,80,90,95" failed although the help shows the
# default as 50,80,90,95%; numbers above 1 are percentages, up to 1 fractions.
@pytest.mark.parametrize(
    "given, keys",
    [
        ("50,80,90,95", {"0.5", "0.8", "0.9", "0.95"}),
        ("50%,80%", {"0.5", "0.8"}),
        ("0.8", {"0.8"}),
        ("80", {"0.8"}),
    ],
)
def test_confidence_option_percent_or_fraction(tmp_path, capsys, given, keys):
    _, data = _good_json(tmp_path, capsys, "--confidence", given)
    assert set(data["project"]["duration_at_confidence"]) == keys
    sd = math.sqrt(132 / 36)  # critical path A, B, D as worked above
    for key in keys:  # mean + Phi^-1(c) sd, scipy.stats.norm
        assert data["project"]["duration_at_confidence"][key] == pytest.approx(
            13 + norm.ppf(float(key)) * sd
        )


@pytest.mark.parametrize(
    "given, named",
    [
        ("0", "0"),
        ("100", "100"),
        ("-5", "-5"),
        ("high", "high"),
        ("100%", "100%"),
        ("0.5,80", "80"),
    ],
)
def test_bad_confidence_option_is_a_clear_usage_error(tmp_path, capsys, given, named):
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, out, err = main(capsys, "convert", path, "--no-simulation", f"--confidence={given}")
    assert code == 2
    (line,) = [ln for ln in err.splitlines() if "error: argument --confidence: " in ln]
    assert named in line and "Traceback" not in err
    assert outputs(tmp_path) == [] and out == ""


def _conversion_options(parser_help: str) -> list[str]:
    section = parser_help.split("conversion options", 1)[1]
    return re.findall(r"^  (--[a-z-]+)", section, flags=re.MULTILINE)


def test_convert_and_watch_take_the_same_conversion_options():
    subs = cli.command_parsers()
    convert_opts = _conversion_options(subs["convert"].format_help())
    assert convert_opts == _conversion_options(subs["watch"].format_help())
    # the list the issue names, no more and no fewer
    assert set(convert_opts) == {
        "--due",
        "--json",
        "--iterations",
        "--seed",
        "--distribution",
        "--correlation",
        "--paths",
        "--confidence",
        "--start-date",
        "--no-simulation",
        "--simulation-memory",
        "--default-range",  # issue 11, "Ranges from a single duration"
        "--status-date",  # the status issue's option for a project in flight
        "--time-unit",  # issue 11: the working-hours time unit
        "--hours-per-day",  # issue 11: Hours per day
        "--baseline",  # issue 13: an earlier run to compare with (checked in tests/compare/)
        "--trace",  # issue 14
    }
    given = [
        "--due",
        "2027-06-30",
        "--json",
        "--iterations",
        "500",
        "--seed",
        "7",
        "--distribution",
        "tri",
        "--correlation",
        "25%",
        "--paths",
        "4",
        "--confidence",
        "50,80",
        "--start-date",
        "2027-01-04",
        "--no-simulation",
        "--simulation-memory",
        "512",
        "--time-unit",
        "Working Hours",
        "--hours-per-day",
        "7.5",
        "--trace",
        "50,max",
    ]
    parser = cli.build_parser()
    from_convert = options_from_args(parser.parse_args(["convert", "x.xlsx", *given]))
    from_watch = options_from_args(parser.parse_args(["watch", "F", *given]))
    assert (
        from_convert
        == from_watch
        == ConvertOptions(
            due=dt.date(2027, 6, 30),
            json=True,
            iterations=500,
            seed=7,
            distribution="triangular",
            correlation=0.25,
            paths=4,
            confidence=(0.5, 0.8),
            start_date=dt.date(2027, 1, 4),
            simulate=False,
            simulation_memory_mb=512,
            time_unit="working hours",
            hours_per_day=7.5,
            trace=(0.5, 1.0),
        )
    )
    defaults = options_from_args(parser.parse_args(["watch", "F"]))
    assert defaults == options_from_args(parser.parse_args(["convert", "x"])) == ConvertOptions()


@pytest.mark.parametrize("where", ["before", "after"])
def test_debug_flag_before_or_after_the_command(tmp_path, capsys, monkeypatch, where):
    import converter.analyse.analysis

    monkeypatch.setattr(converter.analyse.analysis, "analyse", _boom)
    path = good_xlsx(tmp_path / "plan.xlsx")
    args = ["convert", path, "--no-simulation"]
    code, _, err = main(capsys, *(["--debug", *args] if where == "before" else [*args, "--debug"]))
    assert code == 1
    assert "Traceback" in err and "RuntimeError: boom in the analysis" in err
    assert not cli.build_parser().parse_args(["check", "x.xlsx"]).debug


def test_check_help_describes_input():
    r = run_cli("check", "--help")
    assert r.returncode == 0
    m = re.search(r"^  INPUT\s+(.+)$", r.stdout, flags=re.MULTILINE)
    assert m and ".xlsx" in m.group(1) and ".csv" in m.group(1), r.stdout


def test_package_exports_what_it_names():
    for name in converter.__all__:
        assert getattr(converter, name) is not None, name
    assert converter.ConvertOptions is ConvertOptions
    with pytest.raises(AttributeError):
        converter.no_such_name  # noqa: B018


# --------------------------------------------------------------------------- headline
@pytest.mark.parametrize(
    "p, text",
    [
        (0.9999999975, ">99%"),
        (0.004, "<1%"),
        (0.5, "50%"),
        (1.0, ">99%"),
        (0.0, "<1%"),
        (0.995, ">99%"),
        (0.994, "99%"),
        (0.005, "1%"),
        (0.125, "13%"),
        (None, "-"),
    ],
)
def test_chance_rounded_to_whole_percent_never_0_or_100(p, text):
    # whole percent, half up; a chance that rounds to 0 or 100 is said "<1%" / ">99%"
    # (the project's issue "reviewer-grade output")
    assert terminal.format_chance(p) == text


def test_duration_one_decimal_with_unit():
    assert terminal.format_duration(44.2987, "working days") == "44.3 working days"
    assert terminal.format_duration(6.25, "weeks") == "6.2 weeks"  # half to even, as str.format
    assert terminal.format_duration(None, "weeks") == "-"


def _rows(out: str) -> dict[str, list[str]]:
    """Headline rows by label: the words after the label, split on runs of spaces."""
    rows = {}
    for line in out.splitlines():
        cells = re.split(r"\s{2,}", line.strip())
        rows[cells[0]] = cells[1:]
    return rows


def test_headline_critical_path_figures_and_dates(tmp_path, capsys):
    path = write_xlsx(
        tmp_path / "dated.xlsx",
        {"Activities": GOOD_ROWS, "Settings": [["Start date", "2025-03-03"]]},
    )
    code, out, err = main(capsys, "convert", path, "--no-simulation", "--due", "15")
    assert code == 0, err
    rows = _rows(out)
    sd = math.sqrt(132 / 36)  # the critical path A, B, D worked by hand above

    def day(t):  # end of working day ceil(t), Mon-Fri (numpy's business-day calendar)
        return str(np.busday_offset("2025-03-03", math.ceil(t) - 1, roll="forward"))

    assert rows["Expected finish"] == ["13.0 working days", day(13)]
    assert day(13) == "2025-03-19"  # by hand: 3-7, 10-14, 17-19 March
    for level in (50, 80, 90):
        value = 13 + norm.ppf(level / 100) * sd  # scipy.stats.norm
        assert rows[f"P{level}"] == [f"{value:.1f} working days", day(value)]
    chance = norm.cdf((15 - 13) / sd)  # 0.852 (scipy.stats.norm)
    assert rows[f"Chance to finish by {day(15)}"] == [f"{round(chance * 100)}%"]
    assert rows["Health checks failed"][0].endswith("of 13")
    assert rows["Warnings"] == ["0"]
    assert rows[f"{path}: wrote {tmp_path / 'dated.analysis.xlsx'}"] == []
    assert "Simulation" not in out


def test_headline_shows_simulation_beside_critical_path(tmp_path, capsys):
    path = good_xlsx(tmp_path / "sim.xlsx")
    code, out, err = main(
        capsys, "convert", path, "--json", "--iterations", "400", "--seed", "5", "--due", "15"
    )
    assert code == 0, err
    data = json.loads((tmp_path / "sim.analysis.json").read_text(encoding="utf-8"))
    sim, project = data["simulation"], data["project"]
    rows = _rows(out)
    assert rows["sim.xlsx"] == ["Simulation", "Critical path"]
    assert rows["Expected finish"] == [
        f"{sim['mean']:.1f} working days",
        f"{project['expected_duration']:.1f} working days",
    ]
    assert rows["P80"] == [
        f"{sim['percentiles']['0.8']:.1f} working days",
        f"{project['duration_at_confidence']['0.8']:.1f} working days",
    ]
    assert rows["Chance to finish by 15.0 working days"] == [
        terminal.format_chance(sim["p_meet_due"]),
        terminal.format_chance(project["p_meet_due"]),
    ]
    failed = sum(1 for c in data["checks"] if not c["passed"])
    assert rows["Health checks failed"] == [f"{failed} of {len(data['checks'])}"]
    assert f"{path}: wrote {tmp_path / 'sim.analysis.json'}" in out


def test_quiet_prints_problems_only(tmp_path, capsys):
    rows = [HEADER, ["A", None, None, 1, 2, 3], ["B", None, None, 1, 2, 3]]  # unlinked
    path = write_xlsx(tmp_path / "q.xlsx", {"Activities": rows})
    code, out, err = main(capsys, "convert", path, "--no-simulation", "--quiet")
    assert code == 0
    assert out == ""
    assert err.count(": warning: ") == 2 and "no-links" not in out


def test_redirected_output_has_no_control_codes(tmp_path, monkeypatch):
    for name in ("FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("COLUMNS", "40")  # a narrow terminal setting must not wrap a file
    path = good_xlsx(tmp_path / "a-rather-long-schedule-name-for-wrapping.xlsx")
    r = run_cli("convert", path, "--iterations", "300", "--due", "14", "--json")
    assert r.returncode == 0, r.stderr
    for stream in (r.stdout, r.stderr):
        assert "\x1b" not in stream and "\r" not in stream
    assert "Expected finish" in r.stdout and "Chance to finish by 14.0 working days" in r.stdout
    assert f"wrote {tmp_path / 'a-rather-long-schedule-name-for-wrapping.analysis.xlsx'}" in (
        r.stdout
    )


def test_progress_bar_only_on_a_terminal_and_taken_down(tmp_path):
    from io import StringIO

    from rich.console import Console

    screen = StringIO()
    bar = terminal.SimulationProgress(Console(file=screen, force_terminal=True, width=60), delay=0)
    with bar:
        bar(0, 10)
        bar(5, 10)
        assert bar.bar is not None
    assert bar.bar is None and "simulating" in screen.getvalue()
    quiet = terminal.SimulationProgress(Console(file=StringIO(), force_terminal=True), delay=3600)
    quiet(5, 10)  # under the delay: nothing drawn
    assert quiet.bar is None


def test_confidence_default_shown_in_help_reads_back_as_the_default():
    # the issue: the help shows "default 50,80,90,95%"; typed back it must give that default
    from converter.model import DEFAULT_CONFIDENCE
    from converter.options import parse_confidence

    text = cli.command_parsers()["convert"].format_help()
    entry = re.split(r"^  --confidence LEVELS ", text, flags=re.MULTILINE)[1]
    shown = re.search(r"\(default ([\d,.%]+)\)", entry).group(1)
    assert shown == "50,80,90,95%"
    assert parse_confidence(shown) == DEFAULT_CONFIDENCE == (0.5, 0.8, 0.9, 0.95)


def test_control_characters_of_the_input_are_printed_escaped(tmp_path):
    # An escape sequence in a file name and in an estimate ("clear the screen", ECMA-48)
    # and a name that is not UTF-8 (bytes ff fe): printed as visible \xNN escapes, never
    # raw (CWE-150), and rich's markup in a name is printed as typed.
    rows = [list(r) for r in GOOD_ROWS]
    rows[1][4] = "\x1b[2J"
    odd = write_csv(tmp_path / "plan\x1b[31m[bold].csv", rows)
    good = write_csv(tmp_path / os.fsdecode(b"good-\xff\xfe.csv"), GOOD_ROWS)
    checked = run_cli("check", odd, good)
    converted = run_cli("convert", odd, good, "--outdir", tmp_path / "out")
    for proc in (checked, converted):
        text = proc.stdout + proc.stderr
        assert "Traceback" not in text and "\x1b" not in text
        assert "plan\\x1b[31m[bold].csv" in text and "\\x1b[2J" in text
        assert "good-\\xff\\xfe.csv" in text
    assert checked.returncode == converted.returncode == 2
    assert (tmp_path / "out" / os.fsdecode(b"good-\xff\xfe.analysis.xlsx")).exists()
