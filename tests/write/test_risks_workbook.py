"""The risk register in the workbook and the JSON, end to end.

Outside checks: LibreOffice recalculates every formula of the Risks, Activities and Paths
sheets and must give the cached values (tests/support/recalc.py); the command line is run
as a user runs it (subprocess) and its JSON read back. The demo register is invented.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest
from helpers import HEADER, write_xlsx
from recalc import compare_recalculated

from converter.api import ConvertOptions, convert

ROOT = Path(__file__).resolve().parents[2]
ACTIVITIES = [
    HEADER,
    ["A", "dig", None, 2, 4, 8],
    ["B", "pour", "A", 3, 5, 9],
    ["C", "fit out", "A", 1, 2, 6],
    ["D", "hand over", "B;C", 1, 1, 2],
]
RISK_HEADER = [
    "Risk",
    "Description",
    "Probability",
    "Impact low",
    "Impact likely",
    "Impact high",
    "Activities",
    "Mitigated probability",
    "Mitigated impact likely",
    "Group",
]
RISKS = [
    RISK_HEADER,
    ["R1", "rock in the trench", "30%", 1, 2, 5, "A", "10%", None, None],
    ["R2", "permit late", 0.2, "10%", "20%", "50%", "B, C", None, "10%", None],
    ["R3", "storm", 0.1, 2, 2, 2, "C", None, None, "weather"],
    ["R4", "flooding", 0.1, 1, 2, 3, "D", None, None, "weather"],
]
SETTINGS = [["Setting", "Value"], ["Due", 14], ["Start date", "2026-03-02"]]


def demo(tmp_path: Path, risks=RISKS) -> Path:
    sheets = {"Activities": ACTIVITIES, "Risks": risks, "Settings": SETTINGS}
    return write_xlsx(tmp_path / "register.xlsx", sheets)


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    root = tmp_path_factory.mktemp("risks")
    opts = ConvertOptions(json=True, iterations=3000, seed=5)
    result = convert(demo(root), opts, outdir=root / "out")
    assert result.ok, [str(p) for p in result.problems]
    return result


def test_risks_sheet_activities_and_paths_carry_the_risk_terms(converted):
    wb = openpyxl.load_workbook(converted.workbook)
    ws = wb["Risks"]
    heads = {c.value: c.column for c in ws[4] if c.value}
    assert ws.cell(5, heads["Impact mean"]).value == "=(F5+4*G5+H5)/6"  # PERT mean
    assert ws.cell(5, heads["Expected delay per hit (p x mean)"]).value == "=E5*J5"
    acts = wb["Activities"]
    head = {c.value: c.column for c in acts[4] if c.value}
    delay = acts.cell(5, head["Risk delay (expected, in TE)"]).value  # activity A: R1
    assert delay == "=Risks!$L$5"
    assert acts.cell(5, head["Expected time TE"]).value.endswith(
        "+" + acts.cell(5, head["Risk delay (expected, in TE)"]).coordinate
    )
    paths = wb["Paths"]
    assert "+K5" in paths["C5"].value  # the path variance adds the named risks' variance
    assert paths["K5"].value.startswith("=SUMPRODUCT(Risks!$M$5:$M$8,")


@pytest.mark.libreoffice
@pytest.mark.parametrize("distribution", ["triangular", "uniform"])
def test_libreoffice_recalculates_the_other_impact_moments(distribution, libreoffice, tmp_path):
    # Outside check: LibreOffice recomputes the triangular and uniform moment formulas
    opts = ConvertOptions(iterations=500, seed=5, distribution=distribution, simulate=False)
    result = convert(demo(tmp_path), opts, outdir=tmp_path / "out")
    assert result.ok, [str(p) for p in result.problems]
    copy = libreoffice.recalculate(result.workbook, tmp_path / "recalc")
    report = compare_recalculated(result.workbook, copy)
    assert list(report) == [], "\n".join(report[:20])


@pytest.mark.libreoffice
def test_libreoffice_recalculates_every_risk_formula(converted, libreoffice, tmp_path):
    # Outside check: LibreOffice recomputes every formula; each must give the cached value
    copy = libreoffice.recalculate(converted.workbook, tmp_path)
    report = compare_recalculated(converted.workbook, copy)
    assert report.compared > 100, report
    assert list(report) == [], "\n".join(report[:20])
    ws = openpyxl.load_workbook(converted.workbook)["Risks"]
    risk_formulas = [c for row in ws.iter_rows() for c in row if str(c.value).startswith("=")]
    assert len(risk_formulas) >= 16  # four moments per risk, at least


def test_cli_json_has_the_risks_and_the_mitigated_run(tmp_path):
    source = demo(tmp_path)
    cmd = [sys.executable, "-m", "converter", "convert", str(source), "--json", "--quiet"]
    cmd += ["--iterations", "2000", "--outdir", str(tmp_path / "out")]
    done = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    data = json.loads((tmp_path / "out" / "register.analysis.json").read_text())
    keys = {
        "id",
        "description",
        "probability",
        "activities",
        "occurred",
        "mean_delay_when_occurred",
        "sensitivity",
        "delta_mean",
        "delta_p50",
        "delta_p80",
    }
    assert [r["id"] for r in data["risks"]] == ["R1", "R2", "R3", "R4"]
    assert all(set(r) == keys for r in data["risks"])
    assert data["risks"][1]["activities"] == ["B", "C"]
    mitigated = data["simulation"]["mitigated"]
    assert set(mitigated) == {"mean", "sd", "p_meet_due", "percentiles"}
    assert mitigated["mean"] < data["simulation"]["mean"]  # lower probabilities and impacts
    # grouped risks occur together: the same share of iterations
    assert data["risks"][2]["occurred"] == data["risks"][3]["occurred"]


def test_cli_refuses_a_bad_register_with_its_cells(tmp_path):
    bad = [RISK_HEADER, ["R1", "x", "150%", 1, 2, 3, "A; Q", None, None, None]]
    source = demo(tmp_path, bad)
    before = source.read_bytes()
    cmd = [sys.executable, "-m", "converter", "convert", str(source), "--json"]
    done = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert done.returncode == 2
    assert "Risks!C2" in done.stdout + done.stderr  # the probability cell
    assert "Risks!G2" in done.stdout + done.stderr  # the unknown activity Q
    assert source.read_bytes() == before  # the input untouched
